"""Level location by counting: every level of a channel, in order, none skipped.

The argument
------------
At a fixed energy E the radial operator T(E) of every equation here is a
self-adjoint Sturm-Liouville operator, and its quadratic form (see
:mod:`boundkit.equations.variational`) is discretized as a symmetric matrix
K(E) with a positive diagonal mass matrix M. Two facts make counting possible:

1. dK/dE is negative definite (dp/dE <= 0 and dq/dE < 1 in the bound-state
   window), so every eigenvalue mu_j(E) of the pencil (K(E), M) decreases
   strictly as E rises (for Klein-Gordon, whose dK/dE is negative definite only
   where E + m c^2 - V > 0, the window starts at its particle floor, where K(E)
   is positive definite: above it every root is a particle level and is counted
   once, below it every root is an antiparticle level; :func:`particle_floor`);
2. a level is an energy where K(E) is singular, and the j-th level (j nodes)
   is where mu_j crosses zero.

Hence N(E), the number of levels below E, equals the number of negative
eigenvalues of K(E). By Sylvester's law of inertia that number does not change
under a congruence (a scaling of rows and columns, or an elimination), so it
is counted by static condensation of the element interiors
(:meth:`SymmetricOperator.count_negative`). The counting function gives

* how many levels lie below the threshold (``bound_count``): N(threshold);
* a certificate for a set of computed levels: when m distinct roots of
  det K(E) = 0 lie below an energy E+ and N(E+) = m, they are exactly the m
  lowest levels, none skipped and none spurious;
* a bracket for the k-th level when the certificate fails: bisection on N
  between energies with k and k + 1 levels below (starting from one count
  between each two levels already found: those it confirms are kept), closed
  to 1e-6 relative, then Newton's method from its middle. Each count is one
  pass of static condensation over the elements (small eigenproblems of the
  element interiors); Brent's method on mu_k, a dense eigenvalue solve a
  step, is the last resort.

Fast path: the pencil (K(E0) + E0 M, M), with M lumped on the nodes so that it
is one banded symmetric eigenproblem, gives every level at once for the
Schrodinger equation (K is linear in E) and good first guesses for the
energy-dependent Klein-Gordon and Dirac operators (a vector Coulomb tail's
first rung starts from the point-Coulomb levels instead, checked by one count,
see :func:`boundkit.solver._coulomb_seed`); each guess is refined by
Newton's method with residuals in extended precision
(:func:`boundkit.eigen.refine`) and then certified by one count. Guesses
never decide whether a level exists; the count does. A guess from which Newton's
method leaves for a neighbouring level (it passes a neighbouring guess, or lands
on a level already found) is replaced by the level of its own index, pinned by
counting (:func:`_pinned`: a bracket with j and j + 1 levels below its ends,
closed to 1e-6 relative, Newton's method from its middle).
Without that, the lower rungs of the ladder, which are not counted, could carry
a repeated level up to the last one, where only bisection on the count mended it.
A level the count cannot vouch for (Newton's level within the count's own rounding of an end of its
bracket: two levels closer than that, a tunnelling doublet) is solved with the cluster around it on
the cluster's own subspace (:func:`_told_apart`), so the levels of a cluster come back in order.

The count is exact for the discrete problem. It equals the count of the
continuous problem once the mesh resolves the levels (the same condition as
for their energies, checked by the resolution ladder), and once the box
[r_min, r_max] holds them (r_max is fitted to the highest level sought).
"""
from __future__ import annotations

import logging
import math
from dataclasses import dataclass
from typing import NamedTuple

import numpy as np
import scipy.linalg as sla

from .eigen import Refined, energy_rounding, refine
from .equations.variational import SymmetricOperator

__all__ = ["count_below", "locate_levels", "certify_levels", "particle_floor", "peak_floor", "Floor", "Located"]

log = logging.getLogger(__name__)

_SAME = 1e-12       # two energies of one channel closer than this (relative) are one level
_PINNED = 1e-13     # relative width to which a level is pinned by counting alone (:func:`_pinned`)


def count_below(op: SymmetricOperator, E: float) -> int:
    """N(E): the number of levels of the discrete problem below E (the inertia of K(E), counted by
    static condensation: :meth:`SymmetricOperator.count_negative`)."""
    return op.count_negative(E)


class Floor(NamedTuple):
    """A Klein-Gordon particle floor (:func:`particle_floor`)."""

    energy: float       # E*
    count: int          # N(E*): 0, or particle levels merged with their antiparticle partners
    peak: float | None = None   # where the lowest eigenvalue of K(E) peaks, when that was looked for

    @property
    def narrow(self) -> bool:
        """Whether the grids missed the floor (or it is not there) and the peak was looked for: a pair of
        roots close to their merge."""
        return self.peak is not None


