"""How the program ends: every error on one line, the exit codes, and signals.

Exit codes: 0 success; 1 internal fault; 2 bad input, a usage error included (one
line, like every other error); 130 after Ctrl-C and 143 after SIGTERM (the shell's
128 + signal number).  Messages are cut so that a huge bad value (a 500,000-character
chord symbol) shows as its first few dozen characters and its length.
"""
from __future__ import annotations

import re
import signal
import sys
from typing import Any, NoReturn

import click

__all__ = ["OneLineGroup", "Interrupted", "one_line", "MAX_LINE"]

MAX_LINE = 300           # characters of one error line, at most (about)
_LONG = re.compile(r"\S{121,}")


class Interrupted(BaseException):
    """SIGTERM (or Ctrl-C) arrived: unwinds like KeyboardInterrupt, so that the
    writers put back what they had begun to switch."""

    def __init__(self, signum: int) -> None:
        super().__init__(signum)
        self.signum = signum


def one_line(text: str) -> str:
    """``text`` on one line; a word over 120 characters shows its first 40, its length
    and its last 16 (a long path keeps its file name)."""
    text = " ".join(str(text).split())
    text = _LONG.sub(lambda m: f"{m.group(0)[:40]}...({len(m.group(0)):,} characters)..."
                     f"{m.group(0)[-16:]}", text)
    if len(text) > MAX_LINE:
        text = text[:MAX_LINE - 3] + "..."
    return text


def _say(text: str) -> None:
    click.echo(f"arrange: {one_line(text)}", err=True)


def _interrupted(signum: int) -> NoReturn:
    names = {int(signal.SIGINT): "Ctrl-C (SIGINT)", int(signal.SIGTERM): "SIGTERM"}
    name = names.get(int(signum), f"signal {signum}")
    _say(f"interrupted by {name}; every output file is whole (its old or its new version)")
    sys.exit(128 + signum)


def _on_signal(signum: int, _frame: Any) -> None:
    raise Interrupted(signum)


class OneLineGroup(click.Group):
    """A click group whose usage errors, Ctrl-C and SIGTERM end in one line."""

    def main(self, *args: Any, **kwargs: Any) -> Any:  # type: ignore[override]
        kwargs["standalone_mode"] = False
        try:
            old_term = signal.signal(signal.SIGTERM, _on_signal)
        except ValueError:                     # not the main thread
            old_term = None
        try:
            rv = super().main(*args, **kwargs)
        except click.UsageError as err:
            where = err.ctx.command_path if err.ctx is not None else "arrange"
            _say(f"error: {where}: {err.format_message()}; accepted: see '{where} --help'")
            sys.exit(2)
        except click.ClickException as err:
            _say(f"error: {err.format_message()}")
            sys.exit(2)
        except click.Abort as err:             # click turns KeyboardInterrupt into Abort
            if isinstance(err.__context__, Interrupted):
                _interrupted(err.__context__.signum)
            _interrupted(signal.SIGINT)
        except KeyboardInterrupt:
            _interrupted(signal.SIGINT)
        except Interrupted as err:
            _interrupted(err.signum)
        finally:
            if old_term is not None:
                signal.signal(signal.SIGTERM, old_term)
        sys.exit(rv if isinstance(rv, int) else 0)
