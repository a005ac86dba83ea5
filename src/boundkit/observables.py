"""Expectation values, radial matrix elements, g-factors and hyperfine constants.

Everything here is computed from the normalised radial functions a
:class:`~boundkit.results.Level` carries, in atomic units (r in bohr, energies
in hartree); lengths are converted for reports with :func:`bohr_to`.

Equations
---------
Radial density (integrates to 1 over dr):

* Schrodinger: rho = P^2;
* Dirac: rho = P^2 + Q^2 (P = r g, Q = r f);
* Klein-Gordon: the conserved charge density rho = (E + mc^2 - V)/(mc^2) P^2
  (the state's ``density_weight``), not P^2 alone.

An expectation value is <f> = integral_0^inf f(r) rho(r) dr, and a radial
matrix element between two levels a, b of the same potential

    <a|f|b> = integral_0^inf f(r) [P_a P_b + Q_a Q_b] dr

with, for Klein-Gordon, the weight (E_a + E_b + 2mc^2 - 2V)/(2mc^2) of the
charge-density inner product (the mean of the two states' weights).

Quadrature: on the nodes [r_min, r_max] the solver's own weights (Clenshaw-
Curtis per element for the spectral family: spectral accuracy), plus the
piece [0, r_min] from the origin behaviour P, Q ~ r^gamma (Gauss-Legendre in
ln r over 60 e-folds below r_min, and below that the integral of the
integrand's power law, read off at the cut). For two levels the product is integrated on
the nodes of the level reaching further out, the other one interpolated
(:mod:`boundkit.wavefunctions`). The nodes resolve the potential the level was solved in, not f:
each element is screened for f's own structure (f at Gauss points against its interpolant from the
nodes) and an element where that could matter is integrated again adaptively, panels halved around
a jump, a kink or a short length scale of f until two steps agree (``_unresolved``); its last change
enters the error. ``breaks`` (radii of f's kinks) remain the cheaper way for known kinks.

Error estimate: the same quantity from ``level.previous_state`` (the level one
resolution lower on the solver's ladder); the estimate is the difference,
never below 2e-14 of the value (of the integral of the integrand's absolute
value instead, where that is given: see ``_estimate``), plus the rounding of the states near r_min
carried by the part below it (``_origin_error``). It is ``inf`` when the level has no previous
state. The spectral family converges geometrically, so this bounds the error
of the value at the finer resolution with a wide margin.

Outer end: a level is known up to the last node R of its grid (where it has decayed by about
e^-40; the elements end there on P = 0), and both resolutions share that end, so their change cannot
see what the integral loses there. ``_outer_tail`` bounds it: the integral of |integrand| beyond a
radius R1 a little inside R (8 % of the way from the density's peak to R back from R, where the
state is still the free decay), as |h(R1)| / |lambda| with lambda the slope of ln |h| read over the
5 % before R1 (for ln |h| concave, as r^k P^2 beyond the turning point is, that bounds the decay's
integral; measured 10 to 60 times the true loss of hydrogen <r^k>). It is added to the estimate, and
an integral whose bound exceeds ``TAIL_LIMIT`` of the integral of |integrand|, or whose integrand still
grows at R1, is refused: <r^60> of the hydrogen 1s was 7.7 % low with an estimate of 7e-4.

Dirac magnetic quantities (point nucleus, m the particle mass in the solve):

    g     = (2 kappa / (j (j + 1))) m c  integral r P Q dr
    A_hfs = (mu_I / I) (2 kappa / (j (j + 1)))  integral P Q F(r) dr

with F = 1/r^2 for a point dipole and F = r / R^3 inside a uniformly
magnetized sphere of radius R (Bohr-Weisskopf), mu_I in atomic units
(mu_N = (alpha/2)(m_e/m_p)). With the sign convention of the solver (P > 0 near
the origin) these give Breit's g = (2/3)(1 + 2 sqrt(1 - (Z alpha)^2)) for 1s.
"""
from __future__ import annotations

import math
from dataclasses import dataclass
from functools import lru_cache
from typing import Callable

import numpy as np
import scipy.constants as sc

from ._rounding import EXTENDED_LONG_DOUBLE
from .units import ALPHA, C_AU, LENGTH_UNITS, bohr_to, hartree_to, length_unit, mass_mev_to_au
from .wavefunctions import cardinal_rows, components_at, origin_coefficient, origin_noise, origin_series, origin_shift

__all__ = ["Quantity", "LevelObservables", "expectation", "expectation_value", "radial_moment",
           "mean_radius", "rms_radius", "matrix_element", "observables", "g_factor", "hyperfine_a",
           "density_at_origin", "LENGTH_UNITS", "length_unit", "bohr_to", "masses_of"]

_INNER_EFOLDS = 60.0
TAIL_LIMIT = 1e-3
"""Largest part of an integral (relative to that of its absolute value) that may lie beyond the states'
last nodes before the integral is refused (:func:`_outer_tail`)."""
_TAIL_BACK, _TAIL_SPAN = 0.08, 0.05      # R1 = R - _TAIL_BACK (R - r_peak); slope over _TAIL_SPAN (R - r_peak)
_GL_T, _GL_W = np.polynomial.legendre.leggauss(64)

KG_NOTE = "Klein-Gordon: conserved charge density (E + mc^2 - V)/(mc^2) P^2"


@dataclass(frozen=True, slots=True)
class Quantity:
    """A computed value with its error estimate and unit.

    ``error`` is absolute (same unit), ``inf`` when no estimate exists;
    ``note`` says what density or convention was used.
    """

    name: str
    value: float
    error: float
    unit: str
    note: str = ""

    def __float__(self) -> float:
        return float(self.value)

    def __repr__(self) -> str:
        note = f"; {self.note}" if self.note else ""
        return f"{self.name} = {self.value:.15g} +- {self.error:.2g} {self.unit}{note}"


# --- quadrature ----------------------------------------------------------------------------

def _pair_integrand(sa, sb, r, f, kind: str) -> np.ndarray:
    """Integrand for dr at radii r: f(r) times the density/overlap of states sa, sb."""
    return f(r) * _pair_density(sa, sb, r, kind)


def _pair_density(sa, sb, r, kind: str) -> np.ndarray:
    """The density/overlap of states sa, sb at radii r (the integrand of :func:`_pair_integrand` without f)."""
    two = kind in ("PQ", "QP-PQ", "P2-Q2") or (kind == "density" and sa.Q is not None and sb.Q is not None)
    weighted = kind == "density" and (sa.density_weight is not None or sb.density_weight is not None)
    names = ("P",) + (("Q",) if two else ()) + (("weight",) if weighted else ())
    a = dict(zip(names, components_at(sa, r, names)))
    b = a if sb is sa else dict(zip(names, components_at(sb, r, names)))
    if kind == "PQ":      # P_a Q_b + Q_a P_b, halved (equal to P Q on the diagonal)
        return 0.5 * (a["P"] * b["Q"] + a["Q"] * b["P"])
    if kind == "QP-PQ":
        return a["Q"] * b["P"] - a["P"] * b["Q"]
    if kind == "plain":   # the large components only, no weight (an L2 product)
        return a["P"] * b["P"]
    if kind == "P2-Q2":
        return a["P"] * b["P"] - a["Q"] * b["Q"]
    dens = a["P"] * b["P"]
    if weighted:
        dens = dens * 0.5 * (a["weight"] + b["weight"])
    if two:
        dens = dens + a["Q"] * b["Q"]
    return dens


