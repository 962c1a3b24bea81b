"""The pad search's pruned pieces against plain references.

References: the shape rules of ``voicing_rules/layers.toml`` as common practice
states them (stack each order of the tones downward, close or an octave open,
within the section's span, upper gaps and the bottom gap limited), checked by a
plain-Python stacker written out voice by voice; the listing of the voicings that sit
under the lead section against every voicing filtered one by one by the low-interval rule
(``voicing_rules/limits.toml``, common practice); the motion costs against numpy's
``sum`` over the voices (numpy, a general-purpose library: the search keeps the float sums
of the numpy search it replaced); the dynamic programme against an exhaustive search over
every path (common practice: the cheapest path is the one with the least total) and
against numpy's ``argmin`` over every pair (ties to the lowest index).
"""
from __future__ import annotations

from itertools import permutations, product

import numpy as np
import pytest
from conftest import BASIC, run_cli, write_project

from arrange.theory.chords import parse_chord
from arrange.voicing import layer_search, pads
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
    got = list(pads._shapes(key, lo, hi, len(pcs)))
    assert got == _reference_shapes(key, lo, hi, len(pcs))
    assert got or len(pcs) > 5 or lo == hi, "every case of up to five parts in a real span has a shape"


def test_candidates_share_one_result_per_clash_free_tones() -> None:
    chord, sec = parse_chord("F7"), get_section("trombones-4")
    c1 = pads.candidates(chord, sec, (69, 72))
    c2 = pads.candidates(chord, sec, (57, 72))       # same pitch classes, same clash-free tones
    assert [g for g, _r in c1] == [g for g, _r in c2] and c1[0][0] is c2[0][0]
    pads._groups.cache_clear()
    c3 = pads.candidates(chord, sec, (69, 72))
    assert [(g.pcs, g.sounding, g.cost, rows) for g, rows in c1] == [(g.pcs, g.sounding, g.cost, rows)
                                                                     for g, rows in c3]
    # every full candidate is a plain-Python shape of one of the chord's tone sets (common practice)
    lo = min(p.instrument.practical[0] for p in sec.parts)
    hi = max(p.instrument.practical[1] for p in sec.parts)
    allowed = {v for pcs, _c in pads.pc_sets(chord, 4) for v in _reference_shapes(tuple(sorted(pcs)), lo, hi, 4)}
    full = {row for g, rows in c3 if len(g.sounding) == 4 for row in rows}
    assert full == allowed


def _reference_fits(pitches: tuple[int, ...], lows: tuple[int, ...]) -> bool:
    """Sits under the lead section within the low-interval limits, the limits read here from
    ``voicing_rules/limits.toml`` (lowest allowed lower note per interval; common practice)."""
    from arrange.voicing.sections import low_interval_table

    table = low_interval_table()

    def muddy(upper: int, lower: int) -> bool:
        gap = upper - lower
        return 1 <= gap <= 24 and table[gap] >= 0 and lower < table[gap]

    top = pitches[0]
    return (not any(muddy(a, b) for a, b in zip(pitches, pitches[1:], strict=False))
            and all(low > top and not muddy(low, top) for low in lows))


@pytest.mark.parametrize("symbol, section, lead, lows", [
    ("F7", "trombones-4", (69, 72), (69,)),
    ("Gm7", "trombones-4", (60, 62, 65, 70), (60, 62)),
    ("C7b9", "saxes-5", (61, 64, 67, 70), (61,)),          # a rub: thinned sets join
    ("Bbmaj7", "horns-4", (50, 53, 58), (50,)),            # low: room sets only, or nothing
    ("Ebmaj7", "strings-5", (), ()),                        # no lead note sounding
    ("D7", "brass-8", (66, 69, 72), (66,)),                 # eight parts: rotations, close only
])
def test_voicings_under_the_section_are_every_fitting_one(symbol: str, section: str, lead: tuple[int, ...],
                                                          lows: tuple[int, ...]) -> None:
    """The listing that never places a voicing that cannot fit (a stack's own floor, the tops
    under the section) gives exactly the voicings of the whole listing that fit, one by one,
    in the same order."""
    chord, sec = parse_chord(symbol), get_section(section)
    every = pads.candidates(chord, sec, lead)
    under = pads.candidates(chord, sec, lead, lows)
    want = [(g, tuple(r for r in rows if _reference_fits(g.pitches(r), lows))) for g, rows in every]
    assert under == [(g, rows) for g, rows in want if rows]
    assert sum(len(rows) for _g, rows in every) > sum(len(rows) for _g, rows in under)
    for g, rows in under:
        assert all(pads.fits_under(g.pitches(r), lows) for r in rows)


