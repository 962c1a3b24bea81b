"""Time per written note from 4 to 1000 statements, with 0, 1 and 3 pad layers.

In one process (the imports and the first build's caches paid by a warm-up build), each
size is built in memory through every stage and the score and MIDI writers
(``render_project``); the time is divided by the notes written (lead-section notes times
its parts, plus every sounding layer note).  Target (issue 15): flat, at most 1.3x
between the smallest and the largest size.  Median of 3 builds per size.
"""
from __future__ import annotations

import statistics
import sys
import time
import tomllib

from _measure import ROOT, machine

sys.path.insert(0, str(ROOT))

PROJECT = '''title = "Scale"
tempo = 120
meter = "4/4"
key = "F major"

[chain]
motif = "A3 G3 C4 Bb3"
statements = {n}
overlap = 2

[harmony]
framework = "F6 | F6 | Gm7 C7 | F6"

[section]
name = "trombones-4"
voicing = "close"
'''
LAYER = '''
[[layers]]
section = "{section}"
role = "pad"
'''
SECTIONS = ("saxes-5", "horns-4", "strings-5")


def build(n: int, layers: int) -> tuple[float, int]:
    from arrange.build import render_project
    from arrange.project import project_from_data

    text = PROJECT.format(n=n) + "".join(LAYER.format(section=s) for s in SECTIONS[:layers])
    project = project_from_data(tomllib.loads(text), "scale.toml")
    t = time.perf_counter()
    voiced, vls, _files = render_project(project, ("musicxml", "midi"))
    dt = time.perf_counter() - t
    notes = len(voiced.events) * len(voiced.section.parts)
    notes += sum(1 for vl in vls for nt in vl.notes for p in nt.pitches if p is not None)
    return dt, notes


def main(sizes: tuple[int, ...] = (4, 16, 64, 256, 1000)) -> dict[int, float]:
    print(f"time per written note ({machine()}); median of 3 in-process builds per size")
    build(4, 3)       # warm-up: imports, rule tables, caches
    worst = {}
    for layers in (0, 1, 3):
        per = []
        for n in sizes:
            runs = [build(n, layers) for _ in range(3 if n < 1000 else 1)]
            dt = statistics.median(r[0] for r in runs)
            notes = runs[0][1]
            per.append(dt / notes * 1e6)
            print(f"layers {layers}  statements {n:>5}  notes {notes:>6}  {dt:8.3f} s  {per[-1]:8.1f} us/note")
        worst[layers] = max(per) / min(per)
        print(f"layers {layers}: largest/smallest us per note = {per[-1] / per[0]:.2f}, max/min = {worst[layers]:.2f}"
              f" (target <= 1.3: {'met' if worst[layers] <= 1.3 else 'NOT met'})")
    return worst


if __name__ == "__main__":
    main()
