"""Shared helpers for the tests.

Outside references used across the suite:
* the MusicXML 4.0 schema shipped in the ``musicxml`` package (PyPI), read by ``xmlschema``;
* music21, partitura and mido as independent readers of what we write.
"""
from __future__ import annotations

import contextlib
import io
import os
import shutil
import subprocess
import sys
from dataclasses import dataclass
from pathlib import Path

import pytest
from hypothesis import settings

# no per-example deadline: CI machines are shared and the first example pays imports
settings.register_profile("arrange", deadline=None)
settings.load_profile("arrange")

ROOT = Path(__file__).resolve().parent.parent
DEMOS = ROOT / "demo_projects"


@pytest.fixture(scope="session", autouse=True)
def _private_cache(tmp_path_factory: pytest.TempPathFactory):
    """The suite's builds (in process and in children) keep parsed melody files in a
    cache folder of their own, never the user's (``writers.cache``)."""
    old = os.environ.get("ARRANGE_CACHE_DIR")
    os.environ["ARRANGE_CACHE_DIR"] = str(tmp_path_factory.mktemp("arrange-cache"))
    yield
    if old is None:
        os.environ.pop("ARRANGE_CACHE_DIR", None)
    else:
        os.environ["ARRANGE_CACHE_DIR"] = old


@pytest.fixture(scope="session")
def musicxml_schema():
    import musicxml
    import xmlschema

    xsd = Path(musicxml.__file__).parent / "generate_classes" / "musicxml_4_0.xsd"
    assert xsd.is_file(), "the musicxml package no longer ships its MusicXML 4.0 XSD"
    return xmlschema.XMLSchema(str(xsd))


class _Both(io.StringIO):
    """One output stream of the in-process runner: what is written goes to its own buffer
    and to the shared one, so ``output`` keeps stdout and stderr in the order written."""

    def __init__(self, both: io.StringIO) -> None:
        super().__init__()
        self.both = both

    def write(self, text: str) -> int:
        self.both.write(text)
        return super().write(text)


@dataclass
class CliResult:
    """What one in-process run of the command line did."""

    exit_code: int
    stdout: str                 # stdout alone
    stderr: str                 # stderr alone
    output: str                 # both, in the order written

    exception = None            # exceptions other than SystemExit are raised, not kept


def run_cli(*args: str, cwd: Path | None = None) -> CliResult:
    """Run the CLI in-process (``arrange.cli.main``, which always ends in ``SystemExit``)
    with stdout and stderr captured apart and together; other exceptions propagate."""
    from arrange.cli import main

    both = io.StringIO()
    out, err = _Both(both), _Both(both)
    old = os.getcwd()
    code: object = 0
    try:
        if cwd:
            os.chdir(cwd)
        with contextlib.redirect_stdout(out), contextlib.redirect_stderr(err):
            try:
                main(list(args))
            except SystemExit as stop:
                code = stop.code
    finally:
        os.chdir(old)
    if code is None:
        code = 0
    elif not isinstance(code, int):
        both.write(f"{code}\n")
        code = 1
    return CliResult(code, out.getvalue(), err.getvalue(), both.getvalue())


def run_subprocess(*args: str, cwd: Path | None = None) -> subprocess.CompletedProcess[str]:
    # the checkout under test first on the path, whatever the folder the child runs in
    env = {**os.environ, "PYTHONPATH": os.pathsep.join(filter(None, [str(ROOT), os.environ.get("PYTHONPATH")]))}
    return subprocess.run([sys.executable, "-m", "arrange", *args], capture_output=True,
                          text=True, cwd=cwd, timeout=300, env=env)


def write_project(folder: Path, text: str, name: str = "p.toml") -> Path:
    path = folder / name
    path.write_text(text, encoding="utf-8")
    return path


def snapshot(folder: Path) -> dict[str, bytes]:
    if not folder.exists():
        return {}
    # every file, subfolders too (the parts' folder), by path relative to ``folder``
    return {str(p.relative_to(folder)): p.read_bytes() for p in sorted(folder.rglob("*")) if p.is_file()}


BASIC = '''title = "Test Cue"
tempo = 120
meter = "4/4"
key = "F major"

[chain]
motif = "A4 G4 C5 Bb4"
statements = 4
overlap = 2

[harmony]
framework = "F6 | F6 | Gm7 C7 | F6"

[section]
name = "trombones-4"
voicing = "close"
'''


@pytest.fixture
def basic_project(tmp_path: Path) -> Path:
    return write_project(tmp_path, BASIC.replace('"A4 G4 C5 Bb4"', '"A3 G3 C4 Bb3"'))


def copy_demo(tmp_path: Path, name: str) -> Path:
    dst = tmp_path / name
    shutil.copy(DEMOS / name, dst)
    return dst


def in_report_order(score, report: dict) -> list:  # noqa: ANN001
    """The score's parts in report order: the lead section's parts, then each layer's, then
    the rhythm section's, matched by part name in order.  The score itself stands in score
    order (common practice: saxophones above trumpets above trombones), which need not be
    the order the report lists the voices in."""
    names = [p["name"] for p in report["section"]["parts"]]
    names += [p["name"] for la in report.get("layers", []) for p in la["parts"]]
    names += [p["name"] for p in (report.get("rhythm_section") or {}).get("parts", [])]
    staves = list(score.parts)
    used: set[int] = set()
    out = []
    for name in names:
        j = next((j for j, s in enumerate(staves) if j not in used and s.partName == name), None)
        if j is None:
            continue
        used.add(j)
        out.append(staves[j])
    return out + [s for j, s in enumerate(staves) if j not in used]


def to_report_order(score, report: dict):  # noqa: ANN001, ANN201
    """``score`` with its parts moved into report order (:func:`in_report_order`), in place."""
    ordered = in_report_order(score, report)
    for s in list(score.parts):
        score.remove(s)
    for s in ordered:
        score.insert(0, s)
    return score


def part_notes(report: dict, k: int) -> list[tuple[float, float, int]]:
    """(onset, duration, sounding pitch) of the notes part ``k`` of the lead section plays,
    from report.json: each event, and each of its ``segments`` (a chord change under a held
    lead note) where the part moves; where it keeps its pitch the note is held (tied)."""
    out: list[list] = []
    for e in report["events"]:
        out.append([e["onset"], e["duration"], e["pitches"][k]])
        for s in e.get("segments", []):
            if s["pitches"][k] == out[-1][2]:
                continue
            first = out[-1]
            start = first[0]
            end = start + first[1]
            first[1] = s["onset"] - start
            out.append([s["onset"], end - s["onset"], s["pitches"][k]])
    return [(o, d, p) for o, d, p in out]


def sounding_events(report: dict) -> list[dict]:
    """What the lead section sounds, stretch by stretch: each report event up to its first
    segment, then each segment (a framework chord that starts under the held lead note),
    with ``onset``, ``duration``, ``pitches``, ``chord`` and ``names``."""
    out = []
    for e in report["events"]:
        segs = e.get("segments", [])
        bounds = [e["onset"], *[s["onset"] for s in segs], e["onset"] + e["duration"]]
        for j, src in enumerate([e, *segs]):
            out.append({"onset": bounds[j], "duration": bounds[j + 1] - bounds[j], "pitches": src["pitches"],
                        "chord": src["chord"], "names": src.get("names"), "index": e["index"]})
    return out