def _nodal_integrand(s, f, kind: str) -> np.ndarray:
    """Same as :func:`_pair_integrand` for sa = sb = s, at s's own nodes (no interpolation; the antisymmetric
    'QP-PQ' is 0 there whatever f is)."""
    if kind == "QP-PQ":
        return 0 * s.r
    return f(s.r) * _pair_density(s, s, s.r, kind)


_PANEL_T, _PANEL_W = np.polynomial.legendre.leggauss(24)
_PANEL_WIDTH = 0.5


_TAIL_STEP = 4.0      # e-folds between the two radii the power at the inner cut is read from


def _origin_tail(sa, sb, f, kind: str, t_c: float) -> np.ndarray:
    """(integral_0^r_c of the integrand, of its absolute value), r_c = e^t_c far below the first node,
    where the integrand is a power law c r^(s - 1): h = g r falls like e^(s t) in t = ln r, and the
    part below the cut is h(t_c) / s. The power s is read from h at t_c and t_c - _TAIL_STEP (the
    states there are their origin expansions r^gamma (a + b r); the next term is 1e-26 smaller).

    The cut alone, 60 e-folds below the first node, is enough when s is of order one; as s -> 0
    (<r^k> with k near -(2 gamma + 1), a point-dipole hyperfine integral at high Z) the part below
    it grows like 1/s: 3.5e-4 of <r^-2.9> of the hydrogen 1s and 0.4 % of the Z = 116 hyperfine
    integral were lost with error estimates of 1e-14 (both states shared the cut).

    Raises ValueError when s <= 0 (the integral diverges at the origin).
    """
    rr = _tail_radii(t_c)
    return _power_tail(_pair_integrand(sa, sb, rr, f, kind) * rr)


def _tail_radii(t_c: float) -> np.ndarray:
    """The two radii :func:`_origin_tail` reads the integrand at."""
    return np.exp(np.array([t_c, t_c - _TAIL_STEP]))


def _power_tail(h: np.ndarray) -> np.ndarray:
    """:func:`_origin_tail` from h = r g at its two radii (:func:`_tail_radii`)."""
    if not np.all(np.isfinite(h)):
        return np.array([math.nan, math.nan])
    if h[0] == 0.0 or h[0] * h[1] <= 0.0:
        return np.zeros(2)          # no power law to read (f vanishes there, or a sign change): nothing added
    s = math.log(h[0] / h[1]) / _TAIL_STEP
    if s <= 1e-6:
        raise ValueError("f: the integral diverges at the origin for this level (the integrand falls no "
                         "faster than 1/r towards r = 0; check the power of r at the origin)")
    tail = float(h[0]) / s
    return np.array([tail, abs(tail)])


def _outer_tail(sa, sb, f, kind: str) -> tuple[float, float]:
    """(bound of the integrand's absolute value integrated beyond R1, R): R the last node of the
    state ending first (the other is 0 beyond its own), R1 = R - _TAIL_BACK (R - r_peak) with r_peak
    the radius of that state's largest |P|.

    The bound is |h(R1)| / |lambda|, lambda = d ln|h| / dr read as the secant over
    [R1 - _TAIL_SPAN (R - r_peak), R1]: where ln|h| is concave (a decay exp(-integral kappa) with
    kappa growing, times r^k or any f whose log-derivative falls) the secant lies above the tangent
    and the decay beyond R1 below exp(lambda (r - R1)). Starting at R1 rather than R covers the last
    nodes too, where the elements bend P to 0 (P(R) = 0): there the computed state is short of the
    decay by up to 100 %. Returns inf when |h| does not fall at R1 (or overflows there), nan when h
    is not a number (the integral's own check reports that)."""
    ends = [_decay_end(s) for s in ((sa,) if sa is sb else (sa, sb))]
    peak, R = min(ends, key=lambda e: e[1])
    width = R - peak
    if width <= 0:
        return 0.0, R
    grid = sa if sa.r[-1] >= sb.r[-1] else sb
    r1 = R - _TAIL_BACK * width
    i1 = max(int(np.searchsorted(grid.r, r1)), 1)      # the nodes at or just past R1 and R1 - span
    i0 = min(int(np.searchsorted(grid.r, r1 - _TAIL_SPAN * width)), i1 - 1)
    rr = grid.r[[i0, i1]]
    with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
        if sa is sb:
            g = np.abs(_nodal_integrand(sa, f, kind)[i0:])
        else:
            g = np.abs(_pair_integrand(sa, sb, grid.r[i0:], f, kind))
        h = g[[0, i1 - i0]]
        # what the nodes hold from R1 on (the decay, or rounding noise) is counted too
        held = float(np.sum(grid.weights[i1:] * g[i1 - i0:]))
    if np.any(np.isnan(h)):
        return math.nan, R
    if not math.isfinite(held):      # f overflows there (inf, or inf * 0 at P(R) = 0)
        return math.inf, R
    if h[1] == 0.0:
        return held, R
    if not np.isfinite(h[1]) or h[0] == 0.0 or not np.isfinite(h[0]):
        return math.inf, R
    slope = math.log(h[1] / h[0]) / (rr[1] - rr[0])
    return (float(h[1]) / -slope + held if slope < 0 else math.inf), R


_NOISE = 1e-30        # |P| below this fraction of its largest value is not read as the decay


def _decay_end(s) -> tuple[float, float]:
    """(r_peak, R) of state ``s``: its outermost lobe's largest |P| and the last node of the clean
    decay after it (|P| falling node by node without a sign change, above _NOISE max |P|). That is the
    grid's last node for a level solved on its own grid; a level sharing a channel's longer grid
    decays into rounding noise (about 1e-42 of its peak for the hydrogen 2p on the 5p's grid) before it."""
    a = np.abs(s.P)
    top = float(a.max())
    if top == 0.0:
        return float(s.r[-1]), float(s.r[-1])
    lobe = int(np.nonzero(a >= 1e-2 * top)[0][-1])
    rest = a[lobe:]
    falls = np.nonzero(rest[1:] < rest[:-1])[0]             # up the outermost lobe to its top
    peak = lobe + (int(falls[0]) if falls.size else len(rest) - 1)
    tail, sign = a[peak:], np.sign(s.P[peak])
    clean = (tail[1:] < tail[:-1]) & (np.sign(s.P[peak + 1:]) == sign) & (tail[1:] > _NOISE * top)
    broken = np.nonzero(~clean)[0]
    i = peak + (int(broken[0]) if broken.size else len(tail) - 1)
    if i + 1 < len(a) and a[i + 1] == 0.0:      # the elements' end, P(R) = 0
        i += 1
    return float(s.r[peak]), float(s.r[i])


