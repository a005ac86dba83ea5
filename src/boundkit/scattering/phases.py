"""Public API of the continuum layer: phase shifts, scattering length, Levinson, states.

See :mod:`boundkit.scattering` for the equations and the method.
"""
from __future__ import annotations

import logging
import math
import time
from typing import Sequence

import numpy as np

from .._checks import MAX_PHASE_NODES, MAX_REPULSIVE_ETA, LimitError, check_int, check_positive
from .._rounding import rounding_floor
from ..units import C_AU, ENERGY_UNITS, bohr_to, call_energy_unit, constants_record, hartree_to, system_units, to_atomic
from ..units import energy_unit as canonical_unit
from .radial import (_RTOL_FLOOR, _SMALL, Channel, _start, integrate, loosened, match, matching_radius, prepare,
                     tail_bound)
from .reference import sommerfeld, wave_number
from .results import ContinuumState, LevinsonCheck, PhaseShifts, ScatteringLength
from .._threads import inside
from ..potentials.base import TABLE_ERROR_NOTE, TABLE_FIX, real_values_for, table_terms
from .tables import p_far, table_change, table_grid

log = logging.getLogger(__name__)

__all__ = ["phase_shifts", "scattering_length", "levinson", "continuum_state"]

_LOOSE = 30.0        # the error estimate repeats the integration with rtol x this factor
_SECOND_RADIUS = 1.25   # ... and reads delta again at this multiple of the matching radius
_START_CHECK = 10.0     # the loose run also starts this many times further out (the start's error)
_K_EFFECTIVE = 0.01  # k x (length scale) of the lowest phase used for a relativistic effective range
_BORN_TOP = 1.0      # Levinson grid ends where the first-order bound on |delta| falls below this (rad)
_UNDERFLOW = 1e-290  # a |delta| below this is known only to lie below it (the double range ends near 1e-308)


def _real_only():
    """The context of the continuum's entry points: a complex potential is refused in their words."""
    words = ("phase shifts take real potentials only; use {} for complex ones (resonances, absorption), or give a "
             "real potential")
    return real_values_for(words.format("boundkit.resonances"), words.format("boundkit resonances"))


def _channel(equation, potential, params, l, kappa, particle, mass_mev, nucleus_mass_mev, scalar, units, j,
             hard_core) -> tuple[Channel, dict]:
    from ..solver import setup

    eq, pot, settings = setup(equation, potential, params, l=l, kappa=kappa, particle=particle,
                              mass_mev=mass_mev, nucleus_mass_mev=nucleus_mass_mev, scalar=scalar, units=units,
                              j=j)
    if hard_core is not None:
        hard_core = to_atomic(check_positive("hard_core", hard_core), "bohr", units)
    settings["hard_core_bohr"] = hard_core
    settings["potential_name"] = pot.name
    return prepare(eq, pot, hard_core), settings


def _tail_formula(ch: Channel, units: str) -> str:
    """The tail -Z_t/r + B/r^2 of a channel as a formula in the call's unit system, its units named:
    ``-1.44/r + 10/r^2 (V in MeV, r in fm)``; a repulsive charge reads ``+ 1/r``, not ``- -1/r``."""
    energy, length = system_units(units)
    z = hartree_to(ch.tail_charge, energy) * bohr_to(1.0, length)          # energy x length
    b = hartree_to(ch.tail_b, energy) * bohr_to(1.0, length) ** 2          # energy x length^2
    parts = [f"{c:g}{power}" for c, power in ((-z, "/r"), (b, "/r^2")) if c]
    return " + ".join(parts).replace("+ -", "- ") + f" (V in {energy}, r in {length})"


def _rtol(tol: float) -> float:
    return min(1e-6, tol * 1e-3)


def _energies(energies, unit: str) -> np.ndarray:
    unit = canonical_unit(unit)
    try:
        E = np.atleast_1d(np.asarray(energies, dtype=float)).ravel()
    except (TypeError, ValueError):
        raise ValueError(f"energies: expected numbers, got {energies!r}") from None
    if not E.size:
        raise ValueError("energies: give at least one energy above threshold (E > 0)")
    if not np.all(np.isfinite(E)) or np.any(E <= 0):
        raise ValueError("energies: every energy must be finite and above threshold (E > 0, kinetic energy "
                         f"= total minus rest energy); got {float(E[~(np.isfinite(E) & (E > 0))][0]):g}")
    return np.sort(E / ENERGY_UNITS[unit])


def _check_nodes(ch: Channel, E: np.ndarray, tol: float, max_nodes, unit: str, length: str,
                 reach: float = 0.0) -> None:
    """Refuse energies (or a hard core) for which the outward integration would follow more than
    ``max_nodes`` nodes of the solution, about k (R - r_start) / pi up to the matching radius R (or
    ``reach``, the largest radius asked for, bohr): DOP853 follows about 100 a second, and 1e150 of them
    (E = 1e300 hartree) or 1e9 (a hard core at 1e10 bohr) never finish. The message quotes energies
    in ``unit`` and radii in ``length``, the units of the call."""
    max_nodes = check_int("max_nodes", max_nodes, minimum=1)
    for e in E[::-1]:
        with np.errstate(over="ignore", invalid="ignore"):     # k of 1e300 hartree (Dirac) is inf
            k = float(wave_number(ch.eq.name, float(e), ch.eq.mass))
            R = max(matching_radius(ch, float(e), tol)[0], reach)
            r0 = _start(ch, k)
            nodes = k * (R - r0) / math.pi
        if not nodes > max_nodes:
            continue
        shown = f"{e * ENERGY_UNITS[unit]:.4g} {unit}"
        count = f"about {nodes:.2g}" if math.isfinite(nodes) else "more than 1e308"
        core = bool(ch.hard_core) and R <= 1.5 * ch.hard_core * (1 + 1e-12)   # the core set the radius
        name, fix = ("hard_core", "use a smaller hard core") if core else ("energies", "use lower energies")
        raise LimitError(f"{name}: at E = {shown} the solution has {count} nodes between r = "
                         f"{bohr_to(r0, length):.3g} and {bohr_to(R, length):.3g} {length}, more than the limit of "
                         f"{max_nodes} the integration follows; {fix}, or raise the limit with ", "max_nodes")


