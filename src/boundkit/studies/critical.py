"""Critical parameters: where a level unbinds (E -> 0), dives into the
lower continuum (E -> -2 m c^2), or (Klein-Gordon) merges with an
antiparticle level.

The level is followed by continuation: each new parameter value is seeded
with the energy predicted from the points already found, and refined with
the solver's own per-level machinery (see
:func:`boundkit.studies._common.seeded_level`); when that fails the plain
solver is tried too. A point where neither finds the level counts as one
where the level does not exist -- unless the solver's answer is ``partial``
(its count of levels could not be certified): that is no evidence of
absence, so the point is solved again with the other method family, and the
search stops with a message if that cannot tell either. The critical value
comes from inverse polynomial extrapolation of the parameter against a
threshold variable: the distance E + 2 m c^2 to the lower continuum for a
dive with a Coulomb tail; the square root of the distance (the decay
constant outside) when the level leaves a short-range potential, unbinding
or diving, with the powers of the effective-range expansion of the wave
outside. It is accepted only when successive extrapolations
agree to ``tol`` and a point just past it has no level.

The search runs in a coordinate that respects the parameter's range: a
parameter the potential accepts only with one sign (a screening length, a
range) is stepped geometrically, x = ln|p|, so that no step reaches 0 or
crosses it; others linearly, x = p. A parameter keeps its sign when the
potential refuses -p, or when -p makes it not finite far out where p does
not (a range in an expression, exp(-r/a) with a < 0). A value that the
potential or the solver refuses during the search is a wall the search does
not cross; it narrows from the side where the level is bound. From a start
where the level is absent the search looks on both sides in growing steps
for a value where it is bound; for a dive it then checks that the level nears
the lower continuum towards the absent side, and otherwise (absent because
not yet bound, as below binding on a well's depth) goes on the other way. The
reported uncertainty is the
extrapolation's, never below a few ulp of the value and never above what the
found/absent bracket guarantees.

A Klein-Gordon s level of a short-range potential does not dive: it meets an
antiparticle level first, and the pair's energies turn complex. A dive of it
is refused; ``kind='merge'`` finds that point by narrowing the found/absent
bracket, aimed at the top of the parabola p(E) through the nearest points.
"""
from __future__ import annotations

import logging
import math
import time
import warnings
from dataclasses import dataclass, field, replace
from typing import Any, Mapping

import numpy as np

from .._checks import OptionError, check_int, check_positive
from .._rounding import rounding_floor
from ..discretize import get_method
from ..solver import setup, solve_channel, table_error
from .._threads import inside, one_blas_thread
from ..states import convert_label
from ..units import (C_AU, bohr_to, call_energy_unit, constants_record, energy_unit as canonical_unit, hartree_to,
                     length_unit, system_units)
from ._common import (StudyError, canonical_equation, check_varied, describe, parameter_units,
                      rebuild_potential, resolve_params, seeded_level, state_channel)

__all__ = ["critical", "CriticalResult"]

log = logging.getLogger(__name__)

_KINDS = ("unbind", "dive", "merge")

UNCERTAINTY_MEANING = (
    "+- is the estimated error of the critical value, extrapolated to threshold from the solved points: "
    "the change between fits with successive numbers of terms plus the energy errors propagated through "
    "the fit, at least 4 ulp (double precision) and at most the distance to the farther end of the "
    "bracket (the level was solved bound at one end and not found at the other); with a table in the "
    "potential, plus the table's interpolation error of the level nearest threshold converted to the "
    "parameter (the slope dp/ds there), which no bracket bounds")

MERGE_UNCERTAINTY_MEANING = (
    "+- is the estimated error of the merge value: the distance from it to the farther end of the bracket (the "
    "level, or its antiparticle partner, was solved at one end and neither at the other) plus the energies' error "
    "estimates near the merge converted to the parameter by the slope dp/dE of the fold, at least 4 ulp (double "
    "precision)")

MERGE_BRACKET_MEANING = (
    "the bracket is the pair of solved values nearest the merge (a real level at the first, none at the second: "
    "past the merge the pair's energies are complex); the merge value inside it is the top of the parabola "
    "p(E) through the three points found nearest the merge")

POINT_MERGE_RULE = "point charge: Z alpha = l + 1/2"
"""``settings['merge_rule']`` of a Klein-Gordon point charge's merge, taken from the exact condition."""

POINT_MERGE_UNCERTAINTY_MEANING = (
    "+- is the rounding of the merge value, which is exact for a point charge: its Klein-Gordon levels turn "
    "complex where Z alpha = l + 1/2 (gamma = sqrt((l + 1/2)^2 - (Z alpha)^2) stops being real), solved for the "
    "varied parameter; at least 4 ulp (double precision)")

POINT_MERGE_BRACKET_MEANING = (
    "the level was solved at the first value, just short of the merge; the second lies just past it, where a point "
    "charge has no Klein-Gordon solution (none past Z alpha = l + 1/2: the solver refuses it)")

BRACKET_MEANING = (
    "the bracket is the pair of solved values nearest the threshold (the level bound at the first, not "
    "found at the second); the critical value is extrapolated to the threshold from the energies of the "
    "bound points, so it is known far more precisely than the bracket is wide")


def _digits(value: float, uncertainty: float) -> int:
    """Significant digits of ``value`` resolved by ``uncertainty`` (one guard digit; 6 to 16)."""
    if not (value and math.isfinite(uncertainty) and uncertainty > 0):
        return 12
    return int(min(16, max(6, math.ceil(math.log10(abs(value) / uncertainty)) + 1)))
_SETUP_KEYS = ("particle", "mass_mev", "nucleus_mass_mev", "units")


@dataclass(frozen=True, repr=False)
class CriticalResult:
    """A critical parameter value of one level.

    Attributes
    ----------
    parameter : str
        The varied parameter.
    value : float
        Its critical value: where the level's binding energy reaches 0
        (``kind = 'unbind'``) or -2 m c^2 (``kind = 'dive'``), or where it
        meets an antiparticle level and both turn complex (``kind = 'merge'``,
        Klein-Gordon).
    uncertainty : float
        Estimated absolute error of ``value``: the change between
        extrapolations to threshold with successive numbers of terms, plus
        the energies' error estimates propagated through the fit; never below
        what double precision supports (4 ulp of the value, or the rounding
        error of the fit) and never above the distance from the value to the
        farther end of ``bracket``; a potential with a table adds its
        interpolation error, converted to the parameter (see
        :attr:`uncertainty_meaning` and the Notes of :func:`critical`).
    state : str
        The level's label (``1s``, ``2p3/2``, ...).
    equation : str
    kind : str
        ``'unbind'``, ``'dive'`` or ``'merge'``.
    bracket : tuple
        (nearest value where the level was found, nearest value past it
        where it was not); the second entry is None if no such point was
        evaluated.
    evaluations : int
        Number of parameter values solved.
    beyond : tuple of DivedResonance
        With ``beyond=`` (diving only): the level past the diving point as a
        resonance E + i Gamma/2 in the lower continuum at each requested
        distance (see :mod:`boundkit.studies.supercritical`).
    settings : dict
        Potential, fixed parameters, channel, tolerances, method, particle.
    status : str
        ``'ok'``; ``'tolerance-not-met'`` (the extrapolations did not agree
        to ``tol`` within the evaluation budget, or a table's interpolation
        error alone exceeds ``tol`` |value|); or ``'unverified'`` (the
        value lies outside the bracket: the level was lost before the
        extrapolated threshold).
    message : str
        One line saying what happened.
    points : tuple of dict
        Every evaluation: value, found, energy (hartree), error_estimate
        (hartree; it holds table_error), table_error (hartree: the part of
        the estimate from the interpolation of the potential's tables, 0
        without tables), via (``continuation`` or ``solver``; in a merge
        search ``UNDECIDED_VIA`` where the solve could not tell the pair from
        a merged one: ``found`` is False there, but the level is not absent),
        r_max (outer end of the level's mesh, bohr), seconds.
    parameter_unit : str
        Unit of the parameter ('' for a charge or a parameter of unknown
        unit); ``value``, ``uncertainty`` and ``bracket`` are in it.
    """

    parameter: str
    value: float
    uncertainty: float
    state: str
    equation: str
    kind: str
    bracket: tuple
    evaluations: int
    settings: dict
    status: str = "ok"
    message: str = ""
    points: tuple = field(default_factory=tuple)
    parameter_unit: str = ""
    beyond: tuple = field(default_factory=tuple)

    @property
    def success(self) -> bool:
        return self.status == "ok"

    @property
    def _point_merge(self) -> bool:
        """Whether the value is a point charge's exact merge, Z alpha = l + 1/2 (no search)."""
        return self.kind == "merge" and self.settings.get("merge_rule") == POINT_MERGE_RULE

    @property
    def bracket_meaning(self) -> str:
        """One sentence saying what ``bracket`` is, and why it is wider than ``uncertainty``."""
        if self._point_merge:
            return POINT_MERGE_BRACKET_MEANING
        return MERGE_BRACKET_MEANING if self.kind == "merge" else BRACKET_MEANING

    @property
    def uncertainty_meaning(self) -> str:
        """One sentence saying what ``uncertainty`` is."""
        if self._point_merge:
            return POINT_MERGE_UNCERTAINTY_MEANING
        return MERGE_UNCERTAINTY_MEANING if self.kind == "merge" else UNCERTAINTY_MEANING

    @property
    def value_text(self) -> str:
        """``value +- uncertainty unit`` with as many digits as the uncertainty supports (6 to 16)."""
        unit = f" {self.parameter_unit}" if self.parameter_unit else ""
        return f"{self.value:.{_digits(self.value, self.uncertainty)}g} +- {self.uncertainty:.2g}{unit}"

    def to_dict(self, unit: str | None = None, length: str | None = None) -> dict[str, Any]:
        """A JSON-ready record: the points' energies (and the resonances past the value) in ``unit``, their
        mesh ends ``r_max`` in ``length`` (defaults: the call's unit system, hartree and bohr or MeV and fm);
        settings named ``..._hartree`` stay in hartree."""
        e_default, l_default = system_units(self.settings.get("units", "atomic"))
        unit, length = unit or e_default, length or l_default
        energy = (lambda x: None if x is None else float(hartree_to(x, unit)))    # noqa: E731
        points = [{**p, **{k: energy(p.get(k)) for k in ("energy", "error_estimate", "table_error")},
                   "r_max": None if p.get("r_max") is None else float(bohr_to(p["r_max"], length))}
                  for p in self.points]
        return {"parameter": self.parameter, "parameter_unit": self.parameter_unit, "value": self.value,
                "uncertainty": self.uncertainty,
                "state": self.state, "equation": self.equation, "kind": self.kind,
                "uncertainty_meaning": self.uncertainty_meaning,
                "bracket": list(self.bracket), "bracket_meaning": self.bracket_meaning,
                "evaluations": self.evaluations, "status": self.status,
                "message": self.message, "settings": self.settings, "constants": constants_record(),
                "units": {"parameter": self.parameter_unit or "1", "energy": canonical_unit(unit),
                          "length": length_unit(length), "time": "s"},
                "points": points,
                "beyond": [b.to_dict(unit) for b in self.beyond]}

    def __repr__(self) -> str:
        head = (f"CriticalResult({self.state} {self.equation}, {self.kind}: {self.parameter} = "
                f"{self.value_text}, status={self.status!r}, "
                f"{self.evaluations} evaluations)")
        return "\n".join([head] + [f"  {b!r}" for b in self.beyond])