def particle_floor(op: SymmetricOperator, lo: float, top: float, start: float) -> Floor:
    """Klein-Gordon: an energy E* in [lo, top] where K(E*) is positive definite (N(E*) = 0), tried at
    ``start`` first, then on grids over [lo, top] zoomed four times on the smallest count, then (when
    none had N = 0) where the lowest eigenvalue of K(E) peaks (:func:`_lowest_peak`: between a particle
    level and its antiparticle partner close to their merge the window is narrower than the grids' step);
    (E*, N(E*), whether the grids missed it), with the smallest count found when no such energy is (a
    particle level merged with its antiparticle partner: their energies are complex, and that eigenvalue
    of K(E) stays negative across the window).

    Notes
    -----
    With the total energy W = E + m c^2, K(E) = A - D^2 / (2 m c^2) where A (kinetic, centrifugal and
    (m c^2 + S)^2 / (2 m c^2) terms) does not depend on E and D = W - V: for every vector u,
    u^T K u is a concave parabola in E. Where u^T K(E*) u > 0, a root E_k of it above E* is its upper
    root, where the parabola falls: u^T dK/dE u < 0, the charge int (W - V) P^2 dr is positive (a
    particle level); below E* it is the lower root (negative charge, an antiparticle level). So when
    K(E*) is positive definite, every root above E* is a particle level and N(E) (E > E*) counts
    them exactly: the counting argument of this module holds on (E*, threshold) although dK/dE is not
    negative definite there (a deep vector well's particle 1s lies below W = 0), and no root lies in
    the interval where K is positive definite. With a Lorentz-scalar potential alone (V = 0) every
    particle level W has its mirror -W (the antiparticle) in the window (-2 m c^2, 0), and E* is W = 0.
    """
    best = (count_below(op, start), start)
    a, b = lo, top
    for _ in range(4):
        if best[0] == 0:
            break
        h = (b - a) / 33
        for E in np.linspace(a, b, 34)[1:-1]:
            best = min(best, (count_below(op, float(E)), float(E)))
            if best[0] == 0:
                break
        a, b = max(lo, best[1] - h), min(top, best[1] + h)
    if best[0] == 0:
        return Floor(best[1], best[0])
    # the grid missed: a particle level and its antiparticle partner close to their merge leave a window
    # narrower than its step (a square well 1e-5 below its merge depth: 5.5e-3 MeV of 1 MeV)
    return peak_floor(op, lo, top, best[1], best[0])


def peak_floor(op: SymmetricOperator, lo: float, top: float, start: float, count: int | None = None) -> Floor:
    """The particle floor where the lowest eigenvalue of K(E) peaks (:func:`_lowest_peak`), or ``start``
    (whose count is ``count`` when the caller has it) unless the count at the peak is smaller (or 0);
    ``narrow`` set. Without ``count``, ``start`` is the peak of a coarser grid of the same box, and the
    search starts around it."""
    n0 = count_below(op, start) if count is None else count
    E = _lowest_peak(op, lo, top, near=None if count is not None else start)
    n = count_below(op, E)
    return Floor(E, n, E) if n < n0 or n == 0 else Floor(start, n0, E)


_PEAK_NOISE = 4.0     # rounding units within which the sign of the peak is not told (observed: 0.3)


def peak_undecided(op: SymmetricOperator, E: float) -> bool:
    """Whether the peak value of the lowest eigenvalue of the scaled K(E) (:func:`_lowest_peak`) at E lies
    within the rounding of K itself along its eigenvector: its sign, and so the count N(E) there, is the
    rounding's, not the discrete problem's.

    Notes
    -----
    With u the unit eigenvector of D K(E) D (:meth:`SymmetricOperator.lowest`), the value is the Rayleigh
    quotient phi = u^T D K D u and its rounding u_r |u|^T |D K D| |u| (u_r = 2^-52: K is assembled in double,
    and the count's factorization is backward stable with errors of that size entry by entry). A
    Klein-Gordon pair near its merge has phi of about 1.7e-5 (V0_m - V0) / V0_m on a square well's far box
    (R = 100 fm), rounding 5.6e-16: within 3e-11 of the merge depth its sign is rounding, and the count
    there merged a 1s 1e-13 .. 3e-12 below the merge (status 'ok', no level). Undecided here means within
    _PEAK_NOISE rounding units (the largest seen at rounding, 0.3). A dense eigen-solve's own value of the
    eigenvalue carries the rounding of the whole matrix (u_r ||D K D||, 1e-12 here) and cannot tell it.
    """
    K = op.scaled_symmetric(E)
    u = sla.eigh(K, subset_by_index=[0, 0], driver="evx", check_finite=False)[1][:, 0]
    phi = float(u @ K @ u)
    a = np.abs(u)
    return abs(phi) <= _PEAK_NOISE * np.finfo(float).eps * float(a @ np.abs(K) @ a)


