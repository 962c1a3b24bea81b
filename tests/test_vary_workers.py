"""``arrange build --vary ... --jobs N``: the combinations built in worker processes.

Whatever the number of workers, and whichever of them finishes first, the written files,
``variants.md`` and the console lines are those of the combinations built one after another
in one process, in combination order; an error in one combination stops the run as it
does in one process (exit 2, the first failing combination in order named, nothing
written).

References: music21 reads one combination's score back (its key signatures at sounding
pitch name the key the combination asked for); the trumpet in B-flat sounds a major
second below its written note (from memory, a handbook value) and its extreme low note,
written F#3, sounds E3 (from memory; ``voicing_rules/instruments.toml`` says the same);
``getrusage(RUSAGE_CHILDREN)`` (POSIX) tells whether the command waited for any child
process at all.
"""
from __future__ import annotations

import json
import os
import signal
import subprocess
import sys
from pathlib import Path

import pytest
from conftest import BASIC, run_cli, snapshot, write_project

from arrange import variants

# four B-flat trumpets (our own test scenario)
PROJECT = BASIC.replace('name = "trombones-4"', 'name = "trumpets-4"')
SLUG = "test-cue"
# 4 combinations; every one builds (default formats: score, MIDI, report, preview)
GOOD = ("--vary", "key=Eb major,D major", "--vary", "voicing=close,drop2")
# concert G major puts the fourth trumpet's chord tones below its extreme range (E3 sounding):
# the third and fourth combinations cannot be played, the first two can
BAD = ("--vary", "key=F major,G major", "--vary", "voicing=close,drop2")


def _build(tmp: Path, name: str, *args: str) -> tuple[object, Path]:
    out = tmp / name
    r = run_cli("build", str(tmp / "p.toml"), "-o", str(out), "--no-audio", *args)
    return r, out


@pytest.fixture(scope="module")
def project(tmp_path_factory: pytest.TempPathFactory) -> Path:
    folder = tmp_path_factory.mktemp("workers")
    write_project(folder, PROJECT)
    return folder


def test_one_and_two_workers_write_the_same_files_and_lines(project: Path) -> None:
    one, out1 = _build(project, "one", *GOOD, "--jobs", "1")
    two, out2 = _build(project, "two", *GOOD, "--jobs", "2")
    assert one.exit_code == 0, one.output
    assert two.exit_code == 0, two.output
    files1, files2 = snapshot(out1), snapshot(out2)
    assert len(files1) == 4 * 6 + 1                  # 4 folders of 6 files, variants.md
    assert files1 == files2                          # byte for byte, variants.md too
    # the console: the same lines in the same order (combination order)
    assert one.stdout.replace(str(out1), "OUT") == two.stdout.replace(str(out2), "OUT")
    folders = [Path(line).parent.name for line in one.stdout.replace(str(out1), "OUT").splitlines()
               if line.endswith(".musicxml")]
    assert folders == ["key-eb-major-voicing-close", "key-eb-major-voicing-drop2",
                       "key-d-major-voicing-close", "key-d-major-voicing-drop2"]
    rows = [ln for ln in files2["variants.md"].decode().splitlines() if ln.startswith("| key=")]
    assert [r.split("|")[1].strip() for r in rows] == [
        "key=Eb major, voicing=close", "key=Eb major, voicing=drop2",
        "key=D major, voicing=close", "key=D major, voicing=drop2"]


def test_a_combination_read_back_is_in_its_key(project: Path) -> None:
    """music21: the score of ``key=D major`` written for B-flat trumpets carries E major
    (4 sharps) on every staff, a major second down (from memory) at sounding pitch D major."""
    from music21 import converter, key

    r, out = _build(project, "read", *GOOD, "--jobs", "2", "--formats", "musicxml,report")
    assert r.exit_code == 0, r.output
    for folder, sounding in (("key-d-major-voicing-drop2", 2), ("key-eb-major-voicing-close", -3)):
        score = converter.parse(str(out / folder / f"{SLUG}.musicxml"))
        assert len(score.parts) == 4
        for part in score.parts:
            ks = part.recurse().getElementsByClass(key.KeySignature).first()
            assert ks.sharps == sounding + 2                       # written a major second up
        for part in score.toSoundingPitch().parts:
            ks = part.recurse().getElementsByClass(key.KeySignature).first()
            assert ks.sharps == sounding
        report = json.loads((out / folder / f"{SLUG}.report.json").read_text())
        assert report["key"].startswith("D major" if sounding == 2 else "Eb major")


