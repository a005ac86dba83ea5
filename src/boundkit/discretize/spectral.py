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

    def grid(self, mesh: LogMap, size: int, breaks=(), edges=()) -> Grid:
        """Chebyshev grid; with ``breaks`` inside the mesh, one element per
        piece (sizes in proportion to their length in t, at least size/2 each). ``edges`` are
        not used (the breaks already place element ends there)."""
        t0, t1 = np.longdouble(mesh.t_min), np.longdouble(mesh.t_max)
        cuts = [np.longdouble(np.log(b)) for b in sorted(breaks)
                if mesh.r_min * 1.001 < b < mesh.r_max * 0.999]
        if not cuts:
            x, D = chebyshev_matrix(size)
            half = (t1 - t0) / 2
            t_ext = t0 + (x + 1) * half
            D_ext = D / half
            t = t_ext.astype(float)
            return Grid(t=t, r=np.exp(t), D=D_ext.astype(float), D_ext=D_ext,
                        w=clenshaw_curtis(size) * float(half), dense=True, method=self.name,
                        size=size, mesh=mesh, t_ext=t_ext)
        edges = [t0, *cuts, t1]
        lengths = np.array([float(b - a) for a, b in zip(edges[:-1], edges[1:])])
        # every element gets at least half the nodes: the pieces near the ends carry the
        # fast changes (origin, far tail) even when they are short in t
        sizes = np.maximum(size // 2, np.round(size * lengths / lengths.sum() / 2) * 2).astype(int)
        n_total = int(sizes.sum()) + 1
        D_ext = np.zeros((n_total, n_total), dtype=np.longdouble)
        t_ext = np.zeros(n_total, dtype=np.longdouble)
        w = np.zeros(n_total)
        interfaces, jumps = [], []
        start = 0
        prev = None
        for (a, b), m in zip(zip(edges[:-1], edges[1:]), sizes):
            m = int(m)
            x, D = chebyshev_matrix(m)
            half = (b - a) / 2
            Dl = D / half
            sl = slice(start, start + m + 1)
            t_ext[sl] = a + (x + 1) * half
            w[sl] += clenshaw_curtis(m) * float(half)
            D_ext[sl, sl] = Dl
            if prev is not None:
                prev_sl, prev_row = prev
                jump = np.zeros(n_total, dtype=np.longdouble)
                jump[prev_sl] = prev_row
                jump[sl] -= Dl[0]
                interfaces.append(start)
                jumps.append(jump)
                # the shared node's row: the average of the one-sided rows
                D_ext[start, :] = 0
                D_ext[start, prev_sl] += prev_row / 2
                D_ext[start, sl] += Dl[0] / 2
            prev = (sl, Dl[-1])
            start += m
        t = t_ext.astype(float)
        J = np.array(jumps, dtype=np.longdouble)
        return Grid(t=t, r=np.exp(t), D=D_ext.astype(float), D_ext=D_ext, w=w, dense=True,
                    method=self.name, size=size, mesh=mesh, t_ext=t_ext,
                    interfaces=tuple(interfaces), jumps=J.astype(float), jumps_ext=J)
