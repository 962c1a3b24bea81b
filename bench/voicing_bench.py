"""Voicing search time per note, 100 to 10,000 notes, for a 6-part section (brass-6).

Run from the checkout:  python bench/voicing_bench.py
Prints, side by side in one run, the time per note for each line length and its
ratio to the shortest line: a flat ratio means the search is linear in the notes.
"""
from __future__ import annotations

import sys
import time
from pathlib import Path

sys.path.insert(0, str(Path(__file__).resolve().parent.parent))

from arrange import build
from arrange.build import run_pipeline  # noqa: E402
from arrange.project import project_from_data  # noqa: E402
from arrange.voicing import shapes  # noqa: E402
from arrange.voicing.voicer import voice  # noqa: E402

MOTIF = "C4 E4 D4 G4 F4 A4 B4 G4 E4 F4 D4 E4"   # 12 notes; overlap 2 adds 10 a statement


def harmonized(notes: int, voicing: str):
    statements = max(1, (notes - 12) // 10 + 1)
    data = {"title": "Bench", "key": "C major",
            "chain": {"motif": MOTIF, "statements": statements, "overlap": 2, "lead_range": ["F4", "F5"]},
            "harmony": {"framework": "C6 | Dm7 G7 | Em7 A7 | Dm7 G7"},
            "section": {"name": "brass-6", "voicing": voicing}}
    project = project_from_data(data, "bench")
    # the writers' size limit does not apply: only the stages up to voicing run here
    build.MAX_SCORE_NOTES = 10 ** 9
    return run_pipeline(project).harmonized, project


def main() -> None:
    sizes = (100, 1000, 10_000)
    for voicing in ("close", "drop2", "spread"):
        per_note = []
        for n in sizes:
            h, project = harmonized(n, voicing)
            shapes.shapes.cache_clear()
            best = float("inf")
            for _ in range(3):
                t = time.perf_counter()
                voice(h, project.section, project.voicing)
                best = min(best, time.perf_counter() - t)
            per_note.append((len(h.events), best / len(h.events)))
        base = per_note[0][1]
        cells = "  ".join(f"{k:>6} notes {t * 1e6:8.1f} us/note (x{t / base:4.2f})" for k, t in per_note)
        print(f"{voicing:<7} {cells}")


if __name__ == "__main__":
    import resource

    main()
    peak = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024
    print(f"peak memory of this process: {peak:.0f} MiB (getrusage)")
