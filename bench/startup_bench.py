"""`arrange --help` and `arrange chain` start-up against two floors, side by side.

Floors: a bare interpreter (``python -c pass``, what every Python tool pays) and
``python -c "import argparse"`` (a tool on the standard library's parser, as ours is).
Paired medians of processor seconds (``_paired``: A B A B, the median of the pairwise
ratios), each command in a fresh process.

Target (issue 8, restated when click was dropped): `arrange chain` at most 2.5 times the
argparse floor, which holds only if the chain path imports neither music21 nor numpy.
"""
from __future__ import annotations

import sys

from _measure import machine, precompile
from _paired import paired_both


def main() -> dict[str, object]:
    precompile()
    py = sys.executable
    bare = [py, "-c", "pass"]
    floors = {"floor: bare interpreter": bare,
              "floor: import argparse": [py, "-c", "import argparse"]}
    cmds = {"arrange --help": [py, "-m", "arrange", "--help"],
            "arrange chain": [py, "-m", "arrange", "chain", "C4 E4 D4 G4", "--statements", "4"]}
    argparse_floor = floors["floor: import argparse"]
    print(f"start-up ({machine()}), processor seconds, paired medians of 9")
    print(f"{'command':<26}{'median s':>10}{'/ bare':>8}{'/ argparse':>12}")
    ratios: dict[str, float] = {}
    base = paired_both(argparse_floor, bare, runs=9)
    print(f"{'floor: bare interpreter':<26}{base.cpu_b:>10.3f}{1.0:>8.2f}{'':>12}")
    print(f"{'floor: import argparse':<26}{base.cpu_a:>10.3f}{base.cpu_ratio:>8.2f}{1.0:>12.2f}")
    for name, cmd in cmds.items():
        vs_bare = paired_both(cmd, bare, runs=9)
        vs_argparse = paired_both(cmd, argparse_floor, runs=9)
        ratios[name] = vs_argparse.cpu_ratio
        print(f"{name:<26}{vs_bare.cpu_a:>10.3f}{vs_bare.cpu_ratio:>8.2f}{vs_argparse.cpu_ratio:>12.2f}")
    ratio = ratios["arrange chain"]
    print(f"arrange chain / import argparse = {ratio:.2f} (target <= 2.5: {'met' if ratio <= 2.5 else 'NOT met'})")
    return {"ratio": ratio}


if __name__ == "__main__":
    main()
