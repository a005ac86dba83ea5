"""All levels of a Schrodinger channel from one Lagrange-Laguerre matrix.

The fast path of the spectral family. For a Schrodinger channel whose
potential falls off like -Z_inf/r (Z_inf > 0) or faster (short range; its
bound levels are counted on the far box first, as for the elements), does not
confine and is regular at the origin, the regularized Lagrange-Laguerre mesh
(:mod:`boundkit.discretize.laguerre`) turns the radial operator into one real
symmetric N x N matrix

    H_ij = T_ij / (2 mu h^2) + [l(l+1) / (2 mu r_i^2) + q(r_i)] delta_ij,
    r_i = h x_i,   q = V + S (+ <l.s> U with a spin-orbit term and j given),

whose lowest eigenvalues are the lowest levels, all at once: a few dozen nodes
give the hydrogen levels to rounding. The procedure:

1. the scale h puts the last node where the highest level sought (taken
   hydrogen-like, n = levels + l, in the tail charge or the core's natural
   length) has decayed by far more than the digits asked for;
2. N climbs a short ladder that starts where the error is about tol; on
   each size one ``eigh`` gives the lowest levels, and the energies are their
   Rayleigh quotients v^T H v (the matrix has entries of size N^2, and the
   eigenvalues LAPACK returns carry errors of about 1e-16 ||H||, 1e-11 relative
   at N = 200 on hydrogen; the quotient of the same vectors is good to
   4e-15, as its error is quadratic in the vector's);
   a highest level that is not yet bound below N = 40 (too few nodes in its
   well) moves the climb on; from N = 40 it hands the channel over;
3. the stop rule and error estimate are those of the spectral elements: the
   last change between sizes meets tol and the one before it 100 tol;
4. the result is accepted only when (a) the k-th level has k nodes at the mesh
   points (Sturm), (b) the highest level has decayed by e^-30 at the last node
   (WKB, with its energy on the first size; otherwise the scale grows by 1.6
   and the climb starts again; a box where it has decayed by more than 48
   e-folds, as in a short-range nuclear well, is tightened once to where it
   has decayed by 32, and that size is solved again) and is not classically
   allowed anywhere beyond the last node (out to 1e8 times it: a well out
   there, which the elements' box would reach, could hold a deeper level),
   and (c) every level feels the
   potential on the nodes as it does on a fine grid: <V> from the mesh's Gauss rule and from the
   state's own element quadrature (below the first node too) differ by less
   than tol |E|. That difference is the first-order energy error of a potential
   with structure the nodes do not see (a finite nucleus, vacuum polarisation,
   a narrow well between two nodes); and (d) the potential has no structure
   narrower than the node spacing anywhere up to the last node (the element
   layout's shape measure, taken in r on the layout's own 4001-point sampling,
   :class:`_Probe`): (c) alone would accept a narrow well far out where the
   wanted levels have no amplitude, and skip the level the well binds (found
   by the property test in tests/test_laguerre.py). The probe measures the shape
   again close around each breakpoint the potential declares inside it (a jump,
   a kink, a nuclear surface, or a feature narrower than its terms' own
   sampling): a bump 1 hartree high and 0.01 bohr wide at r = 17.8 bohr fell
   between the 4001 samples (0.26 bohr apart there), and the 2p came back as
   the bare Coulomb level, 0.9 % off with an estimate of 6e-16 (found by the
   thorough property test). A ladder that stops
   converging geometrically, or whose rate would reach tol only beyond N = 200,
   also gives up. In each of these cases the caller solves the channel on
   spectral elements instead.

The levels are the lowest eigenvalues of one symmetric matrix (their index is
the count of eigenvalues below them), so none is skipped within the mesh;
checks (c) and (d) are what keep a feature from hiding between or below the
nodes.
Tolerances below 1e-13 also go to the elements (see :func:`applies`).

Wave functions are passed to the rest of boundkit as spectral-element states
(:class:`boundkit.results.RadialState`, family ``spectral``): the Laguerre
expansion is evaluated on Gauss-Lobatto nodes of elements in t = ln r whose
edges are the mesh points, so interpolation, observables and transitions work
on them unchanged.
"""
from __future__ import annotations

import logging
import math
from dataclasses import dataclass
from functools import lru_cache
from typing import NamedTuple

import numpy as np
import scipy.linalg as sla
from scipy.linalg import lapack

