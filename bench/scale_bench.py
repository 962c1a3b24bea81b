"""Time per written note from 4 to 1000 statements, with 0, 1 and 3 pad layers.

Each build runs in a fresh process, as a user's build does: the modules are imported
first (not timed), then one build goes through every stage and the score and MIDI
writers in memory (``render_project``) with cold caches, and its processor time
(``time.process_time``: this process only, so other work on a shared machine does not
count) is divided by the notes written (lead-section notes times its parts, plus every
sounding layer note).  Median of ``runs`` processes per size.  Target (issue 15): flat,
at most 1.3x between the smallest and the largest size.

(Timing in one process after a warm-up build, as this script did before, let the small
sizes reuse the warm-up's cached chord voicings, so they looked cheaper than a user's
build of them is.)
"""
from __future__ import annotations

import json
import os
import statistics
import subprocess
import sys

from _measure import ROOT, machine, precompile

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

_CHILD = r'''
import json, sys, time, tomllib
sys.path.insert(0, sys.argv[1])
import mido  # noqa: F401  (imports are not timed: the writers import these lazily)
import arrange.voicing.layers, arrange.voicing.pads, arrange.writers.musicxml, arrange.writers.midi  # noqa
import arrange.writers.xml_layers  # noqa: F401
from arrange.build import render_project
from arrange.project import project_from_data
project = project_from_data(tomllib.loads(sys.argv[2]), "scale.toml")
t = time.process_time()
voiced, vls, _files = render_project(project, ("musicxml", "midi"))
dt = time.process_time() - t
notes = len(voiced.events) * len(voiced.section.parts)
notes += sum(1 for vl in vls for nt in vl.notes for p in nt.pitches if p is not None)
print(json.dumps([dt, notes]))
'''


def project_text(n: int, layers: int) -> str:
    return PROJECT.format(n=n) + "".join(LAYER.format(section=s) for s in SECTIONS[:layers])


def build(n: int, layers: int) -> tuple[float, int]:
    """Processor seconds of one cold build in a fresh process, and the notes it wrote."""
    env = dict(os.environ)
    env.setdefault("OPENBLAS_NUM_THREADS", "1")        # as the command line asks
    out = subprocess.run([sys.executable, "-c", _CHILD, str(ROOT), project_text(n, layers)],
                         capture_output=True, text=True, check=True, env=env)
    dt, notes = json.loads(out.stdout)
    return float(dt), int(notes)


def main(sizes: tuple[int, ...] = (4, 16, 64, 256, 1000), runs: int = 3) -> dict[int, float]:
    precompile()
    print(f"time per written note ({machine()}); median of {runs} cold builds per size, "
          "each in a fresh process (processor time of the build, imports excluded)")
    worst = {}
    for layers in (0, 1, 3):
        per = []
        for n in sizes:
            got = [build(n, layers) for _ in range(runs)]
            dt = statistics.median(r[0] for r in got)
            notes = got[0][1]
            per.append(dt / notes * 1e6)
            print(f"layers {layers}  statements {n:>5}  notes {notes:>6}  {dt:8.3f} s  {per[-1]:8.1f} us/note")
        worst[layers] = per[-1] / per[0]
        print(f"layers {layers}: largest/smallest us per note = {per[-1] / per[0]:.2f}, "
              f"max/min = {max(per) / min(per):.2f} (target: largest/smallest <= 1.3: "
              f"{'met' if worst[layers] <= 1.3 else 'NOT met'})")
    return worst


if __name__ == "__main__":
    main()
