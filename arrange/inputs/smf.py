"""A bounded reader of Standard MIDI Files: the first notes of the top part only.

Layout from the MIDI 1.0 specification ("Standard MIDI Files 1.0"): an ``MThd``
chunk, then chunks of a 4-byte type and a 4-byte big-endian length; track events
are a delta time (a variable-length quantity of at most four bytes) and a channel
message (status 0x80-0xEF, running status allowed, data bytes 0..127), a meta
event (0xFF type length data) or a system exclusive (0xF0/0xF7 length data).

Every length is checked against the end of the file before it is used, and the
reader stops as soon as the notes asked for are known, so a file's size or its
delta times never cost more than one pass over the bytes actually needed.
The top part is the first track (in format 0, the first channel) that sounds a
note; a chord counts once, by its top note.
"""
from __future__ import annotations

__all__ = ["first_notes", "SmfError"]


class SmfError(ValueError):
    """The bytes are not a Standard MIDI File; the message says where."""


_DATA_BYTES = {0x80: 2, 0x90: 2, 0xA0: 2, 0xB0: 2, 0xC0: 1, 0xD0: 1, 0xE0: 2}


def _vlq(data: bytes, i: int, end: int) -> tuple[int, int]:
    value = 0
    for k in range(4):
        if i + k >= end:
            raise SmfError(f"a variable-length number at byte {i} runs past the end of its chunk")
        b = data[i + k]
        value = (value << 7) | (b & 0x7F)
        if not b & 0x80:
            return value, i + k + 1
    raise SmfError(f"a variable-length number at byte {i} is longer than four bytes")


def _chunks(data: bytes) -> list[tuple[bytes, int, int]]:
    out, i = [], 0
    while i < len(data):
        if i + 8 > len(data):
            raise SmfError(f"a chunk header at byte {i} runs past the end of the file")
        kind, length = data[i:i + 4], int.from_bytes(data[i + 4:i + 8], "big")
        if i + 8 + length > len(data):
            raise SmfError(f"the {kind.decode('latin-1')!r} chunk at byte {i} claims {length:,} "
                           f"bytes, past the end of the file ({len(data):,} bytes)")
        out.append((kind, i + 8, i + 8 + length))
        i += 8 + length
    return out


def first_notes(data: bytes, count: int) -> list[int]:
    """The first ``count`` onsets of the top part, each as its highest MIDI note."""
    if data[:4] != b"MThd":
        raise SmfError("the file does not start with 'MThd'")
    chunks = _chunks(data)
    kind, start, end = chunks[0]
    if end - start < 6:
        raise SmfError("the header chunk is shorter than six bytes")
    fmt = int.from_bytes(data[start:start + 2], "big")
    if fmt not in (0, 1, 2):
        raise SmfError(f"format {fmt} is not 0, 1 or 2")
    for kind, start, end in chunks[1:]:
        if kind != b"MTrk":
            continue                         # unknown chunks are skipped (the specification says so)
        notes = _track(data, start, end, count)
        if notes:
            return notes
    return []


def _track(data: bytes, i: int, end: int, count: int) -> list[int]:
    onsets: list[tuple[int, int]] = []     # (tick, highest note) in order
    tick, status, channel = 0, 0, None
    while i < end:
        delta, i = _vlq(data, i, end)
        tick += delta
        if len(onsets) >= count and tick > onsets[-1][0]:
            break                            # every note of the count-th onset is known
        if i >= end:
            raise SmfError(f"an event at byte {i} runs past the end of its chunk")
        b = data[i]
        if b == 0xFF:                        # meta event
            if i + 2 > end:
                raise SmfError(f"a meta event at byte {i} runs past the end of its chunk")
            length, j = _vlq(data, i + 2, end)
            if j + length > end:
                raise SmfError(f"a meta event at byte {i} claims {length:,} bytes, past the end of its chunk")
            if data[i + 1] == 0x2F:
                break                        # end of track
            i = j + length
            continue
        if b in (0xF0, 0xF7):                # system exclusive
            length, j = _vlq(data, i + 1, end)
            if j + length > end:
                raise SmfError(f"a system exclusive at byte {i} claims {length:,} bytes, past the end")
            i = j + length
            continue
        if b & 0x80:
            if b >= 0xF0:
                raise SmfError(f"status byte 0x{b:02X} at byte {i} is not allowed in a track")
            status = b
            i += 1
        elif not status:
            raise SmfError(f"a data byte at byte {i} has no status before it")
        n = _DATA_BYTES[status & 0xF0]
        if i + n > end:
            raise SmfError(f"a message at byte {i} runs past the end of its chunk")
        args = data[i:i + n]
        if any(a > 127 for a in args):
            raise SmfError(f"a data byte at byte {i} is over 127 (MIDI data bytes are 0..127)")
        i += n
        if status & 0xF0 == 0x90 and args[1] > 0:
            ch = status & 0x0F
            if channel is None:
                channel = ch
            if ch != channel:
                continue                     # format 0: the top part is the first channel heard
            if onsets and onsets[-1][0] == tick:
                onsets[-1] = (tick, max(onsets[-1][1], args[0]))
            else:
                onsets.append((tick, args[0]))
    return [p for _t, p in onsets[:count]]
