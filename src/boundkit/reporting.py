"""Numbers in reports: differences of levels printed with the digits their error supports.

A difference d = E_a - E_b of two computed levels has the error estimate

    delta = delta_a + delta_b + 2 eps max(|E_a|, |E_b|),

the two levels' own estimates plus the rounding of the subtraction (eps the
double-precision machine epsilon). The rule for printing it:

- |d| <= delta: nothing distinguishes d from zero, and it is printed as ``0``
  (not as the 4.9e-14 keV of rounding noise left by two equal levels);
- otherwise d is printed with the significant digits that delta supports
  (one guard digit, between 3 and 15).

The same rule serves tables of shifts, splittings and scan differences.
"""
from __future__ import annotations

import math

import numpy as np

__all__ = ["difference_error", "is_zero", "format_difference"]

_EPS = float(np.finfo(float).eps)


def difference_error(a: float, b: float, error_a: float = 0.0, error_b: float = 0.0) -> float:
    """Error estimate of a - b: the two estimates plus the rounding of the subtraction (module docstring)."""
    return abs(error_a) + abs(error_b) + 2 * _EPS * max(abs(a), abs(b))


def is_zero(d: float, error: float) -> bool:
    """True when |d| does not exceed its error estimate."""
    return abs(d) <= error


def format_difference(d: float, error: float, digits: int = 15) -> str:
    """``d`` as text: ``0`` when it is within its error of zero, else with the digits ``error`` supports.

    Parameters
    ----------
    d : float
        The difference, in the unit it is printed in.
    error : float
        Its error estimate (same unit), e.g. from :func:`difference_error`.
    digits : int
        Most significant digits printed.

    Examples
    --------
    >>> format_difference(4.9e-14, 3e-13)
    '0'
    >>> format_difference(0.19902934567, 2e-9)
    '0.199029346'
    """
    if not math.isfinite(d):
        return str(d)
    if is_zero(d, error):
        return "0"
    if error > 0 and math.isfinite(error):
        digits = min(digits, max(3, math.ceil(math.log10(abs(d) / error)) + 1))
    return f"{d:.{digits}g}"
