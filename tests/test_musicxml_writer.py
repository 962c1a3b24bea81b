"""The written score, parts and MIDI read back by outside readers, for every demo and for
projects in the meters whose beaming differs (6/8, 12/8, 7/8 and a shuffle written in 12/8).

Outside references, named beside each check:
* the MusicXML 4.0 XSD shipped in the ``musicxml`` package (read by ``xmlschema``);
* music21 (``converter.parse``, ``toSoundingPitch``, ``beams``, ``key.Key``, ``instrument``)
  partitura (``load_musicxml``, ``note_array``) and verovio (its own MusicXML importer and
  MIDI rendition) as three independent readers of the same file;
* mido for the Standard MIDI File;
* the beaming rule of common notation practice (engraving handbooks; no single published
  source): beams group the notes of one beat, never across a beat group of the meter;
  4/4 beams by the quarter or by the half bar, never across its middle; 6/8 and 12/8
  by the dotted quarter; 7/8 as 2+2+3 eighths.

``report.json`` is the project's own statement of the music; every check compares what a
reader gets from the files with it.
"""
from __future__ import annotations

import base64
import io
import json
import re
import subprocess
import sys
from fractions import Fraction
from pathlib import Path

import pytest
from conftest import BASIC, DEMOS, ROOT, in_report_order, part_notes, run_cli, sounding_events, write_project

from arrange.writers.symbols import m21_figure

Q = Fraction

# the beat groups of common notation practice, in quarter notes from the bar line:
# (groups a beam must stay inside, units whose beamable notes must be beamed together)
BEAT_GROUPS = {
    "4/4": ((Q(0), Q(2), Q(4)), (Q(0), Q(1), Q(2), Q(3), Q(4))),
    "6/8": ((Q(0), Q(3, 2), Q(3)), (Q(0), Q(3, 2), Q(3))),
    "12/8": ((Q(0), Q(3, 2), Q(3), Q(9, 2), Q(6)), (Q(0), Q(3, 2), Q(3), Q(9, 2), Q(6))),
    "7/8": ((Q(0), Q(1), Q(2), Q(7, 2)), (Q(0), Q(1), Q(2), Q(7, 2))),
}

# our instrument keys -> music21's instrument classes (GM programs and transpositions)
M21_CLASSES = {"alto-sax": "AltoSaxophone", "tenor-sax": "TenorSaxophone", "baritone-sax": "BaritoneSaxophone",
               "soprano-sax": "SopranoSaxophone", "trumpet": "Trumpet", "trombone": "Trombone",
               "bass-trombone": "BassTrombone", "violin": "Violin", "viola": "Viola", "cello": "Violoncello",
               "double-bass": "Contrabass", "horn": "Horn", "clarinet": "Clarinet", "flute": "Flute",
               "tuba": "Tuba"}

METER_PROJECTS = {
    "six-eight": ('meter = "6/8"', 'cell = "8 8 8 16 16 8 4."'),
    "twelve-eight": ('meter = "12/8"', 'cell = "8 8 8 4 8 16 16 8 8"'),
    "seven-eight": ('meter = "7/8"', 'cell = "8 8 8 8 8 16 16 8"'),
    "shuffle-12-8": ('meter = "4/4"', 'groove = "shuffle"\nnotate = "12/8"\ncell = "8 8 8 8 4 8 8"'),
    "straight-16ths": ('meter = "4/4"', 'cell = "8 16 16 8 8 4 8. 16"'),
}


def _meter_project(folder: Path, name: str) -> Path:
    meter, rhythm = METER_PROJECTS[name]
    text = (BASIC.replace('title = "Test Cue"', f'title = "{name}"')
            .replace('meter = "4/4"', meter)
            .replace("statements = 4", "statements = 6")
            .replace("[harmony]", f"[rhythm]\n{rhythm}\n\n[harmony]")
            + '\n[output]\nformats = ["musicxml", "midi", "report"' + (', "preview"' if "12-8" in name else "")
            + ']\n')
    return write_project(folder, text, f"{name}.toml")


@pytest.fixture(scope="module")
def built(tmp_path_factory: pytest.TempPathFactory) -> dict[str, tuple[Path, dict]]:
    """Every demo (score and parts) and the meter projects, built once through the CLI:
    ``{slug: (folder, report)}``."""
    out = tmp_path_factory.mktemp("writer")
    r = run_cli("demo", "-o", str(out / "demos"), "--parts")
    assert r.exit_code == 0, r.output
    src = tmp_path_factory.mktemp("src")
    for name in METER_PROJECTS:
        r = run_cli("build", str(_meter_project(src, name)), "-o", str(out / "meters"), "--parts")
        assert r.exit_code == 0, r.output
    found = {}
    for rep in sorted(out.glob("*/*.report.json")):
        found[rep.name.removesuffix(".report.json")] = (rep.parent, json.loads(rep.read_text()))
    assert len(found) == len(list(DEMOS.glob("*.toml"))) + len(METER_PROJECTS)
    return found


def _files(built: dict[str, tuple[Path, dict]]) -> list[tuple[Path, dict, list[int]]]:
    """(file, report, report part index of each part in the file) for every score and part."""
    out = []
    for slug, (folder, report) in built.items():
        n = len(report["section"]["parts"]) + sum(len(la["parts"]) for la in report.get("layers", []))
        out.append((folder / f"{slug}.musicxml", report, list(range(n))))
        for p in sorted((folder / f"{slug}-parts").glob("part*.musicxml")):     # the parts' own folder
            k = int(re.match(r"part(\d+)-", p.name).group(1)) - 1     # type: ignore[union-attr]
            if k < n:          # the rhythm section's parts have their own tests
                out.append((p, report, [k]))
    return out


def _rhythm_parts(report: dict, ks: list[int]) -> int:
    """The rhythm section's staves a score carries after ours (a part file: none)."""
    return len((report.get("rhythm_section") or {}).get("parts", [])) if len(ks) > 1 or ks == [] else 0


def _parts_info(report: dict) -> list[dict]:
    """Lead-section parts then layer parts, as the score lists them."""
    return list(report["section"]["parts"]) + [p for la in report.get("layers", []) for p in la["parts"]]


