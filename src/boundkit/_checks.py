"""Small input checks shared by every layer.

Each helper converts its argument, raises :class:`ValueError` naming the
argument and what is allowed, and returns the converted value.
"""
from __future__ import annotations

import math
from typing import Iterable

__all__ = ["check_finite", "check_positive", "check_int", "check_choice", "check_parameter", "MAX_MAGNITUDE"]

MAX_MAGNITUDE = 1e30
"""Largest magnitude of a potential parameter (in atomic units) or of a probed
charge. Far beyond any physical value (a nuclear oscillator constant is about
1e14 hartree/bohr^2); it keeps squares and products of parameters inside the
floating-point range, so that the solver never overflows."""


def check_finite(name: str, value) -> float:
    if isinstance(value, (bool, str, bytes)):   # True is not 1.0 and "1" is not a number here
        raise ValueError(f"{name}: expected a number, got {_short(value)}")
    try:
        x = float(value)
    except (TypeError, ValueError):
        raise ValueError(f"{name}: expected a number, got {_short(value)}") from None
    if not math.isfinite(x):
        raise ValueError(f"{name}: expected a finite number, got {_short(value)}")
    return x


def check_positive(name: str, value) -> float:
    x = check_finite(name, value)
    if x <= 0:
        raise ValueError(f"{name}: must be positive, got {value!r}")
    return x


def check_int(name: str, value, minimum: int | None = None) -> int:
    if isinstance(value, (bool, str, bytes)):   # as for numbers: True and "3" are refused
        raise ValueError(f"{name}: expected an integer, got {_short(value)}")
    try:
        i = int(value)
    except (TypeError, ValueError, OverflowError):
        raise ValueError(f"{name}: expected an integer, got {_short(value)}") from None
    if i != value:
        raise ValueError(f"{name}: expected an integer, got {_short(value)}")
    if minimum is not None and i < minimum:
        raise ValueError(f"{name}: must be >= {minimum}, got {i}")
    return i


def check_choice(name: str, value: str, allowed: Iterable[str]) -> str:
    allowed = list(allowed)
    if value not in allowed:
        raise ValueError(f"{name}: unknown value {_short(value)}; choose one of {', '.join(allowed)}")
    return value


def check_parameter(name: str, value) -> float:
    """A finite potential parameter of magnitude at most :data:`MAX_MAGNITUDE`."""
    x = check_finite(name, value)
    if abs(x) > MAX_MAGNITUDE:
        raise ValueError(f"{name}: magnitude {x:.3g} is beyond {MAX_MAGNITUDE:g}, the largest boundkit accepts "
                         "(no physical potential needs more); give a smaller value")
    return x


def _short(value, limit: int = 60) -> str:
    """repr of ``value`` cut to ``limit`` characters (messages stay short whatever the input)."""
    text = repr(value)
    return text if len(text) <= limit else text[: limit - 12] + "..." + text[-9:]
