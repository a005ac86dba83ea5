"""Channel solver: domain, level location by counting, resolution ladder, error estimates.

For one channel the solver

1. takes the exponent gamma of u ~ r^gamma at the origin from the equation
   and the potential's declared charge there (this also rejects a point
   Coulomb charge too strong for the equation), reads the far side of the
   potential (a constant limit V_inf becomes the threshold, a potential that
   grows without bound is confining) and refuses a Dirac channel whose
   eliminated form has a pole in the box;
2. finds a natural length L of the potential (where 2 m r^2 |V + S| = 1), sets
   the inner end of the mesh from the origin exponent, and, for a short-range
   potential, counts the bound levels below the threshold on a far box;
3. fits the box to the highest level sought and lays out spectral elements in
   t = ln r by the levels' WKB phase (:mod:`boundkit.ladder`);
4. on each rung of a ladder of element degrees, locates all wanted levels from
   one symmetric matrix and certifies them by Sylvester's inertia count, which
   cannot skip a level (:mod:`boundkit.locator`: the k-th level lies between
   energies with k and k + 1 levels below);
5. estimates the error from successive rungs and stops when the estimate
   meets ``tol`` (or the rounding floor).

The finite-difference family refines the levels located this way on its own
uniform grids in t (per level, Newton with a node-count check), with a
Richardson estimate.
"""
from __future__ import annotations

import contextlib
import logging
import math
import time
from dataclasses import dataclass, field, replace
from functools import lru_cache, partial
from typing import NamedTuple

import numpy as np

from ._threads import one_blas_thread
from .discretize import Discretization, get_method
from .eigen import NOISE_ULPS, dense_pencil, nearest_pair, refine, shift_invert
from .equations import EQUATIONS, FactorizedOperator, RadialEquation, Sample
from .equations.base import decay_steps
from .equations.dirac import Dirac, dirac_kappa
from .equations.klein_gordon import KleinGordon
from .equations.schrodinger import Schrodinger, inverse_square_disc
from .mesh import LogMap
from .potentials import Potential, make_potential
from .potentials.base import TABLE_ERROR_NOTE, TABLE_FIX, table_terms
from .results import Level, RadialState, SolveResult
from .states import count_nodes, normalise, principal_n
from .units import (C_AU, MASS_UNIT_MEV, bohr_to, check_mass, constants_record, get_particle, hartree_to,
                    mass_mev_to_au, system_units)
from ._checks import MAX_LEVELS, check_choice, check_count, check_int, check_positive
from ._rounding import beside_each

__all__ = ["solve", "solve_channel", "setup", "prepare_channel", "Channel", "make_equation", "check_levels",
           "table_error"]

log = logging.getLogger(__name__)

_DECAY = 42.0          # e-folds of the radial function kept beyond the turning point
_INNER = 1e-9          # inner end of the mesh in units of the natural length (see _inner_cut)
_DIRAC_INNER_FLOOR = 1e-11   # the eliminated Dirac operator loses its seeds below this (measured)
_FINITE_INNER = 1e-5   # inner cut for potentials finite at the origin: f = 1 + O(r^2) there
_DEPTH_INNER = 1e-4    # ... and at most this many depth lengths of the core (see _depth_length)
_CUT_RETRY = 1e-2      # the inner end moves in by this when cutting there costs more than tol (_cut_error)
_FD_SAFETY = 1.25      # factor of safety on the finite differences' Richardson estimate (see _estimate)
_HIGH_L = 15           # from this l a singular mass matrix is the weight's range, refused by name
_UNSTABLE = 1e-3       # a level whose energy still moves this much between sizes is not reported


def make_equation(equation: str, l: int | None = None, kappa: int | None = None,
                  mass: float = 1.0, j: float | None = None) -> RadialEquation:
    """Build the equation object of one channel.

    ``equation`` is ``schrodinger``, ``klein-gordon`` or ``dirac``; Schrodinger
    and Klein-Gordon take ``l`` (default 0), Dirac takes ``kappa`` (default -1),
    or ``l`` with ``j`` (:func:`boundkit.equations.dirac.dirac_kappa`: an ``l`` or
    ``j`` alone is refused because it fits two kappas, one beside ``kappa`` must
    be its own). Schrodinger takes ``j`` for a spin-orbit term; Klein-Gordon none.
    """
    key = str(equation).lower().replace("_", "-")
    key = {"kg": "klein-gordon", "kleingordon": "klein-gordon", "schroedinger": "schrodinger"}.get(key, key)
    check_choice("equation", key, EQUATIONS)
    if key == "dirac":
        return Dirac(kappa=dirac_kappa(kappa, l, j), mass=mass)
    if kappa is not None:
        raise ValueError(f"kappa: only the Dirac equation takes kappa; give l for {key}")
    l = 0 if l is None else check_int("l", l, minimum=0)
    if key == "schrodinger":
        return Schrodinger(l=l, mass=mass, j=j)
    if j is not None:
        raise ValueError("j: the Klein-Gordon equation (spin 0) takes no j; drop it (a spin-0 particle has j = l), "
                         "or use the Dirac equation (kappa, or l with j)")
    return KleinGordon(l=l, mass=mass)


def _sample(pot: Potential, r: np.ndarray, scan: bool = False) -> Sample:
    """V, S (and a spin-orbit factor) at r. With ``scan`` (radii probed for lengths and layouts,
    not mesh nodes), values that overflow to +inf far out count as a large finite wall."""
    with np.errstate(all="ignore"):
        V = np.asarray(pot.V(r))
        S = np.asarray(pot.S(r))
        # one pass decides in the usual case that every value is finite (the sum is finite then, and
        # only then, barring an overflow of the sum itself, which the slow branch below sorts out)
        total = np.sum(V) + np.sum(S) if getattr(pot, "scalar", True) else np.sum(V)   # S = 0 without scalar terms
    if V.dtype != np.float64 or S.dtype != np.float64:
        for name, x in (("V", V), ("S", S)):
            if np.iscomplexobj(x) and np.any(x.imag != 0):
                raise ValueError(f"potential: {name} has complex values (an absorptive part); the bound-state "
                                 "solver takes real potentials only; use boundkit.resonances (boundkit "
                                 "resonances) for complex potentials")
        V, S = V.real.astype(float), S.real.astype(float)
    W = pot.spin_orbit(r)
    if not np.isfinite(total):
        if scan:
            V = np.where(np.isposinf(V), 1e300, V)
            S = np.where(np.isposinf(S), 1e300, S)
        if not (np.isfinite(V).all() and np.isfinite(S).all()):
            bad = r[~(np.isfinite(V) & np.isfinite(S))][0]
            raise ValueError(f"potential: not finite at r = {bad:.3g} bohr; check the expression or parameters")
    return Sample(r, V, S, None if W is None else np.asarray(W, dtype=float))


@lru_cache(maxsize=1)
def _length_radii() -> np.ndarray:
    """The radii the natural length is looked for on (read-only; built once)."""
    r = np.logspace(-14, 8, 2201)
    r.flags.writeable = False
    return r


def sampler(pot: Potential):
    """``sample(r, scan=False)``: :func:`_sample` of this potential, the form the ladder, the layout
    and the Laguerre path take."""
    return partial(_sample, pot)


class _LastResult:
    """The last result of a function of one potential object (and a key), kept for that same object
    and key only. The object is held, so its id cannot be reused; the entry is one tuple, read and
    replaced whole, so that solves in threads (a Dask worker) never pair one potential with another's
    result."""

    def __init__(self) -> None:
        self._entry = None

    def get(self, pot, key, compute):
        entry = self._entry
        if entry is not None and entry[0] is pot and entry[1] == key:
            return entry[2]
        out = compute()
        self._entry = (pot, key, out)
        return out


_last_strength = _LastResult()


def _strength(eq: RadialEquation, pot: Potential) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """(radii, 2 m r^2 |V + S| there, whether V + S < 0 there) on the radii the natural length is
    looked for on; a 1/r^2 part has no length of its own (it only shifts l) and is left out.

    The natural length and the potential's range both read it, once each per solve of a short-range
    potential (and again when the Laguerre mesh hands the channel to the elements): the last result is
    kept (:class:`_LastResult`, for that potential object and mass), with read-only arrays.
    """
    def compute():
        r = _length_radii()
        s = _sample(pot, r, scan=True)
        v = s.V + s.S - getattr(pot, "origin_inverse_square", 0.0) / r**2
        with np.errstate(over="ignore", invalid="ignore"):
            out = (r, 2 * eq.mass * r**2 * np.abs(v), v < 0)
        for a in out[1:]:
            a.flags.writeable = False
        return out

    return _last_strength.get(pot, eq.mass, compute)


def _natural_length(eq: RadialEquation, pot: Potential) -> float:
    """The length scale of the potential: the smallest radius where 2 m r^2 |V + S| reaches 1 (the
    Bohr radius of a Coulomb core), or where it is largest for a weak well.

    A repulsive core in front of a well does not count: the levels live in the well and only decay
    into the core. A Morse well with a r_e = 50 has a core of 1e43 hartree, which put the length at
    1e-14 bohr, and the far box and the search for the well (up to 1e10 natural lengths) never
    reached the well at 7 bohr: 'no bound level' where five are bound."""
    r, strength, attractive = _strength(eq, pot)
    well = np.nonzero(attractive & (strength >= 1e-3))[0]
    if well.size and np.any(~attractive[:well[0]] & (strength[:well[0]] >= 1.0)):
        r, strength = r[well[0]:], strength[well[0]:]      # from the well's inner edge outwards
    big = strength >= 1.0
    if np.any(big):
        return float(r[np.argmax(big)])
    # a weak well (a short-range potential near its binding threshold): its strongest scale
    if np.max(strength) >= 1e-3:
        return float(r[np.argmax(strength)])
    v_inf = pot._v if isinstance(pot, _Shifted) else 0.0
    if v_inf and not np.any(strength):
        raise ValueError(f"potential: V is the same constant ({v_inf:.6g} hartree) at every radius; a constant only "
                         "moves the threshold to its value and binds nothing: add a well (a term that varies with r)")
    if eq.name != "schrodinger":
        s = _sample(pot, r, scan=True)
        with np.errstate(over="ignore", invalid="ignore"):
            weak = not np.max(2 * eq.mass * r**2 * np.abs(s.V - s.S)) >= 1e-3
        if not weak:
            # V + S vanishes, V - S does not (S = -V; a tester's Woods-Saxon wells of 50 MeV were 'V = 0')
            raise ValueError("potential: V + S is zero everywhere (S = -V); boundkit finds a particle's levels "
                             "where V + S binds them, and V - S enters only at order (V - S)/(2 m c^2), too weak "
                             "to bind at |V - S| << m c^2; check the scalar's sign (S = V is the spin-symmetric "
                             "case)")
    B = getattr(pot, "origin_inverse_square", 0.0)
    if B:   # the strength leaves B/r^2 out; alone it has no length (scale invariance), and 2 m B < -(l+1/2)^2 is
        # refused by eq.gamma before this (the fall to the centre)
        raise ValueError(f"potential: B/r^2 alone (B = {B:.6g} hartree bohr^2; the rest is weak: 2 m r^2 |V - B/r^2| < "
                         "1e-3) has no length scale and binds no level unless it makes the particle fall to the "
                         "centre (2 m B < -(l + 1/2)^2, refused); add a well to bind a level")
    raise ValueError("potential: too weak to bind anything on any length scale from 1e-14 to 1e8 bohr "
                     "(2 m r^2 |V| stays below 1e-3; V = 0 everywhere binds nothing); check the parameters or the "
                     "table's values")


def _outer_radius(eq: RadialEquation, pot: Potential, E: float, L: float) -> float:
    """Radius where a level of energy E has decayed by e^-_DECAY (WKB)."""
    return _radii(eq, pot, E, L)[0]


def _radii(eq: RadialEquation, pot: Potential, E: float, L: float) -> tuple[float, float]:
    """(outer radius, core radius) of a level of energy E.

    The outer radius is where the WKB estimate of the radial function has
    fallen by e^-_DECAY beyond the outer turning point; the core radius is
    the inner turning point (or L when the level is classically allowed down
    to the origin)."""
    r = np.logspace(math.log10(L * 1e-3), math.log10(L * 1e10), 6000)
    s = _sample(pot, r, scan=True)
    with np.errstate(over="ignore", invalid="ignore", divide="ignore"):
        excess = eq.excess(E, s)
    allowed = np.nonzero(excess < 0)[0]
    start = allowed[-1] if allowed.size else 0
    core = float(r[allowed[0]]) if allowed.size and allowed[0] > 0 else L
    cum = np.concatenate(([0.0], np.cumsum(decay_steps(excess[start:], r[start:]))))
    beyond = np.nonzero(cum >= _DECAY)[0]
    if not beyond.size:
        return float(r[-1]), core
    return float(r[start + beyond[0]]) * 1.05, core


@dataclass
class _Tally:
    dropped_node_mismatch: int = 0      # finite differences: a refined state with the wrong node count
    dropped_unstable: int = 0           # finite differences: a level that moved too much between sizes
    reseeded: int = 0                   # spectral elements: guesses Newton's method took to a neighbour
    bisected: int = 0                   # spectral elements: levels located by bisection on the count
    floor_hit: bool = False
    potential_floor_hit: bool = False   # a level's estimate is the rounding of its potential energy, above tol
    merge_hit: bool = False             # a Klein-Gordon level near a merge: its rounding lies above tol
    residual_hit: bool = False          # a level at its residual's rounding (near the threshold) above tol
    table_hit: bool = False             # a table's interpolation error puts a level's estimate above tol
    notes: list = field(default_factory=list)


def _nodes_of(op: FactorizedOperator, y) -> int:
    return count_nodes(op.expand(np.asarray(y, dtype=float)) * op.weight())


def _origin_gap(gamma: float, two_component: bool) -> float:
    """The gap between the exponents of the regular and the irregular solution at the origin (u ~ r^gamma
    against r^-gamma for two components, r^(1 - gamma) for one)."""
    return 2 * gamma if two_component else 2 * gamma - 1


def _wanted_cut(gamma: float, two_component: bool) -> float:
    """The inner cut the exponents ask for (see :func:`_inner_cut`), before any floor."""
    gap = max(_origin_gap(gamma, two_component), 0.05)
    # a large exponent (high l) makes the region near the origin empty much further out:
    # (r_min / L)^gap <= 1e-20 is enough, and keeps w^2 = r^(2 gamma) far from underflow
    return max(_INNER ** (1.0 / min(1.0, gap)), min(1e-2, 10.0 ** (-20.0 / gap)))


def _inner_cut(gamma: float, two_component: bool) -> float:
    """Inner end of the mesh in units of the natural length.

    u ~ r^gamma at the origin and the second Frobenius solution goes like
    r^(gamma') with gamma + gamma' = 1 (Schrodinger-like) or 0 (Dirac); the
    inner condition is exact to first order in r, so the cut costs about
    (r_min)^(gap) with gap = the difference of the two exponents. Near a
    critical charge that gap is small and the cut must move inward.
    """
    # the floor: a point charge with Z alpha > ~0.96 in the Dirac equation gets fewer digits
    # (solve_channel then inflates its estimate, see _cut_is_clipped)
    return max(_wanted_cut(gamma, two_component), _DIRAC_INNER_FLOOR if two_component else 1e-60)


def _cut_is_clipped(gamma: float, two_component: bool) -> bool:
    """Whether the inner cut wanted for this exponent lies below the floor."""
    return two_component and _wanted_cut(gamma, two_component) < _DIRAC_INNER_FLOOR


def _energy_scale(eq, pot, L: float) -> float:
    s = _sample(pot, np.array([L]), scan=True)
    return 1.0 / (2 * eq.mass * L**2) + abs(float(s.V[0] + s.S[0]))


def _well_radius(pot, L: float) -> float:
    """Radius of the deepest point of V + S when it lies away from the origin, else 0."""
    r = np.logspace(math.log10(L), math.log10(L) + 10, 2001)
    s = _sample(pot, r, scan=True)
    v = s.V + s.S
    i = int(np.argmin(v))
    return float(r[i]) if 0 < i < len(r) - 1 and v[i] < 0 else 0.0


def _inner_wkb(eq, pot, E: float, L: float) -> float:
    """Radius inside the inner turning point where a level of energy E has
    decayed by e^-_DECAY (0 when the region near the origin is allowed or the
    decay there comes from the centrifugal term alone)."""
    r = np.logspace(math.log10(L * 1e-12), math.log10(L * 1e10), 6000)
    s = _sample(pot, r, scan=True)
    with np.errstate(over="ignore", invalid="ignore", divide="ignore"):
        excess = (eq.q(E, s) - E) / eq.p(E, s)
    allowed = np.nonzero(excess < 0)[0]
    if not allowed.size or allowed[0] == 0:
        return 0.0
    i0 = allowed[0]
    rr = r[:i0 + 1][::-1]
    cum = np.concatenate(([0.0], np.cumsum(-decay_steps(excess[:i0 + 1][::-1], rr))))   # inwards: r falls
    beyond = np.nonzero(cum >= _DECAY)[0]
    return float(rr[beyond[0]]) * 0.95 if beyond.size else 0.0


def _initial_radius(eq, pot, levels: int, L: float, E_top: float | None = None) -> float:
    """First outer radius for seeding: hydrogen-like guess when the potential
    has a Coulomb tail, a WKB guess for confining wells (at ``E_top``, by default
    :func:`_confining_top`), else a multiple of the natural length (or of the
    radius of a well away from the origin)."""
    n_top = levels + eq.l
    if pot.tail_charge > 0:
        n_top = levels - 1 + _hydrogenic_l1(eq, pot)
        return _outer_radius(eq, pot, _hydrogenic_guess(eq, pot, n_top), L)
    if pot.confining:
        return _outer_radius(eq, pot, _confining_top(eq, pot, levels, L) if E_top is None else E_top, L)
    return max(L * 20.0 * n_top**2, 4 * _well_radius(pot, L))


def _hydrogenic_guess(eq, pot, n: float) -> float:
    """Hydrogen-like energy -m Z^2 / (2 n^2) of the tail charge Z (vector plus scalar), for layouts
    and boxes; for the relativistic equations never deeper than halfway down their window, -m c^2.

    Notes
    -----
    A tail charge beyond sqrt(2) / alpha = 194 per unit of n (a Coulomb potential half vector and half
    scalar, S = V = -Z/r, with Z > 97) puts -m Z^2 / 2 below -2 m c^2, where no level lies: the Dirac
    eliminated form has its pole there (the channel was refused for that pole) and a Klein-Gordon
    s channel laid out for that energy ran for more than 30 s. The levels of such a potential lie within the window (for
    S = V: E = -2 m Z^2 / (n^2 + Z^2 / c^2), tests/test_spin_symmetric.py).
    """
    E = -eq.mass * pot.tail_charge**2 / (2 * n**2)
    lo = eq.energy_window(pot)[0]
    return max(E, 0.5 * lo) if math.isfinite(lo) else E