def _check_barrier(ch: Channel, E: np.ndarray, max_eta, unit: str) -> None:
    """Refuse energies where a repulsive Coulomb tail's Sommerfeld parameter exceeds ``max_eta``
    (:data:`boundkit._checks.MAX_REPULSIVE_ETA`): deep under the barrier the irregular Coulomb function
    takes minutes (eta = 2033: more than 150 s for one energy), for a phase of order e^(-2 pi eta).
    Schrodinger and Klein-Gordon only: the Dirac reference is built from 1F1 directly (0.6 s at eta =
    1100, measured)."""
    max_eta = check_positive("max_eta", max_eta)
    if ch.tail_charge >= 0 or ch.eq.name == "dirac":
        return                                   # no tail, an attractive one, or the fast Dirac functions
    e = float(E[0])                              # the lowest energy has the largest eta
    with np.errstate(over="ignore", divide="ignore"):
        eta = float(sommerfeld(ch.eq.name, e, ch.eq.mass, ch.tail_charge))
    if eta > max_eta:
        raise LimitError(f"energies: at E = {e * ENERGY_UNITS[unit]:.4g} {unit} the repulsive Coulomb tail gives "
                         f"eta = {eta:.3g}, more than the limit of {max_eta:g}: the phase shift is of order "
                         "e^(-2 pi eta) and the Coulomb functions take minutes; use higher energies, or raise the "
                         "limit with ", "max_eta")


def _phases_at(ch: Channel, E: np.ndarray, tol: float, estimate: bool):
    """Matches at R1 for a batch of energies sharing the integration steps.

    Returns (matches, error estimates, R1 values, range reached flags): :func:`_matched` without the
    tables' part of the estimates.
    """
    return _matched(ch, E, tol, estimate)[:4]


def _table_phase_error(ch: Channel, E: np.ndarray, evaluate, raws, matches, R1) -> np.ndarray:
    """Per energy, the first-order change of delta from the tables' uncertainty (rad; see
    :mod:`.tables`): the unit-amplitude solution on the tables' grid, from the main run's dense output.
    The matching radius is never below a table's last point (a declared breakpoint)."""
    k = np.atleast_1d(np.asarray(wave_number(ch.eq.name, E, ch.eq.mass), dtype=float))
    grid = table_grid(ch, _start(ch, float(k.max())), min(R1), float(E.max()))
    u, w = evaluate(grid.r)
    out = np.zeros(len(E))
    for i, e in enumerate(E):
        scale = matches[i].amplitude * R1[i] ** ch.gamma * math.exp(raws[i][0].log_scale)
        p = np.broadcast_to(ch.eq.p(float(e), grid.sample), grid.r.shape)
        out[i] = table_change(ch, float(e), grid, (u[i] / scale) ** 2, (w[i] / (p * scale)) ** 2) / (
            p_far(ch, float(e)) * k[i])
    return out


def _matched(ch: Channel, E: np.ndarray, tol: float, estimate: bool):
    """(matches, error estimates, R1 values, range reached flags, the tables' part of the estimates or
    None without tables or estimate). The batch tolerance is divided by sqrt(number of components),
    because the step control measures the root mean square error of all of them."""
    rr = [matching_radius(ch, float(e), tol, relative=True) for e in E]
    R1 = [R for R, _ in rr]
    rtol = _rtol(tol) / math.sqrt(2 * len(E))
    radii = [[R, _SECOND_RADIUS * R] if estimate else [R] for R in R1]
    tabled = estimate and bool(table_terms(ch.pot))
    refs = integrate(ch.reference, E, radii, rtol)[0] if ch.reference else [[None] * len(r) for r in radii]
    # the Wronskian with the free wave (2 n more components, Riccati-Bessel functions at every stage: 6-8 times
    # the cost) is read only for a small delta (radial.match: |sin delta| below about _SMALL); a batch carries
    # it only when a first pass without it finds such a delta somewhere (a review)
    for wronskian in (False, True):
        raws, evaluate = integrate(ch, E, radii, rtol, dense=tabled, wronskian=wronskian)
        matches = [match(ch, float(e), raw[0], rf[0]) for e, raw, rf in zip(E, raws, refs)]
        if wronskian or not ch.free_wronskian or all(abs(math.sin(m.delta)) >= 2 * _SMALL for m in matches):
            break
    err = np.zeros(len(E))
    if estimate:
        one = [[R] for R in R1]
        loose, _ = integrate(ch, E, one, loosened(rtol, _LOOSE), start_scale=_START_CHECK, wronskian=wronskian)
        lrefs = integrate(ch.reference, E, one, loosened(rtol, _LOOSE))[0] if ch.reference else [[None]] * len(E)
        for i, e in enumerate(E):
            d, small = matches[i].delta, matches[i].scale != 1.0
            # two sources, added: the potential cut at R (the change up to 1.25 R, both read in one run, plus
            # the first-order bound on the rest beyond 1.25 R) and the integration (the looser run, which also
            # starts further out). The larger of the two alone missed the other: Hulthen phases were 1.0-1.4
            # times their estimate. Never below the integration's own tolerance: two runs that share most of
            # their steps agreed to 2e-16 where a pure point charge's phase was 2e-15 off its exact 0. A small
            # delta read from the Wronskian (Match.scale: the size of its integral, ~ |delta|) has both the bound
            # beyond 1.25 R and that floor relative to itself: the bound of partial wave l, and the tolerance
            # times its scale (an absolute 1e-11 rad said nothing of a delta_20 of 1e-207)
            cut = abs(d - match(ch, float(e), raws[i][1], refs[i][1]).delta) + tail_bound(
                ch, float(e), _SECOND_RADIUS * R1[i], relative=small)
            err[i] = max(cut + abs(d - match(ch, float(e), loose[i][0], lrefs[i][0]).delta),
                         max(rtol, _RTOL_FLOOR) * matches[i].scale)
    table = _table_phase_error(ch, E, evaluate, raws, matches, R1) if tabled else None
    if table is not None:
        err = err + table
    return matches, err, R1, [ok for _, ok in rr], table