def test_spawned_workers_write_the_same_files(project: Path, monkeypatch: pytest.MonkeyPatch) -> None:
    """Where the platform cannot fork, the workers are spawned and given the combinations:
    the same files as in one process."""
    one, out1 = _build(project, "spawn-one", *GOOD, "--jobs", "1", "--formats", "musicxml,midi,report")
    monkeypatch.setattr(variants, "start_method", lambda: "spawn")
    two, out2 = _build(project, "spawn-two", *GOOD, "--jobs", "2", "--formats", "musicxml,midi,report")
    assert one.exit_code == 0, one.output
    assert two.exit_code == 0, two.output
    assert snapshot(out1) == snapshot(out2) and len(snapshot(out1)) == 4 * 4 + 1


def test_workers_are_processes_and_one_builds_in_process(project: Path) -> None:
    """``--jobs 1`` starts no child process; ``--jobs 2`` does (RUSAGE_CHILDREN of a
    process that never waited for a child is all zero, POSIX getrusage)."""
    code = ("import json, resource, sys\n"
            "from arrange.cli import main\n"
            "try:\n    main(sys.argv[1:])\n"
            "except SystemExit as e:\n    rc = e.code\n"
            "u = resource.getrusage(resource.RUSAGE_CHILDREN)\n"
            "print(json.dumps([rc, u.ru_maxrss]), file=sys.__stderr__)\n")
    seen = {}
    for jobs in ("1", "2"):
        out = project / f"rusage{jobs}"
        env = {**os.environ, "PYTHONPATH": str(Path(variants.__file__).parent.parent)}
        p = subprocess.run([sys.executable, "-c", code, "build", str(project / "p.toml"), "-o", str(out),
                            "--formats", "musicxml", *GOOD, "--jobs", jobs],
                           capture_output=True, text=True, env=env, timeout=300)
        rc, maxrss = json.loads(p.stderr.strip().splitlines()[-1])
        assert rc == 0, p.stderr
        seen[jobs] = maxrss
    assert seen["1"] == 0 and seen["2"] > 0


def test_default_workers_one_per_processor_at_most_one_per_combination() -> None:
    cpus = len(os.sched_getaffinity(0)) if hasattr(os, "sched_getaffinity") else os.cpu_count()
    assert variants.processors() == cpus
    assert variants.workers(16) == min(16, cpus)
    assert variants.workers(1) == 1
    assert variants.workers(3, 8) == 3
    assert variants.workers(16, 1) == 1


@pytest.mark.parametrize("value", ["0", "-1", "2.5", "two", "", "\u0663", "1e3", "9999999999"])
def test_a_bad_number_of_workers_exits_2_naming_it(project: Path, value: str) -> None:
    r, out = _build(project, f"bad{abs(hash(value))}", *GOOD, f"--jobs={value}")
    assert r.exit_code == 2, r.output
    lines = [ln for ln in r.stderr.splitlines() if ln.strip()]
    assert len(lines) == 1, r.stderr
    assert lines[0].startswith("arrange: error:") and "--jobs" in lines[0]
    assert repr(value) in lines[0] and "1 or more" in lines[0]
    assert "Traceback" not in r.output
    assert not out.exists()


def test_an_unplayable_combination_stops_every_worker_count_alike(project: Path) -> None:
    """One key puts the fourth trumpet below its extreme range: exit 2, the first failing
    combination in order named on one line, nothing written and the old folder kept,
    the same with one worker as with two."""
    results = {}
    for jobs in ("1", "2"):
        out = project / f"unplayable{jobs}"
        first = run_cli("build", str(project / "p.toml"), "-o", str(out), "--formats", "report",
                        "--vary", "voicing=close")
        assert first.exit_code == 0, first.output
        old = snapshot(out)
        r = run_cli("build", str(project / "p.toml"), "-o", str(out), "--no-audio", *BAD, "--jobs", jobs)
        assert r.exit_code == 2, r.output
        assert "Traceback" not in r.output and r.stdout == ""
        errors = [ln for ln in r.stderr.splitlines() if ln.startswith("arrange:")]
        assert len(errors) == 1, r.stderr
        assert errors[0].startswith("arrange: error: --vary key=G major, voicing=close: [section]")
        assert "Trumpet" in errors[0] and "extreme range E3" in errors[0]
        assert snapshot(out) == old
        results[jobs] = r.stderr
    assert results["1"] == results["2"]