def _refuse_far(tail: float, scale: float, R: float, refusal: tuple[str, str, str]) -> None:
    """Raise ValueError when the part beyond the states' end (``tail``, :func:`_outer_tail`) is not
    small against ``scale`` (the integral of the integrand's absolute value): unbounded, or above
    TAIL_LIMIT of it. ``refusal`` = (argument, what is integrated, what to do)."""
    if not tail > TAIL_LIMIT * scale:        # also nan: nothing read (the integral's own check reports)
        return
    arg, subject, advice = refusal
    why = ("the integrand still grows there" if math.isinf(tail) else
           f"up to {tail / scale:.2g} of the integral may lie near or beyond it, above {TAIL_LIMIT:g}")
    raise ValueError(f"{arg}: {subject} reaches beyond r = {R:.4g} bohr, where the level was solved "
                     f"({why}); {advice}")


def _sums(w: np.ndarray, g: np.ndarray) -> np.ndarray:
    """(sum of w g, sum of w |g|): a quadrature of the integrand and of its absolute value."""
    return np.array([float(np.sum(w * g)), float(np.sum(w * np.abs(g)))])


def _integral_panels(sa, sb, f, kind: str, breaks) -> np.ndarray:
    """integral_0^r_max by composite Gauss-Legendre in t = ln r, panels split at the elements'
    ends and at ``breaks`` (radii where f has a kink the nodes do not know of), the states
    interpolated. Panels are at most _PANEL_WIDTH long in t. Returns the integral and that of the
    integrand's absolute value."""
    grid = sa if sa.r[-1] >= sb.r[-1] else sb
    t_lo = math.log(min(sa.r[0], sb.r[0])) - _INNER_EFOLDS
    t_hi = math.log(grid.r[-1])
    cuts = {t_lo, t_hi, math.log(min(sa.r[0], sb.r[0]))}
    for s in (sa, sb):
        for a, b in s.elements:
            cuts.update((math.log(s.r[a]), math.log(s.r[b])))
    cuts.update(math.log(b) for b in breaks if b > 0)
    edges = sorted(c for c in cuts if t_lo <= c <= t_hi)
    t_min = math.log(min(sa.r[0], sb.r[0]))
    total = _origin_tail(sa, sb, f, kind, t_lo)
    below = total[1]
    for a, b in zip(edges[:-1], edges[1:]):
        m = max(1, math.ceil((b - a) / _PANEL_WIDTH))
        for i in range(m):
            x0, x1 = a + (b - a) * i / m, a + (b - a) * (i + 1) / m
            t = 0.5 * (x0 + x1) + 0.5 * (x1 - x0) * _PANEL_T
            rr = np.exp(t)
            part = 0.5 * (x1 - x0) * _sums(_PANEL_W * rr, _pair_integrand(sa, sb, rr, f, kind))
            total += part
            if x1 <= t_min:
                below += part[1]
    return np.array([total[0], total[1], below])


def _integrals(sa, sb, f, kind: str = "density", breaks=()) -> tuple[float, float, float, float]:
    """(integral_0^r_max of the integrand, that of its absolute value: the scale of the first one's
    rounding, that of its absolute value below the first node: the part read from the states'
    extrapolation to the origin, and the error of the quadrature for f's own structure between the
    nodes, :func:`_unresolved`), on the nodes of the state reaching further out, refined where f needs
    it (or by panels, see :func:`_integral_panels`, when ``breaks`` are given)."""
    if breaks:
        with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
            total = _integral_panels(sa, sa if sb is None else sb, f, kind, breaks)
        if not math.isfinite(total[0]):
            raise ValueError("f: the integral does not converge for this level")
        return float(total[0]), float(total[1]), float(total[2]), 0.0
    grid = sa if sb is None or sa.r[-1] >= sb.r[-1] else sb
    with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
        if sb is None or sb is sa:
            sb = sa
            rho = _pair_density(sa, sa, sa.r, kind)
        else:
            rho = _pair_density(sa, sb, grid.r, kind)
        fr = f(grid.r)
        g = 0 * grid.r if kind == "QP-PQ" and sb is sa else fr * rho
        body = _sums(grid.weights, g)
        sides = _jump_sides(grid, sa, sb, f, kind)
        for j, q_in, q_out, g_in, g_out in sides:
            body += grid.r[j] * (np.array([q_in * g_in + q_out * g_out, q_in * abs(g_in) + q_out * abs(g_out)])
                                 - (q_in + q_out) * np.array([g[j], abs(g[j])]))
        # [0, r_min]: Gauss-Legendre in t = ln r over _INNER_EFOLDS e-folds, dr = r dt, the power-law
        # part below them (_origin_tail) and the gap between the two first nodes (interpolated): the
        # integrand is evaluated at all those radii in one call
        r0 = min(sa.r[0], sb.r[0])
        rr = np.exp(math.log(r0) + 0.5 * _INNER_EFOLDS * (_GL_T - 1.0))
        rt = _tail_radii(math.log(r0) - _INNER_EFOLDS)
        lo, hi = r0, grid.r[0]
        gap = sa.r[0] != sb.r[0] and hi > lo
        half = 0.5 * (math.log(hi) - math.log(lo))
        rx = np.exp(0.5 * (math.log(hi) + math.log(lo)) + half * _GL_T) if gap else rr[:0]
        n = len(rr)
        small = _pair_integrand(sa, sb, np.concatenate((rr, rt, rx)), f, kind)
        inner = 0.5 * _INNER_EFOLDS * _sums(_GL_W * rr, small[:n])
        inner += _power_tail(small[n:n + 2] * rt)
        if gap:
            inner += half * _sums(_GL_W * rx, small[n + 2:])
    total = body + inner
    if not math.isfinite(total[0]):
        raise ValueError("f: the integral does not converge for this level (check the power of r at the "
                         "origin: the integrand must vanish faster than 1/r)")
    with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
        fix, quad = _unresolved(grid, sa, sb, f, kind, fr, rho, g, float(total[1]), sides)
    if not math.isfinite(fix):
        raise ValueError("f: the integral does not converge for this level (f is not finite between the nodes)")
    return float(total[0]) + fix, float(total[1]), float(inner[1]), quad


