"""The user's cache folder: what an input reader found in a file, kept between builds.

An arranger rebuilds the same project again and again while working on it; a melody
file read through music21 costs most of such a build (the import and the parse, about
0.8 s for a 32-bar tune), although the file has not changed.  The reader
(:func:`arrange.inputs.melody_file.read_melody_file`) names each entry by a digest of
everything its answer depends on (the file's bytes, the part asked for, the reader's own
source, music21's version), so an entry is either right or never asked for again.

Where: ``$XDG_CACHE_HOME/arrange`` (``~/.cache/arrange`` when it is not set), or the
folder ``ARRANGE_CACHE_DIR`` names.  ``ARRANGE_NO_CACHE=1`` (any value but empty or 0)
turns it off: nothing read, nothing written.  Each entry is one JSON file (data only,
never code), written whole to a temporary name in the folder and renamed into place, so
an entry is complete or absent; anything unreadable, damaged or of another form is
ignored and the file parsed again.  Failing to write an entry never fails a build.
"""
from __future__ import annotations

import json
import os
import stat
from pathlib import Path
from typing import Any

__all__ = ["Store", "user_store", "cache_folder"]

_MAX_ENTRY = 8_000_000        # bytes: larger files are not ours (a melody is at most 5 MB read)


def cache_folder() -> Path | None:
    """The folder entries go to, or None when the cache is turned off."""
    if os.environ.get("ARRANGE_NO_CACHE", "") not in ("", "0"):
        return None
    own = os.environ.get("ARRANGE_CACHE_DIR")
    if own:
        return Path(own)
    base = os.environ.get("XDG_CACHE_HOME")
    if not base or not os.path.isabs(base):       # the XDG rule: a relative value is ignored
        base = os.path.join(os.path.expanduser("~"), ".cache")
    return Path(base) / "arrange"


class Store:
    """Entries by name (``[A-Za-z0-9-]+``), each one JSON file in ``folder``."""

    def __init__(self, folder: Path) -> None:
        self.folder = folder

    def _path(self, name: str) -> Path | None:
        if not name or not all(c.isascii() and (c.isalnum() or c == "-") for c in name):
            return None
        return self.folder / f"{name}.json"

    def get(self, name: str) -> Any:
        """The entry's value, or None (absent, unreadable, too big, not JSON)."""
        path = self._path(name)
        if path is None:
            return None
        try:
            # a regular file only (a FIFO or device put there is never waited on)
            fd = os.open(path, os.O_RDONLY | getattr(os, "O_NONBLOCK", 0))
            with os.fdopen(fd, "rb") as fh:
                if not stat.S_ISREG(os.fstat(fh.fileno()).st_mode):
                    return None
                data = fh.read(_MAX_ENTRY + 1)
            if len(data) > _MAX_ENTRY:
                return None
            return json.loads(data.decode("utf-8"))
        except (OSError, ValueError, RecursionError):
            return None

    def put(self, name: str, value: Any) -> None:
        """Write the entry whole (a temporary name in the folder, then a rename); any
        failure leaves the folder as it was and is not an error of the build."""
        path = self._path(name)
        if path is None:
            return
        tmp = None
        try:
            import tempfile

            data = json.dumps(value, separators=(",", ":")).encode("utf-8")
            self.folder.mkdir(parents=True, exist_ok=True)
            fd, tmp_name = tempfile.mkstemp(prefix=f".{name}.", suffix=".tmp", dir=self.folder)
            tmp = Path(tmp_name)
            with os.fdopen(fd, "wb") as fh:
                fh.write(data)
            os.replace(tmp, path)
            tmp = None
        except (OSError, TypeError, ValueError):
            pass
        finally:
            if tmp is not None:
                try:
                    tmp.unlink()
                except OSError:
                    pass


def user_store() -> Store | None:
    """The user's cache (None when turned off)."""
    folder = cache_folder()
    return None if folder is None else Store(folder)
