"""Peak memory of one ``arrange build --vary`` (16 combinations) with 1 and 2 worker processes.

The command runs in a fresh process (``--jobs 1``, then ``--jobs 2``, in turn, ``runs`` times
each). While it runs, its process and every descendant are read every 20 ms from Linux's
``/proc/PID/smaps_rollup``; the peaks of their summed ``Rss`` (resident pages, a page shared
by the parent and its forked workers counted once per process) and summed ``Pss``
(proportional: a shared page split among the processes sharing it, so the sum is what the
whole run holds) are printed, with ``getrusage(RUSAGE_CHILDREN).ru_maxrss`` (the largest
single process) and the processor seconds. The sampling itself takes processor time beside
the command, so wall seconds are not printed here (``vary_bench.py`` measures time). Linux only.
"""
from __future__ import annotations

import os
import statistics
import subprocess
import sys
import tempfile
import time
from pathlib import Path

from _measure import ROOT, machine, precompile

PROJECT = ROOT / "demo_projects" / "night-ferry-soli.toml"
VARY = ["--vary", "voicing=close,drop2,drop2-4,spread", "--vary", "key=F major,Ab major,D major,Bb major"]

_WRAPPER = (
    "import json, resource, subprocess, sys, time\n"
    "t = time.perf_counter()\n"
    "p = subprocess.Popen(sys.argv[1:], stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL)\n"
    "print(p.pid, flush=True)\n"
    "rc = p.wait()\n"
    "u = resource.getrusage(resource.RUSAGE_CHILDREN)\n"
    "print(json.dumps([rc, time.perf_counter() - t, u.ru_utime + u.ru_stime, u.ru_maxrss]), flush=True)\n"
)


def _children() -> dict[int, list[int]]:
    kids: dict[int, list[int]] = {}
    for entry in os.listdir("/proc"):
        if not entry.isdigit():
            continue
        try:
            stat = Path(f"/proc/{entry}/stat").read_text()
        except OSError:
            continue
        ppid = int(stat[stat.rindex(")") + 2:].split()[1])
        kids.setdefault(ppid, []).append(int(entry))
    return kids


def _tree_kib(root: int) -> tuple[int, int, int]:
    """(processes, summed Rss KiB, summed Pss KiB) of ``root`` and its descendants."""
    kids = _children()
    todo, seen = [root], []
    while todo:
        pid = todo.pop()
        seen.append(pid)
        todo.extend(kids.get(pid, []))
    rss = pss = n = 0
    for pid in seen:
        try:
            text = Path(f"/proc/{pid}/smaps_rollup").read_text()
        except OSError:
            continue
        n += 1
        for line in text.splitlines():
            if line.startswith("Rss:"):
                rss += int(line.split()[1])
            elif line.startswith("Pss:"):
                pss += int(line.split()[1])
    return n, rss, pss


def measure(jobs: int, out: str) -> dict[str, float]:
    import json

    cmd = [sys.executable, "-m", "arrange", "build", str(PROJECT), "-o", out, "--no-parts", "--no-audio",
           *VARY, "--jobs", str(jobs)]
    w = subprocess.Popen([sys.executable, "-c", _WRAPPER, *cmd], stdout=subprocess.PIPE, text=True, cwd=ROOT)
    assert w.stdout is not None
    pid = int(w.stdout.readline())
    peak = [0, 0, 0]
    while w.poll() is None:
        n, rss, pss = _tree_kib(pid)
        peak = [max(peak[0], n), max(peak[1], rss), max(peak[2], pss)]
        time.sleep(0.02)
    rc, wall, cpu, maxrss = json.loads(w.stdout.read().strip().splitlines()[-1])
    if rc != 0:
        raise RuntimeError(f"{cmd} exited {rc}")
    return {"processes": peak[0], "rss": peak[1] / 1024, "pss": peak[2] / 1024,
            "largest": maxrss / 1024, "cpu": cpu, "wall": wall}


def main(runs: int = 3) -> None:
    precompile()
    print(f"--vary 16 combinations of night-ferry-soli, peak memory ({machine()}); medians of {runs}")
    got: dict[int, list[dict[str, float]]] = {1: [], 2: []}
    with tempfile.TemporaryDirectory() as tmp:
        measure(1, f"{tmp}/warm")
        for _ in range(runs):
            for jobs in (1, 2):
                got[jobs].append(measure(jobs, f"{tmp}/j{jobs}"))
    print("| --jobs | processes | peak summed PSS MiB | peak summed RSS MiB | largest process MiB "
          "| processor s |")
    print("| --- | --- | --- | --- | --- | --- |")
    for jobs, rows in got.items():
        med = {k: statistics.median(r[k] for r in rows) for k in rows[0]}
        print(f"| {jobs} | {med['processes']:.0f} | {med['pss']:.0f} | {med['rss']:.0f} | {med['largest']:.0f} "
              f"| {med['cpu']:.2f} |")


if __name__ == "__main__":
    main(int(sys.argv[1]) if len(sys.argv) > 1 else 3)