def _lowest_peak(op: SymmetricOperator, lo: float, top: float, near: float | None = None) -> float:
    """The energy in [lo, top] where the lowest eigenvalue phi(E) of the scaled K(E) is largest.

    Notes
    -----
    For every vector u, u^T K(E) u is a concave parabola in E (:func:`particle_floor`), so phi(E), the
    minimum of u^T D K(E) D u over unit u (D = diag(sqrt(row_scale)), a congruence: the count is that of
    K), is concave; K(E) is positive definite somewhere in the window exactly when its maximum is
    positive. Its slope v^T dK/dE v (v = D u, u the lowest eigenvector) falls through zero at the
    maximum: found by regula falsi on that sign change (Illinois: a bracket end kept twice has its slope
    halved; a step that does not halve the bracket is followed by a halving), one dense eigen-solve of the
    lowest pair a step (:meth:`SymmetricOperator.lowest`). ``near``: the peak of a coarser grid, tried
    first in a narrow bracket.
    """
    def slope(E):
        return op.slope_form(E, op.lowest(E)[1])

    a, b, sa, sb = lo, top, None, None
    if near is not None:        # a bracket around the peak of a coarser grid, widened 100 times a try
        for width in (1e-6, 1e-4, 1e-2):
            a, b = max(lo, near - width * (top - lo)), min(top, near + width * (top - lo))
            sa, sb = slope(a), slope(b)
            if sa > 0 > sb:
                break
        else:
            a, b, sa, sb = lo, top, None, None
    if sa is None:
        sa, sb = slope(a), slope(b)
        if sa <= 0:
            return a
        if sb >= 0:
            return b
    # the peak is wanted to 1e-10 (relative): near it the slope is rounding (a square well 1e-11 past its
    # merge depth: its sign flipped at 1e-20 between energies 1e-12 apart), and a pair's window that narrow is far
    # below what its roots can be told apart by (the estimate of solver._near_merge)
    close = 1e-10 * max(abs(lo), abs(top))
    side, halve = 0, False
    for _ in range(80):
        width = b - a
        E = 0.5 * (a + b) if halve else b - sb * (b - a) / (sb - sa)
        if not a < E < b:
            E = 0.5 * (a + b)
        s = slope(E)
        if s == 0:
            return E
        if s > 0:
            a, sa = E, s
            if side > 0:
                sb *= 0.5
            side = 1
        else:
            b, sb = E, s
            if side < 0:
                sa *= 0.5
            side = -1
        if b - a <= close:
            break
        halve = b - a > 0.5 * width     # a slope of another mode far from the peak: halve next
    return 0.5 * (a + b)


def _pencil(op: SymmetricOperator, E0: float) -> np.ndarray:
    """All eigenvalues of (K(E0) + E0 M, M) with M lumped on the nodes (a banded symmetric
    eigenproblem, :meth:`SymmetricOperator.lumped_pencil_band`), or of the consistent pencil
    (dense) when the nodal mass is not positive; ascending. They are guesses: Newton's method refines
    each on the grid, with a vector from inverse iteration, and the count certifies the result."""
    low = op.lumped_pencil_band(E0)
    if low is not None:
        try:
            lam = sla.eig_banded(low, lower=True, eigvals_only=True, check_finite=False)
            if np.all(np.isfinite(lam)):
                return lam
        except np.linalg.LinAlgError:
            pass
    A = op.symmetric(E0) + E0 * op.M
    return sla.eigh(A, op.M, eigvals_only=True, driver="gv", check_finite=False)


def _mu(op: SymmetricOperator, E: float, k: int) -> float:
    """mu_k(E): the k-th eigenvalue of (K(E), M); it falls through zero at the k-th level."""
    lam = sla.eigh(op.symmetric(E), op.M, eigvals_only=True, driver="gv", check_finite=False)
    return float(lam[k])


@dataclass(frozen=True)
class Located:
    """Levels of one channel on one grid, certified by a count (or not yet checked).

    ``energies`` and ``vectors`` hold the lowest ``len(energies)`` levels in
    order (index = node count); ``count_top`` is N(E) at ``E_top`` (the
    certificate); ``bound_count`` is the number of levels between the bottom
    and the top of the window on this grid, or None when the window has no
    finite top (or nothing was counted); ``fallback`` counts levels that needed
    bisection; ``certified`` says whether the count matched (``checked`` whether
    it was asked at all: the ladder counts only on the rung it reports);
    ``offset`` is N(bottom of the window): states below it (a Dirac level that
    has dived into the lower continuum) shift the node count of every level
    above by that much. ``next_energy`` is the guess of the level above the last
    one (it places ``E_top``); ``reseeded`` counts guesses that Newton's method took to a neighbouring
    level and that were replaced (:func:`_pinned`).
    """

    energies: tuple
    vectors: tuple
    E_top: float
    count_top: int
    bound_count: int | None
    fallback: int
    certified: bool
    offset: int = 0
    checked: bool = True
    next_energy: float = math.inf
    reseeded: int = 0