class _Seed(NamedTuple):
    energies: tuple
    E_top: float


def _coulomb_seed(eq, pot, want: int) -> _Seed | None:
    """The point-Coulomb levels of the tail charge Z as guesses for the first rung: exact for a
    point nucleus, and near the levels of a finite one (the Sommerfeld-Dirac formula, its Klein-Gordon
    counterpart, or -m Z^2 / (2 n^2); :mod:`boundkit.exact`). None when the tail has a scalar part,
    the potential confines or has a 1/r^2 term or a spin-orbit term, or Z alpha leaves no formula.

    Notes
    -----
    In place of the linearised pencil, whose guesses for deep Dirac levels took Newton's method 4 to 9
    steps each (26 of the 75 solves of the nine Z = 92 channels of the benchmark). A seed that leads
    Newton's method astray fails the count that follows, and the pencil is solved after all.
    """
    from .exact import dirac_coulomb, klein_gordon_coulomb, schrodinger_coulomb

    Z = pot.tail_charge
    if (Z <= 0 or pot.confining or any(t.tail_charge for t in pot.scalar)
            or getattr(pot, "origin_inverse_square", 0.0) or pot.has_spin_orbit):
        return None
    za = Z / C_AU
    if eq.name == "dirac":
        if za >= abs(eq.kappa):
            return None
        levels = [dirac_coulomb(Z, principal_n(k, eq.l), eq.kappa, eq.mass) for k in range(want + 1)]
    elif eq.name == "klein-gordon":
        if za >= eq.l + 0.5:
            return None
        levels = [klein_gordon_coulomb(Z, principal_n(k, eq.l), eq.l, eq.mass) for k in range(want + 1)]
    elif eq.name == "schrodinger":
        levels = [schrodinger_coulomb(Z, principal_n(k, eq.l), eq.mass) for k in range(want + 1)]
    else:
        return None
    return _Seed(tuple(levels[:want]), 0.5 * (levels[want - 1] + levels[want]))


def _hydrogenic_l1(eq, pot) -> float:
    """l + 1 of the hydrogen-like guesses, n = nodes + l + 1; with a 1/r^2 term at the origin (Kratzer,
    B / r^2) the effective l' + 1 = gamma instead, which makes the guesses of a Kratzer well exact:
    E = -m A^2 / (2 (nodes + gamma)^2). Without that a molecular Kratzer well (reduced mass 918,
    gamma = 25) was guessed at -104 hartree instead of -0.16, its first box held nothing but the
    origin's r^(2 gamma) region, and the mass matrix there was not positive definite to rounding."""
    return max(eq.l + 1, eq.gamma(pot)) if pot.origin_inverse_square > 0 else eq.l + 1


def _oscillator_top(eq, pot, levels: int, L: float) -> float:
    """An oscillator-like energy above the lowest ``levels`` levels of a confining well: 2 e (2 levels
    + l + 3/2), e the energy scale at the natural length."""
    return 2.0 * _energy_scale(eq, pot, L) * (2 * levels + eq.l + 1.5)


def _confining_top(eq, pot, levels: int, L: float) -> float:
    """An energy above the lowest ``levels`` levels of a confining potential, to size the first box.

    Notes
    -----
    The first guess is oscillator-like (:func:`_oscillator_top`). A well whose levels sit far below that (a Cornell potential with a strong
    Coulomb core and a weak string: its low levels are hydrogen-like, at negative energies) would
    then get a box and a layout for thousands of oscillations (millions of elements: the layout ran
    out of memory). So the guess is checked by the WKB count of levels below it,
    n(E) = (1/pi) integral of sqrt(max(-excess(E), 0)) dr, and when that exceeds 4 (levels + 1) it is
    lowered by bisection to where n(E) = levels + 1, about one level above the top one sought.
    """
    E_old = _oscillator_top(eq, pot, levels, L)
    r = np.logspace(math.log10(L * 1e-3), math.log10(L * 1e10), 3000)
    s = _sample(pot, r, scan=True)
    dr = np.diff(r)

    def count(E: float) -> float:
        with np.errstate(over="ignore", invalid="ignore", divide="ignore"):
            k = np.sqrt(np.clip(-np.nan_to_num(eq.excess(E, s), nan=0.0), 0.0, 1e300))
        return float(np.sum(0.5 * (k[1:] + k[:-1]) * dr)) / math.pi

    target = levels + 1.0
    if not count(E_old) > 4 * target:
        return E_old
    # never below the window (-2 m c^2 for Klein-Gordon and Dirac): there the relativistic forms change
    # sign, the count means nothing, and the search went on to -1e300 (a Dirac S = V linear well)
    floor = max(eq.energy_window(pot)[0], -1e300)
    lo, hi = max(-abs(E_old), floor), E_old
    while count(lo) > target and lo > floor:
        lo = max(16 * lo, floor)
    for _ in range(200):
        mid = 0.5 * (lo + hi)
        if count(mid) > target:
            hi = mid
        else:
            lo = mid
        if hi - lo <= 1e-6 * max(abs(hi), abs(lo), 1e-300):
            break
    return hi


def _ladder_from(disc: Discretization, start: int) -> list[int]:
    """The family's ladder from the first size >= start."""
    ladder = disc.ladder()
    return [n for n in ladder if n >= start] or ladder[-1:]


_FD_SCATTER = 0.5      # a change above this fraction of the one before: scatter (see _estimate)
_LOCATE_TOL = 1e-12    # tolerance of the spectral-element solve that locates the collocation families' levels
_SEED_FLOORS = ("floor_hit", "potential_floor_hit", "merge_hit", "residual_hit")   # _Tally's floor reasons
_FD_SEED_FACTOR = 2.0  # a finite-difference level's estimate is at least this times its located level's


def _estimate(history: list[float], disc: Discretization, order: int | None = None) -> float:
    """Error estimate of the last energy in ``history``.

    Finite differences: Richardson, F |E_h - E_2h| / (2^order - 1) with a factor of safety F =
    _FD_SAFETY (1.25, the grid convergence index's factor for a scheme of known order: P. J. Roache,
    J. Fluids Eng. 116, 405 (1994), from memory). Without it the estimate is the error's asymptotic
    value, not a bound: on 428 exact-catalogue levels (hydrogen, Dirac and Klein-Gordon Coulomb, the
    oscillator; tol 1e-6 to 1e-12) the error was up to 1.012 times |E_h - E_2h| / (2^8 - 1), above it
    for 14 (0 with the factor). A change more than _FD_SCATTER times the one before it is not that regime
    (a doubling of the size divides the change by 2^order) but rounding scatter, and the estimate is then at
    least twice the larger of the two: a level 1.8e-12 hartree below an exponential well's threshold changed
    by 1.9e-20 and then 4.9e-19 hartree and was 3.9e-19 off with a Richardson estimate of 2.4e-21; over nine
    such levels (tests/test_shallow_levels.py) the error was at most 1.15 times the larger change.
    Spectral: the last difference |E_k - E_(k-1)|. Convergence is geometric, so this
    bounds the error of E_k, conservatively (measured on the exact catalogue:
    true errors are 1/40 of it or less). A sharper geometric extrapolation,
    d1^2/d0, understated the error by 25x on one catalogue level and is not
    used. Never below the family's rounding floor.
    """
    E = history[-1]
    floor = disc.floor * abs(E)
    if len(history) < 2:
        return math.inf
    d1 = abs(history[-1] - history[-2])
    if disc.order is not None:
        est = _FD_SAFETY * d1 / (2.0 ** (order or disc.order) - 1)
        if len(history) >= 3:
            d0 = abs(history[-2] - history[-3])
            if d1 > _FD_SCATTER * d0:       # not converging at any order: rounding scatter
                est = max(est, 2.0 * max(d0, d1))
        return max(est, floor)
    return max(d1, floor)


def _converged(history: list[float], disc: Discretization, tol: float, order: int | None = None) -> bool:
    """Stop rule: the estimate meets tol; for the spectral family also the
    difference before it (one lucky agreement of two sizes is not enough)."""
    if len(history) < 2:
        return False
    E = abs(history[-1])
    if _estimate(history, disc, order) > tol * E:
        return False
    if disc.order is None:
        return len(history) >= 3 and abs(history[-2] - history[-3]) <= 100 * tol * E
    return True


_last_edges = _LastResult()


def _edges(pot) -> tuple:
    """(t_k, w_k) at each of the potential's breakpoints: where the layout's shape rate
    (:func:`boundkit.ladder._shape_rate`, about one over the edge's width in t) peaks within +-0.2 in
    t of it (8001 samples), and one over that peak, for the grids that cluster their nodes at narrow
    edges (``Discretization.uses_edges``; :func:`boundkit.discretize.finite_difference.narrow_edges`).
    Kept for the last potential object (:class:`_LastResult`): a finite-difference solve asks for
    every level at every size."""
    from .ladder import _shape_rate

    def compute():
        out = []
        for b in pot.breakpoints:
            if not b > 0:
                continue
            tb = math.log(b)
            t = np.linspace(tb - 0.2, tb + 0.2, 8001)
            r = np.exp(t)
            rate = _shape_rate(t, r, _sample(pot, r, scan=True))
            peak = float(np.max(rate))
            if peak > 0:
                out.append((float(t[int(np.argmax(rate))]), 1.0 / peak))
        return tuple(sorted(out))

    return _last_edges.get(pot, None, compute)


_last_jumps = _LastResult()


def _jumps(pot) -> tuple:
    """The potential's breakpoints where V or S jumps: their one-sided values (:func:`_sides`) differ by more than 1e-8 of the largest |V| + |S| there and 1e-3 of the radius either
    side (at the kink of -max(0, 10 - 3 r), where V is 0, they differ by 1.4e-11 of that: rounding).
    Kept for the last potential object, as :func:`_edges`."""
    def compute():
        b = np.array([x for x in pot.breakpoints if x > 0], dtype=float)
        if not b.size:
            return ()
        s_in, s_out = _sides(pot, b)
        step = np.abs(s_out.V - s_in.V) + np.abs(s_out.S - s_in.S)
        near = [s_in, s_out, _sample(pot, b * (1.0 - 1e-3)), _sample(pot, b * (1.0 + 1e-3))]
        size = np.max([np.abs(x.V) + np.abs(x.S) for x in near], axis=0)
        return tuple(float(x) for x in b[step > 1e-8 * size])

    return _last_jumps.get(pot, None, compute)


def _sides(pot, b: np.ndarray) -> tuple[Sample, Sample]:
    """Samples of the potential just inside and just outside the radii ``b`` (where every jump's sides
    are read: :func:`boundkit._rounding.beside`)."""
    inside, outside = beside_each(np.asarray(b, dtype=float))
    return _sample(pot, inside), _sample(pot, outside)


def _grid_sample(pot, grid, sides=None) -> Sample:
    """The potential on the grid's nodes; on a node placed on a jump (``Grid.on_jumps``) the mean of
    its one-sided values ``sides`` (:func:`_sides` there, read when not given; the value at the jump
    itself is either side's, or a third one)."""
    sample = _sample(pot, grid.r)
    if not grid.on_jumps:
        return sample
    idx = np.asarray(grid.on_jumps)
    s_in, s_out = sides if sides is not None else _sides(pot, grid.r[idx])
    V, S = sample.V.copy(), sample.S.copy()
    V[idx] = 0.5 * (s_in.V + s_out.V)
    S[idx] = 0.5 * (s_in.S + s_out.S)
    W = sample.W
    if W is not None:
        W = W.copy()
        W[idx] = 0.5 * (s_in.W + s_out.W)
    return Sample(sample.r, V, S, W)


class _MeanAtJumps:
    """The equation ``eq`` on a grid with nodes on jumps: there, q and dq/dE are the mean of their
    values on the two sides, p the harmonic mean (p u' is continuous across the jump, u' is not).

    With V's mean alone, the Klein-Gordon q = V + S + (S^2 - (E - V)^2) / (2 m c^2), not linear in V,
    carried a first-order error of a fixed coefficient (a square well of 3000 hartree, R = 0.05 bohr:
    error / change between sizes 1.001 from 9600 to 19200 nodes), which no estimate from that change
    bounds; the Dirac p = c^2 / (E + 2 m c^2 - V + S) did the same (1.007) with its arithmetic mean,
    and converges with its harmonic one (p at the mean V)."""

    def __init__(self, eq: RadialEquation, grid, sides) -> None:
        self._eq, self._idx = eq, np.asarray(grid.on_jumps)
        r = grid.r[self._idx]
        self._sides = tuple(Sample(r, x.V, x.S, x.W) for x in sides)

    def __getattr__(self, name):
        return getattr(self._eq, name)

    def _at_jumps(self, name: str, E, s: Sample, value):
        out = np.array(getattr(self._eq, name)(E, s), copy=True)
        out[self._idx] = value(*(getattr(self._eq, name)(E, side) for side in self._sides))
        return out

    def p(self, E, s: Sample):
        return self._at_jumps("p", E, s, lambda a, b: 2.0 / (1.0 / a + 1.0 / b))

    def dp_dE(self, E, s: Sample):
        pa, pb = (self._eq.p(E, side) for side in self._sides)
        # d/dE of 2 / (1/pa + 1/pb)
        return self._at_jumps("dp_dE", E, s, lambda a, b: 2.0 * (a / pa**2 + b / pb**2) / (1.0 / pa + 1.0 / pb) ** 2)

    def q(self, E, s: Sample):
        return self._at_jumps("q", E, s, lambda a, b: 0.5 * (a + b))

    def dq_dE(self, E, s: Sample):
        return self._at_jumps("dq_dE", E, s, lambda a, b: 0.5 * (a + b))


def _level_on_grid(eq, pot, gamma, r_core, disc, mesh, size, E_seed, k, lo, hi, reach=math.inf):
    """(operator, refined level, its node count) of the k-node level near E_seed on one grid, or None.

    Eigenvalues within ``reach`` of E_seed (half the distance to the neighbouring certified levels)
    are the candidates; one whose vector has k nodes is preferred, else the nearest is taken: in two
    wells apart a level's node lies in its tunnelling tail, below what :func:`count_nodes` looks at.
    """
    extra = {"jumps": _jumps(pot)} if disc.aligns_jumps else {}
    grid = disc.grid(mesh, size, breaks=pot.breakpoints, edges=_edges(pot) if disc.uses_edges else (), **extra)
    sides = _sides(pot, grid.r[np.asarray(grid.on_jumps)]) if grid.on_jumps else None
    op = FactorizedOperator(_MeanAtJumps(eq, grid, sides) if grid.on_jumps else eq, grid,
                            _grid_sample(pot, grid, sides), gamma, r_core, E_ref=E_seed)
    A, B = op.pencil(E_seed)

    def near(lam) -> bool:
        return lo < lam < hi and abs(lam - E_seed) < reach

    # the eigenvalue nearest the seed first: when it qualifies (near, with k nodes) it is the one the rule
    # below takes from the whole spectrum or the six nearest (the nearest that qualifies)
    got = nearest_pair(A, B, E_seed)
    if got is None or not (near(got[0]) and _nodes_of(op, got[1]) == k):
        lam, vec = dense_pencil(A, B) if grid.dense else shift_invert(A, B, E_seed, k=6)
        close = [i for i in range(len(lam)) if near(lam[i])]
        pick = [i for i in close if _nodes_of(op, vec[:, i]) == k] or (close if math.isfinite(reach) else [])
        if not pick:
            return None
        i = min(pick, key=lambda i: abs(lam[i] - E_seed))
        got = lam[i], vec[:, i]
    ref = refine(op, *got)
    return op, ref, _nodes_of(op, ref.vector)


def _state(eq, op: FactorizedOperator, E: float, y) -> RadialState:
    grid, s = op.grid, op.sample
    f = op.expand(np.asarray(y, dtype=float))
    r = s.r
    P = op.weight() * f
    w_dr = grid.w * r
    g = op.weight() / r * (grid.D @ f + op.b * f)
    Q = eq.small_component(E, s, g)
    weight = eq.density_weight(E, s)
    comps = (P,) if Q is None else (P, Q)
    comps, _ = normalise(w_dr, *comps, weight=weight)
    bounds = [0, *grid.interfaces, len(r) - 1]
    return RadialState(r=r, P=comps[0], Q=comps[1] if Q is not None else None, weights=w_dr, gamma=op.gamma,
                       r_core=op.r_core, elements=tuple(zip(bounds[:-1], bounds[1:])), family=grid.method
                       if grid.method == "spectral" else "finite-difference",
                       density_weight=None if weight is None else np.asarray(weight, dtype=float))


_FD_CORE_GAMMA = 8.0     # exponents above this shrink the finite-difference weight's core radius (Channel.mesh)