# Faults injected from the test side only: the child process's combination builder is
# wrapped to kill its own worker (SIGKILL, as the kernel's out-of-memory killer does),
# to raise, or to wait, before the real builder runs.
_WRAP = """
import os, signal, sys, time
from pathlib import Path
import arrange.variants as V
mode, mark = sys.argv[1], Path(sys.argv[2])
real, parent = V._render_one, os.getpid()
def injected(i):
    if os.getpid() != parent and mode == "kill" and i == 2:
        os.kill(os.getpid(), signal.SIGKILL)
    if os.getpid() != parent and mode == "wait":
        (mark / str(os.getpid())).write_text(str(i))
        time.sleep(120)
    if mode == "fault" and i == 2:
        raise ValueError("injected fault in combination 3")
    return real(i)
V._render_one = injected
from arrange.cli import main
main(sys.argv[3:])
"""


def _injected(project: Path, mode: str, out: Path, jobs: str) -> subprocess.Popen:
    mark = project / f"mark-{mode}-{jobs}"
    mark.mkdir(exist_ok=True)
    env = {**os.environ, "PYTHONPATH": str(Path(variants.__file__).parent.parent)}
    return subprocess.Popen([sys.executable, "-c", _WRAP, mode, str(mark), "build", str(project / "p.toml"),
                             "-o", str(out), "--formats", "musicxml", *GOOD, "--jobs", jobs],
                            stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True, env=env,
                            start_new_session=True)


def _finished(child: subprocess.Popen, timeout: float) -> tuple[str, str]:
    """The child's output once it has ended; a child that hangs fails the test, and it and
    its workers (its own process group) are killed."""
    try:
        return child.communicate(timeout=timeout)
    except subprocess.TimeoutExpired:
        os.killpg(child.pid, signal.SIGKILL)
        child.communicate()
        raise AssertionError(f"hung: still running after {timeout:.0f} s") from None


def test_a_killed_worker_ends_the_run_with_one_line_and_nothing_written(project: Path) -> None:
    """A worker killed mid-run (SIGKILL, POSIX signal 9): the run does not wait for the
    lost combination; exit 1 (an internal fault, not bad input), one line naming it."""
    out = project / "killed"
    child = _injected(project, "kill", out, "2")
    stdout, stderr = _finished(child, 120)
    assert child.returncode == 1, stderr
    lines = [ln for ln in stderr.splitlines() if ln.startswith("arrange:")]
    assert len(lines) == 1, stderr
    assert "worker process" in lines[0] and "SIGKILL" in lines[0] and "nothing was written" in lines[0]
    assert "Traceback" not in stderr and stdout == ""
    assert not out.exists()


def test_a_fault_in_one_combination_reads_alike_with_one_worker_or_two(project: Path) -> None:
    said = {}
    for jobs in ("1", "2"):
        out = project / f"fault{jobs}"
        child = _injected(project, "fault", out, jobs)
        stdout, stderr = _finished(child, 120)
        assert child.returncode == 1, stderr
        lines = [ln for ln in stderr.splitlines() if ln.startswith("arrange:")]
        assert len(lines) == 1 and "ValueError: injected fault in combination 3" in lines[0], stderr
        assert not out.exists() and stdout == ""
        said[jobs] = lines[0]
    assert said["1"] == said["2"]


@pytest.mark.parametrize(("sig", "code"), [(signal.SIGINT, 130), (signal.SIGTERM, 143)],
                         ids=["ctrl-c", "sigterm"])
def test_an_interrupted_run_ends_its_workers(project: Path, sig: int, code: int) -> None:
    """Ctrl-C (to the process group, as a terminal sends it) or SIGTERM (to the command)
    while both workers build: exit 128 + the signal number (the shell's convention), the
    workers gone with it, nothing written."""
    import time

    out = project / f"interrupted{int(sig)}"
    child = _injected(project, "wait", out, "2")
    mark = project / "mark-wait-2"
    deadline = time.monotonic() + 120
    while len(list(mark.iterdir())) < 2 and time.monotonic() < deadline and child.poll() is None:
        time.sleep(0.05)
    pids = [int(p.name) for p in mark.iterdir()]
    if len(pids) != 2:
        os.killpg(child.pid, signal.SIGKILL)
        raise AssertionError(f"workers never started: {_finished(child, 30)[1][-600:]}")
    if sig == signal.SIGINT:         # the terminal sends Ctrl-C to the whole process group
        os.killpg(child.pid, sig)
    else:                            # `kill PID`: the command alone
        child.send_signal(sig)
    stdout, stderr = _finished(child, 30)
    assert child.returncode == code, stderr
    for pid in pids:
        with pytest.raises(ProcessLookupError):
            os.kill(pid, 0)
        (mark / str(pid)).unlink()
    assert not out.exists()
