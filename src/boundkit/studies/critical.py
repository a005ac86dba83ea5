"""Critical parameters: where a level unbinds (E -> 0) or dives into the
lower continuum (E -> -2 m c^2).

The level is followed by continuation: each new parameter value is seeded
with the energy predicted from the points already found, and refined with
the solver's own per-level machinery (see
:func:`boundkit.studies._common.seeded_level`); when that fails the plain
solver is tried too. A point where neither finds the level counts as one
where the level does not exist. The critical value comes from inverse
polynomial extrapolation of the parameter against a threshold variable that
vanishes linearly (or, for l > 0, quadratically) at the critical point, and
is accepted only when successive extrapolations agree to ``tol`` and a
point just past it has no level.
"""
from __future__ import annotations

import logging
import math
import time
from dataclasses import dataclass, field
from typing import Any, Mapping

import numpy as np

from .._checks import check_int, check_positive
from ..discretize import get_method
from ..solver import setup, solve_channel
from ..units import C_AU, constants_record
from ._common import (StudyError, canonical_equation, describe, rebuild_potential, resolve_params,
                      seeded_level, state_channel)

__all__ = ["critical", "CriticalResult"]

log = logging.getLogger(__name__)

_KINDS = ("unbind", "dive")
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
        (``kind = 'unbind'``) or -2 m c^2 (``kind = 'dive'``).
    uncertainty : float
        Estimated absolute uncertainty of ``value`` (agreement of successive
        extrapolations plus the propagated energy error estimates).
    state : str
        The level's label (``1s``, ``2p3/2``, ...).
    equation : str
    kind : str
        ``'unbind'`` or ``'dive'``.
    bracket : tuple
        (nearest value where the level was found, nearest value past it
        where it was not); the second entry is None if no such point was
        evaluated.
    evaluations : int
        Number of parameter values solved.
    settings : dict
        Potential, fixed parameters, channel, tolerances, method, particle.
    status : str
        ``'ok'``; ``'tolerance-not-met'`` (the extrapolations did not agree
        to ``tol`` within the evaluation budget); or ``'unverified'`` (the
        value lies outside the bracket: the level was lost before the
        extrapolated threshold).
    message : str
        One line saying what happened.
    points : tuple of dict
        Every evaluation: value, found, energy (hartree), error_estimate,
        via (``continuation`` or ``solver``), r_max (outer end of the
        level's mesh, bohr), seconds.
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

    @property
    def success(self) -> bool:
        return self.status == "ok"

    def to_dict(self) -> dict[str, Any]:
        """A JSON-ready record."""
        return {"parameter": self.parameter, "value": self.value, "uncertainty": self.uncertainty,
                "state": self.state, "equation": self.equation, "kind": self.kind,
                "bracket": list(self.bracket), "evaluations": self.evaluations, "status": self.status,
                "message": self.message, "settings": self.settings, "constants": constants_record(),
                "units": {"energy": "hartree", "length": "bohr"}, "points": [dict(p) for p in self.points]}

    def __repr__(self) -> str:
        return (f"CriticalResult({self.state} {self.equation}, {self.kind}: {self.parameter} = "
                f"{self.value:.12g} +- {self.uncertainty:.2g}, status={self.status!r}, "
                f"{self.evaluations} evaluations)")


def _exponents(kind: str, l: int, count: int) -> list[int]:
    """Powers of s in the expansion of p - p_c near threshold.

    Diving: all powers (s = E + 2 m c^2 vanishes linearly). Unbinding, with
    s = kappa = sqrt(-E): the effective-range expansion of a short-range
    potential gives F(-kappa^2, p) = (-1)^l kappa^(2l+1) with F analytic, so
    p - p_c holds kappa^e for even e >= 2 and for every e >= 2l + 1: all
    powers for l = 0, no linear term for l > 0.
    """
    if kind == "dive":
        return list(range(1, count + 1))
    out, e = [], 1
    while len(out) < count:
        if e % 2 == 0 or e >= 2 * l + 1:
            out.append(e)
        e += 1
    return out


def _fit_at_zero(s: list[float], p: list[float], exps: list[int]) -> float:
    """p(0) of p(s) = c_0 + sum_i c_i s^exps[i] through the given points (as many as terms)."""
    x = np.asarray(s, float) / max(s)
    A = np.column_stack([np.ones_like(x)] + [x**e for e in exps])
    return float(np.linalg.solve(A, np.asarray(p, float))[0])


def _extrapolate(points: list[dict], kind: str = "unbind", l: int = 0) -> tuple[float | None, float]:
    """Parameter value where the threshold variable s vanishes.

    Interpolates p as c_0 + sum c_i s^(e_i) (exponents from
    :func:`_exponents`) through the d + 1 points nearest to threshold
    (d = 1..4) and takes c_0; returns the estimate of the degree whose change
    from the degree below is smallest, and that change (inf with fewer than
    three points).
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
    exps = _exponents(kind, l, len(near) - 1)
    est = []
    for d in range(1, len(near)):
        try:
            est.append(_fit_at_zero(s[: d + 1], p[: d + 1], exps[:d]))
        except np.linalg.LinAlgError:
            break
    if not est:
        return None, math.inf
    if len(est) == 1:
        return est[0], math.inf
    diffs = [abs(est[i] - est[i - 1]) for i in range(1, len(est))]
    i = int(np.argmin(diffs))
    return est[i + 1], diffs[i]


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
    """Threshold variable at p predicted from the (up to) three nearest points."""
    near = sorted(points, key=lambda r: r["s"])[:3]
    return _lagrange_at_zero([r["value"] - p for r in near], [r["s"] for r in near])


def critical(*args, **kwargs) -> "CriticalResult":
    """Critical value of a parameter at which a level unbinds or dives (see :func:`_critical`).

    BLAS runs single-threaded inside, as in :func:`boundkit.solver.solve_channel`: the matrices
    are small, and two searches side by side ran five times slower with threads (measured).
    """
    from threadpoolctl import threadpool_limits

    with threadpool_limits(limits=1, user_api="blas"):
        return _critical(*args, **kwargs)


def _critical(equation: str, potential, params: Mapping[str, Any] | None, *, state: str, vary: str,
             bracket: tuple[float, float] | None = None, tol: float = 1e-8, kind: str | None = None,
             energy_tol: float = 1e-10, bracket_rtol: float = 1e-2, max_evaluations: int = 40,
             method: str = "auto", scalar=None,
             **solve_kwargs) -> CriticalResult:
    """Critical value of a parameter at which a level unbinds or dives.

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
    kind : {'unbind', 'dive'}, optional
        Default: ``'dive'`` when the potential has a Coulomb tail (such a
        level never unbinds), else ``'unbind'``.
    energy_tol : float
        Relative tolerance of each energy (default 1e-10).
    bracket_rtol : float
        The search goes on until the level has been found within
        ``bracket_rtol`` |p_c| of the critical value (default 1e-2), so the
        bracket is tight on both sides.
    max_evaluations : int
        Budget of parameter values solved (default 40).
    method, scalar, **solve_kwargs
        As for :func:`boundkit.solve` (``particle``, ``mass_mev``,
        ``nucleus_mass_mev``, ``units``, ``order``).

    Returns
    -------
    CriticalResult

    Raises
    ------
    ValueError
        Bad input: a malformed state label, a bracket with the level bound
        (or absent) at both ends, a start value where the level is absent.
    StudyError
        The solver refused a parameter value met during the search.

    Notes
    -----
    Threshold variable. Unbinding: s = kappa = sqrt(-E). For a short-range
    potential the effective-range expansion gives the bound-state condition
    F(-kappa^2, p) = (-1)^l kappa^(2l+1) with F analytic, so near threshold

        p - p_c = sum_e a_e kappa^e,   e even >= 2, or e >= 2l + 1:

    all powers for l = 0 (E ~ -(p - p_c)^2), no linear term for l > 0
    (E ~ -(p - p_c)). Diving: s = E + 2 m c^2 (m the reduced mass), which
    vanishes linearly at the critical charge, p - p_c = a_1 s + a_2 s^2 + ...

    Search. The level is followed from the start value towards threshold
    (each point is seeded from the points found; the plain solver is tried
    as well unless the level is predicted to be past threshold there);
    each step aims at 3/4 of the way to the current estimate of p_c, so s
    falls by about 4 per step. The estimate interpolates p by the series
    above (2 to 5 terms) through as many points nearest threshold and takes
    its constant term; its
    uncertainty is the smallest change between successive numbers of terms plus the
    energy error estimates propagated through dp/ds. It is accepted when
    that uncertainty and the change from the previous step are both below
    ``tol`` |p_c|, the level has been found within ``bracket_rtol`` |p_c| of
    p_c, and a point just past p_c (by 100 times the uncertainty) holds no
    level. A point where no level is found closes the bracket; the search
    then bisects until the estimate lies inside it. Such a point is checked
    once more (from a shallower seed) when the extrapolation keeps pointing
    past it, since a level can be missed by a solve.

    Mesh. The solver sizes each level's mesh from its energy: the outer end
    is where the WKB estimate of the radial function has fallen by e^-42,
    about r_t + 42/sqrt(2 m |E|) near E = 0, so the domain grows
    automatically as the level spreads out (``points[i]['r_max']`` records
    it). Near the lower continuum a Coulomb tail keeps the level compact.
    """
    eqname = canonical_equation(equation)
    channel, k, label = state_channel(eqname, state)
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
    if kind is not None and kind not in _KINDS:
        raise ValueError(f"kind: must be 'unbind' or 'dive', got {kind!r}")
    varied = {vary} | {n for n, v in params.items() if callable(v)}
    t0 = time.perf_counter()

    def build(p: float):
        values = resolve_params(params, {vary: p})
        return setup(eqname, rebuild_potential(potential, values, varied), values,
                     scalar=rebuild_potential(scalar, values, varied), **channel, **setup_kwargs)

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
            raise ValueError(f"params: give a start value of {vary!r} where {label} is bound "
                             f"(params[{vary!r}]) or a bracket")
        p_start = float(params[vary])
    eq0, pot0, settings0 = build(p_start)          # bad input surfaces here as ValueError
    l_channel = eq0.l                              # orbital l of the (large) component
    if kind is None:
        kind = "dive" if pot0.tail_charge > 0 else "unbind"
    if pot0.confining:
        raise ValueError("potential: a confining potential binds every level; there is no critical value")
    if kind == "dive" and eqname == "schrodinger":
        raise ValueError("kind: diving into the lower continuum needs the Dirac or Klein-Gordon equation")
    if kind == "unbind" and pot0.tail_charge > 0:
        raise ValueError(f"kind: a potential with a Coulomb tail (charge {pot0.tail_charge:g}) binds "
                         "infinitely many levels and none unbinds; use a screened potential or kind='dive'")

    points: list[dict] = []

    def evaluate(p: float, seeds: tuple = (), plain: bool = True) -> dict:
        """Solve at p: from each seed energy in turn, then (if ``plain``) with the plain solver."""
        rec: dict[str, Any] = {"value": float(p), "found": False, "energy": None, "error_estimate": None,
                               "via": None, "r_max": None}
        t_start = time.perf_counter()
        try:
            eq, pot, _ = build(p)
        except ValueError as exc:
            if not points:
                raise
            raise StudyError(f"{vary} = {p:.12g} is outside the parameter's range ({exc}); "
                             f"give a bracket inside it") from None
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
                if lv is not None:
                    got = {"energy": lv.energy, "error_estimate": lv.error_estimate,
                           "r_max": float(lv.state.r[-1])}
                    via = "solver"
        except ValueError as exc:
            last = min((r for r in points if r["found"]), key=lambda r: r["s"], default=None)
            where = (f"; the level was last found at {vary} = {last['value']:.12g} with E = "
                     f"{last['energy']:.6g} hartree" if last else "")
            raise StudyError(f"the solver refused {vary} = {p:.12g}: {exc}{where}. The critical value "
                             "cannot be reached through this point") from None
        if got is not None:
            E = float(got["energy"])
            s_ = math.sqrt(max(-E, 0.0)) if kind == "unbind" else E + 2 * mc2
            ds = (got["error_estimate"] / (2 * s_) if s_ > 0 else math.inf) if kind == "unbind" else \
                got["error_estimate"]
            rec.update(found=s_ > 0, energy=E, error_estimate=float(got["error_estimate"]), via=via,
                       r_max=got.get("r_max"), s=s_, s_error=ds, mc2=mc2)
        rec["seconds"] = time.perf_counter() - t_start
        points.append(rec)
        log.info("critical %s: %s = %.15g -> %s", label, vary, p,
                 f"E = {rec['energy']:.15g} ({via})" if rec["found"] else "no level")
        return rec

    def e_of(s_: float, mc2: float) -> float:
        return -s_ * s_ if kind == "unbind" else s_ - 2 * mc2

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

    # -- start: a bound point and a direction --------------------------------------------
    p_out = None
    if bracket is not None:
        ra, rb = evaluate(a), evaluate(b)
        if ra["found"] == rb["found"]:
            where = "both" if ra["found"] else "neither"
            raise ValueError(f"bracket: {label} is bound at {where} of {vary} = {a:g} and {b:g}; give a bracket "
                             f"with the level bound at one end and absent at the other")
        r_in, r_out = (ra, rb) if ra["found"] else (rb, ra)
        p_out = r_out["value"]
        direction = math.copysign(1.0, p_out - r_in["value"])
        step = 0.05 * abs(p_out - r_in["value"])
        if not evaluate(r_in["value"] + direction * step, seeds=(r_in["energy"],))["found"]:
            p_out = points[-1]["value"]
    else:
        r0 = evaluate(p_start)
        if not r0["found"]:
            raise ValueError(f"state: {label} is not bound at {vary} = {p_start:g}; start where it is bound "
                             "(or give a bracket)")
        step = 0.02 * abs(p_start) if p_start != 0 else 0.02
        r1 = evaluate(p_start + step, seeds=(r0["energy"],))
        direction = 1.0
        if not r1["found"]:
            p_out = r1["value"]
        elif r1["s"] > r0["s"]:
            direction = -1.0
            if not evaluate(p_start - step, seeds=(r0["energy"],))["found"]:
                p_out = points[-1]["value"]

    def ahead(x: float, ref: float) -> float:
        """Signed distance of x beyond ref in the search direction."""
        return (x - ref) * direction

    prev_best = None
    rechecked: set = set()
    status, best, unc = "tolerance-not-met", None, math.inf
    while len(points) < max_evaluations:
        fp = found_points()
        near = min(fp, key=lambda r: r["s"])
        p_in = near["value"]
        best, unc_fit = _extrapolate(fp, kind, l_channel)
        unc = math.inf
        if best is not None:
            two = sorted(fp, key=lambda r: r["s"])[:2]
            dpds = abs((two[1]["value"] - two[0]["value"]) / (two[1]["s"] - two[0]["s"])) \
                if len(two) == 2 and two[1]["s"] != two[0]["s"] else 0.0
            unc = unc_fit + dpds * near["s_error"]
        inside = best is not None and ahead(best, p_in) >= -unc and (p_out is None or ahead(p_out, best) >= -unc)
        scale = abs(best) if best else 1.0
        converged = (best is not None and inside and unc <= tol * scale and prev_best is not None
                     and abs(best - prev_best) <= tol * scale and abs(best - p_in) <= bracket_rtol * scale)
        log.debug("critical %s: estimate %.15g +- %.2g (%d points)", label,
                  best if best is not None else math.nan, unc, len(fp))
        if converged:
            margin = max(100 * unc, 100 * tol * scale)
            if p_out is not None and abs(p_out - best) <= 10 * margin:
                status = "ok"
                break
            pv = best + direction * margin
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
        if best is None or ahead(best, p_in) <= 0:
            target = p_in + direction * step if p_out is None else 0.5 * (p_in + p_out)
            step *= 2
        elif p_out is not None and ahead(p_out, best) <= 0:
            target = 0.5 * (p_in + p_out)
        else:
            target = p_in + 0.75 * (best - p_in)
        if p_out is not None and not (ahead(target, p_in) > 0 and ahead(p_out, target) > 0):
            target = 0.5 * (p_in + p_out)
        if target == p_in or (p_out is not None and target == p_out):
            break
        # the plain solver is tried too unless the level is predicted to be gone at the target
        rec = evaluate(target, seeds=seeds_for(target), plain=_predict_s(found_points(), target) > 0)
        if not rec["found"] and (p_out is None or ahead(p_out, target) > 0):
            p_out = target
    fp = found_points()
    if best is None:
        raise StudyError(f"{label}: found at fewer than two values of {vary}; no estimate of the critical value")
    near = min(fp, key=lambda r: r["s"])
    p_in = near["value"]
    unit_s = "hartree^(1/2)" if kind == "unbind" else "hartree"
    if status == "ok" and p_out is not None and not (ahead(best, p_in) >= -unc and ahead(p_out, best) >= -unc):
        status = "unverified"
    if status == "ok":
        message = (f"{label} {'unbinds' if kind == 'unbind' else 'dives'} at {vary} = {best:.12g} "
                   f"(+- {unc:.2g}); found at {p_in:.12g}, absent at {p_out:.12g}")
    elif status == "lost":
        status = "unverified"
        message = (f"{label} disappears between {vary} = {p_in:.12g} (E = {near['energy']:.10g} hartree, "
                   f"{near['s']:.4g} {unit_s} from threshold) and {p_out:.12g}, before its threshold; "
                   f"extrapolating to the threshold gives {best:.12g}, which is not confirmed")
    elif status == "unverified" or (p_out is not None and ahead(best, p_out) > unc):
        status = "unverified"
        message = (f"the extrapolated value {best:.12g} lies outside the bracket ({p_in:.12g}, {p_out:.12g}): "
                   "the level was lost before its threshold; treat the value with caution")
    else:
        message = (f"the extrapolations did not agree to tol = {tol:g} within {len(points)} evaluations; "
                   f"best estimate {best:.12g} +- {unc:.2g}")
    if status != "ok":
        log.warning("critical %s: %s", label, message)
    mc2 = near["mc2"]
    settings = {**settings0, "params": {k_: (repr(v) if callable(v) else v) for k_, v in params.items()},
                "potential": describe(potential), "scalar": describe(scalar), "state": label,
                "channel": channel, "tol": tol, "energy_tol": energy_tol, "method": disc.describe(),
                "threshold_hartree": 0.0 if kind == "unbind" else -2 * mc2,
                "threshold_variable": "sqrt(-E)" if kind == "unbind" else "E + 2 m c^2",
                "seconds": time.perf_counter() - t0}
    settings.pop("terms", None)
    clean = []
    for r in points:
        clean.append({k_: r.get(k_) for k_ in ("value", "found", "energy", "error_estimate", "via", "r_max",
                                                "seconds")})
    return CriticalResult(parameter=vary, value=float(best), uncertainty=float(unc), state=label,
                          equation=eqname, kind=kind, bracket=(p_in, p_out), evaluations=len(points),
                          settings=settings, status=status, message=message, points=tuple(clean))