def _sounding_notes(report: dict, k: int) -> list[tuple[Fraction, Fraction, int]]:
    """(onset from the first written beat, duration, sounding MIDI pitch) of part ``k``,
    as the report gives them (lead-section events, then layers' notes)."""
    pickup = Q(report["rhythm"]["pickup"]).limit_denominator(96)
    n_lead = len(report["section"]["parts"])
    if k < n_lead:
        rows = part_notes(report, k)       # a part holding its pitch over a chord change is tied
    else:
        j = k - n_lead
        rows = []
        for la in report["layers"]:
            if j < len(la["parts"]):
                rows = [(n["onset"], n["duration"], n["pitches"][j]) for n in la["notes"]
                        if n["pitches"][j] is not None]
                break
            j -= len(la["parts"])
    return sorted((Q(o).limit_denominator(96) + pickup, Q(d).limit_denominator(96), p) for o, d, p in rows)


def _m21(path: Path):  # noqa: ANN202
    from music21 import converter

    return converter.parse(str(path))            # music21 as the reader


def _scale(report: dict) -> Fraction:
    """Written quarter notes per report quarter: the report gives written times (a shuffle
    written in 12/8 already in its compound values)."""
    del report
    return Q(1)


# ---------------------------------------------------------------------------------------------
# schema


def test_every_score_and_part_validates_against_the_musicxml_4_xsd(built, musicxml_schema) -> None:
    files = _files(built)
    assert len(files) > len(built)
    for path, _, _ in files:
        musicxml_schema.validate(str(path))        # MusicXML 4.0 XSD (musicxml package)


# ---------------------------------------------------------------------------------------------
# music21


def _heads(part) -> list[tuple[Fraction, Fraction, int]]:  # noqa: ANN001
    """(onset, tied duration, MIDI pitch) of each note a player starts, ties followed."""
    from music21 import note

    out = []
    open_ties: dict[int, int] = {}
    for n in part.flatten().getElementsByClass(note.Note):
        on = Q(n.getOffsetInHierarchy(part)).limit_denominator(96)
        d = Q(n.quarterLength).limit_denominator(96)
        p = n.pitch.midi
        kind = n.tie.type if n.tie is not None else None
        if kind in ("stop", "continue") and p in open_ties:
            i = open_ties[p]
            o, dd, _ = out[i]
            out[i] = (o, dd + d, p)
            if kind == "stop":
                del open_ties[p]
            continue
        out.append((on, d, p))
        if kind == "start":
            open_ties[p] = len(out) - 1
    return sorted(out)


def test_music21_reads_the_sounding_notes_ties_and_transpositions(built) -> None:
    from music21 import instrument

    for path, report, ks in _files(built):
        score = _m21(path)
        info = _parts_info(report)
        assert len(score.parts) == len(ks) + _rhythm_parts(report, ks), path.name
        for part, k in zip(in_report_order(score, report)[:len(ks)], ks, strict=True):
            inst = part.getInstrument(returnDefault=False)
            shift = inst.transposition.semitones if inst is not None and inst.transposition else 0
            # written minus sounding is the instrument's transposition (music21's interval
            # points from written to sounding); a part file is always written pitch
            assert -shift == info[k]["transposition"], (path.name, k)
            assert part.atSoundingPitch is False or info[k]["transposition"] == 0
            sounding = part.toSoundingPitch()       # music21 puts the part at concert pitch
            assert isinstance(inst, instrument.Instrument)
            want = [(o * _scale(report), d * _scale(report), p) for o, d, p in _sounding_notes(report, k)]
            assert _heads(sounding) == want, (path.name, k)


def test_music21_reads_the_key_and_time_signatures(built) -> None:
    from music21 import interval, key, meter, stream

    for path, report, ks in _files(built):
        score = _m21(path)
        # the key changes the score writes as signatures (a modulating chain: at its arrival)
        changes = {1: report["key"]} | {c["bar"]: c["key"] for c in report.get("signatures", [])}
        pickup = 1 if report["rhythm"]["pickup"] else 0
        for part, k in zip(in_report_order(score, report)[:len(ks)], ks, strict=True):
            measures = list(part.getElementsByClass(stream.Measure))
            ts = measures[0].getElementsByClass(meter.TimeSignature)[0]
            assert ts.ratioString == report["rhythm"]["written_meter"], path.name
            semis = _parts_info(report)[k]["transposition"]
            seen = {}
            for i, m in enumerate(measures):
                for sig in m.getElementsByClass(key.KeySignature):
                    seen[max(1, i + 1 - pickup)] = sig.sharps
            assert set(seen) == set(changes), (path.name, k)
            for bar, name in changes.items():
                tonic, mode = name.split()
                concert = key.Key(tonic.replace("b", "-"), mode)      # music21 names a mode's signature
                written = concert.transpose(interval.Interval(semis)) if semis else concert
                # the same signature a player of this instrument reads, up to enharmonic choice
                assert seen[bar] in (written.sharps, written.sharps - 12, written.sharps + 12), \
                    (path.name, k, bar)
                assert (seen[bar] - written.sharps) % 12 == 0


def _symbol(cs) -> str:  # noqa: ANN001
    """Our symbol as a music21 ChordSymbol prints it: root (flats as b) + kind text."""
    root = cs.root().name.replace("-", "b")
    text = cs.chordKindStr
    bass = cs.bass().name.replace("-", "b") if cs.bass() is not None else root
    return root + text + (f"/{bass}" if bass != root else "")


def _lead_symbols(path: Path, report: dict) -> list[tuple[Fraction, str]]:
    """(offset in the part, symbol) of the chord symbols over the file's lead staff (the
    score stands in score order: the lead found by name), read by music21 at sounding pitch:
    ``toSoundingPitch`` of a transposed staff (a reader takes a part's ``<harmony>`` as
    written pitch, MusicXML 4.0)."""
    from music21 import harmony

    part = in_report_order(_m21(path), report)[0]
    if report["section"]["parts"][0]["transposition"] and "Concert score" not in path.read_text():
        part = part.toSoundingPitch()
    return sorted((Q(cs.getOffsetInHierarchy(part)).limit_denominator(96), _symbol(cs))
                  for cs in part.flatten().getElementsByClass(harmony.ChordSymbol))


