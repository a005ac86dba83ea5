"""Chebyshev collocation in t = ln r.

The nodes are the Chebyshev-Lobatto points mapped affinely onto
[ln r_min, ln r_max]. Because the solver factors out r^gamma and works in t,
bound-state radial functions are smooth (analytic) functions of t and the
error falls faster than any power of the number of nodes.
"""
from __future__ import annotations

from functools import lru_cache

import numpy as np

from ..mesh import LogMap
from .base import Discretization, Grid

__all__ = ["Chebyshev", "chebyshev_nodes", "chebyshev_matrix", "clenshaw_curtis"]

_PI_EXT = np.longdouble("3.14159265358979323846264338327950288")


@lru_cache(maxsize=32)
def chebyshev_matrix(n: int):
    """Nodes x (ascending, in [-1, 1]) and derivative matrix, extended precision.

    Notes
    -----
    x_j = -cos(pi j / n), j = 0..n. Off-diagonal entries
    D_ij = (c_i / c_j) (-1)^(i+j) / (x_i - x_j), c = 2 at the ends and 1
    elsewhere; diagonal entries are minus the row sums (exact for constants).
    Computed once per n in ``numpy.longdouble`` and cached (read-only).
    """
    j = np.arange(n + 1)
    x = -np.cos(_PI_EXT * j.astype(np.longdouble) / n)
    c = np.ones(n + 1, dtype=np.longdouble)
    c[0] = c[-1] = 2
    c *= (-1.0) ** j
    dx = x[:, None] - x[None, :]
    D = np.outer(c, 1 / c) / (dx + np.eye(n + 1, dtype=np.longdouble))
    D -= np.diag(D.sum(axis=1))
    x.flags.writeable = False
    D.flags.writeable = False
    return x, D


def chebyshev_nodes(n: int) -> np.ndarray:
    return chebyshev_matrix(n)[0].astype(float)


@lru_cache(maxsize=32)
def clenshaw_curtis(n: int) -> np.ndarray:
    """Clenshaw-Curtis weights on the n+1 Chebyshev-Lobatto points of [-1, 1]."""
    theta = np.pi * np.arange(n + 1) / n
    w = np.zeros(n + 1)
    v = np.ones(n - 1)
    inner = theta[1:-1]
    if n % 2 == 0:
        w[0] = w[n] = 1.0 / (n * n - 1)
        for k in range(1, n // 2):
            v -= 2 * np.cos(2 * k * inner) / (4 * k * k - 1)
        v -= np.cos(n * inner) / (n * n - 1)
    else:
        w[0] = w[n] = 1.0 / n**2
        for k in range(1, (n - 1) // 2 + 1):
            v -= 2 * np.cos(2 * k * inner) / (4 * k * k - 1)
    w[1:-1] = 2 * v / n
    w.flags.writeable = False
    return w


class Chebyshev(Discretization):
    """Chebyshev-Lobatto collocation on the log map (the spectral family).

    ``size`` is the polynomial degree n (n + 1 nodes). Residuals are refined in
    extended precision, so energies reach the double-precision limit.
    """

    name = "spectral"
    family = "spectral"
    order = None
    floor = 2e-14   # residuals in extended precision; measured spread of refined levels ~1e-14
    first = 64
    cap = 448

    def ladder(self) -> list[int]:
        sizes, n = [], self.first
        while n <= self.cap:
            sizes.append(n)
            n = int(round(n * 1.25 / 4)) * 4
        return sizes

    def grid(self, mesh: LogMap, size: int) -> Grid:
        x, D = chebyshev_matrix(size)
        t0, t1 = np.longdouble(mesh.t_min), np.longdouble(mesh.t_max)
        half = (t1 - t0) / 2
        t_ext = t0 + (x + 1) * half
        D_ext = D / half
        t = t_ext.astype(float)
        return Grid(
            t=t,
            r=np.exp(t),
            D=D_ext.astype(float),
            D_ext=D_ext,
            w=clenshaw_curtis(size) * float(half),
            dense=True,
            method=self.name,
            size=size,
            mesh=mesh,
            t_ext=t_ext,
        )