@dataclass
class Channel:
    """One channel made ready: exponent, window, scales and seed energies.

    Built by :func:`prepare_channel`; :meth:`level` solves one seeded level
    on one grid. Studies (convergence, scans) reuse it.
    """

    eq: RadialEquation
    pot: Potential
    gamma: float
    lo: float
    hi: float
    L: float
    r_min: float
    seeds: list
    tally: _Tally
    extra: dict = field(default_factory=dict)

    def nodes(self, i: int) -> int:
        """Node count of the i-th located level (i, or i plus the states that dived below the window)."""
        seen = self.extra.get("seed_nodes", [])
        return seen[i] if i < len(seen) else i

    def label(self, k: int) -> str:
        return self.eq.label(principal_n(k, self.eq.l))

    def mesh(self, E: float) -> tuple[LogMap, float]:
        """Mesh and core radius r_c of the weight w = (r / (r + r_c))^gamma for a level of energy E.

        r_c is the level's inner turning point, divided by gamma / _FD_CORE_GAMMA when gamma exceeds
        _FD_CORE_GAMMA: beyond r_c the weight still falls like exp(-gamma r_c / r), so with r_c at the
        turning point and gamma = 52 (a pion in a Kratzer well, B = 4.8) w grew by 1e8 from the turning
        point to the peak of the level, f = u / w spanned ten orders more than u, and the grid's states
        had 100+ sign changes (no level at any size). Scaled down, w is flat by the peak.
        """
        r_out, r_core = _radii(self.eq, self.pot, E, self.L)
        return LogMap(self.r_min, r_out), r_core * min(1.0, _FD_CORE_GAMMA / self.gamma)

    def level(self, k: int, disc: Discretization, size: int, E_seed: float, mesh=None, r_core=None,
              anchor: float | None = None, reach: float = math.inf):
        """Refine the k-node level at one size: (operator, Refined) or None.

        ``mesh`` and ``r_core`` default to those of :meth:`mesh` at E_seed; pass
        them when solving one level at several sizes (the WKB scan is not cheap).
        ``anchor`` and ``reach``: the level's certified energy and half the distance to its certified
        neighbours (:meth:`reach`); with them the level is the grid's eigenvalue nearest the anchor,
        else the one with k nodes.
        """
        if mesh is None or r_core is None:
            mesh_e, core_e = self.mesh(E_seed)
            mesh = mesh_e if mesh is None else mesh
            r_core = core_e if r_core is None else r_core
        if anchor is None:
            reach = math.inf
        got = _level_on_grid(self.eq, self.pot, self.gamma, r_core, disc, mesh, size, E_seed, k,
                             self.lo, self.hi, reach)
        if got is None:
            self.tally.notes.append(f"{self.label(k)}: no {k}-node solution at size {size}")
            return None
        if abs(got[1].energy - anchor) >= reach if math.isfinite(reach) else got[2] != k:
            # nearer another certified level than its own (with no neighbour known: a wrong node count)
            self.tally.dropped_node_mismatch += 1
            self.tally.notes.append(f"{self.label(k)}: refined state has {got[2]} nodes, not {k}, at size {size}")
            return None
        if got[2] != k:
            self.tally.notes.append(f"{self.label(k)}: {got[2]} nodes counted at size {size} (a node in a tail "
                                    "too small to count); kept, as it is the level nearest its certified energy")
        return got[0], got[1]

    def table_error(self, op, refined) -> float:
        """The energy error (hartree) of a level that :meth:`level` returned, ``(op, refined)``, from the
        interpolation of the potential's tables: what a solve adds to its estimate (:func:`table_error`);
        0 without tables. :meth:`level` refines the level of the interpolant, whose own estimate does not
        see it: a 30-point Hulthen table's 2s, seeded, was 4.3e-6 hartree off with an estimate of 3.5e-14."""
        if not _tables(self.pot):
            return 0.0
        return table_error(self.pot, _state(self.eq, op, refined.energy, refined.vector))

    def reach(self, i: int) -> float:
        """Half the distance from the i-th certified level to its nearest certified neighbour (inf when
        it has none): a level of a finite-difference grid nearer another one is not this one."""
        if i >= len(self.seeds):
            return math.inf
        gaps = [abs(self.seeds[i] - self.seeds[j]) for j in (i - 1, i + 1) if 0 <= j < len(self.seeds)]
        return 0.5 * min(gaps) if gaps else math.inf


def _inner_end(eq, pot, gamma: float, L: float, levels: int, hi: float) -> float:
    """Inner end of the mesh: the Frobenius cut, or further out when a repulsive core keeps every
    bound level out (WKB decay by e^-_DECAY inward from the inner turning point at the top of the
    window)."""
    E_top = hi if math.isfinite(hi) else _oscillator_top(eq, pot, levels, L)
    finite_origin = _finite_origin(pot)
    cut = _FINITE_INNER if finite_origin else _inner_cut(gamma, eq.spin == 0.5)
    r_min = cut * L
    if finite_origin:
        r_min = min(r_min, _DEPTH_INNER * _depth_length(eq, pot, r_min))
    return max(r_min, _inner_wkb(eq, pot, E_top, L), _weight_floor(gamma, L * (eq.l + 1) ** 2, r_min))


def _weight_floor(gamma: float, r_core: float, r_min: float) -> float:
    """The inner end where the elements' weight w^2 = (r / (r + r_core))^(2 gamma) is 1e-250, when at
    ``r_min`` it would be below 1e-280 (else 0). At high l (an oscillator or a linear well at l = 20, a
    Woods-Saxon well at l = 30, a pion's l = 25 level in a lead nucleus) w^2 underflowed at the inner end,
    the mass matrix was singular, and the solve ended in LAPACK's 'leading minor of order 1 of B is not
    positive definite' (a tester). r_core = L (l + 1)^2 is a Coulomb level's inner turning point and lies
    far beyond an oscillator's (676 against 5 at l = 25), so the end moves only as far as the weight
    needs, not to where it is merely negligible."""
    if 2 * gamma * math.log10(r_min / (r_min + r_core)) >= -280:
        return 0.0
    return r_core * 10.0 ** (-125.0 / gamma)


def _core_radius(eq, sample, gamma: float, L: float) -> float:
    """r_core of the elements' weight (r / (r + r_core))^gamma: L (l + 1)^2, a Coulomb level's radius, or
    the radius r_0 of the minimum of the effective potential l (l + 1) / (2 m r^2) + V + S where that lies
    so far inside that f = u / w would span more than double precision between them:
    (L (l + 1)^2 / r_0)^gamma > 1 / _CORE_SPAN (an oscillator or a linear well from l = 10).

    Notes
    -----
    Inside r_core the weight carries u ~ r^gamma and f = u / w is nearly constant; beyond it f is u.
    For a Coulomb tail the minimum of l (l + 1) / (2 m r^2) - Z / r lies at 2 L l (l + 1), beyond
    L (l + 1)^2 for every l >= 1, so Coulomb channels keep L (l + 1)^2. An oscillator's levels live
    near r_0 = (l (l + 1))^(1/4) (5 bohr at l = 25, omega = 1 hartree) while L (l + 1)^2 is 676 bohr:
    f had to grow by (676 / 5)^26 across the well, and the rounding of the form grew about 3 times per
    unit of l from l = 20 (errors up to 9e-10 hartree at l = 28, estimates up to 15 times below them).
    Where the growth is below 1 / _CORE_SPAN the weight stays as it was: moving r_core 1.3 times (the
    minimum at the edge of a square well) redrew the rounding of levels 1e-6 of the depth below the
    threshold, and one came out 1.3 times its estimate (tests/test_shallow_levels.py).
    """
    coulomb = L * (eq.l + 1) ** 2
    if eq.l == 0:
        return coulomb
    r = np.geomspace(1e-4 * coulomb, coulomb, 801)
    s = sample(r, scan=True)
    with np.errstate(all="ignore"):
        eff = eq.l * (eq.l + 1) / (2 * eq.mass * r * r) + s.V + s.S
    eff = np.where(np.isfinite(eff), eff, np.inf)
    k = int(np.argmin(eff))
    if not 0 < k < len(r) - 1 or gamma * math.log10(coulomb / r[k]) <= -math.log10(_CORE_SPAN):
        return coulomb
    return float(r[k])


_CORE_SPAN = 2.0**-53     # see _core_radius


def _finite_origin(pot) -> bool:
    """Whether V and S are finite at the origin (no Coulomb charge, no inverse square there)."""
    return pot.z_vector == 0 and pot.z_scalar == 0 and pot.origin_inverse_square == 0


def _cut_error(eq, pot, state: RadialState, E: float) -> float:
    """What cutting the mesh at its first node r0 can cost a level of a potential finite at the origin
    (hartree; 0 for any other origin): the part of the quadratic form that lies below r0,

        r0 / 3 (|q(r0, E) - E| P(r0)^2 + M Q(r0)^2),   M = c^2 / p = E + 2 m c^2 - V + S (Dirac only),

    for a state normalised by the form's energy derivative (the charge for Klein-Gordon), with
    u^2 <= u(r0)^2 (r / r0)^2 below r0 (u ~ r^(l + 1)) and the potential flat there.

    Notes
    -----
    Every rung of the ladder shares the inner end, so their changes cannot see this error. The
    inner condition f'/f of f = 1 + c r misses the r^2 term of the expansion, and the level moves by
    about half the form below r0: measured 0.50 of it for the Klein-Gordon 1s-3s of a uniformly
    charged sphere, Z = 100 (r0 = 1e-4 depth lengths: 8.9e-9 hartree, 18.5 times the rungs' estimate,
    against a 40-digit matching in tests/reference_kg_sphere.py), and 0.3-0.6 for the Schrodinger and
    Dirac kappa = -1 levels of the same sphere (against the levels of a cut at 1e-8 depth lengths).
    """
    if not _finite_origin(pot):
        return 0.0
    r0 = state.r[:1]
    s0 = _sample(pot, r0)
    sliver = abs(float(eq.q(E, s0)[0]) - E) * float(state.P[0]) ** 2
    if state.Q is not None:
        sliver += C_AU**2 / float(eq.p(E, s0)[0]) * float(state.Q[0]) ** 2
    return float(r0[0]) * sliver / 3


def _depth_length(eq, pot, r: float) -> float:
    """The length on which a level varies in the core of a potential finite at the origin, read at r
    (inside the core): 1 / sqrt(2 m |V|), and c / |V| for a relativistic equation (|V + S| or |V - S|,
    the larger); inf for no core.

    Notes
    -----
    Below the inner end f = 1 + O(r^2) is taken, and the r^2 term is of relative size about
    2 m |V(0)| r^2 there. The natural length of a finite nucleus is its Coulomb tail's (0.5 bohr for
    hydrogen), and 1e-5 of it lay inside a proton (rms 0.8409 fm): 2 m |V(0)| r_min^2 = 4e-6 put the 1s
    6e-12 hartree off, its finite-size shift 3.5 % small, with an estimate of 1e-14 (a tester, against a
    40-digit matching with mpmath). At _DEPTH_INNER depth lengths that term is 1e-8 and the shift is
    within 1e-5 of first order. A level whose density at the origin is large still feels the cut (its
    error goes as r_min^3): :func:`_cut_error` estimates it for the level's estimate, and
    :func:`_solve_elements` moves the inner end in when it is above tol.
    """
    s = _sample(pot, np.array([r]), scan=True)
    v = max(abs(float(s.V[0] + s.S[0])), abs(float(s.V[0] - s.S[0])))
    if not v > 0 or not math.isfinite(v):
        return math.inf
    ell = 1.0 / math.sqrt(2 * eq.mass * v)
    return min(ell, C_AU / v) if eq.name != "schrodinger" else ell


def prepare_channel(eq: RadialEquation, pot: Potential, levels: int) -> Channel:
    """Exponent, bound window, natural length, inner cut and the located levels (seed energies).

    The levels are located and certified by counting on spectral elements
    (:mod:`boundkit.ladder`, tolerance 1e-12: their error estimates must stay well below the
    other families' errors, which are checked against them); other families refine them.
    A relativistic scalar that tends to a constant far out is refused (:func:`_check_scalar_far_constant`,
    in hartree), as in :func:`setup` and :func:`solve_channel`.
    """
    _check_scalar_far_constant(eq, pot, "atomic")
    found, tally, _, _, extra = _solve_elements(eq, pot, levels, _LOCATE_TOL)
    # their notes speak of this solve's tol, not the caller's (a finite-difference solve at tol 1e-10 quoted
    # 'lies above tol 1e-12' of a level's potential-energy rounding: a tester)
    tally.notes[:] = [f"locating the levels (spectral elements, tol {_LOCATE_TOL:g}): {note}" for note in tally.notes]
    found = sorted(found, key=lambda lv: lv.energy)
    seeds = [lv.energy for lv in found]
    extra["seed_errors"] = [lv.error_estimate for lv in found]
    extra["seed_nodes"] = [lv.nodes for lv in found]      # a dived state below shifts them all by one
    gamma = extra["gamma"]
    lo, hi = eq.energy_window(pot)
    lo = extra.get("window_bottom", lo)     # a Klein-Gordon channel's particle floor
    return Channel(eq, pot, gamma, lo, hi, extra["L"], extra["r_min"], seeds, tally, extra)


def _solve_elements(eq, pot, levels: int | None, tol: float, degrees=None, known_bound: int | None = None,
                    inner: float | None = None, bottom: _Dive | None = None):
    """:func:`_elements_on` with a singular mass matrix at high l refused by name (:func:`_singular_mass_refused`)."""
    with _singular_mass_refused(eq.l):
        return _elements_on(eq, pot, levels, tol, degrees, known_bound, inner, bottom)


