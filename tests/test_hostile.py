"""Hostile input (issue 19): every case exits 2 with one line naming the value, where it
is and what is accepted; never exit 1, never a traceback, never a hang, never a file
written or replaced; hostile input files are refused within a small, bounded cost.

Every case runs the real CLI in a child process (``childrun``), which measures its own
peak memory and CPU time with ``resource.getrusage`` (POSIX) under an address-space
ceiling.  Outside references named beside the checks: Python's integer-string
conversion limit of 4,300 digits (Python docs, "Integer string conversion length
limitation"); Unicode noncharacters U+FFFE/U+FFFF and the control characters (the
Unicode Standard, general category Cc); the Standard MIDI File layout (MIDI 1.0
specification, "Standard MIDI Files": chunk lengths, variable-length quantities of at
most four bytes, note numbers 0..127); CommonMark (markup in text must be escaped to
be shown as text); POSIX FIFOs and character devices (os.mkfifo, /dev/zero).
"""
from __future__ import annotations

import os
import re
import struct
from pathlib import Path

import pytest
from childrun import run, tree
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

HUGE = "9" * 5000          # past Python's 4,300-digit int() limit (Python docs)
SUP2 = "\u00b2"            # SUPERSCRIPT TWO: str.isdigit() is True, int() refuses it
MB = 1024 * 1024
CEILING = int(1.5 * 1024 ** 3)

BASE = '''title = "Hostile Cue"
tempo = 120
meter = "4/4"
key = "F major"

[chain]
motif = "A3 G3 C4 Bb3"
statements = 4
overlap = 2

[harmony]
framework = "F6 | F6 | Gm7 C7 | F6"

[section]
name = "trombones-4"
voicing = "close"

[output]
formats = ["musicxml", "midi", "report"]
'''


def _sub(old: str, new: str, text: str = BASE) -> str:
    assert old in text, old
    return text.replace(old, new, 1)


def _esc(s: str) -> str:
    """A TOML basic string with every control or noncharacter escaped (TOML 1.0)."""
    out = []
    for c in s:
        if c in '"\\':
            out.append("\\" + c)
        elif ord(c) < 32 or ord(c) == 127 or 0x80 <= ord(c) < 0xA0 or c in "\ufffe\uffff":
            out.append(f"\\u{ord(c):04X}")
        else:
            out.append(c)
    return '"' + "".join(out) + '"'


INLINE_PARTS = ('name = "low-brass"\nparts = [{ name = %s, instrument = "trombone" }, '
                '"trombone", "trombone", "bass-trombone"]')

