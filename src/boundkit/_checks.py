"""Small input checks shared by every layer.

Each helper converts its argument, raises :class:`ValueError` naming the
argument and what is allowed, and returns the converted value.
"""
from __future__ import annotations

import math
from typing import Iterable

__all__ = ["check_finite", "check_positive", "check_int", "check_choice"]


def check_finite(name: str, value) -> float:
    try:
        x = float(value)
    except (TypeError, ValueError):
        raise ValueError(f"{name}: expected a number, got {value!r}") from None
    if not math.isfinite(x):
        raise ValueError(f"{name}: expected a finite number, got {value!r}")
    return x


def check_positive(name: str, value) -> float:
    x = check_finite(name, value)
    if x <= 0:
        raise ValueError(f"{name}: must be positive, got {value!r}")
    return x


def check_int(name: str, value, minimum: int | None = None) -> int:
    if isinstance(value, bool):
        raise ValueError(f"{name}: expected an integer, got {value!r}")
    try:
        i = int(value)
    except (TypeError, ValueError):
        raise ValueError(f"{name}: expected an integer, got {value!r}") from None
    if i != value and not (isinstance(value, str) and str(i) == value.strip()):
        raise ValueError(f"{name}: expected an integer, got {value!r}")
    if minimum is not None and i < minimum:
        raise ValueError(f"{name}: must be >= {minimum}, got {i}")
    return i


def check_choice(name: str, value: str, allowed: Iterable[str]) -> str:
    allowed = list(allowed)
    if value not in allowed:
        raise ValueError(f"{name}: unknown value {value!r}; choose one of {', '.join(allowed)}")
    return value
