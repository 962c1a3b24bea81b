"""`arrange build` of each demo project against a music21-only floor, side by side.

The floor (floor_music21.py) builds the same notes and chord symbols as
music21 objects and writes the MusicXML and MIDI with music21 alone.  Our side
writes the score and the MIDI only (no parts, report or preview).  Each side runs
9 times, interleaved; the fastest run of each is compared (on a shared machine the
slow runs measure the neighbours, not the code).  Target (issue 8): our
whole pipeline (musicxml + midi) / the floor <= 1.3.
"""
from __future__ import annotations

import sys
import tempfile
from pathlib import Path

from _measure import ROOT, machine, precompile, run_once, side_by_side


def main() -> dict[str, float]:
    precompile()
    py = sys.executable
    here = Path(__file__).resolve().parent
    ratios = {}
    print(f"build vs music21 floor ({machine()})")
    print("fastest of 9 interleaved runs each")
    print(f"{'project':<28}{'arrange s':>10}{'floor s':>10}{'ratio':>8}{'arrange MiB':>13}{'floor MiB':>11}")
    with tempfile.TemporaryDirectory() as tmp:
        for proj in sorted((ROOT / "demo_projects").glob("*.toml")):
            out = Path(tmp) / proj.stem
            # one full build first, for the report the floor reads
            run_once([py, "-m", "arrange", "build", str(proj), "-o", str(out)])
            report = next(out.glob("*.report.json"))
            res = side_by_side({
                "arrange": [py, "-m", "arrange", "build", str(proj), "-o", str(out / "a"),
                            "--formats", "musicxml,midi", "--no-parts", "--no-audio"],
                "floor": [py, str(here / "floor_music21.py"), str(report), str(out / "f")],
            }, repeats=9, best=True)
            (ta, ma), (tf, mf) = res["arrange"], res["floor"]
            ratios[proj.stem] = ta / tf
            print(f"{proj.stem:<28}{ta:>10.3f}{tf:>10.3f}{ta / tf:>8.2f}{ma / 1024:>13.1f}{mf / 1024:>11.1f}")
    worst = max(ratios.values())
    print(f"worst ratio {worst:.2f} (target <= 1.3: {'met' if worst <= 1.3 else 'NOT met'})")
    return ratios


if __name__ == "__main__":
    main()
