"""Helpers that more than one file format shares (no format imports another's writer)."""
from __future__ import annotations

from fractions import Fraction
from typing import Any

__all__ = ["json_number", "bar_of_event", "channel_for"]


def json_number(q: Fraction) -> float | int:
    """A time in quarter notes as a JSON number: whole values as integers."""
    return int(q) if q.denominator == 1 else float(q)


def bar_of_event(events: list[dict[str, Any]], ev: int | None) -> Any:
    """The bar of report event ``ev`` (None for a finding about the whole passage)."""
    return events[ev]["bar"] if ev is not None and 0 <= ev < len(events) else None


def channel_for(part_index: int) -> int:
    """0-based MIDI channel of a part, skipping the percussion channel (9)."""
    ch = part_index if part_index < 9 else part_index + 1
    return ch % 16