def _unwrap_from_top(delta: np.ndarray) -> tuple[np.ndarray, float]:
    """delta mod pi followed down from the highest energy, where it is put on the branch
    nearest 0, with steps below pi/2; and the largest step."""
    out = np.array(delta, dtype=float)
    if not out.size:
        return out, 0.0
    out[-1] -= math.pi * round(out[-1] / math.pi)
    for i in range(len(out) - 2, -1, -1):
        out[i] = out[i + 1] + math.remainder(delta[i] - out[i + 1], math.pi)
    steps = np.abs(np.diff(out))
    return out, float(steps.max()) if steps.size else 0.0


@inside(_real_only)
def phase_shifts(energies: Sequence[float] | float, equation: str = "schrodinger", potential=None,
                 params: dict | None = None, *, l: int | None = None, kappa: int | None = None,
                 particle: str | None = None, mass_mev: float | None = None,
                 nucleus_mass_mev: float | None = None, scalar=None, units: str = "atomic",
                 j: float | None = None, hard_core: float | None = None, energy_unit: str | None = None,
                 tol: float = 1e-8, estimate_error: bool = True,
                 max_nodes: int = MAX_PHASE_NODES, max_eta: float = MAX_REPULSIVE_ETA) -> PhaseShifts:
    """Phase shifts of one channel at kinetic energies above threshold.

    Parameters
    ----------
    energies : float or sequence
        Kinetic energies E > 0 (total minus rest energy) in ``energy_unit``;
        returned in ascending order.
    equation, potential, params, l, kappa, particle, mass_mev, nucleus_mass_mev, scalar, units, j
        As in :func:`boundkit.solve`.
    hard_core : float, optional
        Radius of an impenetrable core (u = 0 there), bohr (fm with
        ``units='nuclear'``).
    energy_unit : str, optional
        Unit of ``energies`` and of the energies quoted in messages (hartree,
        eV, keV, MeV, ...); default hartree, MeV with ``units='nuclear'`` (as
        ``boundkit phases --units nuclear``). The result keeps hartree
        (``PhaseShifts.energies_in``; ``to_dict`` converts to the system's units).
    tol : float
        Target absolute accuracy of each phase shift, radians.
    estimate_error : bool
        Repeat each integration with a second matching radius and a looser
        tolerance to estimate the error (default True).
    max_nodes : int
        Limit on the nodes of the solution the integration follows up to the
        matching radius, about k (R - r_start) / pi (default 10000,
        :data:`boundkit._checks.MAX_PHASE_NODES`; about 100 a second).
    max_eta : float
        Limit on the Sommerfeld parameter of a repulsive Coulomb tail, > 0
        (default 300, :data:`boundkit._checks.MAX_REPULSIVE_ETA`): deeper under
        the barrier the Coulomb functions cost minutes, for a phase of order
        e^(-2 pi eta). Schrodinger and Klein-Gordon only (the Dirac functions
        are fast there).

    Returns
    -------
    PhaseShifts
        Frozen; see its attributes for branch and reference conventions.

    Raises
    ------
    ValueError
        Bad energies, channel or potential (confining, scalar Coulomb tail,
        point charge too strong for the equation).
    boundkit._checks.LimitError
        A ValueError: energies (or a hard core) beyond ``max_nodes`` or
        ``max_eta``; its message names the keyword that raises the limit.

    Notes
    -----
    Far out u ~ C sin(k r - eta ln(2 k r) - l pi/2 + theta + delta) with
    eta = 0, theta = 0 for a short-range potential (then delta is the
    absolute phase shift) and eta, theta the Sommerfeld parameter and
    Coulomb phase of the tail V ~ -Z_t/r otherwise (then delta is relative
    to the Coulomb phase; theta in (-pi, pi], for Dirac on the branch that
    tends to sigma_l = arg Gamma(l + 1 + i eta) as c -> infinity, see
    ``PhaseShifts.coulomb_phase``). See :mod:`boundkit.scattering`.

    Examples
    --------
    >>> from boundkit.scattering import phase_shifts
    >>> res = phase_shifts([0.5], "schrodinger", lambda r: 0 * r, hard_core=1.0)
    >>> round(float(res.delta[0]), 10)    # hard sphere: delta_0 = -k a, k = 1
    -1.0
    """
    tol = check_positive("tol", tol)
    energy_unit = call_energy_unit(energy_unit, units)   # MeV with units='nuclear', as the command line
    E = _energies(energies, energy_unit)
    t0 = time.perf_counter()
    ch, settings = _channel(equation, potential, params, l, kappa, particle, mass_mev, nucleus_mass_mev, scalar,
                            units, j, hard_core)
    unit = canonical_unit(energy_unit)
    _check_nodes(ch, E, tol, max_nodes, unit, system_units(units)[1])
    _check_barrier(ch, E, max_eta, unit)
    return _tabulate(ch, E, tol, estimate_error, settings, t0, unit)


def _tabulate(ch: Channel, E: np.ndarray, tol: float, estimate: bool, settings: dict, t0: float,
              unit: str = "hartree") -> PhaseShifts:
    matches, err, Rs, reached, table = _matched(ch, E, tol, estimate)
    return _assemble(ch, E, matches, err, Rs, reached, tol, estimate, settings, t0, unit, table)