def _exponents(l: int | None, count: int) -> list[int]:
    """Powers of the threshold variable s in the expansion of p - p_c near threshold.

    ``l = None``: s vanishes linearly at p_c and p is analytic in it, all
    powers (a dive with a Coulomb tail, s = E + 2 m c^2: the tail repels the
    lower continuum's states, so its non-analytic terms are exponentially
    small, of order exp(-2 pi Z alpha m c / (hbar q)), below every power).
    ``l >= 0``: s is, up to an analytic factor, the decay constant q of the
    level outside a short-range potential, in a wave of orbital l (s =
    sqrt(-E) unbinding, sqrt(E + 2 m c^2) diving; :func:`_exterior_l`). The
    effective-range expansion gives the bound-state condition
    F(-q^2, p) = (-1)^l q^(2l+1) with F analytic, so p - p_c holds s^e for
    even e >= 2 and for every e >= 2l + 1: all powers for l = 0, no linear
    term for l > 0.
    """
    if l is None:
        return list(range(1, count + 1))
    out, e = [], 1
    while len(out) < count:
        if e % 2 == 0 or e >= 2 * l + 1:
            out.append(e)
        e += 1
    return out


def _exterior_l(eq, kind: str) -> int:
    """Orbital l of the wave that carries the level outside a short-range potential at its threshold.

    Unbinding (E -> 0): the channel's l (the large component's, for Dirac).
    Diving (E -> -2 m c^2): for Klein-Gordon the same l; for Dirac the small
    component's, which is the large one near the lower continuum: outside,
    Q'' = (kappa (kappa - 1) / r^2 + q^2) Q (q hbar c = sqrt((m c^2)^2 - W^2),
    W the total energy), a wave of l' = -kappa (kappa < 0) or kappa - 1
    (kappa > 0), while P = (Q' - kappa Q / r) hbar c / (m c^2 - W) vanishes
    with q (1s1/2: l' = 1, so p - p_c ~ s^2 with an s^3 term,
    s = sqrt(E + 2 m c^2)).
    """
    kappa = getattr(eq, "kappa", None)
    if kind == "unbind" or kappa is None:
        return int(eq.l)
    return -kappa if kappa < 0 else kappa - 1


def _fit(s: list[float], p: list[float], exps: list[int],
         s_error: list[float] | None = None) -> tuple[float, float, float]:
    """(c_0, propagated error, rounding error) of the interpolant through (s_i, p_i).

    c_0 = sum_i w_i p_i with w the first row of A^-1 (A_ij = (s_i/s_max)^e_j).
    An error ds_i in s_i moves the curve like an error -P'(s_i) ds_i in p_i,
    so it moves c_0 by -w_i P'(s_i) ds_i; the propagated error adds these in
    absolute value. The rounding error of the sum is taken as
    eps sum_i |w_i p_i|.
    """
    smax = max(s)
    x = np.asarray(s, float) / smax
    pv = np.asarray(p, float)
    A = np.column_stack([np.ones_like(x)] + [x**e for e in exps])
    coef = np.linalg.solve(A, pv)
    w = np.linalg.solve(A.T, np.eye(len(x))[0])
    slope = sum(c * e * x ** (e - 1) for c, e in zip(coef[1:], exps)) / smax     # P'(s_i)
    err = np.zeros_like(x) if s_error is None else np.asarray(s_error, float)
    propagated = float(np.sum(np.abs(w * slope * err)))
    rounding = float(np.finfo(float).eps * np.sum(np.abs(w * pv)))
    return float(coef[0]), propagated, rounding


def _precision_floor(value: float, rounding: float = 0.0) -> float:
    """Smallest honest uncertainty of a double-precision value: its rounding floor (4 ulp,
    :func:`boundkit._rounding.rounding_floor`), or the fit's rounding error."""
    return max(float(rounding_floor(value)), rounding)


def _extrapolate(points: list[dict], l: int | None = 0) -> tuple[float | None, float]:
    """Parameter value where the threshold variable s vanishes, and its uncertainty.

    Interpolates p as c_0 + sum c_i s^(e_i) (exponents from
    :func:`_exponents` with ``l``; None for a threshold analytic in s)
    through the d + 1 points nearest to threshold (d = 1..4) and takes c_0;
    returns the estimate of the degree whose change from the degree below is
    smallest. Its uncertainty is that change, plus
    the errors ``s_error`` of the points (if given) propagated through the
    fit, and never below what double precision supports (4 ulp of the value,
    or the rounding error of the fit). inf with fewer than three points.
    """
    near: list[dict] = []
    for r in sorted(points, key=lambda r: r["s"]):
        if all(abs(r["s"] - q["s"]) > 1e-9 * max(r["s"], q["s"]) and r["value"] != q["value"] for q in near):
            near.append(r)
    near = near[:5]
    if len(near) < 2:
        return None, math.inf
    s = [r["s"] for r in near]
    p = [r["value"] for r in near]
    ds = [r.get("s_error") or 0.0 for r in near]
    exps = _exponents(l, len(near) - 1)
    est = []
    for d in range(1, len(near)):
        try:
            est.append(_fit(s[: d + 1], p[: d + 1], exps[:d], ds[: d + 1]))
        except np.linalg.LinAlgError:
            break
    if not est:
        return None, math.inf
    if len(est) == 1:
        return est[0][0], math.inf
    diffs = [abs(est[i][0] - est[i - 1][0]) for i in range(1, len(est))]
    i = int(np.argmin(diffs))
    value, propagated, rounding = est[i + 1]
    return value, max(diffs[i] + propagated, _precision_floor(value, rounding))


def _table_uncertainty(found: list[dict]) -> float:
    """The tables' interpolation error of a critical value: the error ``s_table`` of the threshold variable
    at the point nearest threshold times the slope |dp/ds| of the two points nearest threshold (see the
    Notes of :func:`critical`); 0 without tables."""
    near = sorted(found, key=lambda r: r["s"])
    if not near or not near[0].get("s_table"):
        return 0.0
    n0 = near[0]
    n1 = next((r for r in near[1:] if abs(r["s"] - n0["s"]) > 1e-9 * r["s"] and r["value"] != n0["value"]), None)
    if n1 is None:
        return math.inf
    return abs((n1["value"] - n0["value"]) / (n1["s"] - n0["s"])) * n0["s_table"]


def _lagrange_at_zero(x: list[float], y: list[float]) -> float:
    """Value at 0 of the polynomial through (x_i, y_i) (Lagrange form; few, distinct x)."""
    total = 0.0
    for i, (xi, yi) in enumerate(zip(x, y)):
        w = 1.0
        for j, xj in enumerate(x):
            if j != i:
                w *= xj / (xj - xi)
        total += w * yi
    return total


def _predict_s(points: list[dict], p: float) -> float:
    """Threshold variable at p predicted from the (up to) three nearest points at distinct values (a value
    solved twice, by a seed and again by the plain solver, would put a zero in the Lagrange weights)."""
    near: list[dict] = []
    for r in sorted(points, key=lambda r: r["s"]):
        if all(r["value"] != q["value"] for q in near):
            near.append(r)
        if len(near) == 3:
            break
    return _lagrange_at_zero([r["value"] - p for r in near], [r["s"] for r in near])


def _fold(points: list[dict], pdir: float) -> dict | None:
    """The fold p = p_m - a (E - E_m)^2 through the three found points furthest along the search.

    Near the value p_m where a Klein-Gordon level meets its antiparticle partner, the two real energies
    are E_m +- sqrt((p_m - p) / a) (a saddle-node: p is analytic in E with dp/dE = 0 at E_m), so the
    parabola in E through three points near p_m has its top near (E_m, p_m), whichever of the two
    branches the points lie on. ``pdir`` is the sign of the search direction in p: the top must be a
    maximum of p for pdir > 0, a minimum for pdir < 0. Returns a dict with ``value`` (p_m), ``energy``
    (E_m, hartree), ``points`` (the three points) and ``slopes`` (dp/dE at them, parameter per hartree),
    or None when there are fewer than three distinct points or the parabola turns the other way.
    """
    near: list[dict] = []
    for r in sorted(points, key=lambda r: -r["value"] * pdir):
        if all(r["value"] != q["value"] and r["energy"] != q["energy"] for q in near):
            near.append(r)
        if len(near) == 3:
            break
    if len(near) < 3:
        return None
    e0 = near[0]["energy"]
    scale = max(abs(r["energy"] - e0) for r in near)
    x = np.array([(r["energy"] - e0) / scale for r in near])
    try:
        c0, c1, c2 = np.linalg.solve(np.vander(x, 3, increasing=True), [r["value"] for r in near])
    except np.linalg.LinAlgError:
        return None
    if not c2 * pdir < 0:
        return None
    xv = -c1 / (2 * c2)
    return {"value": float(c0 + c1 * xv + c2 * xv * xv), "energy": float(e0 + xv * scale),
            "slopes": [float((c1 + 2 * c2 * xi) / scale) for xi in x], "points": near}


