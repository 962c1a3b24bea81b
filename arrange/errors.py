"""The one error family of arrange.

Every message says what was wrong, where it was (file, key, token position),
and what would be accepted.  The CLI turns an :class:`ArrangeError` into a
one-line message and exit code 2; anything else is an internal fault (exit 1).
"""
from __future__ import annotations

__all__ = [
    "ArrangeError",
    "InputError",
    "PitchError",
    "ChainError",
    "ProjectError",
    "RhythmError",
    "HarmonyError",
    "VoicingError",
    "OutputError",
    "LimitError",
    "DesignError",
]


class ArrangeError(Exception):
    """Bad input: the user can fix it.  ``str(err)`` is the whole message."""

    def __init__(self, what: str, *, where: str | None = None, accepted: str | None = None) -> None:
        self.what = what
        self.where = where
        self.accepted = accepted
        parts = []
        if where:
            parts.append(f"{where}: ")
        parts.append(what)
        if accepted:
            parts.append(f"; accepted: {accepted}")
        super().__init__("".join(parts))


class InputError(ArrangeError):
    """Generic bad value."""


class PitchError(ArrangeError):
    """A pitch name or MIDI number that cannot be read."""


class ChainError(ArrangeError):
    """A motif, statement count, overlap or lead range the chain cannot meet."""


class ProjectError(ArrangeError):
    """A project file that is missing, broken, or has unknown or wrong keys."""


class RhythmError(ArrangeError):
    """A groove, cell, meter or augmentation that cannot be used."""


class HarmonyError(ArrangeError):
    """A key, chord symbol, framework or approach technique that cannot be used."""


class VoicingError(ArrangeError):
    """A section, instrument or voicing type that cannot be used."""


class OutputError(ArrangeError):
    """An output format or folder that cannot be used."""


class LimitError(ArrangeError):
    """A request that would take minutes or gigabytes; refused before work starts."""


class DesignError(ArrangeError):
    """Contradictory or too-wide constraints for the chain designer."""
