"""The smallest uncertainty boundkit puts on a double-precision value.

Repeated computations can agree to the last bit (two integrations of a deep well near threshold,
two fits of a critical value); their difference is then no error estimate, and the rounding of the
value itself is. boundkit takes that as ``ULPS`` units in the last place, the same wherever such a
floor applies (critical values, phase shifts, scattering lengths).
"""
from __future__ import annotations

import numpy as np

ULPS = 4


def rounding_floor(x):
    """``ULPS`` units in the last place of |x| (elementwise for arrays)."""
    return ULPS * np.spacing(np.abs(x))