def _bisect_level(op, k: int, lo: float, hi: float, scale: float, width: float = 0.0,
                  counts: tuple[int, int] | None = None) -> tuple[float, float, int, int]:
    """Bracket the k-th level between energies with k and k + 1 levels below (one count a step);
    with ``width``, go on closing the bracket to that relative width. ``counts`` are N(lo), N(hi)
    when the caller has them. Returns (a, b, N(a), N(b))."""
    a, b = lo, hi
    ca, cb = counts if counts is not None else (count_below(op, a), count_below(op, b))
    for _ in range(120):
        if ca == k and cb == k + 1 and (not width or b - a <= width * max(abs(a), abs(b))):
            break
        if b - a <= 1e-13 * max(abs(a), abs(b), scale):
            break
        # bisect in log |E| when the window spans many decades below zero
        mid = -math.sqrt(a * b) if (a < 0 and b < 0 and a / b > 16) else 0.5 * (a + b)
        c = count_below(op, mid)
        if c <= k:
            a, ca = mid, c
        else:
            b, cb = mid, c
    return a, b, ca, cb


def _level_in_bracket(op, k: int, a: float, b: float):
    """The k-th level inside [a, b] (N(a) = k, N(b) = k + 1): the bracket closed by counting, then
    Newton's method from its middle (:func:`_closing`); only when that leaves the bracket, Brent on
    mu_k (one dense eigen-solve a step, about nine a level: seconds a level on a grid of a thousand
    unknowns), then Newton."""
    from scipy.optimize import brentq   # lazy: scipy.optimize is slow to import

    ref, (a, b, _, _) = _closing(op, k, a, b, (k, k + 1))
    if ref is not None:
        return ref.energy, ref.vector
    fa, fb = _mu(op, a, k), _mu(op, b, k)
    if fa * fb < 0:
        E = brentq(lambda E: _mu(op, E, k), a, b, xtol=1e-14 * max(abs(a), abs(b)), maxiter=200)
    else:
        E = 0.5 * (a + b)
    ref = refine(op, E, _inverse_iteration(op, E))
    if ref.converged and a <= ref.energy <= b:
        return ref.energy, ref.vector
    return None


def _closing(op, k: int, a: float, b: float, counts: tuple[int, int], rtol: float | None = None,
             slack: float = 0.0, accept=None):
    """The k-th level in the bracket [a, b] by :func:`_closed`, first at 1e-6 relative and, when
    Newton's method leaves that bracket (or ``accept`` turns its level down), on to _PINNED: the same
    bisection, continued. Returns (the level or None, the last bracket and its counts)."""
    for width in (1e-6, _PINNED):
        ref, bracket = _closed(op, k, a, b, counts, width, rtol, slack)
        if ref is not None:
            ref = _told_apart(op, k, ref, bracket[:2])
        if ref is not None and (accept is None or accept(ref)):
            return ref, bracket
        a, b, ca, cb = bracket
        if (ca, cb) != (k, k + 1):
            break
        counts = (ca, cb)
    return None, bracket


def _closed(op, k: int, a: float, b: float, counts: tuple[int, int], width: float,
            rtol: float | None = None, slack: float = 0.0):
    """Close the bracket [a, b] of the k-th level by counting to ``width`` relative, then Newton's
    method from its middle with a vector from inverse iteration there. Returns (the refined level,
    or None when Newton's method does not converge within the bracket widened by ``slack`` relative;
    the closed bracket and its counts)."""
    a, b, ca, cb = _bisect_level(op, k, a, b, 0.0, width=width, counts=counts)
    mid = 0.5 * (a + b)
    ref = refine(op, mid, _inverse_iteration(op, mid, steps=4), rtol=rtol)
    s = slack * abs(mid)
    if ref.converged and not a - s <= ref.energy <= b + s and hasattr(op, "energy_noise"):
        # the count's own rounding (in double precision) can place the bracket that far off: a level 1e-8
        # of its well's depth below the threshold was 1.7e-12 hartree outside a bracket of 1e-13
        # relative, and never found (:func:`boundkit.eigen._stalled_at_noise`)
        s = max(s, energy_rounding(op, ref.vector))
    return (ref if ref.converged and a - s <= ref.energy <= b + s else None), (a, b, ca, cb)


