"""Checked reading of the small pieces every input is made of.

* Whole numbers are read from ASCII digits only (``str.isdigit`` also takes a
  superscript two, which ``int`` then refuses), and only up to a few digits, so no
  value ever reaches Python's 4,300-digit conversion limit.
* Text values: no control characters (Unicode category Cc, except tab and line
  breaks where text may span lines) and no noncharacters (U+FFFE, U+FFFF, U+FDD0..
  U+FDEF and the last two code points of every plane; the Unicode Standard, 23.7).
* Parsed project data: nesting depth and sizes bounded.
"""
from __future__ import annotations

import re
from pathlib import Path
from typing import Any

from arrange.errors import ProjectError

__all__ = ["whole", "signed", "bad_character", "check_data", "read_regular", "MAX_DEPTH", "MAX_ITEMS", "MAX_DIGITS"]

MAX_DIGITS = 9               # enough for every count a project holds
MAX_DEPTH = 8                # tables and lists inside one another
MAX_ITEMS = 10_000           # entries of one list or table
_WHOLE = re.compile(rf"[0-9]{{1,{MAX_DIGITS}}}")
_SIGNED = re.compile(rf"[+-]?[0-9]{{1,{MAX_DIGITS}}}")


def whole(text: str) -> int | None:
    """``text`` as a whole number of ASCII digits (at most :data:`MAX_DIGITS`), else None."""
    t = text.strip()
    return int(t) if _WHOLE.fullmatch(t) else None


def signed(text: str) -> int | None:
    """Like :func:`whole`, with an optional ``+`` or ``-``."""
    t = text.strip()
    return int(t) if _SIGNED.fullmatch(t) else None


def _refused(c: str, multiline: bool) -> bool:
    o = ord(c)
    if o < 32 or 127 <= o < 160:
        return not (multiline and c in "\t\n\r")
    return 0xFDD0 <= o <= 0xFDEF or (o & 0xFFFE) == 0xFFFE or 0xD800 <= o <= 0xDFFF


def bad_character(text: str, *, multiline: bool = False) -> str | None:
    """A description of the first refused character of ``text`` (``"U+0007 at 4"``), or None."""
    for i, c in enumerate(text, start=1):
        if _refused(c, multiline):
            return f"U+{ord(c):04X} at character {i}"
    return None


def check_data(data: object, where: str) -> None:
    """Refuse project data nested too deep, too large, or with a refused character in
    any string (keys included); the message names the dotted key."""
    stack: list[tuple[object, str, int]] = [(data, "", 0)]
    while stack:
        node, key, depth = stack.pop()
        if depth > MAX_DEPTH:
            raise ProjectError(f"values are nested more than {MAX_DEPTH} deep", where=_at(where, key),
                               accepted=f"tables and lists nested at most {MAX_DEPTH} deep")
        if isinstance(node, str):
            bad = bad_character(node, multiline=True)
            if bad:
                raise ProjectError(f"the text holds a control character or noncharacter ({bad})",
                                   where=_at(where, key), accepted="printable text (tab and line "
                                   "breaks allowed; write other characters out)")
            continue
        items: list[tuple[str, Any]]
        if isinstance(node, dict):
            items = [(str(k), v) for k, v in node.items()]
            for k, _v in items:
                bad = bad_character(k)
                if bad:
                    raise ProjectError(f"a key holds a control character or noncharacter ({bad})",
                                       where=_at(where, key), accepted="printable key names")
            items = [(f"{key}.{k}" if key else k, v) for k, v in items]
        elif isinstance(node, list):
            items = [(f"{key}[{i}]", v) for i, v in enumerate(node, start=1)]
        else:
            continue
        if len(items) > MAX_ITEMS:
            raise ProjectError(f"{len(items):,} entries", where=_at(where, key),
                               accepted=f"at most {MAX_ITEMS:,} entries in one list or table")
        stack.extend((v, k, depth + 1) for k, v in items)


def _at(where: str, key: str) -> str:
    return f"{where}, key {key!r}" if key else where



def read_regular(path: Path, limit: int, *, where: str, what: str, accepted: str) -> bytes:
    """The bytes of ``path``, which must be a regular file (after links are followed:
    no device, FIFO, socket or folder) of at most ``limit`` bytes; never reads more
    than ``limit + 1`` bytes, and never blocks on a FIFO (opened non-blocking)."""
    import os
    import stat

    name = str(path)[:80]
    try:
        fd = os.open(path, os.O_RDONLY | getattr(os, "O_NONBLOCK", 0) | getattr(os, "O_CLOEXEC", 0))
    except OSError as err:
        raise ProjectError(f"{what} {name!r} cannot be read: {err.strerror}", where=where,
                           accepted=accepted) from None
    try:
        st = os.fstat(fd)
        if not stat.S_ISREG(st.st_mode):
            kind = ("a folder" if stat.S_ISDIR(st.st_mode) else "a FIFO" if stat.S_ISFIFO(st.st_mode)
                    else "a device" if stat.S_ISCHR(st.st_mode) or stat.S_ISBLK(st.st_mode)
                    else "a socket" if stat.S_ISSOCK(st.st_mode) else "not a file")
            raise ProjectError(f"{what} {name!r} is {kind}, not a regular file", where=where,
                               accepted=accepted)
        if st.st_size > limit:
            raise ProjectError(f"{what} {name!r} is {st.st_size:,} bytes", where=where,
                               accepted=f"a file of at most {limit:,} bytes")
        chunks, total = [], 0
        while total <= limit:
            chunk = os.read(fd, min(1 << 20, limit + 1 - total))
            if not chunk:
                break
            chunks.append(chunk)
            total += len(chunk)
        if total > limit:                       # grew while we read it
            raise ProjectError(f"{what} {name!r} is over {limit:,} bytes", where=where,
                               accepted=f"a file of at most {limit:,} bytes")
        return b"".join(chunks)
    except OSError as err:
        raise ProjectError(f"{what} {name!r} cannot be read: {err.strerror}", where=where,
                           accepted=accepted) from None
    finally:
        os.close(fd)
