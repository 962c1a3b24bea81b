"""The RI chain core.

References: the length formula k(n-o)+o and the compass / transposition
formulas are common practice of RI chaining; each statement's pitch classes
are checked against music21's ``serial`` module (general-purpose library).
"""
from __future__ import annotations

import pytest
from hypothesis import assume, given, settings
from hypothesis import strategies as st

from arrange.chain.core import build_chain, place_in_range, working_overlaps
from arrange.errors import ChainError

motifs = st.lists(st.integers(min_value=48, max_value=84), min_size=2, max_size=8)


@given(motifs, st.integers(min_value=1, max_value=12), st.integers(min_value=1, max_value=2))
def test_length_formula(motif: list[int], k: int, o: int) -> None:
    assume(o <= len(motif) - 1)
    c = build_chain(motif, k, o)
    n = len(motif)
    assert c.length == k * (n - o) + o  # common practice of RI chaining


@given(st.lists(st.integers(min_value=48, max_value=84), min_size=3, max_size=8),
       st.integers(min_value=3, max_value=10))
def test_formulas_of_overlap_two(motif: list[int], k: int) -> None:
    c = build_chain(motif, k, 2)
    p = motif
    # common practice: the last note of statement 2 is p(n-1)+pn-p1 ...
    assert c.statements[1].pitches[-1] == p[-2] + p[-1] - p[0]
    assert c.compass_after_two == p[-2] + p[-1] - 2 * p[0]
    # ... and statement 3 lies (pn-p1)+(p(n-1)-p2) semitones from statement 1
    assert c.transposition == (p[-1] - p[0]) + (p[-2] - p[1])


@given(motifs, st.integers(min_value=2, max_value=8), st.integers(min_value=1, max_value=3))
def test_shared_notes_and_transposed_repeats(motif: list[int], k: int, o: int) -> None:
    assume(o <= len(motif) - 1)
    try:
        c = build_chain(motif, k, o)
    except ChainError:
        assume(False)
        return
    line = c.raw_pitches
    for a, b in zip(c.statements, c.statements[1:], strict=False):
        ov = c.overlaps[a.index - 1]
        assert a.pitches[-ov:] == b.pitches[:ov] or b.link == "pitch-class"
        assert line[b.start:b.start + len(b.pitches)] == b.pitches
    for a, b in zip(c.statements, c.statements[2:], strict=False):
        if a.link != "pitch-class" and b.link != "pitch-class" and all(
                s.link != "pitch-class" for s in c.statements):
            shift = b.pitches[0] - a.pitches[0]
            assert tuple(x + shift for x in a.pitches) == b.pitches
            if a.index == 1:
                assert shift == c.transposition


@settings(max_examples=60, deadline=None)
@given(st.lists(st.integers(min_value=55, max_value=79), min_size=3, max_size=7, unique=True),
       st.integers(min_value=2, max_value=6))
def test_statements_match_music21_serial_forms(motif: list[int], k: int) -> None:
    from music21 import serial

    c = build_chain(motif, k, 2)
    row = serial.pcToToneRow([p % 12 for p in motif])
    for s in c.statements:
        form = "T" if s.form == "P" else "RI"
        # music21's original-centred convention: RI_t ends t above the row's first note
        ref = row.originalCenteredTransformation(form, s.transposition % 12).pitchClasses()
        assert [p % 12 for p in s.pitches] == list(ref)


def test_hand_worked_example() -> None:
    # C E D G: axis D+G, RI = D G F A; statement 3 = F A G C (+5) (common practice)
    c = build_chain([60, 64, 62, 67], 4, 2)
    assert c.statements[1].pitches == (62, 67, 65, 69)
    assert c.statements[2].pitches == (65, 69, 67, 72)
    assert c.raw_pitches == (60, 64, 62, 67, 65, 69, 67, 72, 70, 74)
    assert [s.form for s in c.statements] == ["P", "RI", "P", "RI"]


def test_overlap_three_exact_and_by_pitch_class() -> None:
    exact = build_chain([60, 62, 64, 67, 70], 3, 3)   # head C D E and tail E G Bb are symmetric
    assert [s.link for s in exact.statements[1:]] == ["exact", "exact"]
    assert exact.length == 3 * 2 + 3
    pcl = build_chain([60, 62, 64, 67, 82], 2, 3)     # E G Bb(+12): symmetric by pitch class only
    assert pcl.statements[1].link == "pitch-class"
    assert pcl.statements[1].pitches[:3] == (64, 67, 82)
    for a, b in zip(pcl.statements[1].pitches[2:], pcl.statements[1].pitches[3:], strict=False):
        assert abs(b - a) <= 6       # new notes placed in the octave nearest the previous


def test_overlap_that_does_not_link_lists_working_ones() -> None:
    with pytest.raises(ChainError) as info:
        build_chain([60, 64, 62, 67], 3, 3)
    assert "1, 2" in str(info.value)
    assert working_overlaps([60, 64, 62, 67]) == (1, 2)


def test_per_link_overlaps() -> None:
    c = build_chain([60, 62, 64, 67, 70], 4, [3, 1, 2])
    assert c.length == 5 + 2 + 4 + 3
    assert c.overlaps == (3, 1, 2)


@given(st.lists(st.integers(min_value=40, max_value=90), min_size=2, max_size=60),
       st.integers(min_value=50, max_value=70), st.integers(min_value=12, max_value=24))
def test_octave_placement_keeps_pitch_classes_and_range(line: list[int], low: int, width: int) -> None:
    high = low + width
    out = place_in_range(line, (low, high))
    assert [p % 12 for p in out] == [p % 12 for p in line]
    assert all(low <= p <= high for p in out)


def test_placement_error_for_narrow_range() -> None:
    with pytest.raises(ChainError) as info:
        build_chain([60, 64, 62, 67], 4, 2, (64, 69))
    assert "lead range" in str(info.value)


@pytest.mark.parametrize("k", [0, 1001, -3])
def test_statement_count_limits(k: int) -> None:
    with pytest.raises(ChainError):
        build_chain([60, 62, 64], k, 1)


def test_aggregate_completion() -> None:
    c = build_chain([60, 61, 63, 66], 12, 2)
    if c.pitch_classes == 12:
        assert c.aggregate_at is not None
        assert len({p % 12 for p in c.pitches[:c.aggregate_at]}) == 12
        assert len({p % 12 for p in c.pitches[:c.aggregate_at - 1]}) == 11
