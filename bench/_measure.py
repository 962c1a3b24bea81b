"""Shared timing and memory helpers for the benchmarks.

Each command runs in a fresh process; its wall time is taken around the
call and its peak resident memory comes from the operating system's
accounting (``getrusage(RUSAGE_CHILDREN).ru_maxrss`` read in a wrapper
process that runs only that command).
"""
from __future__ import annotations

import json
import statistics
import subprocess
import sys
from pathlib import Path

ROOT = Path(__file__).resolve().parent.parent

_WRAPPER = (
    "import json, resource, subprocess, sys, time\n"
    "cmd = json.loads(sys.argv[1])\n"
    "t = time.perf_counter()\n"
    "r = subprocess.run(cmd, stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL, cwd=sys.argv[2])\n"
    "dt = time.perf_counter() - t\n"
    "u = resource.getrusage(resource.RUSAGE_CHILDREN)\n"
    "print(json.dumps([dt, u.ru_maxrss, r.returncode, u.ru_utime + u.ru_stime]))\n"
)


def run_once(cmd: list[str], cwd: Path = ROOT) -> tuple[float, int]:
    """(seconds, peak KiB) of one run of ``cmd`` in a fresh process."""
    wall, _cpu, rss = run_measured(cmd, cwd)
    return wall, rss


def run_measured(cmd: list[str], cwd: Path = ROOT) -> tuple[float, float, int]:
    """(wall seconds, processor seconds, peak KiB) of one run of ``cmd`` in a fresh process.
    Processor seconds (user + system, the operating system's accounting of the finished
    command and every process it waited for) hold better than wall seconds on a machine
    others are using at the same time."""
    out = subprocess.run([sys.executable, "-c", _WRAPPER, json.dumps(cmd), str(cwd)],
                         capture_output=True, text=True, check=True)
    dt, rss, rc, cpu = json.loads(out.stdout)
    if rc != 0:
        raise RuntimeError(f"{cmd} exited {rc}")
    return float(dt), float(cpu), int(rss)


def side_by_side(cmds: dict[str, list[str]], repeats: int = 7, cwd: Path = ROOT,
                 best: bool = False) -> dict[str, tuple[float, int]]:
    """Run the commands interleaved ``repeats`` times; median (or, with ``best``, the
    fastest, least disturbed) seconds and max peak KiB each."""
    times: dict[str, list[float]] = {k: [] for k in cmds}
    peaks: dict[str, int] = {k: 0 for k in cmds}
    for cmd in cmds.values():      # one warm-up each (file cache, .pyc)
        run_once(cmd, cwd)
    for _ in range(repeats):
        for name, cmd in cmds.items():
            dt, rss = run_once(cmd, cwd)
            times[name].append(dt)
            peaks[name] = max(peaks[name], rss)
    pick = min if best else statistics.median
    return {k: (pick(v), peaks[k]) for k, v in times.items()}


def precompile() -> None:
    """Byte-compile the checkout's package, as ``pip install`` does for an installed one
    (and as music21 already is): a session with PYTHONDONTWRITEBYTECODE would otherwise
    compile every module from source on every run and measure the compiler."""
    import compileall

    compileall.compile_dir(str(ROOT / "arrange"), quiet=1)


def machine() -> str:
    import os
    import platform

    cpu = "unknown CPU"
    try:
        for line in Path("/proc/cpuinfo").read_text().splitlines():
            if line.startswith("model name"):
                cpu = line.split(":", 1)[1].strip()
                break
    except OSError:
        pass
    return f"{cpu}, {os.cpu_count()} cores, Python {platform.python_version()}, {platform.system()}"
