"""The [solve] section of a run: levels of every model x equation x channel, their
differences and shifts against a reference model, tables and report text.

:class:`SolveRunner` is a mixin of the run engine (it uses ``spec``, ``write``,
``figure``, ``E``, ``L``, ``particle_kwargs``, ``problems``, ``headline``,
``md`` and ``results``).
"""
from __future__ import annotations

import logging
import re
from typing import Any

from ..observables import mean_radius, rms_radius
from ..reporting import difference_error, format_difference
from ..states import label_sort_key, level_n
from .files import _csv_with_units, _fmt
from .objects import _EQUATIONS, SolveSection, _channels_for

log = logging.getLogger("boundkit.runspec.engine")

_ZERO_RULE = ("A value within its error estimate (the two levels' estimates plus the rounding of the "
              "subtraction) is printed as 0; others carry the digits the estimate supports.")


class SolveRunner:
    """Runs the [solve] section."""

    def _solve(self, sec: SolveSection) -> None:
        from ..solver import solve

        spec = self.spec
        rows: list[dict] = []
        runs: list[dict] = []
        by_model: dict[str, dict[str, list]] = {}
        for mname in sec.models:
            model = spec.models[mname]
            pot = model.potential(spec.units)
            by_model[mname] = {}
            for eq in sec.equations:
                found = []
                for kw, cname, nlev in _channels_for(sec.channels, eq, sec.levels, pot.has_spin_orbit):
                    tag = f"model {mname}, {eq}, channel {cname}"
                    log.info("solve: %s (%d levels)", tag, nlev)
                    try:
                        res = solve(eq, pot, None, levels=nlev, tol=sec.tolerance, method=sec.method,
                                    order=sec.order, **kw, **self.particle_kwargs()).with_labels(spec.labels)
                    except ValueError as exc:
                        self.tick()
                        self.problems.append(f"solve {tag}: {exc}")
                        runs.append({"model": mname, "equation": eq, "channel": cname, "status": "error",
                                     "message": str(exc), "levels": []})
                        continue
                    self.tick()
                    if res.levels:      # a channel with no level computed nothing the spec asked for
                        self.computed += 1
                    if not res.success:
                        self.problems.append(f"solve {tag}: {res.status}: {res.message}")
                    elif len(res.levels) < nlev:    # all the channel holds, fewer than asked: not as asked
                        self.problems.append(f"solve {tag}: found {len(res.levels)} of {nlev} requested levels: "
                                             f"{res.message}")
                    runs.append({"model": mname, "equation": eq, "channel": cname, **kw, "requested": nlev,
                                 "status": res.status, "message": res.message,
                                 "diagnostics": {k: v for k, v in res.diagnostics.items() if k != "levels"}})
                    if sec.states and res.levels:
                        from ..io_states import states_csv_text
                        stem = re.sub(r"[^A-Za-z0-9.=+-]+", "_", f"states-{mname}-{eq}-{cname}")
                        self.write(f"{stem}.csv", states_csv_text(res, self.l_unit, energy_unit=self.e_unit))
                    for lv in res.levels:
                        row = {"model": mname, "equation": eq, "channel": cname, "label": lv.label,
                               "n": level_n(lv.nodes, lv.l, spec.labels),
                               "l": lv.l, "j": lv.j, "kappa": lv.kappa, "nodes": lv.nodes,
                               "energy": self.E(lv.energy), "error_estimate": self.E(lv.error_estimate),
                               "energy_hartree": lv.energy, "error_hartree": lv.error_estimate,
                               "resolution": lv.resolution, "status": res.status}
                        if sec.radii:
                            row["mean_radius"] = self.L(mean_radius(lv))
                            row["rms_radius"] = self.L(rms_radius(lv))
                        rows.append(row)
                        found.append(lv)
                by_model[mname][eq] = sorted(found, key=lambda lv: lv.energy)
        order = {(m, e): i for i, (m, e) in enumerate((m, e) for m in sec.models for e in sec.equations)}
        rows.sort(key=lambda r: (order.get((r["model"], r["equation"]), 0), label_sort_key(r["label"], spec.labels)))
        cols = ["model", "equation", "channel", "label", "n", "l", "j", "kappa", "nodes", "energy", "error_estimate",
                "energy_hartree", "error_hartree"] + (["mean_radius", "rms_radius"] if sec.radii else []) + \
               ["resolution", "status"]
        units = {"energy": self.e_unit, "error_estimate": self.e_unit, "mean_radius": self.l_unit,
                 "rms_radius": self.l_unit, "difference": self.e_unit, "shift": self.e_unit}
        self.write("levels.csv", _csv_with_units(rows, cols, units))
        out: dict[str, Any] = {"models": {m: {"label": spec.models[m].label, "potential": self._describe_model(m)}
                                          for m in sec.models},
                               "runs": runs, "levels": rows,
                               "columns": {"energy": self.e_unit, "error_estimate": self.e_unit,
                                           "mean_radius": self.l_unit, "rms_radius": self.l_unit,
                                           "difference": self.e_unit, "shift": self.e_unit,
                                           "energy_hartree": "hartree", "error_hartree": "hartree",
                                           "difference_hartree": "hartree", "shift_hartree": "hartree"},
                               "labels": spec.labels}
        # differences within one model (and one equation, unless a label names its equation)
        diffs = []
        for (a, b) in sec.differences:
            (ea, la_), (eb, lb_) = _split_label(a), _split_label(b)
            for mname, per_eq in by_model.items():
                for eq in per_eq:
                    if (ea or eb) and eq != (ea or eb):
                        continue
                    la = next((lv for lv in per_eq.get(ea or eq, []) if lv.label == la_), None)
                    lb = next((lv for lv in per_eq.get(eb or eq, []) if lv.label == lb_), None)
                    if la is None or lb is None:
                        continue
                    d = la.energy - lb.energy
                    err = difference_error(la.energy, lb.energy, la.error_estimate, lb.error_estimate)
                    shown = eq if not (ea or eb) else " vs ".join(dict.fromkeys([ea or eq, eb or eq]))
                    diffs.append({"model": mname, "equation": shown, "a": a, "b": b, "difference": self.E(d),
                                  "error_estimate": self.E(err), "difference_hartree": d})
            if not any(r["a"] == a and r["b"] == b for r in diffs):
                self.problems.append(f"difference E({a}) - E({b}): no model and equation has both levels")
        if diffs:
            self.write("differences.csv", _csv_with_units(diffs, None, units))
            out["differences"] = diffs
        # shifts against a reference model
        shifts = []
        if sec.reference:
            ref = by_model.get(sec.reference, {})
            for mname, per_eq in by_model.items():
                if mname == sec.reference:
                    continue
                for eq, lvs in per_eq.items():
                    base = {lv.label: lv for lv in ref.get(eq, [])}
                    for lv in lvs:
                        if lv.label in base:
                            d = lv.energy - base[lv.label].energy
                            shifts.append({"model": mname, "reference": sec.reference, "equation": eq,
                                           "label": lv.label, "shift": self.E(d),
                                           "error_estimate": self.E(difference_error(
                                               lv.energy, base[lv.label].energy, lv.error_estimate,
                                               base[lv.label].error_estimate)),
                                           "shift_hartree": d})
            if shifts:
                shifts.sort(key=lambda r: (r["model"], r["equation"], label_sort_key(r["label"], spec.labels)))
                self.write("shifts.csv", _csv_with_units(shifts, None, units))
                out["shifts"] = shifts
                self._shift_figure(sec.reference, shifts)
        self.results["solve"] = out
        self._solve_figures(sec, by_model)
        self._solve_report(sec, rows, diffs, shifts)

    def _describe_model(self, mname: str) -> dict:
        m = self.spec.models[mname]
        return {"terms": list(m.terms), "scalar_terms": list(m.scalar_terms), "expressions": list(m.expressions),
                "scalar_expressions": list(m.scalar_expressions), "params": dict(m.params),
                "parameter_units": self.spec.units,
                "own_terms": [{"name": e.name, "expression": e.expression, "table": e.table,
                               "model_file": e.model_file, "path": e.path, "options": e.options, "role": e.role,
                               "params": e.params} for e in m.entries],
                "built": repr(m.potential(self.spec.units))}

    def _solve_report(self, sec, rows, diffs, shifts) -> None:
        spec = self.spec
        eu, lu = self.e_unit, self.l_unit
        md = ["## Levels", "",
              f"Models {', '.join(sec.models)}; equations {', '.join(sec.equations)}; tolerance {sec.tolerance:g} "
              f"(relative); method {sec.method}. Energies are binding energies (total minus rest energy) in {eu}.",
              ""]
        head = f"| model | equation | level | energy ({eu}) | error estimate ({eu}) |"
        sep = "|---|---|---|---:|---:|"
        if sec.radii:
            head += f" <r> ({lu}) | rms radius ({lu}) |"
            sep += "---:|---:|"
        md += [head, sep]
        for r in rows:
            line = (f"| {r['model']} | {r['equation']} | {r['label']} | {_fmt(r['energy'], 12)} | "
                    f"{_fmt(r['error_estimate'], 2)} |")
            if sec.radii:
                line += f" {_fmt(r['mean_radius'], 6)} | {_fmt(r['rms_radius'], 6)} |"
            md.append(line)
        md.append("")
        # headline: the lowest level of each model and equation
        seen = set()
        for r in rows:
            k = (r["model"], r["equation"])
            if k in seen:
                continue
            lowest = min((x for x in rows if (x["model"], x["equation"]) == k), key=lambda x: x["energy_hartree"])
            seen.add(k)
            extra = f", <r> = {_fmt(lowest['mean_radius'], 5)} {lu}" if sec.radii else ""
            self.headline.append(f"{spec.models[r['model']].label}, {r['equation']}: lowest level "
                                 f"{lowest['label']} at {_fmt(lowest['energy'], 10)} {eu}{extra}")
        if diffs:
            md += ["### Differences", "", _ZERO_RULE, "",
                   f"| model | equation | difference | value ({eu}) | error estimate ({eu}) |",
                   "|---|---|---|---:|---:|"]
            for d in diffs:
                md.append(f"| {d['model']} | {d['equation']} | E({d['a']}) - E({d['b']}) | "
                          f"{format_difference(d['difference'], d['error_estimate'])} |"
                          f" {_fmt(d['error_estimate'], 2)} |")
                self.headline.append(f"{spec.models[d['model']].label}, {d['equation']}: E({d['a']}) - E({d['b']}) = "
                                     f"{format_difference(d['difference'], d['error_estimate'], 8)} {eu}")
            md.append("")
        if shifts:
            md += [f"### Shifts against model {sec.reference}", "", _ZERO_RULE, "",
                   f"| model | equation | level | E(model) - E({sec.reference}) ({eu}) | error estimate ({eu}) |",
                   "|---|---|---|---:|---:|"]
            for s in shifts:
                md.append(f"| {s['model']} | {s['equation']} | {s['label']} | "
                          f"{format_difference(s['shift'], s['error_estimate'], 10)} | "
                          f"{_fmt(s['error_estimate'], 2)} |")
            lowest = {}
            for s in shifts:
                k = (s["model"], s["equation"])
                if k not in lowest:
                    lowest[k] = s
            for s in lowest.values():
                self.headline.append(f"E({s['model']}) - E({sec.reference}), {s['equation']} {s['label']}: "
                                     f"{format_difference(s['shift'], s['error_estimate'], 6)} {eu}")
            md.append("")
        self.md += md


def _split_label(text: str) -> tuple[str | None, str]:
    """("dirac", "1s1/2") from "dirac:1s1/2"; (None, "1s1/2") from "1s1/2"."""
    eq, sep, label = text.partition(":")
    if not sep:
        return None, text.strip()
    return _EQUATIONS.get(eq.strip().lower(), eq.strip().lower()), label.strip()