class _Axis:
    """Search coordinate x of the varied parameter p.

    A parameter that must keep its sign (the potential refuses 0 or values of
    the other sign, as for a screening length or a range) is searched in
    x = ln(p / sign): equal steps in x are equal factors in p, and no step
    reaches 0 or crosses it. Any other parameter is searched in x = p.
    """

    def __init__(self, sign: int = 0) -> None:
        self.sign = sign

    @classmethod
    def probe(cls, build, p: float) -> "_Axis":
        """The axis of a parameter whose value p is accepted: geometric if the potential refuses -p,
        or if -p makes it not finite far out (r = 1e3..1e5 bohr) where p does not (a range or a
        screening length in an expression: exp(-r/D) overflows for D < 0). The potential's own
        warnings about the trial value -p, which the search never visits, are kept out of the log."""
        if p == 0:
            return cls(0)
        keep = cls(1 if p > 0 else -1)
        quiet = _Quiet()
        with quiet:
            try:
                _, pot_minus, _ = build(-p)
            except ValueError:
                return keep
        if not _finite_far(pot_minus) and _finite_far(build(p)[1]):
            return keep
        return cls(0)

    @property
    def geometric(self) -> bool:
        return self.sign != 0

    def x(self, p: float) -> float:
        return math.log(p * self.sign) if self.sign else float(p)

    def p(self, x: float) -> float:
        return self.sign * math.exp(min(x, 700.0)) if self.sign else float(x)

    def allows(self, p: float | None) -> bool:
        return p is not None and math.isfinite(p) and (not self.sign or p * self.sign > 0)

    @property
    def max_step(self) -> float:
        """Largest step in x before the level has been seen absent: a factor 4 (geometric)."""
        return math.log(4.0) if self.sign else math.inf

    def first_step(self, p: float) -> float:
        """A small step in x: 2 per cent of p (or 0.02 when p = 0)."""
        return 0.02 if self.sign else (0.02 * abs(p) if p != 0 else 0.02)

    def far_steps(self, p: float) -> list[float]:
        """Growing steps in x for a search from a start where the level is absent:
        factors 2, 4, 16, 256, 65536, 2^32 (geometric) or |p|/4 * 4^j, j = 0..5 (linear)."""
        if self.sign:
            return [math.log(2.0) * 2**j for j in range(6)]
        h = 0.25 * abs(p) if p != 0 else 1.0
        return [h * 4**j for j in range(6)]


_FAR_RADII = np.array([1e3, 1e4, 1e5])


def _quiet_values(pot, radii):
    """(V(r), S(r)) at ``radii`` with the warnings of the evaluation kept quiet; None if it raises."""
    with np.errstate(all="ignore"), warnings.catch_warnings():
        warnings.simplefilter("ignore", RuntimeWarning)
        try:
            return np.ravel(pot.V(radii)), np.ravel(pot.S(radii))
        except (ValueError, ArithmeticError):
            return None


def _finite_far(pot) -> bool:
    """Whether the potential (vector and scalar) is finite at r = 1e3, 1e4, 1e5 bohr."""
    values = _quiet_values(pot, _FAR_RADII)
    return values is not None and bool(np.all(np.isfinite(np.concatenate(values))))


_POINT_RADII = np.geomspace(1e-8, 1e4, 13)


def _sample_rv_s(pot, radii):
    """(r V(r), S(r)) at ``radii`` with the warnings of the evaluation kept quiet; None if it raises."""
    values = _quiet_values(pot, radii)
    if values is None:
        return None
    with np.errstate(all="ignore"):        # r V overflows where V is near the largest double
        return values[0] * radii, values[1]


def _bare_point_charge(pot) -> bool:
    """Whether the potential is an attractive point Coulomb charge and nothing else: V = -Z/r with Z > 0
    at r = 1e-8..1e4 bohr (a term or an expression), no scalar part."""
    zv = pot.z_vector
    if not zv > 0 or pot.z_scalar != 0:
        return False
    sampled = _sample_rv_s(pot, _POINT_RADII)
    if sampled is None:
        return False
    rv, s = sampled
    return bool(np.allclose(rv, -zv, rtol=1e-12, atol=0.0) and np.all(s == 0))


_BOUND_RADII = np.geomspace(1e-10, 1e4, 281)


def _point_charge_bound(pot, eq) -> float | None:
    """Dirac: the charge Z of a potential no deeper than its point charge, r V(r) >= -Z at r = 1e-10..1e4 bohr
    (20 radii a decade; Z the Coulomb tail's charge), with no scalar part and Z alpha < |kappa|; else None.
    Such a potential lifts each level above the point charge's (first order in V, the density being positive),
    whose total energy stays above 0 (Sommerfeld): the level does not dive."""
    kappa = getattr(eq, "kappa", None)
    z = pot.tail_charge
    if kappa is None or not z > 0 or not z / C_AU < abs(kappa) or pot.z_scalar != 0:
        return None
    sampled = _sample_rv_s(pot, _BOUND_RADII)
    if sampled is None:
        return None
    rv, s = sampled
    ok = np.all(np.isfinite(rv)) and np.all(rv >= -z * (1 + 1e-12)) and np.all(s == 0)
    return float(z) if ok else None


def _has_spin_orbit(potential, params, scalar, solve_kwargs, vary, bracket) -> bool:
    """Whether the potential (at the given parameters, the varied one at the bracket's first end when
    params lacks it) has a spin-orbit term, whose Schrodinger states need j; False when it cannot be
    built (the search's own checks then report why)."""
    from ..potentials import make_potential

    try:
        values = {k: v for k, v in dict(params or {}).items() if not callable(v)}
        if bracket is not None and isinstance(vary, str) and vary.strip() not in values:
            values[vary.strip()] = float(bracket[0])
        return make_potential(potential, values, scalar=scalar,
                              units=solve_kwargs.get("units", "atomic")).has_spin_orbit
    except (ValueError, TypeError):
        return False


class _Quiet(logging.Filter):
    """Context manager: drops the potentials' log records while a trial value is built."""

    _name = "boundkit.potentials"

    def filter(self, record: logging.LogRecord) -> bool:
        return not record.name.startswith(self._name)

    def __enter__(self) -> "_Quiet":
        self._loggers = [logging.getLogger(n) for n in list(logging.root.manager.loggerDict)
                         if n == self._name or n.startswith(self._name + ".")]
        for lg in self._loggers:
            lg.addFilter(self)
        return self

    def __exit__(self, *exc) -> None:
        for lg in self._loggers:
            lg.removeFilter(self)


class _Refused(StudyError):
    """The potential refused a parameter value met during the search (outside its range)."""


class _SolverRefused(StudyError):
    """The solver refused a parameter value met during the search (the potential was built)."""


class _Undecided(StudyError):
    """Neither method family could decide whether the level is bound at a parameter value."""


UNDECIDED_VIA = "solver (undecided: within its resolution of the merge)"
"""``points[i]['via']`` of a merge search's point where the solve could not tell the pair from a merged one."""


def _near_merge(res) -> bool:
    """Whether a (partial) solve left a Klein-Gordon pair undecided within rounding of its merge (the far
    box's count left that pair undecided, :func:`boundkit.locator.peak_undecided`, and the ladder could not
    separate it: the solve's ``diagnostics['near_merge_undecided']``)."""
    return bool(res.diagnostics.get("near_merge_undecided"))