def test_music21_reads_the_chord_symbols_of_every_event(built) -> None:
    """At each lead note the last chord symbol printed names the report's chord, read at
    sounding pitch: the score's and the part's symbols over a transposed staff are written
    for it, so that music21's ``toSoundingPitch`` gives the concert symbol back."""
    transposed = 0
    for path, report, ks in _files(built):
        if ks[0] >= len(report["section"]["parts"]) or (len(ks) == 1 and ks[0] != 0):
            continue       # symbols stand over the lead part only
        transposed += bool(report["section"]["parts"][0]["transposition"]) and len(ks) > 1
        pickup = Q(report["rhythm"]["pickup"]).limit_denominator(96)
        syms = _lead_symbols(path, report)
        assert syms, path.name
        for e in sounding_events(report):      # each segment's chord too (a change under a held note)
            on = (Q(e["onset"]).limit_denominator(96) + pickup) * _scale(report)
            last = [s for o, s in syms if o <= on]
            if not last and e["onset"] < 0:
                continue         # a pickup under bar 1's chord: the symbol stands over bar 1
            assert last and last[-1] == e["chord"], (path.name, e["index"], e["onset"], last[-1:], e["chord"])
    assert transposed           # a transposed score with a transposed lead was read


def test_a_chord_starting_where_the_lead_rests_has_its_symbol_at_its_beat(tmp_path: Path) -> None:
    """A chord symbol marks where the harmony changes, not a melody note (common practice of
    lead sheets and charts): a framework chord that starts on a beat where the lead rests
    takes its symbol on that beat (music21 reads the score), and at every framework beat the
    symbol in force names the chord there (same root) or the lead note sounding across it."""
    from music21 import harmony

    text = (BASIC.replace('framework = "F6 | F6 | Gm7 C7 | F6"',
                          'framework = "F6:3 D7:1 | Gm7:3 C7:1 | F6:3 D7:1 | Gm7 C7 | F6"')
            .replace("[harmony]", '[rhythm]\ngroove = "straight"\ncell = "4 4 4 r4"\n\n[harmony]'))
    proj = write_project(tmp_path, text)
    r = run_cli("build", str(proj), "-o", str(tmp_path / "o"), "--formats", "musicxml,report")
    assert r.exit_code == 0, r.output
    report = json.loads((tmp_path / "o" / "test-cue.report.json").read_text())
    syms = _lead_symbols(tmp_path / "o" / "test-cue.musicxml", report)
    pickup = Q(report["rhythm"]["pickup"]).limit_denominator(96)
    spans = [(Q(e["onset"]).limit_denominator(96), Q(e["onset"] + e["duration"]).limit_denominator(96))
             for e in sounding_events(report)]      # a chord change under a held note: its segment
    rested = 0
    for fc in report["framework"]:
        on = Q(fc["onset"]).limit_denominator(96)
        sounding = [(a, b) for a, b in spans if a <= on < b]
        last = [(o, s) for o, s in syms if o <= on + pickup]
        assert last, fc
        o, sym = last[-1]
        root = harmony.ChordSymbol(m21_figure(fc["chord"])).root().pitchClass
        if not sounding:                 # the lead rests: the symbol stands on the chord's beat
            rested += 1
            assert o == on + pickup and harmony.ChordSymbol(m21_figure(sym)).root().pitchClass == root, \
                (fc["bar"], fc["chord"], float(o), sym)
        else:                            # the lead sounds: its chord is the one in force
            held = next(e for e in sounding_events(report)
                        if Q(e["onset"]).limit_denominator(96) == sounding[0][0])
            assert sym == held["chord"], (fc["bar"], fc["chord"], sym, held["chord"])
    assert rested >= 2


# ---------------------------------------------------------------------------------------------
# beams


def _beam_problems(path: Path, meter_text: str, n_parts: int | None = None) -> list[str]:
    from music21 import note, stream

    groups, units = BEAT_GROUPS[meter_text]
    bad = []
    for part in _m21(path).parts[:n_parts]:
        for m in part.getElementsByClass(stream.Measure):
            pad = Q(m.paddingLeft).limit_denominator(96)     # an implicit pickup measure
            rows = []
            for n in m.notesAndRests:
                on = Q(n.offset).limit_denominator(96) + pad
                d = Q(n.quarterLength).limit_denominator(96)
                rows.append((on, d, n))
            rows.sort(key=lambda r: r[0])
            group_of = []          # beam group number per beamable note
            current = -1
            for _on, d, n in rows:
                if not isinstance(n, note.Note) or d > Q(1, 2) or n.duration.isGrace:
                    group_of.append(None)
                    continue
                b = n.beams.getByNumber(1) if n.beams and len(n.beams) else None
                kind = b.type if b is not None else None
                if kind == "start" or (kind in ("continue", "stop") and current < 0):
                    current = len(group_of) + 1000
                group_of.append(current if kind else None)
                if kind == "stop":
                    current = -1
            where = f"{path.name} {part.id} m.{m.number}"
            # a beam group stays inside one beat group of its meter
            spans: dict[int, list[Fraction]] = {}
            for (on, d, _), g in zip(rows, group_of, strict=True):
                if g is not None:
                    spans.setdefault(g, []).extend([on, on + d])
            for ts in spans.values():
                lo, hi = min(ts), max(ts)
                if any(lo < edge < hi for edge in groups):
                    bad.append(f"{where}: a beam crosses a beat group ({float(lo)}-{float(hi)})")
            # neighbouring beamable notes inside one beat unit are beamed together
            for i in range(1, len(rows)):
                (on0, d0, n0), (on1, d1, n1) = rows[i - 1], rows[i]
                both = all(isinstance(x, note.Note) and d <= Q(1, 2) for x, d in ((n0, d0), (n1, d1)))
                if not both or on0 + d0 != on1:
                    continue
                unit = max(u for u in units if u <= on0)
                nxt = min(u for u in units if u > on0)
                if on1 + d1 <= nxt and on1 >= unit and (group_of[i] is None or group_of[i] != group_of[i - 1]):
                    bad.append(f"{where}: notes at {float(on0)} and {float(on1)} share a beat but no beam")
    return bad