from .discretize.elements import gll
from .discretize.laguerre import cardinal_matrix, laguerre_mesh
from .equations.base import Sample, decay_steps
from .ladder import FLOOR, POTENTIAL_FLOOR, spectral_done, with_potential_floor
from .results import Level, RadialState
from .states import count_nodes_each, normalise, principal_n

__all__ = ["applies", "solve_laguerre", "study"]

log = logging.getLogger(__name__)

MAX_N = 200            # beyond this size the element family is cheaper
_DECAY_NEEDED = 30.0   # e-folds of decay of the highest level at the last node
_OVERSIZED = 1.5       # a box giving more than this times _DECAY_NEEDED + 2 is tightened (once)
_UNBOUND_CLIMB = 40    # below this size, a highest level not yet bound sends the climb on, not away
_SHAPE_PER_GAP = 4.0   # check (d): shape rate in r times node spacing (a smooth screened core: 3)
_STATE_DEGREE = 12     # degree of the state elements (between neighbouring nodes, and below the first)
_QUIET_DT = 4.0        # their longest length in t


TOL_MIN = 1e-13         # tighter tolerances go to the elements (see applies)


def applies(eq, pot, levels, gamma: float, tol: float) -> bool:
    """Whether the channel is one this path handles (the checks after the solve still decide).

    Tolerances below TOL_MIN go to the spectral elements: the Gauss approximation leaves
    wave-function quantities about 5e-14 (relative) off on hydrogen whatever N, measured on
    <r^-2> of the 4s, and two sizes that both sit on that floor would not see it. All levels
    (``levels`` None) are taken for a short-range potential, whose far-box count says how many.
    """
    return (eq.name == "schrodinger" and (levels is not None or pot.tail_charge == 0) and tol >= TOL_MIN
            and pot.tail_charge >= 0 and not pot.confining and gamma == eq.l + 1)


def _start_size(want: int, l: int, tol: float) -> int:
    """First size of the ladder: where the worst relative error is about tol.

    Notes
    -----
    Calibrated on hydrogen with the scale of :func:`solve_laguerre`: the smallest N from which the
    worst relative error of the lowest ``want`` levels stays below 10^-d was measured for l = 0, 1,
    2, 3, 5, 8, want = 1, 2, 3, 5, 8, 12, 20 and d = 2..12 (462 cases), and fitted by least squares
    in logarithms:

        ln N = 1.706 + 0.397 L + 0.161 M - 0.135 L M + 0.070 L^2 + 0.287 sqrt(d),
        L = ln want,  M = ln(l + 1),

    within -21 % and +31 % of every measured N. The start is the fit, rounded up, with d =
    -log10(tol) kept in [2, 12]. On hydrogen (l = 0, 1, 2, 4; 1 to 20 levels; tol 1e-6 to 1e-12,
    80 solves, best of 3 each) that was the fastest of the variants timed: 207 ms in total, against
    214 ms aiming at 10 tol, 218-222 ms at 1.1 times the fit and 243 ms with the previous start
    (every solve then took exactly three sizes). Other potentials converge differently; the ladder
    and its stop rule decide, and a start that is too small costs one more size, not accuracy.
    """
    L, M = math.log(want), math.log(l + 1)
    d = min(max(-math.log10(max(tol, 1e-16)), 2.0), 12.0)
    fit = math.exp(1.706 + 0.397 * L + 0.161 * M - 0.135 * L * M + 0.070 * L * L + 0.287 * math.sqrt(d))
    return max(6, want + 2, int(math.ceil(fit)))


@lru_cache(maxsize=256)
def _hydrogenic_reach(n: int, efolds: float) -> float:
    """Radius (in Bohr radii of the tail charge) where the hydrogen level n, l = 0, has decayed by
    e^-efolds beyond its outer turning point 2 n^2 (WKB).

    Notes
    -----
    With r = 2 n^2 s the WKB exponent is 2 n F(s), F(s) = sqrt(s (s - 1)) - ln(sqrt(s) + sqrt(s - 1)),
    the integral of sqrt(1 - 1/s) from 1; F is solved for by bisection.
    """
    target = efolds / (2 * n)

    def F(s):
        return math.sqrt(s * (s - 1)) - math.log(math.sqrt(s) + math.sqrt(s - 1))

    lo, hi = 1.0, 2.0
    while F(hi) < target:
        hi *= 2
    for _ in range(50):
        mid = 0.5 * (lo + hi)
        lo, hi = (mid, hi) if F(mid) < target else (lo, mid)
    return 2 * n * n * hi


