"""One channel on spectral elements: box, element layout, resolution ladder.

For the spectral family the solver

1. fits the box [r_min, r_max]: r_min from the origin exponent (as for every
   family), r_max where the highest level sought has decayed by e^-42 (WKB),
   grown until the box holds as many levels as requested;
2. lays out elements in t = ln r so that each holds a bounded share of the
   levels' WKB phase (oscillations where the level is allowed, decay where it
   is not, at most 2 units of t each, element edges at the potential's
   breakpoints); elements near the origin, where f is nearly constant, get
   half the degree;
3. raises the degree of every element along a ladder that starts where the
   error is about 100 tol (:func:`ladder_for`); on each rung all levels come
   from one symmetric matrix (:mod:`boundkit.locator`), and the rung that is
   reported is certified by counting;
4. estimates each level's error by the change from the previous rung
   (geometric convergence makes this conservative) and stops when it meets
   ``tol`` (twice, as for the collocation family) or the rounding floor.

For a short-range potential the number of bound levels is the count at the
threshold on a far box (r_max = 1e4 natural lengths beyond the well) whose
outer end is open to the potential-free exterior, which is the number of nodes
of the zero-energy solution on (0, inf) (:func:`boundkit.solver._far_bound`).
"""
from __future__ import annotations

import logging
import math
from dataclasses import dataclass
from functools import lru_cache
from typing import TYPE_CHECKING

import numpy as np

from .discretize.elements import element_grid, gll, with_quadrature

if TYPE_CHECKING:       # the operator and the locator load with the first rung, not with the stop rule
    from .equations.variational import SymmetricOperator
    from .locator import Located

__all__ = ["DEGREES", "FLOOR", "far_operator", "ladder_for", "layout", "make_operator", "potential_floor",
           "solve_rung", "Rung", "spectral_done", "with_potential_floor"]

log = logging.getLogger(__name__)

DEGREES = (4, 6, 8, 10, 12, 15, 18, 21, 24, 28, 32, 36, 42, 48, 54, 60)


def ladder_for(tol: float) -> tuple:
    """The rungs for a tolerance: from the first degree whose energy error is about tol / 10.

    The layout gives every element a bounded share of WKB phase, so the error of
    a level falls at a similar rate on every problem: about 10^(1 - n) at degree n
    (measured on Coulomb levels of all three equations, l up to 20, and on the
    Fermi nucleus). Starting there skips the coarse rungs, which would only confirm
    what the rate already says; the stop rule (last two changes below tol and
    100 tol) still decides. Starting where the energy error is 100 tol was 10 %
    faster but left the wave functions short: the energy error is about the square
    of theirs, and transition rates at Z = 92 moved by 1.2e-10 (measured against
    an independent integration at tol 1e-13).
    A tol below the rounding floor starts where the floor would: a start beyond the last degree
    left one rung, no change between rungs, and an infinite error estimate (tol 1e-100).
    """
    start = max(4.0, _START - math.log10(max(tol, FLOOR)))
    return tuple(n for n in DEGREES if n >= start) or DEGREES[-1:]
FLOOR = 2e-14        # rounding floor of refined energies (extended-precision residuals)
POTENTIAL_FLOOR = 9.5e-15  # ... and of a level's potential energy (see potential_floor)
_PHASE = 5.0         # WKB phase (radians of oscillation, or e-folds / 3 of decay) per element
_MAX_DT = 3.0        # longest element in t
_MAX_DT_QUIET = 6.0  # longest quiet element (f nearly constant there)
_START = 2.0  # first degree: _START - log10(tol) (see ladder_for)
_DECAY_CUT = 50.0    # e-folds of decay beyond which a level needs no resolution (the box keeps 42)
MAX_ELEMENTS = 20_000  # most elements of a layout: 300 hydrogen s levels take 198, 200 oscillator levels 257;
#                       an attractive -1/r^2.5 core (that falls to the centre) asked for 7e6 and was killed for memory