def test_beams_group_by_the_beat_groups_of_the_meter(built) -> None:
    """Read back with music21 (``Note.beams``); the rule is common notation practice."""
    checked = 0
    for path, report, ks in _files(built):
        problems = _beam_problems(path, report["rhythm"]["written_meter"], len(ks))
        assert not problems, problems[:5]
        checked += 1
    assert checked >= len(built)


def test_the_beam_check_catches_a_beam_across_the_middle_of_4_4(tmp_path: Path) -> None:
    eighths = "".join(
        f'<note><pitch><step>C</step><octave>5</octave></pitch><duration>1</duration><type>eighth</type>'
        f'<beam number="1">{kind}</beam></note>'
        for kind in ("begin", "continue", "continue", "continue", "continue", "continue", "continue", "end"))
    xml = ('<score-partwise version="4.0"><part-list><score-part id="P1"><part-name>x</part-name>'
           '</score-part></part-list><part id="P1"><measure number="1"><attributes><divisions>2'
           '</divisions><time><beats>4</beats><beat-type>4</beat-type></time></attributes>'
           f'{eighths}</measure></part></score-partwise>')
    f = tmp_path / "x.musicxml"
    f.write_text(xml)
    assert any("crosses" in p for p in _beam_problems(f, "4/4"))


# ---------------------------------------------------------------------------------------------
# partitura and verovio


def test_partitura_reads_the_same_written_notes(built) -> None:
    import partitura

    for path, report, ks in _files(built):
        ps = partitura.load_musicxml(str(path))         # partitura as the reader (ties merged)
        info = _parts_info(report)
        assert len(ps.parts) == len(ks) + _rhythm_parts(report, ks)
        for part, k in zip(ps.parts[:len(ks)], _score_order(path, ks), strict=True):
            na = part.note_array()
            got = sorted((Q(float(o)).limit_denominator(96), Q(float(d)).limit_denominator(96), int(p))
                         for o, d, p in zip(na["onset_quarter"], na["duration_quarter"], na["pitch"], strict=True))
            # partitura gives written pitch: sounding + the instrument's transposition
            semis = info[k]["transposition"] if len(ks) == 1 or _transposed(path) else 0
            # partitura counts time from bar 1's downbeat (a pickup at negative times), as the report
            pickup = Q(report["rhythm"]["pickup"]).limit_denominator(96)
            want = [(o - pickup, d, p + semis) for o, d, p in _sounding_notes(report, k)]
            assert got == want, (path.name, k)


def _score_order(path: Path, ks: list[int]) -> list[int]:
    """The report indices of our parts in the order the file lists them: each ``<score-part
    id="P{k+1}">`` is report part ``k`` (the score stands in score order, saxophones above
    brass, which need not be the report's order)."""
    import re
    import xml.etree.ElementTree as ET

    ids = [sp.get("id", "") for sp in ET.parse(path).getroot().iter("score-part")]
    order = [int(m.group(1)) - 1 for i in ids if (m := re.fullmatch(r"P(\d+)", i))]
    return order if len(ks) > 1 else ks


def _transposed(path: Path) -> bool:
    return "<transpose>" in path.read_text()


def test_verovio_plays_the_same_sounding_notes(built) -> None:
    import mido
    import verovio

    for path, report, ks in _files(built):
        tk = verovio.toolkit()                    # verovio's own MusicXML importer
        assert tk.loadData(path.read_text()), path.name
        midi = mido.MidiFile(file=io.BytesIO(base64.b64decode(tk.renderToMIDI())))
        tracks = [t for t in midi.tracks if any(m.type == "note_on" for m in t)][:len(ks)]
        assert len(tracks) == len(ks), path.name
        tpq = midi.ticks_per_beat
        for track, k in zip(tracks, _score_order(path, ks), strict=True):
            t, got = 0, []
            for msg in track:
                t += msg.time
                if msg.type == "note_on" and msg.velocity:
                    got.append((Q(t, tpq), msg.note))
            want = sorted((o * _scale(report), p) for o, _, p in _sounding_notes(report, k))
            assert sorted(got) == want, (path.name, k)


# ---------------------------------------------------------------------------------------------
# MIDI


def test_mido_reads_notes_programs_tempo_meter_and_swing(built) -> None:
    import mido
    from music21 import instrument

    for slug, (folder, report) in built.items():
        mf = mido.MidiFile(str(folder / f"{slug}.mid"))          # Standard MIDI File via mido
        tpq = mf.ticks_per_beat
        head = mf.tracks[0]
        tempo = [m.tempo for m in head if m.type == "set_tempo"][0]
        # the tempo is per quarter; a shuffle written in 12/8 keeps the project's beat
        assert abs(mido.tempo2bpm(tempo) - report["tempo"] * (1.5 if report["rhythm"].get("notate") == "12/8"
                                                              else 1)) < 0.01
        ts = [m for m in head if m.type == "time_signature"][0]
        assert f"{ts.numerator}/{ts.denominator}" == report["rhythm"]["written_meter"]
        tracks = {t.name: t for t in mf.tracks[1:]}
        pickup = Q(report["rhythm"]["pickup"]).limit_denominator(96)
        swing = report.get("swing") or 0.5
        swung = report["groove"] in ("swing", "shuffle") and report["rhythm"].get("notate") != "12/8"
        for k, spec in enumerate(report["section"]["parts"]):
            track = tracks[spec["name"]]
            program = [m.program for m in track if m.type == "program_change"][0]
            ref = M21_CLASSES.get(spec["instrument"])
            if ref is not None:       # music21's instrument classes know the GM program (0-based)
                assert program == getattr(instrument, ref)().midiProgram, spec["name"]
            t, notes, on = 0, [], {}
            for msg in track:
                t += msg.time
                if msg.type == "note_on" and msg.velocity:
                    on[msg.note] = t
                elif msg.type in ("note_off", "note_on") and msg.note in on:
                    notes.append((on.pop(msg.note), msg.note))
            notes.sort()
            want = []
            for onset, _d, pitch in part_notes(report, k):    # a tied note is struck once
                o = Q(onset).limit_denominator(96) + pickup
                if swung and o % 1 == Q(1, 2):
                    # a swung off-beat eighth sounds at the swing ratio of its beat (MusicXML 4.0
                    # <swing> semantics; shuffle 2/3)
                    o = o - Q(1, 2) + Q(swing).limit_denominator(100)
                want.append((round(o * tpq), pitch))
            assert notes == sorted(want), (slug, spec["name"])


