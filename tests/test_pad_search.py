"""The pad search's vectorised pieces against plain-Python references.

References: the shape rules of ``voicing_rules/layers.toml`` as common practice
states them (stack each order of the tones downward, close or an octave open,
within the section's span, upper gaps and the bottom gap limited), checked by a
plain-Python stacker written out voice by voice; the motion costs and the
dynamic programme against the plain formula and an exhaustive search over every
path (common practice: the cheapest path is the one with the least total).
"""
from __future__ import annotations

from itertools import permutations, product

import numpy as np
import pytest
from conftest import BASIC, run_cli, write_project

from arrange.theory.chords import parse_chord
from arrange.voicing import layers, pads
from arrange.voicing.sections import get_section


def _reference_shapes(pcs: tuple[int, ...], lo: int, hi: int, n: int) -> list[tuple[int, ...]]:
    """Plain Python, one voice at a time (common practice)."""
    lr = pads.layer_rules()
    found = set()
    orders = set(permutations(pcs)) if n <= 5 else {pcs[i:] + pcs[:i] for i in range(n)}
    opens_all = list(product((False, True), repeat=n - 1)) if n <= 5 else [(False,) * (n - 1)]
    for order in orders:
        for top in range(hi - 11, hi + 1):
            if top % 12 != order[0]:
                continue
            for t in (top, top - 12, top - 24):
                for opens in opens_all:
                    voices = [t]
                    for pc, open_ in zip(order[1:], opens, strict=True):
                        below = voices[-1] - ((voices[-1] - pc) % 12 or 12)
                        voices.append(below - 12 if open_ else below)
                    if voices[-1] < lo or voices[0] > hi:
                        continue
                    gaps = [a - b for a, b in zip(voices, voices[1:], strict=False)]
                    if n > 1 and (max(gaps[:-1] or [0]) > lr.max_gap or gaps[-1] > lr.max_bottom_gap):
                        continue
                    found.add(tuple(voices))
    return sorted(found, reverse=True)


@pytest.mark.parametrize("pcs, lo, hi", [
    ((4, 10, 2, 0), 40, 72),          # C9 without its fifth, a trombone section's span (from memory)
    ((3, 7, 10, 0), 52, 84),          # Cm7
    ((0, 0, 4, 4), 40, 72),           # a thinned pad doubled in octaves
    ((1, 5, 8), 55, 80),
    ((2, 6), 48, 70),
    ((9,), 60, 72),
    ((0, 4, 7), -20, 10),             # below MIDI 0: rows sorted without the base-256 keys
    ((0, 4, 7, 11), 30, 30),          # a span too narrow for any shape
    ((0, 2, 4, 7, 9, 11), 36, 84),    # six parts: rotations only, close (none within the gap limits)
    ((0, 0, 4, 4, 7, 7), 36, 84),
])
def test_shapes_match_plain_python(pcs: tuple[int, ...], lo: int, hi: int) -> None:
    key = tuple(sorted(pcs))
    got = [tuple(r) for r in pads._shapes(key, lo, hi, len(pcs)).tolist()]
    assert got == _reference_shapes(key, lo, hi, len(pcs))
    assert got or len(pcs) > 5 or lo == hi, "every case of up to five parts in a real span has a shape"


def test_candidates_share_one_result_per_clash_free_tones() -> None:
    chord, sec = parse_chord("F7"), get_section("trombones-4")
    P1, R1, c1 = pads.candidates(chord, sec, (69, 72))
    P2, R2, c2 = pads.candidates(chord, sec, (57, 72))       # same pitch classes, same clash-free tones
    assert P1 is P2 and not P1.flags.writeable
    pads._candidates.cache_clear()
    P3, R3, c3 = pads.candidates(chord, sec, (69, 72))
    assert np.array_equal(P1, P3) and np.array_equal(R1, R3) and np.array_equal(c1, c3)
    # every full candidate is a plain-Python shape of one of the chord's tone sets (common practice)
    lo = min(p.instrument.practical[0] for p in sec.parts)
    hi = max(p.instrument.practical[1] for p in sec.parts)
    allowed = {v for pcs, _c in pads.pc_sets(chord, 4) for v in _reference_shapes(tuple(sorted(pcs)), lo, hi, 4)}
    full = {tuple(r) for r, rest in zip(P3.tolist(), R3.tolist(), strict=True) if not any(rest)}
    assert full == allowed


def _plain_steps(a, ra, b, rb, motion: float, leap: float) -> np.ndarray:
    d = np.abs(a[:, None, :] - b[None, :, :])
    plays = ~(ra[:, None, :] | rb[None, :, :])
    return ((motion * d + leap * np.clip(d - 2, 0, None)) * plays).sum(axis=2)


@pytest.mark.parametrize("n", range(1, 10))
def test_steps_give_the_plain_sums_exactly(n: int) -> None:
    rng = np.random.default_rng(n)
    motion, leap = 0.37, 0.713                       # weights with no exact binary form
    a, b = rng.integers(30, 90, (60, n)), rng.integers(30, 90, (70, n))
    ra, rb = rng.random((60, n)) < 0.2, np.zeros((70, n), dtype=bool)
    table = layers._step_table(motion, leap, 60)
    got = layers._steps(a, ra, b, rb, table)
    assert np.array_equal(got, _plain_steps(a, ra, b, rb, motion, leap))


def test_solve_finds_the_cheapest_path() -> None:
    rng = np.random.default_rng(7)
    motion = layers.recipes().weight("motion")
    leap = layers.layer_rules().weight("leap")
    for _trial in range(20):
        cands = [rng.integers(40, 70, (4, 3)) for _ in range(4)]
        rests = [rng.random((4, 3)) < 0.15 for _ in range(4)]
        costs = [rng.random(4) * 10 for _ in range(4)]

        def total(path, cands=cands, rests=rests, costs=costs) -> float:
            s = sum(costs[i][j] for i, j in enumerate(path))
            for i in range(1, len(path)):
                s += _plain_steps(cands[i - 1][[path[i - 1]]], rests[i - 1][[path[i - 1]]],
                                  cands[i][[path[i]]], rests[i][[path[i]]], motion, leap)[0, 0]
            return float(s)

        best = min(total(p) for p in product(range(4), repeat=4))
        assert total(layers._solve(cands, costs, rests)) == pytest.approx(best)


def test_cli_pad_unchanged_when_built_twice(tmp_path) -> None:
    """End to end: the cached search gives the same pad in a second build in one process."""
    # trumpets over a trombone lead: stated to sound among them (under them they find no room)
    proj = write_project(tmp_path, BASIC + '\n[[layers]]\nsection = "trumpets-4"\nrole = "pad"\n'
                         'placement = "among"\n')
    outs = []
    for k in range(2):
        out = tmp_path / f"o{k}"
        r = run_cli("build", str(proj), "-o", str(out), "--formats", "midi")
        assert r.exit_code == 0, r.output
        outs.append(next(out.glob("*.mid")).read_bytes())
    assert outs[0] == outs[1] and len(outs[0]) > 100
