"""Typed reading of one TOML table, with messages that name the file and key.

Every stage reads its own table of the project file through a :class:`Table`,
then calls :meth:`Table.finish` so that unknown keys are refused by name.
"""
from __future__ import annotations

from collections.abc import Iterable
from typing import Any

from arrange.errors import ProjectError

__all__ = ["Table", "MISSING"]


class _Missing:
    def __repr__(self) -> str:
        return "MISSING"


MISSING: Any = _Missing()


def _type_name(value: object) -> str:
    return {bool: "a true/false value", int: "a whole number", float: "a number",
            str: "a string", list: "a list", dict: "a table"}.get(type(value), type(value).__name__)


class Table:
    """A view of one table: ``where`` is e.g. ``"demo.toml [rhythm]"``."""

    def __init__(self, data: object, where: str, prefix: str = "") -> None:
        if not isinstance(data, dict):
            raise ProjectError(f"{prefix or 'this'} is {_type_name(data)}", where=where,
                               accepted="a table")
        self.data: dict[str, Any] = data
        self.where = where
        self.prefix = prefix
        self.used: set[str] = set()

    def key(self, name: str) -> str:
        return f"{self.prefix}.{name}" if self.prefix else name

    def at(self, name: str) -> str:
        return f"{self.where}, key {self.key(name)!r}"

    def has(self, name: str) -> bool:
        return name in self.data

    def raw(self, name: str, default: Any = MISSING) -> Any:
        self.used.add(name)
        if name not in self.data:
            if default is MISSING:
                raise ProjectError(f"the key {self.key(name)!r} is missing", where=self.where,
                                   accepted=f"a value for {self.key(name)!r}")
            return default
        return self.data[name]

    def error(self, name: str, what: str, accepted: str) -> ProjectError:
        return ProjectError(what, where=self.at(name), accepted=accepted)

    def string(self, name: str, default: Any = MISSING, *, choices: Iterable[str] | None = None,
               nonempty: bool = True) -> str:
        value = self.raw(name, default)
        if value is default and default is not MISSING:
            return value  # type: ignore[no-any-return]
        if not isinstance(value, str):
            raise self.error(name, f"{value!r} is {_type_name(value)}", "a string")
        if nonempty and not value.strip():
            raise self.error(name, "the string is empty", "a non-empty string")
        if choices is not None:
            options = list(choices)
            if value not in options:
                raise self.error(name, f"{value!r} is not known", ", ".join(options))
        return value

    def integer(self, name: str, default: Any = MISSING, *, low: int | None = None,
                high: int | None = None) -> int:
        value = self.raw(name, default)
        if value is default and default is not MISSING:
            return value  # type: ignore[no-any-return]
        if isinstance(value, bool) or not isinstance(value, int):
            raise self.error(name, f"{value!r} is {_type_name(value)}", _range_text(low, high, "a whole number"))
        if (low is not None and value < low) or (high is not None and value > high):
            raise self.error(name, f"{value} is out of range", _range_text(low, high, "a whole number"))
        return value

    def number(self, name: str, default: Any = MISSING, *, low: float | None = None,
               high: float | None = None) -> float:
        value = self.raw(name, default)
        if value is default and default is not MISSING:
            return value  # type: ignore[no-any-return]
        if isinstance(value, bool) or not isinstance(value, (int, float)):
            raise self.error(name, f"{value!r} is {_type_name(value)}", _range_text(low, high, "a number"))
        v = float(value)
        if v != v or (low is not None and v < low) or (high is not None and v > high):
            raise self.error(name, f"{value} is out of range", _range_text(low, high, "a number"))
        return v

    def boolean(self, name: str, default: Any = MISSING) -> bool:
        value = self.raw(name, default)
        if not isinstance(value, bool):
            raise self.error(name, f"{value!r} is {_type_name(value)}", "true or false")
        return value

    def sub(self, name: str, *, required: bool = False) -> Table:
        value = self.raw(name, MISSING if required else {})
        return Table(value, self.where if not self.prefix else self.where, self.key(name)) \
            if isinstance(value, dict) else Table(value, self.where, self.key(name))

    def finish(self) -> None:
        unknown = sorted(set(self.data) - self.used)
        if unknown:
            names = ", ".join(repr(self.key(u)) for u in unknown)
            known = ", ".join(sorted(self.used)) or "none"
            raise ProjectError(f"unknown key{'s' if len(unknown) > 1 else ''} {names}",
                               where=self.where, accepted=f"keys here: {known}")


def _range_text(low: float | None, high: float | None, kind: str) -> str:
    if low is not None and high is not None:
        return f"{kind} from {low} to {high}"
    if low is not None:
        return f"{kind} of at least {low}"
    if high is not None:
        return f"{kind} of at most {high}"
    return kind
