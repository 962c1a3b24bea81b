"""The command line: answers, exit codes, and bad input (issue: foundation).

Bad input must exit 2 with a one-line message naming the value, where it
is, and what is accepted; no traceback; no output file written or replaced.
"""
from __future__ import annotations

import json
import subprocess
import sys
from pathlib import Path

import pytest
from conftest import BASIC, run_cli, run_subprocess, snapshot, write_project


def test_chain_table_answers() -> None:
    r = run_cli("chain", "C4 E4 D4 G4", "--statements", "4")
    assert r.exit_code == 0
    assert "RI" in r.output and "statement 3 lies +5" in r.output


def test_chain_json_contract() -> None:
    r = run_cli("chain", "C4 E4 D4 G4", "--statements", "4", "--json")
    data = json.loads(r.output)
    for key in ("motif", "overlaps", "statements", "raw_pitches", "pitches", "names", "length",
                "compass_after_two", "transposition", "span", "pitch_classes"):
        assert key in data
    assert data["length"] == 10 and data["transposition"] == 5 and data["compass_after_two"] == 9
    assert data["statements"][1] == {"index": 2, "form": "RI", "transposition": 9,
                                     "pitches": [62, 67, 65, 69], "start": 2, "link": "exact"}


def test_chain_lead_range_moves_octaves() -> None:
    r = run_cli("chain", "C4 E4 D4 G4", "-k", "8", "--lead-range", "C4", "C5", "--json")
    data = json.loads(r.output)
    assert data["pitches"] != data["raw_pitches"]
    assert all(60 <= p <= 72 for p in data["pitches"])


@pytest.mark.parametrize("args, needle", [
    (["chain", "C4 H4 D4"], "'H4'"),
    (["chain", "C4"], "at least 2 notes"),
    (["chain", "C4 E4 D4", "--statements", "0"], "1..1000"),
    (["chain", "C4 E4 D4", "--statements", "1001"], "1..1000"),
    (["chain", "C4 E4 D4 G4", "--overlap", "3"], "overlaps that work"),
    (["chain", "C4 E4 D4 G4", "-k", "12", "--lead-range", "E4", "A4"], "lead range"),
    (["chain", "C4 E4 D4 G4", "--overlaps", "2,x"], "'x'"),
])
def test_chain_bad_input(args: list[str], needle: str) -> None:
    r = run_cli(*args)
    assert r.exit_code == 2
    assert needle in r.output
    assert "Traceback" not in r.output
    assert "accepted" in r.output


def test_help_and_chain_do_not_import_music21_or_numpy() -> None:
    code = ("import sys; from arrange.cli import main; "
            "sys.argv=['arrange','chain','C4 E4 D4 G4']; "
            "import contextlib, io\n"
            "with contextlib.suppress(SystemExit): main()\n"
            "print('music21' in sys.modules, 'numpy' in sys.modules, file=sys.stderr)")
    r = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True)
    assert r.stderr.strip().splitlines()[-1] == "False False"
    code2 = code.replace("'chain','C4 E4 D4 G4'", "'--help'")
    r2 = subprocess.run([sys.executable, "-c", code2], capture_output=True, text=True)
    assert r2.stderr.strip().splitlines()[-1] == "False False"
    code3 = code.replace("'chain','C4 E4 D4 G4'", "'sections'")
    r3 = subprocess.run([sys.executable, "-c", code3], capture_output=True, text=True)
    assert r3.stderr.strip().splitlines()[-1] == "False False"


# what a score-and-MIDI build of a project without layers, rhythm section or melody file
# needs no module of: the preview, PDF and report writers and their renderers, music21, the
# designer, the melody reader, the layer stage and its pad search, the rhythm section's parts;
# no third-party command-line library (click): the standard library's argparse reads it; and no
# numpy (the voicing stage's rules, voice-leading search and tutti and the pad search are plain
# Python; only the designer, and a layer search among a section's many voicings, hold numpy arrays)
NOT_FOR_SCORE_AND_MIDI = ("click", "music21", "numpy", "verovio", "resvg_py", "arrange.writers.preview",
                          "arrange.writers.pdf", "arrange.writers.report", "arrange.chain.design",
                          "arrange.chain.kernel", "arrange.chain.spec",
                          "arrange.inputs.melody_file", "arrange.voicing.layers", "arrange.voicing.layer_search",
                          "arrange.voicing.pads",
                          "arrange.rhythm_section.section", "arrange.rhythm_section.values",
                          "arrange.writers.xml_rhythm", "arrange.writers.xml_layers", "secrets")


