"""Dynamic marks, softest first (the marks of common notation practice)."""
from __future__ import annotations

__all__ = ["DYNAMICS"]

DYNAMICS = ("ppp", "pp", "p", "mp", "mf", "f", "ff", "fff")
