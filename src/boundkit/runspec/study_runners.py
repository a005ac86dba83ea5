"""The [converge], [critical] and [compare] sections of a run ([scan]: :mod:`.scan_runner`): each calls its
public study (:mod:`boundkit.accuracy`, :mod:`boundkit.studies`), writes its
table and figure, and adds its section of the report.

:class:`StudyRunners` is a mixin of the run engine (it uses ``spec``,
``write``, ``figure``, ``E``, ``particle_kwargs``, ``problems``, ``headline``,
``md`` and ``results``). Critical searches of several states run in worker
processes (:func:`_map_jobs`).
"""
from __future__ import annotations

import importlib
import inspect
import json
import logging
import math
from typing import Any

from .._threads import one_blas_thread, usable_cores
from ..states import convert_label
from .files import _clean, _csv_with_units, _fmt
from .objects import CompareSection, ConvergeSection, CriticalSection

log = logging.getLogger("boundkit.runspec.engine")

_COMPARE_ENERGIES = ("schrodinger", "klein_gordon", "dirac_plus", "dirac_minus")   # the levels of a compare row


class StudyRunners:
    """Runs the [converge], [critical] and [compare] sections."""

    def _converge(self, sec: ConvergeSection, suffix: str) -> bool:
        """Run one [converge] section; returns whether it computed anything (rows, or a reference solve
        that found all the levels there are)."""
        from ..accuracy import SPECTRAL_FAMILIES, converge
        from ..plots import convergence_figure

        spec = self.spec
        pot = spec.models[sec.model].potential(spec.units)
        (kw, cname), = sec.channel.expand(sec.equation, pot.has_spin_orbit)[:1]
        res = converge(sec.equation, pot, None, levels=sec.levels, methods=sec.methods, order=sec.order, tol=sec.tolerance, **kw,
                       **self.particle_kwargs())
        if res.reference_status != "ok":      # as for a solve that misses its tol: a problem, the table stands
            self.problems.append(f"converge{suffix} ({sec.model}, {sec.equation} {cname}): reference solve: "
                                 f"{res.reference_status}: {res.reference_message}")
        rows = [{**r, "label": convert_label(r["label"], spec.labels), "energy": self.E(r["energy"]),
                 "relative_error": r["error"], "relative_change": r["difference"]} for r in res.rows]
        self.write(f"convergence{suffix}.csv", _csv_with_units(
            rows, ["method", "size", "label", "energy", "relative_error", "relative_change"], {"energy": self.e_unit}))
        self.figure(f"convergence{suffix}", f"Convergence, model {sec.model}, {sec.equation} {cname}",
                    lambda p: convergence_figure(res, p))
        self.results.setdefault("converge", []).append({
            "model": sec.model, "equation": sec.equation, "channel": cname, **_clean(res.to_dict(self.e_unit))})
        md = [f"## Convergence{suffix}", "",
              f"Model {sec.model}, {sec.equation} equation, channel {cname}: relative error of the binding energy "
              f"against resolution, measured against a spectral solve at tol {sec.tolerance:g} "
              f"(table `convergence{suffix}.csv`).", "", "| method | level | observed order |", "|---|---|---:|"]
        for (m, lab), v in res.orders.items():
            lab = convert_label(lab, spec.labels)
            md.append(f"| {m} | {lab} | {_fmt(v, 3)} |")
            # a nominal order is the finite differences' alone: the spectral families have none
            if m not in SPECTRAL_FAMILIES and math.isfinite(v):
                self.headline.append(f"observed order of {m} ({sec.model}, {sec.equation} {lab}): {v:.2f} "
                                     f"(nominal {res.settings['fd_order']})")
        md.append("")
        if any(m == "spectral" for m, _ in res.orders):
            md.append("The spectral family converges faster than any power, so its log-log slope is not an "
                      "order; the figure shows the errors themselves.")
            md.append("")
        self.md += md
        return bool(res.rows) or res.reference_status == "ok"

    def _critical(self, sec: CriticalSection, suffix: str) -> bool:
        """Run one [critical] section; returns whether the search of any state returned a result."""
        spec = self.spec
        vector, scalar, params = spec.models[sec.model].arguments(spec.units)
        jobs = [dict(equation=sec.equation, potential=vector, params=params, state=state, vary=sec.parameter,
                     bracket=tuple(sec.bracket) if sec.bracket else None, tol=sec.tolerance,
                     energy_tol=sec.energy_tolerance, method=spec.method, kind=sec.kind, scalar=scalar or None,
                     units=spec.units, labels=spec.labels, energy_unit=self.e_unit, length_unit=self.l_unit,
                     **self.particle_kwargs())
                for state in sec.states]
        rows = []
        for state, (ok, got) in zip(sec.states, _map_jobs(_critical_job, jobs, sec.workers, self.tick)):
            if not ok:
                self.problems.append(f"critical {sec.parameter} of {state} ({sec.model}): {got}")
                rows.append({"state": state, "error": got})
                continue
            rows.append({"state": state, **got})
            if got.get("status", "ok") != "ok":
                self.problems.append(f"critical {sec.parameter} of {state} ({sec.model}): {got.get('status')}: "
                                     f"{got.get('message', '')}")
        flat = [{k: v for k, v in r.items() if not isinstance(v, (dict, list))} for r in rows]
        p_unit = next((r.get("parameter_unit") for r in rows if r.get("parameter_unit")), "")
        if not p_unit and not any("error" not in r for r in rows):
            # every search failed: the unit from the model's own declaration of the parameter
            from ..studies._common import parameter_units

            p_unit = parameter_units(vector, scalar, [sec.parameter], spec.units)[sec.parameter]
        self.write(f"critical{suffix}.csv", _csv_with_units(flat, None, {"value": p_unit, "uncertainty": p_unit}))
        self.results.setdefault("critical", []).append({"model": sec.model, "equation": sec.equation,
                                                         "parameter": sec.parameter, "units": spec.units,
                                                         "states": rows})
        md = [f"## Critical {sec.parameter}{suffix}", "",
              f"Model {sec.model}, {sec.equation} equation: the value of {sec.parameter} at which each level stops "
              f"being bound (table `critical{suffix}.csv`" + (f"; {sec.parameter} in {p_unit}" if p_unit else "")
              + "). "
              "The value is extrapolated to the threshold from the bound points, so its uncertainty is far "
              "smaller than the bracket of solved values around it.", "",
              f"| state | critical {sec.parameter}" + (f" ({p_unit})" if p_unit else "") + " | details |",
              "|---|---:|---|"]
        for r in rows:
            value = _critical_value(r, sec.parameter)
            if "error" in r:
                details = r["error"]
            else:
                bits = []
                if isinstance(r.get("uncertainty"), float):
                    bits.append(f"+- {r['uncertainty']:.2g}" + (f" {p_unit}" if p_unit else ""))
                bits += [f"status {r['status']}"] if "status" in r else []
                bits += [f"{r['evaluations']} evaluations"] if "evaluations" in r else []
                details = ", ".join(bits)
            md.append(f"| {r['state']} | {_fmt(value, 8)} | {details} |")
            if value is not None:
                self.headline.append(f"critical {sec.parameter} of {r['state']} ({sec.model}, {sec.equation}): "
                                     f"{_fmt(value, 7)}" + (f" {p_unit}" if p_unit else ""))
        md.append("")
        self.md += md
        return any("error" not in r for r in rows)

    def _compare(self, sec: CompareSection, suffix: str) -> bool:
        """Run one [compare] section; returns whether any channel found a level, or all there are."""
        studies = importlib.import_module("boundkit.studies")
        spec = self.spec
        pot = spec.models[sec.model].potential(spec.units)
        res = _call(studies.compare, potential=pot, params=None, l_max=sec.l_max, levels=sec.levels,
                    particle=spec.particle.name, mass_mev=spec.particle.mass_mev,
                    nucleus_mass_mev=spec.particle.nucleus_mass_mev, tol=sec.tolerance, method=spec.method,
                    labels=spec.labels)
        if not (hasattr(res, "to_dict") and hasattr(res, "table")):
            raise ValueError("boundkit.studies.compare returned no comparison (this installation's studies "
                             "package does not provide it yet)")
        data = _clean(res.to_dict(self.e_unit))
        rows = _rows_of_dict(data)
        energy_cols = {k: self.e_unit for r in rows for k, v in r.items()
                       if k not in ("n", "l", "label", "j_plus", "j_minus") and (v is None or isinstance(v, float))}
        self.write(f"compare{suffix}.csv", _csv_with_units(rows, None, energy_cols) if rows
                   else json.dumps(data, indent=2))
        self.results.setdefault("compare", []).append({"model": sec.model, "energy_unit": self.e_unit, **data})
        md = [f"## Equations compared{suffix}", "",
              f"Model {sec.model}: the same levels from the Schrodinger, Klein-Gordon and Dirac equations, "
              f"l <= {sec.l_max} (table `compare{suffix}.csv`; energies in {self.e_unit}).", "", "```",
              str(res.table(self.e_unit)).rstrip(), "```", ""]
        self.md += md
        if getattr(res, "success", True) is False:
            bad = {k: v for k, v in getattr(res, "statuses", {}).items() if v != "ok"}
            self.problems.append(f"compare{suffix} ({sec.model}): not every level was found or met its tolerance: "
                                 + "; ".join(f"{k}: {v}" for k, v in bad.items()))
        for row in rows[:1]:
            parts = [f"{name} {_fmt(row.get(key), 6)}" for key, name in
                     (("shift_klein_gordon", "Klein-Gordon"), ("shift_dirac_plus", "Dirac"))
                     if row.get(key) is not None]
            if parts:
                self.headline.append(f"compare ({sec.model}), {row.get('label')}: shift from Schrodinger: "
                                     + ", ".join(parts) + f" {self.e_unit}")
        return (any(s == "ok" for s in getattr(res, "statuses", {}).values())
                or any(r.get(k) is not None for r in res.rows for k in _COMPARE_ENERGIES))