# BLAS single-threaded, as boundkit.solver.solve_channel runs: the matrices are small, and two
# searches side by side ran five times slower with threads (measured)
@inside(one_blas_thread)
def critical(equation: str, potential, params: Mapping[str, Any] | None, *, state: str, vary: str,
             bracket: tuple[float, float] | None = None, tol: float = 1e-8, kind: str | None = None,
             energy_tol: float = 1e-10, bracket_rtol: float = 1e-2, max_evaluations: int = 40,
             method: str = "auto", scalar=None, labels: str = "atomic", beyond=None,
             beyond_angles=(0.25, 0.35), beyond_order: int = 12, energy_unit: str | None = None,
             **solve_kwargs) -> CriticalResult:
    """Critical value of a parameter at which a level unbinds, dives or merges.

    Parameters
    ----------
    equation : {'schrodinger', 'klein-gordon', 'dirac'}
    potential : str, callable, Term or sequence
        As for :func:`boundkit.solve`.
    params : dict
        Parameters; ``params[vary]`` is the start value (the level must be
        bound there) unless ``bracket`` is given. Callable values are
        evaluated at each point with the dict of the other parameters (e.g.
        :class:`boundkit.studies.NuclearRadius` for a radius that follows Z).
    state : str
        The level: ``'1s'``, ``'2p'`` (Schrodinger, Klein-Gordon), ``'1s1/2'``,
        ``'2p1/2'``, ``'2p3/2'`` (Dirac; j = l + 1/2 is kappa = -(l+1),
        j = l - 1/2 is kappa = l). The channel follows from the label.
    vary : str
        The parameter to vary.
    bracket : (float, float), optional
        Two values with the level bound at one and absent at the other.
        Without it the search starts at ``params[vary]`` and moves in the
        direction in which the level approaches its threshold.
    tol : float
        Relative tolerance of the critical value (default 1e-8).
    kind : {'unbind', 'dive', 'merge'}, optional
        Default: ``'dive'`` when the potential has a Coulomb tail (such a
        level never unbinds), else ``'unbind'``. ``'merge'`` (Klein-Gordon
        only): where the level meets an antiparticle level and both turn
        complex, as a Klein-Gordon s level of a short-range potential does
        instead of diving (a dive of it is refused).
    energy_tol : float
        Relative tolerance of each energy (default 1e-10).
    bracket_rtol : float
        The search goes on until the level has been found within
        ``bracket_rtol`` |p_c| of the critical value (default 1e-2), so the
        bracket is tight on both sides.
    max_evaluations : int
        Budget of parameter values solved (default 40).
    labels : {'atomic', 'nuclear', 'quarkonium'}
        Labelling convention of ``state`` and of the result (``2p1/2``,
        ``0p1/2`` or ``1P1/2``; :mod:`boundkit.states`).
    method, scalar, **solve_kwargs
        As for :func:`boundkit.solve` (``particle``, ``mass_mev``,
        ``nucleus_mass_mev``, ``units``, ``order``).
    beyond : sequence of float, optional
        Diving only: distances past the critical value (in the varied
        parameter, e.g. ``(2, 5, 10)`` units of charge) at which the dived
        level is followed into the lower continuum as a resonance
        E + i Gamma/2 by complex scaling (:attr:`CriticalResult.beyond`).
    beyond_angles, beyond_order
        Scaling angles and Lobatto order of those complex-scaling solves
        (:func:`boundkit.resonances`).
    energy_unit : str, optional
        Unit of the energies quoted in messages (``message``, and those of
        ``beyond``; default hartree, MeV with ``units='nuclear'``); the
        result's numbers stay in hartree (convert with ``to_dict(unit)``).

    Returns
    -------
    CriticalResult

    Raises
    ------
    ValueError
        Bad input: a malformed state label, a bracket with the level bound
        (or absent) at both ends, a dive bracket whose absent end is where
        the level is not yet bound, a start value where the level is absent
        and not found bound anywhere tried, a dive asked of a bare point
        Coulomb charge (no level of it dives) or of a Klein-Gordon s level of
        a short-range potential (it merges), a merge asked of another
        equation; a Dirac dive searched on a parameter that leaves the
        potential no deeper than a point charge below its limit (a nucleus's
        radius at Z alpha < |kappa|).
    StudyError
        The solver refused the start value (or a bracket end); the critical
        value lies beyond a value the potential or the solver refuses;
        neither method family can tell whether the level is bound at a
        value met during the search.

    Notes
    -----
    Threshold variable. Unbinding: s = kappa = sqrt(-E). For a short-range
    potential the effective-range expansion gives the bound-state condition
    F(-kappa^2, p) = (-1)^l kappa^(2l+1) with F analytic, so near threshold

        p - p_c = sum_e a_e kappa^e,   e even >= 2, or e >= 2l + 1:

    all powers for l = 0 (E ~ -(p - p_c)^2), no linear term for l > 0
    (E ~ -(p - p_c)). Diving from a short-range potential (no Coulomb
    tail): s = sqrt(E + 2 m c^2) (m the reduced mass), again the decay
    constant outside up to an analytic factor, with the same series for the
    l of the wave outside: l itself for Klein-Gordon; for Dirac that of the
    small component, which is the large one near the lower continuum,
    l' = -kappa (kappa < 0) or kappa - 1 (kappa > 0). A 1s1/2 has l' = 1:
    p - p_c = a_2 s^2 + a_3 s^3 + ..., linear in E + 2 m c^2 but with a
    (E + 2 m c^2)^(3/2) term that a series in integer powers cannot follow
    (a square well's exact matching shows it). Diving with a Coulomb tail:
    s = E + 2 m c^2, p - p_c = a_1 s + a_2 s^2 + ... (the tail repels the
    lower continuum's states: non-analytic terms ~ exp(-c / sqrt(s)) lie
    below every power). A bare point charge is refused: its levels keep a
    total energy above 0 for every charge it allows (Sommerfeld's formula)
    and never dive. So is, for Dirac, a search whose estimate leaves the
    parameter's range (a radius extrapolated below 0) while at every value
    found the potential kept one Coulomb charge Z with Z alpha < |kappa|
    and was no deeper than that point charge (r V >= -Z, no scalar part):
    such a level lies above the point charge's (first order in V, its
    density being positive) and dives at none of them (a finite nucleus of
    Z alpha < 1 searched on its radius).

    Search coordinate. A parameter whose opposite value the potential
    refuses, or makes not finite at r = 1e3..1e5 bohr where the start value
    does not (a screening length, a range, also in an expression or a model
    file: it must keep its sign), is searched in x = ln(p / sign p), so
    steps are factors and never reach 0; any other parameter in x = p.
    Targets, steps and bisections are taken in x. A value that the
    potential (at setup) or the solver refuses during the search (say a
    well radius R < 0, a potential that binds nothing) becomes a wall that
    the search does not cross: the next value is halfway between the
    nearest bound value and the wall. When the estimate still lies beyond a
    setup refusal, or beyond a solver refusal closer than 1e-3 of the way
    to it, the search stops with a StudyError naming the refused value.

    Undecided points. A solver answer ``partial`` (the count certificate
    failed, so fewer levels came back than are bound) without the level is
    not taken as "absent": the point is solved again with the other method
    family (spectral for finite differences, and the reverse), whose result
    is used (``points[i]['via']`` says so, as does the message); if that is
    partial too, the search stops with a StudyError. A merge search is the
    exception for one reason: a solve that is partial because a Klein-Gordon
    pair lies within rounding of its merge (the far box cannot tell it from a
    merged pair, and the other family counts on the same box) is at the merge
    within the solver's resolution; see Merging.

    Start. At a start where the level is bound, a step of 2 per cent of x
    on either side gives the direction in which s falls. At a start where it
    is absent, values on both sides are tried in growing steps (factors 2,
    4, 16, ... for a geometric search) until the level is bound at one; the
    last value tried without it on that side closes the bracket. A dive has
    two reasons for a missing level: it dived, or it is not yet bound (a
    well's depth below binding). The level 5 per cent of the way towards
    the absent value (or, if gone there too, away from it) tells which: if
    s grows towards it, the level is not yet bound there, and the search
    goes on away from it from the bound value as from a bound start (a
    bracket with such an absent end is refused).

    Search. The level is followed from the start value towards threshold
    (each point is seeded from the points found; the plain solver is tried
    as well unless the level is predicted to be past threshold there);
    each step aims at 3/4 of the way to the current estimate of p_c, so s
    falls by about 4 per step; without an estimate the step doubles, and
    before any value without the level is met no step exceeds a factor 4
    (geometric search). The estimate interpolates p by the series above
    (2 to 5 terms) through as many points nearest threshold and takes its
    constant term; a geometric search also interpolates ln|p| (the same
    expansion, ln being analytic at p_c != 0; nearer a low-degree
    polynomial far from threshold) and keeps whichever agrees better. Its
    uncertainty is the smallest change between successive numbers of terms
    plus the energy error estimates propagated through the fit (an error
    ds_i moves the constant term by w_i p'(s_i) ds_i, w the fit's weights),
    and never below 4 ulp of the value or the rounding error
    eps sum |w_i p_i| of the fit. The reported uncertainty is in addition
    capped by the bracket: a value inside (found, absent) is off by at most
    its distance to the farther end. It is accepted when
    that uncertainty and the change from the previous step are both below
    ``tol`` |p_c|, the level has been found within ``bracket_rtol`` |p_c| of
    p_c, and a point just past p_c (by 100 times the uncertainty) holds no
    level. A point where no level is found closes the bracket; the search
    then bisects until the estimate lies inside it. Such a point is checked
    once more (from a shallower seed) when the extrapolation keeps pointing
    past it, since a level can be missed by a solve.

    Tables. A tabulated potential is solved as its interpolant, and each
    point's energy carries the table's interpolation error (first order in
    the difference of the splines of two degrees, as in a solve:
    :func:`boundkit.solver.table_error`). That error is systematic: it moves
    the interpolant's whole curve p(s), not one point at random, so it is
    kept out of the fit's propagated error (which would never let the
    extrapolation settle, and which the fit's alternating weights would
    inflate) and added once to the result: the table's error of the point
    nearest threshold, converted to s (dE / (2 s) for a square-root
    variable, dE for E + 2 m c^2) and to the parameter by the slope dp/ds of the two points
    nearest threshold. For an s level dE falls like s near threshold, and
    for l > 0 p - p_c ~ s^2, so in both cases the converted error tends to
    a constant there. The bracket, which bounds the interpolant's critical
    value, does not cap it. When it alone exceeds ``tol`` |p_c|, the status
    is ``'tolerance-not-met'`` and the message names the table.

    Merging (Klein-Gordon). The charge of a Klein-Gordon state is the integral
    of (E + m c^2 - V) u^2 / (m c^2) (dK/dE is minus its matrix). Outside a
    short-range well an s state near E = -2 m c^2 is u ~ exp(-q r), and that
    integral tends to -m c^2 / (2 q) -> -infinity: a state reaching the
    lower continuum is an antiparticle level. The particle s level therefore
    never dives; it meets an antiparticle level rising from the continuum,
    where the charge of both is 0 (dE/dp infinite), and past that value p_m
    the two energies are complex (Schiff, Snyder & Weinberg, Phys. Rev. 57,
    315 (1940); a square well's matching shows it). Near p_m,
    p = p_m - a (E - E_m)^2 + ..., analytic in E on both branches, so the
    top of the parabola through the three points found nearest p_m
    estimates (p_m, E_m) whichever branch a point came from. The search
    follows the level towards the lower continuum in doubling steps until it
    is absent, then aims 9/10 of the way to that top (a point found there is
    10 times nearer it), and, within ``tol`` of it, just past it; it stops
    when the found/absent bracket is narrower than ``tol`` |p_m| (and
    bisects it once more while the top lies outside it by less than its
    width: the points turn, but too far from the top to place it). Where the
    solve cannot tell the pair from a merged one (status ``'partial'``, a
    pair within rounding of its merge: a few 1e-10 of a square well's depth)
    the point is undecided (``points[i]['via']``), neither found nor absent:
    the search closes in on such values from both sides, from the side with
    the wider gap, and stops when both gaps are no wider than the undecided
    values' spread; the bracket then holds them, and the status is
    ``'tolerance-not-met'`` when it is still wider than ``tol`` |p_m|, with
    a message that says why. The value
    is the top (the bracket's midpoint if the top lies outside it); its
    uncertainty is the distance to the farther end of the bracket plus the
    largest error estimate of the three points times |dp/dE| there (an
    energy error moves the curve p(E) by that much). The result is
    ``'unverified'`` when the points do not turn (no top inside the
    bracket, or one below -2 m c^2) and no value was undecided: the level
    was lost some other way, perhaps by diving (Klein-Gordon levels with
    l > 0 of a short-range well dive). A bare point charge needs no search: its levels hold
    gamma = sqrt((l + 1/2)^2 - (Z alpha)^2), real up to Z alpha = l + 1/2,
    past which the energies are complex and the solver refuses the charge.
    The merge value is where Z alpha = l + 1/2 (Z read from the potential,
    solved for the varied parameter by secant steps), with an uncertainty of
    its rounding; the level is solved 1e-6 of the value short of it, and
    must be absent (or refused) as far past it, else the search runs.

    Mesh. The solver sizes each level's mesh from its energy: the outer end
    is where the WKB estimate of the radial function has fallen by e^-42,
    about r_t + 42/sqrt(2 m |E|) near E = 0, so the domain grows
    automatically as the level spreads out (``points[i]['r_max']`` records
    it). Near the lower continuum a Coulomb tail keeps the level compact.
    """
    eqname = canonical_equation(equation)
    channel, k, atomic_label = state_channel(eqname, convert_label(state, "atomic", frm=labels),
                                             _has_spin_orbit(potential, params, scalar, solve_kwargs, vary, bracket))
    label = convert_label(atomic_label, labels)
    tol = check_positive("tol", tol)
    energy_tol = check_positive("energy_tol", energy_tol)
    bracket_rtol = check_positive("bracket_rtol", bracket_rtol)
    max_evaluations = check_int("max_evaluations", max_evaluations, minimum=4)
    if not isinstance(vary, str) or not vary.strip():
        raise ValueError("vary: give the name of the parameter to vary, e.g. vary='delta'")
    vary = vary.strip()
    params = dict(params or {})
    if callable(params.get(vary)):
        raise ValueError(f"vary: {vary!r} is given as a rule in params; give a number or a bracket")
    bad = set(solve_kwargs) - set(_SETUP_KEYS) - {"order"}
    if bad:
        raise ValueError(f"critical: unknown option {sorted(bad)[0]!r}; solve options are "
                         f"{', '.join(_SETUP_KEYS)}, order")
    disc = get_method(method, solve_kwargs.pop("order", None))
    setup_kwargs = {k_: v for k_, v in solve_kwargs.items() if k_ in _SETUP_KEYS}
    e_unit = call_energy_unit(energy_unit, setup_kwargs.get("units", "atomic"))

    def energy_text(x: float, spec: str) -> str:
        """An energy (hartree) in the caller's unit, with the unit named."""
        return f"{hartree_to(x, e_unit):{spec}} {e_unit}"
    if kind is not None and kind not in _KINDS:
        raise ValueError(f"kind: must be 'unbind', 'dive' or 'merge', got {kind!r}")
    if beyond is not None:
        from ..resonances import check_angles
        from .supercritical import check_beyond

        beyond = check_beyond(beyond)
        # checked here, not after the search, and under the names the caller gave
        beyond_angles = check_angles("beyond_angles", beyond_angles)
        beyond_order = check_int("beyond_order", beyond_order, minimum=6)
    varied = {vary} | {n for n, v in params.items() if callable(v)}
    t0 = time.perf_counter()

    def build(p: float, equation: str = eqname):
        values = resolve_params(params, {vary: p})
        units = setup_kwargs.get("units", "atomic")
        return setup(equation, rebuild_potential(potential, values, varied, units=units), values,
                     scalar=rebuild_potential(scalar, values, varied, units=units), **channel, **setup_kwargs)

    check_varied(potential, scalar, [vary])
    if bracket is not None:
        try:
            a, b = (float(x) for x in bracket)
        except (TypeError, ValueError):
            raise ValueError("bracket: give two numbers, e.g. bracket=(1.0, 3.0)") from None
        if not (math.isfinite(a) and math.isfinite(b)) or a == b:
            raise ValueError(f"bracket: needs two different finite values, got ({a:g}, {b:g})")
        p_start = a
    else:
        if vary not in params:
            lead = f"params: give a start value of {vary!r} where {label} is bound "
            raise OptionError(f"{lead}(params[{vary!r}]) or a bracket", f"{lead}(--param {vary}=VALUE) or --bracket A,B")
        p_start = float(params[vary])
    eq0, pot0, settings0 = build(p_start)          # bad input surfaces here as ValueError
    if kind is None and eqname == "schrodinger" and pot0.tail_charge > 0:
        raise ValueError(f"potential: with a Coulomb tail (charge {pot0.tail_charge:g}) a Schrodinger level stays "
                         f"bound for any charge > 0, down to 0+: {label} never unbinds, there is no critical {vary}; "
                         "screen the potential (e.g. yukawa) or use the Dirac equation, whose levels dive")
    if kind is None:
        kind = "dive" if pot0.tail_charge > 0 else "unbind"
    if pot0.confining:
        raise ValueError("potential: a confining potential binds every level; there is no critical value")
    if kind == "dive" and eqname == "schrodinger":
        raise ValueError("kind: diving into the lower continuum needs the Dirac or Klein-Gordon equation")
    if kind == "merge" and eqname != "klein-gordon":
        instead = "dive" if eqname == "dirac" else "unbind"
        raise ValueError(f"kind: only Klein-Gordon levels merge with antiparticle levels (their charge changes "
                         f"sign); a {eqname} level {instead}s: use kind='{instead}'")
    if kind == "dive" and eqname == "klein-gordon" and pot0.tail_charge == 0 and eq0.l == 0:
        # outside a short-range well the charge of an s state near W = -m c^2 is ~ W / (2 q) -> -infinity: a
        # state reaching the lower continuum is an antiparticle level; the particle level meets one first
        raise ValueError("kind: a Klein-Gordon s level of a short-range well does not dive: it merges with an "
                         "antiparticle level before reaching -2 m c^2 (their energies turn complex); ask for that "
                         "point (kind='merge', --kind merge), or use the Dirac equation")
    if kind == "dive" and eqname != "schrodinger" and _bare_point_charge(pot0):
        # E_total = m c^2 / sqrt(1 + (Z alpha / (n_r + gamma))^2) > 0 (Sommerfeld; Klein-Gordon alike) up to
        # the largest charge for which a point charge has a solution; the search would walk to that wall
        limit = (f"Z alpha < |kappa| = {abs(eq0.kappa)}" if eqname == "dirac" else
                 f"Z alpha < l + 1/2 = {eq0.l + 0.5:g}")
        raise ValueError(f"potential: a point Coulomb charge never makes {label} dive: its total energy stays above "
                         f"0 (Sommerfeld) for every {limit}, beyond which a point charge has no solution; use a "
                         "finite nucleus: the uniform-sphere or fermi term with its rms_fm")
    if kind == "unbind" and pot0.tail_charge > 0:
        raise ValueError(f"kind: a potential with a Coulomb tail (charge {pot0.tail_charge:g}) binds "
                         "infinitely many levels and none unbinds; use a screened potential or kind='dive'")
    # threshold variable s: the distance to threshold when a dive's exterior is a Coulomb tail (p analytic
    # in it); its square root, the decay constant outside up to an analytic factor, when the level leaves a
    # short-range potential (unbinding, or a dive from a well), with the powers of the exterior wave's l
    root = kind == "unbind" or (kind == "dive" and pot0.tail_charge == 0)
    l_fit = _exterior_l(eq0, kind) if root else None
    if beyond is not None and kind != "dive":
        raise ValueError("beyond: a level is followed past its critical value only when it dives "
                         f"(kind='dive'); this search is kind={kind!r}; leave beyond out")

    points: list[dict] = []
    # the other method family, asked where a solve is partial (its count certificate failed)
    other = get_method("finite-difference" if disc.family == "spectral" else "spectral")
    retried_at: list[float] = []       # values solved again with it

    def evaluate(p: float, seeds: tuple = (), plain: bool = True) -> dict:
        """Solve at p: from each seed energy in turn, then (if ``plain``) with the plain solver."""
        rec: dict[str, Any] = {"value": float(p), "found": False, "energy": None, "error_estimate": None,
                               "table_error": None, "via": None, "r_max": None}
        t_start = time.perf_counter()
        try:
            eq, pot, _ = build(p)
        except ValueError as exc:
            if not points:
                raise
            raise _Refused(f"{vary} = {p:.12g} is outside the parameter's range ({exc})") from None
        mc2 = eq.mass * C_AU**2
        got, via = None, None
        try:
            tried: list[float] = []
            for sd in seeds:
                if sd is None or not math.isfinite(sd) or any(abs(sd - t) <= 1e-9 * abs(t) for t in tried):
                    continue
                tried.append(sd)
                got, via = seeded_level(eq, pot, disc, k, sd, energy_tol), "continuation"
                if got is not None:
                    break
            if got is None and (plain or not tried):
                res = solve_channel(eq, pot, disc, k + 1, energy_tol)
                lv = next((x for x in res.levels if x.nodes == k), None)
                via = "solver"
                if lv is None and res.status == "partial" and kind == "merge" and _near_merge(res):
                    # a pair within rounding of its merge: at the merge within the solver's resolution, neither
                    # found nor absent. The other family counts on the same far box and cannot tell either.
                    rec.update(undecided=True, via=UNDECIDED_VIA)
                elif lv is None and res.status == "partial":
                    # the count certificate failed: no evidence that the level is absent. Ask the
                    # other method family; if it cannot tell either, the point is undecided.
                    res2 = solve_channel(eq, pot, other, k + 1, energy_tol)
                    retried_at.append(float(p))
                    lv = next((x for x in res2.levels if x.nodes == k), None)
                    via = f"solver ({other.name}, after {disc.name} was partial)"
                    log.info("critical %s: %s = %.15g: %s solve partial (%s); %s: %s", label, vary, p, disc.name,
                             res.message, other.name, res2.message)
                    if lv is None and res2.status == "partial":
                        raise _Undecided(
                            f"neither method can tell whether {label} is bound at {vary} = {p:.12g}: the "
                            f"{disc.name} solve is partial ({res.message}), and so is the {other.name} one "
                            f"({res2.message}); the search stops rather than count it as absent. Give a "
                            "bracket (bracket=, --bracket) whose ends avoid this value, or a looser energy_tol")
                if lv is not None:
                    # the solve's estimate holds the table's error: kept apart as a continuation's is
                    got = {"energy": lv.energy, "error_estimate": lv.error_estimate,
                           "table_error": table_error(pot, lv.state), "r_max": float(lv.state.r[-1])}
        except ValueError as exc:
            last = min((r for r in points if r["found"]), key=lambda r: r["s"], default=None)
            where = (f"; the level was last found at {vary} = {last['value']:.12g} with E = "
                     f"{energy_text(last['energy'], '.6g')}" if last else "")
            err = _SolverRefused(f"the solver refused {vary} = {p:.12g}: {exc}{where}. The critical value "
                                 "cannot be reached through this point")
            err.reason = f"the solver refused {vary} = {p:.6g} ({exc})"
            err.short = f"{vary} = {p:.6g}, which the solver refuses ({exc})"
            raise err from None
        if got is not None:
            E = float(got["energy"])
            gap = -E if kind == "unbind" else E + 2 * mc2          # distance to threshold
            s_ = math.sqrt(max(gap, 0.0)) if root else gap
            dt = float(got["table_error"])

            def to_s(dE: float) -> float:
                return (dE / (2 * s_) if s_ > 0 else math.inf) if root else dE

            # the fit propagates the solver's own error; the table's, systematic, is added at the end
            rec.update(found=s_ > 0, energy=E, error_estimate=float(got["error_estimate"]), table_error=dt,
                       via=via, r_max=got.get("r_max"), s=s_,
                       s_error=to_s(max(float(got["error_estimate"]) - dt, 0.0)), s_table=to_s(dt), mc2=mc2)
        rec["seconds"] = time.perf_counter() - t_start
        points.append(rec)
        log.info("critical %s: %s = %.15g -> %s", label, vary, p,
                 f"E = {rec['energy']:.15g} ({via})" if rec["found"] else
                 "undecided (within the solver's resolution of the merge)" if rec.get("undecided") else "no level")
        return rec

    def e_of(s_: float, mc2: float) -> float:
        gap = s_ * s_ if root else s_
        return -gap if kind == "unbind" else gap - 2 * mc2

    def found_points() -> list[dict]:
        return [r for r in points if r["found"]]

    def seeds_for(p: float) -> tuple:
        """Seed energies for a new point, best guess first.

        The threshold variable predicted from the nearest points (kept above
        a tenth of the nearest one's), then for unbinding the same seed 100
        times shallower (a 10 times longer mesh), and the energies of the
        nearest point and of a linear extrapolation of E in the parameter.
        """
        fp = found_points()
        near = sorted(fp, key=lambda r: r["s"])
        n0 = near[0]
        guess = e_of(max(_predict_s(fp, p), 0.1 * n0["s"]), n0["mc2"])
        out = [guess]
        if kind == "unbind":
            out.append(guess * 1e-2)
        out.append(n0["energy"])
        if len(near) >= 2 and near[1]["value"] != n0["value"]:
            slope = (near[1]["energy"] - n0["energy"]) / (near[1]["value"] - n0["value"])
            lin = n0["energy"] + slope * (p - n0["value"])
            lo = -2 * n0["mc2"]
            if lo < lin < 0:
                out.append(lin)
        return tuple(out)

    # -- start: the search coordinate, a bound point and a direction ---------------------
    # A parameter that keeps its sign is searched geometrically (x = ln|p|), so that no step
    # reaches 0 or the other sign; others linearly (x = p). See :class:`_Axis`.
    axis = _Axis(0) if bracket is not None and a * b <= 0 else _Axis.probe(build, p_start)
    x_of, p_of = axis.x, axis.p
    log.debug("critical %s: %s searched %s", label, vary, "geometrically" if axis.geometric else "linearly")
    p_out = None
    wall = None        # nearest x in the search direction where the potential refused the value

    def try_evaluate(x: float, **kw) -> dict | None:
        """evaluate at p(x); None when the potential or the solver refuses the value."""
        try:
            return evaluate(p_of(x), **kw)
        except (_Refused, _SolverRefused):
            return None

    def dives_towards(r_in: dict, x_absent: float) -> tuple[bool, dict | None]:
        """Whether the level, bound at r_in, is absent at x_absent because it dived or merged (s falls
        towards x_absent) rather than because it is not yet bound there (s grows: a dive searched on the
        depth of a well, from below binding). Decided by the level 5 % of the way towards x_absent, or, when
        it is gone there too, 5 % of the way away from it; True when neither tells (always for unbinding).
        Also returns the record solved 5 % of the way towards x_absent (None for unbinding or a refusal),
        which a bracketed search's first step would otherwise solve again."""
        if kind == "unbind":
            return True, None
        x_in = x_of(r_in["value"])
        h = math.copysign(0.05 * abs(x_absent - x_in), x_absent - x_in)
        towards = None
        for sign in (1.0, -1.0):
            rec = try_evaluate(x_in + sign * h, seeds=(r_in["energy"],))
            if sign > 0:
                towards = rec
            if rec is not None and rec["found"]:
                return (rec["s"] - r_in["s"]) * sign < 0, towards
        return True, towards

    if bracket is not None:
        ra, rb = evaluate(a), evaluate(b)
        if ra["found"] == rb["found"]:
            where = "both" if ra["found"] else "neither"
            raise ValueError(f"bracket: {label} is bound at {where} of {vary} = {a:g} and {b:g}; give a bracket "
                             f"with the level bound at one end and absent at the other")
        r_in, r_out = (ra, rb) if ra["found"] else (rb, ra)
        p_out = r_out["value"]
        x_in, x_out = x_of(r_in["value"]), x_of(p_out)
        dived, towards = dives_towards(r_in, x_out)
        if not dived:
            raise ValueError(f"bracket: {label} is absent at {vary} = {p_out:g} because it is not yet bound there "
                             "(it moves away from -2 m c^2 towards that end), not because it dived; give an "
                             "absent end past the dive, or only a start value")
        direction = math.copysign(1.0, x_out - x_in)
        step = 0.05 * abs(x_out - x_in)
        rec = towards if towards is not None else try_evaluate(x_in + direction * step, seeds=(r_in["energy"],))
        if rec is not None and not rec["found"]:
            p_out = rec["value"]
    else:
        r0 = evaluate(p_start)
        x0 = x_of(p_start)
        if not r0["found"]:
            # absent at the start: look on both sides, in growing steps, for a value where the level
            # is bound; the last value tried on that side without it closes the bracket
            # (a side is closed where the potential or the solver refuses a value)
            last_absent = {1.0: x0, -1.0: x0}
            closed: dict = {}
            hit = None
            for h in axis.far_steps(p_start):
                for side in (1.0, -1.0):
                    if hit is not None or side in closed or len(points) >= max_evaluations:
                        continue
                    try:
                        rec = evaluate(p_of(x0 + side * h))
                    except StudyError as exc:
                        closed[side] = getattr(exc, "reason", str(exc))
                        continue
                    if rec["found"]:
                        hit = (rec, side)
                    else:
                        last_absent[side] = x0 + side * h
            if hit is None:
                tried = [p_of(x) for x in last_absent.values()]
                why = "".join(f"; {msg}" for msg in closed.values())
                raise ValueError(f"state: {label} is not bound at {vary} = {p_start:g}, nor anywhere tried "
                                 f"from {min(tried):.6g} to {max(tried):.6g}{why}; start where it is bound "
                                 "(or give a bracket)")
            rec, side = hit
            if dives_towards(rec, last_absent[side])[0]:
                p_out = p_of(last_absent[side])
                direction = -side
                step = 0.05 * abs(x_of(rec["value"]) - last_absent[side])
            else:
                # a dive from where the level is not yet bound: on, away from that side, as from a bound start
                direction = side
                step = axis.first_step(rec["value"])
        else:
            step = axis.first_step(p_start)
            direction = 1.0
            r1 = try_evaluate(x0 + step, seeds=(r0["energy"],))
            if r1 is not None and not r1["found"]:
                p_out = r1["value"]
            elif r1 is None or r1["s"] > r0["s"]:
                direction = -1.0
                r2 = try_evaluate(x0 - step, seeds=(r0["energy"],))
                if r2 is None:
                    raise StudyError(f"the potential refuses {vary} = {p_of(x0 + step):.6g} and "
                                     f"{p_of(x0 - step):.6g} on either side of the start {p_start:g}")
                if not r2["found"]:
                    p_out = r2["value"]
    # signed distances in p along the search (x and p run in opposite senses when p < 0 is searched
    # geometrically)
    pdir = direction * (-1.0 if axis.sign < 0 else 1.0)

    def ahead(x: float, ref: float) -> float:
        """Signed distance of the parameter value x beyond ref in the search direction."""
        return (x - ref) * pdir

    def estimate(fp: list[dict]) -> tuple[float | None, float]:
        """Critical value and its uncertainty from the points found.

        A geometric search extrapolates both p(s) and ln|p|(s) (the same threshold expansion,
        ln being analytic at p_c != 0) and keeps the one whose successive fits agree better:
        far from threshold ln|p| is nearer a low-degree polynomial of s (fewer overshoots),
        near it p may be exactly one (Hulthen: s is linear in delta).
        """
        bp, up = _extrapolate(fp, l_fit)
        if not axis.geometric:
            return bp, up
        bx, ux = _extrapolate([{**r, "value": x_of(r["value"])} for r in fp], l_fit)
        if bx is None or bx > 700.0:
            return bp, up
        bx_p = p_of(bx)
        ux_p = max(abs(bx_p) * ux, _precision_floor(bx_p))      # dp = |p| dx
        return (bx_p, ux_p) if bp is None or ux_p < up else (bp, up)

    def undecided_between(p_in: float, p_out: float | None) -> list[float]:
        """Values past p_in (and short of p_out) where the solve was undecided, within its resolution of the
        merge; in the search direction."""
        return sorted((r["value"] for r in points if r.get("undecided") and ahead(r["value"], p_in) > 0
                       and (p_out is None or ahead(p_out, r["value"]) > 0)), key=lambda v: ahead(v, p_in))

    def merge_search(p_out: float | None, step: float) -> CriticalResult:
        """Klein-Gordon: the value where the level meets its antiparticle partner (Notes of :func:`critical`)."""
        wall = None
        status = "tolerance-not-met"
        if any(r.get("undecided") and r["value"] == p_out for r in points):
            p_out = None            # undecided, not absent: the merge may lie a little past it
        while len(points) < max_evaluations:
            fp = found_points()
            n_in = max(fp, key=lambda r: ahead(r["value"], 0.0))
            p_in = n_in["value"]
            tol_p = tol * (abs(p_in) or 1.0)
            fold = _fold(fp, pdir)
            p_v = None if fold is None else fold["value"]
            zone = undecided_between(p_in, p_out)
            if p_out is not None and abs(p_out - p_in) <= tol_p:
                # done, unless the top lies just outside the bracket (within its width): the points turn but
                # are still too far from the top to place it; a point between them brings the parabola closer
                width = abs(p_out - p_in)
                beyond = None if p_v is None else max(-ahead(p_v, p_in), ahead(p_v, p_out))   # <= 0: inside
                if zone or beyond is None or not 0 < beyond <= width:
                    status = "ok"
                    break
            if zone and p_out is not None and \
                    max(abs(zone[0] - p_in), abs(p_out - zone[-1])) <= abs(zone[-1] - zone[0]):
                status = "resolution"       # closed on both sides of the undecided values, as near as they are wide
                break
            x_in, x_out = x_of(p_in), (None if p_out is None else x_of(p_out))
            seeds: tuple = ()
            if zone:
                # close in on the undecided values from the side with the wider gap: beyond them as far as
                # they lie from the found end while nothing past them is absent, else halfway to the bracket end
                x_lo, x_hi = x_of(zone[0]), x_of(zone[-1])
                if x_out is None:
                    tx = x_hi + (x_hi - x_in)
                elif abs(x_out - x_hi) > abs(x_lo - x_in):
                    tx = 0.5 * (x_hi + x_out)
                else:
                    tx = 0.5 * (x_in + x_lo)
            elif p_v is not None and axis.allows(p_v) and ahead(p_v, p_in) > 0 and \
                    (p_out is None or ahead(p_out, p_v) > 0):
                # just short of the top, where a level found is nearer it; within tol of it, just past it
                if ahead(p_v, p_in) <= 0.25 * tol_p:
                    tx = x_of(p_v + pdir * 0.25 * tol_p)
                else:
                    tx = x_in + 0.9 * (x_of(p_v) - x_in)
                if x_out is None and abs(tx - x_in) > axis.max_step:
                    tx = x_in + direction * axis.max_step
                # seed on the parabola's branch of the nearest point: p_v - p ~ (E - E_v)^2
                share = max((p_v - p_of(tx)) / (p_v - p_in), 0.0)
                seeds = (fold["energy"] + (n_in["energy"] - fold["energy"]) * math.sqrt(share),)
            elif x_out is None:
                tx = x_in + direction * step
                step = min(2 * step, axis.max_step)
            else:
                tx = 0.5 * (x_in + x_out)
            if x_out is not None and not ((tx - x_in) * direction > 0 and (x_out - tx) * direction > 0):
                tx = 0.5 * (x_in + x_out)
            if wall is not None and (tx - wall) * direction >= 0:
                tx = 0.5 * (x_in + wall)
            target = p_of(tx)
            if target == p_in or target == p_out or target in zone:
                break
            rec = try_evaluate(tx, seeds=seeds + seeds_for(target))
            if rec is None:
                # a value the potential or the solver refuses: a wall, approached from the found side
                if wall is not None and abs(tx - x_in) <= 1e-3 * abs(wall - x_in):
                    raise StudyError(f"{label} is still found at {vary} = {p_in:.12g} next to {p_of(tx):.12g}, "
                                     "which the potential or the solver refuses; no merge before it")
                wall = tx
                continue
            if not rec["found"] and not rec.get("undecided") and (p_out is None or ahead(p_out, target) > 0):
                p_out = target
        fp = found_points()
        n_in = max(fp, key=lambda r: ahead(r["value"], 0.0))
        p_in = n_in["value"]
        fold = _fold(fp, pdir)
        mc2 = n_in["mc2"]
        extra = {"threshold_hartree": None, "threshold_variable": "none: the top of p(E), where dp/dE = 0",
                 "merge_energy_hartree": None if fold is None else fold["energy"]}
        if p_out is None:
            best = fold["value"] if fold else p_in
            message = (f"{label} was still found at {vary} = {p_in:.12g}{pu} after {len(points)} evaluations, "
                       f"with no value past a merge met; best estimate {best:.12g}")
            return result_of(best, math.inf, "tolerance-not-met", message, p_in, None, n_in, extra)
        inside = fold is not None and ahead(fold["value"], p_in) >= 0 and ahead(p_out, fold["value"]) >= 0
        best = fold["value"] if inside else 0.5 * (p_in + p_out)
        # each energy's error moves the curve p(E) by dE dp/dE there (first order; dp/dE -> 0 at the top)
        spread = 0.0 if fold is None else max(r["error_estimate"] * abs(sl)
                                              for r, sl in zip(fold["points"], fold["slopes"]))
        unc = max(max(abs(best - p_in), abs(p_out - best)) + spread, _precision_floor(best))
        gap = None if fold is None else fold["energy"] + 2 * mc2
        zone = undecided_between(p_in, p_out)
        if (fold is None or not gap > 0 or not inside) and not zone:
            where = ("" if fold is None else f" (the parabola through the nearest points turns at "
                     f"{fold['value']:.12g}, E = {energy_text(fold['energy'], '.10g')})")
            message = (f"{label} is lost between {vary} = {p_in:.12g} (E = {energy_text(n_in['energy'], '.10g')}, "
                       f"{energy_text(n_in['s'], '.4g')} above -2 m c^2) and {p_out:.12g}{pu}, but not as at a merge, where "
                       f"dp/dE -> 0{where}: it may dive (kind='dive') or have been missed there; {best:.12g} is "
                       "not confirmed")
            return result_of(best, unc, "unverified", message, p_in, p_out, n_in, extra)
        # the top's energy, when the parabola turns above -2 m c^2 (with undecided values it need not: the solver
        # itself then says the pair is at its merge)
        at_e = ("" if fold is None or not gap > 0 else
                f", at E = {energy_text(fold['energy'], '.10g')} ({energy_text(gap, '.4g')} above -2 m c^2)")
        undecided = ("" if not zone else
                     f"the solver cannot decide whether {label} is still bound at {len(zone)} value(s) of {vary} "
                     f"between {zone[0]:.12g} and {zone[-1]:.12g} (within its resolution of the merge: a pair this "
                     "close to merging is not told from a merged one in double precision)")
        if status == "ok":
            message = (f"{label} merges with an antiparticle level at {vary} = {best:.{_digits(best, unc)}g} +- "
                       f"{unc:.2g}{pu}{at_e}; found at {p_in:.12g}{pu}, no real level at {p_out:.12g}{pu}"
                       + (f"; {undecided}, inside that bracket" if zone else ""))
        elif status == "resolution":
            status = "tolerance-not-met"
            message = (f"{undecided}, so the bracket ({p_in:.12g}, {p_out:.12g}) cannot narrow to tol = {tol:g}: "
                       f"{label} merges with an antiparticle level at {vary} = {best:.{_digits(best, unc)}g} +- "
                       f"{unc:.2g}{pu}{at_e}")
        else:
            message = (f"the bracket ({p_in:.12g}, {p_out:.12g}) did not narrow to tol = {tol:g} within "
                       f"{len(points)} evaluations; best estimate {best:.12g} +- {unc:.2g}{pu}")
        return result_of(best, unc, status, message, p_in, p_out, n_in, extra)

    def point_charge_merge() -> CriticalResult | None:
        """Klein-Gordon, a bare point charge: the merge is where Z alpha = l + 1/2 exactly (past it gamma, and
        the pair's energies, turn complex). Z(p) is read from the potential alone (the Klein-Gordon setup
        refuses Z alpha >= l + 1/2) and solved for p by secant steps (one for Z itself); the level is then
        solved just short of it. None, for the search to decide, when Z does not follow p or the potential
        stops being a bare point charge on the way."""
        target = (eq0.l + 0.5) * C_AU

        def z_of(p: float) -> float | None:
            try:
                pot = build(p, "schrodinger")[1]       # the Klein-Gordon setup refuses Z alpha >= l + 1/2
            except ValueError:
                return None
            return float(pot.z_vector) if _bare_point_charge(pot) else None

        fp = sorted(found_points(), key=lambda r: abs(r["value"] - p_start))
        if len(fp) < 2:
            return None
        (pa, za), (pb, zb) = ((r["value"], z_of(r["value"])) for r in fp[:2])
        for _ in range(30):
            if za is None or zb is None or za == zb or pa == pb:
                return None
            pc = pb + (target - zb) * (pb - pa) / (zb - za)
            zc = z_of(pc)
            if zc is None or not math.isfinite(pc):
                return None
            pa, za, pb, zb = pb, zb, pc, zc
            if abs(zc - target) <= _precision_floor(target) or pa == pb:
                break
        slope = (zb - za) / (pb - pa) if pb != pa else 0.0
        if abs(zb - target) > 16 * _precision_floor(target) or not slope:
            return None
        unc = max(abs(zb - target) / abs(slope), _precision_floor(pb))
        # the level just short of the merge, and none just past it (the solver refuses Z alpha > l + 1/2)
        h = math.copysign(1e-6 * (abs(pb) or 1.0), slope)
        near = try_evaluate(x_of(pb - h), seeds=(fp[0]["energy"],) + seeds_for(pb))
        past = try_evaluate(x_of(pb + h))
        if near is None or not near["found"] or (past is not None and past["found"]):
            return None
        message = (f"{label} merges with an antiparticle level at {vary} = {pb:.{_digits(pb, unc)}g} +- "
                   f"{unc:.2g}{pu}, where Z alpha = l + 1/2 = {eq0.l + 0.5:g} (exact for a point charge: past it "
                   f"the Klein-Gordon levels are complex); found at {near['value']:.12g}{pu}, E = "
                   f"{energy_text(near['energy'], '.10g')}")
        extra = {"threshold_hartree": None, "threshold_variable": "none: the exact condition Z alpha = l + 1/2",
                 "merge_energy_hartree": None, "merge_rule": POINT_MERGE_RULE}
        return result_of(pb, unc, "ok", message, near["value"], pb + h, near, extra)

    p_unit = parameter_units(potential, scalar, [vary], solve_kwargs.get("units", "atomic"))[vary]
    pu = f" {p_unit}" if p_unit else ""

    def result_of(best: float, unc: float, status: str, message: str, p_in: float, p_out: float | None,
                  near: dict, extra: dict | None = None) -> CriticalResult:
        """The CriticalResult of a finished search (settings, points, and the partial solves noted)."""
        retried = len(retried_at)
        if retried:
            message += (f"; {retried} point(s) solved with {other.name} where the {disc.name} solve was partial "
                        "(its count of levels not certified)")
        if status != "ok":
            log.warning("critical %s: %s", label, message)
        mc2 = near["mc2"]
        settings = {**settings0, "params": {k_: (repr(v) if callable(v) else v) for k_, v in params.items()},
                    "potential": describe(potential), "scalar": describe(scalar), "state": label,
                    "channel": channel, "tol": tol, "energy_tol": energy_tol, "method": disc.describe(),
                    "threshold_hartree": 0.0 if kind == "unbind" else -2 * mc2,
                    "threshold_variable": ("sqrt(-E)" if kind == "unbind" else
                                           "sqrt(E + 2 m c^2)" if root else "E + 2 m c^2"),
                    **(extra or {}), "seconds": time.perf_counter() - t0}
        settings.pop("terms", None)
        if retried_at:
            settings["partial_solves_retried"] = {"method": other.name, "values": retried_at}
        clean = [{k_: r.get(k_) for k_ in ("value", "found", "energy", "error_estimate", "table_error", "via",
                                          "r_max", "seconds")} for r in points]
        return CriticalResult(parameter=vary, value=float(best), uncertainty=float(unc), state=label,
                              equation=eqname, kind=kind, bracket=(p_in, p_out), evaluations=len(points),
                              settings=settings, status=status, message=message, points=tuple(clean),
                              parameter_unit=p_unit)

    if kind == "merge" and _bare_point_charge(pot0):
        exact = point_charge_merge()
        if exact is not None:
            return exact
    if kind == "merge":
        return merge_search(p_out, step)

    def refuse_if_no_dive(fp: list[dict]) -> None:
        """A dive whose estimate left the parameter's range while, at every value found, the potential kept
        the same Coulomb charge Z and was no deeper than that point charge with Z alpha < |kappa|: the level
        dives at none of them, and the search runs out of the range. ValueError: no critical value."""
        charges = set()
        for r in fp:
            eq_r, pot_r, _ = build(r["value"])
            charges.add(_point_charge_bound(pot_r, eq_r))
        if len(charges) != 1 or None in charges:
            return
        z = charges.pop()
        values = [r["value"] for r in fp]
        raise ValueError(
            f"potential: {label} dives at no {vary} tried ({min(values):.4g} to {max(values):.4g}{pu}) and the "
            f"extrapolation leaves the range of {vary}: no deeper than a point charge Z = {z:g}, Z alpha = "
            f"{z / C_AU:.4g} < |kappa| = {abs(eq0.kappa)}, it never dives (Sommerfeld); there is no critical "
            f"{vary}; vary Z instead")

    prev_best = None
    rechecked: set = set()
    status, best, unc = "tolerance-not-met", None, math.inf
    while len(points) < max_evaluations:
        fp = found_points()
        near = min(fp, key=lambda r: r["s"])
        p_in = near["value"]
        best, unc = estimate(fp)
        if kind == "dive" and eqname == "dirac" and best is not None and not axis.allows(best) and len(fp) >= 3:
            refuse_if_no_dive(fp)
        inside = best is not None and ahead(best, p_in) >= -unc and (p_out is None or ahead(p_out, best) >= -unc)
        scale = abs(best) if best else 1.0
        converged = (best is not None and axis.allows(best) and inside and unc <= tol * scale
                     and prev_best is not None and abs(best - prev_best) <= tol * scale
                     and abs(best - p_in) <= bracket_rtol * scale)
        log.debug("critical %s: estimate %.15g +- %.2g (%d points)", label,
                  best if best is not None else math.nan, unc, len(fp))
        if converged:
            margin = max(100 * unc, 100 * tol * scale)
            pv = best + pdir * margin
            if (p_out is not None and abs(p_out - best) <= 10 * margin) or not axis.allows(pv):
                status = "ok"
                break
            if not evaluate(pv, seeds=seeds_for(pv), plain=False)["found"]:
                p_out = pv
                status = "ok"
                break
            prev_best = None
            continue
        prev_best = best
        if p_out is not None and best is not None and len(fp) >= 3 and ahead(best, p_out) > 10 * unc:
            if p_out not in rechecked:
                # the extrapolation points past the nearest "no level" point: check it once more
                # with every seed, in case the level was only missed there
                rechecked.add(p_out)
                if evaluate(p_out, seeds=seeds_for(p_out))["found"]:
                    p_out = None
                continue
            if abs(p_out - p_in) <= 1e-3 * abs(best - p_out):
                status = "lost"
                break
        # the next value, in the search coordinate x: 3/4 of the way to the estimate, a growing step
        # while there is no usable estimate, the midpoint of the bracket when the estimate is outside it
        x_in = x_of(p_in)
        x_out = None if p_out is None else x_of(p_out)
        x_best = x_of(best) if axis.allows(best) else None
        if x_best is None or (x_best - x_in) * direction <= 0:
            tx = x_in + direction * step if x_out is None else 0.5 * (x_in + x_out)
            step = min(2 * step, axis.max_step)
        elif x_out is not None and (x_out - x_best) * direction <= 0:
            tx = 0.5 * (x_in + x_out)
        else:
            tx = x_in + 0.75 * (x_best - x_in)
            if x_out is None and abs(tx - x_in) > axis.max_step:     # no bracket yet: no far leaps
                tx = x_in + direction * axis.max_step
        if x_out is not None and not ((tx - x_in) * direction > 0 and (x_out - tx) * direction > 0):
            tx = 0.5 * (x_in + x_out)
        if wall is not None and (tx - wall) * direction >= 0:
            tx = 0.5 * (x_in + wall)
        target = p_of(tx)
        if target == p_in or (p_out is not None and target == p_out):
            break
        # the plain solver is tried too unless the level is predicted to be gone at the target
        try:
            rec = evaluate(target, seeds=seeds_for(target), plain=_predict_s(found_points(), target) > 0)
        except _Refused as exc:
            # a value outside the parameter's range: never step there again
            wall = tx
            if x_best is not None and (x_best - wall) * direction >= 0:
                raise StudyError(f"{label} is still bound at {vary} = {p_in:.12g} and would {kind} near "
                                 f"{best:.6g} (extrapolated), beyond the parameter's range: {exc}") from None
            continue
        except _SolverRefused as exc:
            # a value the solver refuses (e.g. a potential that binds nothing, or is not finite where the
            # mesh reaches): a wall too; the search narrows from the side where the level is bound, and
            # gives up only once it has closed in on the wall with the estimate still beyond it
            wall = tx
            if x_best is not None and (x_best - wall) * direction >= 0 and \
                    abs(wall - x_in) <= 1e-3 * abs(x_best - x_in):
                raise StudyError(f"{label} is still bound at {vary} = {p_in:.12g} and would {kind} near "
                                 f"{best:.6g} (extrapolated), beyond {exc.short}") from None
            continue
        if not rec["found"] and (p_out is None or ahead(p_out, target) > 0):
            p_out = target
    fp = found_points()
    if best is None:
        raise StudyError(f"{label}: found at fewer than two values of {vary}; no estimate of the critical value")
    near = min(fp, key=lambda r: r["s"])
    p_in = near["value"]
    unc = max(unc, _precision_floor(best))
    if p_out is not None and ahead(best, p_in) > 0 and ahead(p_out, best) > 0:
        # the bracket bounds the error whatever the extrapolation says
        reach = max(abs(best - p_in), abs(p_out - best))
        unc = max(min(unc, reach), _precision_floor(best))
    # s in the caller's unit: the square root of an energy when root
    s_text = (f"{math.sqrt(hartree_to(near['s'] ** 2, e_unit)):.4g} {e_unit}^(1/2)" if root else
              energy_text(near["s"], ".4g"))
    if status == "ok" and p_out is not None and not (ahead(best, p_in) >= -unc and ahead(p_out, best) >= -unc):
        status = "unverified"
    # the tables' error moves the interpolant's critical value itself, which the bracket is of: added after
    # the checks against the bracket, and not bounded by it
    table_unc = _table_uncertainty(fp)
    fit_unc, unc = unc, unc + table_unc
    if status == "ok":
        what = ("estimated error of the extrapolation" if not table_unc else
                f"estimated error of the extrapolation and {table_unc:.2g}{pu} of the table's interpolation")
        message = (f"{label} {'unbinds' if kind == 'unbind' else 'dives'} at {vary} = "
                   f"{best:.{_digits(best, unc)}g} +- {unc:.2g}{pu} ({what}); "
                   f"bound at {p_in:.12g}{pu}, not found at {p_out:.12g}{pu}")
        if table_unc > tol * abs(best):
            status = "tolerance-not-met"
            message += (f"; the table's interpolation error ({table_unc:.2g}{pu}) lies above tol = {tol:g} "
                        f"(relative): give the table more points where the potential bends")
    elif status == "lost":
        status = "unverified"
        message = (f"{label} disappears between {vary} = {p_in:.12g} (E = {energy_text(near['energy'], '.10g')}, "
                   f"{s_text} from threshold) and {p_out:.12g}, before its threshold; "
                   f"extrapolating to the threshold gives {best:.12g}, which is not confirmed")
    elif status == "unverified" or (p_out is not None and ahead(best, p_out) > fit_unc):
        status = "unverified"
        message = (f"the extrapolated value {best:.12g} lies outside the bracket ({p_in:.12g}, {p_out:.12g}): "
                   "the level was lost before its threshold; treat the value with caution")
    else:
        message = (f"the extrapolations did not agree to tol = {tol:g} within {len(points)} evaluations; "
                   f"best estimate {best:.12g} +- {unc:.2g}{pu}")
    result = result_of(best, unc, status, message, p_in, p_out, near)
    if beyond is None:
        return result
    if status != "ok":
        log.warning("critical %s: not followed past the critical value (status %s)", label, status)
        return replace(result, message=f"{result.message}; not followed past the critical value (beyond) since "
                       "the critical value is not confirmed")
    from .supercritical import follow_dived

    direction = 1.0 if (p_out is not None and p_out > p_in) or (p_out is None and best > p_in) else -1.0
    dived = follow_dived(eqname, potential, params, label=atomic_label, channel=channel, vary=vary,
                         critical_value=float(best), direction=direction, points=list(result.points), beyond=beyond,
                         scalar=scalar, setup_kwargs=setup_kwargs, angles=beyond_angles, order=beyond_order,
                         energy_unit=e_unit)
    # followed under its atomic label (the one boundkit.resonances gives); reported in the caller's
    dived = tuple(replace(b, label=convert_label(b.label, labels)) for b in dived)
    result.settings["beyond"] = {"distances": list(beyond), "angles_rad": list(beyond_angles), "order": beyond_order,
                                 "method": "exterior complex scaling (boundkit.resonances)"}
    return replace(result, beyond=dived)