def _assemble(ch: Channel, E, matches, err, Rs, reached, tol, estimate, settings, t0,
              unit: str = "hartree", table: np.ndarray | None = None) -> PhaseShifts:
    """The result; energies in its messages in ``unit`` (the caller's); ``table`` the tables' part of
    the estimates (rad), named in the message."""
    eq = ch.eq
    delta = [m.delta for m in matches]
    theta = [m.ref.theta for m in matches]
    eta = [m.ref.eta for m in matches]
    residual = [m.residual for m in matches]
    unreached = [float(e) for e, ok in zip(E, reached) if not ok]
    delta = np.array(delta)
    if estimate:
        # the two repeated integrations can agree to the last bit (a deep well near threshold); no
        # estimate is below the rounding of delta itself, taken as 4 ulp (as for critical values)
        err = np.maximum(err, rounding_floor(delta))
        # below about 1e-290 delta runs into the end of the double range (l = 50 at 1e-8 hartree: ~1e-530,
        # returned as 0): it is then known only to lie below that
        err = np.where(np.abs(delta) < _UNDERFLOW, np.maximum(err, _UNDERFLOW), err)
    # a value whose estimate is as large as itself has no relative accuracy (a small delta_l divided by
    # k^(2l+1) means nothing then): named in the message and the diagnostics, whatever the status
    vague = [float(e) for e, d, er in zip(E, delta, err) if estimate and er >= abs(d)]
    # the branch is absolute (continuous in E); the largest step along the grid is kept as a diagnostic
    max_step = float(np.max(np.abs(np.diff(delta)))) if delta.size > 1 else 0.0
    worst_residual = float(np.nanmax(residual)) if len(residual) else 0.0
    if unreached:
        status, msg = "range-not-reached", (
            f"the short-range part of the potential is still not negligible at the largest radius tried "
            f"(first energy affected: {unreached[0] * ENERGY_UNITS[unit]:.4g} {unit}); the tail was cut there")
    elif estimate and np.any(err > tol):
        i = int(np.argmax(err))
        status, msg = "tolerance-not-met", (f"error estimate {err[i]:.2g} rad at "
                                            f"E = {E[i] * ENERGY_UNITS[unit]:.4g} {unit} "
                                            f"exceeds tol = {tol:g}")
        if table is not None and table[i] > tol:
            msg += f": the table's interpolation error, {table[i]:.2g} rad, lies above it; {TABLE_FIX}"
    elif worst_residual > 0.05:
        status, msg = "branch-uncertain", (f"the node count and the matched phase disagree by "
                                           f"{worst_residual:.2g} pi somewhere; the integer part of delta may be off")
    else:
        status, msg = "ok", f"{len(E)} phase shift(s)" + (f", largest error estimate {err.max():.2g} rad"
                                                          if estimate else " (no error estimate asked)")
    if table is not None:
        msg += f"; {TABLE_ERROR_NOTE}: at most {float(np.max(table)):.2g} rad"
    if vague:
        shown = ", ".join(f"{e * ENERGY_UNITS[unit]:.4g}" for e in vague[:3]) + (", ..." if len(vague) > 3 else "")
        msg += (f"; delta has no relative accuracy at {len(vague)} energ{'y' if len(vague) == 1 else 'ies'} "
                f"(E = {shown} {unit}): its error estimate is as large as |delta| itself (below "
                f"{_UNDERFLOW:g} rad it leaves the double range)")
    log.info("%s, %s: %s (%s)", eq.name, eq.channel(), status, msg)
    if ch.tail_b:
        reference = (f"{'Coulomb' if ch.tail_charge else 'free'} waves, with an inverse-square tail "
                     f"V ~ {_tail_formula(ch, settings.get('units', 'atomic'))} matched exactly (delta includes its phase "
                     "sigma_L - sigma_l + (l - L) pi/2, L (L + 1) = l (l + 1) + 2 m B)")
        branch = "absolute: continuous in E from the node counts of the solution and of the tail's own one"
    elif ch.tail_charge:
        reference = f"Coulomb tail V ~ {_tail_formula(ch, settings.get('units', 'atomic'))} (delta relative to the Coulomb phase)"
        branch = "absolute: continuous in E from the node counts of the solution and of the Coulomb one"
    else:
        reference = "free waves (short-range potential)"
        branch = ("absolute: continuous in E from the node count (Levinson convention)"
                  + ("; hard core" if ch.hard_core else ""))
    settings = {**settings, "tol": tol, "rtol": _rtol(tol), "estimate_error": estimate,
                "method": "DOP853 outward integration in ln r from the Frobenius start, matched to "
                          + ("Coulomb" if ch.long_tail else "Riccati-Bessel") + " functions"}
    return PhaseShifts(
        energies=E, wave_numbers=np.asarray(wave_number(eq.name, E, eq.mass), dtype=float), delta=delta,
        error_estimate=err, coulomb_phase=np.array(theta), eta=np.array(eta),
        matching_radius=np.array(Rs), equation=eq.name, channel=eq.channel(),
        potential=settings.get("potential_name", repr(ch.pot)), reference=reference, branch=branch,
        success=status == "ok", status=status, message=msg, settings=settings, constants=constants_record(),
        diagnostics={"branch_residual_max": worst_residual, "max_step_along_grid": max_step,
                     "seconds": time.perf_counter() - t0, "no_relative_accuracy_hartree": vague,
                     **({} if table is None else {"table_error_rad": [float(x) for x in table]})})


# --- scattering length -----------------------------------------------------------------------
def _short_range_only(ch, units: str, message, coulomb_note: str = "") -> None:
    """Refuse a channel with a long tail: ``message(tail)`` names it, ``tail`` being 'an inverse-square
    tail, V ~ ...' (its formula in the call's units, :func:`_tail_formula`) or 'a Coulomb tail (charge ...)'
    (the inverse square first); ``coulomb_note`` follows the message of a Coulomb tail alone."""
    if ch.tail_b:
        raise ValueError(message(f"an inverse-square tail, V ~ {_tail_formula(ch, units)}"))
    if ch.tail_charge:
        raise ValueError(message(f"a Coulomb tail (charge {ch.tail_charge:g})") + coulomb_note)