# ---------------------------------------------------------------------------------------------
# imports


def test_a_build_that_reads_no_input_file_never_imports_music21(tmp_path: Path) -> None:
    """music21 stays the reader of motif files; writing is our own, and the PNG comes
    without cairosvg (sys.modules is the interpreter's record of what was imported)."""
    proj = write_project(tmp_path, BASIC + '\n[output]\nformats = ["musicxml", "midi", "report", "preview"]\n')
    code = ("import sys\nfrom arrange.cli import main\n"
            "try:\n    main(['build', sys.argv[1], '-o', sys.argv[2], '--parts'])\n"
            "except SystemExit as e:\n    assert not e.code, e.code\n"
            "print('music21' in sys.modules, 'cairosvg' in sys.modules)\n")
    r = subprocess.run([sys.executable, "-c", code, str(proj), str(tmp_path / "out")],
                       capture_output=True, text=True, cwd=ROOT, timeout=300)
    assert r.returncode == 0, r.stderr[-2000:]
    assert r.stdout.strip().splitlines()[-1] == "False False"
    out = tmp_path / "out"
    assert list(out.glob("*.musicxml")) and list(out.glob("*.mid"))
    # the preview's PNG from a renderer that needs no system library (PNG signature, ISO/IEC 15948)
    assert next(out.glob("*.png")).read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"


# ---------------------------------------------------------------------------------------------
# preview: key signatures per staff


def _mei_keys(mei: str) -> dict[int, dict[str, int]]:
    """Staff -> {measure n: fifths in force} as verovio's own MEI says (MEI 4: a scoreDef's
    keySig holds for every staff, a staffDef's for its staff)."""
    import xml.etree.ElementTree as ET

    ns = "{http://www.music-encoding.org/ns/mei}"

    def fifths(sig: str) -> int:
        return 0 if sig in ("0", "") else int(sig[:-1]) * (1 if sig.endswith("s") else -1)

    root = ET.fromstring(mei)
    current: dict[int, int] = {}
    staves: list[int] = []
    out: dict[int, dict[str, int]] = {}
    for el in root.iter():
        if el.tag == ns + "scoreDef":
            ks = el.find(ns + "keySig")
            if ks is not None:
                for n in staves or current:
                    current[n] = fifths(ks.get("sig", "0"))
            for sd in el.iter(ns + "staffDef"):
                n = int(sd.get("n", "0"))
                if n not in staves:
                    staves.append(n)
                k = sd.find(ns + "keySig")
                if k is not None:
                    current[n] = fifths(k.get("sig", "0"))
                elif ks is not None or n not in current:
                    current.setdefault(n, current.get(n, 0))
        elif el.tag == ns + "measure":
            for n in staves:
                out.setdefault(n, {})[el.get("n", "")] = current.get(n, 0)
    return out


def test_the_preview_draws_every_staff_in_its_own_key(built) -> None:
    """verovio (its MEI, after the preview's engraving input) against music21's reading of
    the MusicXML: the key signature in force on every staff in every measure."""
    from music21 import key, stream

    from arrange.writers import preview

    checked = 0
    for slug, (folder, report) in built.items():
        path = folder / f"{slug}.musicxml"
        xml = path.read_bytes()
        tk = preview.toolkit_for(xml)                     # what the preview draws from
        got = _mei_keys(tk.getMEI())
        score = _m21(path)                                # music21 as the reference reader
        ours = len(_parts_info(report))                   # the rhythm section's staves: their own tests
        for n, part in enumerate(score.parts[:ours], start=1):
            sharps = None
            for m in part.getElementsByClass(stream.Measure):
                for ks in m.getElementsByClass(key.KeySignature):
                    sharps = ks.sharps
                assert got[n][str(m.number)] == sharps, (slug, n, m.number)
                checked += 1
    assert checked


_HARM_SVG = re.compile(r'class="harm">.*?class="text bounding-box">\s*<rect x="(-?\d+)" y="(-?\d+)" '
                       r'height="(\d+)" width="(\d+)".*?font-size="(\d+)px">([^<]*)<', re.S)


def test_no_two_chord_symbols_closer_than_three_quarters_of_an_em(built) -> None:
    """verovio's own bounding boxes (its ``svgBoundingBoxes`` option) of every chord symbol
    on every page the preview draws: two symbols keep about 3/4 em apart (common practice of
    engraving: "Bb7 Cmaj7" never reads "Bb7Cmaj7"), measured in the symbol's font size."""
    from arrange.writers import preview

    pairs = 0
    for slug, (folder, _report) in built.items():
        tk = preview.toolkit_for((folder / f"{slug}.musicxml").read_bytes())   # what the preview draws
        tk.setOptions({"svgBoundingBoxes": True})
        for page in range(1, tk.getPageCount() + 1):
            boxes = [m.groups() for m in _HARM_SVG.finditer(tk.renderToSVG(page))]
            for i, a in enumerate(boxes):
                x1, y1, h1, w1, em = (int(v) for v in a[:5])
                for b in boxes[i + 1:]:
                    x2, y2, h2, w2, _ = (int(v) for v in b[:5])
                    dx = max(0, x2 - (x1 + w1), x1 - (x2 + w2))
                    dy = max(0, y2 - (y1 + h1), y1 - (y2 + h2))
                    gap = (dx * dx + dy * dy) ** 0.5 / em
                    assert gap >= 0.75, (slug, page, a[5], b[5], round(gap, 2))
                    pairs += 1
        drawn = folder / f"{slug}.svg"       # the written preview: no measuring box left in a text
        if drawn.exists():
            assert "bounding-box" not in drawn.read_text(), slug
    assert pairs