# (id, project text, extra command-line arguments, words the one error line must hold)
PROJECT_ROWS: list[tuple[str, str, list[str], list[str]]] = [
    ("tempo-huge-int", _sub("tempo = 120", f"tempo = {HUGE}"), [], ["tempo"]),
    ("statements-huge-int", _sub("statements = 4", f"statements = {HUGE}"), [], ["statements"]),
    ("meter-huge-int", _sub('"4/4"', f'"{HUGE}/4"'), [], ["meter"]),
    ("meter-superscript", _sub('"4/4"', f'"{SUP2}/4"'), [], ["meter"]),
    ("motif-huge-int", _sub('"A3 G3 C4 Bb3"', f'"57 55 60 {HUGE}"'), [], ["motif"]),
    ("motif-superscript", _sub('"A3 G3 C4 Bb3"', f'"57 55 60 5{SUP2}"'), [], ["motif"]),
    ("beats-huge-int", _sub('"F6 | F6 | Gm7 C7 | F6"', f'"F6:{HUGE} | F6"'), [], ["framework"]),
    ("beats-superscript", _sub('"F6 | F6 | Gm7 C7 | F6"', f'"F6:{SUP2} C7:2 | F6"'), [], ["framework"]),
    ("bar-huge-int", _sub("[section]", f'keys = ["Ab major from bar {HUGE}"]\n\n[section]'), [], ["keys"]),
    ("bar-superscript", _sub("[section]", f'keys = ["Ab major from bar {SUP2}"]\n\n[section]'), [], ["keys"]),
    ("by-bar-huge-int", _sub('voicing = "close"', f'voicing = "close"\nby_bar = {{ "{HUGE}-2" = "drop2" }}'),
     [], ["by_bar"]),
    ("toml-nested-2000", BASE.replace('title = "Hostile Cue"',
                                      'title = "Hostile Cue"\ndeep = ' + "[" * 2000 + "]" * 2000),
     [], ["nest"]),
    ("two-key-changes-one-bar", _sub("[section]", 'keys = ["Ab major from bar 3", "G major from bar 3"]'
                                     "\n\n[section]"), [], ["bar 3"]),
    ("preset-empty-list", _sub('framework = "F6 | F6 | Gm7 C7 | F6"', "preset = []"), [], ["preset"]),
    ("title-control-char", _sub('"Hostile Cue"', _esc("Cue\u0085x")), [], ["title"]),
    ("title-del-char", _sub('"Hostile Cue"', _esc("Cue\u007fx")), [], ["title"]),
    ("title-U+FFFF", _sub('"Hostile Cue"', _esc("Cue\uffff")), [], ["title"]),
    ("style-U+FFFE", _sub("tempo = 120", "tempo = 120\nstyle = " + _esc("Swing\ufffe")), [], ["style"]),
    ("style-control-char", _sub("tempo = 120", "tempo = 120\nstyle = " + _esc("Swing\u0001")), [],
     ["style"]),
    ("part-name-control-char", _sub('name = "trombones-4"', INLINE_PARTS % _esc("Tbn\u0007 1")), [],
     ["name"]),
    ("part-name-U+FFFE", _sub('name = "trombones-4"', INLINE_PARTS % _esc("Tbn\ufffe 1")), [],
     ["name"]),
    ("rest-between-0.001", _sub("[harmony]", "[rhythm]\nrest_between = 0.001\n\n[harmony]"), [],
     ["rest_between"]),
    ("rest-between-0.1", _sub("[harmony]", "[rhythm]\nrest_between = 0.1\n\n[harmony]"), [],
     ["rest_between"]),
    ("chord-C7)(", _sub('"F6 | F6 | Gm7 C7 | F6"', '"F6 | F6 | Gm7 C7)( | F6"'), [], ["C7)("]),
    ("chord-C7()", _sub('"F6 | F6 | Gm7 C7 | F6"', '"F6 | F6 | Gm7 C7() | F6"'), [], ["C7()"]),
    ("chord-C7,,,", _sub('"F6 | F6 | Gm7 C7 | F6"', '"F6 | F6 | Gm7 C7,,, | F6"'), [], ["C7,,,"]),
    ("chord-500000-chars", _sub('"F6 | F6 | Gm7 C7 | F6"', '"F6 | C' + "7" * 500_000 + '"'), [],
     ["framework"]),
    ("vary-huge-int", BASE, ["--vary", f"statements=2,{HUGE}"], ["statements"]),
    ("vary-superscript-index", BASE + '\n[[layers]]\nsection = "saxes-5"\n',
     ["--vary", f"layers.{SUP2}.role=pad,hits"], ["layers"]),
    # [[layers]] count toward the 40,000 written notes: 4,002 lead notes on 4 + 4 parts
    # (32,016) pass as counted before, but a pad of sixteenths writes about 32,000 more
    ("layers-past-the-note-limit",
     _sub("statements = 4", "statements = 1000").replace('"A3 G3 C4 Bb3"', '"A3 G3 C4 Bb3 D4 F3"')
     + '\n[[layers]]\nrhythm = "16"\nsection = "trombones-4"\n', [], ["written notes"]),
    # --vary combinations count toward it too: 3 combinations of about 16,000 notes
    ("vary-past-the-note-limit",
     _sub("statements = 4", "statements = 1000").replace('"A3 G3 C4 Bb3"', '"A3 G3 C4 Bb3 D4 F3"'),
     ["--vary", "voicing=close,drop2,spread"], ["written notes", "--vary"]),
]


