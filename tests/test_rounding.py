"""The rounding floor (4 ulp) shared by critical values, phase shifts and scattering lengths."""
import math

import numpy as np

from boundkit._rounding import ULPS, rounding_floor


def test_four_units_in_the_last_place_of_the_magnitude():
    # math.ulp is the standard library's unit in the last place (Python 3.9+)
    for x in (1.0, -1.0, 0.1, -3.5e-7, 1e300, 5e-324):
        assert rounding_floor(x) == 4 * math.ulp(abs(x))
    assert ULPS == 4


def test_elementwise_on_arrays():
    x = np.array([1.0, -2.0, 0.5])
    assert rounding_floor(x).tolist() == [4 * math.ulp(1.0), 4 * math.ulp(2.0), 4 * math.ulp(0.5)]
