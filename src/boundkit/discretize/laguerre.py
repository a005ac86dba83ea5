"""Regularized Lagrange-Laguerre mesh: one global basis on (0, inf).

The Lagrange-mesh method (D. Baye and P.-H. Heenen, J. Phys. A 19, 2041
(1986); review: D. Baye, Phys. Rep. 565, 1 (2015)) expands a radial function
in N functions attached to the zeros x_1 < ... < x_N of the Laguerre
polynomial L_N, each zero at one node and zero at all the others. With the
x-regularization every basis function vanishes like x at the origin, which is
how u(r) = r R(r) behaves for a regular potential, and decays like e^(-x/2),
which is how a bound state decays. With the Gauss quadrature on the same
nodes the overlap matrix is the identity and a local potential is diagonal,
so a radial Schrodinger operator becomes one small real symmetric matrix
whose eigenvalues are all the levels of the channel at once. For the Coulomb
problem the method is nearly exact at small N (Baye 2015, sec. 3.4 and 5).

Conventions here: r = h x with a scale h > 0; the cardinal functions
C_j(x) = (x / x_j) L_N(x) / ((x - x_j) L_N'(x_j)) e^(-(x - x_j)/2)
satisfy C_j(x_i) = delta_ij, so a state is given by its values at the nodes.
With the Gauss weights lambda_j = e^(x_j) / (x_j L_N'(x_j)^2) for integrals
over dx (the Christoffel numbers of L_N times e^(x_j); standard, e.g.
Abramowitz and Stegun 1964, 25.4.45), the eigenvector c of the symmetric
matrix gives u(x_j) = c_j / sqrt(lambda_j) (normalised in x).
"""
from __future__ import annotations

from dataclasses import dataclass
from functools import lru_cache

import numpy as np
from scipy.special import eval_laguerre, roots_laguerre

from .._rounding import EXTENDED_LONG_DOUBLE

__all__ = ["LaguerreMesh", "laguerre_mesh", "cardinal_matrix", "expand"]


@dataclass(frozen=True)
class LaguerreMesh:
    """Nodes, Gauss weights and the kinetic matrix of an N-point mesh (in x).

    ``T`` is the matrix of -d^2/dx^2 in the Gauss approximation (computed in
    extended precision, then rounded); ``weights`` are the lambda_j for
    integrals over dx; ``dL`` is L_N'(x_j).
    """

    n: int
    x: np.ndarray
    weights: np.ndarray
    dL: np.ndarray
    T: np.ndarray


@lru_cache(maxsize=48)
def laguerre_mesh(n: int) -> LaguerreMesh:
    """The N-point x-regularized Lagrange-Laguerre mesh (cached; arrays read-only).

    Notes
    -----
    Kinetic matrix of -d^2/dx^2 in the Gauss approximation, T_ij = -lambda_i^(1/2) f_j''(x_i)
    with f_j = C_j / lambda_j^(1/2) (Baye 2015, sec. 3.4; the closed form is quoted from
    memory, and the tests check it against that definition, differentiated in 40-digit
    arithmetic with mpmath, and by the hydrogen levels it gives, exact to rounding):

        T_ii = (4 + (4N + 2) x_i - x_i^2) / (12 x_i^2),
        T_ij = (-1)^(i-j) (x_i + x_j) / (sqrt(x_i x_j) (x_i - x_j)^2),  i != j.
    """
    if n < 2:
        raise ValueError(f"n: a Laguerre mesh needs at least 2 nodes, got {n}")
    x, weights, dL, T = _built_extended(n) if _EXTENDED else _built_doubledouble(n)
    out = LaguerreMesh(n, x, weights, dL, T)
    for a in (out.x, out.weights, out.dL, out.T):
        a.flags.writeable = False
    return out


# numpy's long double is the x87 80-bit format on x86 Linux and Intel macOS, plain double on
# Windows and ARM macOS; there the mesh is built in double-double arithmetic instead
_EXTENDED = EXTENDED_LONG_DOUBLE          # a module attribute: the tests build the mesh both ways


def _built_extended(n: int):
    """(x, weights, dL, T) of the n-point mesh, computed in np.longdouble and rounded to double."""
    X, L_prev = _polished_roots(n)
    i = np.arange(n)
    sign = np.where((i[:, None] - i[None, :]) % 2 == 0, 1, -1).astype(np.longdouble)
    diff = X[:, None] - X[None, :]
    diff[i, i] = 1
    T_ext = sign * (X[:, None] + X[None, :]) / (np.sqrt(np.outer(X, X)) * diff**2)
    T_ext[i, i] = (4 + (4 * n + 2) * X - X**2) / (12 * X**2)
    # x L_N'(x) = N (L_N(x) - L_{N-1}(x)), and L_N(x_j) = 0
    dL_ext = -n * L_prev / X
    weights = np.exp(X - np.log(X) - 2 * np.log(np.abs(dL_ext))).astype(float)   # e^x overflows doubles
    return X.astype(float), weights, dL_ext.astype(float), T_ext.astype(float)


