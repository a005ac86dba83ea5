"""Spectral elements in t = ln r with Gauss-Lobatto-Legendre nodes.

The interval [t_min, t_max] is cut into elements (at the potential's
breakpoints and where the level's local wave number asks for it); on each
element the unknown is a polynomial of degree n through the n + 1
Gauss-Lobatto-Legendre (GLL) points, and neighbouring elements share their end
node (a continuous, piecewise-polynomial basis). Integrals are done with the
GLL rule of each element, which is exact for polynomials of degree 2n - 1.

This is the discretization of a quadratic form (a Galerkin method with the
quadrature of the nodes, often called a Lagrange-mesh or spectral-element
method): the matrices it produces are symmetric, the mass matrix is diagonal
and positive, so a fixed-energy operator can be counted (Sylvester inertia)
and solved with symmetric eigen routines. Convergence in the degree n is
geometric for the smooth (analytic) functions of t that bound states are once
r^gamma is factored out.
"""
from __future__ import annotations

from dataclasses import dataclass, replace
from functools import lru_cache

import numpy as np
from numpy.polynomial import legendre as npleg

__all__ = ["gll", "ElementGrid", "Quadrature", "element_grid"]


@lru_cache(maxsize=64)
def gll(n: int):
    """GLL nodes x (ascending, in [-1, 1]), weights, and derivative matrix of degree n.

    Returns ``(x, w, D)`` with ``x`` and ``D`` in ``numpy.longdouble`` and ``w``
    in double. Nodes: +-1 and the roots of P_n'(x); weights 2 / (n (n + 1) P_n(x)^2)
    (standard, e.g. Canuto, Hussaini, Quarteroni and Zang, Spectral Methods,
    2006). D is the exact derivative matrix of the Lagrange basis on these
    nodes, from the barycentric formula in extended precision.
    """
    if n < 2:
        raise ValueError(f"degree: a spectral element needs degree >= 2, got {n}")
    inner = np.sort(npleg.Legendre.basis(n).deriv().roots().real)
    x64 = np.concatenate(([-1.0], inner, [1.0]))
    # polish the inner roots of P_n' by Newton steps (the companion roots carry ~1e-15 errors)
    c = np.zeros(n + 1)
    c[n] = 1.0
    d1, d2 = npleg.legder(c, 1), npleg.legder(c, 2)
    for _ in range(2):
        x64[1:-1] -= npleg.legval(x64[1:-1], d1) / npleg.legval(x64[1:-1], d2)
    w = 2.0 / (n * (n + 1) * npleg.legval(x64, c) ** 2)
    x = x64.astype(np.longdouble)
    diff = x[:, None] - x[None, :]
    np.fill_diagonal(diff, 1)
    lam = 1 / np.prod(diff, axis=1)                      # barycentric weights
    D = (lam[None, :] / lam[:, None]) / diff
    np.fill_diagonal(D, 0)
    D -= np.diag(D.sum(axis=1))
    x.flags.writeable = False
    D.flags.writeable = False
    w.flags.writeable = False
    return x, w, D


@dataclass(frozen=True)
class ElementGrid:
    """Nodes, weights and per-element derivative blocks of a spectral-element mesh.

    Attributes
    ----------
    t, t_ext : ndarray
        Ascending global nodes in t = ln r (double, extended precision).
    r : ndarray
        exp(t).
    w : ndarray
        Global quadrature weights for dt (shared nodes sum both elements).
    elements : tuple of (int, int)
        First and last global node index of each element (inclusive).
    D : tuple of ndarray
        Derivative matrix in t of each element on its own nodes (extended precision).
    w_local : tuple of ndarray
        Quadrature weights of each element on its own nodes.
    degree : int
        Polynomial degree of every element.
    """

    t: np.ndarray
    t_ext: np.ndarray
    r: np.ndarray
    w: np.ndarray
    elements: tuple
    D: tuple
    w_local: tuple
    degree: int
    quad: tuple = ()

    @property
    def tq(self) -> np.ndarray:
        """All quadrature points in t (extended precision), element by element."""
        return np.concatenate([q.t for q in self.quad])

    @property
    def size(self) -> int:
        return len(self.t)

    method = "spectral"
    extended = True
    interfaces = ()