def _jump_sides(grid, sa, sb, f, kind: str) -> list:
    """``(node, inner and outer element's quadrature weight there for dt, integrand on either side)`` at
    each node of ``grid`` on a jump of the Klein-Gordon charge weight (``RadialState.weight_sides``): the
    two elements sharing the node integrate the density with their own side's weight. The nodal value of
    the weight (the mean of the two sides by those quadrature weights) already gives a state's own
    density that sum; an overlap of two states does not, when the other state's weight is read there
    (one side's: between 1s and 2p of a square well the nodal sum was 4.9e-8 off, twice its estimate)."""
    if kind != "density" or not grid.weight_sides or grid.family == "finite-difference":
        return []
    tn = np.log(grid.r)
    ends = {b: e for e, (_, b) in enumerate(grid.elements)}
    out = []
    for j, _, _ in grid.weight_sides:
        e = ends.get(j)
        if e is None or e + 1 >= len(grid.elements):
            continue
        (a, _), (_, b) = grid.elements[e], grid.elements[e + 1]
        q_in, q_out = float(_element_rule(tn[a:j + 1])[-1]), float(_element_rule(tn[j:b + 1])[0])
        rj = grid.r[j:j + 1].copy()
        parts = [_side_values(x, rj) for x in ((sa,) if sb is sa else (sa, sb))]
        fj = float(np.asarray(f(rj), dtype=float).ravel()[0])
        g_sides = []
        for side in (1, 2):
            (pa, qa, wa) = (parts[0][0], parts[0][1], parts[0][side + 1])
            (pb, qb, wb) = (pa, qa, wa) if len(parts) == 1 else (parts[1][0], parts[1][1], parts[1][side + 1])
            g_sides.append(fj * (pa * pb * 0.5 * (wa + wb) + qa * qb))
        out.append((j, q_in, q_out, *g_sides))
    return out


def _side_values(s, rj: np.ndarray) -> tuple[float, float, float, float]:
    """(P, Q, density weight inside, outside) of state ``s`` at the one radius ``rj``: the weight's two
    sides where ``s`` has a node on the jump there (``weight_sides``), else its value there (twice)."""
    names = ("P", "Q", "weight")
    P, Q, w = (float(x[0]) for x in components_at(s, rj, names))
    for j, w_in, w_out in s.weight_sides:
        if abs(s.r[j] - rj[0]) <= 1e-12 * rj[0]:
            return P, Q, w_in, w_out
    return P, Q, w, w


_SCREEN_FLOOR = 1e-16
"""An element whose screening bound (:func:`_unresolved`) stays below this fraction of the integral of
|integrand| is not refined."""
_SCREEN_ROUNDING = 64 * np.finfo(float).eps      # of max |f| on the element: what interpolating f itself rounds
_REFINE_T, _REFINE_W = np.polynomial.legendre.leggauss(16)
_REFINE_DEPTH = 48           # halvings of a panel at most (a jump is then within 2^-48 of an element)
_REFINE_POINTS = 100_000     # and at most this many integrand evaluations per refinement step
_REFINE_TOL = 2e-16          # two refinements agreeing within this fraction of the integral of |integrand| stop it
_REFINE_TREND = 1e4          # ... when the step before changed by at most this many times as much


def _element_rule(t: np.ndarray) -> np.ndarray:
    """Interpolatory quadrature weights of nodes ``t`` (ascending) for the integral over [t[0], t[-1]]: the
    integrals of their Lagrange polynomials, from Legendre moments (the element's own rule, Gauss-Lobatto or
    Clenshaw-Curtis, to rounding)."""
    half = 0.5 * (t[-1] - t[0])
    x = (t - t[0]) / half - 1.0
    moments = np.zeros(len(t))
    moments[0] = 2.0
    return half * np.linalg.solve(np.polynomial.legendre.legvander(x, len(t) - 1).T, moments)


def _screen_points(grid):
    """``(t at the nodes, first and last node of each element, t and r of the check points, index of each
    element's first check point, and the interpolation to them, :func:`~boundkit.wavefunctions.cardinal_rows`)``
    of :func:`_unresolved` (Gauss-Legendre points, as many on each element as it has nodes, element by
    element; cached by grid: the levels of a channel share theirs)."""
    return _screen_points_of(np.ascontiguousarray(grid.r).tobytes(), tuple(grid.elements))


@lru_cache(maxsize=256)
def _screen_points_of(nodes: bytes, elements: tuple):
    tn = np.log(np.frombuffer(nodes, dtype=float))
    starts = np.array([a for a, _ in elements])
    ends = np.array([b for _, b in elements])
    pieces = [0.5 * (tn[b] + tn[a]) + 0.5 * (tn[b] - tn[a]) * _gauss(b - a + 1) for a, b in elements]
    t_chk = np.concatenate(pieces)
    seg = np.cumsum([0] + [len(p) for p in pieces[:-1]])
    rows, cardinal = cardinal_rows(tn, elements, t_chk)
    out = (tn, starts, ends, t_chk, np.exp(t_chk), seg, rows, cardinal)
    for arr in out:
        arr.flags.writeable = False
    return out


@lru_cache(maxsize=64)
def _gauss(m: int) -> np.ndarray:
    """Gauss-Legendre points on [-1, 1] (read-only)."""
    x = np.polynomial.legendre.leggauss(m)[0]
    x.flags.writeable = False
    return x