def _elements_on(eq, pot, levels: int | None, tol: float, degrees=None, known_bound: int | None = None,
                 inner: float | None = None, bottom: _Dive | None = None):
    """Spectral elements: box, layout, ladder, counting (see :mod:`boundkit.ladder`).

    ``degrees``: run exactly these rungs (a convergence study), with no early stop.
    ``known_bound``: the far-box count of a short-range potential and the box radius
    (:func:`_far_bound`), when the caller has them.
    ``inner``: the inner end of the mesh (default :func:`_inner_end`). The rungs all share that end,
    so their changes cannot see what cutting the mesh there costs; :func:`_cut_error` estimates it and
    a level's estimate is at least that. When it is also above tol, the solve is done once more with
    the end _CUT_RETRY as far out (that error goes as its cube). The Klein-Gordon 1s of a uniformly
    charged sphere at Z = 100 was 8.9e-9 hartree off with an estimate of 4.8e-10 (the cut's error by
    :func:`_cut_error` is 1.8e-8, 7.4e-13 relative; with the end moved in it is 1.8e-14 and the level
    1.8e-11 off; a 40-digit matching, tests/reference_kg_sphere.py). Moving the end in for every finite
    origin instead shifted every element edge and made the Dirac Fermi Z = 92 benchmark take 6 rungs
    instead of 3.
    ``bottom``: a Dirac state below the window's bottom looked at closely (:func:`_dive_band`), for a
    Coulomb tail (a short-range well's far count does that itself); when it is a level, the window starts
    below it.
    """
    study = degrees is not None
    from .ladder import FLOOR, ladder_for, layout, potential_floor, solve_rung, spectral_done, with_potential_floor
    from .locator import _window_counts, certify_levels, count_below

    tally = _Tally()
    gamma = eq.gamma(pot)
    lo, hi = eq.energy_window(pot)
    sample = sampler(pot)
    try:
        L = _natural_length(eq, pot)
    except ValueError:
        _check_pole(eq, sample, 1e-14, 1e8, [0.0])     # a pole is the better reason, when there is one
        raise
    scale = _energy_scale(eq, pot, L)
    n_req = 1 if levels is None else levels
    r_min = _inner_end(eq, pot, gamma, L, n_req, hi) if inner is None else inner
    r_core = _core_radius(eq, sample, gamma, L)
    # before any box is laid out (the far count of a short-range well lays one out to 1e4 L): at
    # E = 0, the top of the window, a pole or a Klein region there is one for every level
    _check_pole(eq, sample, r_min, 1e4 * L, [0.0])
    _check_klein_core(eq, sample, r_min, 1e4 * L)
    extra = {"gamma": gamma, "L": L, "r_min": r_min, "threshold": 0.0, "mesh": "spectral-elements"}
    lo = _pole_free_bottom(eq, sample, r_min, lo) if bottom is None else bottom.bottom
    extra["dive"] = bottom
    guess_lo = lo       # the pencil's guesses are tried down to here (a Klein-Gordon floor lies above it)
    lo, floor_start = _particle_floor_by_bound(eq, sample, r_min, lo)
    if levels is None:
        _refuse_all_of_infinitely_many(eq, pot)      # prepare_channel and the convergence study come here directly
    short_range = math.isfinite(hi) and not _infinitely_many(eq, pot)
    bound = None
    if short_range:
        far = known_bound or _far_bound(eq, pot, sample, gamma, L, r_min, n_req, hi, lo, floor_start)
        bound, extra["count_box"], lo, floor_start = far.bound, far.box, far.lo, None
        extra["near_merge"] = far.narrow
        extra["near_threshold"] = far.near
        extra["dive"] = far.dive
        if far.below:       # dived (Dirac) or merged (Klein-Gordon) states: not bound levels
            extra["no_level_why"] = ("this potential binds no level in this channel: "
                                     + _below_window(eq, far.below, far.dive))
            if eq.name == "klein-gordon":
                tally.notes.append(_below_window(eq, far.below))
    extra["bound_count"] = bound
    extra["window_bottom"] = lo
    want = n_req if levels is not None else bound
    if bound is not None:
        want = min(want, bound)
    if want == 0:
        extra["certified"] = True
        tally.notes.append("the count of levels below the threshold is 0 on a box of "
                           f"{1e4:g} natural lengths")
        if "no_level_why" in extra and eq.name != "klein-gordon":
            tally.notes.append(extra["no_level_why"])
        return [], tally, [], 0.0, extra
    # 1. fit the box to the highest level sought; when the layout it was fitted with already matches
    # the levels found, that rung is the first rung of the ladder
    degrees = tuple(degrees) if study else ladder_for(tol)
    # Newton stops at steps far below tol (its error is then the square of that); counting is done
    # only on the rung that is reported (the certificate makes its levels exactly the lowest ones,
    # whatever happened on the rungs below, which only feed the error estimate)
    rtol = min(1e-6, max(tol * 1e-4, 1e-17))
    # a level's first entry (the box-fitting rungs, the first rung of the ladder) is never the value
    # reported: it only seeds the next rung and meets the stop rule's 100 tol. Newton's method stops
    # there at 1e-12 with double-precision residuals when that is a thousandth of 100 tol or less
    rtol_first = max(rtol, 1e-12) if tol >= 1e-12 and not study else rtol
    E_top = hi if math.isfinite(hi) else _confining_top(eq, pot, want, L)   # computed once: a WKB bisection
    R = _initial_radius(eq, pot, want, L, E_top)
    energies = [E_top]
    trusted = False
    if pot.tail_charge > 0 and not pot.confining:     # hydrogen-like guesses for the layout
        l1 = _hydrogenic_l1(eq, pot)
        energies = [_hydrogenic_guess(eq, pot, l1), _hydrogenic_guess(eq, pot, want - 1 + l1)]
        trusted = True
    E0 = energies[0] if math.isfinite(energies[0]) else 0.0
    first_layout = None     # the first attempt's layout, when the floor search below has laid it out already
    if floor_start is not None:
        # a Klein-Gordon Coulomb tail (or confining potential) whose particle floor the pointwise bound
        # did not settle (a finite nucleus: V + S far below -m c^2 inside it): counts on this box
        from .ladder import make_operator
        from .locator import particle_floor

        first_layout = layout(eq, pot, sample, r_min, R, energies)
        op = make_operator(eq, sample, gamma, r_core, *first_layout, min(8, degrees[0]), E0)
        lo, below = particle_floor(op, lo, min(hi, 0.0), floor_start)[:2]
        extra["window_bottom"] = lo
        if below:
            tally.notes.append(_below_window(eq, below))
    rung = None
    reuse = None
    # guesses for the first rung: the levels of the last attempt when the box was refitted to them; on
    # the first, the point-Coulomb levels of a vector Coulomb tail (checked by one count like any seed)
    seed = _coulomb_seed(eq, pot, want)
    for _attempt in range(16):
        edges, quiet = first_layout or layout(eq, pot, sample, r_min, R, energies)
        first_layout = None
        _check_pole(eq, sample, r_min, R, energies)
        degree = degrees[0] if trusted and len(degrees) > 1 else min(8, degrees[0])
        rung = solve_rung(eq, pot, sample, gamma, r_core, edges, quiet, degree, want, lo, hi, E0, scale,
                          None if seed is None else seed.energies, None if seed is None else seed.E_top,
                          sure=False, certify=False, rtol=rtol_first, guess_lo=guess_lo)
        if seed is not None and not certify_levels(rung.op, rung.located, want, lo, hi, scale, sure=False).certified:
            # the seeds (point-Coulomb levels, or those of a lower degree) led Newton's method to other
            # levels (a narrow Woods-Saxon well's 1s, 0.8 % off at degree 8, went to a level 5.7 hartree
            # above; a deep well inside a Coulomb tail): one count tells, and the pencil is solved instead
            tally.reseeded += rung.located.reseeded
            rung = solve_rung(eq, pot, sample, gamma, r_core, edges, quiet, degree, want, lo, hi, E0, scale,
                              sure=False, certify=False, rtol=rtol_first, guess_lo=guess_lo)
        seed = None
        tally.reseeded += rung.located.reseeded
        got = list(rung.located.energies)
        window = _window_counts(rung.op, lo, hi) if len(got) < want and math.isfinite(hi) else None
        if window is not None and window[1] >= want:
            # the box holds every level sought, and the guesses missed some (a linearised pencil puts
            # the upper levels of a deep Dirac well above the threshold): mended by counting; growing
            # the box for them only repeated the miss (13 rungs of 1000 unknowns, 250 s, for a
            # Woods-Saxon well of depth 1e4 hartree with 117 levels)
            mended = certify_levels(rung.op, rung.located, want, lo, hi, scale, window=window)
            if len(mended.energies) == want:
                tally.bisected += mended.fallback
                tally.notes.append(f"box fitting (degree {degree}): {mended.fallback} level(s) the guesses "
                                   "missed located by counting")
                rung.located = mended
                got = list(mended.energies)
        if len(got) < want:
            if R < 1e9 * L and not pot.confining and rung.size < 4000:
                R *= 4
                continue
            if pot.confining and got:
                energies = [got[0], got[-1]]
            break
        need = _outer_radius(eq, pot, got[-1], L)
        new_energies = [got[0], got[-1]]
        E0 = 0.5 * (got[0] + got[-1])
        close = len(energies) == 2 and all(abs(a - b) <= 0.25 * abs(b) for a, b in zip(energies, new_energies))
        if need > 1.05 * R or need < R / 2:
            R = 1.1 * need
            energies, trusted = new_energies, True
            # the next attempt starts from these levels instead of a dense pencil (5 s of 15 for 328
            # levels at 3200 unknowns), when no state lies below the window (the guesses are then
            # the levels counted from the bottom of the window: what locate_levels takes them for)
            if not math.isfinite(lo) or count_below(rung.op, lo) == 0:
                seed = rung.located
            continue
        if close and degree == degrees[0] and len(degrees) > 1 and not study:
            reuse = (edges, quiet, rung)
        energies = new_energies
        break
    if rung is not None and len(rung.located.energies) < want and bound is None and not pot.confining:
        # with no count (a long-range tail) the largest box tried is all there is. When it holds fewer levels
        # than sought (a supercritical 1/r^2 tail's, each about a hundred times shallower than the one before:
        # the tenth of -1/(r^2 + 1) lies 1e-20 hartree down), the ladder solves those it holds and has room
        # for (decayed by e^-_DECAY within it: the ninth of -1/(r^2 + 1), 2.2e-18 hartree down, had decayed by
        # e^-6 at R = 3e9 bohr and was 1e-4 off with an estimate of 8e-13), and the result says why the rest
        # are missing (before, the ladder raised an IndexError)
        got = 0
        for E in rung.located.energies:
            if _outer_radius(eq, pot, E, L) > 1.05 * R:
                break
            got += 1
        extra["why"] = (f"the largest box tried (R = {R:.3g} bohr, {R / L:.3g} natural lengths, {rung.size} unknowns) "
                        f"has room for {got} level(s) below the threshold; the others lie closer to it than such a "
                        "box resolves")
        want = got
        if want == 0:
            return [], tally, [], 0.0, extra
    # 2. the ladder on a fixed layout
    extra["r_max"] = R
    hist = _Histories()
    if reuse is not None:
        edges, quiet, first = reuse
        rungs = [first]
        hist.record(0, first.located.energies)
        ladder = degrees[1:]
        fitted = None
    else:
        fitted = rung.located if rung is not None else None
        edges, quiet = layout(eq, pot, sample, r_min, R, energies)
        rungs = []
        ladder = degrees
    per_level = []
    offset = 0          # states below the window (dived), from the last certificate
    # the lowest `settled` levels met the stop rule on a certified rung and are not solved again
    # (their energy, state and estimate are those of that rung): 325 of 328 levels of a pion in a deep
    # Woods-Saxon well met it on the third of five rungs, which went on only for the top three
    settled = 0
    may_settle = not study and tol >= FLOOR
    resumed = False     # the settled levels were given up: the next rung starts from every level's last energy

    def finished(n_found: int):
        if study or n_found != want:
            return False, False
        done = all(len(h) >= 3 and spectral_done(h, tol) for h in hist.E[:want])
        floor = all(len(h) >= 3 and max(abs(h[-1] - h[-2]), abs(h[-2] - h[-3])) <= FLOOR * abs(h[-1])
                    for h in hist.E[:want])
        return done, floor

    step, refits = 0, 0
    while step < len(ladder):
        n = ladder[step]
        step += 1
        prev_loc = rungs[-1].located if rungs else fitted   # the box-fitting rung seeds the first one
        if settled or resumed:
            guesses = hist.latest(settled)
        else:
            guesses = prev_loc.energies if prev_loc is not None and len(prev_loc.energies) == want else None
        resumed = False
        top = prev_loc.E_top if guesses is not None else None
        # with settled levels the window starts between the last of them and the first level above
        lo_r = 0.5 * (hist.E[settled - 1][-1] + guesses[0]) if settled else lo
        rung = solve_rung(eq, pot, sample, gamma, r_core, edges, quiet, n, want - settled, lo_r, hi, E0, scale,
                          guesses, top, certify=False, offset=offset + settled,
                          rtol=rtol_first if not rungs and len(ladder) > 1 else rtol,
                          guess_lo=None if settled else guess_lo)
        tally.reseeded += rung.located.reseeded
        if settled:
            confirmed = _settled_confirmed(rung.op, rung.located, lo_r, offset, settled, want)
            if not confirmed:
                tally.notes.append(f"degree {n}: the count does not confirm the {settled} settled level(s) "
                                   "(or a level above them was missed); every level solved again")
                settled, may_settle, resumed = 0, False, True
                step -= 1
                continue
            rung.located = confirmed
        rungs.append(rung)
        hist.record(len(rungs) - 1, rung.located.energies, start=settled)
        n_found = settled + len(rung.located.energies)
        done, floor = finished(n_found)
        # a rung that located fewer levels than wanted (Newton's method did not reach a shallow level
        # from guesses linearised far below it) is mended by counting now, so the rungs above start
        # from every level; left to the top rung, the ladder climbed to its end and the mended level
        # had one rung of history (an estimate of inf: Dirac S = V Hulthen, Z = 130, 8.7 s)
        short = n_found < want and not study
        ready = hist.settled_prefix(tol) if may_settle else 0       # levels that would settle here
        settling = not done and step < len(ladder) and ready >= max(settled + 1, _SETTLE_MIN)
        if not (done or floor or short or settling or n == ladder[-1]):
            E0 = hist.middle(n_found, E0)
            continue
        loc = rung.located if rung.located.checked else certify_levels(rung.op, rung.located, want, lo, hi, scale)
        offset = loc.offset - settled
        if not loc.certified:
            tally.notes.append(f"degree {n}: count certificate failed (N(E_top) = {loc.count_top})")
        if loc.fallback:
            tally.bisected += loc.fallback
            tally.notes.append(f"degree {n}: {loc.fallback} level(s) located by bisection on the count")
        mended = loc.energies != rung.located.energies
        if mended:      # mended by bisection: this rung's entries change (never with settled levels)
            hist.record(len(rungs) - 1, loc.energies, overwrite=len(rung.located.energies))
            hist.truncate(len(loc.energies))
        rung.located = loc
        n_found = settled + len(loc.energies)
        E0 = hist.middle(n_found, E0)
        if mended and loc.energies and refits < 2 and not study and not pot.confining:
            # the box was fitted to the levels of the box-fitting rung; levels the count mended can lie
            # elsewhere and decay more slowly, even the lowest (with S = V a Dirac level near -2 m c^2 has
            # the small mass (E + 2 m c^2) / (2 c^2)): a box they overflow shifts every rung alike, which
            # no estimate sees (a 1s 3.7e-8 off with an estimate of 7.5e-10). Refit it and start again.
            need = max(_outer_radius(eq, pot, E, L) for E in (loc.energies[0], loc.energies[-1]))
            if need > 1.05 * R:
                refits += 1
                R = 1.1 * need
                extra["r_max"] = R
                edges, quiet = layout(eq, pot, sample, r_min, R, [loc.energies[0], loc.energies[-1]])
                tally.notes.append(f"degree {n}: the levels the count found overflow the box; refitted to "
                                   f"r_max = {R:.4g} bohr and the ladder restarted")
                fitted, rungs, hist, step, settled = loc, [], _Histories(), 0, 0
                continue
        done, floor = finished(n_found)
        if done and tol >= FLOOR:
            break
        if floor or done:           # done below the floor: the estimate cannot go under FLOOR
            tally.floor_hit = True
            tally.notes.append(f"at the rounding floor; tol {tol:g} is out of reach")
            break
        if settling and loc.certified and not mended:
            settled = ready
    last = rungs[-1]
    extra["certified"] = bool(last.located.certified)
    found, worst = [], 0.0
    offset = last.located.offset - settled
    if offset and eq.name == "dirac" and bottom is None and not short_range:
        # a Coulomb tail's state below the window: dived, or a level between the bottom and the pole
        # (a short-range well's far count looked already)
        r_far = max(1e4 * L, 40 * _well_radius(pot, L), 10 * _initial_radius(eq, pot, n_req, L))
        dive = _dive_band(eq, pot, sample, gamma, L, r_min, r_far, hi, lo)
        if dive.bound:
            return _solve_elements(eq, pot, levels, tol, degrees if study else None, known_bound, inner, dive)
        extra["dive"] = dive
    if offset and eq.name != "klein-gordon":       # (merged Klein-Gordon pairs were noted above)
        tally.notes.append(_below_window(eq, offset, extra.get("dive"))
                           + "; the levels above keep their node counts")
    if settled:
        tally.notes.append(f"{settled} lowest level(s) met tol on degree {rungs[hist.at[settled - 1][-1][0]].degree} "
                           "or below and were not solved on the rungs above")
    v_abs: dict[int, np.ndarray] = {}       # |V| + |S| on each rung's nodes, once per rung
    cut_worst = 0.0     # the largest error of the inner cut above both a level's estimate and tol
    for k in range(settled + len(last.located.energies)):
        h = hist.E[k]
        ri, i = hist.at[k][-1]
        rk = rungs[ri]
        E = rk.located.energies[i]
        n = principal_n(k + offset, eq.l)
        y = rk.located.vectors[i]
        ratio = rk.op.charge_ratio(E, y) if eq.name == "klein-gordon" else None
        state = _element_state(eq, rk.op, E, y, ratio, pot)
        if state is None:       # a root of negative Klein-Gordon charge: an antiparticle state, not a level
            tally.notes.append(f"{eq.label(n)}: E = {E:.10g} hartree has negative charge int (E + m c^2 - V) "
                               "P^2 dr / (m c^2) (an antiparticle state); dropped")
            extra["why"] = "a root of negative charge (an antiparticle state) was dropped (see diagnostics)"
            continue
        if ri not in v_abs:                  # on the nodes the state lives on
            v_abs[ri] = np.abs(rk.op.sample.V) + np.abs(rk.op.sample.S)
        V_abs = v_abs[ri]
        est = max(abs(h[-1] - h[-2]), FLOOR * abs(E)) if len(h) >= 2 else math.inf
        est, hit = with_potential_floor(tally.notes, eq.label(n), E, est, potential_floor(state, V_abs), tol, h)
        est = _with_residual_floor(tally, rk.op, eq.label(n), E, est, tol)
        tally.potential_floor_hit |= hit
        if eq.name == "klein-gordon":
            est = _near_merge(eq, rk.op, E, ratio, state, eq.label(n), est, tol, tally)
        cut = _cut_error(eq, pot, state, E)
        if cut > est:
            est = cut
            if cut > tol * abs(E):
                cut_worst = max(cut_worst, cut)
        if _cut_is_clipped(gamma, eq.spin == 0.5) and pot.z_vector != pot.z_scalar:
            est *= 10
        worst = max(worst, est / abs(E)) if E != 0 else worst
        per_level.append({"label": eq.label(n), "sizes": [rungs[j].size for j, _ in hist.at[k]], "energies": list(h),
                          "r_min": r_min, "r_max": R})
        prev_state = None
        if len(hist.at[k]) > 1:
            pj, pi = hist.at[k][-2]
            pr = rungs[pj]
            prev_state = _element_state(eq, pr.op, pr.located.energies[pi], pr.located.vectors[pi], pot=pot)
        found.append(Level(n=n, l=eq.l, j=eq.j, kappa=eq.kappa, label=eq.label(n), energy=E,
                           error_estimate=est, nodes=k + offset, state=state,
                           resolution=rk.size, iterations=0, previous_state=prev_state))
    if len(found) < want and "why" not in extra and extra.get("near_merge"):
        extra["near_merge_undecided"] = True
        extra["why"] = ("a particle level this close to merging with its antiparticle partner (their energies turn "
                        "complex; the window between their two roots is narrow on the counting box) could not be "
                        "separated from it on the ladder's meshes; whether it is still bound is not resolved here")
    if len(found) < want and "why" not in extra:
        extra["why"] = ("the box could not be made to hold them (levels too close to the threshold?)"
                        if last.located.certified else "the count certificate failed (see diagnostics)")
    if cut_worst and inner is None and not study:
        again = _solve_elements(eq, pot, levels, tol, known_bound=known_bound, inner=r_min * _CUT_RETRY,
                                bottom=bottom)
        again[1].reseeded += tally.reseeded
        again[1].bisected += tally.bisected
        again[1].notes.insert(0, f"inner end moved in from {r_min:.4g} to {r_min * _CUT_RETRY:.4g} bohr: cutting "
                                 f"the mesh there cost up to {cut_worst:.2g} hartree, more than tol and the rungs' estimate")
        return again
    return found, tally, per_level, worst, extra


def _with_residual_floor(tally: _Tally, op, label: str, E: float, est: float, tol: float) -> float:
    """The estimate raised, for a level at which Newton's method stopped on the rounding of its residual
    (:func:`boundkit.eigen._stalled_at_noise`, recorded in ``op.noise_stalls``), to that rounding:
    NOISE_ULPS u sum |K_ii| y_i^2 / y^T M y (u = 2^-64; :meth:`SymmetricOperator.energy_noise`). That
    happens to levels 1e-8 to 1e-10 of their well's depth below the threshold: the 2p and 3d of square
    wells just deep enough to bind them were up to 0.97 u times that sum off their exact levels, 1.5
    times the estimate without it (tests/test_shallow_levels.py). It is not a floor for every level:
    the sum can be 1e4 times the rounding Newton's method meets (thin deep shells, the top levels of a
    73-level Hulthen well), whose steps shrink below tol first."""
    noise = op.noise_stalls.get(E, 0.0)
    if noise <= est:
        return est
    if noise > tol * abs(E):
        tally.residual_hit = True
        tally.notes.append(f"{label}: the rounding of the equation's terms where it lives ({noise / abs(E):.2g} "
                           f"relative) lies above tol {tol:g}: a level this close to the threshold is not resolved "
                           "that far in double precision")
    return noise


def _settled_confirmed(op, located, lo_r: float, dived: int, settled: int, want: int):
    """The levels of a rung solved above ``settled`` settled levels, certified, when two counts agree
    with them (else None): as many levels below lo_r (the middle between the last settled level and
    the first one above) as settled (plus ``dived`` below the window), and above it exactly the
    distinct levels just found, up to their E_top (the certificate's one count, with that window)."""
    from .locator import certify_levels, count_below

    below = count_below(op, lo_r)
    if below != dived + settled:
        return None
    loc = certify_levels(op, located, want - settled, lo_r, math.inf, 0.0, sure=False, window=(below, None))
    return loc if loc.certified else None


_SETTLE_MIN = 8     # fewest settled levels worth their two counts a rung (a count costs one to two Newton solves)


class _Histories:
    """Per-level energy histories of the ladder, and where each entry was found: (index of the rung,
    index in that rung's located levels)."""

    def __init__(self) -> None:
        self.E: list[list[float]] = []
        self.at: list[list[tuple[int, int]]] = []

    def record(self, rung: int, energies, start: int = 0, overwrite: int = 0) -> None:
        """Add one rung's energies, found for the levels from ``start`` on; the first ``overwrite``
        replace that rung's entries instead (after the certificate mended them)."""
        for i, E in enumerate(energies):
            k = start + i
            if k >= len(self.E):
                self.E.append([])
                self.at.append([])
            if i < overwrite:
                self.E[k][-1], self.at[k][-1] = E, (rung, i)
            else:
                self.E[k].append(E)
                self.at[k].append((rung, i))

    def truncate(self, n: int) -> None:
        del self.E[n:]
        del self.at[n:]

    def middle(self, n_found: int, default: float) -> float:
        """Midway between the latest energies of the lowest and of the ``n_found``-th level (where the
        next rung linearises its guessing pencil), or ``default`` when none was found."""
        return 0.5 * (self.E[0][-1] + self.E[n_found - 1][-1]) if n_found else default

    def latest(self, start: int = 0) -> list[float]:
        """The last energy of each level from ``start`` on."""
        return [h[-1] for h in self.E[start:]]

    def settled_prefix(self, tol: float) -> int:
        """How many of the lowest levels, in a row, meet the stop rule."""
        from .ladder import spectral_done

        k = 0
        while k < len(self.E) and len(self.E[k]) >= 3 and spectral_done(self.E[k], tol):
            k += 1
        return k