_SVG = "{http://www.w3.org/2000/svg}"
_LEDGER = re.compile(r"M(-?\d+) (-?\d+) L(-?\d+) (-?\d+)")
# what a tempo mark or a style word must not touch: noteheads, their accidentals, articulations,
# stems and flags (verovio's boxes), ledger lines (verovio draws them as paths, with no box),
# and chord symbols
_OBSTACLES = ("note", "accid", "artic", "stem", "flag")


def _box(el) -> tuple[float, float, float, float] | None:  # noqa: ANN001
    r = el.find(f"{_SVG}rect")
    if r is None:
        return None
    x, y, w, h = (float(r.get(k, "0")) for k in ("x", "y", "width", "height"))
    return (x, y, x + w, y + h)


def _marks_and_obstacles(svg: str) -> tuple[list, list]:
    """verovio's bounding boxes (``svgBoundingBoxes``) of one page: the tempo marks' and
    directions' text boxes, and every obstacle (with chord symbols' text boxes and ledger lines)."""
    import xml.etree.ElementTree as ET

    marks, things = [], []

    def walk(el, owner: str | None) -> None:  # noqa: ANN001
        cls = el.get("class", "")
        if el.tag == f"{_SVG}g" and cls in ("tempo", "dir", "harm"):
            owner = cls
        if el.tag == f"{_SVG}g" and cls == "text bounding-box" and owner and (b := _box(el)):
            (things if owner == "harm" else marks).append((owner, b))
        if el.tag == f"{_SVG}g" and cls.endswith(" bounding-box") and cls.split()[0] in _OBSTACLES \
                and (b := _box(el)):
            things.append((cls.split()[0], b))
        if el.tag == f"{_SVG}g" and cls.startswith("ledgerLines"):
            for path in el.findall(f"{_SVG}path"):
                if m := _LEDGER.match(path.get("d", "")):
                    x1, y1, x2, _y2 = (float(v) for v in m.groups())
                    w = float(path.get("stroke-width", "0")) / 2
                    things.append(("ledger line", (x1, y1 - w, x2, y1 + w)))
        for child in el:
            walk(child, owner)

    walk(ET.fromstring(svg), None)
    return marks, things


def test_tempo_marks_and_style_words_touch_no_note_ledger_line_or_chord_symbol(built) -> None:
    """verovio's own bounding boxes of every page the preview draws, for every demo: the
    metronome mark and the style word (common practice: above the staff and its chord
    symbols, clear of every note) overlap no notehead, accidental, articulation, stem,
    ledger line (which verovio's own spacing does not count) or chord symbol."""
    from arrange.writers import preview

    checked = 0
    for slug, (folder, _report) in built.items():
        tk = preview.toolkit_for((folder / f"{slug}.musicxml").read_bytes())   # what the preview draws
        tk.setOptions({"svgBoundingBoxes": True})
        for page in range(1, tk.getPageCount() + 1):
            marks, things = _marks_and_obstacles(tk.renderToSVG(page))
            for kind, (x0, y0, x1, y1) in marks:
                for what, (a0, b0, a1, b1) in things:
                    assert not (x0 < a1 and a0 < x1 and y0 < b1 and b0 < y1), (slug, page, kind, what)
                checked += 1
    assert checked


def _only(svg: bytes, show) -> str:  # noqa: ANN001
    """The picture with everything hidden but the groups ``show`` accepts (SVG visibility
    is inherited, and a child may make itself visible again)."""
    import xml.etree.ElementTree as ET

    ET.register_namespace("", "http://www.w3.org/2000/svg")
    ET.register_namespace("xlink", "http://www.w3.org/1999/xlink")
    root = ET.fromstring(svg)
    root.set("visibility", "hidden")
    for el in root.iter(f"{_SVG}g"):
        if show(el.get("class", "")):
            el.set("visibility", "visible")
    return ET.tostring(root, encoding="unicode")


def test_the_drawn_tempo_mark_and_style_word_touch_no_note(built) -> None:
    """The written preview of every demo drawn twice by resvg (the resvg-py wheel), once with
    only its tempo marks and style words, once with only its notes (heads, stems, flags,
    accidentals, articulations, beams), ledger lines and chord symbols, in the fonts this
    machine has: no pixel is ink in both (common practice of engraving: a tempo mark clears
    the notes)."""
    import resvg_py
    from PIL import Image, ImageChops

    obstacles = {"note", "accid", "artic", "stem", "flag", "beam", "harm"}
    checked = 0
    for slug in sorted(p.stem for p in DEMOS.glob("*.toml")):           # every demo asks for a preview
        folder = built[slug][0]
        svg = (folder / f"{slug}.svg").read_bytes()
        inks = []
        for show in (lambda c: c in ("tempo", "dir"),
                     lambda c: c in obstacles or c.startswith("ledgerLines")):
            png = bytes(resvg_py.svg_to_bytes(svg_string=_only(svg, show), background="white"))
            inks.append(Image.open(io.BytesIO(png)).convert("L").point(lambda v: 255 if v < 160 else 0))
        assert inks[0].getbbox() is not None               # the marks are drawn at all
        assert ImageChops.multiply(inks[0], inks[1]).getbbox() is None, slug
        checked += 1
    assert checked == len(list(DEMOS.glob("*.toml")))


def test_the_drawn_chord_symbols_touch_no_note(built) -> None:
    """The written preview of every demo drawn twice by resvg, once with only its chord
    symbols, once with only its notes (heads, stems, flags, accidentals, articulations,
    beams) and ledger lines, in the fonts this machine has: no pixel is ink in both (common
    practice of engraving: a chord symbol stands clear of the notes of the staff above and
    below it, their accents included)."""
    import resvg_py
    from PIL import Image, ImageChops

    obstacles = {"note", "accid", "artic", "stem", "flag", "beam"}
    bad = []
    for slug in sorted(p.stem for p in DEMOS.glob("*.toml")):           # every demo asks for a preview
        svg = (built[slug][0] / f"{slug}.svg").read_bytes()
        inks = []
        for show in (lambda c: c == "harm",
                     lambda c: c in obstacles or c.startswith("ledgerLines")):
            png = bytes(resvg_py.svg_to_bytes(svg_string=_only(svg, show), background="white"))
            inks.append(Image.open(io.BytesIO(png)).convert("L").point(lambda v: 255 if v < 160 else 0))
        assert inks[0].getbbox() is not None, slug          # the symbols are drawn at all
        # (grown by two pixels, foundry-shift-shout's symbols come within two pixels of an
        # accent of the staff above in 8 pixels: more room between staves would cost every
        # picture a sixth of its height; left)
        both = ImageChops.multiply(inks[0], inks[1])
        if both.getbbox() is not None:
            bad.append((slug, both.getbbox(), sum(1 for v in both.getdata() if v)))
    assert not bad, bad