def _one_error_line(child, words: list[str]) -> str:
    assert child.code is not None, f"hung: killed after {child.seconds:.0f} s"
    assert "Traceback" not in child.err and "Usage:" not in child.err, child.err[-2000:]
    errors = child.error_lines()
    assert child.code == 2, (child.code, child.err[-600:])
    assert len(errors) == 1, child.err[-2000:]
    line = errors[0]
    assert line.startswith("arrange: error:"), line[:300]
    assert len(line) <= 400, f"{len(line)} characters: {line[:300]}"
    for w in words:
        assert w in line, (w, line)
    return line


def _seeded_out(tmp_path: Path) -> tuple[Path, dict[str, bytes]]:
    out = tmp_path / "out"
    out.mkdir()
    (out / "hostile-cue.musicxml").write_bytes(b"<score-partwise/> an older good file")
    return out, tree(out)


@pytest.mark.parametrize("text, extra, words", [r[1:] for r in PROJECT_ROWS],
                         ids=[r[0] for r in PROJECT_ROWS])
def test_hostile_project_is_refused_in_one_line(tmp_path: Path, text: str, extra: list[str],
                                                words: list[str]) -> None:
    proj = tmp_path / "p.toml"
    proj.write_text(text, encoding="utf-8")
    out, before = _seeded_out(tmp_path)
    child = run(["build", str(proj), "-o", str(out), *extra], tmp_path, timeout=120, **{"as": CEILING})
    _one_error_line(child, words)
    assert tree(out) == before          # nothing written, nothing replaced, no temp file
    assert child.mb < 500, f"{child.mb:.0f} MB"


# command lines: (id, arguments, words).  "{file}" is an existing regular file.
USAGE_ROWS: list[tuple[str, list[str], list[str]]] = [
    ("build-missing-argument", ["build"], ["PROJECT"]),
    ("build-unknown-option", ["build", "{project}", "--bogus"], ["--bogus"]),
    ("build-output-is-a-file", ["build", "{project}", "-o", "{file}"], ["afile.txt"]),
    ("unknown-command", ["frobnicate"], ["frobnicate"]),
    ("chain-k-huge", ["chain", "C4 D4 E4", "-k", HUGE], ["statements"]),
    ("chain-k-superscript", ["chain", "C4 D4 E4", "-k", SUP2], ["statements"]),
    ("chain-k-words", ["chain", "C4 D4 E4", "-k", "four"], ["statements"]),
    ("chain-overlaps-huge", ["chain", "C4 D4 E4 F4", "--overlaps", f"2,{HUGE}"], ["overlaps"]),
    ("chain-overlaps-superscript", ["chain", "C4 D4 E4 F4", "--overlaps", f"2,{SUP2}"], ["overlaps"]),
    ("design-steps-huge", ["design", "-n", "4", "--steps", f"1,{HUGE}"], ["steps"]),
    ("design-steps-superscript", ["design", "-n", "4", "--steps", f"1,{SUP2}"], ["steps"]),
    ("design-length-huge", ["design", "-n", HUGE], ["length"]),
    # digits of other scripts: Python's int() reads ARABIC-INDIC DIGIT THREE as 3 (Unicode
    # category Nd), the README accepts ASCII digits only
    ("chain-k-arabic-indic", ["chain", "C4 D4 E4", "-k", "\u0663"], ["statements", "ASCII"]),
    ("chain-overlap-devanagari", ["chain", "C4 D4 E4 F4", "--overlap", "\u0967"], ["overlap", "ASCII"]),
    ("design-length-arabic-indic", ["design", "-n", "\u0664"], ["length", "ASCII"]),
    ("design-top-fullwidth", ["design", "-n", "4", "--top", "\uff13"], ["top", "ASCII"]),
    ("design-transposition-signed-thai", ["design", "-n", "4", "--transposition", "-\u0e53"],
     ["transposition", "ASCII"]),
    # 19^7 = 893,871,739 motifs passes the 10^9 space check but takes many minutes
    ("design-over-the-time-budget", ["design", "-n", "8", "--max-step", "9", "--statements", "64",
                                     "--aggregate"], ["--force"]),
]