def _call(func, **kwargs):
    """Call ``func`` with the keywords it accepts; refuse loudly when one it lacks carries information."""
    sig = inspect.signature(func)
    accepts_any = any(p.kind is inspect.Parameter.VAR_KEYWORD for p in sig.parameters.values())
    if accepts_any:
        return func(**kwargs)
    given = {k: v for k, v in kwargs.items() if k in sig.parameters}
    lost = [k for k, v in kwargs.items() if k not in sig.parameters and v not in (None, "atomic", [], ())]
    if lost:
        raise ValueError(f"boundkit.studies.{func.__name__} does not take {', '.join(lost)}, which this spec needs")
    return func(**given)


def _rows_of(res) -> list[dict]:
    rows = getattr(res, "rows", None)
    if rows is None and hasattr(res, "to_dict"):
        rows = res.to_dict().get("rows", [])
    return [dict(r) if not isinstance(r, dict) else r for r in (rows or [])]


def _rows_of_dict(data: dict) -> list[dict]:
    for key in ("rows", "levels", "table"):
        v = data.get(key)
        if isinstance(v, list) and v and all(isinstance(x, dict) for x in v):
            return [{k: x for k, x in r.items() if not isinstance(x, (dict, list))} for r in v]
    return []


def _critical_job(kwargs: dict) -> tuple[bool, Any]:
    """One critical search (top level, so that worker processes can run it).

    Returns (True, the result as a JSON-ready dict) or (False, the message of
    the ValueError or StudyError that stopped it); energies in ``kwargs['energy_unit']``, lengths in
    ``kwargs['length_unit']`` (taken out: the search itself has no length unit).
    """
    kwargs = dict(kwargs)
    length = kwargs.pop("length_unit", "bohr")
    studies = importlib.import_module("boundkit.studies")
    try:
        with one_blas_thread():   # small matrices: threads only contend
            res = _call(studies.critical, **kwargs)
    except (ValueError, RuntimeError) as exc:
        return False, str(exc)
    unit = kwargs.get("energy_unit") or "hartree"
    return True, (_clean(res.to_dict(unit, length)) if hasattr(res, "to_dict") else {"value": _clean(res)})