def test_no_staff_name_or_note_is_cut_off_at_the_pictures_edge(built) -> None:
    """The PNG every demo writes, as written (drawn by resvg in the fonts this machine has,
    which may be wider than the ones verovio measures its staff names in): no ink in its
    outer four pixel columns, left or right (common practice of page layout: the staff names
    of the first system, the longest, stand inside the page)."""
    from PIL import Image

    checked = 0
    for slug in sorted(p.stem for p in DEMOS.glob("*.toml")):           # every demo asks for a preview
        png = Image.open(built[slug][0] / f"{slug}.png").convert("L")
        w, h = png.size
        for edge in ((0, 0, 4, h), (w - 4, 0, w, h)):
            ink = png.crop(edge).point(lambda v: 255 if v < 160 else 0).getbbox()
            assert ink is None, (slug, edge, ink)
        checked += 1
    assert checked == len(list(DEMOS.glob("*.toml")))


# ---------------------------------------------------------------------------------------------
# marks a player needs (issue 16), read back with music21


def test_rehearsal_letters_four_bars_apart_never_on_the_pickup_or_the_tempo_mark(built) -> None:
    """Common practice: letters where a rehearsal restarts, at least four bars apart."""
    from music21 import expressions, stream, tempo

    for path, report, _ in _files(built):
        form = bool(report.get("passages"))       # a form's sections each take their letter
        part = _m21(path).parts[0]
        bars = []
        for m in part.getElementsByClass(stream.Measure):
            if m.getElementsByClass(expressions.RehearsalMark):
                assert m.number >= 1, path.name                  # never on a pickup (measure 0)
                assert form or not m.getElementsByClass(tempo.MetronomeMark), path.name
                bars.append(m.number)
        # a form's passages each take their letter however short (issue 17); letters of phrases
        # four bars apart or more
        assert form or all(b - a >= 4 for a, b in zip(bars, bars[1:], strict=False)), (path.name, bars)


def test_no_dynamic_restated_without_a_change_or_a_rest_of_a_bar(built) -> None:
    from music21 import dynamics, note

    for path, report, ks in _files(built):
        num, den = (int(x) for x in report["rhythm"]["written_meter"].split("/"))
        bar = Q(4 * num, den)
        for part in _m21(path).parts[:len(ks)]:
            current, last_end = None, None
            for el in part.flatten().getElementsByClass((note.Note, dynamics.Dynamic)):
                on = Q(el.getOffsetInHierarchy(part)).limit_denominator(96)
                if isinstance(el, dynamics.Dynamic):
                    if el.value == current:
                        assert last_end is not None and on - last_end >= bar, (path.name, part.id, float(on))
                    current = el.value
                else:
                    last_end = on + Q(el.quarterLength).limit_denominator(96)


def test_a_change_of_level_inside_a_phrase_is_a_hairpin_to_the_new_mark(built) -> None:
    """Common practice of ensemble parts: a new dynamic that follows the last note by less
    than a bar is reached through a hairpin ending at it (a crescendo to a louder mark, a
    diminuendo to a softer one: music21's ``volumeScalar`` orders the marks), starting no
    more than a bar before it; every hairpin leads to such a mark (music21 reads both)."""
    from music21 import dynamics, note

    changes = 0
    for path, report, ks in _files(built):
        num, den = (int(x) for x in report["rhythm"]["written_meter"].split("/"))
        bar = Q(4 * num, den)
        for part in _m21(path).parts[:len(ks)]:
            flat = part.flatten()
            notes = [(Q(n.getOffsetInHierarchy(part)).limit_denominator(96), n) for n in flat.notes
                     if isinstance(n, note.Note)]
            wedges = []
            for w in part.spanners.getElementsByClass(dynamics.DynamicWedge):
                first, last = w.getFirst(), w.getLast()
                wedges.append((type(w).__name__, Q(first.getOffsetInHierarchy(part)).limit_denominator(96),
                               Q(last.getOffsetInHierarchy(part)).limit_denominator(96)))
            used = set()
            prev = None
            for d in flat.getElementsByClass(dynamics.Dynamic):
                on = Q(d.getOffsetInHierarchy(part)).limit_denominator(96)
                before = [(o, n) for o, n in notes if o < on]
                if prev is not None and d.value != prev.value and before:
                    o, n = before[-1]
                    if on - (o + Q(n.quarterLength).limit_denominator(96)) < bar:
                        kind = "Crescendo" if d.volumeScalar > prev.volumeScalar else "Diminuendo"
                        match = [w for w in wedges if w[0] == kind and w[2] == o and on - w[1] <= bar]
                        assert match, (path.name, part.id, float(on), prev.value, d.value, wedges)
                        used.add(match[0])
                        changes += 1
                prev = d
            assert used == set(wedges), (path.name, part.id, set(wedges) - used)
    assert changes


def test_every_key_change_stands_after_a_double_bar(built) -> None:
    from music21 import key, stream

    changes = 0
    for path, _, ks in _files(built):
        for part in _m21(path).parts[:len(ks)]:
            measures = list(part.getElementsByClass(stream.Measure))
            for before, m in zip(measures, measures[1:], strict=False):
                if m.getElementsByClass(key.KeySignature):
                    changes += 1
                    bl = before.rightBarline
                    assert bl is not None and bl.type == "double", (path.name, part.id, m.number)
    assert changes        # the demos modulate


