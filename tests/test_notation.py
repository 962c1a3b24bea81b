"""Notation rules: readable, tied pieces per meter (arrange/notation.py).

Reference: the common practice of engraving (notation handbooks; no single
published source), as each rule says in the module's docstring.
"""
from __future__ import annotations

from fractions import Fraction as F

import pytest
from hypothesis import given
from hypothesis import strategies as st

from arrange.rhythm.meter import METERS, metric_weight, parse_meter
from arrange.rhythm.notation import pieces, readable


def _cut(meter: str, onset, duration, **kw) -> list[tuple[F, F]]:
    return [(p.offset, p.duration) for p in pieces(F(onset), F(duration), parse_meter(meter), **kw)]


@pytest.mark.parametrize("meter, onset, duration, expected", [
    ("4/4", 0, 3, [(0, 3)]),                        # dotted half on beat 1 (common practice)
    ("4/4", 1, 2, [(1, 1), (2, 1)]),                # half on beat 2 hides beat 3: tied (common practice)
    ("4/4", "1/2", 1, [("1/2", 1)]),                # 8 4 8 syncopation inside the half bar
    ("4/4", "3/2", "3/2", [("3/2", "1/2"), (2, 1)]),   # across the middle: tied
    ("3/4", 1, 2, [(1, 2)]),                        # half note on beat 2 of 3/4
    ("6/8", "1/2", 1, [("1/2", 1)]),                # 8 4 in 6/8
    ("6/8", "3/4", "3/2", [("3/4", "1/4"), (1, "1/2"), ("3/2", "3/4")]),   # beats of 6/8 shown
    ("5/4", 0, 4, [(0, 3), (3, 1)]),                # 3+2 grouping is not hidden
    ("7/8", 0, "7/2", [(0, 1), (1, 1), (2, "3/2")]),   # 2+2+3 eighths
    ("12/8", "3/2", 3, [("3/2", "3/2"), (3, "3/2")]),  # the middle of a 12/8 bar
    ("4/4", "1/3", "2/3", [("1/3", "2/3")]),        # triplet quarter after a triplet eighth
])
def test_note_rules(meter: str, onset, duration, expected) -> None:
    assert _cut(meter, onset, duration) == [(F(a), F(b)) for a, b in expected]


@pytest.mark.parametrize("meter, onset, duration, expected", [
    ("4/4", 0, 3, [(0, 2), (2, 1)]),    # rests show the half bar: half + quarter (common practice)
    ("4/4", 1, 3, [(1, 1), (2, 2)]),
    ("3/4", 1, 2, [(1, 1), (2, 1)]),    # two quarter rests in 3/4, not a half rest
    ("4/4", 0, 4, [(0, 4)]),            # a whole-bar rest
])
def test_rest_rules(meter: str, onset, duration, expected) -> None:
    assert _cut(meter, onset, duration, rest=True) == [(F(a), F(b)) for a, b in expected]


def test_bar_line_tie_and_pickup() -> None:
    ps = pieces(F(3), F(2), parse_meter("4/4"))          # crosses the bar line: tied (R1)
    assert [(p.measure, p.offset, p.duration, p.tie_start, p.tie_stop) for p in ps] == [
        (0, F(3), F(1), True, False), (1, F(0), F(1), False, True)]
    ps = pieces(F(-1), F(2), parse_meter("4/4"), pickup=F(1))   # pickup is measure 0
    assert [(p.measure, p.offset) for p in ps] == [(0, F(0)), (1, F(0))]


def test_metric_weight() -> None:
    # downbeat, beat, off-beat, finer (common practice of metric hierarchy)
    m = parse_meter("4/4")
    assert [metric_weight(F(x), m) for x in ("0", "1", "1/2", "1/4", "4")] == [0, 1, 2, 3, 0]
    m = parse_meter("6/8")
    assert [metric_weight(F(x), m) for x in ("0", "3/2", "1/2", "1/4")] == [0, 1, 2, 3]


grid = st.integers(min_value=0, max_value=24 * 12).map(lambda k: F(k, 24))


@given(st.sampled_from(METERS), grid, grid.filter(lambda d: d > 0), st.booleans())
def test_pieces_always_add_up(meter: str, onset: F, duration: F, rest: bool) -> None:
    m = parse_meter(meter)
    ps = pieces(onset, duration, m, rest=rest)
    assert sum((p.duration for p in ps), F(0)) == duration
    t = onset
    for p in ps:
        assert p.measure * m.bar + p.offset == t       # contiguous
        assert p.offset + p.duration <= m.bar          # never across a bar line (R1)
        # readable values only (R5); whole-bar rests are measure rests
        assert readable(p.duration) or p.whole_bar or p.duration <= F(1, 24)
        t += p.duration
