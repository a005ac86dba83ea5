"""Finite differences of selectable order on a uniform grid in t = ln r.

Weights come from findiff: centred stencils of the requested accuracy order
inside, one-sided stencils of the same order near the ends. The derivative
matrix is sparse and banded, so large grids are cheap and the eigen backend
uses sparse shift-invert solves.

A potential edge narrower than the grid's spacing (a Woods-Saxon surface of
a/R = 1e-3) gets its nodes clustered: the grid is uniform in an analytic map
s(t) instead (:func:`clustered_nodes`), with d/dt = (ds/dt) d/ds.
"""
from __future__ import annotations

import math
from functools import lru_cache

import numpy as np
import scipy.sparse as sp

from .._checks import check_int
from ..mesh import LogMap
from .base import Discretization, Grid

__all__ = ["FiniteDifference", "DEFAULT_ORDER", "clustered_nodes", "derivative_matrix", "narrow_edges"]

DEFAULT_ORDER = 8     # accuracy order of the finite differences when none is asked for


@lru_cache(maxsize=16)
def _stencils(order: int):
    from findiff import coefficients  # lazy: findiff imports sympy (~1 s), paid only when a grid is built

    centre = coefficients(deriv=1, acc=order)["center"]
    half = len(centre["offsets"]) // 2
    width = order + 1
    edge = [coefficients(deriv=1, offsets=list(range(-i, width - i)))
            for i in range(half)]
    return centre, half, edge


def derivative_matrix(n: int, order: int) -> sp.csr_matrix:
    """First-derivative matrix on n uniform unit-spaced nodes (CSR; a new copy on each call).

    Rows closer than half a stencil to an end use one-sided stencils with
    ``order + 1`` points, so every row has accuracy ``order``. Built from index arrays (a loop over
    the rows cost 25 ms at n = 9600, once per level and size of a finite-difference solve), and kept
    for the last sizes asked for: every level of a solve meets the same few sizes.
    """
    return _derivative_matrix(n, order).copy()


@lru_cache(maxsize=16)
def _derivative_matrix(n: int, order: int) -> sp.csr_matrix:
    """:func:`derivative_matrix`, cached (callers take copies)."""
    centre, half, edge = _stencils(order)
    rows, cols, vals = [], [], []

    def add(i, offs, coef):
        rows.append(np.repeat(i, len(offs)))
        cols.append((i[:, None] + offs[None, :]).ravel())
        vals.append(np.tile(coef, len(i)))

    for i in range(min(half, n)):
        st = edge[i]
        add(np.array([i]), np.asarray(st["offsets"]), np.asarray(st["coefficients"], float))
    inner = np.arange(half, n - half)
    if inner.size:
        add(inner, np.asarray(centre["offsets"]), np.asarray(centre["coefficients"], float))
    for i in range(max(n - half, half), n):
        st = edge[n - 1 - i]
        add(np.array([i]), -np.asarray(st["offsets"]), -np.asarray(st["coefficients"], float))
    return sp.csr_matrix((np.concatenate(vals), (np.concatenate(rows), np.concatenate(cols))), shape=(n, n))


