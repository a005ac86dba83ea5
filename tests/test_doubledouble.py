"""The double-double arithmetic behind the Lagrange-Laguerre mesh on platforms without an extended
long double, against mpmath at 50 digits (reference arithmetic; the algorithms are Dekker 1971 and
Hida, Li and Bailey 2001, see boundkit/discretize/_doubledouble.py)."""
from __future__ import annotations

import mpmath as mp
import numpy as np
import pytest

from boundkit.discretize import _doubledouble as dd


def _values(seed: int, n: int = 200):
    rng = np.random.default_rng(seed)
    hi = rng.uniform(0.5, 2.0, n) * 10.0 ** rng.integers(-8, 8, n)
    lo = hi * rng.uniform(-1.1e-16, 1.1e-16, n)
    return dd.add(dd.dd(hi), dd.dd(lo))        # normalised pairs


def _mp(x, k):
    return mp.mpf(float(x[0][k])) + mp.mpf(float(x[1][k]))


@pytest.mark.parametrize("op,ref", [
    (dd.add, lambda a, b: a + b),
    (dd.sub, lambda a, b: a - b),
    (dd.mul, lambda a, b: a * b),
    (dd.div, lambda a, b: a / b),
])
def test_binary_operations_carry_about_32_digits(op, ref):
    x, y = _values(1), _values(2)
    z = op(x, y)
    with mp.workdps(50):
        worst = max(abs((_mp(z, k) - ref(_mp(x, k), _mp(y, k))) / ref(_mp(x, k), _mp(y, k)))
                    for k in range(len(x[0])))
    # sums of opposite signs can cancel: their error is relative to the operands, not the result
    bound = 1e-30 if op in (dd.mul, dd.div) else 1e-30 * 1e16
    assert worst <= bound


@pytest.mark.parametrize("op,ref", [(dd.sqrt, mp.sqrt), (dd.log, mp.log)])
def test_square_root_and_logarithm(op, ref):
    x = _values(3)
    z = op(x)
    with mp.workdps(50):
        # the logarithm is good to the rounding of e^-y in double, an absolute 1e-16 whatever the size
        # of ln x (what the mesh's weights e^(x - ln x - ...) need), not to 32 digits
        if op is dd.log:
            worst = max(abs(_mp(z, k) - ref(_mp(x, k))) for k in range(len(x[0])))
            assert worst <= 2.5e-16
        else:
            worst = max(abs(_mp(z, k) / ref(_mp(x, k)) - 1) for k in range(len(x[0])))
            assert worst <= 1e-30


def test_two_sum_and_two_prod_are_exact():
    a, b = _values(4)[0], _values(5)[0]
    for f, ref in ((dd.two_sum, lambda u, v: u + v), (dd.two_prod, lambda u, v: u * v)):
        s, e = f(a, b)
        with mp.workdps(80):
            assert all(mp.mpf(float(s[k])) + mp.mpf(float(e[k])) == ref(mp.mpf(float(a[k])), mp.mpf(float(b[k])))
                       for k in range(len(a)))