@inside(_real_only)
def scattering_length(equation: str = "schrodinger", potential="coulomb", params: dict | None = None, *,
                      kappa: int | None = None, particle: str | None = None, mass_mev: float | None = None,
                      nucleus_mass_mev: float | None = None, scalar=None, units: str = "atomic",
                      hard_core: float | None = None, tol: float = 1e-10) -> ScatteringLength:
    """s-wave scattering length a and effective range r_e of a short-range potential.

    Parameters
    ----------
    equation, potential, params, kappa, particle, mass_mev, nucleus_mass_mev, scalar, units
        As in :func:`boundkit.solve`; the channel is l = 0 (Dirac kappa = -1).
    hard_core : float, optional
        Impenetrable core radius (bohr; fm with ``units='nuclear'``).
    tol : float
        Target accuracy of a, relative to max(|a|, the potential's natural length).

    Returns
    -------
    ScatteringLength
        Lengths in bohr (convert with ``boundkit.units.FM_PER_BOHR``).

    Raises
    ------
    ValueError
        Coulomb tail, l != 0, or bad input.

    Notes
    -----
    Convention k cot delta_0 = -1/a + r_e k^2/2 + O(k^4) (a = +R for a hard
    sphere). At E = 0 the solution beyond the range is u = C (r - a), so
    a = R - u(R)/u'(R). With u normalised to u -> 1 - r/a,
    r_e = 2 integral_0^inf [(1 - r/a)^2 - u^2] dr (Bethe's effective-range
    integral) for Schrodinger. For Klein-Gordon and Dirac, whose p and q
    depend on E, r_e comes instead from the low-energy phase shifts:
    g(k) = 2 (k cot delta_0 + 1/a) / k^2 = r_e + O(k^2) at k, 2k and 4k with
    k = 0.01 / max(|a|, L, |r_e|), extrapolated in k^2 (error estimate included).
    """
    tol = check_positive("tol", tol)
    ch, settings = _channel(equation, potential, params, None, kappa, particle, mass_mev, nucleus_mass_mev, scalar,
                            units, None, hard_core)
    _short_range_only(ch, units, lambda tail: f"potential: it has {tail}; the scattering length here is for "
                      "short-range potentials -- use phase_shifts", " for Coulomb-modified phases")
    if ch.kappa != -1:
        raise ValueError("kappa: the scattering length is an s-wave quantity; use kappa = -1 (s1/2)")
    schr = ch.eq.name == "schrodinger"
    R1, reached = matching_radius(ch, 0.0, tol * ch.length)
    runs, tabled = {}, bool(table_terms(ch.pot))
    for key, rtol, radii in (("main", _rtol(tol), [R1, _SECOND_RADIUS * R1]),
                             ("loose", loosened(_rtol(tol), _LOOSE), [R1])):
        raws, evaluate = integrate(ch, 0.0, radii, rtol, integral=schr, dense=tabled and key == "main",
                                   start_scale=_START_CHECK if key == "loose" else 1.0)
        runs[key] = [_length_pair(ch, raw) for raw in raws]
        if evaluate is not None:
            table = _table_length_error(ch, evaluate, raws[0])
    (a, re), (a2, re2) = runs["main"]
    a3, re3 = runs["loose"][0]
    # a = R1 - u/u' loses the digits below the ulp of R1 (a weak well: a = -1e-6 bohr at R1 = 0.04), and
    # the repeated integrations can agree to the last bit: no estimate below 4 ulp of that subtraction
    a_err = max(abs(a - a2), abs(a - a3), float(rounding_floor(max(R1, abs(a)))))
    if tabled:
        a_err += table
    re_err = max(abs(re - re2), abs(re - re3)) if schr and re is not None else None
    if not schr:
        re, re_err = _effective_range_from_phases(ch, a)
    elif tabled and re is not None:
        re_table = _table_range_error(ch, a, re)
        re_err += re_table
    length = system_units(units)[1]
    if not reached:
        status, msg = "range-not-reached", "the potential is not negligible at the largest radius tried"
    elif a_err > tol * max(ch.length, abs(a)):
        status, msg = "tolerance-not-met", f"error estimate {bohr_to(a_err, length):.2g} {length} exceeds the tolerance"
        if tabled and table > tol * max(ch.length, abs(a)):
            msg += f": the table's interpolation error, {bohr_to(table, length):.2g} {length}, lies above it; {TABLE_FIX}"
    else:
        status, msg = "ok", f"a from the zero-energy solution matched at R = {bohr_to(R1, length):.4g} {length}"
    if tabled:
        msg += (f"; a's estimate includes the table's interpolation error (to first order, as the phase shifts'): "
                f"{bohr_to(table, length):.2g} {length}")
        if schr and re is not None:
            msg += f"; r_e's estimate includes it: {bohr_to(re_table, length):.2g} {length}"
        elif not schr:
            msg += "; r_e's estimate does not (it comes from low-energy phases)"
    how = ("Bethe's integral for r_e" if schr else
           "r_e from k cot delta_0 at k, 2k, 4k (k = 0.01 / max(|a|, L, |r_e|)), extrapolated in k^2")
    return ScatteringLength(a=a, a_error=a_err, effective_range=re, effective_range_error=re_err,
                            equation=ch.eq.name, potential=settings.get("potential_name", ""),
                            method=f"zero-energy solution, u = C (r - a) beyond the range; {how}",
                            success=status == "ok", status=status, message=msg,
                            settings={**settings, "tol": tol, "matching_radius_bohr": R1},
                            constants=constants_record())