def _particle_floor_by_bound(eq, sample, r_min: float, lo: float) -> tuple[float, float | None]:
    """(bottom of the window, None) for a Klein-Gordon channel whose particle floor a pointwise bound
    settles, else (lo, where :func:`boundkit.locator.particle_floor` should start counting); other
    equations keep lo.

    Notes
    -----
    Below the particle floor E* (where K(E*) is positive definite, see
    :func:`boundkit.locator.particle_floor`) every root of K(E) is an antiparticle level, of negative
    charge: with a Lorentz-scalar Coulomb term alone (Z = 300) the solver reported the mirror of the 1s,
    total energy -W, as the 1s with status ok. At W = 0 (E = -m c^2), 2 m K is the form of
    -u'' + l(l+1)/r^2 + ((m c^2 + S)^2 - V^2)/c^2, positive definite when
    (l + 1/2)^2 + r^2 ((m c^2 + S)^2 - V^2) / c^2 > 0 everywhere (Hardy's inequality, int u'^2 >=
    int u^2 / (4 r^2)); a margin of 0.05 keeps it clear of the discrete form's rounding.
    """
    if eq.name != "klein-gordon":
        return lo, None
    mc2 = eq.mass * C_AU**2
    r = np.logspace(math.log10(r_min), 8, 3000)
    s = sample(r, scan=True)
    with np.errstate(all="ignore"):
        margin = (eq.l + 0.5) ** 2 + r * r * ((mc2 + s.S) ** 2 - s.V**2) / C_AU**2
    if np.all(margin > 0.05):
        return -mc2, None
    return lo, -mc2


def _below_window(eq, below: int, dive: _Dive | None = None) -> str:
    """Why ``below`` states under the bottom of the window are not bound levels (or, with ``dive`` undecided,
    why the top one is not reported)."""
    if eq.name == "klein-gordon":
        return (f"{below} particle level(s) merged with their antiparticle partners (complex energies: the "
                "count N(E) stays above 0 across the window); they are not bound levels")
    if dive is not None and not dive.decided:
        return (f"{below} state(s) lie below the bottom of the bound-state window; the top one lies within "
                f"{abs(dive.x) + dive.error:.2g} hartree of diving into the lower continuum, where the counts cannot "
                "tell whether it is still bound, and is not reported")
    return (f"{below} state(s) lie below the bottom of the bound-state window (dived into the lower continuum); "
            "they are not bound levels")


def _pole_free_bottom(eq, sample, r_min: float, lo: float) -> float:
    """Bottom of the Dirac window where E + 2mc^2 - V + S > 0 everywhere: below it the eliminated
    form has a pole (a strong repulsive V - S), and counts there mean nothing.

    The maximum of V - S is read on 3000 radii in ln r and then refined on every sampled peak near the
    top (:func:`_peak_above_samples`): the bottom sits 1e-9 (relative) above it, and the true peak of a
    smooth bump lies up to about 1e-4 of its height above the samples' best. A bottom inside the pole
    left E + 2mc^2 - V + S negative at some of the far box's nodes, the count there one too high, and a
    bound level was taken as dived (the 5s of a Dirac exp-cosine well, Z = 40, D = 1 bohr;
    tests/test_dirac_pole.py)."""
    if eq.name != "dirac" or not math.isfinite(lo):
        return lo
    # strictly above: at E = -2mc^2 + max(V - S) the form itself is singular (S = V gives exactly that).
    # A state between the pole and this bottom is looked at closely when a count puts one below the
    # bottom (:func:`_dive_band`)
    return _dive_pole(sample, r_min, lo) + _DIVE_BAND * abs(lo)


_DIVE_BAND = 1e-9       # the bottom of a Dirac window above its pole, relative to 2 m c^2 (_pole_free_bottom)


def _dive_pole(sample, r_min: float, lo: float) -> float:
    """-2 m c^2 + max(V - S) (``lo`` the first), the pole of the Dirac form that levels dive into, with the
    peak of V - S refined (:func:`_peak_above_samples`) and raised by 1e-9 of itself."""
    top = max(_peak_above_samples(sample, np.logspace(math.log10(r_min), 8, 3000)), 0.0)
    return lo + top * (1 + 1e-9)


def _peak_above_samples(sample, r: np.ndarray) -> float:
    """The maximum of g = V - S, sampled at the radii r (ascending), refined around each sampled local
    maximum within 1 % of the best: the bracket between its neighbours is sampled at 17 points in ln r and
    narrowed to the best one's neighbours 8 times (8x each). A peak narrower than the sampling stays
    unseen, as it does for every probe of the potential."""
    def g_at(x):
        s = sample(x, scan=True)
        with np.errstate(invalid="ignore"):
            d = s.V - s.S
            return np.where(np.isfinite(d), d, -np.inf)

    g = g_at(r)
    best = float(np.max(g))
    if not best > 0:
        return best
    inner = (g[1:-1] >= g[:-2]) & (g[1:-1] >= g[2:]) & (g[1:-1] >= best - 0.01 * best)
    t = np.log(r)
    for i in np.nonzero(inner)[0][:8] + 1:
        a, b = t[i - 1], t[i + 1]
        for _ in range(8):
            tt = np.linspace(a, b, 17)
            gg = g_at(np.exp(tt))
            j = int(np.argmax(gg))
            best = max(best, float(gg[j]))
            a, b = tt[max(j - 1, 0)], tt[min(j + 1, 16)]
    return best


def _check_pole(eq, sample, r_min: float, R: float, energies) -> None:
    """Refuse a Dirac channel whose eliminated form has a pole inside the box."""
    if eq.name != "dirac":
        return
    r = np.logspace(math.log10(r_min), math.log10(R), 2000)
    s = sample(r, scan=True)
    for E in energies:
        with np.errstate(all="ignore"):
            p = eq.p(min(E, 0.0), s)
        bad = ~(p > 0)
        if np.any(bad):
            raise ValueError(
                f"potential: E + 2mc^2 - V + S changes sign at r = {r[np.argmax(bad)]:.3g} bohr for "
                "energies in the bound-state window (strong repulsive V - S, e.g. S = -V with a confining "
                "V): boundkit's Dirac solver eliminates the small component, and that form has a pole "
                "there; this channel cannot be solved yet (a two-component formulation is needed)")


def _check_klein_core(eq, sample, r_min: float, R: float) -> None:
    """Refuse a Klein-Gordon channel with a repulsive region where V - S > 2 m c^2 and V + S > 0.

    Notes
    -----
    There (E - V - S)(E + 2 m c^2 - V + S) > 0 at E = 0, as far out for a confining vector potential
    (:func:`_check_klein`): the state oscillates again inside the repulsive core (Klein's paradox),
    and the energy dependence dq/dE = (V - E)/(m c^2) > 1 breaks the monotonicity the level count
    rests on. A molecular Morse well has such a core (V(0) = D e^(2 a r_e), 1e6 hartree and more);
    the solver used to find spurious levels near -2 m c^2 there and then run for minutes. The Dirac
    equation meets the same core as a pole of its eliminated form (:func:`_check_pole`).
    """
    if eq.name != "klein-gordon":
        return
    r = np.logspace(math.log10(r_min), math.log10(R), 2000)
    s = sample(r, scan=True)
    two_mc2 = 2 * eq.mass * C_AU**2
    bad = (s.V - s.S > two_mc2) & (s.V + s.S > 0)
    if np.any(bad):
        i = int(np.argmax(bad))
        raise ValueError(
            f"potential: V - S = {s.V[i] - s.S[i]:.3g} hartree at r = {r[i]:.3g} bohr exceeds 2 m c^2 = "
            f"{two_mc2:.3g} hartree: the Klein-Gordon equation has no bound-state problem with such a "
            "repulsive core (Klein's paradox); soften the core below 2 m c^2 or use the Schrodinger equation")


def _jump_nodes(grid, pot) -> list[tuple[int, int]]:
    """(node, element ending there) of each element end of a spectral-element grid that lies on a jump
    of V or S (:func:`_jumps`; the element starting there is the next one)."""
    jumps = np.array(_jumps(pot)) if pot is not None else np.zeros(0)
    if not jumps.size:
        return []
    out = []
    for e, (_, i1) in enumerate(grid.elements[:-1]):
        if np.any(np.abs(grid.r[i1] - jumps) <= 1e-12 * jumps):
            out.append((i1, e))
    return out


def _one_sided(eq, op, E: float, f, W, pot, Q, weight):
    """Q and the density weight at the element ends on jumps of V or S, from each side's own values
    (a new Q and weight, and the ``weight_sides`` of :class:`RadialState`).

    There P' jumps with V (Dirac: P' + kappa P / r = M(E) Q / c with Q continuous and M(E) = E + 2 m c^2
    - V + S not), and so does the Klein-Gordon charge weight (E + m c^2 - V) / (m c^2). The node is shared
    by two elements: Q is the mean of c (P' + kappa P / r) / M(E) taken on each side with that element's
    own slope and that side's V and S (the mean slope with one side's V had Q 7.6 % off at the jump of a
    square well 5000 hartree deep; every observable 2 to 3 times its estimate off). The weight is kept
    on each side (``weight_sides``; interpolation reads them) and at the node as the mean of the two by
    the elements' quadrature weights, which the nodal integrals (the normalisation first) then take
    exactly as the two elements' rules do (one side's weight had P 2.7e-5 too large)."""
    nodes = _jump_nodes(op.grid, pot)
    if not nodes or (Q is None and weight is None):
        return Q, weight, ()
    grid, r = op.grid, op.sample.r
    idx = np.array([j for j, _ in nodes])
    s_in, s_out = _sides(pot, r[idx])
    Q = None if Q is None else np.array(Q, dtype=float, copy=True)
    weight = None if weight is None else np.array(weight, dtype=float, copy=True)
    sides = []
    for k, (j, e) in enumerate(nodes):
        (a, _), (_, b) = grid.elements[e], grid.elements[e + 1]
        one = [Sample(r[j:j + 1], x.V[k:k + 1], x.S[k:k + 1], None if x.W is None else x.W[k:k + 1])
               for x in (s_in, s_out)]
        if Q is not None:
            slopes = (grid.D[e][-1].astype(float) @ f[a:j + 1], grid.D[e + 1][0].astype(float) @ f[j:b + 1])
            Q[j] = 0.5 * sum(float(eq.small_component(E, side, W[j:j + 1] / r[j] * (d + op.b[j] * f[j]))[0])
                             for side, d in zip(one, slopes))
        if weight is not None:
            w_in, w_out = (float(eq.density_weight(E, side)[0]) for side in one)
            q_in, q_out = float(grid.w_local[e][-1]), float(grid.w_local[e + 1][0])
            weight[j] = (q_in * w_in + q_out * w_out) / (q_in + q_out)
            sides.append((int(j), w_in, w_out))
    return Q, weight, tuple(sides)


def _element_state(eq, op, E: float, y, charge: float | None = None, pot=None) -> RadialState | None:
    """Normalised radial functions of a level on a spectral-element grid; None for a Klein-Gordon root
    of negative (or zero) charge, which no normalisation makes a particle level. ``charge``: the
    Klein-Gordon charge ratio of (E, y) (:meth:`SymmetricOperator.charge_ratio`) when the caller has it;
    ``pot``: the potential, whose jumps are taken side by side (:func:`_one_sided`)."""
    grid, s = op.grid, op.sample
    f = op.expand(np.asarray(y, dtype=float))
    r = s.r
    W = op.weight()
    P = W * f
    w_dr = grid.w * r
    g = W / r * (op.derivative_in_t(f) + op.b * f)
    Q = eq.small_component(E, s, g)
    weight = eq.density_weight(E, s)
    Q, weight, sides = _one_sided(eq, op, E, f, W, pot, Q, weight)
    comps = (P,) if Q is None else (P, Q)
    by_nodes = True
    if weight is not None and Q is None:
        # Klein-Gordon: the sign of the charge on K's own quadrature points (the form the count reads);
        # near a merge the charge is a small difference, and the nodes' quadrature (one-sided V at a
        # jump) had it 340 times too large 1e-11 below a square well's merge depth
        charge = op.charge_ratio(E, y) if charge is None else charge
        if not charge > 0:
            return None     # negative (or zero) charge, not a particle level
        if not float(np.sum(w_dr * weight * P * P)) > 0:
            # the nodes' charge lost its sign: normalised to charge 1 on K's quadrature instead
            (P,), norm = normalise(w_dr, P)
            y = np.asarray(y, dtype=float)
            comps, by_nodes = (P * math.sqrt(norm / (charge * float(y @ op.mass_apply(y)))),), False
    if by_nodes:
        comps, _ = normalise(w_dr, *comps, weight=weight)
    return RadialState(r=r, P=comps[0], Q=comps[1] if Q is not None else None, weights=w_dr, gamma=op.gamma,
                       r_core=op.r_core, elements=grid.elements, family="spectral",
                       density_weight=None if weight is None else np.asarray(weight, dtype=float),
                       weight_sides=sides)


def _near_merge(eq, op, E: float, ratio: float, state: RadialState, label: str, est: float, tol: float,
                tally: _Tally) -> float:
    """A Klein-Gordon level's estimate, raised to its rounding floor when its charge ratio Q = ``ratio``
    (:meth:`SymmetricOperator.charge_ratio`) is below 1; Q -> 0 where the level merges with an
    antiparticle level. Rounding of size d in the form moves the root by d / Q, with d =
    POTENTIAL_FLOOR <|V| + |S| + ((E - V)^2 + S^2) / (2 m c^2)> (the terms of q - E, averaged over P^2).
    Where that floor lies above tol, a note says so and the solve does not say 'ok'.

    Notes
    -----
    A square well 3e-10 to 5e-12 (relative) below its merge depth (tests/test_studies_critical.py) had its
    1s up to 3.7 times further from the matching's root than its estimate (the change between rungs, or
    the potential's floor, whose <|V|> leaves out the (E - V)^2 / (2 m c^2) term, twice |V| inside that
    well), at a charge ratio of 1e-4 to 1e-5. With this floor the error was at most 0.28 of the estimate
    on 19 depths from 3e-13 to 1e-8 below the merge.
    """
    from .ladder import POTENTIAL_FLOOR

    if not 0 < ratio < 1:
        return est
    smp = op.sample                     # on the state's own nodes
    size = np.abs(smp.V) + np.abs(smp.S) + ((E - smp.V) ** 2 + smp.S**2) / (2 * eq.mass * C_AU**2)
    dens = state.weights * state.P**2
    floor = POTENTIAL_FLOOR * float(np.sum(dens * size) / np.sum(dens)) / ratio
    if floor > est and floor > tol * abs(E):
        tally.merge_hit = True
        tally.notes.append(f"{label}: close to its merge with an antiparticle level (charge over norm "
                           f"{ratio:.2g}), the root moves with the rounding of the form by {floor / abs(E):.2g} "
                           f"relative, above tol {tol:g}")
    return max(est, floor)


def _with_threshold(eq, pot):
    """(potential, V_inf): a vector potential tending to a constant V_inf far out
    (``Potential.far_constant``) is solved as V - V_inf (levels below V_inf are bound) and the
    energies are shifted back. The Schrodinger equation sees V + S, so there a scalar term's far
    constant counts too; in the relativistic equations it is a change of mass far out
    (:func:`_check_scalar_far_constant` refuses it)."""
    if pot.confining:
        return pot, 0.0
    v_inf = pot.far_constant + (pot.scalar_far_constant if eq.name == "schrodinger" else 0.0)
    if not v_inf:
        return pot, 0.0
    return _Shifted(pot, v_inf), v_inf


def _check_scalar_far_constant(eq, pot, units: str) -> None:
    """Refuse a Dirac or Klein-Gordon channel whose scalar potential tends to a constant S_inf != 0.

    Far out the particle then has the mass m c^2 + S_inf, and its continuum starts at the binding energy
    S_inf, not at 0: with S_inf > 0 the levels between 0 and S_inf were dropped with status ok, with
    S_inf < 0 the box grew without end (a MemoryError; a tester, against a shooting of both equations).
    Solving with the mass m c^2 + S_inf and the scalar S - S_inf is the same equation (m and S enter only
    as m c^2 + S), with binding energies counted from m c^2 + S_inf; the message gives that recipe.
    """
    if eq.name == "schrodinger" or pot.confining:
        return
    s_inf = pot.scalar_far_constant
    if not s_inf:
        return
    eu = system_units(units)[0]
    mc2 = eq.mass * MASS_UNIT_MEV
    raise ValueError(
        f"potential: the scalar part tends to S_inf = {hartree_to(s_inf, eu):.6g} {eu} far out, a change of mass "
        f"there; the {eq.name} solver needs a scalar that vanishes far out: give mass_mev="
        f"{mc2 + hartree_to(s_inf, 'MeV'):.10g} (--mass-mev) and the scalar minus S_inf (binding energies then "
        "count from m c^2 + S_inf)")


class _Shifted:
    """A potential moved by a constant so that it tends to zero (see :func:`_with_threshold`)."""

    far_constant = 0.0

    def __init__(self, pot, v_inf: float) -> None:
        self._pot, self._v = pot, v_inf

    def __getattr__(self, name):
        return getattr(self._pot, name)

    def V(self, r):
        return self._pot.V(r) - self._v

    def __repr__(self) -> str:
        return repr(self._pot)


def _shift_result(res: SolveResult, v_inf: float) -> SolveResult:
    levels = tuple(replace(lv, energy=lv.energy + v_inf) for lv in res.levels)
    diag = {**res.diagnostics, "threshold_hartree": v_inf}
    notes = list(diag.get("notes", [])) + [f"the potential tends to {v_inf:.12g} hartree far out: that is the "
                                           "threshold, and energies are given as the potential defines them"]
    diag["notes"] = notes
    return replace(res, levels=levels, diagnostics=diag, message=res.message + f"; threshold at {v_inf:.6g} hartree")


def solve_channel(eq: RadialEquation, pot: Potential, disc: Discretization, levels: int | None = 1,
                  tol: float = 1e-10, settings: dict | None = None, potential_name: str = "") -> SolveResult:
    """Solve one channel; the engine behind :func:`solve` (same result type).

    ``levels`` is a number of lowest levels, or None for every bound level of
    a potential that has finitely many. BLAS runs single-threaded inside: the
    matrices are small (a few hundred rows), and threads only contend, badly
    so on a shared machine. A relativistic scalar that tends to a constant far out is
    refused here as in :func:`setup` (a caller may build ``eq`` and ``pot`` without it),
    its value in the units of ``settings["units"]`` (atomic without settings).
    """
    _check_scalar_far_constant(eq, pot, (settings or {}).get("units", "atomic"))
    with one_blas_thread():
        pot, v_inf = _with_threshold(eq, pot)
        with _singular_mass_refused(eq.l):
            res = _solve_channel(eq, pot, disc, levels, tol, settings, potential_name)
        if v_inf:
            res = _shift_result(res, v_inf)
        return res


@contextlib.contextmanager
def _singular_mass_refused(l: int):
    """Turn LAPACK's failure to factorize the elements' mass matrix B at high l into a ValueError naming l.
    Around :func:`_solve_elements` (so the convergence study, the validator and prepare_channel's callers
    get it too) and :func:`solve_channel` (the other families)."""
    try:
        yield
    except np.linalg.LinAlgError as exc:
        # only the mass matrix B of a generalized eigenproblem failing its Cholesky factorization
        if l < _HIGH_L or "of B is not positive definite" not in str(exc):
            raise
        raise ValueError(
            f"l: at l = {l} the spectral elements' mass matrix is singular to double precision (their "
            f"weight (r / (r + r_core))^(2 l + 2) spans more than double precision near the origin; LAPACK: "
            f"{str(exc).split('.')[0]}); lower l solve (up to about 100 for an oscillator or a linear well, "
            "100 for a Coulomb potential in the relativistic equations)") from None


