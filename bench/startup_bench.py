"""`arrange chain` start-up against `python -c "import click"`, side by side.

Target (issue 8): at most 2.5 times the floor that any click tool pays,
which holds only if the chain path imports neither music21 nor numpy.
"""
from __future__ import annotations

import sys

from _measure import machine, precompile, side_by_side


def main() -> dict[str, object]:
    precompile()
    py = sys.executable
    res = side_by_side({
        "floor: import click": [py, "-c", "import click"],
        "arrange --help": [py, "-m", "arrange", "--help"],
        "arrange chain": [py, "-m", "arrange", "chain", "C4 E4 D4 G4", "--statements", "4"],
    }, repeats=9)
    floor = res["floor: import click"][0]
    print(f"start-up ({machine()})")
    print(f"{'command':<24}{'median s':>10}{'ratio':>8}{'peak MiB':>10}")
    for name, (t, rss) in res.items():
        print(f"{name:<24}{t:>10.3f}{t / floor:>8.2f}{rss / 1024:>10.1f}")
    ratio = res["arrange chain"][0] / floor
    print(f"arrange chain / import click = {ratio:.2f} (target <= 2.5: {'met' if ratio <= 2.5 else 'NOT met'})")
    return {"ratio": ratio}


if __name__ == "__main__":
    main()