def _ladder(n0: int) -> list[int]:
    sizes, n = [], n0
    while n <= MAX_N:
        sizes.append(n)
        n = int(math.ceil(n * 1.2)) + 1
    return sizes


@lru_cache(maxsize=64)
def _work_sizes(n: int) -> tuple[int, int]:
    """LAPACK's optimal workspace of dsyevr for an n x n matrix (the query scipy.linalg.eigh makes
    on every call)."""
    lwork, liwork, info = lapack.dsyevr_lwork(n, lower=1)
    if info != 0:
        raise np.linalg.LinAlgError(f"dsyevr workspace query failed (info = {info})")
    return int(lwork), int(liwork)


def _lowest(H: np.ndarray, want: int) -> tuple[np.ndarray, np.ndarray]:
    """The lowest ``want`` eigenpairs of the real symmetric H: scipy.linalg.eigh(H, subset_by_index,
    driver='evr') without its per-call checks and workspace query (same LAPACK call, same results)."""
    lwork, liwork = _work_sizes(H.shape[0])
    E, c, m, _, info = lapack.dsyevr(H, range="I", il=1, iu=want, lower=1, lwork=lwork, liwork=liwork)
    if info != 0 or m != want:
        return sla.eigh(H, subset_by_index=(0, want - 1), driver="evr")      # raises with LAPACK's message
    return E[:want], c[:, :want]


def _levels_on(eq, sample, mesh, h: float, want: int):
    """(energies, node values u_j normalised in r, the mesh radii, V + S there) of the lowest
    ``want`` levels."""
    x = mesh.x
    r = h * x
    s = sample(r)
    m = eq.mass
    q = eq.q(0.0, s)
    diag = eq.l * (eq.l + 1) / (2 * m * r**2) + q
    H = mesh.T / (2 * m * h * h)
    H.flat[:: mesh.n + 1] += diag
    E, c = _lowest(H, want)
    # Rayleigh quotients (see the module docstring)
    rq = np.einsum("ik,ik->k", c, H @ c)
    u = c / np.sqrt(h * mesh.weights)[:, None]
    return rq, u, r, q


def _stalled(hist: list[list[float]], N: int, tol: float) -> bool:
    """Whether the climb should give up: two steps in a row in which the worst change between sizes
    fell by less than half (not the geometric convergence of a potential the mesh resolves), or a
    rate of convergence, extrapolated linearly in N, that would reach tol only beyond MAX_N (the
    elements do better there)."""
    if len(hist[0]) < 3:
        return False
    d = [max(abs(h[i + 1] - h[i]) / abs(h[i + 1]) for h in hist) for i in range(len(hist[0]) - 1)]
    if d[-1] <= max(tol, FLOOR):
        return False
    if len(d) >= 3 and d[-1] > 0.5 * d[-2] and d[-2] > 0.5 * d[-3]:
        return True
    rho = d[-1] / d[-2] if d[-2] > 0 else 1.0
    if rho >= 0.5:
        return False                   # too early to tell: the next step decides
    # spectral convergence: log d falls linearly in N (one step here is N -> ~1.2 N)
    per_node = math.log(rho) / (N - N / 1.2)
    return N + math.log(max(tol, FLOOR) / d[-1]) / per_node > MAX_N