def _check_klein(eq, pot) -> None:
    """Refuse a Klein-Gordon or Dirac channel whose vector potential outgrows its scalar one.

    Notes
    -----
    Far out both equations behave like u'' = -(E - V - S)(E + 2 m c^2 - V + S) u / c^2 (E the binding
    energy). When V - S and V + S both grow without bound, that product is positive for every E and
    the state oscillates (Klein's paradox): a vector potential that confines, with no scalar part as
    strong, binds no normalisable level. With V + S bounded (the pseudospin case S = -V) or V - S
    bounded (S = V, the spin-symmetric quark-model case) levels do exist, and nothing is refused here
    (the Dirac solver's own pole check answers the pseudospin case). The test reads V - S and V + S
    at 1e6, 1e7 and 1e8 bohr: each must rise, its rise not slowing by more than half from one decade
    to the next (linear, quadratic and logarithmic growth; not a rise that levels off). Where V - S
    passes 2 m c^2 only beyond 1e8 bohr the levels are bound in practice, but the box would have to
    stop before that point, which the solver does not do (it laid elements out towards it and ran out
    of memory).
    """
    if eq.name not in ("klein-gordon", "dirac") or not pot.confining:
        return
    r = np.array([1e6, 1e7, 1e8])
    s = _sample(pot, r, scan=True)

    def grows(f) -> bool:
        rise, last = f[1] - f[0], f[2] - f[1]
        return bool(rise > 0 and last >= 0.5 * rise)

    d = s.V - s.S
    if grows(d) and grows(s.V + s.S):
        name = {"klein-gordon": "Klein-Gordon", "dirac": "Dirac"}[eq.name]
        # one line of the command line's error (at most 280 characters), with the fix in it
        raise ValueError(
            f"potential: the vector part outgrows the scalar part without bound (V - S = {d[2]:.3g} "
            f"hartree at 1e8 bohr): the {name} equation binds nothing then (Klein's paradox); put the "
            "confinement in a Lorentz scalar at least as strong (scalar=..., --scalar) or use the Schrodinger "
            "equation")


def _repulsive_everywhere(eq, pot) -> bool:
    """A Schrodinger channel whose potential (less a 1/r^2 part, which only shifts l) is nowhere below its
    threshold on the natural length's radii (1e-14 to 1e8 bohr), and neither confines nor has an attractive
    Coulomb tail: the kinetic and centrifugal energies are not negative either (for a real gamma), so no
    level lies below the threshold. A repulsive Coulomb field took 5 s to say 'partial' without this.

    A Dirac channel with vector terms only (no scalar) that are nowhere attractive binds no level of the
    particle either: the states a repulsive V holds inside the gap are those of the antiparticle (a
    repulsive Coulomb field's lie just above E = -2 m c^2, hydrogen's levels mirrored). Before this, a
    repulsive point charge was refused with a message about a pole of the eliminated form and S = -V.

    A Klein-Gordon channel with scalar terms only (V = 0) that are nowhere attractive binds none either:
    q(E) - E = S + S^2/(2 m c^2) - E (1 + E/(2 m c^2)) > 0 for S >= 0 and every E in (-2 m c^2, 0). A
    scalar core steeper than 1/r^2 alone (S = 1/r^3) ended in LAPACK's 'Eigenvalues did not converge'."""
    if eq.name not in ("schrodinger", "dirac", "klein-gordon") or pot.confining or pot.tail_charge > 0:
        return False
    if eq.name == "dirac" and pot.scalar:       # only a repulsive vector potential: see _REPULSIVE_DIRAC
        return False
    if eq.name == "klein-gordon" and pot.vector:    # only a repulsive scalar potential (see above)
        return False
    _, strength, attractive = _strength(eq, pot)
    if np.any(attractive) or not np.any(strength >= 1e-3):    # V = 0: _natural_length's refusal
        return False
    edges = np.array([b for b in pot.breakpoints if b > 0])    # a narrow well declares its radii
    if edges.size:
        s = _sample(pot, edges, scan=True)
        return not np.any(s.V + s.S - getattr(pot, "origin_inverse_square", 0.0) / edges**2 < 0)
    return True


_REPULSIVE = ("this potential binds no level: it is nowhere attractive (V >= 0 at every radius from 1e-14 to "
              "1e8 bohr)")
_REPULSIVE_DIRAC = ("this potential binds no level of the particle: it is nowhere attractive (V >= 0 at every "
                    "radius from 1e-14 to 1e8 bohr, no scalar term); the states a repulsive V holds in the gap are "
                    "the antiparticle's")
_REPULSIVE_SCALAR = ("this potential binds no level: it is nowhere attractive (a scalar S >= 0 at every radius from "
                     "1e-14 to 1e8 bohr and no vector term: (m c^2 + S)^2 >= (m c^2)^2)")


def _solve_channel(eq, pot, disc, levels, tol, settings, potential_name) -> SolveResult:
    t0 = time.perf_counter()
    _check_klein(eq, pot)
    if levels is None:
        _refuse_all_of_infinitely_many(eq, pot)
    if _repulsive_everywhere(eq, pot):
        why = {"dirac": _REPULSIVE_DIRAC, "klein-gordon": _REPULSIVE_SCALAR}.get(eq.name, _REPULSIVE)
        return _result(eq, pot, disc, levels, tol, settings, potential_name, [], _Tally(), [], 0.0,
                       {"bound_count": 0, "no_level_why": why}, t0)
    if disc.family == "spectral":
        run = _solve_laguerre(eq, pot, levels, tol)
        found, tally, per_level, worst, extra = run
    else:
        found, tally, per_level, worst, extra = _solve_collocation(eq, pot, disc, levels, tol)
    found, worst = _with_table_error(pot, found, tally, worst, tol)
    return _result(eq, pot, disc, levels, tol, settings, potential_name, found, tally, per_level, worst,
                   extra, t0)


def _table_error(table, state) -> float:
    """A level's energy error from one table's interpolation, to first order in the difference d(r) of
    the splines of degree k + 2 and k (:meth:`TabulatedTerm.interpolation_difference`), with rho the
    level's density: 2 |integral rho d| for a table that resolves its potential (interpolation spread at
    most SPREAD_WARN), the integral of rho |d| for a coarser one; plus 2 |integral rho d_0| with d_0 the
    uncertainty of the declared origin below the first point (:meth:`TabulatedTerm.origin_difference`).

    Notes
    -----
    Measured against exact levels (Hulthen tables of 12 to 400 points; Woods-Saxon tables of 100 to 800
    points against the built-in term): on resolved tables the signed integral is within 20 % of minus the
    level's error (the degree k + 2 spline is the better one), so twice it bounds it, where the absolute
    integral over-states it up to 20 times (sign changes between the points cancel); on coarse tables
    (30 points and fewer) the signed one fell up to 20 times short and the absolute one bounded the
    errors but one (a 12-point table's 3s, 0.9 of it).
    """
    from .potentials.tabulated import SPREAD_WARN

    d = table.interpolation_difference(state.r)
    w = state.weights * (state.P**2 if state.Q is None else state.P**2 + state.Q**2)
    origin = 2.0 * abs(float(np.sum(w * table.origin_difference(state.r))))
    if table.interpolation_spread <= SPREAD_WARN:
        return 2.0 * abs(float(np.sum(w * d))) + origin
    return float(np.sum(w * np.abs(d))) + origin


def _tables(pot) -> list:
    """The potential's tables (terms with an interpolation error), vector and scalar."""
    return [t for t, _ in table_terms(pot)]


def table_error(pot, state: RadialState) -> float:
    """A level's energy error from the interpolation of the potential's tables (hartree; 0 without
    tables): :func:`_table_error` summed over the tables, with ``state`` the level's radial state.

    The one place where the tables' error meets a level: a solve adds it to every estimate
    (:func:`_with_table_error`), and so do the paths that refine levels one by one through
    :meth:`Channel.level` (:meth:`Channel.table_error`: the studies' seeded levels, a critical value's
    points)."""
    return float(sum(_table_error(t, state) for t in _tables(pot)))


def _with_table_error(pot, found, tally, worst: float, tol: float):
    """The levels with the interpolation error of the potential's tables added to their estimates
    (:func:`table_error`). The solve is that of the interpolant; a 12-point Hulthen
    table had its 3s 250 % off with an estimate of 7e-14 and status ok (a tester).
    ``(levels, worst relative estimate)``; unchanged without tables."""
    if not _tables(pot) or not found:
        return found, worst
    out, largest = [], (0.0, "")
    for lv in found:
        err = table_error(pot, lv.state)
        est = lv.error_estimate + err
        if lv.energy != 0:
            worst = max(worst, est / abs(lv.energy))
            largest = max(largest, (err / abs(lv.energy), lv.label))
            tally.table_hit |= err > tol * abs(lv.energy)
        out.append(replace(lv, error_estimate=est))
    tally.notes.append(f"{TABLE_ERROR_NOTE}: at most {largest[0]:.2g} relative ({largest[1] or 'no level'})")
    return out, worst


def _infinitely_many(eq, pot) -> str:
    """Why the channel binds infinitely many levels, as a phrase ('is confining', 'has an attractive Coulomb
    tail', or :func:`_infinite_tail`'s), or '' when it binds finitely many (its count is made on the far box)."""
    if pot.confining:
        return "is confining"
    return "has an attractive Coulomb tail" if pot.tail_charge > 0 else _infinite_tail(eq, pot)


def _refuse_all_of_infinitely_many(eq, pot) -> None:
    """levels='all' of a channel that binds infinitely many (:func:`_infinitely_many`): refused, before any work."""
    why = _infinitely_many(eq, pot)
    if why:
        raise ValueError(f"levels: 'all' needs a potential with finitely many bound levels; this one {why} and binds "
                         "infinitely many; give a number of levels")


def _infinite_tail(eq, pot) -> str:
    """Why a potential without a Coulomb tail binds infinitely many levels in this channel, as a phrase
    ('has an attractive ... tail ...,'), or '' when it binds finitely many (or is confining).

    Two tails do so, their levels accumulating at the threshold where no far box counts them all: one of
    -1/(r^2 + 1) counted 9, and they were reported as all the levels.

    - B / r^2 too attractive for l: l (l + 1) + 2 m B < -1/4 (its order is complex,
      :func:`~boundkit.equations.schrodinger.inverse_square_order`; at exactly -1/4 the levels are finitely
      many); each level is about exp(2 pi / s) times
      shallower than the one before, s = sqrt(-(l + 1/2)^2 - 2 m B).
    - -A r^-s with A > 0 and 0 < s < 2, s != 1 (:attr:`Potential.slow_tail`): it outlasts the centrifugal
      barrier, as a Coulomb tail does.
    """
    if pot.confining or pot.tail_charge != 0:
        return ""
    B = pot.tail_inverse_square
    disc = inverse_square_disc(eq.l, eq.mass, B)
    if disc < 0:
        s = math.sqrt(-disc)
        return (f"has an attractive 1/r^2 tail far out (B = {B:.3g} hartree bohr^2: l(l+1) + 2 m B = "
                f"{eq.l * (eq.l + 1) + 2 * eq.mass * B:.3g} < -1/4 at l = {eq.l}), whose levels accumulate at the "
                f"threshold, each about exp(2 pi / s) = {math.exp(min(2 * math.pi / s, 700.0)):.3g} times shallower "
                f"than the one before (s = sqrt(-(l + 1/2)^2 - 2 m B) = {s:.3g}),")
    power = pot.slow_tail
    if power:
        return (f"has an attractive tail far out falling off as r^-{power:.3g}, slower than 1/r^2 (the centrifugal "
                "barrier), whose levels accumulate at the threshold as those of a Coulomb tail do,")
    return ""


def _potential_range(eq, pot) -> float:
    """Radius beyond which 2 m r^2 |V + S| stays below 1e-3 (the weakest strength the natural length
    looks for): the potential cannot hold a turning point out there but of a level that shallow."""
    r, strength, _ = _strength(eq, pot)
    strong = np.nonzero(strength >= 1e-3)[0]
    return float(r[strong[-1]]) if strong.size else 0.0


class _FarCount(NamedTuple):
    """The far-box count of a short-range potential (:func:`_far_bound`)."""

    bound: int          # levels in the window (lo, threshold)
    box: float          # the box's radius, bohr
    lo: float           # the bottom of the window (a Klein-Gordon channel's particle floor)
    below: int          # states below it: dived (Dirac), or particle levels merged with their antiparticles
    narrow: bool = False    # Klein-Gordon: a particle level close to its merge (the floor's window is narrow)
    near: _NearThreshold | None = None      # a state of the open box close to the threshold, when there is one
    dive: _Dive | None = None   # Dirac: the top state below the window's bottom, looked at closely (_dive_band)


class _NearThreshold(NamedTuple):
    """A state of the open far box within _THRESHOLD_BAND p / R^2 of the threshold (:func:`_near_threshold`)."""

    mu: float           # its eigenvalue of (K(threshold), M): about its energy less the threshold, hartree
    error: float        # how far mu can be off: the change to twice the degree, rounding, the tail beyond R

    @property
    def bound(self) -> bool:
        """Counted as bound: mu < -error."""
        return self.mu < -self.error

    @property
    def decided(self) -> bool:
        """|mu| > error: which side of the threshold it lies on is known."""
        return abs(self.mu) > self.error


_THRESHOLD_BAND = 0.1   # the band around the threshold looked at closely, in p / R^2 of the far box (R its radius)


class _Dive(NamedTuple):
    """The top state below the bottom of a Dirac window, looked at closely (:func:`_dive_band`)."""

    bottom: float       # the bottom of the window to count from (below the state when it is surely bound)
    x: float            # its energy above the pole (below: negative) on the box at degree 36, hartree; 0 when
                        # not measured (within _DIVE_ULPS ulp of it, or below it by more than _DIVE_WEAKER lifts)
    error: float        # how far x can be off: the change from degree 18, and the margin of the lowest count
    dived: bool         # below the pole by more than the error (0 < -x - error, or too far to lift)

    @property
    def bound(self) -> bool:
        """Surely above the pole: a level (x > error)."""
        return self.x > self.error

    @property
    def decided(self) -> bool:
        """Known to be a level, or to have dived."""
        return self.bound or self.dived


_DIVE_ULPS = 16         # the lowest count of the band lies this many ulp of the pole above it
_DIVE_STEPS = 40        # bisections (in log x) that place a state in the band
_DIVE_WEAKER = 1e-9     # the largest relative weakening of V and S that a dived state is lifted by (_dive_band)
_DIVE_LIFT_STEPS = 10   # bisections (in log) of the weakening that lifts a state above the pole
_DIVE_REACH = 1e-6      # how far above the pole (relative to 2 m c^2) a lifted state is placed


def _place_above_pole(op, j: int, pole: float, a: float, b: float) -> float:
    """Where the state of index j (in the grid's whole spectrum) lies above the pole: 0 when the count at
    a (just above the pole) has it below, b - pole when the count at b does not, else by bisection on the
    count in log(E - pole) (_DIVE_STEPS counts)."""
    if op.count_negative(a) > j:
        return 0.0
    if op.count_negative(b) <= j:
        return b - pole
    x0, x1 = a - pole, b - pole
    for _ in range(_DIVE_STEPS):
        mid = math.sqrt(x0 * x1)
        if op.count_negative(pole + mid) > j:
            x1 = mid
        else:
            x0 = mid
    return math.sqrt(x0 * x1)


def _weakened(sample, factor: float):
    """The sampler of ``factor`` (V, S)."""
    def weak(r, scan: bool = False) -> Sample:
        s = sample(r, scan=scan)
        return Sample(s.r, s.V * factor, s.S * factor, s.W)
    return weak


