"""Atomic output: everything is rendered to bytes first, then written as one set.

The switch keeps every name whole at every instant: each new file is written in
full to a hidden temporary name in its own folder; each old file gets a second
name (a hard link, so the old file never leaves its name); then each temporary is
renamed over its final name (``rename`` replaces a name in one step, POSIX).  If
anything fails, every name already switched gets its old file back the same way
and every temporary name is removed: the folder ends as it was.  Killed outright
(SIGKILL, power loss), each name still holds its complete old or new file; the
hidden names left behind carry our prefix and the next build into the folder
removes them.  Ctrl-C and SIGTERM wait for the switch (they are blocked while it
runs) and then stop the program.

Two builds into one folder take an advisory lock (``flock``) on the folder: the
second waits for the first, up to :data:`LOCK_WAIT` seconds, then says so.

A file name with one ``/`` (``cue-parts/part01-trumpet-1.musicxml``) goes into a subfolder
that is replaced as a whole: the folder keeps a list of the names our last build wrote
there (:data:`SET_FILE`), and every listed name the new build does not write is removed
in the same switch (and put back if the switch fails).  Nothing else is ever removed: a
file someone else put there stays, and so does a folder our build did not write into.
"""
from __future__ import annotations

import contextlib
import errno
import os
import signal
import time
from collections.abc import Iterator
from pathlib import Path

from ..errors import OutputError

__all__ = ["write_batch", "write_sets", "safe_name", "folder_lock", "TEMP_PREFIX", "LOCK_WAIT", "SET_FILE"]

TEMP_PREFIX = ".arrange~"      # our hidden temporary names: .arrange~TOKEN~NAME(.old)
SET_FILE = ".arrange-set"      # in a folder replaced as a whole: the names our last build wrote
LOCK_WAIT = 60.0               # seconds a second build waits for the folder
_SIGNALS = {signal.SIGINT, signal.SIGTERM}


def safe_name(folder: Path, name: str) -> Path:
    """``folder / name``, refusing any name that would leave ``folder``."""
    if not name or "/" in name or "\\" in name or name.startswith(".") or name in ("..", "."):
        raise OutputError(f"output name {name[:60]!r} is not a plain file name", where="output",
                          accepted="a file name without folders")
    return folder / name


def _umask() -> int:
    mask = os.umask(0)
    os.umask(mask)
    return mask


def _unlink(path: Path) -> None:
    with contextlib.suppress(FileNotFoundError):
        path.unlink()


def _os_error(err: OSError, folder: Path) -> OutputError:
    name = f" ({Path(err.filename).name[:60]})" if err.filename else ""
    return OutputError(f"cannot write into {str(folder)[:80]!r}: {err.strerror}{name}",
                       where="-o", accepted="a folder you can write to, with room for the files")


def _mkdir(folder: Path) -> None:
    try:
        folder.mkdir(parents=True, exist_ok=True)
    except OSError as err:
        raise OutputError(f"cannot create the output folder {str(folder)[:80]!r}: {err.strerror}",
                          where="-o", accepted="a folder you can write to") from None
    if not folder.is_dir():
        raise OutputError(f"{str(folder)[:80]!r} is not a folder", where="-o",
                          accepted="a folder you can write to")


@contextlib.contextmanager
def folder_lock(folder: Path, wait: float | None = None) -> Iterator[None]:
    """An exclusive advisory lock on ``folder`` (``flock`` on the folder itself, so no
    lock file is left behind); waits up to ``wait`` seconds for another build."""
    import fcntl

    limit = LOCK_WAIT if wait is None else wait
    try:
        fd = os.open(folder, os.O_RDONLY | getattr(os, "O_DIRECTORY", 0))
    except OSError as err:
        raise _os_error(err, folder) from None
    try:
        deadline = time.monotonic() + limit
        while True:
            try:
                fcntl.flock(fd, fcntl.LOCK_EX | fcntl.LOCK_NB)
                break
            except OSError as err:
                if err.errno not in (errno.EWOULDBLOCK, errno.EAGAIN, errno.EACCES):
                    raise
                if time.monotonic() >= deadline:
                    raise OutputError(f"another build is writing into {str(folder)[:80]!r} "
                                      f"(waited {limit:g} s)", where="-o",
                                      accepted="one build per output folder at a time: run it again "
                                      "when the other has finished, or use another folder") from None
                time.sleep(0.1)
        yield
    finally:
        os.close(fd)                  # closing the descriptor releases the lock


def _clean_stale(folder: Path) -> None:
    """Remove hidden temporary names an earlier, killed build of ours left behind
    (called under the folder lock, so no live build owns them)."""
    try:
        entries = list(os.scandir(folder))
    except OSError:
        return
    for entry in entries:
        if entry.name.startswith(TEMP_PREFIX) and entry.is_file(follow_symlinks=False):
            with contextlib.suppress(OSError):
                os.unlink(entry.path)


@contextlib.contextmanager
def _signals_held() -> Iterator[None]:
    """Ctrl-C and SIGTERM wait until the switch is over (then they act as usual)."""
    try:
        old = signal.pthread_sigmask(signal.SIG_BLOCK, _SIGNALS)
    except (AttributeError, ValueError, OSError):    # not the main thread, or no such call
        yield
        return
    try:
        yield
    finally:
        signal.pthread_sigmask(signal.SIG_SETMASK, old)


