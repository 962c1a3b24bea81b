"""The error catalogue: every bad-input error says what was wrong and what would
be accepted (the DESIGN contract; common practice for command-line tools).

Static half: every ``raise SomeError(...)`` of the ArrangeError family in the
package passes an ``accepted=`` text (or goes through ``Table.error``, whose
third argument is that text).  Dynamic half: the messages produced by the
fuzz sweep (tests/test_fuzz.py) are checked for "accepted" there.
"""
from __future__ import annotations

import ast
from pathlib import Path

import arrange.errors as errors

PACKAGE = Path(errors.__file__).resolve().parent
FAMILY = {name for name in errors.__all__}


def _raises() -> list[tuple[str, int, ast.Call]]:
    found = []
    for path in sorted(PACKAGE.rglob("*.py")):
        tree = ast.parse(path.read_text(encoding="utf-8"))
        for node in ast.walk(tree):
            if isinstance(node, ast.Raise) and isinstance(node.exc, ast.Call):
                found.append((str(path.relative_to(PACKAGE)), node.lineno, node.exc))
    return found


def test_every_family_error_says_what_is_accepted() -> None:
    missing = []
    for where, line, call in _raises():
        func = call.func
        name = func.id if isinstance(func, ast.Name) else (func.attr if isinstance(func, ast.Attribute) else "")
        if name in FAMILY and name != "ArrangeError":
            if not any(k.arg == "accepted" for k in call.keywords):
                missing.append(f"{where}:{line} {name}")
        elif name == "error":   # Table.error(key, what, accepted)
            if len(call.args) + len(call.keywords) < 3:
                missing.append(f"{where}:{line} Table.error")
    assert not missing, "errors without an 'accepted' text: " + ", ".join(missing)


def test_the_catalogue_is_one_family() -> None:
    for name in FAMILY:
        assert issubclass(getattr(errors, name), errors.ArrangeError)


def test_message_layout() -> None:
    err = errors.ProjectError("7 is too big", where="p.toml, key 'tempo'", accepted="20..400")
    assert str(err) == "p.toml, key 'tempo': 7 is too big; accepted: 20..400"