@dataclass(frozen=True)
class Quadrature:
    """The Gauss-Legendre points ``t`` of one element (extended precision). The operator takes the
    weights and the maps from nodal values from the reference element (:func:`_reference_quadrature`,
    scaled there: :mod:`boundkit.equations.variational`); forming them per element as well, for every
    grid, took about 9 % of a Dirac-Coulomb solve, and only tests read them."""

    t: np.ndarray


@lru_cache(maxsize=256)
def _reference_quadrature(n: int, m: int):
    """m Gauss-Legendre points on [-1, 1] and the interpolation from the n-degree GLL nodes."""
    y64, wy = npleg.leggauss(m)
    x, _, D = gll(n)
    y = y64.astype(np.longdouble)
    diff = x[:, None] - x[None, :]
    np.fill_diagonal(diff, 1)
    lam = 1 / np.prod(diff, axis=1)
    dy = y[:, None] - x[None, :]
    hit = dy == 0
    dy[hit] = 1
    B = (lam[None, :] / dy) / np.sum(lam[None, :] / dy, axis=1)[:, None]
    rows = np.nonzero(hit.any(axis=1))[0]
    B[rows] = hit[rows].astype(np.longdouble)      # a point on a node: the nodal value itself
    Bt = B @ D
    for a in (y, B, Bt):
        a.flags.writeable = False
    return y, wy, B, Bt


def with_quadrature(grid: ElementGrid, quad_points) -> ElementGrid:
    """``grid`` with its Gauss-Legendre point counts, one per element: the nodes, differentiation matrices
    and weights are kept, the quadrature is (re)built from the reference points mapped onto each element
    (its ends are its first and last nodes, the edges it was built on). Integrals of the quadratic form are
    done on these points, not on the nodes: the integrands carry w(r)^2 ~ r^(2 gamma), which varies
    exponentially in t, and a rule with more points keeps them exact enough that no spurious mode appears
    (:func:`boundkit.ladder.make_operator` chooses the counts)."""
    t = grid.t_ext
    return replace(grid, quad=tuple(
        Quadrature(t=t[s0] + (_reference_quadrature(s1 - s0, int(m))[0] + 1) * ((t[s1] - t[s0]) / 2))
        for (s0, s1), m in zip(grid.elements, quad_points)))


def element_grid(edges, degree) -> ElementGrid:
    """GLL spectral elements between consecutive ``edges`` (ascending t), without a quadrature
    (:func:`with_quadrature` adds it).

    ``degree`` is one int for every element or a sequence with one per element.
    """
    edges = [np.longdouble(e) for e in edges]
    m = len(edges) - 1
    degrees = [int(degree)] * m if np.ndim(degree) == 0 else [int(d) for d in degree]
    if len(degrees) != m:
        raise ValueError(f"degree: need one degree per element ({m}), got {len(degrees)}")
    N = sum(degrees) + 1
    t_ext = np.empty(N, dtype=np.longdouble)
    w = np.zeros(N)
    els, Ds, wl = [], [], []
    s = 0
    for e, n in enumerate(degrees):
        x, wref, Dref = gll(n)
        a, b = edges[e], edges[e + 1]
        half = (b - a) / 2
        t_ext[s:s + n + 1] = a + (x + 1) * half
        t_ext[s] = a
        we = wref * float(half)
        w[s:s + n + 1] += we
        els.append((s, s + n))
        Ds.append(Dref / half)
        wl.append(we)
        s += n
    t_ext[-1] = edges[-1]
    degree = max(degrees)
    t = t_ext.astype(float)
    return ElementGrid(t=t, t_ext=t_ext, r=np.exp(t), w=w, elements=tuple(els), D=tuple(Ds),
                       w_local=tuple(wl), degree=degree)