_CLUSTER = 1e-6     # relative half-width around a level within which its cluster is counted (:func:`_told_apart`)
_CLUSTER_MAX = 4    # largest cluster solved on its own subspace


def _told_apart(op, k: int, ref, bracket: tuple[float, float]):
    """Newton's level in a bracket closed by counting, checked where the count cannot vouch for it.

    A count in double precision places a level only to its rounding, R = NOISE_ULPS 2^-53
    sum |K_ii| y_i^2 / y^T M y (:func:`boundkit.eigen.energy_rounding`; 7e-11 hartree for a level at
    -11.7 hartree in a square well of depth 50). When Newton's level lies within R of an end of the
    bracket (or beyond it), the bracket does not tell it from a neighbour that close, and Newton's
    method cannot either: between two levels closer than the guess (a tunnelling doublet of two wells
    tuned to one level, 4.4e-12 hartree apart) it stops after one step anywhere between them. Then
    the cluster around it is counted well outside that noise (at E -+ 1e-6 |E|) and solved on its own
    subspace (:func:`_cluster_levels`, residuals in extended precision): the cluster's level of index
    k replaces Newton's (whose level may be either of the pair; the cluster's are in order). Where
    that is not possible (more than _CLUSTER_MAX levels, an operator without extended residuals), the
    level's estimate is kept at least R (``op.noise_stalls``, read by :func:`boundkit.solver._with_residual_floor`): its
    error is then the count's.
    """
    noise = getattr(op, "noise_stalls", None)
    R = energy_rounding(op, ref.vector)
    if noise is None or R is None:
        return ref
    a, b = bracket
    E = ref.energy
    if a + R < E < b - R:       # the count vouches for it: no other level in reach of that noise
        return ref
    D = max(_CLUSTER * abs(E), 64 * R)
    j0 = count_below(op, E - D)
    m = count_below(op, E + D) - j0
    if m <= 1 or not j0 <= k < j0 + m:
        return ref
    got = _cluster_levels(op, E, m) if m <= _CLUSTER_MAX else None
    if got is None:
        noise[float(E)] = max(noise.get(float(E), 0.0), R)
        return ref
    energies, vectors, rounding = got
    i = k - j0
    noise[float(energies[i])] = rounding[i]
    return Refined(float(energies[i]), vectors[i], ref.iterations, True, 0.0)


def _cluster_levels(op, E0: float, m: int, steps: int = 3):
    """The m levels of a cluster near E0 by Rayleigh-Ritz on their own subspace: block inverse
    iteration with K(E0) (their components grow by the spacing to the other levels over their own
    distance from E0, 1e12 a step for a doublet), then the m x m pencil (Z^T K(E) Z, Z^T M Z) with
    K(E) Z in extended precision, its i-th root in E by Newton's method on the i-th eigenvalue (one
    step for the Schrodinger equation, where K is linear in E). Returns (energies, vectors,
    roundings: :func:`boundkit.eigen.energy_rounding` in extended precision of each vector), or
    None for an operator without extended-precision residuals or when the roots do not settle."""
    scale = getattr(op, "_scale_ext", None)
    if scale is None or not getattr(op.grid, "extended", False):
        return None
    rng = np.random.default_rng(0)
    Z = rng.standard_normal((op.n - 1, m))
    for _ in range(steps):
        Z = np.column_stack([op.solve(E0, op.row_scale * op.mass_apply(z)) for z in Z.T])
        MZ = np.column_stack([op.mass_apply(z) for z in Z.T])
        try:
            C = np.linalg.cholesky(Z.T @ MZ)
        except np.linalg.LinAlgError:
            return None
        Z = sla.solve_triangular(C, Z.T, lower=True).T          # M-orthonormal columns
    B = Z.T @ np.column_stack([op.mass_apply(z) for z in Z.T])
    Zl = Z.astype(np.longdouble)
    energies, vectors = [], []
    for i in range(m):
        E = float(E0)
        for it in range(12):
            KZ = np.column_stack([op.residual(E, z) / scale for z in Zl.T])
            A = np.asarray(Zl.T @ KZ, dtype=float)
            mu, c = sla.eigh(0.5 * (A + A.T), B)
            v = Z @ c[:, i]
            slope = op.charge_ratio(E, v)
            if not slope > 0:
                return None
            dE = float(mu[i]) / slope
            E += dE
            if abs(dE) <= 1e-17 * abs(E) or (it == 1 and getattr(op.eq, "energy_linear", False)):
                break
        else:
            return None
        energies.append(E)
        vectors.append(v / v[np.argmax(np.abs(v))])
    rounding = [energy_rounding(op, v, True) for v in vectors]
    return energies, vectors, rounding