@pytest.mark.parametrize("args, words", [r[1:] for r in USAGE_ROWS], ids=[r[0] for r in USAGE_ROWS])
def test_command_line_errors_are_one_line(tmp_path: Path, args: list[str], words: list[str]) -> None:
    proj = tmp_path / "p.toml"
    proj.write_text(BASE, encoding="utf-8")
    (tmp_path / "afile.txt").write_text("not a folder")
    args = [a.replace("{project}", str(proj)).replace("{file}", str(tmp_path / "afile.txt"))
            for a in args]
    child = run(args, tmp_path, timeout=120, **{"as": CEILING})
    _one_error_line(child, words)
    assert [ln for ln in child.err.splitlines() if ln.strip()] == child.error_lines(), child.err
    assert (tmp_path / "afile.txt").read_text() == "not a folder"


# ---------------------------------------------------------------- input files

def _vlq(n: int) -> bytes:
    """A MIDI variable-length quantity (MIDI 1.0, Standard MIDI Files)."""
    out = [n & 0x7F]
    n >>= 7
    while n:
        out.append(0x80 | (n & 0x7F))
        n >>= 7
    return bytes(reversed(out))


def smf(events: list[tuple[int, bytes]], *, length: int | None = None) -> bytes:
    """A format-0 Standard MIDI File: (delta, event bytes) pairs, end of track appended."""
    body = b"".join(_vlq(d) + e for d, e in events) + b"\x00\xff\x2f\x00"
    return (b"MThd" + struct.pack(">IHHH", 6, 0, 1, 480)
            + b"MTrk" + struct.pack(">I", len(body) if length is None else length) + body)


def _notes(pitches: list[int], step: int = 240) -> list[tuple[int, bytes]]:
    ev: list[tuple[int, bytes]] = []
    for p in pitches:
        ev += [(0, bytes([0x90, p, 80])), (step, bytes([0x80, p, 0]))]
    return ev