def _dive_band(eq, pot, sample, gamma: float, L: float, r_min: float, r_far: float, hi: float, bottom: float,
               op=None) -> _Dive:
    """The top state that a count on the far box (``op``, degree 18; built when None) puts below the Dirac
    window's ``bottom``: a level that dived, or one that lies between the bottom and the pole
    -2 m c^2 + max(V - S) (:func:`_dive_pole`), still bound.

    Notes
    -----
    The bottom sits _DIVE_BAND (1e-9 of 2 m c^2) above the pole, and every state below it was taken as dived:
    a uniformly charged sphere at Z = 169.73336438 (rms 7 fm) lost its 1s1/2, bound by W + 1 = 5.0e-10, with
    status 'ok' (tests/test_dirac_dive.py). Counts down to the pole keep their meaning for the discrete
    problem (E + 2 m c^2 - V + S > 0 on the box), but not all their digits: a square well's level next to its
    dive was placed up to 2e-14 MeV off at degree 18, 3e-13 at 36 and 3e-12 at 60. So the state is placed
    by counting (:func:`_place_above_pole`) on the far box at degree 18 and 36, down to _DIVE_ULPS ulp above
    the pole; x is where the second puts it, and its error the change between the two, plus the rounding of
    a count there (NOISE_ULPS u sum |K_ii| y_i^2 / y^T M y, :meth:`SymmetricOperator.energy_noise`; 1.5e-11
    MeV for that well at degree 36, 50 times the change) and that margin. Above the pole by more than the
    error it is a level, and the bottom moves below it.

    Below the margin on both boxes, the state is lifted by weakening V and S: by _DIVE_WEAKER (1e-9) it
    stays below the pole when it dived that far (a square well's state rises 3.5e-9 MeV); else the
    weakening eta* that lifts it above the pole is found on each box (by bisection in log eta), and its
    depth below the pole is eta* times its rise per unit eta there (on the finer box), with the change of
    that between the boxes plus the rounding as its error. Dived by more than the error, it is not a level;
    within it, it lies within the resolution of diving, and is neither reported nor ruled out (status
    'partial'). Only when a count puts a state below the window: a dived state costs one or two far boxes
    more (13-70 ms on a square well and a sphere), one within 1e-9 of its dive a few hundred counts and
    about twenty-five boxes (0.25-0.6 s).
    """
    from .ladder import far_operator
    from .locator import _inverse_iteration

    def box(fn, degree):
        return far_operator(eq, pot, fn, gamma, L * (eq.l + 1) ** 2, r_min, r_far, hi, degree=degree)

    def rounding(ops, E: float) -> float:
        """The energy resolution of a count at E for the state there, on the coarser of the boxes."""
        return max(NOISE_ULPS * 2.0**-53 * o.energy_noise(_inverse_iteration(o, E)) for o in ops)

    lo = eq.energy_window(pot)[0]
    pole = _dive_pole(sample, r_min, lo)
    tiny = _DIVE_ULPS * math.ulp(pole)
    op = op if op is not None else box(sample, 18)
    j = op.count_negative(bottom) - 1       # the index of the top state below the bottom
    if j < 0:       # (a Coulomb tail's rung counted one, this box none: as before, taken as dived)
        return _Dive(bottom, 0.0, tiny, True)
    boxes = (op, box(sample, 36))
    x18, x36 = (_place_above_pole(o, j, pole, pole + tiny, bottom) for o in boxes)
    if x18 or x36:
        error = abs(x18 - x36) + rounding(boxes, pole + max(x36, tiny)) + tiny
        if x36 > error:         # a level: the bottom goes below it, by more than the error
            return _Dive(pole + max(tiny, 0.5 * (x36 - error)), x36, error, False)
        return _Dive(bottom, x36, error, False)

    def lifted(eta: float, degree: int, place: bool = False) -> float:
        """With V and S weakened by eta: where the state lies above the pole (``place``), or whether it
        does (1.0 or 0.0)."""
        weak = _weakened(sample, 1 - eta)
        pole_w = _dive_pole(weak, r_min, lo)
        op_w = box(weak, degree)
        if place:
            return _place_above_pole(op_w, j, pole_w, pole_w + tiny, pole_w + _DIVE_REACH * abs(lo))
        return float(op_w.count_negative(pole_w + tiny) <= j)

    if not lifted(_DIVE_WEAKER, 18):
        return _Dive(bottom, 0.0, tiny, True)
    if not lifted(4 * _DIVE_WEAKER, 36):    # the boxes disagree by as much as that weakening lifts it
        return _Dive(bottom, 0.0, lifted(4 * _DIVE_WEAKER, 18, place=True) + tiny, False)
    brackets = []
    for n, top in ((18, _DIVE_WEAKER), (36, 4 * _DIVE_WEAKER)):
        e0, e1 = _DIVE_WEAKER * 1e-7, top
        for _ in range(_DIVE_LIFT_STEPS):
            mid = math.sqrt(e0 * e1)
            e0, e1 = (e0, mid) if lifted(mid, n) else (mid, e1)
        brackets.append((e0, e1))
    eta18, eta36 = (math.sqrt(e0 * e1) for e0, e1 in brackets)
    # lifted by twice eta*, the state lies about as far above the pole as it lay below it
    depth = lifted(2 * eta36, 36, place=True)
    per_eta = depth / eta36
    error = (per_eta * (abs(eta18 - eta36) + brackets[1][1] - brackets[1][0]) + rounding(boxes, pole + tiny)
             + tiny)
    return _Dive(bottom, -depth, error, depth > error)


def _far_bound(eq, pot, sample, gamma: float, L: float, r_min: float, levels: int, hi: float,
               lo: float = -math.inf, floor_start: float | None = None) -> _FarCount:
    """Bound levels of a short-range potential in the window (lo, hi), counted on a far box: N(hi) -
    N(lo), N(hi) with the outer end open to the potential-free exterior at the threshold
    (:meth:`~boundkit.equations.variational.SymmetricOperator.open_end_term`), so that the count is
    the number of nodes of the zero-energy solution on (0, inf): a box closed by f(R) = 0 does not
    count a level bound by less than about 1/(2 m R^2) (the Hulthen 2s at Z = 1, delta = 0.4999, 5e-9
    hartree below the threshold, was left out with status 'ok' and 'all 1 bound level(s)'). A state
    of the open box within _THRESHOLD_BAND p / R^2 of the threshold is looked at closely
    (:func:`_near_threshold`); when its side of the threshold cannot be told it is not counted, and
    the result says so (``near``).

    States below lo are not bound levels: a Dirac level that dived into the lower continuum is still
    counted by N(hi), and was reported as a bound level that could not be found (status 'partial' for a
    square well whose only level had dived).
    ``floor_start``: a Klein-Gordon channel's particle floor is looked for on this box, from there
    (:func:`boundkit.locator.particle_floor`), and becomes lo. When none is found (a particle level
    merged with its antiparticle partner) after a narrow search (the pair is near its merge), the box at
    twice the degree is counted where its lowest eigenvalue of K(E) peaks, and taken when it finds fewer
    merged pairs: near the merge depth the box's own error can merge a pair that is still real.

    The box reaches 1e4 natural lengths, and ten times the potential's range (:func:`_potential_range`):
    a long-ranged well (a Yukawa potential screened at 3700 natural lengths) has levels that turn
    round beyond 1e4 L, and a box that cuts them off squeezes them up to the threshold and out of the
    count (tests/test_level_count.py); with the open end such a box counts them, and the range keeps
    the potential beyond R negligible for the exterior solution."""
    from .ladder import far_operator
    from .locator import count_below, particle_floor, peak_floor, peak_undecided

    reach = _potential_range(eq, pot)
    r_far = max(1e4 * L, 40 * _well_radius(pot, L), 10 * _initial_radius(eq, pot, levels, L), 10 * reach)
    op = far_operator(eq, pot, sample, gamma, L * (eq.l + 1) ** 2, r_min, r_far, hi)
    narrow = False
    if floor_start is not None:
        floor = particle_floor(op, lo, min(hi, 0.0), floor_start)
        narrow = floor.narrow
        if floor.count and narrow and lo < floor.peak < min(hi, 0.0):     # an interior peak: a pair near its merge
            fine = far_operator(eq, pot, sample, gamma, L * (eq.l + 1) ** 2, r_min, r_far, hi, degree=36)
            again = peak_floor(fine, lo, min(hi, 0.0), floor.peak)
            if again.count < floor.count:
                floor, op = again, fine
        if floor.count and narrow and peak_undecided(op, floor.peak):
            # the pair nearest its merge is merged on this box by rounding only: it may still be bound, and
            # is left to the ladder, which finds it or says why not (near_merge)
            floor = floor._replace(count=floor.count - 1)
        lo, below = floor.energy, floor.count
    else:
        below = count_below(op, lo) if math.isfinite(lo) else 0
    dive = None
    if below and eq.name == "dirac":
        # a state below the window: dived, or still bound between the bottom and the pole
        dive = _dive_band(eq, pot, sample, gamma, L, r_min, r_far, hi, lo, op)
        if dive.bottom != lo:
            lo = dive.bottom
            below = count_below(op, lo)
    c = op.open_end_term(hi)
    R = float(op.sample.r[-1])
    band = _THRESHOLD_BAND * float(eq.p(hi, op.end_sample())[0]) / R**2
    n_hi = op.count_negative(hi - band, c)
    near = None
    if op.count_negative(hi + band, c) != n_hi:
        near = _near_threshold(eq, pot, sample, gamma, L, r_min, r_far, hi, op, c, band)
        n_hi += near.bound
    # more states below the window's bottom than below its top: the count is not monotone there, so none
    # of them is taken as dived. Above a pole-free bottom it is monotone; a Dirac bottom inside the pole (a
    # sampled peak of V - S below the true one, now refined: _pole_free_bottom) counted 1 below and 0 above
    # for the exp-cosine well Z = 1, D = 0.01 bohr, and the negative bound count crashed the locator (a fuzz
    # example). The guard stays for a peak narrower than the sampling.
    below = min(below, n_hi)
    return _FarCount(n_hi - below, float(r_far), lo, below, narrow, near, dive)


def _near_threshold(eq, pot, sample, gamma: float, L: float, r_min: float, r_far: float, hi: float, op, c: float,
                    band: float) -> _NearThreshold:
    """The level of the open far box within ``band`` of the threshold hi, on the box at degree 18 and
    at 36 (:func:`_open_level`); mu is its energy less hi. Its error is the change between the two,
    plus a count's rounding there, plus the potential beyond R, which the open end leaves out:
    int_R^inf |V + S| dr / R (for an s state, whose zero-energy solution is about constant out there,
    the shift of its energy; less for l > 0). Done only when two counts found such a level (at most
    one, near a threshold): up to a few hundred counts and two dense LU factorizations."""
    from .ladder import far_operator

    # the box counted on is at degree 36 already where a Klein-Gordon pair near its merge moved it there
    # (_far_bound): the other box is then at 18, so that the change between the two is one
    finer = op.grid.degree >= 36
    other = far_operator(eq, pot, sample, gamma, L * (eq.l + 1) ** 2, r_min, r_far, hi, degree=18 if finer else 36)
    mu_op, noise_op = _open_level(op, c, hi, band)
    mu_other, noise_other = _open_level(other, other.open_end_term(hi), hi, band)
    mu = mu_op if finer else mu_other
    R = float(op.sample.r[-1])          # both boxes share the layout, so their last node
    r = np.geomspace(R, 1e6 * R, 2001)
    s = _sample(pot, r, scan=True)
    tail = float(np.trapezoid(np.abs(s.V + s.S), r)) / R
    error = abs(mu_op - mu_other) + max(noise_op, noise_other) + tail
    return _NearThreshold(mu, error)


def _open_level(op, c: float, hi: float, band: float) -> tuple[float, float]:
    """(E - hi, the rounding of a count there) for the level E of the open box (``c``: its end term)
    in (hi - band, hi + band), by counting: halving the distance to hi until the count no longer sees
    the level (at most 200 times), then ten bisections (E to 0.1 %). The rounding is NOISE_ULPS u
    sum |K_ii| y_i^2 / y^T M y (u = 2^-53; :meth:`SymmetricOperator.energy_noise`) for the level's
    vector y, from two steps of inverse iteration with K(E) (dense, rows and columns scaled to a unit
    diagonal). A dense generalized eigen-solve does not do: its eigenvalues near 0 were off by 1e-7
    hartree (M spans many decades over the box), where counts agree to 1e-12."""
    import scipy.linalg as sla

    n0 = op.count_negative(hi - band, c)
    side = -1.0 if op.count_negative(hi, c) > n0 else 1.0      # below the threshold, or above it
    b = band                # distance from hi beyond which the level does not lie, on its side
    for _ in range(200):
        mid = 0.5 * b
        if mid == 0.0 or (op.count_negative(hi + side * mid, c) > n0) != (side > 0):
            break
        b = mid
    else:
        mid = 0.0
    a = mid
    for _ in range(10):
        mid = 0.5 * (a + b)
        if (op.count_negative(hi + side * mid, c) > n0) == (side > 0):
            b = mid
        else:
            a = mid
    E = hi + side * 0.5 * (a + b)
    K, M = op.open_pencil(E, c)
    d = 1.0 / np.sqrt(np.maximum(np.abs(np.diag(K)), 1e-300))
    lu = sla.lu_factor(K * d[:, None] * d, check_finite=False)
    y = np.ones(op.n)
    for _ in range(2):
        y = sla.lu_solve(lu, d * (M @ (d * y)), check_finite=False)
        y /= np.max(np.abs(y))
    y = d * y
    noise = NOISE_ULPS * 2.0**-53 * float(np.sum(np.abs(np.diag(K)) * y * y) / (y @ M @ y))
    return E - hi, noise


def laguerre_scale(eq, pot, gamma: float) -> tuple[float, float, float]:
    """(natural length L, scale length a, inner end r_lo) of the Lagrange-Laguerre path: a is the
    Bohr radius 1/(mu Z_inf) of a Coulomb tail, else 2 L (the Bohr radius for a Coulomb-like core).

    The inner end, where the states and the checks on the potential start, is the inner cut times the
    smaller of a and 2 L: a faint tail (a table's tail charge read off its last point, 1e-16) has a
    Bohr radius of 1e16 bohr, and 1e-9 of it lay beyond a well of a few bohr, which the checks then
    never saw: the mesh returned the tail's hydrogen levels instead of the well's (found by a tester).
    From below the well, the shape check sees it narrower than the node spacing and hands the channel
    to the elements. A Coulomb potential has 2 L >= a (L is the first sampled radius past 1/(2 mu Z)).
    """
    L = _natural_length(eq, pot)
    a = 1.0 / (eq.mass * pot.tail_charge) if pot.tail_charge > 0 else 2 * L
    return L, a, _inner_cut(gamma, False) * min(a, 2 * L)


def _solve_laguerre(eq, pot, levels, tol):
    """The one-matrix Lagrange-Laguerre path (:mod:`boundkit.laguerre_solver`), or the element
    solver when the channel is not one it handles or one of its checks fails.

    A short-range potential has its bound levels counted on the far box first (as the elements
    do); the mesh then looks for at most that many (all of them for ``levels`` None), with the
    scale 2 L (L the natural length: the Bohr radius for a Coulomb-like core)."""
    from .laguerre_solver import applies, solve_laguerre

    gamma = eq.gamma(pot)
    if not applies(eq, pot, levels, gamma, tol):
        return _solve_elements(eq, pot, levels, tol)
    sample = sampler(pot)
    bound = counted = None
    want = levels
    L, a, r_lo = laguerre_scale(eq, pot, gamma)
    if pot.tail_charge == 0 and not _infinite_tail(eq, pot):
        hi = eq.energy_window(pot)[1]
        n_req = 1 if levels is None else levels          # as the elements size their box
        counted = _far_bound(eq, pot, sample, gamma, L, _inner_end(eq, pot, gamma, L, n_req, hi), n_req, hi)
        bound = counted.bound
        want = bound if levels is None else min(levels, bound)
    out = solve_laguerre(eq, pot, want, tol, sample, gamma, r_lo, a) if want else None
    if out is None:
        return _solve_elements(eq, pot, levels, tol, known_bound=counted)
    found, notes, per_level, worst, extra = out
    extra["bound_count"] = bound
    if counted is not None:
        extra["count_box"] = counted.box
        extra["near_threshold"] = counted.near
    extra["L"] = L
    tally = _Tally(notes=notes, potential_floor_hit=extra.pop("potential_floor_hit", False))
    return found, tally, per_level, worst, extra


_TABLE_WHY = "the table's interpolation error lies above it (see diagnostics notes): " + TABLE_FIX
_POTENTIAL_FLOOR_WHY = ("a level far shallower than its well carries the rounding of its potential energy, "
                        "which lies above it (see diagnostics notes)")

_RESIDUAL_WHY = ("a level this close to the threshold carries the rounding of its equation's terms where it lives, "
                 "which lies above it (see diagnostics notes)")
_MERGE_WHY = ("a Klein-Gordon level this close to merging with an antiparticle level (their energies turn complex) "
              "moves with the rounding of its equation by more than that (see diagnostics notes); the two cannot "
              "be told apart that finely in double precision")


def _undecided_why(near: _NearThreshold, extra: dict, eu: str, lu: str) -> str:
    """Why a state at the threshold is neither reported nor ruled out (:func:`_near_threshold`)."""
    R = extra["count_box"]
    return (f"one more state lies at the threshold: on the counting box (R = {bohr_to(R, lu):.3g} {lu}, open to "
            f"the exterior) its energy is {hartree_to(near.mu, eu):+.2g} {eu} from it, within that value's error "
            f"{hartree_to(near.error, eu):.2g} {eu}, and double precision cannot decide whether it is a level bound "
            "by about that much or less, or no level (a zero-energy or virtual state)")


def _dive_why(dive: _Dive, eu: str) -> str:
    """Why a Dirac state at the bottom of the window is neither reported nor ruled out (:func:`_dive_band`)."""
    return (f"one more state lies within {hartree_to(abs(dive.x) + dive.error, eu):.2g} {eu} of diving into the lower "
            "continuum (-2 m c^2 + max(V - S), the bottom of the bound-state window): closer than the counts there "
            "resolve (their rounding and the change between boxes of two degrees), so double precision cannot "
            "decide whether it is a level bound by that little or a state that has dived; move the potential's "
            "parameters further from the dive (the critical-value study with kind 'dive' locates it)")


def _estimate_why(tally: _Tally) -> str | None:
    """Why an estimate lies above tol when a floor of its own put it there (a table's interpolation, the
    rounding of a shallow level's potential energy, a Klein-Gordon level near its merge), else None."""
    # a merge's floor is set only when it lies above the estimate with the potential's floor in it: it is
    # then the larger of the two, and the reason (a Klein-Gordon 1s 1e-13 from its merge had both above tol)
    return (_TABLE_WHY if tally.table_hit else _MERGE_WHY if tally.merge_hit
            else _RESIDUAL_WHY if tally.residual_hit
            else _POTENTIAL_FLOOR_WHY if tally.potential_floor_hit else None)


def _untold_pairs(found: list[Level]) -> tuple[list[Level], list[tuple[Level, Level]]]:
    """Neighbouring levels (in node order) that lie within the sum of their estimates of each other,
    which double precision does not tell apart (a tunnelling doublet of two wells tuned to one level,
    4.7e-16 hartree apart at -11.7 hartree). Returns the levels, a pair out of node order (the one with
    more nodes lower) moved to their mean with each estimate grown by half their difference (the
    order of the pair is not resolved, and an impossible one is not reported), and the pairs."""
    levels = sorted(found, key=lambda lv: lv.nodes)
    pairs = []
    for i in range(len(levels) - 1):
        a, b = levels[i], levels[i + 1]
        if b.nodes != a.nodes + 1 or b.energy - a.energy > a.error_estimate + b.error_estimate:
            continue
        if b.energy < a.energy:
            mean, half = 0.5 * (a.energy + b.energy), 0.5 * (a.energy - b.energy)
            a = replace(a, energy=mean, error_estimate=a.error_estimate + half)
            b = replace(b, energy=mean, error_estimate=b.error_estimate + half)
            levels[i], levels[i + 1] = a, b
        pairs.append((a, b))
    return levels, pairs


def _untold_why(pairs, eu: str) -> str:
    """Why neighbouring levels are not told apart (:func:`_untold_pairs`), and what to do."""
    said = ", ".join(f"{a.label} and {b.label} lie {hartree_to(abs(b.energy - a.energy), eu):.2g} {eu} apart, "
                     f"within their estimates ({hartree_to(a.error_estimate, eu):.2g}, "
                     f"{hartree_to(b.error_estimate, eu):.2g} {eu})" for a, b in pairs)
    return (f"{said}: closer than double precision resolves here (as the tunnelling pair of two wells tuned to "
            "one level can be), so the two are not told apart and each energy is good only to its estimate; move "
            "the potential's parameters away from the coincidence to separate them")