@dataclass
class _Probe:
    """The potential on the layout's sampling (4001 points in ln r from r_lo to the last node),
    shared by checks (b) and (d)."""

    r: np.ndarray
    s: object
    rate: np.ndarray

    @classmethod
    def on(cls, sample, r_lo: float, r_last: float, breakpoints=()) -> "_Probe":
        """The probe from r_lo to r_last; around each of the potential's ``breakpoints`` in between (a jump, a
        kink, or a feature narrower than its terms' own sampling) the shape is measured again on 201 samples
        within 2 % of it, whose rate enters the samples nearest it (check (e) of the module docstring)."""
        t = np.linspace(math.log(r_lo), math.log(r_last), 4001)
        r = np.exp(t)
        s = sample(r)
        rate = _shape_rate_r(t[1] - t[0], r, s)
        inside = [b for b in breakpoints if r_lo < b < r_last]
        if inside:
            with np.errstate(all="ignore"):        # the whole probe's max |g|, the windows' scale
                g = r * (s.V + s.S)
                G = float(np.max(np.abs(np.where(np.isfinite(g), g, 0.0))))
            # every window sampled in one call (graded edges declare several breakpoints close together)
            tb = np.log(inside)[:, None] + np.linspace(-0.02, 0.02, 201)[None, :]
            rb = np.exp(tb)
            sb = sample(rb.ravel())
            for k, (b, rw) in enumerate(zip(inside, rb)):
                part = slice(k * 201, (k + 1) * 201)
                local = float(np.max(_shape_rate_r(tb[k, 1] - tb[k, 0], rw, Sample(rw, sb.V[part], sb.S[part]), G)))
                i = int(np.clip(np.searchsorted(r, b), 0, len(r) - 1))
                rate[i] = max(rate[i], local)
        return cls(r, s, rate)

    def _decay_steps(self, eq, E: float):
        """(index of the outer turning point, WKB decay exponent gained between neighbouring samples
        from there on) of a level at energy E, or None when it is nowhere classically allowed."""
        r = self.r
        with np.errstate(all="ignore"):
            k2 = eq.excess(E, self.s)
        allowed = np.nonzero(k2 < 0)[0]
        if not allowed.size:
            return None
        a = allowed[-1]
        return a, decay_steps(k2[a:], r[a:])

    def decay(self, eq, E: float) -> float:
        """e-folds of WKB decay of a level at energy E from its outer turning point to the last
        node (check b)."""
        got = self._decay_steps(eq, E)
        return 0.0 if got is None else float(np.sum(got[1]))

    def reach(self, eq, E: float, efolds: float) -> float | None:
        """Radius where a level at energy E has decayed by e^-efolds beyond its outer turning point
        (WKB), or None when that happens only beyond the probe."""
        got = self._decay_steps(eq, E)
        if got is None:
            return None
        a, steps = got
        j = int(np.searchsorted(np.cumsum(steps), efolds))
        return float(self.r[a + j + 1]) if j < len(steps) else None

    @staticmethod
    def allowed_beyond(eq, sample, r_last: float, E: float) -> bool:
        """Whether a level at energy E is classically allowed anywhere beyond the last node (out to
        1e8 times it): a well out there could hold a level below E that the mesh never sees."""
        r = r_last * _beyond_factors()
        s = sample(r, scan=True)
        with np.errstate(all="ignore"):
            k2 = eq.excess(E, s)
        return bool(np.any(k2 < 0))

    def shape_gaps(self, r_nodes: np.ndarray) -> float:
        """Worst product of the shape rate and the node spacing around each sample (r_1 below the
        first node): check (d)."""
        edges = np.concatenate(([0.0], r_nodes))
        gap = np.diff(edges)
        # gap k holds the samples edges[k] <= r < edges[k+1] (the last one also those beyond)
        start = np.searchsorted(self.r, edges[:-1], side="left")
        end = np.append(start[1:], len(self.r))
        keep = end > start
        return float(np.max(np.maximum.reduceat(self.rate, start[keep]) * gap[keep]))


@lru_cache(maxsize=1)
def _beyond_factors() -> np.ndarray:
    """800 radii from 1 to 1e8, evenly spaced in ln r (read-only; built once)."""
    f = np.geomspace(1.0, 1e8, 800)
    f.flags.writeable = False
    return f


def _shape_rate_r(dt: float, r, s, G: float | None = None) -> np.ndarray:
    """The element layout's measure of shape (:func:`boundkit.ladder._shape_rate`) taken in r, the
    variable the Laguerre basis is smooth in: 5 sqrt(|g_rr| / max |g|), g = r (V + S), from samples
    at radii r uniformly spaced by dt in t = ln r.

    A potential analytic in r (g = g0 + g1 r + g2 r^2 + ...) gives a bounded rate; a finite
    nucleus, a logarithmic vacuum polarisation or a narrow well gives a rate of about one over its
    width. ``G``: the max |g| to measure against (default that of these samples; a short stretch around a
    breakpoint is measured against the whole probe's).
    """
    with np.errstate(all="ignore"):
        g = r * (s.V + s.S)
        top = float(np.max(np.abs(g)))                  # nan or inf when some g is not finite
        if not np.isfinite(top):
            g = np.where(np.isfinite(g), g, 0.0)        # as np.nan_to_num(..., 0, 0, 0), 3x faster
            top = float(np.max(np.abs(g)))
        G = top if G is None else G
        if not np.isfinite(G) or G == 0.0:
            return np.zeros_like(r)
        # central differences twice (np.gradient's interior formula), so r^2 g_rr = g_tt - g_t on
        # samples 2 .. n-3; the two at each end, where one-sided differences would enter, get 0
        g_t = (g[2:] - g[:-2]) / (2.0 * dt)                 # at samples 1 .. n-2
        r2_grr = np.zeros_like(g)
        r2_grr[2:-2] = (g_t[2:] - g_t[:-2]) / (2.0 * dt) - g_t[1:-1]
        r2_grr[np.abs(r2_grr) < 1e-9 * G] = 0.0        # rounding of the differences, not shape
        rate = 5.0 * np.sqrt(np.abs(r2_grr) / G) / r
        return np.where(np.isnan(rate), np.inf, rate)   # overflowing differences count as structure


