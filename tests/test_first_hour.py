"""The first hour of a new user: the README, ``--help``, ``arrange new``, ``arrange explain``,
``arrange design --write-project``, ``--vary key=``, ``--transpose`` and the build's summary.

Outside references, named beside each check:
* argparse's own option objects (``argparse.Action.option_strings``, the standard
  library's parser) for the short options;
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
import shlex
import shutil
import tomllib
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

    score = converter.parse(str(score_path)).toSoundingPitch()    # symbols written for their staff
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
    """Read argparse's own option objects: a short option names the same long option in
    every command that has it, and ``-o`` is the output folder."""
    from arrange.cli import command_options

    meaning: dict[str, set[str]] = {}
    for name, actions in command_options().items():
        for a in actions:
            if not a.option_strings:          # a positional argument
                continue
            shorts = [o for o in a.option_strings if re.fullmatch(r"-[A-Za-z]", o)]
            longs = [o for o in a.option_strings if o.startswith("--")]
            for s in shorts:
                meaning.setdefault(s, set()).add(longs[0] if longs else name)
    clashes = {s: m for s, m in meaning.items() if len(m) > 1}
    assert not clashes, clashes
    assert meaning.get("-o") == {"--out"}
    assert meaning.get("-h") == {"--help"} and meaning.get("-k") == {"--statements"}


def test_chain_refuses_o_as_overlap_with_a_usage_line() -> None:
    r = run_cli("chain", "C4 E4 D4 G4", "-o", "3")
    assert r.exit_code == 2
    assert "-o" in r.output and "Traceback" not in r.output
    assert r.stdout == "" and len(r.stderr.strip().splitlines()) == 1, r.stderr


# --------------------------------------------------------------- help texts that fit


def test_command_summaries_are_whole_phrases() -> None:
    """``arrange --help`` lists every command with a summary that is not cut: no trailing
    ellipsis, parentheses closed, ends with a full stop (common practice of CLI help)."""
    from arrange.cli import COMMANDS

    r = run_cli("--help")
    assert r.exit_code == 0
    listing = r.output.split("commands:", 1)[1]
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
    assert seen == set(COMMANDS)


def test_option_help_texts_are_closed_phrases() -> None:
    from arrange.cli import command_options

    for name, actions in command_options().items():
        for a in actions:
            if a.help:
                assert a.help.count("(") == a.help.count(")"), (name, a.option_strings, a.help)
                assert not a.help.rstrip().endswith(("(", ",", " e.g.")), (name, a.option_strings, a.help)


# --------------------------------------------------------------- the starter


@pytest.fixture(scope="session")
def starters(tmp_path_factory: pytest.TempPathFactory) -> dict:
    """Two starters written into one folder and built into one output folder."""
    folder = tmp_path_factory.mktemp("starters")
    runs = {}
    for stem in ("harbour-walk", "second-take"):
        r = run_cli("new", f"{stem}.toml", cwd=folder)
        assert r.exit_code == 0, r.output
        b = run_cli("build", f"{stem}.toml", "-o", "out", cwd=folder)
        runs[stem] = b
    return {"folder": folder, "runs": runs}


def _starter_report(starters: dict, slug: str) -> dict:
    return json.loads((starters["folder"] / "out" / f"{slug}.report.json").read_text())


def test_starter_builds_cleanly_and_shows_the_headline_features(starters: dict) -> None:
    folder = starters["folder"]
    r = starters["runs"]["harbour-walk"]
    assert r.exit_code == 0, r.output
    report = _starter_report(starters, "harbour-walk")
    assert report["title"] == "Harbour Walk"                       # titled from the file name
    assert report["warnings"] == []                                # no warning, no error
    t = report["chain"]["statements"][2]["transposition"]
    assert t % 12, "statement 3 lies at the pitch classes of statement 1: the chain does not travel"
    assert any(e["role"] == "approach" for e in report["events"])
    assert report.get("layers"), "the starter shows a background layer"
    assert (folder / "out" / "harbour-walk.svg").is_file()        # the preview

    # music21 reads the score back: statement 3 starts on another pitch class than
    # statement 1 (a travelling chain), and a chord symbol that is not in the framework
    # (an approach chord) stands above the lead
    score = folder / "out" / "harbour-walk.musicxml"
    lead = _lead_notes(score)
    starts = [s["start"] for s in report["chain"]["statements"]]
    events = [e["lead"] for e in report["events"]]
    assert lead == events
    assert (lead[starts[2]] - lead[starts[0]]) % 12
    project = tomllib.loads((folder / "harbour-walk.toml").read_text())
    from music21 import harmony

    framework = {(harmony.ChordSymbol(_m21_fig(tok.split(":")[0])).root().pitchClass,
                  harmony.ChordSymbol(_m21_fig(tok.split(":")[0])).chordKind)
                 for tok in project["harmony"]["framework"].replace("|", " ").split()}
    assert set(_symbols(score)) - framework, "no approach chord symbol in the score"


def _m21_fig(symbol: str) -> str:
    """Our chord symbol as music21 reads it (flat roots with '-', as test_layers does)."""
    if len(symbol) > 1 and symbol[1] == "b":
        symbol = symbol[0] + "-" + symbol[2:]
    return symbol


def test_two_starters_in_one_folder_write_different_files(starters: dict) -> None:
    out = starters["folder"] / "out"
    files = {}
    for stem, r in starters["runs"].items():
        assert r.exit_code == 0, r.output
        files[stem] = {ln.strip() for ln in r.stdout.splitlines() if ln.strip()}
    a, b = files["harbour-walk"], files["second-take"]
    assert a and b and not (a & b)
    assert all((starters["folder"] / p).is_file() for p in a | b)
    assert {p.name for p in out.iterdir()} >= {Path(p).name for p in a | b}


def test_build_summary_counts_files_errors_warnings_and_says_where_the_report_is(
        starters: dict) -> None:
    r = starters["runs"]["harbour-walk"]
    line = _summary(r.output)
    files = [ln for ln in r.stdout.splitlines() if ln.strip()]
    assert re.search(rf"\b{len(files)} files\b", line), line
    assert re.search(r"\b0 errors, 0 warnings\b", line), line
    m = re.search(r"report[: ]+(\S+\.report\.md)", line)
    assert m and (starters["folder"] / m.group(1)).is_file(), line


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


GLOSSARY_TERMS = ("RI", "statement", "overlap", "compass", "aggregate", "approach chord",
                  "drop 2", "low-interval limit")


def test_explain_lists_every_term_with_an_example_from_the_tools_own_output(
        starters: dict) -> None:
    r = run_cli("explain", "--json")
    assert r.exit_code == 0, r.output
    entries = json.loads(r.stdout)
    terms = {e["term"].lower(): e for e in entries}
    for term in GLOSSARY_TERMS:
        assert term.lower() in terms, term
    starter_report = (starters["folder"] / "out" / "harbour-walk.report.md").read_text()
    for e in entries:
        assert e["meaning"].strip() and e["example"].strip(), e
        source = e["example_from"]
        if source.startswith("arrange "):
            out = run_cli(*shlex.split(source)[1:])
            assert out.exit_code == 0, (source, out.output)
            text = out.stdout
        else:
            assert source == "the starter's report (arrange new, then arrange build)", source
            text = starter_report
        lines = [ln.rstrip() for ln in text.splitlines()]
        assert e["example"].rstrip() in lines, (e["term"], e["example"], source)


def test_explain_one_term_and_a_wrong_one() -> None:
    r = run_cli("explain", "drop 2")
    assert r.exit_code == 0 and "drop 2" in r.output.lower()
    assert "overlap" not in r.output.splitlines()[0].lower()
    r2 = run_cli("explain", "drop2")                              # spelling without the space
    assert r2.exit_code == 0 and r2.output == r.output
    bad = run_cli("explain", "flugelbinding")
    assert bad.exit_code == 2
    assert len(bad.output.strip().splitlines()) == 1 and "flugelbinding" in bad.output
    assert "overlap" in bad.output                               # says what is accepted


# --------------------------------------------------------------- design: ranking and projects


def _design(*args: str) -> dict:
    r = run_cli("design", *args, "--json")
    assert r.exit_code == 0, r.output
    return json.loads(r.stdout)


@pytest.mark.parametrize("args", [
    ("-n", "4"),
    ("-n", "5", "--steps", "1,2,3,4,5,7"),
    ("-n", "4", "--from-key", "F major", "--to-key", "Ab major"),
])
def test_design_ranks_travelling_lines_within_a_lead_range_first(args: tuple[str, ...]) -> None:
    """The rule: lines within two octaves (a section lead's working compass; common
    practice, from memory) whose statement 3 lies at new pitch classes rank first."""
    found = _design(*args, "--top", "10")
    assert found["results"]
    for res in found["results"]:
        chain = res["chain"]
        lo, hi = min(chain["pitches"]), max(chain["pitches"])
        assert hi - lo <= 24, (res["names"], hi - lo)
        assert chain["transposition"] % 12, (res["names"], "repeats without travelling")


TRANSITIONS = [("F major", "Ab major"), ("C major", "D major"), ("Bb major", "Eb major"),
               ("D minor", "F major"), ("G major", "E minor")]


@pytest.mark.parametrize(("k1", "k2"), TRANSITIONS)
def test_write_project_builds_cleanly_for_a_transition(tmp_path: Path, k1: str, k2: str) -> None:
    proj = tmp_path / "t.toml"
    r = run_cli("design", "-n", "4", "--from-key", k1, "--to-key", k2, "--top", "3",
                "--write-project", str(proj))
    assert r.exit_code == 0, r.output
    data = tomllib.loads(proj.read_text())                         # tomllib reads it back
    assert "lead_range" in data["chain"]
    out = tmp_path / "out"
    b = run_cli("build", str(proj), "-o", str(out))
    assert b.exit_code == 0, b.output
    report = json.loads(next(out.glob("*.report.json")).read_text())
    assert _severities(report)[0] == 0, [w for w in report["warnings"] if w["severity"] == "error"]
    assert list(out.glob("*.svg")), "no preview written"
    lo, hi = report["section"]["parts"][0]["range"]
    low, high = (int(x) for x in _midi(data["chain"]["lead_range"]))
    assert lo <= low < high <= hi                                  # the section lead's range
    lead = _lead_notes(next(out.glob("*.musicxml")))
    assert all(low <= p <= high for p in lead)
    # the new key is declared: its signature appears in the score (music21 key.Key)
    sigs = _signatures(next(out.glob("*.musicxml")))
    assert sigs[0] == _m21_key(k1).sharps
    if _m21_key(k2).sharps != _m21_key(k1).sharps:
        assert _m21_key(k2).sharps in sigs[1:], (sigs, k2)
    assert report["keys"] and report["keys"][-1]["key"] == k2


def _midi(names: list[str]) -> list[int]:
    from music21 import pitch

    return [pitch.Pitch(n.replace("b", "-") if len(n) > 2 else n).midi for n in names]


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


def test_transpose_key_in_the_project_file_and_a_bad_value(harbour: dict, tmp_path: Path) -> None:
    """``transpose = "G major"`` at the top of the file is ``--transpose -3`` for this demo
    (nearest octave in range, music21 reads both scores); a word that is neither a key nor
    a number of semitones exits 2 on one line, writing nothing."""
    src = tmp_path / f"{HARBOUR}.toml"
    src.write_text('transpose = "G major"\n' + harbour["src"].read_text())
    out = tmp_path / "out"
    r = run_cli("build", str(src), "-o", str(out), *FMTS)
    assert r.exit_code == 0, r.output
    base = _lead_notes(harbour["base"] / f"{HARBOUR}.musicxml")
    assert _shift_of(base, _lead_notes(out / f"{HARBOUR}.musicxml")) == -3
    bad = run_cli("build", str(harbour["src"]), "--transpose", "up a bit", "-o", str(tmp_path / "bad"))
    assert bad.exit_code == 2 and len(bad.output.strip().splitlines()) == 1
    assert "--transpose" in bad.output and "semitones" in bad.output
    assert not (tmp_path / "bad").exists()


def test_vary_takes_a_plain_word_for_a_list_of_one(tmp_path: Path) -> None:
    src = tmp_path / "cue.toml"
    assert run_cli("new", str(src)).exit_code == 0
    out = tmp_path / "out"
    r = run_cli("build", str(src), "--vary", "approach=chromatic,dominant", "-o", str(out),
                "--formats", "report")
    assert r.exit_code == 0, r.output
    seen = {}
    for folder in (p for p in out.iterdir() if p.is_dir()):
        report = json.loads(next(folder.glob("*.report.json")).read_text())
        techniques = {e["technique"] for e in report["events"] if e["role"] == "approach"}
        seen[folder.name] = techniques
    assert set(seen) == {"approach-chromatic", "approach-dominant"}
    assert seen["approach-chromatic"] <= {"chromatic"} and seen["approach-chromatic"]
    assert seen["approach-dominant"] <= {"dominant"}


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