def _result(eq, pot, disc, levels, tol, settings, potential_name, found, tally, per_level, worst, extra,
            t0) -> SolveResult:
    found, untold = _untold_pairs(found)
    found.sort(key=lambda lv: lv.energy)
    bound = extra.get("bound_count")
    wanted = levels if levels is not None else bound
    near = extra.get("near_threshold")
    dive = extra.get("dive")
    dive_undecided = dive is not None and not dive.decided
    eu, lu = system_units((settings or {}).get("units", "atomic"))
    if bound is not None and (levels is None or levels > bound) and len(found) == bound:
        status = "ok" if worst <= tol else "tolerance-not-met"
        undecided = (near is not None and not near.decided) or dive_undecided
        if undecided:       # a state at the threshold (or at the bottom) neither reported nor ruled out
            status = "partial"
            what = f"found the {bound} level(s) that are surely bound" if bound else "no level is surely bound"
        else:
            what = (extra.get("no_level_why", "this potential binds no level in this channel (the count of levels "
                                               "below the threshold is 0)")
                    if bound == 0 else f"all {bound} bound level(s) of this channel")
        if levels is not None and levels > bound:
            what += f" ({levels} requested)"
        if near is not None and not near.decided:
            what += "; " + _undecided_why(near, extra, eu, lu)
        if dive_undecided:
            what += "; " + _dive_why(dive, eu)
        if worst <= tol:
            message = what + (f"; estimated relative error <= {max(worst, 0):.2g} (tol {tol:g})"
                              if bound or not undecided else "")
        else:
            message = f"{what}; worst estimated relative error {worst:.2g} exceeds tol = {tol:g}"
            why = _estimate_why(tally)
            if why:
                message += f": {why}"
    elif wanted is not None and len(found) < wanted:
        status = "partial"
        message = (f"found {len(found)} of {wanted} requested bound levels: "
                   + (extra.get("why") or "the count certificate failed (see diagnostics)"))
    elif worst > tol:
        status = "tolerance-not-met"
        why = (_estimate_why(tally)
               or (f"the rounding floor (about {disc.floor:g} relative) lies above it" if tally.floor_hit
                   else f"the largest resolution ({disc.ladder()[-1]}) was reached"))
        message = (f"worst estimated relative error {worst:.2g} exceeds tol = {tol:g}: {why}; "
                   "the values shown are the best estimates")
    else:
        status = "ok"
        message = f"{len(found)} level(s), estimated relative error <= {max(worst, 0):.2g} (tol {tol:g})"
    if dive_undecided and status != "partial":
        # the levels found are surely bound, but one more may lie below them
        status = "partial"
        message = f"{message}; {_dive_why(dive, eu)}"
    if untold:
        status = "partial"
        message = f"{message}; {_untold_why(untold, eu)}"
    diagnostics = {
        "gamma": extra.get("gamma"), "natural_length_bohr": extra.get("L"),
        "breakpoints_bohr": [float(b) for b in pot.breakpoints], "bound_count": bound,
        "threshold_hartree": extra.get("threshold", 0.0), "count_box_bohr": extra.get("count_box"),
        "threshold_state_hartree": None if near is None else [near.mu, near.error],
        "dive_state_hartree": None if dive is None else [dive.x, dive.error],
        "near_merge_undecided": bool(extra.get("near_merge_undecided")),
        "certified_by_count": extra.get("certified"),
        "dropped_node_mismatch": tally.dropped_node_mismatch, "dropped_unstable": tally.dropped_unstable,
        "reseeded_guesses": tally.reseeded, "bisected_levels": tally.bisected,
        "levels": per_level, "notes": tally.notes,
        "mesh": extra.get("mesh"), "seconds": time.perf_counter() - t0,
    }
    return SolveResult(levels=tuple(found), success=status == "ok", status=status, message=message,
                       equation=eq.name, potential=potential_name or repr(pot), settings=dict(settings or {}),
                       constants=constants_record(), units={"energy": "hartree", "length": "bohr"},
                       diagnostics=diagnostics)


def _solve_collocation(eq, pot, disc, levels, tol):
    """Finite differences (and a user's collocation family): refine the located levels per level."""
    ch = prepare_channel(eq, pot, levels)
    tally = ch.tally
    # the locator's floors were judged against its own tol 1e-12: they are this result's reasons only where a
    # located level's estimate (with its floors) decides a level's estimate here and exceeds tol (a review: a
    # Hulthen 2s at tol 5e-11 was said to be held by a potential-energy rounding of 9.5e-12)
    seed_floors = [name for name in _SEED_FLOORS if getattr(tally, name)]
    for name in seed_floors:
        setattr(tally, name, False)
    per_level = []
    found: list[Level] = []
    worst = 0.0
    start = disc.first
    for k, E in enumerate(ch.seeds):
        nodes = ch.nodes(k)          # k, or more when states dived below the window
        n = principal_n(nodes, eq.l)
        label = eq.label(n)
        mesh, r_core = ch.mesh(E)
        history, sizes, last, prev = [], [], None, None
        est = math.inf
        # finite differences across a kink of the potential converge at second order only
        kinked = any(mesh.r_min < b < mesh.r_max for b in pot.breakpoints) and not disc.family == "spectral"
        order = 2 if kinked else None
        if kinked and any(mesh.r_min < b < mesh.r_max for b in _jumps(pot)):
            # across a jump, with a node on it (FiniteDifference.grid), the error is C h^2 with a fixed C
            # and the Richardson estimate d / 3 equalled it to 3 % (square wells, the jump's own term
            # made visible by widening its clustered feature): no bound. The change d itself is, 3 times
            # over, as it is for the observables (which take the change between sizes undivided).
            order = 1
        for size in _ladder_from(disc, start):
            got = ch.level(nodes, disc, size, E, mesh, r_core, anchor=ch.seeds[k], reach=ch.reach(k))
            if got is None:
                continue
            op, ref = got
            E = ref.energy
            history.append(E)
            sizes.append(size)
            prev, last = last, (op, ref)
            est = _estimate(history, disc, order)
            if _converged(history, disc, tol, order):
                break
            if len(history) >= 3 and max(abs(history[-1] - history[-2]),
                                         abs(history[-2] - history[-3])) <= disc.floor * abs(E):
                tally.notes.append(f"{label}: at the rounding floor; tol {tol:g} is out of reach")
                tally.floor_hit = True
                break
        record = {"label": label, "sizes": sizes, "energies": history, "r_min": ch.r_min, "r_max": mesh.r_max}
        per_level.append(record)
        if last is None or len(history) < 2:
            tally.dropped_unstable += 1
            continue
        if abs(history[-1] - history[-2]) > _UNSTABLE * abs(E):
            tally.dropped_unstable += 1
            record["dropped"] = "unstable under a change of resolution"
            continue
        op, ref = last
        start = sizes[max(0, len(sizes) - 3)]   # the next level needs at least about as many nodes
        if _cut_is_clipped(ch.gamma, eq.spin == 0.5) and pot.z_vector != pot.z_scalar:
            # near-critical point charge: successive sizes understated the error by up to 3.6x
            # (Z = 137, measured against the exact levels), so the estimate gets a factor 10
            est *= 10
            record["estimate_inflated"] = 10
        # a systematic error that no change of resolution shows (the inner cut near a critical
        # charge: 75x the Richardson estimate at Z = 137) shows against the located level: when the
        # distance to it, less the located level's own estimate, exceeds the estimate, the estimate is
        # that distance plus the located level's estimate, which bounds the error (the distance alone
        # is a lower bound: 81 of 428 exact-catalogue levels were 1.02-1.035 times it)
        seed_err = ch.extra.get("seed_errors", [])
        if k < len(seed_err):
            gap = abs(E - ch.seeds[k])
            if gap - seed_err[k] > est:
                est = gap + seed_err[k]
                record["estimate_from_located_level"] = True
            # the located level's estimate holds the rounding floors of the level itself (of its potential
            # energy, of the equation's terms near the threshold), which no change between sizes shows: a
            # Woods-Saxon 2p 2.5e-6 hartree below threshold was 270 times its Richardson estimate, at the
            # 3.2e-10 its located level's floor named (a tester). The finite differences round more than the
            # elements: with the floor itself two levels were still 1.08 and 1.22 times it; twice it
            if _FD_SEED_FACTOR * seed_err[k] > max(est, tol * abs(E)):
                for name in seed_floors:
                    setattr(tally, name, True)
            est = max(est, _FD_SEED_FACTOR * seed_err[k])
        state = _state(eq, op, E, ref.vector)
        est = max(est, _cut_error(eq, pot, state, E))
        worst = max(worst, est / abs(E))
        found.append(Level(n=n, l=eq.l, j=eq.j, kappa=eq.kappa, label=label, energy=E,
                           error_estimate=est, nodes=nodes, state=state,
                           resolution=sizes[-1], iterations=ref.iterations,
                           previous_state=None if prev is None else _state(eq, prev[0], history[-2], prev[1].vector)))
    extra = dict(ch.extra)
    extra["mesh"] = "finite-difference"        # not the seeding channel's spectral elements
    if len(found) < len(ch.seeds):
        extra["why"] = (f"{len(ch.seeds) - len(found)} located level(s) could not be refined with "
                        f"{disc.name}: unstable under a change of resolution or with the wrong node count")
    return found, tally, per_level, worst, extra


def check_levels(levels, max_levels: int = MAX_LEVELS) -> int | None:
    """A number of levels (1 to ``max_levels``, :data:`boundkit._checks.MAX_LEVELS`) or 'all' (returned as
    None); ValueError otherwise (:class:`~boundkit._checks.LimitError` above ``max_levels``)."""
    if isinstance(levels, str) and levels.strip().lower() == "all":
        return None
    levels = check_int("levels", levels, minimum=1)
    return check_count("levels", levels, check_int("max_levels", max_levels, minimum=1), "max_levels= (API)", "",
                       keyword="max_levels")


_CHARGE_WARNED: set = set()


def _check_charge(part, pot) -> None:
    """Warn (once per particle and sign, per process) when the potential's Coulomb part attracts a particle
    of positive charge or acts on a neutral one: V is used as written, the particle's potential energy, and is
    not multiplied by the particle's charge (a tester's proton in a nucleus was pulled in by its Coulomb term)."""
    z = pot.tail_charge or pot.z_vector
    charge = part.charge
    if charge is None or z == 0 or charge < 0 or (charge > 0 and z < 0):
        return
    key = (part.name, charge > 0)
    if key in _CHARGE_WARNED:
        return
    _CHARGE_WARNED.add(key)
    fix = ("write the repulsion a positive particle feels as Z < 0" if charge > 0 else
           "a neutral particle feels no Coulomb force: leave the Coulomb term out")
    log.warning("particle %s has charge %g e, and the potential's Coulomb part (charge %g) %s it: V is used as "
                "written, the particle's potential energy, not multiplied by its charge; %s",
                part.name, charge, z, "attracts" if charge > 0 else "acts on", fix)


def setup(equation: str = "schrodinger", potential=None, params: dict | None = None, *,
          l: int | None = None, kappa: int | None = None, particle: str | None = None,
          mass_mev: float | None = None, nucleus_mass_mev: float | None = None, scalar=None,
          units: str = "atomic", j: float | None = None):
    """Check and build (equation, potential, settings) from user-level arguments.

    Shared by :func:`solve` and the studies; raises ValueError on bad input. ``potential`` None with
    no ``scalar``: the hydrogen atom, a Coulomb term with Z = 1 unless ``params`` gives Z (the
    default of the command line's potential options too).
    """
    if potential is None:
        potential = "coulomb" if scalar is None else ()
        if scalar is None:
            params = {"Z": 1.0, **(params or {})}
    part = get_particle(particle, mass_mev)
    mass = part.mass_au
    if nucleus_mass_mev is not None:
        M = mass_mev_to_au(check_mass("nucleus_mass_mev", nucleus_mass_mev))
        mass = mass * M / (mass + M)
    eq = make_equation(equation, l=l, kappa=kappa, mass=mass, j=j)
    if scalar is not None and eq.name == "schrodinger":
        log.info("Schrodinger equation: scalar terms are added to the vector potential")
    pot = make_potential(potential, params, scalar=scalar, units=units)
    _check_charge(part, pot)
    _check_scalar_far_constant(eq, pot, units)
    settings = {
        "equation": eq.name, "l": eq.l, "kappa": eq.kappa, "j": eq.j, "particle": part.name,
        "particle_mass_MeV": part.mass_mev, "nucleus_mass_MeV": nucleus_mass_mev,
        "mass_atomic_units": mass, "params": dict(params or {}), "terms": repr(pot), "units": units,
    }
    return eq, pot, settings


def _cross_check_summary(rows: list[dict], other: str, res2) -> str:
    """What the other family confirmed, for the message of a cross-checked solve: levels it did not find (with
    its status) and levels further apart than twice their joint estimates are named."""
    missing = [r["label"] for r in rows if r["other_energy"] is None]
    apart = [r["label"] for r in rows if r["other_energy"] is not None
             and not r["difference"] <= 2 * (r["error_estimate"] + r["other_error_estimate"])]
    text = f"cross-check ({other}): {len(rows) - len(missing)} of {len(rows)} level(s) found by it"
    if missing:
        text += f"; not {', '.join(missing)} (its status {res2.status}: {res2.message})"
    if apart:
        text += f"; {', '.join(apart)} differ by more than twice their joint estimates"
    if missing or apart:
        log.info("%s", text)
    elif rows:
        text += ", within twice their joint estimates"
    return text


def solve(equation: str = "schrodinger", potential=None, params: dict | None = None, *,
          l: int | None = None, kappa: int | None = None, levels: int | str = 1, tol: float = 1e-10,
          method: str | Discretization = "auto", order: int | None = None, particle: str | None = None,
          mass_mev: float | None = None, nucleus_mass_mev: float | None = None,
          scalar=None, units: str = "atomic", cross_check: bool = False,
          j: float | None = None, labels: str = "atomic", max_levels: int = MAX_LEVELS) -> SolveResult:
    """Bound levels of one channel of a central potential.

    Parameters
    ----------
    equation : {'schrodinger', 'klein-gordon', 'dirac'}
    potential : str, callable or sequence, optional
        Built-in term name(s) (they add) or a callable V(r) (r in bohr,
        V in hartree). Left out with no ``scalar`` either: the hydrogen atom,
        a ``'coulomb'`` term with Z = 1 unless ``params`` gives Z (as
        ``boundkit solve`` without potential options). A ``'coulomb'`` named
        explicitly needs its Z.
    params : dict
        Term parameters, e.g. ``{'Z': 1}``.
    l, kappa : int
        Channel: orbital l (Schrodinger, Klein-Gordon) or Dirac kappa (non-zero).
    levels : int or 'all'
        Number of lowest levels wanted in the channel (>= 1), or ``'all'``
        for every bound level of a potential that has finitely many. Asking
        for more levels than the channel holds returns all of them (status
        ok, said in the message); ``diagnostics['bound_count']`` is the
        number of levels below the threshold when it is finite.
    tol : float
        Target relative error of each binding energy (default 1e-10).
    method : str or Discretization
        ``'auto'`` (spectral), ``'spectral'`` or ``'finite-difference'``.
    order : int, optional
        Accuracy order of the finite-difference family (default 8).
    particle, mass_mev : str, float
        Orbiting particle by name (electron, muon, pion, kaon, proton,
        antiproton, neutron, deuteron; ``boundkit particles`` lists them) or
        its mass in MeV/c^2. Default electron.
    nucleus_mass_mev : float, optional
        Nucleus mass; the reduced mass mu = m M / (m + M) is then used in
        every equation (the leading recoil correction).
    scalar : str, callable or sequence, optional
        Lorentz-scalar terms (Dirac and Klein-Gordon).
    units : {'atomic', 'nuclear'}
        Unit system of the parameters and callables: hartree and bohr
        (default) or MeV and fm. Results are always in hartree and bohr
        inside; convert with ``Level.energy_in``.
    j : float, optional
        Total angular momentum l +- 1/2 of a spin-1/2 particle. Schrodinger:
        needed when the potential has a spin-orbit term. Dirac: with ``l`` it
        names the channel (j = l + 1/2 is kappa = -(l + 1), j = l - 1/2 is
        kappa = l); beside ``kappa`` it must be kappa's own, |kappa| - 1/2.
        Klein-Gordon (spin 0) takes none.
    cross_check : bool
        Also solve with the other discretization family and put the
        per-level agreement in ``diagnostics['cross_check']``.
    labels : {'atomic', 'nuclear', 'quarkonium'}
        How levels are named (see :meth:`SolveResult.with_labels`): atomic
        n = nodes + l + 1 (2p1/2), nuclear radial nodes from 0 (0p1/2),
        quarkonium nodes + 1 (1S, 1P).
    max_levels : int
        Limit on ``levels`` (default 1000, :data:`boundkit._checks.MAX_LEVELS`): time and memory
        grow faster than the count (1000 hydrogen levels: 40 s, 1.2 GB); raise it deliberately.
        ``'all'`` is not limited by it.

    Returns
    -------
    SolveResult
        Frozen; ``levels`` hold binding energies in hartree.

    Notes
    -----
    The binding energy E = E_total - m c^2 is the unknown throughout. See
    :mod:`boundkit.equations` for the operators and :mod:`boundkit.solver`
    for the procedure and the error estimate.

    Examples
    --------
    >>> import boundkit
    >>> res = boundkit.solve("schrodinger", "coulomb", {"Z": 1}, l=0, levels=2)
    >>> [round(lv.energy, 12) for lv in res.levels]
    [-0.5, -0.125]
    """
    levels = check_levels(levels, max_levels)
    tol = check_positive("tol", tol)
    if tol >= 1:
        raise ValueError(f"tol: a relative error below 1 (e.g. 1e-10), got {tol:g}")
    from .states import check_convention
    labels = check_convention(labels)
    disc = get_method(method, order)
    eq, pot, settings = setup(equation, potential, params, l=l, kappa=kappa, particle=particle,
                              mass_mev=mass_mev, nucleus_mass_mev=nucleus_mass_mev, scalar=scalar,
                              units=units, j=j)
    settings.update({"levels": "all" if levels is None else levels, "tol": tol, "method": disc.describe()})
    res = solve_channel(eq, pot, disc, levels, tol, settings, potential_name=pot.name)
    if cross_check:
        other = get_method("finite-difference" if disc.family == "spectral" else "spectral")
        res2 = solve_channel(eq, pot, other, levels, tol)
        by_label = {lv.label: lv for lv in res2.levels}
        rows = []
        for lv in res.levels:
            o = by_label.get(lv.label)
            rows.append({"label": lv.label, "method": disc.name, "energy": lv.energy,
                         "error_estimate": lv.error_estimate, "other_method": other.name,
                         "other_energy": None if o is None else o.energy,
                         "other_error_estimate": None if o is None else o.error_estimate,
                         "difference": None if o is None else abs(lv.energy - o.energy)})
        res = replace(res, diagnostics={**res.diagnostics, "cross_check": rows})
    res = res if labels == "atomic" else res.with_labels(labels)
    if cross_check:         # after the labels: the summary names levels as the caller asked for them
        res = replace(res, message=f"{res.message}; {_cross_check_summary(res.diagnostics['cross_check'], other.name, res2)}")
    return res