@pytest.mark.parametrize("signatures", ["arrival", "each-statement"])
def test_a_modulating_chain_keeps_its_signature_until_the_key_it_arrives_in(tmp_path: Path,
                                                                           signatures: str) -> None:
    """Common practice of charts: a transition that modulates every statement keeps one key
    signature and reads the keys on the way with accidentals; the new signature stands,
    after a double bar, where it arrives (the last key change).  ``signatures =
    "each-statement"`` writes one at every statement's key.  music21 reads the signatures
    of every staff (score and parts) and the sounding notes, which stay the report's."""
    from music21 import key, note, stream

    text = (DEMOS / "copper-coast-transition.toml").read_text().replace(
        "[output]", f'[output]\nsignatures = "{signatures}"')
    proj = write_project(tmp_path, text, "cc.toml")
    r = run_cli("build", str(proj), "-o", str(tmp_path / "o"), "--formats", "musicxml,report", "--parts")
    assert r.exit_code == 0, r.output
    out = tmp_path / "o"
    report = json.loads((out / "copper-coast-transition.report.json").read_text())
    keys = [c["bar"] for c in report["keys"]]
    assert len(keys) == 3                        # C minor, then A, F# and Eb minor by statement
    want = {1, keys[-1]} if signatures == "arrival" else {1, *keys}
    files = [out / "copper-coast-transition.musicxml", *sorted(out.glob("*-parts/part*.musicxml"))]
    for path in files:
        for part in _m21(path).parts:
            if "Drums" in (part.partName or ""):
                continue
            measures = list(part.getElementsByClass(stream.Measure))
            got = {m.number for m in measures if m.getElementsByClass(key.KeySignature)}
            assert got == want, (path.name, part.partName, sorted(got))
    # the notes are the same whichever way the signatures stand (music21, sounding pitch)
    score = _m21(out / "copper-coast-transition.musicxml").toSoundingPitch()
    lead = [n.pitch.midi for n in score.parts[0].stripTies().flatten().getElementsByClass(note.Note)]
    assert lead == [e["lead"] for e in report["events"]]


def test_analysis_labels_in_the_score_only(built) -> None:
    """The analysis demo (an educator's copy) labels its statements in the score; its
    players' parts carry none."""
    from music21 import expressions

    label = re.compile(r"\d+\. (P|RI) [+-]\d+")
    with_labels = []
    for path, _, ks in _files(built):
        words = [t.content for p in _m21(path).parts
                 for t in p.flatten().getElementsByClass(expressions.TextExpression)]
        if any(label.fullmatch(w) for w in words):
            with_labels.append(path)
            assert len(ks) > 1 or not path.parent.name.endswith("-parts"), path.name
    assert with_labels and not any(p.parent.name.endswith("-parts") for p in with_labels)


def test_the_dotted_beat_of_a_12_8_tempo_mark_in_plain_glyphs(built) -> None:
    folder, _ = built["shuffle-12-8"]
    svg = (folder / "shuffle-12-8.svg").read_text()
    # verovio writes the metronome in SMuFL (U+ECA5 quarter, U+ECB7 augmentation dot), which
    # viewers without its font draw as boxes; the preview shows the Unicode quarter note and a dot
    assert "\u2669." in svg and "\uecb7" not in svg


def test_a_concert_score_puts_low_transposing_parts_in_bass_clef(tmp_path: Path) -> None:
    """At concert pitch tenor and baritone saxophone sound below the treble staff; their
    staves take the bass clef when it needs fewer ledger lines (common practice)."""
    from music21 import clef

    text = ((DEMOS / "night-ferry-soli.toml").read_text().replace("[output]", "[output]\nconcert_score = true")
            .replace('lead_range = ["E4", "G5"]', 'lead_range = ["Bb3", "D5"]'))      # a lower soli
    proj = write_project(tmp_path, text, "nf.toml")
    r = run_cli("build", str(proj), "-o", str(tmp_path / "o"), "--formats", "musicxml")
    assert r.exit_code == 0, r.output
    score = _m21(tmp_path / "o" / "night-ferry-soli.musicxml")
    clefs = {p.partName: p.flatten().getElementsByClass(clef.Clef)[0] for p in score.parts}
    assert isinstance(clefs["Baritone Sax"], clef.BassClef)
    assert isinstance(clefs["Alto Sax 1"], clef.TrebleClef)
    bari = next(p for p in score.parts if p.partName == "Baritone Sax")
    lows = [n.pitch.midi for n in bari.flatten().notes]
    assert sum(p < 60 for p in lows) > len(lows) / 2       # the baritone sounds mostly below middle C


@pytest.mark.parametrize("space", [" ", "  "])
def test_the_score_text_is_what_elementtree_writes(space: str) -> None:
    """``xml_document.xml_text`` (one pass, the tree left as it was) writes a tree character
    for character as the standard library's ``xml.etree.ElementTree.indent`` followed by
    ``tostring(encoding="unicode")`` do (the reference): escaped text, tails and attribute
    values (quotes, ampersands, line breaks, tabs), empty elements, blank and non-blank text
    and tails, deep nesting, non-ASCII text."""
    import copy
    import xml.etree.ElementTree as ET

    from arrange.writers.xml_document import xml_text

    root = ET.Element("score-partwise", version="4.0")
    work = ET.SubElement(root, "work")
    ET.SubElement(work, "work-title").text = 'Tom & "Jerry" <live> \u266d\u00e9'
    ET.SubElement(root, "empty")
    ET.SubElement(root, "blank").text = "   "
    odd = ET.SubElement(root, "credit", {"a": 'x"y&z<w>', "b": "line\nbreak\r\tt"})
    odd.text = "  "                        # blank text of an element with children: replaced
    kid = ET.SubElement(odd, "credit-words", justify="center")
    kid.text = "1 > 0"
    kid.tail = " kept tail & more "        # a non-blank tail stays
    ET.SubElement(odd, "x").tail = "\n   "  # a blank tail of the last child: the parent's level
    deep = root
    for k in range(6):
        deep = ET.SubElement(deep, f"level{k}", n=str(k))
    deep.text = "bottom"
    last = ET.SubElement(root, "last")
    last.tail = "not blank"
    reference = copy.deepcopy(root)
    ET.indent(reference, space=space)
    want = ET.tostring(reference, encoding="unicode")
    before = ET.tostring(root, encoding="unicode")
    assert xml_text(root, space) == want
    assert ET.tostring(root, encoding="unicode") == before      # the tree is left as it was
