"""Worker processes for independent pieces of work (``arrange build --vary``).

``with Workers(count, method) as pool: pool.map(fn, items)`` starts ``count`` processes
(the standard library's ``multiprocessing``: ``fork`` or ``spawn``) and hands the items out
one at a time, each to the next free worker; it returns ``fn(item)`` for every item in the
items' order, whichever worker finishes first.  ``fn`` and the items travel by pickle
(``fn`` by its name, so it is a module-level function).

* A worker whose ``fn`` raises: the same exception is raised here, with the worker's
  traceback as its cause (``--debug`` shows both), and the other workers are ended.
* A worker that ends without sending its result (killed, out of memory): :class:`WorkerLost`
  names how it ended.  (``multiprocessing.Pool`` would start another worker and wait forever
  for the lost result, and hung on SIGTERM after that.)
* Leaving the block ends every worker (SIGTERM, then SIGKILL for one still there after a
  second) and waits for it, also after Ctrl-C or SIGTERM in the parent; the workers ignore
  Ctrl-C (the terminal sends it to the whole process group: the parent alone decides) and
  die of SIGTERM.  A worker whose parent is gone reads the end of its pipe and leaves.
"""
from __future__ import annotations

import pickle
import signal
import traceback
from collections.abc import Callable, Iterable
from types import TracebackType
from typing import Any

__all__ = ["Workers", "WorkerLost"]


class WorkerLost(RuntimeError):
    """A worker process ended before it sent the result of its task."""


class RemoteTraceback(Exception):
    """A worker's traceback, set as the cause of the exception it raised."""

    def __str__(self) -> str:
        return "\n" + str(self.args[0]) if self.args else ""


def _portable(err: Exception) -> tuple[Exception, str]:
    """``err`` as it can travel back (itself, or its name and text), with its traceback."""
    tb = "".join(traceback.format_exception(err))
    try:
        pickle.loads(pickle.dumps(err))
    except Exception:  # noqa: BLE001 - any exception that does not survive pickling
        return RuntimeError(f"{type(err).__name__}: {err}"), tb
    return err, tb


def _serve(conn: Any, inherited: list[Any], initializer: Callable[..., None] | None,
           initargs: tuple[Any, ...]) -> None:
    """A worker: tasks ``(fn, item)`` in, ``(True, result)`` or ``(False, (error, traceback))``
    out, until ``None`` or the end of the pipe."""
    for c in inherited:                  # forked: the parent's ends of every pipe
        c.close()
    signal.signal(signal.SIGINT, signal.SIG_IGN)
    signal.signal(signal.SIGTERM, signal.SIG_DFL)
    if initializer is not None:
        initializer(*initargs)
    while True:
        try:
            task = conn.recv()
        except (EOFError, OSError):      # the parent is gone
            return
        if task is None:
            return
        fn, item = task
        try:
            reply: tuple[bool, Any] = (True, fn(item))
        except Exception as err:  # noqa: BLE001 - every fault goes back to the parent
            reply = (False, _portable(err))
        try:
            try:
                conn.send(reply)
            except (BrokenPipeError, ConnectionResetError):
                return
            except Exception as err:  # noqa: BLE001 - a result that cannot be pickled
                conn.send((False, _portable(err)))
        except OSError:
            return
        del task, fn, item, reply        # the last result is not kept while waiting for the next task


class Workers:
    """``count`` worker processes started by ``method`` (``"fork"`` or ``"spawn"``); each
    runs ``initializer(*initargs)`` first (with ``spawn``, ``initargs`` are pickled to it)."""

    def __init__(self, count: int, method: str = "fork",
                 initializer: Callable[..., None] | None = None, initargs: tuple[Any, ...] = ()) -> None:
        import multiprocessing

        context = multiprocessing.get_context(method)
        forked = method == "fork"
        self._procs: list[Any] = []
        self._conns: list[Any] = []
        try:
            for _ in range(count):
                mine, theirs = context.Pipe()
                inherited = [*self._conns, mine] if forked else []
                proc = context.Process(target=_serve, args=(theirs, inherited, initializer, initargs),
                                       daemon=True)
                proc.start()
                theirs.close()           # the worker's end lives in the worker only
                self._procs.append(proc)
                self._conns.append(mine)
        except BaseException:
            self.close()
            raise

    def __enter__(self) -> Workers:
        return self

    def __exit__(self, kind: type[BaseException] | None, err: BaseException | None,
                 tb: TracebackType | None) -> None:
        self.close()

    def map(self, fn: Callable[[Any], Any], items: Iterable[Any]) -> list[Any]:
        """``[fn(item) for item in items]``, the items shared among the workers."""
        from multiprocessing.connection import wait

        todo = list(items)
        out: list[Any] = [None] * len(todo)
        free = list(range(len(self._conns)))
        busy: dict[int, int] = {}        # worker -> index of its item
        sent = 0
        while sent < len(todo) or busy:
            while free and sent < len(todo):
                k = free.pop(0)
                try:
                    self._conns[k].send((fn, todo[sent]))
                except (BrokenPipeError, ConnectionResetError, EOFError):
                    raise self._lost(k) from None
                busy[k] = sent
                sent += 1
            for conn in wait([self._conns[k] for k in busy]):
                k = self._conns.index(conn)
                try:
                    ok, value = conn.recv()
                except (EOFError, ConnectionResetError, OSError):
                    raise self._lost(k) from None
                if not ok:
                    error, remote = value
                    raise error from RemoteTraceback(remote)
                out[busy.pop(k)] = value
                free.append(k)
        return out

    def _lost(self, k: int) -> WorkerLost:
        proc = self._procs[k]
        proc.join(1.0)
        code = proc.exitcode
        if code is None:
            how = "stopped answering"
        elif code < 0:
            try:
                how = f"was killed by {signal.Signals(-code).name}"
            except ValueError:
                how = f"was killed by signal {-code}"
        else:
            how = f"ended with exit code {code}"
        return WorkerLost(f"worker process {proc.pid} {how} before sending its result")

    def close(self) -> None:
        """End every worker and wait for it."""
        for proc in self._procs:
            if proc.is_alive():
                proc.terminate()
        for proc in self._procs:
            proc.join(1.0)
            if proc.is_alive():
                proc.kill()
                proc.join()
        for conn in self._conns:
            conn.close()
        self._procs, self._conns = [], []