class FiniteDifference(Discretization):
    """Finite differences of accuracy ``order`` (even, 2..12) on a uniform t grid.

    ``size`` is the number of nodes. The error of a level falls like h^order
    with h the node spacing in t.
    """

    name = "finite-difference"
    family = "finite-difference"
    floor = 5e-13   # double-precision residuals; measured rounding spread up to ~2e-13
    first = 600
    cap = 12800

    def __init__(self, order: int = DEFAULT_ORDER) -> None:
        order = check_int("order", order, minimum=2)
        if order % 2 or order > 12:
            raise ValueError(f"order: finite-difference order must be even and between 2 and 12, got {order}")
        self.order = order

    def ladder(self) -> list[int]:
        sizes, n = [], self.first
        while n <= self.cap:
            sizes.append(n)
            n *= 2
        return sizes

    uses_edges = True
    aligns_jumps = True

    def grid(self, mesh: LogMap, size: int, breaks=(), edges=(), jumps=()) -> Grid:
        """Uniform grid in t, or in s(t) when some of ``edges`` are narrow (see :func:`clustered_nodes`).

        ``breaks`` are ignored (the order drops near a kink). ``edges``: (t_k, w_k) of the
        potential's edges, of width w_k in t; those on the mesh narrower than the spacing of the
        first size (:func:`narrow_edges`) get the nodes clustered so that the first size puts about
        :data:`POINTS_PER_WIDTH` of them across each. ``jumps``: radii where the potential jumps;
        each that is such an edge gets a node of its own at every size (``Grid.on_jumps``), see
        :func:`clustered_nodes`.
        """
        size = check_int("size", size, minimum=4 * self.order)
        t_jumps = [math.log(b) for b in jumps if b > 0 and mesh.t_min < math.log(b) < mesh.t_max]
        features = narrow_edges(mesh, edges, self.first, t_jumps)
        on_jumps: tuple = ()
        if features:
            anchors = [t_k for t_k, _ in features if t_k in t_jumps]
            t, ds_dt, h = clustered_nodes(mesh.t_min, mesh.t_max, features, size, self.first, anchors)
            on_jumps = tuple(int(i) for i in np.flatnonzero(np.isin(t, anchors)))
            D = sp.diags(ds_dt) @ (derivative_matrix(size, self.order) / h)
            w = h / ds_dt
        else:
            t = np.linspace(mesh.t_min, mesh.t_max, size)
            h = t[1] - t[0]
            D = derivative_matrix(size, self.order) / h
            w = np.full(size, h)
        w[0] /= 2
        w[-1] /= 2
        return Grid(t=t, r=np.exp(t), D=D.tocsr(), D_ext=None, w=w, dense=False,
                    method=f"{self.name}", size=size, mesh=mesh, on_jumps=on_jumps)


def narrow_edges(mesh: LogMap, edges, n_first: int, t_jumps=()) -> tuple:
    """The (t_k, w_k) of ``edges`` on ``mesh`` narrower than the spacing of a uniform n_first-node
    grid in t there, for :func:`clustered_nodes`; an edge within 4 widths of one of ``t_jumps``
    (the t of a jump of the potential) is centred on it (the measured centre is a sample's t).

    Notes
    -----
    Edges within 4 widths of each other count once, the narrowest (a sharp Woods-Saxon surface
    declares graded breakpoints around R). A uniform grid spaces its 600 first nodes 2e-3 to 3e-2
    apart in t, so a nuclear surface of diffuseness 0.5 fm (w about a/R = 0.1) is no such edge, and a
    Woods-Saxon edge of a/R = 1e-3 is.
    """
    t_lo, t_hi = mesh.t_min, mesh.t_max
    spacing = (t_hi - t_lo) / (n_first - 1)
    merged: list = []
    for tk, wk in sorted(edges):
        if not (t_lo < tk < t_hi and wk < spacing):
            continue
        if merged and tk - merged[-1][0] < 4 * max(wk, merged[-1][1]):
            if wk < merged[-1][1]:
                merged[-1] = (tk, wk)
            continue
        merged.append((tk, wk))
    snapped = []
    for tk, wk in merged:
        near = [tj for tj in t_jumps if abs(tj - tk) <= 4 * wk]
        snapped.append((min(near, key=lambda tj: abs(tj - tk)) if near else tk, wk))
    return tuple(snapped)


POINTS_PER_WIDTH = 32    # nodes across each clustered feature at the finite-difference family's first size