def test_motion_gives_numpy_sums_exactly() -> None:
    """One pair's motion cost is the sum numpy's ``sum`` over the voices gives (one by one
    under eight voices, pairwise from eight on: numpy's own float sums), resting voices free."""
    rng = np.random.default_rng(3)
    motion, leap = 0.37, 0.713                       # weights with no exact binary form
    table = layer_search.step_table(motion, leap, 60)
    for n in range(1, 14):
        a, b = rng.integers(30, 90, (40, n)), rng.integers(30, 90, (40, n))
        ra, rb = rng.random((40, n)) < 0.2, rng.random((40, n)) < 0.1
        d = np.abs(a[:, None, :] - b[None, :, :])
        plays = ~(ra[:, None, :] | rb[None, :, :])
        want = ((motion * d + leap * np.clip(d - 2, 0, None)) * plays).sum(axis=2)
        got = [[layer_search.step_cost(tuple(x.tolist()), tuple(p.tolist()), tuple(y.tolist()), tuple(q.tolist()), table)
                for y, q in zip(b, rb, strict=True)] for x, p in zip(a, ra, strict=True)]
        assert got == want.tolist(), n


def _numpy_solve(cands, costs, rests, motion: float, leap: float) -> list[int]:  # noqa: ANN001
    """The dynamic programme priced over every pair with numpy (``argmin``: the first least)."""
    total = np.array(costs[0], dtype=float)
    back = []
    for i in range(1, len(cands)):
        a, b = np.array(cands[i]), np.array(cands[i - 1])
        ra, rb = np.array(rests[i]), np.array(rests[i - 1])
        d = np.abs(a[:, None, :] - b[None, :, :])
        step = ((motion * d + leap * np.clip(d - 2, 0, None)) * ~(ra[:, None, :] | rb[None, :, :])).sum(axis=2)
        whole = step + total[None, :]
        arg = whole.argmin(axis=1)
        back.append(arg)
        total = whole[np.arange(len(a)), arg] + np.array(costs[i])
    j = int(total.argmin())
    path = [j]
    for arg in reversed(back):
        j = int(arg[j])
        path.append(j)
    return path[::-1]


def _plain_total(path, cands, rests, costs, motion: float, leap: float) -> float:  # noqa: ANN001
    s = sum(costs[i][j] for i, j in enumerate(path))
    for i in range(1, len(path)):
        for x, p, y, q in zip(cands[i - 1][path[i - 1]], rests[i - 1][path[i - 1]], cands[i][path[i]],
                              rests[i][path[i]], strict=True):
            if not (p or q):
                s += motion * abs(x - y) + leap * max(abs(x - y) - 2, 0)
    return s


def _random_layer(rng, chords: int, k: int, n: int, rest_share: float, whole_costs: bool):  # noqa: ANN001, ANN202
    cands = [[tuple(rng.integers(40, 70, n).tolist()) for _ in range(k)] for _ in range(chords)]
    rests = [[tuple((rng.random(n) < rest_share).tolist()) for _ in range(k)] for _ in range(chords)]
    costs = [[float(rng.integers(0, 6)) if whole_costs else float(rng.random() * 10) for _ in range(k)]
             for _ in range(chords)]
    return cands, rests, costs


def test_solve_finds_the_cheapest_path() -> None:
    rng = np.random.default_rng(7)
    motion = layer_search.recipes().weight("motion")
    leap = pads.layer_rules().weight("leap")
    for _trial in range(20):
        cands, rests, costs = _random_layer(rng, 4, 4, 3, 0.15, False)
        best = min(_plain_total(p, cands, rests, costs, motion, leap) for p in product(range(4), repeat=4))
        got = layer_search.solve(cands, costs, rests)
        assert _plain_total(got, cands, rests, costs, motion, leap) == pytest.approx(best)