def _musicxml(notes: int, octave: int = 4) -> bytes:
    """A one-part MusicXML 4.0 file (partwise) of ``notes`` quarter notes."""
    steps = "CDEFGAB"
    measures = []
    for m in range(notes // 4):
        body = "".join(f"<note><pitch><step>{steps[(m * 4 + i) % 7]}</step><octave>{octave}</octave>"
                       "</pitch><duration>1</duration><type>quarter</type></note>" for i in range(4))
        attrs = ("<attributes><divisions>1</divisions><time><beats>4</beats><beat-type>4</beat-type>"
                 "</time><clef><sign>G</sign><line>2</line></clef></attributes>") if m == 0 else ""
        measures.append(f'<measure number="{m + 1}">{attrs}{body}</measure>')
    return ('<?xml version="1.0" encoding="UTF-8"?>\n<score-partwise version="4.0"><part-list>'
            '<score-part id="P1"><part-name>Lead</part-name></score-part></part-list>'
            f'<part id="P1">{"".join(measures)}</part></score-partwise>\n').encode()


def _file_case(kind: str, folder: Path) -> str:
    """Make the motif file of one case; return its name."""
    if kind == "dev-zero-symlink":
        os.symlink("/dev/zero", folder / "theme.mid")
    elif kind == "dev-urandom-symlink":
        os.symlink("/dev/urandom", folder / "theme.musicxml")
        return "theme.musicxml"
    elif kind == "fifo":
        os.mkfifo(folder / "theme.mid")
    elif kind == "fifo-symlink":
        os.mkfifo(folder / "pipe")
        os.symlink(folder / "pipe", folder / "theme.mid")
    elif kind == "folder":
        (folder / "theme.mid").mkdir()
    elif kind == "50MB":
        with open(folder / "theme.mid", "wb") as fh:
            fh.write(smf(_notes([60, 62, 64, 65])))
            fh.truncate(50 * MB)
    elif kind == "huge-delta":           # 38 bytes, one delta of 0x0FFFFFFF ticks
        data = smf([(0x0FFFFFFF, bytes([0x90, 60, 80])), (1, bytes([0x80, 60, 0]))])
        (folder / "theme.mid").write_bytes(data)
    elif kind == "chunk-past-file":
        (folder / "theme.mid").write_bytes(smf(_notes([60, 62, 64, 65]), length=1_000_000))
    elif kind == "delta-past-file":      # a variable-length quantity that runs off the end
        data = smf(_notes([60, 62, 64, 65]))
        (folder / "theme.mid").write_bytes(data[:-4] + b"\x81\x81")
    elif kind == "vlq-five-bytes":       # a quantity longer than four bytes (MIDI 1.0: at most 4)
        body = b"\x81\x81\x81\x81\x01\x90\x3c\x50" + b"\x00\xff\x2f\x00"
        (folder / "theme.mid").write_bytes(b"MThd" + struct.pack(">IHHH", 6, 0, 1, 480)
                                           + b"MTrk" + struct.pack(">I", len(body)) + body)
    elif kind == "musicxml-octave-11":   # C11 is MIDI 144, outside 0..127
        (folder / "theme.musicxml").write_bytes(_musicxml(8, octave=11))
        return "theme.musicxml"
    elif kind == "musicxml-octave-minus":
        data = _musicxml(8).replace(b"<octave>4</octave>", b"<octave>-2</octave>")
        (folder / "theme.musicxml").write_bytes(data)
        return "theme.musicxml"
    else:
        raise AssertionError(kind)
    return "theme.mid"


FILE_ROWS: list[tuple[str, list[str]]] = [
    ("dev-zero-symlink", ["theme.mid", "regular file"]),
    ("dev-urandom-symlink", ["theme.musicxml", "regular file"]),
    ("fifo", ["theme.mid", "regular file"]),
    ("fifo-symlink", ["theme.mid", "regular file"]),
    ("folder", ["theme.mid", "regular file"]),
    ("50MB", ["theme.mid", "bytes"]),
    ("huge-delta", ["theme.mid"]),
    ("chunk-past-file", ["theme.mid", "past the end"]),
    ("delta-past-file", ["theme.mid", "past the end"]),
    ("vlq-five-bytes", ["theme.mid"]),
    ("musicxml-octave-11", ["theme.musicxml", "0..127"]),
    ("musicxml-octave-minus", ["theme.musicxml", "0..127"]),
]

MEASURED: dict[str, tuple[float, float, float]] = {}


@pytest.fixture(scope="module")
def baseline_cpu(tmp_path_factory: pytest.TempPathFactory) -> float:
    """CPU seconds of a build refused at once (a missing project): start-up cost only."""
    tmp = tmp_path_factory.mktemp("base")
    child = run(["build", str(tmp / "missing.toml")], tmp, **{"as": CEILING})
    assert child.code == 2
    return child.cpu


def _motif_project(folder: Path, name: str, length: int = 4) -> Path:
    text = _sub('motif = "A3 G3 C4 Bb3"', f'motif = "file:{name}"\nmotif_length = {length}')
    text = text.replace('formats = ["musicxml", "midi", "report"]', 'formats = ["report"]')
    proj = folder / "p.toml"
    proj.write_text(text, encoding="utf-8")
    return proj


@pytest.mark.parametrize("kind, words", FILE_ROWS, ids=[r[0] for r in FILE_ROWS])
def test_hostile_motif_file_is_refused_quickly_and_small(tmp_path: Path, kind: str, words: list[str],
                                                         baseline_cpu: float) -> None:
    proj = _motif_project(tmp_path, _file_case(kind, tmp_path))
    out, before = _seeded_out(tmp_path)
    child = run(["build", str(proj), "-o", str(out)], tmp_path, timeout=60, **{"as": CEILING})
    MEASURED[kind] = (child.seconds, child.cpu, child.mb)
    _one_error_line(child, words)
    assert tree(out) == before
    # bounded work: under 200 MB peak and within 2 CPU seconds past start-up
    # (the 2 s; CPU time, measured in the child, not the wall clock)
    assert child.mb < 200, f"{child.mb:.0f} MB"
    assert child.cpu < baseline_cpu + 2.0, f"{child.cpu:.1f} s CPU (start-up {baseline_cpu:.1f} s)"


def test_large_allowed_motif_files_are_read_only_as_far_as_needed(tmp_path: Path,
                                                                   baseline_cpu: float) -> None:
    """A MIDI file just under the size limit with about 590,000 notes, and a MusicXML
    file of several MB: the motif needs 5 notes, so reading stops there."""
    pitches = [60 + (i % 12) for i in range(590_000)]
    data = smf(_notes(pitches, step=120))
    assert 4 * MB < len(data) < 5_000_000
    (tmp_path / "theme.mid").write_bytes(data)
    xml = _musicxml(40_000)
    assert len(xml) > 4 * MB
    (tmp_path / "theme.musicxml").write_bytes(xml)
    for name, first in (("theme.mid", [60, 61, 62, 63, 64]), ("theme.musicxml", [60, 62, 64, 65, 67])):
        proj = _motif_project(tmp_path, name, length=5)
        out = tmp_path / f"out-{name}"
        child = run(["build", str(proj), "-o", str(out)], tmp_path, timeout=120, **{"as": CEILING})
        MEASURED[name] = (child.seconds, child.cpu, child.mb)
        assert child.code == 0, child.err[-800:]
        report = (out / "hostile-cue.report.json").read_text()
        # the chain's first statement is the motif as read (report.json "chain"), moved by octaves
        import json

        motif = json.loads(report)["chain"]["motif"]
        assert [(p - first[0]) for p in motif] == [(p - first[0]) for p in first], motif
        assert child.mb < 200, f"{name}: {child.mb:.0f} MB"
        assert child.cpu < baseline_cpu + 4.0, f"{name}: {child.cpu:.1f} s CPU"


def test_markup_in_the_title_is_escaped_in_the_report(tmp_path: Path) -> None:
    """CommonMark: ``*x*`` is emphasis, ``<b>`` raw HTML, ``[a](b)`` a link, ``|`` a
    table cell; each must reach report.md as text (backslash-escaped or entity)."""
    title = "Cue *loud* <b>bold</b> [go](javascript:x) | cell"
    text = _sub('"Hostile Cue"', _esc(title.replace("/", "")))
    proj = tmp_path / "p.toml"
    proj.write_text(text.replace('formats = ["musicxml", "midi", "report"]', 'formats = ["report"]'),
                    encoding="utf-8")
    child = run(["build", str(proj), "-o", str(tmp_path / "out")], tmp_path, **{"as": CEILING})
    assert child.code == 0, child.err[-600:]
    md = next((tmp_path / "out").glob("*.report.md")).read_text(encoding="utf-8")
    head = md.splitlines()[0]
    for unescaped in (r"(?<!\\)<b", r"(?<!\\)\*loud", r"(?<!\\)\]\(", r"(?<!\\)\|"):
        assert not re.search(unescaped, head), (unescaped, head)
    assert re.search(r"\\\*loud\\\*", head), head


# ---------------------------------------------------------------- whole projects, generated

VALID = {
    "title": ["Cue A", "Night Run 2", "Überfahrt"],
    "tempo": [72, 120, 176.5],
    "meter": ["4/4", "3/4", "6/8", "5/4"],
    "key": ["F major", "D minor", "Bb dorian", "E mixolydian"],
    "chain.motif": ["A4 G4 C5 Bb4", "60 62 65 64 67", "C4 E4 D4 G4"],
    "chain.statements": [1, 2, 3, 5],
    "chain.overlap": [1, 2],
    "rhythm.groove": ["swing", "straight", "latin"],
    "rhythm.cell": ["8 8 8 8 4 4", "4 4 2", "4. 8 2"],
    "harmony.framework": ["F6 | Gm7 C7", "Dm7 G7 | Cmaj7", "Bb7 | Eb7 | F7"],
    "section.name": ["trumpets-4", "trombones-4", "saxes-5", "horns-4"],
    "section.voicing": ["close", "drop2", "spread", "auto"],
}
BROKEN = {
    "title": ["", "a/b", "Cue\u0007", "Cue\ufffe", 5, "x" * 300],
    "tempo": [0, -3, "fast", 10 ** 30, True],
    "meter": ["4/0", f"{SUP2}/4", "9" * 5000 + "/4", 44, "4/4/4"],
    "key": ["H major", "", 3, "F bluesy"],
    "chain.motif": ["A4", "A4 H4", "60 " + "9" * 5000, f"60 6{SUP2}", [], "C4 " * 100],
    "chain.statements": [0, -1, 10 ** 9, "four", 2.5],
    "chain.overlap": [0, 99, [2, "x"], "two"],
    "rhythm.groove": ["polka", 3],
    "rhythm.cell": ["8 q 8", "", "7"],
    "harmony.framework": ["", "C7)(", "C7,,,", "C7()", "Q7 | F6", "F6:" + "9" * 5000],
    "section.name": ["kazoos-9", 3, ""],
    "section.voicing": ["cluster", 2],
}
_LAYER_OK = {"section": "trombones-4", "role": "pad", "rhythm": "1"}
_LAYER_BAD = [{"section": "kazoos"}, {"section": "trombones-4", "rhythm": "q"},
              {"section": "trombones-4", "role": "drone"}, {"section": "trombones-4", "dynamics": "\u0001"}]


def _toml_value(v: object) -> str:
    """A TOML value; strings with every control character and noncharacter escaped (TOML 1.0)."""
    if isinstance(v, bool):
        return "true" if v else "false"
    if isinstance(v, (int, float)):
        return repr(v)
    if isinstance(v, str):
        return _esc(v)
    if isinstance(v, list):
        return "[" + ", ".join(_toml_value(x) for x in v) + "]"
    if isinstance(v, dict):
        return "{ " + ", ".join(f'"{k}" = {_toml_value(x)}' for k, x in v.items()) + " }"
    raise TypeError(v)


def _project_text(choice: dict[str, object], layers: list[dict[str, object]]) -> str:
    top = [f"{k} = {_toml_value(v)}" for k, v in choice.items() if "." not in k]
    tables: dict[str, list[str]] = {}
    for k, v in choice.items():
        if "." in k:
            t, key = k.split(".", 1)
            tables.setdefault(t, []).append(f"{key} = {_toml_value(v)}")
    tables.setdefault("output", []).append('formats = ["midi", "report"]')
    body = "\n".join(top)
    for t, lines in tables.items():
        body += f"\n\n[{t}]\n" + "\n".join(lines)
    for layer in layers:
        body += "\n\n[[layers]]\n" + "\n".join(f"{k} = {_toml_value(v)}" for k, v in layer.items())
    return body + "\n"


@st.composite
def projects(draw: st.DrawFn) -> tuple[str, bool]:
    choice: dict[str, object] = {}
    broken = False
    for key, good in VALID.items():
        if draw(st.integers(0, 9)) == 0:
            choice[key] = draw(st.sampled_from(BROKEN[key]))
            broken = True
        elif draw(st.booleans()) or key in ("title", "chain.motif", "harmony.framework", "section.name"):
            choice[key] = draw(st.sampled_from(good))
    layers: list[dict[str, object]] = []
    if draw(st.booleans()):
        layers.append(draw(st.sampled_from([_LAYER_OK, *_LAYER_BAD])))
    return _project_text(choice, layers), broken


@settings(max_examples=12, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture,
                                                                  HealthCheck.too_slow])