def _workers(workers: int | None) -> int | None:
    """A spec's workers, at most the cores this process may use (a spec may come from a larger machine)."""
    cores = usable_cores()
    if workers is not None and workers > cores:
        log.warning("workers = %d in the spec, but this process may use %d cores: using %d", workers, cores, cores)
        return cores
    return workers


def _map_jobs(func, jobs: list, workers: int | None, on_done=None) -> list:
    """``[func(job) for job in jobs]``, on up to ``workers`` processes (default: all cores);
    ``on_done()`` is called after each finished job."""
    on_done = on_done or (lambda: None)

    def here() -> list:
        out = []
        for j in jobs:
            out.append(func(j))
            on_done()
        return out

    workers = min(_workers(workers) or usable_cores(), len(jobs))
    if workers <= 1:
        return here()
    try:
        import pickle

        pickle.dumps(jobs)
    except Exception as exc:  # noqa: BLE001 - unpicklable terms: run here instead
        log.info("jobs cannot go to worker processes (%s); running them here", exc)
        return here()
    from concurrent.futures import ProcessPoolExecutor

    out = []
    with ProcessPoolExecutor(max_workers=workers) as pool:
        for got in pool.map(func, jobs):
            out.append(got)
            on_done()
    return out


def _critical_value(row: dict, parameter: str) -> float | None:
    for key in ("critical", "value", parameter, "critical_value"):
        v = row.get(key)
        if isinstance(v, (int, float)) and not isinstance(v, bool) and math.isfinite(v):
            return float(v)
    return None