def _inverse_iteration(op: SymmetricOperator, E: float, steps: int = 2) -> np.ndarray:
    """Eigenvector guess of the level near E: inverse iteration with K(E) (no eigen-solve)."""
    v = np.ones(op.n - 1)
    for _ in range(steps):          # rows scaled (the raw ones span decades); banded LU, kept for Newton
        v = op.solve(E, op.row_scale * op.mass_apply(v))
        v /= np.max(np.abs(v))
    return v


def _fits(ref, lo: float, hi: float, below) -> bool:
    """Whether Newton's method converged inside the window and above the levels already found, by
    more than _SAME relative (Newton's method lands on one level from two starts within about
    1e-13; two levels of wells that barely couple can be 1e-11 apart and more)."""
    E = ref.energy
    return bool(ref.converged and lo < E < hi) and (not below or E - below[-1] > _SAME * abs(E))


def _stayed(ref, lam, i: int, lo: float, hi: float, below) -> bool:
    """Whether Newton's method, started at the guess lam[i], :func:`_fits` and did not pass a
    neighbouring guess (else it may have gone to a neighbouring level). Ending merely nearer a
    neighbour's guess than its own is allowed: a deep guess far off (a Klein-Gordon 1s at twice its
    energy) is brought home that way."""
    E = ref.energy
    return (_fits(ref, lo, hi, below) and (i == 0 or E > lam[i - 1])
            and (i + 1 >= len(lam) or E < lam[i + 1]))


def _pinned(op: SymmetricOperator, k: int, E: float, lo: float, hi: float, rtol: float | None, accept=None):
    """The level of index k (in the grid's whole spectrum) near E, pinned by counting: a bracket
    with k and k + 1 levels below its ends, closed by bisection to 1e-6 relative and then, if need
    be, to _PINNED (:func:`_closing`), Newton's method from its middle with a vector from inverse
    iteration there. None when no such bracket is found near E, or Newton's method leaves it (or
    ``accept`` turns its level down) at both widths.

    Notes
    -----
    This re-seeds a guess that Newton's method took to a neighbouring level: a few tens of counts,
    each one pass of static condensation (it replaced Newton's method on the guess's own pencil eigenvalue,
    one dense eigenvalue solve a step: 13-17 s a rung for 117 levels on 700-1000 unknowns). The
    second width is for a level that Newton's method cannot tell from its neighbour even then: two
    wells that barely couple give two levels closer than the guesses are accurate (5e-10 hartree
    apart, and less, near an avoided crossing), and from either guess Newton's method goes to the
    same one. The count separates any two levels further apart than the bracket; the middle of the
    bracket is then so much nearer its own level that inverse iteration isolates it.
    """
    width = max(1e-6 * abs(E), 1e-300)
    a, b = E - width, E + width
    for _ in range(40):
        ca = count_below(op, max(a, lo))
        if ca <= k or a <= lo:
            break
        a = E - 4 * (E - a)
    for _ in range(40):
        cb = count_below(op, min(b, hi))
        if cb >= k + 1 or b >= hi:
            break
        b = E + 4 * (b - E)
    a, b = max(a, lo), min(b, hi)
    if not ca <= k < cb:
        return None
    return _closing(op, k, a, b, (ca, cb), rtol, slack=10 * _PINNED, accept=accept)[0]