@lru_cache(maxsize=12)
def _state_grid(n: int, lo: float, n_prev: int):
    """Spectral-element grid of the states of an n-point mesh, in x = r / h (cached, arrays read-only):
    ``(x, weights in t, elements, C, C_prev)``. An entry holds about 12 n^2 doubles (7 MB at
    n = 200, 0.7 MB at n = 60); twelve are kept.

    GLL nodes of degree _STATE_DEGREE in t = ln x on [lo, x_n]: quiet elements (at most _QUIET_DT long)
    up to the first node, then one element between each pair of neighbouring nodes. ``C`` holds the
    values of the mesh's cardinal functions there, one row per function (a state is ``u @ C``),
    ``C_prev`` those of the n_prev-point mesh stretched to the same last node (the previous size of
    the ladder). With lo = r_lo / h = inner cut * x_n / reach, none of this depends on the
    potential's length scale, so a scan or a repeated solve finds it in the cache.
    """
    mesh = laguerre_mesh(n)
    xn = mesh.x
    t0, t1 = math.log(lo), math.log(xn[0])
    pieces = max(1, int(math.ceil((t1 - t0) / _QUIET_DT)))
    edges = np.concatenate((np.linspace(t0, t1, pieces + 1), np.log(xn[1:])))
    deg = _STATE_DEGREE
    xg, wref, _ = gll(deg)
    xg = xg.astype(float)
    half = 0.5 * np.diff(edges)
    m = len(half)
    t = np.empty(m * deg + 1)
    w = np.zeros(m * deg + 1)
    t[:-1] = (edges[:-1, None] + (xg[None, :-1] + 1) * half[:, None]).ravel()
    t[-1] = edges[-1]
    wl = wref[None, :] * half[:, None]
    w[:-1] = wl[:, :-1].ravel()
    w[deg::deg] += wl[:, -1]
    elements = tuple((e * deg, e * deg + deg) for e in range(m))
    x = np.exp(t)
    C = np.ascontiguousarray(cardinal_matrix(mesh, x).T)
    prev = laguerre_mesh(n_prev)
    C_prev = np.ascontiguousarray(cardinal_matrix(prev, x * (prev.x[-1] / xn[-1])).T)
    for arr in (x, w, C, C_prev):
        arr.flags.writeable = False
    return x, w, elements, C, C_prev


def _states(gamma: float, r_core: float, P_all: np.ndarray, r, w_dr, elements):
    """Spectral-element states on the grid (r, w_dr, elements) from their normalised values there
    (one row per level)."""
    return [RadialState(r=r, P=P, Q=None, weights=w_dr, gamma=gamma, r_core=r_core, elements=elements,
                        family="spectral") for P in P_all]


class _Run(NamedTuple):
    """One size of the climb: the mesh, its scale, the energies, the node values and V + S there."""

    mesh: object
    h: float
    E: np.ndarray
    u: np.ndarray
    q: np.ndarray


def _tighter_scale(probe, eq, E_top: float, decay: float) -> float | None:
    """The last-node radius where the highest level has decayed by e^-(_DECAY_NEEDED + 2), when the
    present box gives it more than _OVERSIZED times that (else None).

    The first scale assumes a hydrogen-like level in the tail charge or in 2 L; a short-range well
    (a nuclear Woods-Saxon well, measured 100 to 230 e-folds at the last node) binds its levels far
    more tightly, and the nodes spread over a box that large converge slowly.
    """
    if decay <= _OVERSIZED * (_DECAY_NEEDED + 2):
        return None
    return probe.reach(eq, E_top, _DECAY_NEEDED + 2)


