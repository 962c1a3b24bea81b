"""Atomic output: everything is rendered to bytes first, then written to
temporary names in the output folder and renamed into place.  A failure
leaves no temporary file and replaces no good file."""
from __future__ import annotations

import os
import tempfile
from pathlib import Path

from ..errors import OutputError

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


def write_batch(folder: Path, files: dict[str, bytes]) -> list[Path]:
    """Write ``{file name: bytes}`` into ``folder`` atomically; return the paths."""
    folder = Path(folder)
    try:
        folder.mkdir(parents=True, exist_ok=True)
    except OSError as err:
        raise OutputError(f"cannot create the output folder {str(folder)!r}: {err.strerror}",
                          where="-o", accepted="a folder you can write to") from None
    temps: list[tuple[Path, Path]] = []
    try:
        for name, data in files.items():
            final = safe_name(folder, name)
            fd, tmp = tempfile.mkstemp(prefix=f".{name}.", suffix=".tmp", dir=folder)
            temps.append((Path(tmp), final))
            with os.fdopen(fd, "wb") as fh:
                fh.write(data)
            os.chmod(tmp, 0o666 & ~_umask())
        for tmp, final in temps:
            os.replace(tmp, final)
    except OSError as err:
        for tmp, _ in temps:
            try:
                tmp.unlink()
            except FileNotFoundError:
                pass
        raise OutputError(f"cannot write into {str(folder)!r}: {err.strerror}", where="-o",
                          accepted="a folder you can write to") from None
    except BaseException:
        for tmp, _ in temps:
            try:
                tmp.unlink()
            except FileNotFoundError:
                pass
        raise
    return [final for _, final in temps]
