"""How the program ends: every error on one line, the exit codes, and signals.

Exit codes: 0 success; 1 internal fault; 2 bad input, a usage error included (one
line, like every other error); 130 after Ctrl-C and 143 after SIGTERM (the shell's
128 + signal number).  Messages are cut so that a huge bad value (a 500,000-character
chord symbol) shows as its first few dozen characters and its length.

The command line is read by the standard library's ``argparse``: :class:`OneLineParser`
turns its usage errors (which would print the usage and a second line) into a
:class:`UsageError`, and :func:`run` says it on one line and exits 2.
"""
from __future__ import annotations

import argparse
import re
import signal
import sys
from collections.abc import Callable
from typing import Any, NoReturn

__all__ = ["OneLineParser", "UsageError", "Interrupted", "run", "one_line", "say", "MAX_LINE"]

MAX_LINE = 300           # characters of one error line, at most (about)
_LONG = re.compile(r"\S{121,}")


class Interrupted(BaseException):
    """SIGTERM (or Ctrl-C) arrived: unwinds like KeyboardInterrupt, so that the
    writers put back what they had begun to switch."""

    def __init__(self, signum: int) -> None:
        super().__init__(signum)
        self.signum = signum


class UsageError(Exception):
    """A command line the parser refuses: ``where`` is the command (``arrange build``),
    ``message`` what was wrong, ``accepted`` what would be (default: its ``--help``)."""

    def __init__(self, where: str, message: str, accepted: str | None = None) -> None:
        super().__init__(message)
        self.where = where
        self.message = message
        self.accepted = accepted if accepted is not None else f"see '{where} --help'"


class OneLineParser(argparse.ArgumentParser):
    """An ``argparse`` parser whose errors raise :class:`UsageError` (said on one line by
    :func:`run`) instead of printing the usage and exiting; ``--help`` and ``--version``
    still print and exit 0."""

    def error(self, message: str) -> NoReturn:
        raise UsageError(self.prog, message)

    def exit(self, status: int = 0, message: str | None = None) -> NoReturn:
        if message:
            say(message)
        sys.exit(status)


def one_line(text: str) -> str:
    """``text`` on one line; a word over 120 characters shows its first 40, its length
    and its last 16 (a long path keeps its file name)."""
    text = " ".join(str(text).split())
    text = _LONG.sub(lambda m: f"{m.group(0)[:40]}...({len(m.group(0)):,} characters)..."
                     f"{m.group(0)[-16:]}", text)
    if len(text) > MAX_LINE:
        text = text[:MAX_LINE - 3] + "..."
    return text


def say(text: str) -> None:
    """One line on stderr: ``arrange: TEXT``."""
    sys.stderr.write(f"arrange: {one_line(text)}\n")
    sys.stderr.flush()


def _interrupted(signum: int) -> NoReturn:
    names = {int(signal.SIGINT): "Ctrl-C (SIGINT)", int(signal.SIGTERM): "SIGTERM"}
    name = names.get(int(signum), f"signal {signum}")
    say(f"interrupted by {name}; every output file is whole (its old or its new version)")
    sys.exit(128 + signum)


def _on_signal(signum: int, _frame: Any) -> None:
    raise Interrupted(signum)


def run(command: Callable[[], Any]) -> NoReturn:
    """Run ``command`` (the parsed command line) and exit: 0 when it returns, 2 after a
    usage error, 130 or 143 after Ctrl-C or SIGTERM (each said on one line); a
    ``SystemExit`` it raises (``--help``, a refused input) passes through."""
    try:
        old_term = signal.signal(signal.SIGTERM, _on_signal)
    except ValueError:                     # not the main thread
        old_term = None
    try:
        command()
    except UsageError as err:
        say(f"error: {err.where}: {err.message}; accepted: {err.accepted}")
        sys.exit(2)
    except KeyboardInterrupt:
        _interrupted(signal.SIGINT)
    except Interrupted as err:
        _interrupted(err.signum)
    finally:
        if old_term is not None:
            signal.signal(signal.SIGTERM, old_term)
    sys.exit(0)