@given(case=projects())
def test_generated_projects(tmp_path: Path, case: tuple[str, bool]) -> None:
    text, _broken = case
    import tempfile

    folder = Path(tempfile.mkdtemp(dir=tmp_path))
    proj = folder / "p.toml"
    proj.write_text(text, encoding="utf-8")
    out = folder / "out"
    out.mkdir()
    (out / "keep.txt").write_text("a file of the user's")
    before = tree(out)
    child = run(["build", str(proj), "-o", str(out)], folder, timeout=180, **{"as": CEILING})
    assert child.code in (0, 2), (child.code, child.err[-800:], text[:600])
    assert "Traceback" not in child.err
    assert child.mb < 500, f"{child.mb:.0f} MB"
    if child.code == 0:
        written = set(tree(out)) - set(before)
        assert any(n.endswith(".report.json") for n in written) and any(n.endswith(".mid") for n in written)
        assert not any(n.startswith(".") or n.endswith(".tmp") for n in tree(out)), tree(out).keys()
    else:
        assert len(child.error_lines()) == 1, child.err[-800:]
        assert tree(out) == before


# ---------------------------------------------------------------- interrupted before writing

def test_ctrl_c_before_the_write_phase_writes_nothing(tmp_path: Path) -> None:
    """Ctrl-C (SIGINT, POSIX) while the stages still run: exit 130 (128 + 2, the shell's
    convention) with one line, and the output folder exactly as it was: no new file, no
    temporary file, the old files untouched."""
    import signal
    import time

    from childrun import finish, start

    text = _sub("statements = 4", "statements = 400", _sub('overlap = 2', 'overlap = 1'))
    text = _sub('framework = "F6 | F6 | Gm7 C7 | F6"', 'framework = "F6 | F6 | Gm7 C7 | F6"\napproach = []', text)
    text += '\n[[layers]]\nsection = "saxes-5"\nrole = "pad"\nrhythm = "4"\n'
    proj = tmp_path / "p.toml"
    proj.write_text(text, encoding="utf-8")
    out, before = _seeded_out(tmp_path)
    t0 = time.monotonic()
    proc, rep = start(["build", str(proj), "-o", str(out)], tmp_path)
    assert proc.stderr is not None
    seen = ""
    while "voicing ..." not in seen:                     # the stages have begun
        line = proc.stderr.readline()
        if not line:
            break
        seen += line
    proc.send_signal(signal.SIGINT)
    child = finish(proc, rep, t0, timeout=120)
    err = seen + child.err
    assert child.code == 130, (child.code, err[-600:])
    assert "writing ..." not in err, "the build reached its write phase before the signal"
    lines = [ln for ln in err.splitlines() if ln.startswith("arrange:")]
    assert len(lines) == 1 and "interrupted by Ctrl-C" in lines[0], err
    assert "Traceback" not in err and "Aborted" not in err
    assert tree(out) == before


