"""Atomic output: everything is rendered to bytes first, then written to
temporary names in the output folder and renamed into place.  A failure
leaves no temporary file and replaces no good file."""
from __future__ import annotations

import os
import tempfile
from pathlib import Path

from arrange.errors import OutputError

__all__ = ["write_batch", "safe_name"]


def safe_name(folder: Path, name: str) -> Path:
    """``folder / name``, refusing any name that would leave ``folder``."""
    if not name or "/" in name or "\\" in name or name.startswith(".") or name in ("..", "."):
        raise OutputError(f"output name {name!r} is not a plain file name", where="output",
                          accepted="a file name without folders")
    return folder / name


def _umask() -> int:
    mask = os.umask(0)
    os.umask(mask)
    return mask


def _unlink(path: Path) -> None:
    try:
        path.unlink()
    except FileNotFoundError:
        pass


def write_batch(folder: Path, files: dict[str, bytes]) -> list[Path]:
    """Write ``{file name: bytes}`` into ``folder`` atomically; return the paths.

    All data goes to temporary names first.  Each existing file is then moved
    aside to a temporary name before the new one is renamed into place, so if any
    rename fails every file already replaced is put back: the folder ends as it
    was, with no temporary file left."""
    folder = Path(folder)
    try:
        folder.mkdir(parents=True, exist_ok=True)
    except OSError as err:
        raise OutputError(f"cannot create the output folder {str(folder)!r}: {err.strerror}",
                          where="-o", accepted="a folder you can write to") from None
    temps: list[tuple[Path, Path]] = []
    moved: list[tuple[Path, Path | None]] = []     # (final, its old file moved aside)
    try:
        for name, data in files.items():
            final = safe_name(folder, name)
            fd, tmp_name = tempfile.mkstemp(prefix=f".{name}.", suffix=".tmp", dir=folder)
            temps.append((Path(tmp_name), final))
            with os.fdopen(fd, "wb") as fh:
                fh.write(data)
            os.chmod(tmp_name, 0o666 & ~_umask())
        for tmp, final in temps:
            if final.is_dir():
                raise IsADirectoryError(21, "a folder has the output's name", str(final))
            old = None
            if final.exists():
                fd, aside = tempfile.mkstemp(prefix=f".{final.name}.", suffix=".old.tmp", dir=folder)
                os.close(fd)
                old = Path(aside)
                os.replace(final, old)
            moved.append((final, old))
            os.replace(tmp, final)
    except BaseException as err:
        for final, old in reversed(moved):
            if old is not None:
                os.replace(old, final)
            elif final.exists() and not final.is_dir():
                _unlink(final)
        for tmp, _ in temps:
            _unlink(tmp)
        if isinstance(err, OSError):
            raise OutputError(f"cannot write into {str(folder)!r}: {err.strerror}"
                              + (f" ({Path(err.filename).name})" if err.filename else ""),
                              where="-o", accepted="a folder you can write to") from None
        raise
    for _, old in moved:
        if old is not None:
            _unlink(old)
    return [final for _, final in temps]
