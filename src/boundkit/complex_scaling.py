"""Exterior complex scaling of the radial coordinate, discretized by a finite-element DVR.

The radial coordinate is continued into the complex plane beyond a radius R0,

    z(x) = x                          for 0 <= x <= R0,
    z(x) = R0 + (x - R0) e^{i theta}  for x > R0,

and every radial equation is written in z (exterior complex scaling,
Simon, Phys. Lett. A 71, 211 (1979)). Outgoing waves e^{ikz} of a resonance
decay on the rotated segment while the solution on [0, R0] is untouched, so
the potential is needed at real radii only up to R0; beyond R0 it is its
analytic tail: -Z_inf/z for a Coulomb tail (Z_inf the potential's
``tail_charge``), 0 for a short-range potential, or a user's function of
complex z. Choosing R0 beyond every non-analytic feature (a nuclear radius, a
table's last point, where the potential has reached its tail to ~1e-13)
makes the continuation exact to that level. R0 = 0 with an analytic function
is uniform scaling r -> r e^{i theta} (Balslev and Combes, Commun. Math.
Phys. 22, 280 (1971)).

Discretization: a finite-element discrete variable representation (FEM-DVR)
with Gauss-Lobatto nodes on each element in x, each element mapped linearly to
its (real or rotated) segment of z (Rescigno and McCurdy, Phys. Rev. A 62,
032706 (2000)). With Lagrange functions chi_i on the nodes, the Galerkin
matrices are

    K_ij = int chi_i' chi_j' dz,   D_ij = int chi_i chi_j' dz,
    B_ij = int chi_i chi_j dz = w_i J_e delta_ij    (Lobatto quadrature),

with J_e = dz/dxi of the element (complex beyond R0). Local potentials are
diagonal, B_i V(z_i). The weak form carries the continuity of du/dz across
the kink at R0 by itself, and the matrices are complex symmetric (no
conjugation). The basis functions at r = 0 and at the outer end are dropped
(u = 0 there). Everything here is built in complex arithmetic and solved
densely with :func:`scipy.linalg.eig`.
"""
from __future__ import annotations

import math
from dataclasses import dataclass
from functools import lru_cache

import numpy as np
from numpy.polynomial import legendre as npleg

__all__ = ["ScaledMesh", "lobatto", "build_mesh", "element_edges"]


@lru_cache(maxsize=32)
def lobatto(order: int) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Gauss-Lobatto nodes, weights and differentiation matrix on [-1, 1].

    ``order`` + 1 nodes: the ends and the roots of P'_order. ``d[k, j]`` is
    f_j'(xi_k) for the Lagrange polynomial f_j of node j.
    """
    n = int(order)
    if n < 2:
        raise ValueError(f"order: a Lobatto element needs order >= 2, got {order}")
    c = np.zeros(n + 1)
    c[-1] = 1.0
    inner = np.sort(npleg.legroots(npleg.legder(c)).real)
    xi = np.concatenate(([-1.0], inner, [1.0]))
    pn = npleg.legval(xi, c)
    w = 2.0 / (n * (n + 1) * pn**2)
    d = np.zeros((n + 1, n + 1))
    for k in range(n + 1):
        for j in range(n + 1):
            if k != j:
                d[k, j] = pn[k] / (pn[j] * (xi[k] - xi[j]))
    d[0, 0] = -n * (n + 1) / 4.0
    d[n, n] = n * (n + 1) / 4.0
    return xi, w, d


@dataclass(frozen=True)
class ScaledMesh:
    """Nodes and Galerkin matrices of the FEM-DVR on the scaled contour.

    ``z`` holds the interior nodes (the ends r = 0 and r = r_max dropped),
    ``x`` their real coordinates, ``B`` the diagonal overlap, ``K`` and ``D``
    the second- and first-derivative matrices (see the module docstring),
    ``exterior`` marks the nodes beyond R0.
    """

    x: np.ndarray
    z: np.ndarray
    B: np.ndarray
    K: np.ndarray
    D: np.ndarray
    exterior: np.ndarray
    edges: tuple[float, ...]
    order: int
    r0: float
    theta: float

    @property
    def size(self) -> int:
        return len(self.z)


def _contour(x: np.ndarray, r0: float, theta: float) -> np.ndarray:
    x = np.asarray(x, dtype=float)
    return np.where(x <= r0, x + 0j, r0 + (x - r0) * np.exp(1j * theta))


def build_mesh(edges, order: int, r0: float, theta: float) -> ScaledMesh:
    """FEM-DVR matrices on elements with real ``edges`` (increasing, from 0).

    ``r0`` must be one of the edges: the contour bends there.
    """
    edges = np.asarray(edges, dtype=float)
    xi, w, d = lobatto(order)
    ne = len(edges) - 1
    n_all = ne * order + 1
    K = np.zeros((n_all, n_all), dtype=complex)
    D = np.zeros((n_all, n_all), dtype=complex)
    B = np.zeros(n_all, dtype=complex)
    x_all = np.zeros(n_all)
    for e in range(ne):
        a, b = edges[e], edges[e + 1]
        za, zb = _contour(np.array([a, b]), r0, theta)
        J = (zb - za) / 2.0                      # dz/dxi on this element
        sl = slice(e * order, e * order + order + 1)
        x_all[sl] = a + (xi + 1.0) * (b - a) / 2.0
        B[sl] += w * J
        # K_ij = sum_k w_k f_i'(xi_k) f_j'(xi_k) / J ; D_ij = w_i f_j'(xi_i)
        K[sl, sl] += (d.T * w) @ d / J
        D[sl, sl] += w[:, None] * d
    keep = slice(1, n_all - 1)
    x = x_all[keep]
    z = _contour(x, r0, theta)
    return ScaledMesh(x=x, z=z, B=B[keep], K=K[keep, keep], D=D[keep, keep],
                      exterior=x > r0, edges=tuple(float(v) for v in edges), order=int(order),
                      r0=float(r0), theta=float(theta))


def element_edges(r0: float, inner: float, h: float, breakpoints=()) -> np.ndarray:
    """Edges of the real segment [0, R0]: sizes doubling from ``inner`` up to ``h``, then even
    steps of at most ``h``; every breakpoint below R0 is an edge, and an ordinary edge closer
    to a breakpoint than a fifth of the local element size is dropped."""
    bps = sorted(float(p) for p in breakpoints if 0 < p < r0)
    if bps:
        inner = min(inner, bps[0] / 4)
    edges = [0.0]
    r = inner
    while r < min(h, r0):
        edges.append(r)
        r *= 2.0
    start = edges[-1]
    n = max(1, math.ceil((r0 - start) / h - 1e-9))
    edges += list(np.linspace(start, r0, n + 1)[1:])
    edges[-1] = r0
    grid = np.asarray(edges)
    for p in bps:
        k = int(np.searchsorted(grid, p))
        size = grid[k] - grid[k - 1]
        grid = grid[(np.abs(grid - p) > 0.2 * size) | (grid == 0.0) | (grid == r0)]
        grid = np.sort(np.append(grid, p))
    return grid
