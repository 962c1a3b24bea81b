"""`arrange build --vary` with 16 combinations against 16 separate builds.

A: one process, ``--vary voicing=4 values --vary key=4 values`` (16 combinations; with the
default formats, then with ``musicxml,midi``); then ``--vary voicing=4 values --vary swing=4
values`` with the default formats, whose 16 combinations draw 4 distinct pictures (a swing
ratio is not written on the page), which ``--vary`` draws once each. B: the same 16
combinations built one by one, each in its own process (each
``--vary`` given one value, so every one writes the same folder as in A). A and B run in
turn (A B A B ...); for each pair the ratio A/B is taken of the processor time (user +
system of the finished processes, from ``getrusage``) and of the wall time, and the
median is quoted.  Target (issue 15): A at most 0.4x B.  A runs with its default worker
processes (one per processor); for voicing x key with the default formats the same
``--vary`` with ``--jobs 1`` (every combination in one process) runs in each pair too,
so the workers' own gain is read side by side.
"""
from __future__ import annotations

import resource
import statistics
import subprocess
import sys
import tempfile
import time
from pathlib import Path

from _measure import ROOT, machine, precompile

PROJECT = ROOT / "demo_projects" / "night-ferry-soli.toml"
VOICINGS = ("close", "drop2", "drop2-4", "spread")
KEYS = ("F major", "Ab major", "D major", "Bb major")
SWINGS = ("0.55", "0.6", "0.66", "0.7")
DEFAULT = "musicxml,midi,report,preview"
# (formats, second varied key, its values)
CASES = ((DEFAULT, "key", KEYS), ("musicxml,midi", "key", KEYS), (DEFAULT, "swing", SWINGS))


def _timed(cmds: list[list[str]]) -> tuple[float, float]:
    """(processor seconds, wall seconds) of the commands run one after another."""
    before = resource.getrusage(resource.RUSAGE_CHILDREN)
    t = time.perf_counter()
    for cmd in cmds:
        subprocess.run(cmd, stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL, check=True, cwd=ROOT)
    wall = time.perf_counter() - t
    after = resource.getrusage(resource.RUSAGE_CHILDREN)
    return (after.ru_utime - before.ru_utime) + (after.ru_stime - before.ru_stime), wall


def main(runs: int = 3) -> float:
    precompile()
    print(f"--vary 16 combinations vs 16 separate builds ({machine()}); paired medians of {runs}")
    ratios = [_compare(formats, key, values, runs) for formats, key, values in CASES]
    return max(ratios[:2])         # the target: voicing x key, 16 distinct pictures


def _compare(formats: str, key: str, values: tuple[str, ...], runs: int) -> float:
    py = sys.executable
    flags = ["--no-parts", "--no-audio", "--formats", formats]
    with tempfile.TemporaryDirectory() as tmp:
        one = [[py, "-m", "arrange", "build", str(PROJECT), "-o", f"{tmp}/a", *flags,
                "--vary", "voicing=" + ",".join(VOICINGS), "--vary", f"{key}=" + ",".join(values)]]
        each = [[py, "-m", "arrange", "build", str(PROJECT), "-o", f"{tmp}/b", *flags,
                 "--vary", f"voicing={v}", "--vary", f"{key}={k}"] for v in VOICINGS for k in values]
        serial = None
        if (formats, key) == CASES[0][:2]:
            serial = [[*(f"{tmp}/c" if w == f"{tmp}/a" else w for w in one[0]), "--jobs", "1"]]
        _timed(one)
        _timed(each[:1])           # warm-up (file cache, .pyc)
        rows, alone = [], []
        for _ in range(runs):
            a, b = _timed(one), _timed(each)
            rows.append((a[0], b[0], a[0] / b[0], a[1], b[1], a[1] / b[1]))
            if serial is not None:
                c = _timed(serial)
                alone.append((c[0], c[0] / b[0], c[1], c[1] / b[1], a[0] / c[0], a[1] / c[1]))
        same = all((Path(tmp) / d / f.relative_to(Path(tmp) / "b")).read_bytes() == f.read_bytes()
                   for d in ("a", "c") if (Path(tmp) / d).exists()
                   for f in (Path(tmp) / "b").rglob("*") if f.is_file() and f.name != "variants.md")
        if serial is not None:     # with one worker and with several: variants.md too
            same = same and (Path(tmp) / "a" / "variants.md").read_bytes() == (
                Path(tmp) / "c" / "variants.md").read_bytes()
    med = [statistics.median(r[i] for r in rows) for i in range(6)]
    print(f"formats {formats}, voicing x {key}")
    print(f"processor s: one --vary {med[0]:.2f}, 16 builds {med[1]:.2f}, ratio {med[2]:.2f}")
    print(f"wall s:      one --vary {med[3]:.2f}, 16 builds {med[4]:.2f}, ratio {med[5]:.2f}")
    if alone:
        m = [statistics.median(r[i] for r in alone) for i in range(6)]
        print(f"--jobs 1:    processor s {m[0]:.2f} (ratio {m[1]:.2f}), wall s {m[2]:.2f} (ratio {m[3]:.2f}); "
              f"default workers / --jobs 1: processor {m[4]:.2f}, wall {m[5]:.2f}")
    print(f"same files in every combination folder: {'yes' if same else 'NO'}")
    print(f"target <= 0.4: processor time {'met' if med[2] <= 0.4 else 'NOT met'}, "
          f"wall time {'met' if med[5] <= 0.4 else 'NOT met'}")
    return med[2]


if __name__ == "__main__":
    main(int(sys.argv[1]) if len(sys.argv) > 1 else 3)