def _unresolved(grid, sa, sb, f, kind: str, fr, rho, g, scale: float, sides=()) -> tuple[float, float]:
    """(correction, error) of the nodal integral over the grid's elements for the structure of f between
    the nodes, which both resolutions of a level share when they share the grid (the Lagrange-Laguerre
    path), so that their change does not show it.

    Screening: on each element, f at as many Gauss-Legendre points as the element has nodes against
    the polynomial through its nodal values; the largest difference times the integral of |density|
    over the element bounds what the nodal rule misses of f there (the rule integrates the density
    times f's interpolant). Elements whose bound exceeds _SCREEN_FLOOR of ``scale`` (the integral of
    |integrand|) are integrated again by Gauss-Legendre on 1, 2, 4, ... sub-panels in t with the
    states interpolated (their elements are exact), until two steps agree within _REFINE_TOL of
    ``scale``; the correction replaces the element's nodal part with the last step, whose change from
    the step before is its error. The other elements' bounds are added to the error.

    A level's own nodes resolve a potential it was solved in; an f with structure of its own (a
    nuclear charge distribution inside a point-Coulomb level, a step, a kink) is what this catches:
    such an f put the first-order finite-size shift of a Schrodinger level of Z = 92 2.8e-4 off with
    an estimate of 2e-14. Finite-difference states (one element per smooth piece) are not screened:
    their two resolutions have different nodes, and the change between them shows f's structure.
    ``sides`` (:func:`_jump_sides`): an element's nodal part takes the integrand at its ends on a jump of
    the density weight on its own side, as the nodal integral does.
    """
    if grid.family == "finite-difference" or not grid.elements:
        return 0.0, 0.0
    r = grid.r
    tn, starts, ends, t_chk, r_chk, seg, rows, cardinal = _screen_points(grid)
    f_chk = f(r_chk)
    miss = np.abs(f_chk - np.einsum("ij,ij->i", cardinal, fr[rows]))
    worst = np.maximum.reduceat(np.where(np.isnan(miss), np.inf, miss), seg)
    size = np.maximum.reduceat(np.where(np.isfinite(f_chk), np.abs(f_chk), 0.0), seg)
    worst = np.maximum(worst - _SCREEN_ROUNDING * size, 0.0)     # the interpolation's own rounding is no structure
    held = np.abs(rho) * grid.weights
    mass = np.add.reduceat(held, starts) + held[ends] * (np.append(starts[1:], len(r)) != ends + 1)
    bound = worst * mass
    flagged = np.nonzero(~(bound <= _SCREEN_FLOOR * scale))[0]
    error = float(np.sum(bound[bound <= _SCREEN_FLOOR * scale]))
    if not flagged.size:
        return 0.0, error
    gr = g * r
    inner = {j: (g_in * r[j], g_out * r[j]) for j, _, _, g_in, g_out in sides}     # at jumps: each side's own

    def element_values(e):
        v = gr[starts[e]:ends[e] + 1]
        if starts[e] in inner or ends[e] in inner:
            v = v.copy()
            v[0] = inner.get(starts[e], (v[0], v[0]))[1]
            v[-1] = inner.get(ends[e], (v[-1], v[-1]))[0]
        return v

    nodal = np.array([float(np.sum(_element_rule(tn[starts[e]:ends[e] + 1]) * element_values(e)))
                      for e in flagged])
    # adaptive refinement: every panel (at first a whole flagged element, valued by its nodal rule) is
    # split in two halves of 16 Gauss points each; it is settled when the halves agree with it within
    # _REFINE_TOL of the scale (a panel settled at the first split keeps its nodal value), else each
    # half becomes a panel; a jump or a kink is thus followed down to a narrow panel
    lo, hi, coarse = tn[starts[flagged]], tn[ends[flagged]], nodal
    first = True
    total = 0.0
    last = bound[flagged]          # the change (at first the screening bound) that led to each panel
    for depth in range(_REFINE_DEPTH):
        mid = 0.5 * (lo + hi)
        ends2 = np.stack((lo, mid, hi), axis=1)
        width = 0.5 * (hi - lo)
        t = (ends2[:, :2, None] + 0.5 * width[:, None, None] * (_REFINE_T[None, None, :] + 1.0))
        rr = np.exp(t)
        h = _pair_integrand(sa, sb, rr.ravel(), f, kind).reshape(rr.shape) * rr
        halves = 0.5 * width[:, None] * np.einsum("epk,k->ep", h, _REFINE_W)
        value = halves.sum(axis=1)
        change = np.abs(value - coarse)
        # settled: the halves agree with the panel, and so did the panel with its parent nearly (a
        # panel halved at a jump can agree with its halves by chance: they all place the jump at the
        # panel's middle)
        done = (change <= _REFINE_TOL * scale) & (last <= _REFINE_TREND * _REFINE_TOL * scale)
        if depth == _REFINE_DEPTH - 1 or 2 * np.count_nonzero(~done) * 2 * len(_REFINE_T) > _REFINE_POINTS:
            done[:] = True      # out of budget: the halves stand, with the larger of the last two changes
            change = np.maximum(change, last)
        total += float(np.sum(coarse[done] if first else value[done]))
        error += float(np.sum(change[done]))
        more = ~done
        lo, hi = np.stack((lo[more], mid[more]), 1).ravel(), np.stack((mid[more], hi[more]), 1).ravel()
        coarse, last = halves[more].ravel(), np.repeat(change[more], 2)
        first = False
        if not lo.size:
            break
    return total - float(np.sum(nodal)), error


def _integral(sa, sb, f, kind: str = "density", breaks=()) -> float:
    """integral_0^r_max of the integrand (:func:`_integrals`)."""
    return _integrals(sa, sb, f, kind, breaks)[0]


VALUE_FLOOR = 2e-14 if EXTENDED_LONG_DOUBLE else 1e-13
"""The spectral family's relative rounding floor of an observable: 2e-14, as for the energies, where long
double is extended (x86); 1e-13 where it is plain double (Windows, ARM macOS: the elements' residuals and
matrices in double). Measured with numpy's longdouble taken as double on this machine (the default suite,
tests/test_observables_tail.py): <r^20> of a Dirac Z = 1 1s 2.7e-14 off, <r^10> and <r^30> of a
Klein-Gordon 1s 3.9e-14 and 9.1e-14 off, against estimates of 2.0e-14 to 7.9e-14; nothing else in the
suite missed there but artefacts of the substitution. No such machine was at hand to confirm it."""


def _estimate(value: float, other: float | None, scale: float | None = None, origin: float = 0.0,
              noise: float = 0.0) -> float:
    """The change from the previous resolution (``other``), never below ``noise`` (:func:`_state_noise`)
    nor the spectral family's rounding
    floor: VALUE_FLOOR (2e-14 with an extended long double, as for the energies) of ``scale``, the integral
    of the integrand's absolute value (an integral that cancels, an overlap or <r - <r>>, keeps the rounding
    of its parts), or of |value| when no scale is given; plus ``origin``, the rounding read from below the
    first node (:func:`_origin_error`), which both resolutions can share."""
    if other is None:
        return math.inf
    return max(abs(value - other), noise, VALUE_FLOOR * (abs(value) if scale is None else scale)) + origin


FD_NOISE = 3e-16
"""Relative rounding of a finite-difference state per node of its grid, as a dilation r -> (1 + delta) r
(:func:`_state_noise`)."""


def _state_noise(sa, sb, f, kind: str) -> float:
    """Rounding of an integral from that of finite-difference states, which no change of
    resolution shows: delta times the sum over nodes of |f| |dg/dt| dt, g = r times the density
    (or overlap) and t = ln r: the change of the integral under a dilation r -> (1 + delta) r of the
    states, with |.| inside; delta = FD_NOISE N, N the nodes of the larger grid. 0 for other families.

    Why a dilation: near their rounding floor the finite-difference states of hydrogen carry an error
    that moves <r^k> by k delta (<r^-1> and <r> by -delta and +delta, <r^20> by 20 delta), as the states
    of a slightly different charge would (their energies move by about 2 delta); successive sizes
    differed by less than that (<r^20> of 4f: 7.8e-13 relative error, change 2e-14). Measured on
    hydrogen n <= 6 and Dirac Z = 50 levels (<r^k>, k in -2..20, tol 1e-8 to 1e-14), the delta needed
    to cover the errors that even the change between sizes divided by (2^8 - 1) / 16 missed grew with the
    grid: at most 3.3e-13 at 1200 nodes, 2.8e-13 at 2400 and 4800, 1e-12 at 9600 (the rounding of a
    derivative on a finer grid is larger)."""
    if "finite-difference" not in (sa.family, sb.family):
        return 0.0
    grid = sa if sa.r[-1] >= sb.r[-1] else sb
    r = grid.r
    with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
        g = r * _pair_density(sa, sb, r, kind)
        dg = np.gradient(g, np.log(r))
        terms = np.abs(f(r)) * np.abs(dg) * grid.weights / r
    total = float(np.sum(terms[np.isfinite(terms)]))
    return FD_NOISE * max(len(sa.r), len(sb.r)) * total