def _rescaled(probe, eq, E_top: float, r_last: float, settled: bool) -> tuple[str, float]:
    """The scale decision on the first size: ``("out", 1.6 r_last)`` when the highest level has not
    decayed by e^-_DECAY_NEEDED at the last node, ``("in", r)`` when the box is far too large
    (:func:`_tighter_scale`; not once ``settled``, i.e. the box was already moved), else
    ``("keep", r_last)``."""
    decay = probe.decay(eq, E_top)
    if decay < _DECAY_NEEDED:
        return "out", 1.6 * r_last
    tighter = None if settled else _tighter_scale(probe, eq, E_top, decay)
    return ("keep", r_last) if tighter is None else ("in", tighter)


def study(eq, sample, want: int, a: float, r_lo: float, sizes) -> tuple[list[int], list[list[float]], float]:
    """Energies of the lowest ``want`` levels at each mesh size in ``sizes``, on one scale (a
    convergence study): ``(sizes used, energies per level, last node radius)``.

    The scale is chosen as :func:`solve_laguerre` chooses it (moved out while the highest level, on
    the first size, has not decayed by e^-30 at the last node, or once moved in when it has decayed
    far more); sizes below want + 2 are skipped.
    """
    sizes = [int(n) for n in sorted(set(sizes)) if int(n) >= want + 2]
    if not sizes:
        raise ValueError(f"sizes: a Laguerre mesh for {want} level(s) needs at least {want + 2} nodes")
    r_last = a * _hydrogenic_reach(want + eq.l, _DECAY_NEEDED + 2)
    settled = False
    for _ in range(5):
        mesh = laguerre_mesh(sizes[-1])
        E = _levels_on(eq, sample, mesh, r_last / mesh.x[-1], want)[0]
        move, r_new = (_rescaled(_Probe.on(sample, r_lo, r_last), eq, E[-1], r_last, settled) if E[-1] < 0
                       else ("out", 1.6 * r_last))
        if move == "keep":
            break
        settled, r_last = True, r_new
    hist: list[list[float]] = [[] for _ in range(want)]
    for N in sizes:
        mesh = laguerre_mesh(N)
        E = _levels_on(eq, sample, mesh, r_last / mesh.x[-1], want)[0]
        for k in range(want):
            hist[k].append(float(E[k]))
    return sizes, hist, r_last


