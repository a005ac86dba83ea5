"""The [converge], [scan], [critical] and [compare] sections of a run: each calls its
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
import os
from typing import Any

import numpy as np

from .._threads import one_blas_thread
from .figures import _scan_figure
from ..reporting import difference_error, format_difference
from ..states import convert_label, label_sort_key
from .files import _clean, _csv_text, _csv_with_units, _fmt, _slug
from .objects import CompareSection, ConvergeSection, CriticalSection, ScanSection, _channels_for

log = logging.getLogger("boundkit.runspec.engine")


class StudyRunners:
    """Runs the [converge], [scan], [critical] and [compare] sections."""

    def _converge(self, sec: ConvergeSection, suffix: str) -> None:
        from ..accuracy import converge
        from ..plots import convergence_figure

        spec = self.spec
        pot = spec.models[sec.model].potential(spec.units)
        (kw, cname), = sec.channel.expand(sec.equation)[:1]
        res = converge(sec.equation, pot, None, levels=sec.levels, methods=sec.methods, order=sec.order, tol=sec.tolerance, **kw,
                       **self.particle_kwargs())
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
            if m != "spectral" and math.isfinite(v):
                self.headline.append(f"observed order of {m} ({sec.model}, {sec.equation} {lab}): {v:.2f} "
                                     f"(nominal {sec.order})")
        md.append("")
        if any(m == "spectral" for m, _ in res.orders):
            md.append("The spectral family converges faster than any power, so its log-log slope is not an "
                      "order; the figure shows the errors themselves.")
            md.append("")
        self.md += md

    def _scan(self, sec: ScanSection, suffix: str) -> None:
        studies = importlib.import_module("boundkit.studies")
        spec = self.spec
        vector, scalar, params = spec.models[sec.model].arguments(spec.units)
        channels = []
        for kw, _name, _n in _channels_for(sec.channels, sec.equation, sec.levels):
            channels.append(dict(kw))
        levels = max(n for _kw, _name, n in _channels_for(sec.channels, sec.equation, sec.levels))
        vary = {sec.parameter: list(sec.values)}
        if sec.second is not None:
            vary[sec.second[0]] = list(sec.second[1])
        res = _call(studies.scan, equation=sec.equation, potential=vector, params=params,
                    vary=vary, channels=channels, levels=levels, tol=sec.tolerance,
                    method=sec.method, workers=_workers(sec.workers), scalar=scalar or None, units=spec.units,
                    max_points=sec.max_points * len(channels), labels=spec.labels, progress=self.progress_hook(),
                    **self.particle_kwargs())
        rows = [dict(r) for r in _rows_of(res)]
        if hasattr(res, "to_csv"):
            self.write(f"scan{suffix}.csv", res.to_csv(self.e_unit))
        else:
            self.write(f"scan{suffix}.csv", _csv_text(rows))
        table = _scan_table(rows, sec.parameter)
        for status in ("error", "tolerance-not-met"):
            bad = [r for r in rows if r.get("status") == status]
            if bad:
                where = sorted({float(r[sec.parameter]) for r in bad if sec.parameter in r})
                first = next((r.get("message") for r in bad if r.get("message")), "")
                self.problems.append(f"scan{suffix} ({sec.model}): {len(bad)} level(s) with status {status} at "
                                     f"{sec.parameter} = {', '.join(f'{v:g}' for v in where)}"
                                     + (f" ({first})" if first else ""))
        if sec.second is not None:
            self._scan_2d(sec, suffix, res, rows)
            return
        caption = f"Levels against {sec.parameter}, model {sec.model}"
        try:
            figures = importlib.import_module("boundkit.studies.figures")
            self.figure(f"scan{suffix}", caption, lambda p: _call(figures.scan_figure, result=res, path=p,
                                                                  unit=self.e_unit,
                                                                  subject=spec.models[sec.model].label))
        except ImportError:
            log.info("boundkit.studies.figures is not available; drawing the scan with the run engine's own figure")
            self.figure(f"scan{suffix}", caption,
                        lambda p: _scan_figure(table, sec.parameter, self.e_unit, p,
                                               x_unit=getattr(res, "parameter_units", {}).get(sec.parameter, ""),
                                               title=f"{spec.models[sec.model].label}: levels against "
                                                     f"{sec.parameter}"))
        entry = {"model": sec.model, "equation": sec.equation, "parameter": sec.parameter,
                 "values": list(sec.values), "energy_unit_of_rows": "hartree", "rows": rows}
        if hasattr(res, "to_dict"):
            try:
                entry["result"] = _clean(res.to_dict())
            except Exception:  # noqa: BLE001 - a richer record is optional
                pass
        md = [f"## Scan{suffix}: levels against {sec.parameter}", "",
              f"Model {sec.model}, {sec.equation} equation, {len(sec.values)} values of {sec.parameter} from "
              f"{min(sec.values):g} to {max(sec.values):g} (table `scan{suffix}.csv`, energies in {self.e_unit}).", ""]
        if table:
            labels = sorted({lab for per in table.values() for lab in per},
                            key=lambda lab: label_sort_key(lab, spec.labels))
            md += [f"| {sec.parameter} | " + " | ".join(f"{lab} ({self.e_unit})" for lab in labels) + " |",
                   "|---:|" + "---:|" * len(labels)]
            for v in sorted(table):
                md.append(f"| {v:g} | " + " | ".join(_fmt(self.E(table[v].get(lab)), 10) for lab in labels) + " |")
            md.append("")
            gone = [lab for lab in labels if any(lab not in table[v] for v in table)]
            if gone:
                md.append("A blank (-) means the level was not found bound at that value.")
                md.append("")
        diffs = []
        p_unit = getattr(res, "parameter_units", {}).get(sec.parameter, "")
        errors = _scan_table(rows, sec.parameter, "error_estimate")
        for a, b in sec.differences:
            pts = [(v, table[v][a] - table[v][b],
                    difference_error(table[v][a], table[v][b], errors.get(v, {}).get(a, 0.0),
                                     errors.get(v, {}).get(b, 0.0)))
                   for v in sorted(table) if a in table[v] and b in table[v]]
            if not pts:
                self.problems.append(f"scan{suffix}: E({a}) - E({b}) not available at any value")
                continue
            item = {"a": a, "b": b, "values": [p[0] for p in pts], "difference": [self.E(p[1]) for p in pts],
                    "error_estimate": [self.E(p[2]) for p in pts], "difference_hartree": [p[1] for p in pts],
                    "units": {"values": p_unit or "1", "difference": self.e_unit, "error_estimate": self.e_unit}}
            name = f"E({a}) - E({b})"
            self.figure(f"scan{suffix}-difference-{_slug(a)}-{_slug(b)}",
                        f"{name} against {sec.parameter}, model {sec.model}",
                        lambda p, pts=pts, name=name: importlib.import_module("boundkit.studies.figures")
                        .difference_figure([q[0] for q in pts], [self.E(q[1]) for q in pts], p, name=name,
                                           unit=self.e_unit, parameter=sec.parameter, parameter_unit=p_unit,
                                           error=[self.E(q[2]) for q in pts],
                                           title=f"{spec.models[sec.model].label}: {name} against {sec.parameter}"))
            if len(pts) >= 2:
                slope = float(np.polyfit([p[0] for p in pts], [p[1] for p in pts], 1)[0])   # hartree per unit
                item["slope_per_parameter"] = self.E(slope)
            diffs.append(item)
            pu = f" {p_unit}" if p_unit else ""
            line = f"E({a}) - E({b}) ({self.e_unit}) at {sec.parameter} = " + ", ".join(
                f"{v:g}{pu}: {format_difference(self.E(d), self.E(e), 8)}" for v, d, e in pts) + "."
            if "slope_per_parameter" in item:
                per = f"{self.e_unit}/{p_unit}" if p_unit else f"{self.e_unit} per unit of {sec.parameter}"
                item["slope_unit"] = per
                line += f" Least-squares slope: {_fmt(item['slope_per_parameter'], 5)} {per}."
                self.headline.append(f"scan of {sec.parameter} ({sec.model}): d[E({a}) - E({b})]/d{sec.parameter} = "
                                     f"{_fmt(item['slope_per_parameter'], 5)} {per}")
            md += [line, ""]
        if diffs:
            entry["differences"] = diffs
        self.results.setdefault("scan", []).append(_clean(entry))
        self.md += md

    def _scan_2d(self, sec: ScanSection, suffix: str, res, rows: list[dict]) -> None:
        """Table, families of curves and report of a two-parameter scan (``[scan.second]``)."""
        figures = importlib.import_module("boundkit.studies.figures")
        spec = self.spec
        p1, (p2, values2) = sec.parameter, sec.second
        punits = getattr(res, "parameter_units", {})
        u1, u2 = punits.get(p1, ""), punits.get(p2, "")
        grid: dict[tuple[float, float], dict[str, tuple[float, float]]] = {}
        for r in rows:
            if r.get("energy") is not None and r.get(p1) is not None and r.get(p2) is not None:
                grid.setdefault((float(r[p1]), float(r[p2])), {})[str(r["label"])] = (
                    float(r["energy"]), float(r.get("error_estimate") or 0.0))
        labels = sorted({lab for per in grid.values() for lab in per}, key=lambda lab: label_sort_key(lab, spec.labels))
        xs = sorted(set(sec.values))
        seconds = sorted(set(values2))

        def curves(value_of) -> list:
            out = []
            for v2 in seconds:
                y = [value_of(grid.get((x, v2), {})) for x in xs]
                y = [np.nan if v is None else v for v in y]
                if not all(np.isnan(y)):
                    out.append((v2, xs, y))
            return out

        subject = spec.models[sec.model].label
        panels = [(lab, curves(lambda per, lab=lab: self.E(per[lab][0]) if lab in per else None)) for lab in labels]
        self.figure(f"scan{suffix}", f"Levels against {p1} (one curve per {p2}), model {sec.model}",
                    lambda p: figures.family_figure(panels, p, parameter=p1, parameter_unit=u1, second=p2,
                                                    second_unit=u2, ylabel=f"binding energy ({self.e_unit})",
                                                    title=f"{subject}: levels against {p1} and {p2}"))
        pu1, pu2 = (f" ({u1})" if u1 else ""), (f" ({u2})" if u2 else "")
        md = [f"## Scan{suffix}: levels against {p1} and {p2}", "",
              f"Model {sec.model}, {sec.equation} equation, {len(xs)} values of {p1} from {min(xs):g} to {max(xs):g}"
              f" x {len(seconds)} values of {p2} from {min(seconds):g} to {max(seconds):g} (table "
              f"`scan{suffix}.csv`, one row per grid point and level; energies in {self.e_unit}).", ""]
        if labels:
            md += [f"| {p1}{pu1} | {p2}{pu2} | " + " | ".join(f"{lab} ({self.e_unit})" for lab in labels) + " |",
                   "|---:|---:|" + "---:|" * len(labels)]
            for x in xs:
                for v2 in seconds:
                    per = grid.get((x, v2), {})
                    md.append(f"| {x:g} | {v2:g} | " + " | ".join(
                        _fmt(self.E(per[lab][0]) if lab in per else None, 10) for lab in labels) + " |")
            md += ["", "A blank (-) means the level was not found bound at that grid point.", ""]
        entry = {"model": sec.model, "equation": sec.equation, "parameters": [p1, p2],
                 "values": {p1: list(sec.values), p2: list(values2)}, "parameter_units": {p1: u1, p2: u2},
                 "energy_unit_of_rows": "hartree", "rows": rows}
        diff_rows, diffs = [], []
        for a, b in sec.differences:
            pts = []
            for (x, v2), per in sorted(grid.items()):
                if a in per and b in per:
                    d = per[a][0] - per[b][0]
                    err = difference_error(per[a][0], per[b][0], per[a][1], per[b][1])
                    pts.append((x, v2, d, err))
                    diff_rows.append({p1: x, p2: v2, "a": a, "b": b, "difference": self.E(d),
                                      "error_estimate": self.E(err), "difference_hartree": d})
            if not pts:
                self.problems.append(f"scan{suffix}: E({a}) - E({b}) not available at any grid point")
                continue
            name = f"E({a}) - E({b})"
            diffs.append((name, curves(lambda per, a=a, b=b: self.E(per[a][0] - per[b][0])
                                       if a in per and b in per else None)))
            lo, hi = min(self.E(q[2]) for q in pts), max(self.E(q[2]) for q in pts)
            md += [f"{name} ({self.e_unit}) over the grid: from {_fmt(lo, 8)} to {_fmt(hi, 8)} at {len(pts)} grid "
                   f"point(s) (table `scan-differences{suffix}.csv`).", ""]
            self.headline.append(f"scan of {p1} x {p2} ({sec.model}): {name} from {_fmt(lo, 6)} to {_fmt(hi, 6)} "
                                 f"{self.e_unit}")
        if diff_rows:
            self.write(f"scan-differences{suffix}.csv", _csv_with_units(
                diff_rows, None, {p1: u1, p2: u2, "difference": self.e_unit, "error_estimate": self.e_unit,
                                  "difference_hartree": "hartree"}))
            entry["differences"] = diff_rows
            entry["difference_units"] = {"difference": self.e_unit, "error_estimate": self.e_unit}
            self.figure(f"scan{suffix}-differences", f"Differences against {p1} (one curve per {p2}), model "
                        f"{sec.model}",
                        lambda p: figures.family_figure(diffs, p, parameter=p1, parameter_unit=u1, second=p2,
                                                        second_unit=u2, ylabel=f"difference ({self.e_unit})",
                                                        title=f"{subject}: differences against {p1} and {p2}"))
        self.results.setdefault("scan", []).append(_clean(entry))
        self.md += md

    def _critical(self, sec: CriticalSection, suffix: str) -> None:
        spec = self.spec
        vector, scalar, params = spec.models[sec.model].arguments(spec.units)
        jobs = [dict(equation=sec.equation, potential=vector, params=params, state=state, vary=sec.parameter,
                     bracket=tuple(sec.bracket) if sec.bracket else None, tol=sec.tolerance,
                     energy_tol=sec.energy_tolerance, method=spec.method, kind=sec.kind, scalar=scalar or None,
                     units=spec.units, labels=spec.labels, **self.particle_kwargs()) for state in sec.states]
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
        self.write(f"critical{suffix}.csv", _csv_with_units(flat, None, {"value": p_unit, "uncertainty": p_unit}))
        self.results.setdefault("critical", []).append({"model": sec.model, "equation": sec.equation,
                                                         "parameter": sec.parameter, "units": spec.units,
                                                         "states": rows})
        md = [f"## Critical {sec.parameter}{suffix}", "",
              f"Model {sec.model}, {sec.equation} equation: the value of {sec.parameter} at which each level stops "
              f"being bound (table `critical{suffix}.csv`; {sec.parameter} in {p_unit or 'units of its own'}). "
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

    def _compare(self, sec: CompareSection, suffix: str) -> None:
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


def _scan_table(rows: list[dict], parameter: str, key: str = "energy") -> dict[float, dict[str, float]]:
    """{parameter value: {level label: energy (or ``key``, e.g. error_estimate) in hartree}} from scan rows."""
    out: dict[float, dict[str, float]] = {}
    for r in rows:
        value = r.get(parameter, r.get("value"))
        label = r.get("label")
        energy = r.get(f"{key}_hartree", r.get(key))
        if value is None or label is None or energy is None:
            continue
        try:
            value, energy = float(value), float(energy)
        except (TypeError, ValueError):
            continue
        if math.isfinite(energy):
            out.setdefault(value, {})[str(label)] = energy
    return out


def _critical_job(kwargs: dict) -> tuple[bool, Any]:
    """One critical search (top level, so that worker processes can run it).

    Returns (True, the result as a JSON-ready dict) or (False, the message of
    the ValueError or StudyError that stopped it).
    """
    
    studies = importlib.import_module("boundkit.studies")
    try:
        with one_blas_thread():   # small matrices: threads only contend
            res = _call(studies.critical, **kwargs)
    except (ValueError, RuntimeError) as exc:
        return False, str(exc)
    return True, (_clean(res.to_dict()) if hasattr(res, "to_dict") else {"value": _clean(res)})


def _workers(workers: int | None) -> int | None:
    """A spec's workers, at most the cores of this machine (a spec may come from a larger one)."""
    cores = os.cpu_count() or 1
    if workers is not None and workers > cores:
        log.warning("workers = %d in the spec, but this machine has %d cores: using %d", workers, cores, cores)
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

    workers = min(_workers(workers) or os.cpu_count() or 1, len(jobs))
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