# ---------------------------------------------------------------- the preview's page limit

def test_a_long_preview_draws_its_first_pages_and_says_so(tmp_path: Path) -> None:
    """A score longer than the preview's height limit builds (exit 0): the picture holds the
    first pages only, a one-line notice on stderr says how many the score has, and the
    MusicXML holds every bar (music21 counts the measures).  The stacked SVG is read with
    ElementTree: one nested <svg> per page drawn, the picture within the limit."""
    import xml.etree.ElementTree as ET

    from music21 import converter, stream

    from arrange.writers.preview import MAX_HEIGHT

    text = _sub("statements = 4", "statements = 90", _sub('overlap = 2', 'overlap = 1'))
    text = _sub('name = "trombones-4"', 'name = "big-band"', text)
    text = _sub('formats = ["musicxml", "midi", "report"]', 'formats = ["musicxml", "report", "preview"]', text)
    text = _sub('key = "F major"', 'key = "F major"', text).replace('motif = "A3 G3 C4 Bb3"', 'motif = "A4 G4 C5 Bb4"')
    proj = tmp_path / "p.toml"
    proj.write_text(text, encoding="utf-8")
    child = run(["build", str(proj), "-o", str(tmp_path / "out")], tmp_path, timeout=300)
    assert child.code == 0, child.err[-800:]
    notes = [ln for ln in child.err.splitlines() if "preview:" in ln]
    assert len(notes) == 1, child.err
    m = re.search(r"the first (\d+) of (\d+) pages are drawn", notes[0])
    assert m and 1 <= int(m.group(1)) < int(m.group(2)), notes
    svg = ET.parse(tmp_path / "out" / "hostile-cue.svg").getroot()
    pages = [el for el in svg if el.tag.endswith("svg")]
    assert len(pages) == int(m.group(1)) and int(svg.get("height", "")) <= MAX_HEIGHT
    # as many pages as the limit holds: the next would pass it (each page at most A4 high)
    assert int(svg.get("height", "")) > MAX_HEIGHT - 1.5 * 2970
    import json

    report = json.loads((tmp_path / "out" / "hostile-cue.report.json").read_text())
    score = converter.parse(str(tmp_path / "out" / "hostile-cue.musicxml"))
    measures = score.parts[0].getElementsByClass(stream.Measure)
    assert len(measures) == report["bars"] + (1 if report["rhythm"]["pickup"] else 0)
