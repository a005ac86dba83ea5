"""The smallest uncertainty boundkit puts on a double-precision value.

Repeated computations can agree to the last bit (two integrations of a deep well near threshold,
two fits of a critical value); their difference is then no error estimate, and the rounding of the
value itself is. boundkit takes that as ``ULPS`` units in the last place, the same wherever such a
floor applies (critical values, phase shifts, scattering lengths).

It also holds where a solver reads the two sides of a jump of the potential (:func:`beside`).
"""
from __future__ import annotations

import math

import numpy as np

ULPS = 4

EXTENDED_LONG_DOUBLE = bool(np.finfo(np.longdouble).eps < 1e-18)
"""Whether numpy's long double is an extended type (the 80-bit x87 format on x86 Linux and Intel macOS), not
plain double (Windows, ARM macOS): the Lagrange-Laguerre mesh is built in it or in double-double arithmetic,
and observables' rounding floor depends on it."""


def rounding_floor(x):
    """``ULPS`` units in the last place of |x| (elementwise for arrays)."""
    return ULPS * np.spacing(np.abs(x))


OFF_EDGE = 64


def beside(x: float) -> tuple[float, float]:
    """(x - OFF_EDGE ulp, x + OFF_EDGE ulp): where the two sides of a jump at x are read. Not the next
    floats: a callable written with ``r < a`` and ``r > a`` has a third value at a itself, and its
    jump search may report the float next to a. A smooth potential moves by 1e-14 relative there."""
    step = OFF_EDGE * math.ulp(x)
    return x - step, x + step


def beside_each(x: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """:func:`beside` of every entry of ``x``."""
    step = OFF_EDGE * np.spacing(np.abs(x))
    return x - step, x + step
