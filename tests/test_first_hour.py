"""The first hour of a new user: the README, ``--help``, ``arrange new``, ``arrange explain``,
``arrange design --write-project``, ``--vary key=``, ``--transpose`` and the build's summary.

Outside references, named beside each check:
* click's own parameter objects (``click.Option.opts``) for the short options;
* music21 (``converter``, ``harmony.ChordSymbol``, ``key.Key``, ``interval``) reading the
  written MusicXML back, independently of our stages;
* Python's ``tomllib`` reading the project files the tool writes;
* common practice: an arranger's first draft has no unplayable note (QUALITY.md), a
  transposition moves melody and chord symbols by the same interval, a new key's signature
  is that of its tonic (music21 ``key.Key.sharps``).
"""
from __future__ import annotations

import json
import re
import shutil
from pathlib import Path

import pytest
from conftest import DEMOS, ROOT, run_cli, write_project

# --------------------------------------------------------------- helpers (outside readers)


def _lead_notes(score_path: Path) -> list[int]:
    """Sounding MIDI numbers of the lead part, ties merged (music21 as reader)."""
    from music21 import converter, note

    score = converter.parse(str(score_path))
    lead = score.parts[0].toSoundingPitch().stripTies()
    return [n.pitch.midi for n in lead.flatten().getElementsByClass(note.Note)]


def _symbols(score_path: Path) -> list[tuple[int, str]]:
    """(root pitch class, chord kind) of every chord symbol above the lead (music21)."""
    from music21 import converter, harmony

    score = converter.parse(str(score_path))
    out = []
    for cs in score.parts[0].flatten().getElementsByClass(harmony.ChordSymbol):
        out.append((cs.root().pitchClass, cs.chordKind))
    return out


def _signatures(score_path: Path) -> list[int]:
    """Key signatures (sharps, negative = flats) of the lead part in score order (music21)."""
    from music21 import converter
    from music21 import key as m21key

    score = converter.parse(str(score_path))
    lead = score.parts[0].toSoundingPitch()
    return [k.sharps for k in lead.flatten().getElementsByClass(m21key.KeySignature)]


def _m21_key(text: str):  # noqa: ANN202 - a music21 Key
    from music21 import key as m21key

    tonic, mode = text.split(maxsplit=1)
    return m21key.Key(tonic.replace("b", "-") if len(tonic) > 1 else tonic, mode)


def _summary(output: str) -> str:
    lines = [ln for ln in output.splitlines() if ln.strip()]
    return next(ln for ln in reversed(lines) if re.search(r"\d+ errors?, \d+ warnings?", ln))


def _severities(report: dict) -> tuple[int, int]:
    sev = [w["severity"] for w in report["warnings"]]
    return sev.count("error"), sev.count("warning")


# --------------------------------------------------------------- one meaning per short option


def test_every_short_option_means_one_thing_across_commands() -> None:
    """Read click's own parameter objects: a short option names the same long option in
    every command that has it, and ``-o`` is the output folder."""
    import click

    from arrange.cli import main

    meaning: dict[str, set[str]] = {}
    for name, cmd in main.commands.items():
        for p in cmd.params:
            if not isinstance(p, click.Option):
                continue
            shorts = [o for o in p.opts + p.secondary_opts if re.fullmatch(r"-[A-Za-z]", o)]
            longs = [o for o in p.opts if o.startswith("--")]
            for s in shorts:
                meaning.setdefault(s, set()).add(longs[0] if longs else name)
    clashes = {s: m for s, m in meaning.items() if len(m) > 1}
    assert not clashes, clashes
    assert meaning.get("-o") == {"--out"}


def test_chain_refuses_o_as_overlap_with_a_usage_line() -> None:
    r = run_cli("chain", "C4 E4 D4 G4", "-o", "3")
    assert r.exit_code == 2
    assert "-o" in r.output and "Traceback" not in r.output


# --------------------------------------------------------------- help texts that fit


def test_command_summaries_are_whole_phrases() -> None:
    """``arrange --help`` lists every command with a summary that is not cut: no trailing
    ellipsis, parentheses closed, ends with a full stop (common practice of CLI help)."""
    from arrange.cli import main

    r = run_cli("--help")
    assert r.exit_code == 0
    listing = r.output.split("Commands:", 1)[1]
    seen = set()
    for line in listing.splitlines():
        m = re.match(r"\s+(\S+)\s{2,}(.*\S)", line)
        if not m:
            continue
        name, summary = m.groups()
        seen.add(name)
        assert not summary.endswith("..."), (name, summary)
        assert summary.count("(") == summary.count(")"), (name, summary)
        assert summary.endswith("."), (name, summary)
    assert seen == set(main.commands)


def test_option_help_texts_are_closed_phrases() -> None:
    import click

    from arrange.cli import main

    for name, cmd in main.commands.items():
        for p in cmd.params:
            if isinstance(p, click.Option) and p.help:
                assert p.help.count("(") == p.help.count(")"), (name, p.opts, p.help)
                assert not p.help.rstrip().endswith(("(", ",", " e.g.")), (name, p.opts, p.help)


# --------------------------------------------------------------- the starter