@pytest.mark.parametrize("vector_pairs", [20_000, 1])
@pytest.mark.parametrize("n, k, rest_share", [(3, 30, 0.0), (4, 60, 0.1), (5, 40, 0.3), (8, 30, 0.0), (9, 25, 0.2)])
def test_solve_is_numpys_path_ties_included(n: int, k: int, rest_share: float, vector_pairs: int,
                                            monkeypatch: pytest.MonkeyPatch) -> None:
    """The pruned search takes the path pricing every pair with numpy would, float sums and
    ties (whole-number costs make many) alike; so does its step for many pairs, priced all at
    once (``vector_pairs`` = 1: every step)."""
    monkeypatch.setattr(layer_search, "VECTOR_PAIRS", vector_pairs)
    rng = np.random.default_rng(n * 100 + k)
    motion = layer_search.recipes().weight("motion")
    leap = pads.layer_rules().weight("leap")
    for _trial in range(3):
        cands, rests, costs = _random_layer(rng, 6, k, n, rest_share, True)
        assert layer_search.solve(cands, costs, rests) == _numpy_solve(cands, costs, rests, motion, leap)


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


def test_layered_demo_builds_without_numpy_and_rereads(tmp_path) -> None:
    """End to end through the command line in its own process: a demo with a pad layer and no
    designed chain (copper-coast-transition) imports no numpy (``sys.modules``, the
    interpreter's record of imports, at exit: the pad search is plain Python), and the
    written score reads back with music21 to the pad notes the report lists, part by part
    (sounding pitches and offsets), none of them at or above the lead section's lowest note
    sounding with it unless the report warns of it."""
    import json
    import subprocess
    import sys
    from pathlib import Path

    from conftest import DEMOS, sounding_events
    from music21 import converter

    code = ("import sys, json\nfrom arrange.cli import main\n"
            "try:\n    main(['build', sys.argv[1], '-o', sys.argv[2], '--formats', 'musicxml,midi,report'])\n"
            "except SystemExit as e:\n    assert not e.code, e.code\n"
            "print(json.dumps('numpy' in sys.modules))\n")
    out = tmp_path / "out"
    r = subprocess.run([sys.executable, "-c", code, str(DEMOS / "copper-coast-transition.toml"), str(out)],
                       capture_output=True, text=True, cwd=Path(__file__).resolve().parent.parent, timeout=300)
    assert r.returncode == 0, r.stderr[-2000:]
    assert json.loads(r.stdout.strip().splitlines()[-1]) is False
    report = json.loads((out / "copper-coast-transition.report.json").read_text(encoding="utf-8"))
    layer = report["layers"][0]
    assert layer["role"] == "pad" and len(layer["notes"]) > 4
    score = converter.parse(str(out / "copper-coast-transition.musicxml"))       # music21 re-reads it
    names = [p.partName for p in score.parts]
    pickup = float(report["rhythm"]["pickup"])
    for k, part_info in enumerate(layer["parts"]):
        part = score.parts[names.index(part_info["name"])].toSoundingPitch()
        notes = [n for n in part.flatten().notes if not (n.tie is not None and n.tie.type in ("stop", "continue"))]
        played = [x for x in layer["notes"] if x["pitches"][k] is not None]
        assert [n.pitch.midi for n in notes] == [x["pitches"][k] for x in played], part_info["name"]
        assert [float(n.getOffsetInHierarchy(part)) for n in notes] == [float(x["onset"]) + pickup for x in played]
    above = [w for w in report["warnings"] if w["kind"] == "layer-above-lead"]
    stretches = sounding_events(report)          # each event split where a chord changes under it
    for x in layer["notes"]:
        lows = [min(e["pitches"]) for e in stretches
                if e["onset"] < x["onset"] + x["duration"] and x["onset"] < e["onset"] + e["duration"]]
        assert above or not lows or max(p for p in x["pitches"] if p is not None) < min(lows)