def _built_doubledouble(n: int):
    """(x, weights, dL, T) of the n-point mesh as :func:`_built_extended` gives them, in double-double
    arithmetic (:mod:`boundkit.discretize._doubledouble`): the zeros polished by two Newton steps and
    the kinetic matrix's closed form evaluated at them to about 32 digits, then rounded to double.

    The weights are e^a with a = X - ln X - 2 ln |L_N'| in double-double (e^x overflows doubles), so
    that they keep their relative accuracy where |a| is in the hundreds.
    """
    from . import _doubledouble as dd

    X = dd.dd(roots_laguerre(n)[0])
    for _ in range(2):
        L, L_prev = _laguerre_pair_dd(n, X)
        # the Newton correction is ~1e-16 of x: double precision is plenty for it
        X = dd.add(X, dd.dd(-X[0] * L[0] / (n * (L[0] - L_prev[0]))))
    L_prev = _laguerre_pair_dd(n, X)[1]
    Xi, Xj = (X[0][:, None], X[1][:, None]), (X[0][None, :], X[1][None, :])
    i = np.arange(n)
    diff = dd.sub(Xi, Xj)
    diff[0][i, i] = 1.0
    T = dd.div(dd.add(Xi, Xj), dd.mul(dd.sqrt(dd.mul(Xi, Xj)), dd.mul(diff, diff)))
    T = dd.to_float(T) * np.where((i[:, None] - i[None, :]) % 2 == 0, 1.0, -1.0)
    X2 = dd.mul(X, X)
    num = dd.sub(dd.add(dd.dd(np.full(n, 4.0)), dd.mul(dd.dd(np.full(n, 4.0 * n + 2)), X)), X2)
    T[i, i] = dd.to_float(dd.div(num, dd.mul(dd.dd(np.full(n, 12.0)), X2)))
    dL = dd.div(dd.mul(dd.dd(np.full(n, -float(n))), L_prev), X)
    sgn = np.sign(dL[0])
    log_dl = dd.log((sgn * dL[0], sgn * dL[1]))
    arg = dd.sub(dd.sub(X, dd.log(X)), dd.add(log_dl, log_dl))
    weights = np.exp(arg[0]) * (1.0 + arg[1])
    return dd.to_float(X), weights, dd.to_float(dL), T


def _laguerre_pair(n: int, X: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """(L_n(X), L_(n-1)(X)) by the three-term recurrence, in the precision of X."""
    one = np.ones_like(X)
    prev, cur = one, one - X
    for k in range(1, n):
        prev, cur = cur, ((2 * k + 1 - X) * cur - k * prev) / (k + 1)
    return cur, prev


def _laguerre_pair_dd(n: int, X):
    """:func:`_laguerre_pair` in double-double arithmetic (X a pair (hi, lo))."""
    from . import _doubledouble as dd

    one = dd.dd(np.ones_like(X[0]))
    prev, cur = one, dd.sub(one, X)
    for k in range(1, n):
        step = dd.sub(dd.mul(dd.sub(dd.dd(np.full_like(X[0], 2 * k + 1)), X), cur),
                      dd.mul(dd.dd(np.full_like(X[0], k)), prev))
        prev, cur = cur, dd.div(step, dd.dd(np.full_like(X[0], k + 1)))
    return cur, prev


def _polished_roots(n: int) -> tuple[np.ndarray, np.ndarray]:
    """The zeros of L_n in extended precision (np.longdouble) and L_(n-1) there.

    scipy's roots_laguerre are good to a few ulp of a double; two Newton steps in extended precision,
    with L_n' = n (L_n - L_(n-1)) / x, take them to the extended rounding. The kinetic matrix's
    closed form holds only at the exact zeros: built on the double roots (1-4 ulp off), the hydrogen
    n = 20..40, l = 3 states on N = 135 had <r^-2> and <r^-3> up to 1.1e-13 (relative) off, against
    below 1e-27 with 32-digit zeros (the matrix built and diagonalised in 32 digits, mpmath), and
    different at every N, so the change between sizes did not show it. With these zeros the entries
    of T are correctly rounded (1.4e-16 relative at N = 111, against 9e-15 before); the zeros near
    x = 0 are good to about 1e-16 relative (the recurrence's rounding). Where long double is plain
    double, :func:`_built_doubledouble` does the same in double-double arithmetic; with neither (the
    roots rounded to double and T computed in double) the worst <r^-2> error was 6.5 times its
    estimate, 72 of those 210 moments above it (measured here).
    """
    X = roots_laguerre(n)[0].astype(np.longdouble)
    for _ in range(2):
        L, L_prev = _laguerre_pair(n, X)
        X = X - X * L / (n * (L - L_prev))
    return X, _laguerre_pair(n, X)[1]


def cardinal_matrix(mesh: LaguerreMesh, xs: np.ndarray) -> np.ndarray:
    """Values C_j(xs) of the cardinal functions: shape (len(xs), N)."""
    return expand(mesh, xs, np.eye(mesh.n))


def expand(mesh: LaguerreMesh, xs: np.ndarray, values: np.ndarray) -> np.ndarray:
    """sum_j values[j] C_j(xs) for each column of ``values`` (node values): shape (len(xs), columns).

    In the barycentric-like form x e^(-x/2) L_N(x) sum_j v_j e^(x_j/2) / (x_j L_N'(x_j) (x - x_j)),
    one division per point and node. Points that fall on a node (to 1e-12 relative) take that
    node's value.
    """
    xs = np.asarray(xs, dtype=float)
    values = np.asarray(values, dtype=float)
    xj = mesh.x
    d = xs[:, None] - xj[None, :]
    hit = np.abs(d) <= 1e-12 * xj[None, :]
    with np.errstate(all="ignore"):
        scaled = (np.exp(xj / 2) / (xj * mesh.dL))[:, None] * values
        out = (xs * eval_laguerre(mesh.n, xs) * np.exp(-xs / 2))[:, None] * ((1.0 / d) @ scaled)
    if np.any(hit):
        rows, cols = np.nonzero(hit)
        out[rows] = values[cols]
    return out