def test_score_and_midi_build_imports_only_what_it_needs(tmp_path: Path) -> None:
    """``--formats musicxml,midi`` imports none of NOT_FOR_SCORE_AND_MIDI (``sys.modules``, the
    interpreter's record of imports), and its files are read back by mido and ElementTree;
    the same build with a rhythm section does import the rhythm section's parts (so the
    check can see an import)."""
    import mido

    code = ("import sys, json\nfrom arrange.cli import main\n"
            "try:\n    main(['build', sys.argv[1], '-o', sys.argv[2], '--formats', 'musicxml,midi'])\n"
            "except SystemExit as e:\n    assert not e.code, e.code\n"
            "print(json.dumps(sorted(sys.modules)))\n")
    for name, text, want in (("plain", BASIC, set()),
                             ("rs", BASIC + '\n[rhythm_section]\nparts = ["bass", "drums"]\n',
                              {"arrange.rhythm_section.section", "arrange.rhythm_section.values",
                               "arrange.writers.xml_rhythm"})):
        proj = write_project(tmp_path, text, f"{name}.toml")
        r = subprocess.run([sys.executable, "-c", code, str(proj), str(tmp_path / name)], capture_output=True,
                           text=True, cwd=Path(__file__).resolve().parent.parent, timeout=300)
        assert r.returncode == 0, r.stderr[-2000:]
        loaded = set(json.loads(r.stdout.strip().splitlines()[-1]))
        assert loaded & set(NOT_FOR_SCORE_AND_MIDI) == want, name
        mid = mido.MidiFile(str(next((tmp_path / name).glob("*.mid"))))
        assert sum(1 for t in mid.tracks for m in t if m.type == "note_on" and m.velocity) > 0
        import xml.etree.ElementTree as ET

        root = ET.parse(next((tmp_path / name).glob("*.musicxml"))).getroot()
        assert root.tag == "score-partwise" and root.findall("part")


BAD_PROJECTS = [
    ("missing", None, "does not exist"),
    ("toml", 'title = "x"\n[chain\nmotif = 1', "line 2"),
    ("no-title", BASIC.replace('title = "Test Cue"\n', ""), "'title'"),
    ("unknown-top", "colour = 3\n" + BASIC, "'colour'"),
    ("unknown-section-key", BASIC + "\ncolour = 3\n", "'section.colour'"),
    ("unknown-chain", BASIC.replace("overlap = 2", "overlap = 2\nfoo = 1"), "'chain.foo'"),
    ("bad-pitch", BASIC.replace('"A4 G4 C5 Bb4"', '"A4 Q4 C5"'), "'Q4'"),
    ("short-motif", BASIC.replace("\"A4 G4 C5 Bb4\"", "\"A4\""), "2 to 64 notes"),
    ("statements", BASIC.replace("statements = 4", "statements = 5000"), "statements"),
    ("overlap", BASIC.replace("overlap = 2", "overlap = 3"), "overlaps that work"),
    ("range", BASIC.replace("overlap = 2", 'overlap = 2\nlead_range = ["A4", "C5"]'), "lead range"),
    ("section", BASIC.replace('"trombones-4"', '"kazoos-9"'), "kazoos-9"),
    ("wrong-type", BASIC.replace("tempo = 120", 'tempo = "fast"'), "'tempo'"),
]


@pytest.mark.parametrize("name, text, needle", BAD_PROJECTS, ids=[b[0] for b in BAD_PROJECTS])
def test_build_bad_project(tmp_path: Path, name: str, text: str | None, needle: str) -> None:
    out = tmp_path / "out"
    out.mkdir()
    (out / "keep.musicxml").write_bytes(b"good score")
    before = snapshot(out)
    path = tmp_path / "p.toml" if text is None else write_project(tmp_path, text)
    r = run_cli("build", str(path), "-o", str(out))
    assert r.exit_code == 2, r.output
    assert needle in r.output
    assert "Traceback" not in r.output
    assert len(r.output.strip().splitlines()) == 1 or r.output.count("error") == 1
    assert snapshot(out) == before


def test_subprocess_exit_code_and_no_traceback(tmp_path: Path) -> None:
    r = run_subprocess("chain", "C4 X9")
    assert r.returncode == 2
    assert "Traceback" not in r.stderr and "'X9'" in r.stderr


def test_new_writes_a_project_that_builds(tmp_path: Path) -> None:
    p = tmp_path / "start.toml"
    assert run_cli("new", str(p)).exit_code == 0
    r = run_cli("build", str(p), "-o", str(tmp_path / "o"))
    assert r.exit_code == 0, r.output
    again = run_cli("new", str(p))
    assert again.exit_code == 2


