"""The [scan] sections of a run: levels over one parameter, or over a grid of two
(``[scan.second]``), through :func:`boundkit.studies.scan`; the table, the figures (levels,
named differences; families of curves for two parameters) and the report section.

:class:`ScanRunner` is a mixin of the run engine (it uses ``spec``, ``write``, ``figure``,
``E``, ``particle_kwargs``, ``progress_hook``, ``problems``, ``headline``, ``md`` and ``results``).
"""
from __future__ import annotations

import importlib
import logging
import math

import numpy as np

from ..reporting import difference_error, format_difference
from ..states import label_sort_key
from .figures import _scan_figure
from .files import _clean, _csv_text, _csv_with_units, _fmt, _slug
from .objects import ScanSection, _channels_for
from .study_runners import _call, _rows_of, _workers

log = logging.getLogger("boundkit.runspec.engine")


class ScanRunner:
    """Runs the [scan] sections."""

    def _scan(self, sec: ScanSection, suffix: str) -> bool:
        """Run one [scan] section; returns whether any point was solved (not every row an error)."""
        studies = importlib.import_module("boundkit.studies")
        spec = self.spec
        vector, scalar, params = spec.models[sec.model].arguments(spec.units)
        chans = _channels_for(sec.channels, sec.equation, sec.levels, spec.models[sec.model].spin_orbit(spec.units))
        channels = [dict(kw) for kw, _name, _n in chans]
        levels = max(n for _kw, _name, n in chans)
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
        for status in ("error", "tolerance-not-met", "missing"):
            bad = [r for r in rows if r.get("status") == status]
            if bad:
                where = sorted({float(r[sec.parameter]) for r in bad if sec.parameter in r})
                first = next((r.get("message") for r in bad if r.get("message")), "")
                self.problems.append(f"scan{suffix} ({sec.model}): {len(bad)} level(s) with status {status} at "
                                     f"{sec.parameter} = {', '.join(f'{v:g}' for v in where)}"
                                     + (f" ({first})" if first else ""))
        solved = any(r.get("status") not in ("error", "missing") for r in rows)
        if sec.second is not None:
            self._scan_2d(sec, suffix, res, rows)
            return solved
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
                entry["result"] = _clean(res.to_dict(self.e_unit))
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
                per = _per_unit(self.e_unit, p_unit) if p_unit else f"{self.e_unit} per unit of {sec.parameter}"
                item["slope_unit"] = per
                line += f" Least-squares slope: {_fmt(item['slope_per_parameter'], 5)} {per}."
                self.headline.append(f"scan of {sec.parameter} ({sec.model}): d[E({a}) - E({b})]/d{sec.parameter} = "
                                     f"{_fmt(item['slope_per_parameter'], 5)} {per}")
            md += [line, ""]
        if diffs:
            entry["differences"] = diffs
        self.results.setdefault("scan", []).append(_clean(entry))
        self.md += md
        return solved

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


def _per_unit(e_unit: str, p_unit: str) -> str:
    """The unit of an energy per parameter: hartree bohr for a parameter in 1/bohr (not hartree/1/bohr),
    hartree/bohr for one in bohr, a compound unit in parentheses."""
    if p_unit.startswith("1/"):
        return f"{e_unit} {p_unit[2:]}"
    return f"{e_unit}/({p_unit})" if any(c in p_unit for c in "/* ") else f"{e_unit}/{p_unit}"
