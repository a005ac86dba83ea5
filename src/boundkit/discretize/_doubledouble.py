"""Double-double arithmetic on numpy arrays: a value is a pair (hi, lo) of float64 arrays with
|lo| <= ulp(hi) / 2, about 32 significant digits.

Used by the Lagrange-Laguerre mesh where ``np.longdouble`` is plain double (Windows, ARM macOS),
so that its kinetic matrix is built on the exact zeros of L_N on every platform. The algorithms
are the error-free transformations of Dekker (Numer. Math. 18, 224 (1971)) and Knuth (TAOCP vol. 2,
4.2.2): two_sum and the splitting product, with the double-double add, multiply, divide and square
root built on them as in Hida, Li and Bailey (ARITH-15, 2001). No fused multiply-add is assumed.
Arguments must be far from overflow (|x| < 1e290; the mesh's values are below 1e4).
"""
from __future__ import annotations

import numpy as np

_SPLIT = 134217729.0    # 2^27 + 1


def two_sum(a, b):
    """(s, e) with s = fl(a + b) and a + b = s + e exactly."""
    s = a + b
    bb = s - a
    return s, (a - (s - bb)) + (b - bb)


def _quick_two_sum(a, b):
    """two_sum for |a| >= |b|."""
    s = a + b
    return s, b - (s - a)


def _split(a):
    c = _SPLIT * a
    hi = c - (c - a)
    return hi, a - hi


def two_prod(a, b):
    """(p, e) with p = fl(a b) and a b = p + e exactly."""
    p = a * b
    ah, al = _split(a)
    bh, bl = _split(b)
    return p, ((ah * bh - p) + ah * bl + al * bh) + al * bl


def dd(a):
    """A double-double from doubles (lo = 0)."""
    a = np.asarray(a, dtype=float)
    return a, np.zeros_like(a)


def add(x, y):
    s, e = two_sum(x[0], y[0])
    t, f = two_sum(x[1], y[1])
    e = e + t
    s, e = _quick_two_sum(s, e)
    return _quick_two_sum(s, e + f)


def neg(x):
    return -x[0], -x[1]


def sub(x, y):
    return add(x, neg(y))


def mul(x, y):
    p, e = two_prod(x[0], y[0])
    return _quick_two_sum(p, e + (x[0] * y[1] + x[1] * y[0]))


def div(x, y):
    q1 = x[0] / y[0]
    r = sub(x, mul(y, dd(q1)))
    q2 = r[0] / y[0]
    r = sub(r, mul(y, dd(q2)))
    q3 = r[0] / y[0]
    q1, q2 = _quick_two_sum(q1, q2)
    return add((q1, q2), dd(q3))


def sqrt(x):
    """Square root of a positive double-double (one Newton step from the double root)."""
    q = np.sqrt(x[0])
    r = sub(x, two_prod(q, q))
    return _quick_two_sum(q, r[0] / (2.0 * q))


def log(x):
    """Natural logarithm of a positive double-double: y = ln(hi) rounded, plus the correction
    x e^-y - 1 (absolute error about 1e-16, whatever the size of ln x)."""
    y = np.log(x[0])
    e = np.exp(-y)
    return _quick_two_sum(y, (x[0] * e - 1.0) + x[1] * e)


def to_float(x) -> np.ndarray:
    """The double nearest the double-double (hi + lo, rounded once)."""
    return x[0] + x[1]
