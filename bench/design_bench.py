"""Benchmark of the chain designer, side by side in one run.

The space: every 6-note motif from C4 whose steps are 1..12 semitones either
way (24^5 = 7,962,624 candidates), screened for one constraint set (a
transition from F major to Ab major over 4 statements, the chain within 24
semitones).  The vectorised search walks the whole space; the plain-Python
loop (arrange.chain.core.build_chain plus arrange.chain.design.meets, one motif at a
time) walks a random sample of the same space, and the two are checked to
agree on that sample.  Prints candidates per second for both and the ratio.

Run from the project folder:  python bench/design_bench.py [--sample N] [--seed S]
"""
from __future__ import annotations

import argparse
import os
import platform
import random
import sys
import time
from pathlib import Path

sys.path.insert(0, str(Path(__file__).resolve().parent.parent))

import numpy as np  # noqa: E402

from arrange.chain import design
from arrange.chain import kernel as design_kernel  # noqa: E402
from arrange.chain.core import build_chain  # noqa: E402
from arrange.errors import ChainError  # noqa: E402
from arrange.harmony.harmonizer import parse_key  # noqa: E402

FLOOR_SECONDS = 10.0
FLOOR_RATIO = 100.0


def main() -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--sample", type=int, default=20_000, help="motifs in the plain-Python sample")
    ap.add_argument("--seed", type=int, default=7)
    args = ap.parse_args()
    spec = design.make_spec(6, statements=4, overlap=2, max_step=12, span=24,
                            from_key=parse_key("F major"), to_key=parse_key("Ab major"))
    total = design.space_size(spec)
    print(f"space: {total:,} motifs of 6 notes, steps +-1..12; constraints: F major -> Ab major, "
          f"4 statements, span <= 24")
    print(f"machine: {os.cpu_count()} cores, Python {platform.python_version()}, numpy {np.__version__}")

    t0 = time.perf_counter()
    found = design.search(spec, top=10)
    vec_s = time.perf_counter() - t0

    rng = random.Random(args.seed)
    sample = sorted(rng.sample(range(total), args.sample))
    t0 = time.perf_counter()
    plain_pass = []
    for g in sample:
        motif = design.motif_at(spec, g)
        try:
            chain = build_chain(motif, spec.statements, spec.overlap)
        except ChainError:
            continue
        if design.meets(spec, chain) is not None:
            plain_pass.append(g)
    plain_s = time.perf_counter() - t0

    # the vectorised kernel on exactly the sampled motifs must pass exactly the same ones
    cols = [np.array(c, dtype=np.int16) for c in zip(*(design.motif_at(spec, g) for g in sample), strict=True)]
    got, _tier, _score = design_kernel.screen(spec, cols, np.array(sample, dtype=np.int64))
    agree = sorted(got.tolist()) == plain_pass

    vec_rate = total / vec_s
    plain_rate = len(sample) / plain_s
    ratio = vec_rate / plain_rate
    print(f"vectorised:   {total:>10,} motifs in {vec_s:7.2f} s = {vec_rate:>12,.0f} motifs/s "
          f"({found.count:,} meet the constraints)")
    print(f"plain Python: {len(sample):>10,} motifs in {plain_s:7.2f} s = {plain_rate:>12,.0f} motifs/s "
          f"({len(plain_pass):,} of the sample meet them)")
    print(f"ratio:        {ratio:,.0f}x   sample agreement: {'yes' if agree else 'NO'}")
    print(f"floor:        full space under {FLOOR_SECONDS:.0f} s: {'met' if vec_s < FLOOR_SECONDS else 'MISSED'}; "
          f"at least {FLOOR_RATIO:.0f}x: {'met' if ratio >= FLOOR_RATIO else 'MISSED'}")
    return 0 if agree and vec_s < FLOOR_SECONDS and ratio >= FLOOR_RATIO else 1


if __name__ == "__main__":
    import resource

    code = main()
    peak = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024
    print(f"peak memory of this process: {peak:.0f} MiB (getrusage; the budget is 1 GiB)")
    sys.exit(code)
