"""An independent audit of background pads: the demos with a pad and a few projects are built
through the CLI, music21 reads the written MusicXML back (never our report or our stages), and
every beat where a pad sounds is judged as an arranger hears it.

References, beside each check:

* common practice of big-band and studio arranging: a pad sits under the section it backs, so
  its highest note stays below the lead section's lowest sounding note (a unison with that note
  counts as reaching it);
* the low-interval limits, a handbook table from memory (the usual arranging table: a minor
  second is muddy below E3, a major second below Eb3, a minor third below C3, a major third
  below Bb2, a fourth below A2, a tritone below Bb2, a fifth below Bb1, sixths and sevenths
  below F2, ninths and tenths lower still): the lower note of two adjacent voices stays at or
  above the limit of their interval.  Adjacent voices are taken among everything that sounds
  at one instant (the pad and the lead section together), wherever one of the two is a pad note:
  the pad's own voices and the pad's top against the section note just above it;
* music21 reads the score (``converter.parse``, ``toSoundingPitch``, ``stripTies``): the part
  names tell the lead section's parts from the pad's.
"""
from __future__ import annotations

from collections.abc import Iterable
from dataclasses import dataclass, field
from fractions import Fraction
from pathlib import Path

import pytest
from conftest import BASIC, DEMOS, run_cli

# lowest lower note of an interval between adjacent voices, by semitones; a handbook table
# recalled from memory (the same table tests/test_tutti.py uses); octaves and unisons have none
LOW_LIMITS = {1: 52, 2: 51, 3: 48, 4: 46, 5: 45, 6: 46, 7: 34, 8: 41, 9: 41, 10: 41, 11: 41,
              13: 40, 14: 39, 15: 36, 16: 34}

SAXES = ("Alto Sax 1", "Alto Sax 2", "Tenor Sax 1", "Tenor Sax 2", "Baritone Sax")
TRUMPETS = ("Trumpet 1", "Trumpet 2", "Trumpet 3", "Trumpet 4")
TROMBONES = ("Trombone 1", "Trombone 2", "Trombone 3", "Bass Trombone")


def _pad(section: str, rhythm: str) -> str:
    return f'\n[[layers]]\nsection = "{section}"\nrole = "pad"\nrhythm = "{rhythm}"\ndynamics = "p"\n'


def _lead(section: str, motif: str, key: str, framework: str, voicing: str, groove: str) -> str:
    return (BASIC.replace('name = "trombones-4"', f'name = "{section}"')
            .replace('"A4 G4 C5 Bb4"', f'"{motif}"').replace('key = "F major"', f'key = "{key}"')
            .replace('framework = "F6 | F6 | Gm7 C7 | F6"', f'framework = "{framework}"')
            .replace('voicing = "close"', f'voicing = "{voicing}"')
            .replace("[harmony]", f'[rhythm]\ngroove = "{groove}"\n\n[harmony]'))


# (project, lead-section part names, pad part names): the two demos with a pad, and projects
# across keys, sections, voicing types and pad rhythms
PROJECTS = {
    "lantern-walk-soli": (DEMOS / "lantern-walk-soli.toml", SAXES, TROMBONES),
    "copper-coast-transition": (DEMOS / "copper-coast-transition.toml", TRUMPETS, TROMBONES),
    "saxes-close": (_lead("saxes-5", "A4 G4 C5 Bb4", "F major", "F6 | Dm7 G7 | Gm7 C7 | F6", "close",
                          "swing") + _pad("trombones-4", "1"), SAXES, TROMBONES),
    "saxes-drop2": (_lead("saxes-5", "C5 Db5 Bb4 Eb5 F4", "Ab major", "Abmaj7 | Fm7 Bb7 | Bbm7 Eb7 | Abmaj7",
                          "drop2", "swing") + _pad("trombones-4", "2"), SAXES, TROMBONES),
    "trumpets-close": (_lead("trumpets-4", "D5 C5 F5 E5", "Bb major", "Bb6 | Cm7 F7 | Dm7 G7 | Cm7 F7",
                             "close", "straight") + _pad("trombones-4", "1"), TRUMPETS, TROMBONES),
    "trumpets-saxes": (_lead("trumpets-4", "G5 F5 Bb5 A5", "Eb major", "Ebmaj7 | Cm7 F7 | Fm7 Bb7 | Ebmaj7",
                             "drop2", "swing") + _pad("saxes-5", "1"), TRUMPETS, SAXES),
}


@dataclass
class Audit:
    beats: int = 0                                   # beats where the pad sounds
    above: list[tuple] = field(default_factory=list)  # (beat, pad part, pad pitch, section's lowest)
    muddy: list[tuple] = field(default_factory=list)  # (beat, lower, upper)

    @property
    def count(self) -> int:
        return len(self.above) + len(self.muddy)


def _notes(part) -> list[tuple[Fraction, Fraction, int]]:  # noqa: ANN001
    """(start, end, sounding MIDI) of a music21 part's notes, ties joined (music21 stripTies)."""
    out = []
    for n in part.stripTies().flatten().notes:
        if n.isChord:                       # a chord symbol or a chord: not a line of one part
            continue
        t0 = Fraction(n.offset).limit_denominator(96)
        out.append((t0, t0 + Fraction(n.quarterLength).limit_denominator(96), n.pitch.midi))
    return out


def _sounding(notes: Iterable[tuple[Fraction, Fraction, int]], a: Fraction, b: Fraction) -> list[int]:
    return [p for t0, t1, p in notes if t0 < b and t1 > a]