def layout(eq, pot, sample_fn, r_min: float, r_max: float, energies) -> tuple[list, list]:
    """Element edges in t and a 'quiet' flag per element (see the module docstring)."""
    t = np.linspace(math.log(r_min), math.log(r_max), 4001)
    r = np.exp(t)
    s = sample_fn(r, scan=True)      # overflowing (confining) values become large, not errors
    rho = np.full_like(r, 0.25)
    for E in energies:
        with np.errstate(all="ignore"):
            ex = eq.excess(E, s)
        ex = np.nan_to_num(ex, nan=0.0, posinf=1e300, neginf=-1e300)
        rate = r * np.sqrt(np.abs(ex))
        rho = np.maximum(rho, _rate_for(t, ex, rate))
    rho = np.maximum(rho, _shape_rate(t, r, s))
    cum = np.concatenate(([0.0], np.cumsum(0.5 * (rho[1:] + rho[:-1]) * np.diff(t))))
    n_el = max(1, int(math.ceil(min(cum[-1], 1e300) / _PHASE)))
    if n_el > MAX_ELEMENTS:
        raise ValueError(f"potential: the element layout needs {n_el:.3g} elements between r = {r_min:.3g} and "
                         f"{r_max:.3g} bohr, beyond {MAX_ELEMENTS}: the potential varies too fast there (a core "
                         "steeper than -1/r^2?); regularise it, or ask for fewer levels")
    edges = list(np.interp(np.linspace(0, cum[-1], n_el + 1), cum, t))
    kept = set()            # edges on a breakpoint: a nearby breakpoint is added, not moved onto them
    for b in pot.breakpoints:
        tb = math.log(b)
        if t[0] + 1e-3 < tb < t[-1] - 1e-3:
            j = int(np.argmin([abs(e - tb) for e in edges]))
            if abs(edges[j] - tb) < 0.05 and 0 < j < len(edges) - 1 and edges[j] not in kept:
                edges[j] = tb
            else:
                edges.append(tb)
            kept.add(tb)
    edges = sorted(edges)
    out = [edges[0]]
    for e in edges[1:]:
        gap = e - out[-1]
        if gap < 1e-6:
            # two edges closer than 1e-6 in ln r are one, unless both are breakpoints: a thin, deep
            # shell between them (width 1e-7, strength 1e-2) moved the levels by 1e-2 when merged away
            if e in kept and gap > 1e-12 and out[-1] in kept:
                out.append(e)
            elif e in kept and len(out) > 1:
                out[-1] = e
            continue
        quiet_here = np.interp(e, t, cum) - np.interp(out[-1], t, cum) < 0.5 * _PHASE
        pieces = int(math.ceil(gap / (_MAX_DT_QUIET if quiet_here else _MAX_DT)))
        out += [out[-1] + gap * (i + 1) / pieces for i in range(pieces)]
        out[-1] = e
    phase = np.interp(out, t, cum)
    quiet = [bool(b - a < 0.5 * _PHASE) for a, b in zip(phase[:-1], phase[1:])]
    return out, quiet


_SCATTER = 4.0     # see with_potential_floor


def potential_floor(state, V_abs) -> float:
    """The rounding floor of a level's energy set by the potential it feels: POTENTIAL_FLOOR <|V|>.

    ``V_abs`` is |V| + |S| (or |V + S|) on the state's nodes. A level far shallower than its well (the
    top s level of a square well 1e4 times deeper than its binding) carries the rounding of its
    potential energy, not of its own: measured on 126 square-well levels of the three equations
    against their exact conditions, the error was at most 3.0e-15 <|V|>, 4.5 times the change
    between the last two rungs for the shallowest ones. With more Gauss points where r V is not a
    cubic (a square well's inside is not, in t) the rounding is drawn differently: on 33 Schrodinger
    square-well levels just past their thresholds (l = 0 to 2, exact matching at 40 digits) six were
    6.3e-15 to 8.7e-15 <|V|> off with estimates at the earlier floor, 6e-15 <|V|>; it is now 9.5e-15
    <|V|>. For a Coulomb level <|V|> = 2 |E| (2.00003 |E| for the Dirac 1s at Z = 1), and FLOOR |E|
    stays the larger: at 1e-14 the two were equal to rounding, and an unreachable tol on hydrogen was
    put down to the potential energy instead of the rounding floor (tests/test_accuracy.py).
    """
    dens = state.P**2 if state.Q is None else state.P**2 + state.Q**2
    return POTENTIAL_FLOOR * float(np.sum(state.weights * dens * V_abs))