def clustered_nodes(t_min: float, t_max: float, features, size: int, n_first: int, anchors=()):
    """Nodes in t clustered at narrow features: ``(t, ds/dt there, spacing h in s)``; a node sits on
    each feature centre t_k listed in ``anchors`` (jumps of the potential).

    Notes
    -----
    The nodes are uniform in

        s(t) = t + sum_k c_k w_k arctan((t - t_k) / w_k),   ds/dt = 1 + sum_k c_k / (1 + ((t - t_k)/w_k)^2),

    an analytic, increasing map, so finite differences in s keep their order for f(t(s)), and
    d/dt = (ds/dt) d/ds. The c_k depend on the features and on ``n_first`` only, never on ``size``:
    every size of a ladder refines the same map (its Richardson estimate needs that). They are set so
    that ``n_first`` nodes space about w_k / POINTS_PER_WIDTH apart at t_k: with S the length of the
    s interval, 1 + c_k = K S / ((n - 1) w_k) and S = L / (1 - K sum_k A_k / (n - 1)), A_k the
    arctan's rise over [t_min, t_max] (at most pi), L = t_max - t_min, K = POINTS_PER_WIDTH (less
    when the features would take more than half of the nodes). Measured on Woods-Saxon edges of
    a/R = 1e-3 and 1e-4 (proton, R = 5 fm, tol 1e-10): K = 8, 16 and 32 give estimates of 1.9e-10,
    4.4e-11 and 1.4e-11 for the worst level (a 4d level near threshold), against 'partial' with
    uniform nodes; K = 32 is kept.

    At a jump of the potential u'' jumps, and the finite differences converge at first order only,
    with a coefficient that swings with where the jump falls between two nodes (measured on square
    wells: E - E_exact ~ +-6e-4 h, its sign flipping as the sizes go). With a node on the jump
    (``anchors``), the same at every size, they converge at second order with a fixed coefficient,
    which the ladder's change between sizes measures. Each anchored c_k is then moved, per size, by
    what makes s(t_k) - s(t_min) a whole number of spacings (at most 2.5 % of c_k on the square and
    step wells measured, mostly less as the sizes grow): a linear system in those changes and the
    spacing.
    """
    tk = np.array([f[0] for f in features], dtype=float)
    wk = np.array([f[1] for f in features], dtype=float)
    n1 = n_first - 1
    A = np.arctan((t_max - tk) / wk) - np.arctan((t_min - tk) / wk)
    # at most half of the nodes go to the features (K sum A <= n1 / 2), the rest to the smooth parts
    K = min(float(POINTS_PER_WIDTH), 0.5 * n1 / float(np.sum(A)))
    S = (t_max - t_min) / (1.0 - K * float(np.sum(A)) / n1)
    ck = np.maximum(K * S / (n1 * wk) - 1.0, 0.0)
    if len(anchors):
        ck = _anchored(t_min, t_max, tk, wk, ck, size, [int(np.argmin(np.abs(tk - a))) for a in anchors])

    def s_of(t):
        return t + np.sum(ck * wk * np.arctan((t[..., None] - tk) / wk), axis=-1)

    def ds_dt(t):
        return 1.0 + np.sum(ck / (1.0 + ((t[..., None] - tk) / wk) ** 2), axis=-1)

    s_lo, s_hi = s_of(np.array([t_min, t_max]))
    s = np.linspace(s_lo, s_hi, size)
    lo, hi = np.full(size, t_min), np.full(size, t_max)
    for _ in range(64):                      # bisection: s(t) increases; 2^-64 of the interval
        mid = 0.5 * (lo + hi)
        below = s_of(mid) < s
        lo, hi = np.where(below, mid, lo), np.where(below, hi, mid)
    t = 0.5 * (lo + hi)
    t[0], t[-1] = t_min, t_max
    h = (s_hi - s_lo) / (size - 1)
    for j in anchors:
        i = int(round((float(s_of(np.array([j]))[0]) - s_lo) / h))
        if abs(t[i] - j) <= 1e-9 * (t_max - t_min):      # the bisection's node, to its last bits
            t[i] = j
    return t, ds_dt(t), h


def _anchored(t_min: float, t_max: float, tk, wk, ck, size: int, which: list) -> np.ndarray:
    """The c_k of :func:`clustered_nodes` with those of the features ``which`` changed so that their
    centres fall on nodes of a ``size``-node grid uniform in s; the c_k unchanged when no such change
    keeps every c_k positive (or two centres would share a node)."""
    def rise(t):            # s(t) - s(t_min) per unit c_k, feature by feature
        return wk * (np.arctan((t - tk) / wk) - np.arctan((t_min - tk) / wk))

    n1 = size - 1
    span = (t_max - t_min) + float(np.sum(ck * rise(t_max)))
    h0 = span / n1
    m = [round(((tk[j] - t_min) + float(np.sum(ck * rise(tk[j])))) / h0) for j in which]
    if len(set(m)) < len(m) or min(m) < 1 or max(m) > n1 - 1:
        return ck
    # unknowns: the changes d_j of the anchored c_j, and the spacing h
    M = np.zeros((len(which) + 1, len(which) + 1))
    rhs = np.zeros(len(which) + 1)
    for row, (t_row, count) in enumerate([(tk[j], mj) for j, mj in zip(which, m)] + [(t_max, n1)]):
        r = rise(t_row)
        M[row, :-1] = r[which]
        M[row, -1] = -count
        rhs[row] = -((t_row - t_min) + float(np.sum(ck * r)))
    try:
        d = np.linalg.solve(M, rhs)[:-1]
    except np.linalg.LinAlgError:
        return ck
    out = ck.copy()
    out[which] += d
    return out if np.all(out >= 0) else ck