def _write_temp(folder: Path, token: str, name: str, data: bytes) -> Path:
    tmp = folder / f"{TEMP_PREFIX}{token}~{name}"
    fd = os.open(tmp, os.O_WRONLY | os.O_CREAT | os.O_EXCL, 0o666 & ~_umask())
    with os.fdopen(fd, "wb") as fh:
        fh.write(data)
        fh.flush()
        os.fsync(fh.fileno())
    return tmp


def _keep_old(final: Path, token: str) -> Path | None:
    """A second name for the old file (it never leaves its own name)."""
    if not final.exists() and not final.is_symlink():
        return None
    if final.is_dir():
        raise IsADirectoryError(errno.EISDIR, "a folder has the output's name", str(final))
    old = final.with_name(f"{TEMP_PREFIX}{token}~{final.name}.old")
    try:
        os.link(final, old, follow_symlinks=False)
    except OSError as err:
        if err.errno not in (errno.EPERM, errno.EOPNOTSUPP, errno.EXDEV, errno.EMLINK):
            raise
        import shutil

        shutil.copy2(final, old, follow_symlinks=False)   # a file system without hard links
    return old


def _sync_dir(folder: Path) -> None:
    with contextlib.suppress(OSError):
        fd = os.open(folder, os.O_RDONLY | getattr(os, "O_DIRECTORY", 0))
        try:
            os.fsync(fd)
        finally:
            os.close(fd)


def _split(folder: Path, files: dict[str, bytes]) -> list[tuple[Path, dict[str, bytes], bool]]:
    """(folder, files, replaced as a whole) for the folder's own files and each subfolder
    named by a ``sub/name`` key."""
    top: dict[str, bytes] = {}
    subs: dict[str, dict[str, bytes]] = {}
    for name, data in files.items():
        sub, slash, leaf = name.partition("/")
        if slash:
            subs.setdefault(sub, {})[leaf] = data
        else:
            top[name] = data
    out = [(folder, top, False)] if top or not subs else []
    return out + [(safe_name(folder, sub), f, True) for sub, f in subs.items()]


def _listed(folder: Path) -> list[str]:
    """The names :data:`SET_FILE` says our last build wrote into ``folder``."""
    listing = folder / SET_FILE
    if listing.is_symlink() or not listing.is_file():
        return []
    try:
        text = listing.read_text(encoding="utf-8")
    except (OSError, UnicodeDecodeError):
        return []
    return [n for n in text.splitlines() if n and "/" not in n and not n.startswith(".")]


def write_sets(root: Path, sets: list[tuple[Path, dict[str, bytes]]]) -> list[Path]:
    """Write several folders' files (all under ``root``) as one set: every name ends
    with its new file, or (on any failure) every name keeps its old file.  A ``sub/name``
    key writes into subfolder ``sub``, replaced as a whole (see the module's notes)."""
    root = Path(root)
    _mkdir(root)
    with folder_lock(root):
        plan: list[tuple[Path, bytes]] = []
        folders: list[Path] = []
        whole: list[tuple[Path, dict[str, bytes]]] = []
        for top, top_files in sets:
            for folder, files, replaced in _split(Path(top), top_files):
                for name, data in files.items():
                    plan.append((safe_name(folder, name), data))
                if folder not in folders:
                    folders.append(folder)
                if replaced:
                    whole.append((folder, files))
        token = os.urandom(4).hex()                  # what secrets.token_hex(4) gives, without its imports
        temps: list[tuple[Path, Path]] = []          # (temporary, final)
        olds: list[tuple[Path, Path | None]] = []    # (final, second name of its old file)
        switched: list[Path] = []
        stale: list[Path] = []                       # names our earlier build wrote, not written now
        removed: list[Path] = []
        try:
            for folder in folders:
                _mkdir(folder)
                _clean_stale(folder)
            for folder, files in whole:
                stale += [folder / n for n in _listed(folder) if n not in files
                          and (folder / n).is_file() and not (folder / n).is_symlink()]
                listing = "".join(f"{n}\n" for n in sorted(files)).encode("utf-8")
                plan.append((folder / SET_FILE, listing))       # switched last: the new list
            for final, data in plan:
                temps.append((_write_temp(final.parent, token, final.name, data), final))
            with _signals_held():
                try:
                    for _tmp, final in temps:
                        olds.append((final, _keep_old(final, token)))
                    for path in stale:
                        olds.append((path, _keep_old(path, token)))
                    for tmp, final in temps:
                        os.replace(tmp, final)
                        switched.append(final)
                    for path in stale:
                        os.unlink(path)
                        removed.append(path)
                except BaseException:
                    _roll_back(switched + removed, dict(olds))
                    raise
                finally:
                    for tmp, _final in temps:
                        _unlink(tmp)
                    for _final, old in olds:
                        if old is not None:
                            _unlink(old)
        except OSError as err:
            raise _os_error(err, root) from None
        finally:
            for tmp, _final in temps:
                _unlink(tmp)
        for folder in folders:
            _sync_dir(folder)
    return [final for _tmp, final in temps if final.name != SET_FILE]


def _roll_back(switched: list[Path], olds: dict[Path, Path | None]) -> None:
    """Every switched (or removed) name gets its old file back (or, if it had none, goes away)."""
    for final in reversed(switched):
        old = olds.get(final)
        with contextlib.suppress(OSError):
            if old is not None:
                os.replace(old, final)
            else:
                _unlink(final)


def write_batch(folder: Path, files: dict[str, bytes]) -> list[Path]:
    """Write ``{file name: bytes}`` into ``folder`` as one set (``sub/name``: into a
    subfolder replaced as a whole); return the paths."""
    return write_sets(Path(folder), [(Path(folder), files)])