def audit(xml: Path, lead_names: tuple[str, ...], pad_names: tuple[str, ...]) -> Audit:
    """Every quarter-note beat where a pad note sounds: pad notes at or above the lowest
    lead-section note sounding with them in the beat, and adjacent voices (at each instant of the beat
    where a note starts) below their low-interval limit, one of them a pad note."""
    from music21 import converter

    score = converter.parse(str(xml)).toSoundingPitch()          # music21 as the reader
    by_name = {p.partName: p for p in score.parts}
    assert set(lead_names) | set(pad_names) <= set(by_name), sorted(by_name)
    lead = [n for name in lead_names for n in _notes(by_name[name])]
    pad = {name: _notes(by_name[name]) for name in pad_names}
    pad_all = [n for ns in pad.values() for n in ns]
    end = max(t1 for _t0, t1, _p in lead + pad_all)
    out = Audit()
    for k in range(int(end) + 1):
        a, b = Fraction(k), Fraction(k + 1)
        if not _sounding(pad_all, a, b):
            continue
        out.beats += 1
        for name, ns in pad.items():
            for t0, t1, p in ns:
                if not (t0 < b and t1 > a):
                    continue
                # the lead-section notes sounding with this pad note inside the beat
                low = _sounding(lead, max(a, t0), min(b, t1))
                if low and p >= min(low):
                    out.above.append((k, name, p, min(low)))
        instants = sorted({a} | {t0 for t0, _t1, _p in lead + pad_all if a < t0 < b})
        pairs: set[tuple[int, int]] = set()
        for t in instants:
            here = [(p, False) for p in _sounding(lead, t, t + Fraction(1, 96))]
            here += [(p, True) for p in _sounding(pad_all, t, t + Fraction(1, 96))]
            here.sort()
            for (lo, lo_pad), (hi, hi_pad) in zip(here, here[1:], strict=False):
                limit = LOW_LIMITS.get(hi - lo)
                if (lo_pad or hi_pad) and limit is not None and lo < limit:
                    pairs.add((lo, hi))
        out.muddy += [(k, lo, hi) for lo, hi in sorted(pairs)]
    return out


@pytest.fixture(scope="module")
def audits(tmp_path_factory: pytest.TempPathFactory) -> dict[str, Audit]:
    folder = tmp_path_factory.mktemp("audit-pads")
    out = {}
    for name, (source, lead_names, pad_names) in PROJECTS.items():
        if isinstance(source, Path):
            path = source
        else:
            path = folder / f"{name}.toml"
            path.write_text(source, encoding="utf-8")
        dest = folder / f"out-{name}"
        res = run_cli("build", str(path), "-o", str(dest), "--formats", "musicxml")
        assert res.exit_code == 0, (name, res.output)
        out[name] = audit(next(dest.glob("*.musicxml")), lead_names, pad_names)
    return out


@pytest.mark.parametrize("name", sorted(PROJECTS))
def test_pad_sits_under_the_section_within_the_low_interval_limits(audits: dict[str, Audit],
                                                                     name: str) -> None:
    a = audits[name]
    assert a.beats > 0                                  # the pad sounds at all
    assert not a.above, (name, len(a.above), a.above[:8])
    assert not a.muddy, (name, len(a.muddy), a.muddy[:8])


def test_a_pad_with_no_room_under_the_section_rests_and_says_so(tmp_path: Path) -> None:
    """Trumpets as a pad under a trombone lead: no trumpet note lies under the trombones within
    the limits, so the pad rests through every chord (music21 reads only rests on its staves)
    and the report names each chord; stated ``placement = "among"`` it sounds."""
    import json

    from music21 import converter

    text = BASIC + _pad("trumpets-4", "1")
    (tmp_path / "p.toml").write_text(text, encoding="utf-8")
    res = run_cli("build", str(tmp_path / "p.toml"), "-o", str(tmp_path / "o"),
                  "--formats", "musicxml,report")
    assert res.exit_code == 0, res.output
    report = json.loads((tmp_path / "o" / "test-cue.report.json").read_text(encoding="utf-8"))
    rests = [w for w in report["warnings"] if w["kind"] == "layer-rest"]
    assert rests and not report["layers"][0]["notes"]
    assert all("rests through" in w["message"] and "lowest note" in w["message"] and w["bar"] for w in rests)
    score = converter.parse(str(tmp_path / "o" / "test-cue.musicxml"))      # music21 as the reader
    for part in score.parts:
        if part.partName in TRUMPETS:
            assert not part.flatten().notes
    among = text.replace('dynamics = "p"\n', 'dynamics = "p"\nplacement = "among"\n')
    (tmp_path / "q.toml").write_text(among, encoding="utf-8")
    res = run_cli("build", str(tmp_path / "q.toml"), "-o", str(tmp_path / "q"), "--formats", "report")
    assert res.exit_code == 0, res.output
    report = json.loads((tmp_path / "q" / "test-cue.report.json").read_text(encoding="utf-8"))
    assert report["layers"][0]["notes"] and report["layers"][0]["placement"] == "among"
    assert not [w for w in report["warnings"] if w["kind"] == "layer-rest"]


def test_an_unknown_placement_is_refused(tmp_path: Path) -> None:
    (tmp_path / "p.toml").write_text(BASIC + _pad("trumpets-4", "1").replace(
        'dynamics = "p"\n', 'dynamics = "p"\nplacement = "over"\n'), encoding="utf-8")
    res = run_cli("build", str(tmp_path / "p.toml"), "-o", str(tmp_path / "o"))
    assert res.exit_code == 2 and "placement" in res.output and "under" in res.output
    assert len(res.output.strip().splitlines()) == 1 and not (tmp_path / "o").exists()