def _table_length_error(ch: Channel, evaluate, raw) -> float:
    """The first-order change of the scattering length from the tables' uncertainty (bohr; see
    :mod:`.tables`): the zero-energy solution normalised to u -> r - a (u' = 1 beyond the range), from the
    main run's dense output at the matching radius ``raw.R`` (never below a table's last point)."""
    grid = table_grid(ch, _start(ch, 0.0), raw.R, 0.0)
    u, w = evaluate(grid.r)
    slope = raw.R**ch.gamma * raw.du * math.exp(raw.log_scale)        # u'(R) on the scale of evaluate
    p = np.broadcast_to(ch.eq.p(0.0, grid.sample), grid.r.shape)
    return table_change(ch, 0.0, grid, (u / slope) ** 2, (w / (p * slope)) ** 2) / p_far(ch, 0.0)


def _table_range_error(ch: Channel, a: float, r_e: float) -> float:
    """The first-order change of a Schrodinger effective range from the tables' uncertainty (bohr).

    Notes
    -----
    With phi_k = u_k / sin(delta) (u_k of unit amplitude, so phi_k -> cos kr + cot(delta) sin kr, and
    phi_0 -> 1 - r/a), the phase formula of :mod:`.tables` gives d(k cot delta) = (1/p_inf) integral
    dq phi_k^2 dr, and at k = 0 d(-1/a) likewise with phi_0. So g(k) = 2 (k cot delta + 1/a) / k^2 =
    r_e + O(k^2) changes by (2 / (k^2 p_inf)) integral dq (phi_k^2 - phi_0^2) dr, and r_e by that
    combined at k and 2k as (4 g(k) - g(2k)) / 3 (k = 0.01 / max(|a|, L, |r_e|), the O(k^2) term
    removed); one batch of three energies (0, k, 2k) integrated for it, only when a table is there.
    """
    k = _K_EFFECTIVE / max(abs(a), ch.length, abs(r_e)) * np.array([1.0, 2.0])
    E = np.concatenate(([0.0], k * k / (2 * ch.eq.mass)))
    R = [matching_radius(ch, float(e), 1e-12)[0] for e in E]
    raws, evaluate = integrate(ch, E, [[x] for x in R], 1e-12, dense=True)
    grid = table_grid(ch, _start(ch, float(k[-1])), min(R), 0.0)
    u = evaluate(grid.r)[0]
    slope = R[0] ** ch.gamma * raws[0][0].du * math.exp(raws[0][0].log_scale)
    phi0 = (u[0] / slope) ** 2 / (a * a)                          # (1 - r/a)^2 far out
    kernel = np.zeros_like(phi0)
    for i, weight in ((1, 4.0 / 3.0), (2, -1.0 / 3.0)):
        m = match(ch, float(E[i]), raws[i][0])
        phi = u[i] / (m.amplitude * R[i] ** ch.gamma * math.exp(raws[i][0].log_scale) * math.sin(m.delta))
        kernel += weight * 2.0 * (phi * phi - phi0) / k[i - 1] ** 2
    return table_change(ch, 0.0, grid, kernel, np.zeros_like(kernel)) / p_far(ch, 0.0)


def _effective_range_from_phases(ch: Channel, a: float) -> tuple[float | None, float | None]:
    """r_e from g(k) = 2 (k cot delta_0 + 1/a) / k^2 = r_e + O(k^2) at k, 2k, 4k (Richardson).

    Used for Klein-Gordon and Dirac, where Bethe's integral does not apply as written. The
    three values give the extrapolation without the k^2 and k^4 terms; the error estimate is
    its difference from the one without the k^2 term only.
    """
    if a == 0.0:
        return None, None
    scale = max(abs(a), ch.length)
    r_e, err = _extrapolated_range(ch, a, _K_EFFECTIVE / scale)
    if abs(r_e) > 1.5 * scale:       # the expansion runs in k r_e: start again on that scale
        r_e, err = _extrapolated_range(ch, a, _K_EFFECTIVE / abs(r_e))
    return r_e, err


def _extrapolated_range(ch: Channel, a: float, k0: float) -> tuple[float, float]:
    eq = ch.eq
    k = k0 * np.array([1.0, 2.0, 4.0])
    mc = eq.mass * C_AU
    if eq.name == "schrodinger":
        E = k * k / (2 * eq.mass)
    else:    # k^2 c^2 = E (E + 2mc^2), solved without cancellation
        E = k * k / (eq.mass * (1 + np.sqrt(1 + (k / mc) ** 2)))
    dtol = 1e-12
    delta = np.array([m.delta for m in _phases_at(ch, E, dtol, False)[0]])
    g = 2 * (k / np.tan(delta) + 1 / a) / k**2
    r2 = (4 * g[0] - g[1]) / 3                          # removes the k^2 term
    r3 = (64 * g[0] - 20 * g[1] + g[2]) / 45            # removes the k^2 and k^4 terms
    noise = 2 * dtol / (k[0] * math.sin(delta[0]) ** 2) * (64 + 20 + 1) / 45   # from a phase error dtol
    return float(r3), float(abs(r3 - r2) + noise)


def _length_pair(ch: Channel, raw) -> tuple[float, float | None]:
    """(a, r_e) from the zero-energy solution at one radius."""
    R = raw.R
    a = R - raw.u / raw.du
    if raw.integral is None or a == 0.0:
        return a, None
    du_true = R**ch.gamma * raw.du * math.exp(raw.log_scale)   # u'(R) on the scale of the integral of u^2
    re = 2 * (R - R * R / a + R**3 / (3 * a * a) - raw.integral / (a * a * du_true**2))
    return a, re