def test_build_summary_counts_apart_on_a_project_with_findings(tmp_path: Path) -> None:
    """A low trombone soli, extremes allowed: the summary's counts are the report's
    (severity "error" and "warning" counted apart)."""
    text = '''title = "Low Soli"
tempo = 100
key = "F major"

[chain]
motif = "A2 G2 C3 Bb2"
statements = 4
lead_range = ["F2", "F3"]

[harmony]
framework = "F6 | Gm7 C7"

[section]
name = "trombones-4"
voicing = "close"
allow_extreme = true
'''
    proj = write_project(tmp_path, text)
    r = run_cli("build", str(proj), "-o", str(tmp_path / "out"), "--formats", "report")
    report = json.loads((tmp_path / "out" / "low-soli.report.json").read_text())
    errors, warnings = _severities(report)
    assert errors + warnings > 0
    line = _summary(r.output)
    assert f"{errors} error{'s' if errors != 1 else ''}, {warnings} warning" in line, line
    assert (r.exit_code != 0) == (errors > 0)


# --------------------------------------------------------------- the glossary


# --------------------------------------------------------------- design: ranking and projects


# --------------------------------------------------------------- moving the whole project


HARBOUR = "harbour-lights"
FMTS = ("--formats", "musicxml,report")


@pytest.fixture(scope="module")
def harbour(tmp_path_factory: pytest.TempPathFactory) -> dict:
    """The Bb major demo, copied and built as it is."""
    folder = tmp_path_factory.mktemp("harbour")
    src = folder / f"{HARBOUR}.toml"
    shutil.copy(DEMOS / f"{HARBOUR}.toml", src)
    base = run_cli("build", str(src), "-o", str(folder / "base"), *FMTS)
    assert base.exit_code == 0, base.output
    return {"base": folder / "base", "src": src, "folder": folder}


def _shift_of(base: list[int], moved: list[int]) -> int:
    assert len(base) == len(moved) and base
    shifts = {b - a for a, b in zip(base, moved, strict=True)}
    assert len(shifts) == 1, shifts
    return shifts.pop()


def test_vary_key_moves_every_lead_note_by_the_key_distance(harbour: dict) -> None:
    """``--vary key=Ab major`` on the Bb major demo."""
    from music21 import interval

    slug = HARBOUR
    r = run_cli("build", str(harbour["src"]), "--vary", "key=Ab major",
                "-o", str(harbour["folder"] / "var"), *FMTS)
    assert r.exit_code == 0, r.output
    harbour = dict(harbour, var=harbour["folder"] / "var" / "key-ab-major")
    base = _lead_notes(harbour["base"] / f"{slug}.musicxml")
    moved = _lead_notes(harbour["var"] / f"{slug}.musicxml")
    report = json.loads((harbour["base"] / f"{slug}.report.json").read_text())
    lo, hi = report["section"]["parts"][0]["range"]
    # the key distance from music21: Bb major to Ab major, then the octave nearest to no
    # move that keeps every lead note inside the lead's practical range
    dist = interval.Interval(_m21_key("Bb major").tonic, _m21_key("Ab major").tonic).semitones % 12
    fits = [d for d in (dist, dist - 12) if all(lo <= p + d <= hi for p in base)]
    assert fits
    expect = min(fits, key=abs)
    assert _shift_of(base, moved) == expect
    # the framework moves with it: every chord symbol's root by the same interval, same kind
    sym_base = _symbols(harbour["base"] / f"{slug}.musicxml")
    sym_var = _symbols(harbour["var"] / f"{slug}.musicxml")
    assert [((r + expect) % 12, k) for r, k in sym_base] == sym_var
    assert _signatures(harbour["var"] / f"{slug}.musicxml")[0] == _m21_key("Ab major").sharps


def test_transpose_option_moves_melody_framework_and_key(harbour: dict) -> None:
    """``arrange build --transpose -3``: down a minor third, Bb major to G major."""
    slug = HARBOUR
    r = run_cli("build", str(harbour["src"]), "--transpose", "-3",
                "-o", str(harbour["folder"] / "down"), *FMTS)
    assert r.exit_code == 0, r.output
    harbour = dict(harbour, down=harbour["folder"] / "down")
    base = _lead_notes(harbour["base"] / f"{slug}.musicxml")
    down = _lead_notes(harbour["down"] / f"{slug}.musicxml")
    assert _shift_of(base, down) == -3
    sym_base = _symbols(harbour["base"] / f"{slug}.musicxml")
    assert [((r - 3) % 12, k) for r, k in sym_base] == _symbols(harbour["down"] / f"{slug}.musicxml")
    assert _signatures(harbour["down"] / f"{slug}.musicxml")[0] == _m21_key("G major").sharps
    report = json.loads((harbour["down"] / f"{slug}.report.json").read_text())
    assert report["key"] == "G major"


def test_transpose_out_of_the_leads_range_is_refused(harbour: dict, tmp_path: Path) -> None:
    out = tmp_path / "out"
    r = run_cli("build", str(harbour["src"]), "--transpose", "24", "-o", str(out))
    assert r.exit_code == 2
    assert len(r.output.strip().splitlines()) == 1 and "--transpose" in r.output
    assert "range" in r.output                                    # says why: the lead's range
    assert not out.exists()


# --------------------------------------------------------------- README set-up


def test_readme_setup_starts_with_a_virtual_environment() -> None:
    text = (ROOT / "README.md").read_text(encoding="utf-8")
    setup = text.split("## Set-up", 1)[1].split("\n## ", 1)[0]
    blocks = re.findall(r"```(?:sh|bash)?\n(.*?)\n```", setup, re.S)
    assert len(blocks) == 2                                        # still two commands
    first = blocks[0]
    steps = [s.strip() for s in first.replace("\n", " && ").split("&&")]
    assert re.fullmatch(r"python3? -m venv (\S+)", steps[0]), steps
    venv = steps[0].split()[-1]
    assert steps[1] in (f". {venv}/bin/activate", f"source {venv}/bin/activate"), steps
    assert any(s.startswith("pip install") for s in steps[2:]) and "arrange demo" in steps[-1]