def solve_laguerre(eq, pot, levels: int, tol: float, sample, gamma: float, r_lo: float, a: float):
    """The channel on Lagrange-Laguerre meshes, or None when a check fails (see the module docstring).

    ``a`` is the length the scale is taken from: the Bohr radius 1/(mu Z_inf) of a Coulomb tail,
    or 2 L for a short-range potential (L its natural length, 1/2 bohr for hydrogen), whose levels
    the caller has already counted (``levels`` is then at most that count).
    Returns ``(found, notes, per_level, worst, extra)`` in the form of the element solver.
    """
    want = levels
    n_top = want + eq.l
    tol_eff = max(tol, FLOOR)
    r_last = a * _hydrogenic_reach(n_top, _DECAY_NEEDED + 2)
    sizes = _ladder(_start_size(want, eq.l, tol))
    hist: list[list[float]] = [[] for _ in range(want)]
    used: list[int] = []
    last = prev = None
    moved = 0
    shrunk = False
    i = 0
    while i < len(sizes):
        N = sizes[i]
        mesh = laguerre_mesh(N)
        h = r_last / mesh.x[-1]
        E, u, r_nodes, q_nodes = _levels_on(eq, sample, mesh, h, want)
        if not E[-1] < 0:
            if not used and N < _UNBOUND_CLIMB:
                # the level exists (counted on the far box, or a Coulomb tail): too few nodes in
                # its well yet, as for a tightly bound nuclear p or d level on the first size
                i += 1
                continue
            log.info("Laguerre mesh: the highest level sought is not bound on N = %d; using spectral elements", N)
            return None
        if not used:
            # the highest level converges first: its decay decides the scale before the climb
            if _Probe.allowed_beyond(eq, sample, r_nodes[-1], E[-1]):
                log.info("Laguerre mesh: the potential has a well beyond the mesh; using spectral elements")
                return None
            probe = _Probe.on(sample, r_lo, r_nodes[-1], pot.breakpoints)
            move, r_new = _rescaled(probe, eq, E[-1], r_last, moved > 0 or shrunk)
            if move == "out":
                if moved == 3:
                    log.info("Laguerre mesh: the highest level has not decayed by e^-%g at the last node after "
                             "moving it out three times (a level near threshold); using spectral elements",
                             _DECAY_NEEDED)
                    return None
                moved, r_last = moved + 1, r_new
                i += 1
                continue
            if move == "in":
                # a box far larger than the level needs (a short-range well): the same size again on
                # the scale where it has decayed by e^-(_DECAY_NEEDED + 2)
                shrunk, r_last = True, r_new
                continue
            # structure that even the largest mesh could not resolve (spacing falls about like 1/N)
            if probe.shape_gaps(r_nodes) > _SHAPE_PER_GAP * MAX_N / N:
                log.info("Laguerre mesh: the potential has structure far narrower than the node spacing; "
                         "using spectral elements")
                return None
        prev, last = last, _Run(mesh, h, E, u, q_nodes)
        used.append(N)
        for k in range(want):
            hist[k].append(float(E[k]))
        if all(len(hk) >= 3 and spectral_done(hk, tol_eff) for hk in hist):
            break
        if _stalled(hist, N, tol):
            log.info("Laguerre mesh: the levels stopped converging geometrically at N = %d; using spectral "
                     "elements", N)
            return None
        i += 1
    else:
        log.info("Laguerre mesh: no convergence up to N = %d; using spectral elements", MAX_N)
        return None
    mesh, h, E, u = last.mesh, last.h, last.E, last.u
    if np.any(count_nodes_each(u) != np.arange(want)):
        log.info("Laguerre mesh: a node count disagrees with the level's index; using spectral elements")
        return None
    shape = probe.shape_gaps(h * mesh.x)
    if shape > _SHAPE_PER_GAP:
        log.info("Laguerre mesh: the potential has structure narrower than the node spacing (shape rate x "
                 "spacing = %.3g); using spectral elements", shape)
        return None
    x, w, elements, C, C_prev = _state_grid(mesh.n, r_lo / h, prev.mesh.n)   # same last node, same grid
    r = h * x
    w_dr = w * r
    (P,), _ = normalise(w_dr, u.T @ C)
    seen = (h * mesh.weights * last.q) @ u**2
    q_grid = eq.q(0.0, sample(r))
    felt = P**2 @ (w_dr * q_grid)
    floors = POTENTIAL_FLOOR * (P**2 @ (w_dr * np.abs(q_grid)))     # potential_floor of each level
    for k in range(want):
        if abs(seen[k] - felt[k]) > tol_eff * abs(E[k]):
            log.info("Laguerre mesh: the nodes see <V> = %.3g for level %d, the full grid %.3g (the potential "
                     "has structure between or below the nodes); using spectral elements", seen[k], k, felt[k])
            return None
    r_core = a * (eq.l + 1) ** 2
    states = _states(gamma, r_core, P, r, w_dr, elements)
    (P_prev,), _ = normalise(w_dr, prev.u.T @ C_prev)
    prev_states = _states(gamma, r_core, P_prev, r, w_dr, elements)
    found, per_level, worst = [], [], 0.0
    shallow: list[str] = []
    for k in range(want):
        hk = hist[k]
        Ek = hk[-1]
        n = principal_n(k, eq.l)
        est = max(abs(hk[-1] - hk[-2]), FLOOR * abs(Ek))
        est, _ = with_potential_floor(shallow, eq.label(n), Ek, est, float(floors[k]), tol, hk)
        worst = max(worst, est / abs(Ek))
        per_level.append({"label": eq.label(n), "sizes": used, "energies": list(hk), "r_min": r_lo,
                          "r_max": r_last})
        found.append(Level(n=n, l=eq.l, j=eq.j, kappa=eq.kappa, label=eq.label(n), energy=Ek,
                           error_estimate=est, nodes=k, state=states[k], resolution=mesh.n, iterations=0,
                           previous_state=prev_states[k]))
    notes = [f"Lagrange-Laguerre mesh, N = {mesh.n}: the levels are the lowest eigenvalues of one symmetric "
             "matrix, each with its index as node count"] + shallow
    extra = {"gamma": gamma, "r_min": r_lo, "r_max": r_last, "threshold": 0.0, "certified": True,
             "mesh": "lagrange-laguerre", "potential_floor_hit": bool(shallow)}
    # (the caller adds the natural length and the far-box count)
    return found, notes, per_level, worst, extra