# --- Levinson ----------------------------------------------------------------------------------
@inside(_real_only)
def levinson(equation: str = "schrodinger", potential="yukawa", params: dict | None = None, *,
             l: int | None = None, particle: str | None = None, mass_mev: float | None = None,
             nucleus_mass_mev: float | None = None, units: str = "atomic", n_bound: int | None = None,
             count_bound: bool = False, points: int = 24, tol: float = 1e-6) -> LevinsonCheck:
    """Check Levinson's theorem, delta_l(0) - delta_l(inf) = n pi, on one channel.

    Parameters
    ----------
    equation : str
        ``'schrodinger'`` only (see Notes).
    potential, params, l, particle, mass_mev, nucleus_mass_mev, units
        As in :func:`boundkit.solve`; the potential must be short-range.
    n_bound : int, optional
        Number of bound levels of the channel to compare with (e.g. exact).
    count_bound : bool
        Count the bound levels with :func:`boundkit.solve` instead. Its count leaves out a
        state within rounding of the threshold whose side it cannot decide (status
        ``partial``, ``diagnostics['threshold_state_hartree']``); when the phase counts more
        than it then, the status is ``count-short`` and the phase's count is the one trusted.
    points : int
        Energies on the logarithmic grid (refined where delta moves fast).
    tol : float
        Accuracy of each phase shift, radians.

    Returns
    -------
    LevinsonCheck

    Notes
    -----
    The phase shift is taken on its absolute branch (node count, see
    :mod:`boundkit.scattering.radial`) on a grid from k R ~ 1e-3 up to an
    energy where the first-order bound 2 m integral |V| min(k r^2, 1/k) dr
    falls below 1 rad, so n = delta(E_min)/pi. Independently, delta mod pi
    is followed continuously down from the highest energy, anchored at the
    branch nearest 0 there (delta -> 0 as E -> infinity); both counts and
    the bound-level count must agree. An s wave with a state at threshold
    gives delta(0) = (n + 1/2) pi (status ``threshold-state``). In the Klein-
    Gordon and Dirac equations delta does not tend to 0 at high energy (it
    tends to -integral V dr / c for a vector potential), so the theorem
    takes another form; they are refused here.
    """
    if str(equation).lower() not in ("schrodinger", "schroedinger"):
        raise ValueError("equation: Levinson's theorem in the form delta(0) - delta(inf) = n pi is checked for "
                         "the Schrodinger equation only; relativistic phases do not vanish at high energy")
    points = check_int("points", points, minimum=4)
    tol = check_positive("tol", tol)
    if n_bound is not None:
        n_bound = check_int("n_bound", n_bound, minimum=0)
    t0 = time.perf_counter()
    ch, settings = _channel(equation, potential, params, l, None, particle, mass_mev, nucleus_mass_mev, None,
                            units, None, None)
    _short_range_only(ch, units, lambda tail: "potential: Levinson's theorem needs a short-range potential; this one "
                      f"has {tail}", " and infinitely many bound levels")
    eq = ch.eq
    R0, _ = matching_radius(ch, 0.0, tol)
    k_lo = 1e-3 / max(R0, ch.length)
    k_hi = _born_small(ch, _BORN_TOP)
    k = np.geomspace(k_lo, max(k_hi, 10 * k_lo), points)
    E = k * k / (2 * eq.mass)
    rows = dict(zip(E, zip(*_phases_at(ch, E, tol, False))))
    for _ in range(6):     # refine where delta moves by more than 0.5 rad between neighbours
        Es = np.array(sorted(rows))
        d = np.array([rows[e][0].delta for e in Es])
        jumps = np.nonzero(np.abs(np.diff(d)) > 0.5)[0]
        if not jumps.size:
            break
        extra = np.sqrt(Es[jumps] * Es[jumps + 1])
        rows.update(zip(extra, zip(*_phases_at(ch, extra, tol, False))))
    Es = np.array(sorted(rows))
    res = _assemble(ch, Es, *(list(col) for col in zip(*(rows[e] for e in Es))), tol, False, settings, t0)
    unwrapped, max_step = _unwrap_from_top(res.delta)
    d_lo, d_hi = float(res.delta[0]), float(res.delta[-1])
    count = round(d_lo / math.pi)
    residual = abs(d_lo / math.pi - count)
    count_unw = round(unwrapped[0] / math.pi)
    near = None
    if count_bound:
        from ..solver import solve

        found = solve("schrodinger", ch.pot, l=eq.l, levels=count + 1, particle=particle, mass_mev=mass_mev,
                      nucleus_mass_mev=nucleus_mass_mev)
        n_bound = len(found.levels)
        near = found.diagnostics.get("threshold_state_hartree")
    agrees = None if n_bound is None else (count == count_unw == n_bound)
    if residual > 0.25:
        status, msg = "threshold-state", (f"delta(E_min)/pi = {d_lo / math.pi:.4f} is far from an integer: a "
                                          "level at threshold (zero-energy resonance) or E_min too high")
    elif count != count_unw or max_step > 1.0:
        status, msg = "grid-too-coarse", (f"the absolute phase gives {count} but following delta along the grid "
                                          f"gives {count_unw} (largest step {max_step:.2g} rad)")
    elif agrees is False and near is not None and count > n_bound:
        # solve left out a state at the threshold whose side double precision could not decide, while the
        # phase at k R ~ 1e-3 counts it as bound
        eu, _ = system_units(units)
        status, msg = "count-short", (
            f"delta(0) - delta(inf) = {count} pi, but solve found {n_bound} surely bound level(s) and left out a "
            f"state at the threshold ({hartree_to(near[0], eu):+.2g} {eu} from it, within {hartree_to(near[1], eu):.2g} "
            f"{eu}) whose side it could not decide; the phase's count of {count} is the one trusted (give n_bound "
            "to check against a known count)")
    elif agrees is False:
        status, msg = "disagrees", f"delta(0) - delta(inf) = {count} pi but the channel has {n_bound} bound level(s)"
    else:
        status, msg = "ok", (f"delta(0) - delta(inf) = {count} pi" +
                             ("" if n_bound is None else f", {n_bound} bound level(s)") +
                             f"; delta at the highest energy {d_hi:.3g} rad")
    return LevinsonCheck(count_from_phase=count, count_unwrapped=count_unw, n_bound=n_bound, agrees=agrees,
                         residual=residual, delta_low=d_lo, delta_high=d_hi, max_step=max_step, phases=res,
                         success=status == "ok", status=status, message=msg)