def with_potential_floor(notes: list, label: str, E: float, est: float, floor: float, tol: float,
                         recent) -> tuple[float, bool]:
    """(the estimate raised to ``floor``, the rounding floor of the level's potential energy
    (:func:`potential_floor`), and whether that floor alone puts it above tol; then a note says so).

    Where the floor is above the change between the last two rungs and the change before it is within
    _SCATTER times the floor, the last three rungs only scatter around the level by rounding, and the
    larger of those two changes (a sample of that scatter) raises the floor: the top s level of a square
    well 1e4 times deeper than its binding was 7.3e-15 <|V|> off, 1.2 times the floor, after changes of
    3.9e-14 and 2.7e-15 hartree (tests/test_steps.py). A change before it far above the floor is the
    ladder still converging, not scatter, and is left out. The scatter raises the estimate only: whether
    the potential energy's rounding is the reason it lies above tol is told by the floor itself (near a
    Klein-Gordon merge the rungs scatter for another reason, which the caller names)."""
    raised = floor
    if floor > est and len(recent) >= 3:
        before = abs(recent[-2] - recent[-3])
        if before <= _SCATTER * floor:
            raised = max(floor, before)
    hit = floor > est and floor > tol * abs(E)
    if hit:
        notes.append(f"{label}: the rounding of its potential energy ({floor / abs(E):.2g} relative) lies "
                     f"above tol {tol:g}: a level this shallow in this well is not resolved that far in "
                     "double precision")
    return max(est, raised), hit


def spectral_done(h: list[float], tol: float) -> bool:
    """Stop rule of the spectral family (elements and the Laguerre mesh): the last change of a
    level's energy history meets tol, and the one before it 100 tol."""
    E = abs(h[-1])
    return abs(h[-1] - h[-2]) <= tol * E and abs(h[-2] - h[-3]) <= 100 * tol * E


def _shape_rate(t, r, s):
    """Resolution density the potential's own shape asks for: 5 sqrt(|g''| / max |g|), g = r (V + S),
    '' = d^2/dt^2.

    A Coulomb tail (g constant) asks for nothing; a nuclear surface of thickness a at radius R (a
    Fermi or Woods-Saxon shape) asks for elements about pi a / R long in t there, which is the
    distance of the shape's complex poles from the real t axis. Without it the levels converge
    slowly and unevenly near the surface, and two rungs can agree by accident (measured: Fermi
    Z = 82, an estimate 16 times below the true error).
    """
    with np.errstate(all="ignore"):
        g = np.nan_to_num(r * (s.V + s.S), nan=0.0, posinf=0.0, neginf=0.0)
        G = float(np.max(np.abs(g)))
        if not np.isfinite(G) or G == 0.0:
            return np.zeros_like(t)
        d2 = np.gradient(np.gradient(g, t), t)
        return np.nan_to_num(5.0 * np.sqrt(np.abs(d2) / G), nan=0.0, posinf=0.0)


def _rate_for(t, ex, rate):
    """Resolution density of one level: its oscillation where allowed, a third of its decay where
    forbidden, and nothing where it has already decayed by more than e^-(_DECAY_CUT) from the nearest
    turning point outward (a deep level far out is zero to every digit there)."""
    rho = np.where(ex < 0, rate, np.minimum(rate, 60.0) / 3.0)
    allowed = np.nonzero(ex < 0)[0]
    if not allowed.size:
        return rho
    dt = np.diff(t)
    step = 0.5 * (rate[1:] + rate[:-1]) * dt
    b = allowed[-1]
    if b < len(t) - 1:                      # decay outward beyond the last turning point
        out = np.concatenate(([0.0], np.cumsum(step[b:])))
        rho[b:] = np.where(out > _DECAY_CUT, 0.0, rho[b:])
    # (inside an inner barrier the elements stay as they are: there w^2 ~ r^(2 gamma) varies fast, and
    # a long element would make the mass matrix singular to rounding)
    return rho


@dataclass
class Rung:
    """One rung of the ladder: degree, grid size, operator and what it located."""

    degree: int
    size: int
    op: SymmetricOperator
    located: Located


_QUIET = 1.0         # degree of quiet elements relative to the others


def _degrees(quiet, n):
    return [max(4, int(n * _QUIET)) if q else n for q in quiet]