def locate_levels(op: SymmetricOperator, want: int | None, lo: float, hi: float, E0: float,
                  scale: float, guesses=None, top_guess: float | None = None,
                  sure: bool = True, certify: bool = True, offset: int = 0,
                  rtol: float | None = None, guess_lo: float | None = None) -> Located:
    """The lowest ``want`` levels (all below ``hi`` when None) of one grid.

    ``lo``, ``hi``: the bound-state window (hi may be inf for confining
    potentials); ``E0``: the energy at which the guessing pencil is built;
    ``scale``: a typical level spacing (for brackets); ``guesses``: energies
    of the same levels from a coarser grid, used instead of the pencil (inverse
    iteration gives their vectors), with ``top_guess`` the energy that separated
    the last of them from the next level there. With ``certify`` the count
    certifies the result (:func:`certify_levels`); with ``sure`` False a failed
    certificate is reported, not mended by bisection (for quick passes that only
    size the box). Without ``certify`` nothing is counted (``offset``, the count
    below the window known from an earlier grid, labels the levels) and the
    result says ``checked=False``. ``rtol`` is Newton's stopping step
    (:func:`boundkit.eigen.refine`; default: to the rounding level). ``guess_lo``: guesses of the
    pencil down to there are tried (a Klein-Gordon window starts at its particle floor,
    :func:`particle_floor`, and the linearised pencil can put a deep 1s guess below it, at twice the
    level: Newton's method brings it home), while levels are accepted in (lo, hi) only.
    """
    bound = None
    if want is None:         # all levels: their number is the count below the top of the window
        certify = True
        offset, bound = _window_counts(op, lo, hi)
    if guesses is not None and len(guesses) and (want is None or len(guesses) >= want):
        g = np.asarray(guesses, dtype=float)
        nxt = top_guess if top_guess is not None else (hi if math.isfinite(hi) else g[-1] + 10 * scale)
        lam = np.concatenate((g, [2 * nxt - g[-1]]))
        first = offset              # index of the first guess in the whole spectrum of the grid
    else:
        lam = _pencil(op, E0)
        first = 0
    inside = np.nonzero((lam > (lo if guess_lo is None else min(lo, guess_lo))) & (lam < hi))[0]
    if want is None:
        if bound is None:
            raise ValueError("levels: this channel has infinitely many bound levels (a confining "
                             "potential or a Coulomb tail); ask for a number of levels")
        m = bound
    else:
        m = want if bound is None else min(want, bound)
    energies, vectors = [], []
    reseeded = 0
    for i in inside[:m]:
        # the pencil's vectors carry noise where the mass is tiny (near the origin); inverse
        # iteration at the pencil's energy gives a clean start for Newton
        ref = refine(op, lam[i], _inverse_iteration(op, lam[i]), rtol=rtol)
        if not _stayed(ref, lam, i, lo, hi, energies):
            # Newton left the guess's neighbourhood (a guess between two levels, as the linearised
            # pencil gives for the upper s levels of a heavy Klein-Gordon ion): the level of this index,
            # in a bracket closed by counting, then Newton on the grid again from its middle
            reseeded += 1
            ref = _pinned(op, first + i, float(lam[i]), lo, hi, rtol,
                          accept=lambda ref: _fits(ref, lo, hi, energies))
            if ref is None:
                break
        energies.append(ref.energy)
        vectors.append(ref.vector)
    nxt = float(lam[inside[m]]) if len(inside) > m else hi
    loc = Located(tuple(energies), tuple(vectors), _top(energies, nxt, hi), -1, bound, 0, False, offset,
                  checked=False, next_energy=nxt, reseeded=reseeded)
    return certify_levels(op, loc, m, lo, hi, scale, sure) if certify else loc


def certify_levels(op: SymmetricOperator, loc: Located, want: int, lo: float, hi: float, scale: float,
                   sure: bool = True, window: tuple[int, int | None] | None = None) -> Located:
    """Certify the levels of ``loc`` by counting; mend by bisection when the count disagrees (unless
    ``sure`` is False). Returns the certified :class:`Located`.

    First one count at E_top (above the last level found, below the next): when it equals the
    number of distinct levels found, they are the lowest ones and nothing lies below the window.
    Otherwise count below the window (states that dived), below its top (how many the box holds)
    and at E_top again, then bisect on the count where needed. ``window``: those first two counts, as
    :func:`_window_counts` gives them, when the caller has them; the first count then expects the
    known count below the window plus the levels found.
    """
    if want is not None and want > 0 and len(loc.energies) >= want:
        # one count is enough when it agrees: `want` distinct roots below E_top and exactly `want`
        # negative eigenvalues of K(E_top) (plus those known below the window) leave no level skipped
        # and none below the window
        below = 0 if window is None else window[0]
        energies = list(loc.energies[:want])
        nxt = loc.energies[want] if len(loc.energies) > want else loc.next_energy
        E_top = _top(energies, nxt, hi)
        if _distinct(energies) and E_top < hi and count_below(op, E_top) == want + below:
            return Located(tuple(energies), tuple(loc.vectors[:want]), E_top, want, None, 0, True, below,
                           checked=True, next_energy=nxt)
    offset, bound = _window_counts(op, lo, hi) if window is None else window
    m = want if bound is None else min(want, bound)
    energies, vectors = list(loc.energies[:m]), list(loc.vectors[:m])
    nxt = loc.energies[m] if len(loc.energies) > m else loc.next_energy
    E_top = _top(energies, nxt, hi)
    ok = len(energies) == m and _distinct(energies) and (m == 0 or count_below(op, E_top) == m + offset)
    fallback = 0
    if not ok and sure:
        energies, vectors, fallback = _by_bisection(op, m, lo, hi, scale, loc.energies, offset, loc.vectors)
        if energies:        # the level above the mended ones: the lowest found above them, if any
            nxt = min([E for E in loc.energies if E - energies[-1] > _SAME * abs(E)] + [loc.next_energy])
        E_top = _top(energies, nxt, hi)
        ok = len(energies) == m and (m == 0 or count_below(op, E_top) == m + offset)
        if len(energies) == m and m > 0 and not ok:
            # the lowest level found above is not the next one (a level lies between): move E_top
            # down towards the last level until the count agrees (at most 8 times), and take the
            # level above as lying twice as far (the rungs above place their E_top from it)
            for _ in range(8):
                E_top = energies[-1] + 0.25 * (E_top - energies[-1])
                nxt = 2 * E_top - energies[-1]
                ok = count_below(op, E_top) == m + offset
                if ok:
                    break
    return Located(tuple(energies), tuple(vectors), E_top, m if ok else -1, bound, fallback, ok, offset,
                   checked=True, next_energy=nxt)