def _origin_error(below: float, *states, kind: str = "density") -> float:
    """Error of the part of an integral below the first node (``below``, of the integrand's absolute
    value): twice the states' relative rounding of P / r^gamma there (:func:`origin_noise`; a product
    of two states). Negligible unless the integrand is nearly flat in ln r towards the origin (a
    point-dipole hyperfine integral at high Z puts 27 % of itself there). A Q one power below P there
    (kappa < 0 without a point charge, :func:`origin_shift`) adds (Q / P)^2 ~ r^2 of its noise to a
    density, nothing to see: only P's counts then, unless the integrand is P Q."""
    def noise(s):
        return origin_noise(s, "P") if kind != "PQ" and kind != "QP-PQ" and origin_shift(s) == 1 else origin_noise(s)
    return 2.0 * max(noise(s) for s in states) * below if below > 0 else 0.0


def _real_function(f, name: str = "f", fix: str = "") -> Callable[[np.ndarray], np.ndarray]:
    """``f`` checked to be callable, wrapped so that its values are real: an imaginary part is refused
    (casting would drop it without a word), naming ``name`` and the ``fix``."""
    if not callable(f):
        raise ValueError(f"{name}: give a vectorised function of r in bohr, e.g. lambda r: r**2")
    fix = fix or "take the real and the imaginary part in two calls"

    def real(r):
        v = np.asarray(f(r))
        if v.shape != np.shape(r):
            if v.ndim:
                raise ValueError(f"{name}: returned an array of shape {v.shape} for radii of shape {np.shape(r)}; "
                                 "return one value per radius (a vectorised function of r, e.g. lambda r: r**2)")
            v = np.full(np.shape(r), v)         # a constant
        if np.iscomplexobj(v):
            imag = np.abs(np.imag(v))
            if np.any(imag != 0):
                raise ValueError(f"{name}: returned complex values (imaginary part up to {np.max(imag):.3g}); this "
                                 f"integral is of a real function: {fix}")
            v = np.real(v)
        return v
    return real


# --- expectation values --------------------------------------------------------------------

def _note(level) -> str:
    return KG_NOTE if level.state.density_weight is not None else ""


def expectation_value(level, f: Callable[[np.ndarray], np.ndarray], *, name: str = "<f>",
                      unit: str = "a.u.", kind: str = "density", breaks=()) -> Quantity:
    """<f> of ``level`` with an error estimate from the previous resolution.

    Parameters
    ----------
    level : Level
        A level from :func:`boundkit.solve`.
    f : callable
        Vectorised f(r), r in bohr (atomic units in, atomic units out).
    name, unit : str
        Labels of the returned quantity.
    breaks : sequence of float
        Radii (bohr) where f has a kink or jump that the level's nodes do not
        know of (e.g. a nuclear surface); the integral is then taken by panels
        split there, with the level interpolated.

    Returns
    -------
    Quantity
        ``value`` and absolute ``error`` (inf when ``level.previous_state`` is None), the error
        including a bound of what lies beyond the level's last node.

    Raises
    ------
    ValueError
        When f rho still grows at the level's last node, or more than ``TAIL_LIMIT`` of the integral
        may lie near or beyond it (f grows too fast for the level's decay).

    Notes
    -----
    <f> = integral f(r) rho(r) dr with rho = P^2 (Schrodinger), P^2 + Q^2
    (Dirac) or the Klein-Gordon charge density (E + mc^2 - V)/(mc^2) P^2.
    """
    return _expectation(level, _real_function(f), name, unit, kind, tuple(breaks),
                        ("f", f"the integrand f rho of {level.label}",
                         "f grows too fast with r for this level's decay"))


def _expectation(level, f, name: str, unit: str, kind: str, breaks: tuple,
                 refusal: tuple[str, str, str]) -> Quantity:
    """:func:`expectation_value` of a checked ``f``; ``refusal`` words the refusal of an integral
    reaching beyond the level's last node (:func:`_refuse_far`)."""
    s = level.state
    tail, R = _outer_tail(s, s, f, kind)
    if math.isinf(tail):
        _refuse_far(tail, 0.0, R, refusal)
    value, scale, below, quad = _integrals(s, None, f, kind, breaks)
    _refuse_far(tail, scale, R, refusal)
    prev = None if level.previous_state is None else _integral(level.previous_state, None, f, kind, breaks)
    error = _estimate(value, prev, scale, _origin_error(below, s, kind=kind), _state_noise(s, s, f, kind)) + \
        (tail if tail > 0 else 0.0) + quad
    return Quantity(name, value, error, unit, _note(level))


def expectation(level, f: Callable[[np.ndarray], np.ndarray]) -> float:
    """<f(r)> of ``level`` (atomic units): the value of :func:`expectation_value`."""
    return expectation_value(level, f).value


def radial_moment(level, k: float, length_unit: str = "bohr") -> Quantity:
    """<r^k> in ``length_unit``^k, with error estimate.

    Raises ValueError unless k is finite and k > -(2 gamma + 1) (else the integral diverges at the
    origin), and when r^k rho reaches beyond the radius the level was solved to (a large k: the
    density's tail there, r^k P^2, is not small; see the module's "Outer end").

    Notes
    -----
    <r^k> = integral r^k rho(r) dr; rho ~ r^(2 gamma) at the origin.
    """
    k = float(k)
    gamma = level.state.gamma
    if not math.isfinite(k):
        raise ValueError(f"k: must be a finite number, got {k:g}")
    if k <= -(2 * gamma + 1):
        raise ValueError(f"k: <r^k> of {level.label} needs k > -(2 gamma + 1) = {-(2 * gamma + 1):.6g} "
                         "(the density goes like r^(2 gamma) at the origin); use a larger power")
    unit = globals()["length_unit"](length_unit)
    scale = LENGTH_UNITS[unit] ** k
    q = _expectation(level, lambda r: r**k, "<f>", "a.u.", "density", (),
                     ("k", f"<r^{k:g}> of {level.label}", "use a smaller k"))
    return Quantity(f"<r^{k:g}>", q.value * scale, q.error * abs(scale), f"{unit}^{k:g}", q.note)


def mean_radius(level) -> float:
    """<r> of ``level`` in bohr."""
    return expectation(level, lambda r: r)


def rms_radius(level) -> float:
    """sqrt(<r^2>) of ``level`` in bohr."""
    return math.sqrt(expectation(level, lambda r: r * r))