def make_operator(eq, sample_fn, gamma, r_core, edges, quiet, n, E0) -> SymmetricOperator:
    """The operator on the elements at degree n.

    Notes
    -----
    The quadratic form is integrated with n + 2 Gauss points per element, exact when r (V + S) is a
    cubic there, plus (2 gamma + 1)(b - a) / 2 for the weight w^2 ~ r^(2 gamma) that varies fast in t,
    plus n on elements where r (V + S) is not a cubic to rounding (:func:`_structure_points`): across
    a sharp Woods-Saxon surface the rule's aliasing error in the potential term fell erratically from rung
    to rung, and two rungs could agree to 0.4 % while both were 2.5e-9 hartree off (tests/
    test_element_quadrature.py). With n / 2 there the aliasing still broke the variational (monotone)
    convergence on sharper wells (a / R = 0.01 to 0.025): degrees 12 and 15 both 3.6e-9 hartree off
    and 2e-11 apart (an estimate 180 times short), a 2p whose error grew from degree 15 to 18 (2.1
    times). With n the errors fall monotonically, and 4 n instead of n moves a rung's level by at most 2 %
    of its error on those wells (on the sharpest of the sweep, a / R = 0.0044, by 8e-13 relative on a rung
    whose error is 1e-14, which the next rung's change, the estimate, covers).
    """
    degrees = _degrees(quiet, n)
    quads = [d + 2 + int(math.ceil(0.5 * (2 * gamma + 1) * (b - a)))
             for d, a, b in zip(degrees, edges[:-1], edges[1:])]
    from .equations.variational import SymmetricOperator

    grid = element_grid(edges, degrees)      # the nodes; the rule follows from them
    sample = sample_fn(grid.r)
    more = _structure_points(grid, sample)
    grid = with_quadrature(grid, [q + m for q, m in zip(quads, more)])
    sample_q = sample_fn(np.exp(grid.tq.astype(float)))
    return SymmetricOperator(eq, grid, sample, sample_q, gamma, r_core, E_ref=E0)


_CUBIC_ROUNDING = 1e-13     # Legendre content of r (V + S) above degree 3, relative to its largest value


def _structure_points(grid, sample) -> list[int]:
    """Extra Gauss points per element: its degree where g = r (V + S) (and r U of a spin-orbit term)
    on the element's nodes has Legendre content above degree 3 beyond _CUBIC_ROUNDING of max |g|, else 0.
    A point charge (g constant) gets none."""
    parts = [sample.r * (sample.V + sample.S)] + ([] if sample.W is None else [sample.r * sample.W])
    starts = np.array([s0 for s0, _ in grid.elements])
    degrees = np.array([s1 - s0 for s0, s1 in grid.elements])
    flagged = np.zeros(len(starts), dtype=bool)
    for g in parts:
        with np.errstate(all="ignore"):
            G = float(np.max(np.abs(g)))
            if not np.isfinite(G) or G == 0.0 or float(np.max(g) - np.min(g)) <= _CUBIC_ROUNDING * G:
                continue
        for d in np.unique(degrees[degrees >= 4]):
            mine = np.nonzero(degrees == d)[0]
            values = g[starts[mine, None] + np.arange(d + 1)]          # one row per element of degree d
            high = values @ _legendre_of_nodes(int(d))[4:].T            # its Legendre content above degree 3
            flagged[mine] |= np.max(np.abs(high), axis=1) > _CUBIC_ROUNDING * G
    return [int(d) if f else 0 for d, f in zip(degrees, flagged)]


@lru_cache(maxsize=32)
def _legendre_of_nodes(d: int) -> np.ndarray:
    """The matrix taking values at the degree-d GLL nodes to the Legendre coefficients of their
    interpolant (read-only)."""
    x = np.asarray(gll(d)[0], dtype=float)
    out = np.linalg.inv(np.polynomial.legendre.legvander(x, d))
    out.flags.writeable = False
    return out


def solve_rung(eq, pot, sample_fn, gamma, r_core, edges, quiet, n, want, lo, hi, E0, scale,
               guesses=None, top_guess=None, sure: bool = True, certify: bool = True, offset: int = 0,
               rtol: float | None = None, guess_lo: float | None = None) -> Rung:
    """Build the operator at degree n and locate the levels on it (see :func:`locate_levels`)."""
    from .locator import locate_levels

    op = make_operator(eq, sample_fn, gamma, r_core, edges, quiet, n, E0)
    grid = op.grid
    return Rung(n, grid.size, op, locate_levels(op, want, lo, hi, E0, scale, guesses, top_guess, sure,
                                                certify, offset, rtol, guess_lo))


def far_operator(eq, pot, sample_fn, gamma, r_core, r_min: float, r_far: float, hi: float, degree: int = 18):
    """The operator of the far box (short-range potentials: their levels are counted on it), degree 18."""
    edges, quiet = layout(eq, pot, sample_fn, r_min, r_far, [hi])
    return make_operator(eq, sample_fn, gamma, r_core, edges, quiet, degree, hi)