def test_every_optional_key_of_the_starter_builds(tmp_path: Path) -> None:
    """Each commented key in the starter project, switched on (with the groove it
    needs), still builds: the starter documents keys that exist."""
    import re

    p = tmp_path / "start.toml"
    assert run_cli("new", str(p)).exit_code == 0
    text = p.read_text()
    optional = re.findall(r"^# ([a-z_]+) = .*$", text, re.M)
    assert {"style", "swing", "cell", "augment", "approach", "keys", "modulate", "by_statement",
            "analysis", "parts", "rhythm_section"} <= set(optional)
    layer_block = text[text.index("# [[layers]]"):]
    for key in dict.fromkeys(optional):
        if f"# {key} = " in layer_block and f"# {key} = " not in text[:text.index("# [[layers]]")]:
            continue
        on = re.sub(rf"^# ({key} = .*)$", r"\1", text, count=1, flags=re.M)
        if key == "swing":
            on = re.sub(r'^groove = "\w+"', 'groove = "swing"', on, count=1, flags=re.M)
        if key == "anticipate":
            on = re.sub(r'^groove = "\w+"', 'groove = "latin"', on, count=1, flags=re.M)
        q = tmp_path / f"{key}.toml"
        q.write_text(on)
        r = run_cli("build", str(q), "-o", str(tmp_path / key), "--formats", "report")
        assert r.exit_code == 0, (key, r.output)
    layered = text.replace(layer_block, "\n".join(
        line[2:] if line.startswith("# ") and ("=" in line or "[[" in line) else line
        for line in layer_block.splitlines()) + "\n")
    q = tmp_path / "layers.toml"
    q.write_text(layered)
    r = run_cli("build", str(q), "-o", str(tmp_path / "layers"), "--formats", "report")
    assert r.exit_code == 0, r.output


def test_sections_lists_known_sections() -> None:
    r = run_cli("sections", "--json")
    data = json.loads(r.output)
    assert "trumpets-4" in data and "trombones-4" in data


def test_a_closed_pipe_stops_quietly() -> None:
    """`arrange chain ... | head -1`: when the reader closes the pipe the tool stops
    without a traceback or an 'internal error' (common practice of command-line tools)."""
    import subprocess
    import sys

    p = subprocess.Popen([sys.executable, "-m", "arrange", "chain", "C4 E4 D4 G4 F4 A4 B4 G4 E4 F4 D4 E4", "-k", "1000"],
                         stdout=subprocess.PIPE, stderr=subprocess.PIPE)
    assert p.stdout is not None and p.stderr is not None
    p.stdout.close()                  # the reader is gone before the first write
    err = p.stderr.read().decode()
    p.wait(timeout=60)
    assert "internal error" not in err and "Traceback" not in err
    assert p.returncode == 0


def test_every_help_lists_every_option_of_its_command() -> None:
    """``arrange --help`` lists every command and its global options; ``arrange CMD --help``
    every option and argument of CMD as the parser holds them (argparse's own ``Action``
    objects: ``option_strings`` and ``metavar``)."""
    from arrange.cli import COMMANDS, command_options

    top = run_cli("--help")
    assert top.exit_code == 0 and top.stderr == ""
    for flag in ("--version", "--debug", "-h, --help", *COMMANDS):
        assert flag in top.stdout, flag
    for name, actions in command_options().items():
        r = run_cli(name, "--help")
        assert r.exit_code == 0 and r.stderr == "", (name, r.output)
        for a in actions:
            for flag in a.option_strings or [str(a.metavar)]:
                assert flag in r.stdout, (name, flag)
            if a.help:
                assert " ".join(a.help.split()[:3]).replace("%(default)s", "") in " ".join(r.stdout.split()), \
                    (name, a.help)
    assert "[default: 4]" in " ".join(run_cli("chain", "--help").stdout.split())
    v = run_cli("--version")
    assert v.exit_code == 0 and v.stdout.strip() == "arrange, version 0.1.0"


@pytest.mark.parametrize("args, words", [
    (["chain", "C4 E4 D4", "--statements", "four"], ["--statements", "'four'", "ASCII digits"]),
    (["build", "p.toml", "--paper", "legal"], ["--paper", "'legal'", "'a4'", "'letter'"]),
    (["build", "p.toml", "--no-part"], ["--no-part", "--no-parts"]),
    (["chain", "C4 E4 D4", "--jso"], ["--jso", "--json"]),          # no abbreviations
    (["chain"], ["MOTIF"]),
    (["design"], ["--length"]),
    (["chain", "C4 E4 D4", "--lead-range", "C4"], ["--lead-range", "2 arguments"]),
    (["frobnicate"], ["'frobnicate'", "build", "chain"]),
    ([], ["command", "build", "chain"]),
])
def test_usage_errors_are_one_line_on_stderr(args: list[str], words: list[str]) -> None:
    """A command line the parser refuses: exit 2, one line on stderr naming the value and the
    option, and what is accepted; nothing on stdout, no usage block (common practice of
    command-line tools; README, Limits and safety)."""
    r = run_cli(*args)
    assert r.exit_code == 2, r.output
    assert r.stdout == ""
    lines = r.stderr.strip().splitlines()
    assert len(lines) == 1 and lines[0].startswith("arrange: error: "), r.stderr
    assert "accepted" in lines[0] and "usage:" not in lines[0].lower()
    for w in words:
        assert w in lines[0], (w, lines[0])


def test_an_option_value_may_start_with_a_dash() -> None:
    """``--steps -3,4`` (a step of -3 one way, 4 both ways) is the value of --steps, as the
    README's ``--steps`` syntax allows, not an unknown option."""
    r = run_cli("design", "-n", "3", "--steps", "-3,4", "--count")
    assert r.exit_code == 0, r.output
    # 3 allowed steps (-3, +4, -4) ^ 2 = 9 motifs, every one counted (no constraint)
    assert r.stdout.strip() == "9"