def density_at_origin(level) -> Quantity:
    """Coefficient c of the density rho(r) ~ c r^(2 gamma) at the origin (bohr^(-1-2 gamma)); for a Dirac
    level with kappa > 0 and no point charge at the origin, whose Q ~ r^(gamma - 1) leads, of rho ~ c
    r^(2 gamma - 2) (the name says which).

    Notes
    -----
    c = lim P^2 / r^(2 gamma) (+ Q^2 / r^(2 gamma) for Dirac, where Q has P's power: a point charge;
    without one Q ~ r^(gamma + 1) for kappa < 0 adds nothing, and for kappa > 0 c = lim Q^2 / r^(2 gamma - 2)).
    For Schrodinger s states (gamma = 1) |psi(0)|^2 = c / (4 pi). Klein-Gordon: the plain
    P^2 coefficient (the charge-density weight diverges at a point charge).
    P / r^gamma is extrapolated to r = 0 linearly from the first node and one
    near 4 r_min; the error estimate is the larger of the change from the
    previous resolution and the difference to a quadratic extrapolation from
    three nodes, plus twice the relative scatter of the leading components over their power about a line
    over those nodes (rounding in the nodal values near r_min, which both
    resolutions share). A Dirac level with kappa < 0 at an origin without a point charge takes a_0 of
    the regular series fitted on the first element beside the irregular solution's admixture
    (:func:`~boundkit.wavefunctions.origin_series`): the line had read that admixture and the series'
    curvature (1.9e-8 off at Z = 83, estimate 2.0e-8; now 5e-14). Its estimate is the larger of the change
    from the previous resolution and the change of a_0 with one or two more terms of the fit (the state's
    own smooth error near r_min, 5e-13 of P at Z = 20, moves a_0 by 2e-12 and the fit cannot tell it from
    the series), plus twice a_0's rounding (the fit's residual carried to r = 0).
    """
    st = level.state
    shift = origin_shift(st, "Q")
    lead = ("Q",) if shift == -1 else ("P", "Q") if shift == 0 and st.Q is not None else ("P",)

    def coef(s, points=2):
        return sum(origin_coefficient(s, c, points, own_power=True) ** 2 for c in lead)

    value = coef(st)
    prev = None if level.previous_state is None else coef(level.previous_state)
    noise = max(origin_noise(st, c) for c in lead)      # with a fitted series, its leading coefficient's rounding
    # the extrapolation's change with one more node, or the fitted series' with one or two more terms
    spread = max(abs(coef(st, p) - value) for p in ((3,) if origin_series(st) is None else (3, 4)))
    error = max(_estimate(value, prev), spread) + 2 * noise * value
    g = st.gamma - 1 if shift == -1 else st.gamma
    power = "2 gamma - 2" if shift == -1 else "2 gamma"
    return Quantity(f"rho/r^({power}) at 0", value, error, f"bohr^-{1 + 2 * g:.6g}",
                    "P^2 coefficient" if st.density_weight is not None else "")


# --- matrix elements -----------------------------------------------------------------------

def matrix_element(level_a, level_b, f: Callable[[np.ndarray], np.ndarray], *,
                   kind: str = "density") -> Quantity:
    """Radial matrix element <a|f|b> between two levels of the same potential.

    Parameters
    ----------
    level_a, level_b : Level
        Levels of any channels of one potential and equation.
    f : callable
        Vectorised f(r), r in bohr.
    kind : {'density', 'PQ', 'P2-Q2'}
        'density' (default): integral f (P_a P_b + Q_a Q_b) dr (Klein-Gordon:
        charge-density inner product). 'PQ': integral f (P_a Q_b + Q_a P_b)/2 dr.
        'P2-Q2': integral f (P_a P_b - Q_a Q_b) dr (a Lorentz-scalar operator).

    Returns
    -------
    Quantity
        Atomic units; the error is the larger of the change from the previous
        resolutions and the difference between integrating on either level's nodes,
        plus a bound of what lies beyond the first of the two levels' last nodes
        (refused as in :func:`expectation_value` when that is not small).

    Notes
    -----
    See the module docstring for the Klein-Gordon weight and the quadrature.
    """
    f = _real_function(f)
    if kind not in ("density", "PQ", "P2-Q2"):
        raise ValueError(f"kind: {kind!r} is not one of 'density', 'PQ', 'P2-Q2'")
    if kind != "density" and (level_a.state.Q is None or level_b.state.Q is None):
        raise ValueError(f"kind: {kind!r} needs Dirac levels (two components)")
    sa, sb = level_a.state, level_b.state
    name = f"<{level_a.label}|f|{level_b.label}>"
    refusal = ("f", f"the integrand of {name}", "f grows too fast with r for these levels' decay")
    if sa is sb:
        return _expectation(level_a, f, name, "a.u.", kind, (), refusal)
    tail, R = _outer_tail(sa, sb, f, kind)
    if math.isinf(tail):
        _refuse_far(tail, 0.0, R, refusal)
    value, scale, below, quad = _integrals(sa, sb, f, kind)
    _refuse_far(tail, scale, R, refusal)
    swapped = _integral(sb, sa, f, kind) if sa.r[-1] != sb.r[-1] else value
    pa, pb = level_a.previous_state, level_b.previous_state
    prev = None if pa is None or pb is None else _integral(pa, pb, f, kind)
    err = max(_estimate(value, prev, scale, _origin_error(below, sa, sb, kind=kind), _state_noise(sa, sb, f, kind)),
              abs(value - swapped))
    return Quantity(name, value, err + (tail if tail > 0 else 0.0) + quad, "a.u.", _note(level_a))


# --- Dirac magnetic quantities ---------------------------------------------------------------

def _need_dirac(level, what: str) -> None:
    if level.state.Q is None or level.kappa is None:
        raise ValueError(f"level: the {what} needs a Dirac level (two components); {level.label} has one")


def g_factor(level, mass: float = 1.0) -> Quantity:
    """Bound-particle g-factor of a Dirac level (point magnetic moment of the particle itself
    not included beyond Dirac's g = 2).

    Parameters
    ----------
    level : Level
        A Dirac level.
    mass : float
        Mass used in the solve, in electron masses (``result.settings['mass_atomic_units']``).

    Notes
    -----
    g = (2 kappa / (j (j + 1))) m c integral r P Q dr. For a point Coulomb
    nucleus this equals kappa (2 kappa E_tot/(mc^2) - 1) / (2 j (j + 1))
    (Breit's (2/3)(1 + 2 gamma) for 1s).
    """
    _need_dirac(level, "g-factor")
    j = abs(level.kappa) - 0.5
    factor = 2 * level.kappa / (j * (j + 1)) * mass * C_AU
    q = expectation_value(level, lambda r: r, kind="PQ")
    return Quantity("g", factor * q.value, abs(factor) * q.error, "1", "Dirac, no radiative corrections")


NUCLEAR_MAGNETON_AU: float = 0.5 * ALPHA * sc.m_e / sc.m_p
"""Nuclear magneton in Gaussian atomic units (Bohr magneton alpha/2), from scipy.constants."""