def _distinct(energies) -> bool:
    """Whether ascending energies are distinct levels: neighbours more than _SAME (relative) apart."""
    return all(b - a > _SAME * max(abs(a), abs(b)) for a, b in zip(energies, energies[1:]))


def _window_counts(op: SymmetricOperator, lo: float, hi: float) -> tuple[int, int | None]:
    """(states below the window (dived), levels inside it, None when its top is infinite)."""
    offset = count_below(op, lo) if math.isfinite(lo) else 0
    return offset, count_below(op, hi) - offset if math.isfinite(hi) else None


def _top(energies, nxt: float, hi: float) -> float:
    """An energy above the last level and below the next one (for the certificate)."""
    if not energies:
        return hi
    last = energies[-1]
    if not math.isfinite(nxt) or nxt <= last:
        nxt = last + abs(last) * 1e-3 + 1e-12
    return last + 0.5 * (min(nxt, hi) - last) if math.isfinite(hi) or math.isfinite(nxt) else last


def _by_bisection(op, m: int, lo: float, hi: float, scale: float, guesses, offset: int = 0, vectors=None):
    """The sure path: every level of the window in a bracket by counting.

    Levels already found (``guesses``, with their ``vectors``) are kept where the count confirms
    them: one count between each two of them, and a found level alone between two points whose
    counts differ by one is the level of that index. Only the others are bracketed (starting from
    those points) and solved (:func:`_level_in_bracket`). Returns (energies, vectors, number of
    levels solved in a bracket)."""
    top = hi
    if not math.isfinite(top):
        top = (guesses[-1] if len(guesses) else 0.0) + 10 * scale
        while count_below(op, top) < m + offset:
            top += 10 * scale
    bottom = lo
    if not math.isfinite(bottom):
        bottom = -1e6 * scale
    # the found levels, distinct and inside (bottom, top), and a point between each two of them
    found = []
    for i, E in enumerate(guesses):
        if bottom < E < top and (not found or E - found[-1][0] > _SAME * abs(E)):
            found.append((float(E), None if vectors is None else vectors[i]))
    points = [0.5 * (x[0] + y[0]) for x, y in zip(found, found[1:])]
    if found:
        last = found[-1][0]
        points.append(min(last + 0.5 * (last - found[-2][0]), top) if len(found) > 1 else top)
    counts = [count_below(op, E) for E in points]
    energies, vectors_out = [], []
    a, ca = bottom, offset if math.isfinite(lo) else count_below(op, bottom)     # N(lo) is the offset
    fallback = 0
    for k in range(m):
        j = k + offset
        # the lowest point counted with this level below it; when N(a) = j and N(b) = j + 1, one
        # level lies in (a, b), and a level found there is that one
        b, cb = min(((p, c) for p, c in zip(points, counts) if p > a and c >= j + 1), default=(top, None))
        inside = [x for x in found if a < x[0] < b]
        if ca == j and cb == j + 1 and len(inside) == 1 and inside[0][1] is not None:
            energies.append(inside[0][0])
            vectors_out.append(inside[0][1])
            a, ca = b, cb
            continue
        a_k, b_k, _, count_b = _bisect_level(op, j, a, b, scale,
                                             counts=(ca, cb) if ca is not None and cb is not None else None)
        got = _level_in_bracket(op, j, a_k, b_k)
        fallback += 1
        if got is None:
            log.info("level %d: no root found in its bracket [%g, %g]", k, a_k, b_k)
            break
        energies.append(got[0])
        vectors_out.append(got[1])
        # the next level lies above b_k when the bracket closed (k + 1 levels below it): starting
        # there, not a fixed step above this one, keeps a partner 1e-10 away (two wells) in view
        if count_b == j + 1:
            a, ca = b_k, count_b
        else:
            a, ca = got[0] + 1e-10 * max(abs(got[0]), scale), None
    return energies, vectors_out, fallback