def _born_small(ch: Channel, bound: float) -> float:
    """k (1/bohr) above which 2 m integral |V| min(k r^2, 1/k) dr < ``bound`` (first-order |delta| bound)."""
    r, v = ch.r_grid, ch.v_grid
    dlnr = math.log(r[1] / r[0])
    ks = np.geomspace(0.01 / ch.length, 1e4 / ch.length, 241)
    B = np.array([np.sum(0.5 * (f[1:] + f[:-1])) * dlnr for f in (v * np.minimum(k * r**2, 1 / k) * r for k in ks)])
    peak = int(np.argmax(B))
    # the bound is small at low k too (where it says nothing about bound states): take the high side
    # of its peak, where it falls below ``bound`` (or below half the peak for a weak potential)
    below = np.nonzero(B[peak:] < min(bound, 0.5 * B[peak]))[0]
    return float(ks[peak + below[0]]) if below.size else float(ks[-1])


# --- states ------------------------------------------------------------------------------------
@inside(_real_only)
def continuum_state(energy: float, equation: str = "schrodinger", potential="coulomb",
                    params: dict | None = None, *, l: int | None = None, kappa: int | None = None,
                    particle: str | None = None, mass_mev: float | None = None,
                    nucleus_mass_mev: float | None = None, scalar=None, units: str = "atomic",
                    j: float | None = None, hard_core: float | None = None, r=None,
                    normalisation: str = "unit-amplitude", energy_unit: str | None = None,
                    tol: float = 1e-8, max_nodes: int = MAX_PHASE_NODES,
                    max_eta: float = MAX_REPULSIVE_ETA) -> ContinuumState:
    """The regular solution at one energy above threshold, normalised.

    Parameters
    ----------
    energy : float
        Kinetic energy E > 0 in ``energy_unit``.
    r : array, optional
        Radii to return it at, in the length unit of ``units`` (bohr, or fm
        with ``units='nuclear'``, as ``hard_core``); default 1001 points up to
        1.25 times the matching radius.
    normalisation : {'unit-amplitude', 'energy'}
        Unit amplitude: P ~ sin(k r - eta ln 2kr - l pi/2 + theta + delta).
        Energy: integral P_E P_E' (x charge weight) dr = delta(E - E').
    Other parameters as in :func:`phase_shifts` (``max_nodes`` counts the
    nodes up to the largest of ``r`` too; ``max_eta`` as there).

    Returns
    -------
    ContinuumState
        In atomic units, as its ``units`` say: ``state.r`` in bohr whatever
        unit ``r`` was given in (``state.r_in('fm')`` converts), the energy in
        hartree, k in 1/bohr.

    Notes
    -----
    Energy normalisation multiplies the unit-amplitude solution by
    sqrt(2 / (pi w dE/dk)), w the asymptotic weight of P^2 in the density:
    sqrt(2 m / (pi k)) for Schrodinger and Klein-Gordon, and
    sqrt((E + 2 m c^2) / (pi k c^2)) for Dirac (P^2 + Q^2, Q/P amplitude
    ratio sqrt(E / (E + 2 m c^2))).
    """
    if normalisation not in ("unit-amplitude", "energy"):
        raise ValueError(f"normalisation: unknown value {normalisation!r}; choose unit-amplitude or energy")
    tol = check_positive("tol", tol)
    energy_unit = call_energy_unit(energy_unit, units)   # MeV with units='nuclear', as the command line
    E = float(_energies(energy, energy_unit)[0])
    if r is not None:
        length = system_units(units)[1]
        r = np.atleast_1d(np.asarray(r, dtype=float))
        if r.size == 0 or not np.all(np.isfinite(r)) or np.any(r <= 0):
            raise ValueError(f"r: give positive, finite radii in {length}")
        r = to_atomic(r, "bohr", units)
    ch, _ = _channel(equation, potential, params, l, kappa, particle, mass_mev, nucleus_mass_mev, scalar, units, j,
                     hard_core)
    eq = ch.eq
    _check_nodes(ch, np.array([E]), tol, max_nodes, canonical_unit(energy_unit), system_units(units)[1],
                 0.0 if r is None else float(r.max()))
    _check_barrier(ch, np.array([E]), max_eta, canonical_unit(energy_unit))
    R1, _ = matching_radius(ch, E, tol)
    k = float(wave_number(eq.name, E, eq.mass))
    r0 = _start(ch, k)
    if r is None:
        r = np.linspace(0.0, _SECOND_RADIUS * R1, 1002)[1:]
    raws, evaluate = integrate(ch, E, [R1, max(float(r.max()), R1)], _rtol(tol), dense=True)
    m = match(ch, E, raws[0], integrate(ch.reference, E, [R1], _rtol(tol))[0][0] if ch.reference else None)
    scale = m.amplitude * R1**ch.gamma * math.exp(raws[0].log_scale)
    inside = r >= r0
    u, w = np.zeros_like(r), np.zeros_like(r)
    u[inside], w[inside] = evaluate(r[inside])
    if not ch.hard_core and np.any(~inside):          # below the start: the Frobenius leading term
        u0, w0 = evaluate(np.array([r0]))
        u[~inside] = u0[0] * (r[~inside] / r0) ** ch.gamma
        w[~inside] = w0[0] * (r[~inside] / r0) ** (ch.gamma - 1)
    P, Q = u / scale, (w / C_AU / scale if eq.name == "dirac" else None)
    if normalisation == "energy":
        if eq.name == "dirac":
            f = math.sqrt((E + 2 * eq.mass * C_AU**2) / (math.pi * k * C_AU**2))
        else:
            f = math.sqrt(2 * eq.mass / (math.pi * k))
        P = P * f
        Q = None if Q is None else Q * f
    return ContinuumState(energy=E, wave_number=k, delta=m.delta, r=r, P=P, Q=Q, normalisation=normalisation,
                          equation=eq.name, channel=eq.channel())