def hyperfine_a(level, nuclear_moment: float, nuclear_spin: float, *, mass: float = 1.0,
                particle_mass: float | None = None, magnetization_radius: float | None = None,
                radius_unit: str = "bohr", energy_unit: str = "MHz") -> Quantity:
    """Magnetic dipole hyperfine constant A of a Dirac level.

    Parameters
    ----------
    level : Level
        A Dirac level.
    nuclear_moment : float
        Nuclear magnetic moment in nuclear magnetons (e.g. the proton's 2.79...).
    nuclear_spin : float
        Nuclear spin I (> 0).
    mass, particle_mass : float
        Mass used in the solve (the reduced mass when a nucleus mass was given) and
        the orbiting particle's own mass, in electron masses. The particle's
        magnetic moment goes with its own mass, so A is scaled by mass/particle_mass.
    magnetization_radius : float, optional
        Radius of a uniformly magnetized sphere (Bohr-Weisskopf effect), in
        ``radius_unit``; None: point dipole.
    radius_unit : str
        Length unit of ``magnetization_radius`` (bohr, fm, pm, angstrom, nm).
    energy_unit : str
        Unit of the result (MHz by default; any energy unit).

    Notes
    -----
    A = (mu_I / I) (2 kappa / (j (j + 1))) integral P Q F(r) dr, F = 1/r^2
    (point dipole) or r/R^3 for r < R (uniform sphere). The energy of a level F
    is A [F(F+1) - I(I+1) - j(j+1)] / 2.
    """
    _need_dirac(level, "hyperfine constant")
    if not (nuclear_spin > 0 and math.isfinite(nuclear_spin)) or abs(2 * nuclear_spin - round(2 * nuclear_spin)) > 1e-12:
        raise ValueError(f"nuclear_spin: must be a positive multiple of 1/2 (e.g. 0.5 for the proton), "
                         f"got {nuclear_spin:g}")
    if not math.isfinite(nuclear_moment):
        raise ValueError("nuclear_moment: must be finite (nuclear magnetons)")
    j = abs(level.kappa) - 0.5
    ratio = 1.0 if particle_mass is None else mass / particle_mass
    factor = (nuclear_moment * NUCLEAR_MAGNETON_AU / nuclear_spin) * 2 * level.kappa / (j * (j + 1)) * ratio
    if magnetization_radius is None:
        gamma = level.state.gamma
        if 2 * gamma - 1 <= 0:
            raise ValueError(f"level: the point-dipole hyperfine integral of {level.label} diverges at the origin "
                             f"(P Q / r^2 goes like r^(2 gamma - 2), gamma = {gamma:.4g} <= 1/2); give "
                             "magnetization_radius (a magnetized sphere of the nucleus' size; "
                             "--magnetized-sphere-fm on the command line) instead")
        F = lambda r: r**-2.0  # noqa: E731
        note = "point magnetic dipole"
    else:
        R = float(magnetization_radius) / LENGTH_UNITS[length_unit(radius_unit)]
        if not (R > 0 and math.isfinite(R)):
            raise ValueError(f"magnetization_radius: must be > 0 and finite ({radius_unit}), "
                             f"got {magnetization_radius:g}")
        F = lambda r: np.where(r < R, r / R**3, 1.0 / np.maximum(r, R) ** 2)  # noqa: E731
        note = f"uniformly magnetized sphere, R = {R:.6g} bohr"
    q = expectation_value(level, F, kind="PQ", breaks=() if magnetization_radius is None else (R,))
    scale = factor * float(hartree_to(1.0, energy_unit))
    return Quantity("A_hfs", scale * q.value, abs(scale) * q.error, energy_unit, note)


# --- one record per level ----------------------------------------------------------------------

@dataclass(frozen=True, slots=True, repr=False)
class LevelObservables:
    """Expectation values of one level (lengths in ``length_unit``).

    ``g_factor`` is None outside the Dirac equation, ``potential``/``scalar``
    (hartree) None unless a potential was given.
    """

    label: str
    length_unit: str
    r_mean: Quantity
    r_rms: Quantity
    r_inverse: Quantity
    origin: Quantity
    g_factor: Quantity | None = None
    potential: Quantity | None = None
    scalar: Quantity | None = None
    note: str = ""

    def to_dict(self) -> dict:
        out = {"r_mean": self.r_mean.value, "r_rms": self.r_rms.value, "r_inverse": self.r_inverse.value,
               "errors": {"r_mean": self.r_mean.error, "r_rms": self.r_rms.error,
                          "r_inverse": self.r_inverse.error}}
        if self.g_factor is not None:
            out["g_factor"] = self.g_factor.value
            out["errors"]["g_factor"] = self.g_factor.error
        for key in ("potential", "scalar"):
            q = getattr(self, key)
            if q is not None:
                out[f"{key}_hartree"] = q.value
        if self.note:
            out["density"] = self.note
        return out

    def __repr__(self) -> str:
        parts = [repr(self.r_mean), repr(self.r_rms), repr(self.r_inverse)]
        if self.g_factor is not None:
            parts.append(repr(self.g_factor))
        return f"LevelObservables({self.label}: " + "; ".join(parts) + ")"


def masses_of(result) -> tuple[float, float]:
    """(mass used in the solve, particle's own mass) in electron masses, from a SolveResult."""
    s = result.settings
    mass = float(s.get("mass_atomic_units", 1.0))
    mev = s.get("particle_mass_MeV")
    return mass, (mass if mev is None else mass_mev_to_au(float(mev)))


def observables(level, *, length_unit: str = "bohr", mass: float = 1.0, potential=None) -> LevelObservables:
    """<r>, sqrt(<r^2>), <1/r>, the density at the origin, and for Dirac levels g.

    Parameters
    ----------
    level : Level
    length_unit : str
        Unit of the radii (<1/r> is in 1/length_unit).
    mass : float
        Mass used in the solve (electron masses), for the g-factor.
    potential : Potential, optional
        The potential solved (``boundkit.make_potential(...)``); gives <V> and <S> (hartree).

    Notes
    -----
    r_rms = sqrt(<r^2>), its error dr_rms = d<r^2> / (2 r_rms).
    """
    unit = globals()["length_unit"](length_unit)
    scale = LENGTH_UNITS[unit]
    note = _note(level)
    r1 = expectation_value(level, lambda r: r)
    r2 = expectation_value(level, lambda r: r * r)
    rinv = expectation_value(level, lambda r: 1.0 / r)
    rms = math.sqrt(r2.value)
    out = dict(
        r_mean=Quantity("<r>", r1.value * scale, r1.error * scale, unit, note),
        r_rms=Quantity("r_rms", rms * scale, r2.error / (2 * rms) * scale, unit, note),
        r_inverse=Quantity("<1/r>", rinv.value / scale, rinv.error / scale, f"1/{unit}", note),
        origin=density_at_origin(level),
    )
    if level.state.Q is not None and level.kappa is not None:
        out["g_factor"] = g_factor(level, mass)
    if potential is not None:
        out["potential"] = expectation_value(level, lambda r: np.asarray(potential.V(r), float),
                                             name="<V>", unit="hartree")
        if level.state.Q is not None:
            out["scalar"] = expectation_value(level, lambda r: np.asarray(potential.S(r), float),
                                              name="<S>", unit="hartree", kind="P2-Q2")
        else:
            out["scalar"] = expectation_value(level, lambda r: np.asarray(potential.S(r), float),
                                              name="<S>", unit="hartree")
    return LevelObservables(label=level.label, length_unit=unit, note=note, **out)
