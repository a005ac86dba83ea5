"""Running a run spec and writing its output folder (see :mod:`boundkit.runspec`)."""
from __future__ import annotations

import csv
import datetime as _dt
import hashlib
import importlib
import inspect
import io
import json
import logging
import math
import os
import re
import shutil
import tempfile
import time
import tomllib
import uuid
from dataclasses import dataclass, field, replace
from pathlib import Path
from typing import Any, Iterable

import numpy as np

from .. import __version__
from ..observables import LENGTH_UNITS, bohr_to, length_unit as canonical_length_unit, mean_radius, rms_radius
from ..potentials.base import Term
from ..units import ENERGY_UNITS, FM_IN_BOHR, MEV_IN_HARTREE, constants_record, energy_unit as canonical_energy_unit
from ..units import get_particle, hartree_to
from ..studies._common import umask_mode as _umask_mode


from .spec import (_EQUATIONS, _LETTERS, _dotted, _channels_for, SolveSection, ConvergeSection, ScanSection, CriticalSection, CompareSection, RunSpec, load_spec)

__all__ = ["run", "RunReport"]

log = logging.getLogger(__name__)
# ---------------------------------------------------------------------------------------------
# running
# ---------------------------------------------------------------------------------------------
@dataclass(frozen=True)
class RunReport:
    """What :func:`run` did.

    Attributes
    ----------
    out_dir : Path
        The output folder.
    files : tuple of str
        Files written, relative to ``out_dir``.
    seconds : float
        Wall time of the run.
    problems : tuple of str
        Levels not found, tolerances not met, studies that failed (empty when
        everything went as asked).
    headline : tuple of str
        The headline numbers of ``report.md``, one line each.
    """

    out_dir: Path
    files: tuple[str, ...]
    seconds: float
    problems: tuple[str, ...]
    headline: tuple[str, ...]

    @property
    def success(self) -> bool:
        return not self.problems


def _slug(text: str) -> str:
    s = re.sub(r"[^A-Za-z0-9]+", "-", str(text)).strip("-").lower()
    return s or "x"


def _json_default(x):
    if isinstance(x, (np.floating, np.integer)):
        return x.item()
    if isinstance(x, np.ndarray):
        return x.tolist()
    if isinstance(x, Path):
        return str(x)
    if isinstance(x, tuple):
        return list(x)
    try:
        return float(x)
    except (TypeError, ValueError):
        return str(x)


def _clean(x):
    """JSON-safe copy: non-finite floats become None, tuple keys become strings."""
    if isinstance(x, dict):
        return {(k if isinstance(k, str) else ":".join(map(str, k)) if isinstance(k, tuple) else str(k)): _clean(v)
                for k, v in x.items()}
    if isinstance(x, (list, tuple)):
        return [_clean(v) for v in x]
    if isinstance(x, (float, np.floating)):
        x = float(x)
        return x if math.isfinite(x) else None
    if isinstance(x, np.integer):
        return int(x)
    if isinstance(x, np.ndarray):
        return _clean(x.tolist())
    return x


def _atomic_write(path: Path, data: str | bytes) -> None:
    """Write ``data`` to ``path`` through a temporary file in the same folder and os.replace."""
    path.parent.mkdir(parents=True, exist_ok=True)
    fd, tmp = tempfile.mkstemp(dir=path.parent, prefix=f".{path.name}.", suffix=".tmp")
    try:
        with os.fdopen(fd, "wb") as fh:
            fh.write(data.encode("utf-8") if isinstance(data, str) else data)
        os.chmod(tmp, _umask_mode(0o666))
        os.replace(tmp, path)
    finally:
        if os.path.exists(tmp):
            os.unlink(tmp)


def _csv_text(rows: list[dict], columns: list[str] | None = None) -> str:
    if columns is None:
        columns = []
        for r in rows:
            for k in r:
                if k not in columns:
                    columns.append(k)
    buf = io.StringIO()
    w = csv.DictWriter(buf, fieldnames=columns, extrasaction="ignore", lineterminator="\n")
    w.writeheader()
    for r in rows:
        w.writerow({k: _csv_value(r.get(k)) for k in columns})
    return buf.getvalue()


def _csv_value(v):
    if v is None:
        return ""
    if isinstance(v, (float, np.floating)):
        return repr(float(v))
    if isinstance(v, (list, tuple, dict)):
        return json.dumps(_clean(v))
    return v


def _fmt(x: float | None, digits: int = 10) -> str:
    if x is None or (isinstance(x, float) and not math.isfinite(x)):
        return "-"
    return f"{x:.{digits}g}"


MARKER = ".boundkit-run.json"
"""Name of the marker file a run writes into its output folder (its run identity)."""


def _run_identity(path: Path) -> str | None:
    """The run id of a folder boundkit wrote (marker and results.json agree), else None."""
    try:
        marker = json.loads((path / MARKER).read_text(encoding="utf-8"))
        results = json.loads((path / "results.json").read_text(encoding="utf-8"))
    except (OSError, ValueError):
        return None
    rid = marker.get("run_id") if isinstance(marker, dict) else None
    if not isinstance(rid, str) or not isinstance(results, dict) or results.get("run_id") != rid:
        return None
    return rid


def _check_target(out: Path, force: bool) -> None:
    if not os.path.lexists(out):
        return
    if not force:
        raise FileExistsError(f"output folder {out} exists; choose another with --out or replace it with --force")
    if out.is_symlink() or not out.is_dir():
        raise FileExistsError(f"output path {out} is not a folder boundkit wrote; refusing to replace it even "
                              "with --force: choose another --out")
    if not any(out.iterdir()):
        return
    if not (out / MARKER).is_file():
        raise FileExistsError(f"output folder {out} has no boundkit run marker ({MARKER}); refusing to replace "
                              "it even with --force: remove it yourself or choose another --out")
    if _run_identity(out) is None:
        raise FileExistsError(f"output folder {out}: its run marker does not match its results.json; refusing "
                              "to replace it even with --force: remove it yourself or choose another --out")


def run(spec: RunSpec | str | os.PathLike, out_dir: str | os.PathLike, force: bool = False) -> RunReport:
    """Run every study of a spec and write the results into ``out_dir``.

    Parameters
    ----------
    spec : RunSpec or path
        A checked spec, or the path of a spec file (read with :func:`load_spec`).
    out_dir : path
        Output folder; it must not exist unless ``force`` is true.
    force : bool
        Replace an existing output folder of an earlier run: only an empty
        folder, or one holding the run marker ``.boundkit-run.json`` whose run
        id matches its ``results.json`` (both written by boundkit), is ever
        removed.

    Returns
    -------
    RunReport

    Raises
    ------
    ValueError
        A bad spec (file, key and line in the message).
    FileExistsError
        ``out_dir`` exists and ``force`` is false, or it does not look like
        boundkit output.

    Notes
    -----
    Everything is built in a temporary sibling folder (each file written
    through a temporary name and :func:`os.replace`); only when the run has
    finished is that folder renamed to ``out_dir`` (an existing one is moved
    aside first and deleted after the rename). A run that fails on the way
    leaves ``out_dir`` as it was and no temporary folder behind.
    """
    if not isinstance(spec, RunSpec):
        spec = load_spec(spec)
    out = Path(out_dir)
    _check_target(out, force)
    out.parent.mkdir(parents=True, exist_ok=True)
    tmp = Path(tempfile.mkdtemp(prefix=f".{out.name}.partial-", dir=out.parent))
    try:
        os.chmod(tmp, _umask_mode(0o777))
        report = _Engine(spec, tmp).run()
        _check_target(out, force)
        _move_into_place(tmp, out)
    except BaseException:
        shutil.rmtree(tmp, ignore_errors=True)
        raise
    return replace(report, out_dir=out)


def _move_into_place(tmp: Path, out: Path) -> None:
    if not os.path.lexists(out):
        os.rename(tmp, out)
        return
    backup = Path(tempfile.mkdtemp(prefix=f".{out.name}.old-", dir=out.parent))
    os.rmdir(backup)
    os.rename(out, backup)
    try:
        os.rename(tmp, out)
    except BaseException:
        os.rename(backup, out)
        raise
    if backup.is_dir():
        shutil.rmtree(backup, ignore_errors=True)
    else:
        backup.unlink(missing_ok=True)


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


class _Engine:
    """Runs the sections of one spec into one (temporary) folder."""

    def __init__(self, spec: RunSpec, folder: Path) -> None:
        self.spec = spec
        self.folder = folder
        self.files: list[str] = []
        self.problems: list[str] = []
        self.headline: list[str] = []
        self.md: list[str] = []
        self.figures: list[tuple[str, str]] = []
        self.taken: set[str] = set()
        self.results: dict[str, Any] = {}
        self.e_unit = spec.energy_unit
        self.l_unit = spec.length_unit
        self.run_id = uuid.uuid4().hex

    # -- helpers ---------------------------------------------------------------------------
    def write(self, name: str, data: str | bytes) -> None:
        _atomic_write(self.folder / name, data)
        if name not in self.files:
            self.files.append(name)

    def figure(self, stem: str, caption: str, draw) -> None:
        name = f"{stem}.{self.spec.figure_format}"
        k = 1
        while name in self.files or name in self.taken:   # model names h, H and h/ share a slug
            k += 1
            name = f"{stem}-{k}.{self.spec.figure_format}"
        self.taken.add(name)
        try:
            draw(self.folder / name)
            os.chmod(self.folder / name, _umask_mode(0o666))   # save_figure writes through mkstemp
        except Exception as exc:   # a figure must not sink the numbers
            log.warning("figure %s failed: %s", name, exc)
            self.problems.append(f"figure {name} could not be drawn: {exc}")
            return
        self.files.append(name)
        self.figures.append((name, caption))

    def E(self, hartree: float | None) -> float | None:
        return None if hartree is None else float(hartree_to(hartree, self.e_unit))

    def L(self, bohr: float | None) -> float | None:
        return None if bohr is None else float(bohr_to(bohr, self.l_unit))

    def particle_kwargs(self) -> dict:
        return self.spec.particle.kwargs()

    # -- the run ---------------------------------------------------------------------------
    def run(self) -> RunReport:
        t0 = time.perf_counter()
        spec = self.spec
        self.write(MARKER, json.dumps({"written_by": "boundkit", "run_id": self.run_id,
                                       "boundkit_version": __version__, "spec": str(spec.path)}) + "\n")
        self.write("spec.toml", spec.text)
        if spec.solve is not None:
            self._solve(spec.solve)
            log.info("[solve] done in %.1f s", time.perf_counter() - t0)
        for i, sec in enumerate(spec.converge):
            self._guard(sec.key, lambda: self._converge(sec, self._suffix(spec.converge, i)))
        for i, sec in enumerate(spec.scan):
            self._guard(sec.key, lambda: self._scan(sec, self._suffix(spec.scan, i)))
        for i, sec in enumerate(spec.critical):
            self._guard(sec.key, lambda: self._critical(sec, self._suffix(spec.critical, i)))
        for i, sec in enumerate(spec.compare):
            self._guard(sec.key, lambda: self._compare(sec, self._suffix(spec.compare, i)))
        seconds = time.perf_counter() - t0
        self._write_results(seconds)
        self._write_report(seconds)
        return RunReport(out_dir=self.folder, files=tuple(self.files), seconds=seconds,
                         problems=tuple(self.problems), headline=tuple(self.headline))

    @staticmethod
    def _suffix(secs, i: int) -> str:
        return "" if len(secs) == 1 else f"-{i + 1}"

    def _guard(self, key: tuple, job) -> None:
        """Run one study; a ValueError from the numerics is recorded as a problem, not raised."""
        t0 = time.perf_counter()
        try:
            job()
            log.info("[%s] done in %.1f s", _dotted(key), time.perf_counter() - t0)
        except (ValueError, RuntimeError) as exc:   # bad values met on the way; StudyError is a RuntimeError
            msg = f"[{_dotted(key)}] (line {self.spec.line_of(key)}) failed: {exc}"
            log.warning("%s", msg)
            self.problems.append(msg)
            self.results.setdefault("failed", []).append({"section": _dotted(key), "error": str(exc)})

    def _settings(self) -> dict:
        spec = self.spec
        part = get_particle(spec.particle.name, spec.particle.mass_mev)
        return {
            "units": spec.units, "energy_unit": self.e_unit, "length_unit": self.l_unit,
            "particle": part.name, "particle_mass_MeV": part.mass_mev, "particle_mass_source": part.source,
            "nucleus_mass_MeV": spec.particle.nucleus_mass_mev, "equations": list(spec.equations),
            "levels": spec.levels, "tolerance": spec.tolerance, "method": spec.method, "order": spec.order,
            "figure_format": spec.figure_format,
        }

    # -- [solve] ---------------------------------------------------------------------------
    def _solve(self, sec: SolveSection) -> None:
        from ..plots import density_figure, level_diagram, radial_figure
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
                for kw, cname, nlev in _channels_for(sec.channels, eq, sec.levels):
                    tag = f"model {mname}, {eq}, channel {cname}"
                    log.info("solve: %s (%d levels)", tag, nlev)
                    try:
                        res = solve(eq, pot, None, levels=nlev, tol=sec.tolerance, method=sec.method,
                                    order=sec.order, **kw, **self.particle_kwargs())
                    except ValueError as exc:
                        self.problems.append(f"solve {tag}: {exc}")
                        runs.append({"model": mname, "equation": eq, "channel": cname, "status": "error",
                                     "message": str(exc), "levels": []})
                        continue
                    if not res.success:
                        self.problems.append(f"solve {tag}: {res.status}: {res.message}")
                    runs.append({"model": mname, "equation": eq, "channel": cname, **kw, "requested": nlev,
                                 "status": res.status, "message": res.message,
                                 "diagnostics": {k: v for k, v in res.diagnostics.items() if k != "levels"}})
                    if sec.states and res.levels:
                        from ..io_states import states_csv_text
                        stem = re.sub(r"[^A-Za-z0-9.=+-]+", "_", f"states-{mname}-{eq}-{cname}")
                        self.write(f"{stem}.csv", states_csv_text(res, self.l_unit))
                    for lv in res.levels:
                        row = {"model": mname, "equation": eq, "channel": cname, "label": lv.label, "n": lv.n,
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
        cols = ["model", "equation", "channel", "label", "n", "l", "j", "kappa", "nodes", "energy", "error_estimate",
                "energy_hartree", "error_hartree"] + (["mean_radius", "rms_radius"] if sec.radii else []) + \
               ["resolution", "status"]
        self.write("levels.csv", _csv_text(rows, cols))
        out: dict[str, Any] = {"models": {m: {"label": spec.models[m].label, "potential": self._describe_model(m)}
                                          for m in sec.models},
                               "runs": runs, "levels": rows,
                               "columns": {"energy": self.e_unit, "error_estimate": self.e_unit,
                                           "mean_radius": self.l_unit, "rms_radius": self.l_unit}}
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
                    err = math.hypot(la.error_estimate, lb.error_estimate)
                    shown = eq if not (ea or eb) else " vs ".join(dict.fromkeys([ea or eq, eb or eq]))
                    diffs.append({"model": mname, "equation": shown, "a": a, "b": b, "difference": self.E(d),
                                  "error_estimate": self.E(err), "difference_hartree": d})
            if not any(r["a"] == a and r["b"] == b for r in diffs):
                self.problems.append(f"difference E({a}) - E({b}): no model and equation has both levels")
        if diffs:
            self.write("differences.csv", _csv_text(diffs))
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
                                           "error_estimate": self.E(math.hypot(lv.error_estimate,
                                                                               base[lv.label].error_estimate)),
                                           "shift_hartree": d})
            if shifts:
                self.write("shifts.csv", _csv_text(shifts))
                out["shifts"] = shifts
        self.results["solve"] = out
        self._solve_figures(sec, by_model, radial_figure, density_figure, level_diagram)
        self._solve_report(sec, rows, diffs, shifts)

    def _describe_model(self, mname: str) -> dict:
        m = self.spec.models[mname]
        return {"terms": list(m.terms), "scalar_terms": list(m.scalar_terms), "expressions": list(m.expressions),
                "scalar_expressions": list(m.scalar_expressions), "params": dict(m.params),
                "parameter_units": self.spec.units,
                "own_terms": [{"name": e.name, "expression": e.expression, "role": e.role, "params": e.params}
                              for e in m.entries],
                "built": repr(m.potential(self.spec.units))}

    def _solve_figures(self, sec, by_model, radial_figure, density_figure, level_diagram) -> None:
        spec = self.spec
        for mname, per_eq in by_model.items():
            label = spec.models[mname].label
            for eq, lvs in per_eq.items():
                if not lvs:
                    continue
                stem = f"{_slug(mname)}-{_slug(eq)}"
                if "radial" in sec.figures:
                    self.figure(f"radial-{stem}", f"Radial functions, {label}, {eq} equation",
                                lambda p, lvs=lvs, eq=eq: radial_figure(
                                    lvs, p, length_unit=self.l_unit,
                                    title=f"{label}: {eq} radial functions" + (
                                        " (solid P, dashed Q)" if eq == "dirac" else "")))
                if "density" in sec.figures:
                    self.figure(f"density-{stem}", f"Radial probability densities, {label}, {eq} equation",
                                lambda p, lvs=lvs, eq=eq: density_figure(
                                    lvs, p, length_unit=self.l_unit, title=f"{label}: {eq} radial densities"))
            if "levels" in sec.figures and any(per_eq.values()):
                pot = spec.models[mname].potential(spec.units)
                groups = {eq: lvs for eq, lvs in per_eq.items() if lvs}
                self.figure(f"levels-{_slug(mname)}", f"Potential and levels, {label}",
                            lambda p, pot=pot, groups=groups: level_diagram(
                                pot, groups, p, energy_unit=self.e_unit, length_unit=self.l_unit,
                                title=f"{label}: potential and levels"))

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
            md += ["### Differences", "", f"| model | equation | difference | value ({eu}) | error estimate ({eu}) |",
                   "|---|---|---|---:|---:|"]
            for d in diffs:
                md.append(f"| {d['model']} | {d['equation']} | E({d['a']}) - E({d['b']}) | {_fmt(d['difference'], 10)} |"
                          f" {_fmt(d['error_estimate'], 2)} |")
                self.headline.append(f"{spec.models[d['model']].label}, {d['equation']}: E({d['a']}) - E({d['b']}) = "
                                     f"{_fmt(d['difference'], 8)} {eu}")
            md.append("")
        if shifts:
            md += [f"### Shifts against model {sec.reference}", "",
                   f"| model | equation | level | E(model) - E({sec.reference}) ({eu}) | error estimate ({eu}) |",
                   "|---|---|---|---:|---:|"]
            for s in shifts:
                md.append(f"| {s['model']} | {s['equation']} | {s['label']} | {_fmt(s['shift'], 8)} | "
                          f"{_fmt(s['error_estimate'], 2)} |")
            lowest = {}
            for s in shifts:
                k = (s["model"], s["equation"])
                if k not in lowest:
                    lowest[k] = s
            for s in lowest.values():
                self.headline.append(f"E({s['model']}) - E({sec.reference}), {s['equation']} {s['label']}: "
                                     f"{_fmt(s['shift'], 6)} {eu}")
            md.append("")
        self.md += md

    # -- [converge] ------------------------------------------------------------------------
    def _converge(self, sec: ConvergeSection, suffix: str) -> None:
        from ..accuracy import converge
        from ..plots import convergence_figure

        spec = self.spec
        pot = spec.models[sec.model].potential(spec.units)
        (kw, cname), = sec.channel.expand(sec.equation)[:1]
        res = converge(sec.equation, pot, None, levels=sec.levels, methods=sec.methods, order=sec.order, **kw,
                       **self.particle_kwargs())
        self.write(f"convergence{suffix}.csv", _csv_text(res.rows, ["method", "size", "label", "energy", "error",
                                                                   "difference"]))
        self.figure(f"convergence{suffix}", f"Convergence, model {sec.model}, {sec.equation} {cname}",
                    lambda p: convergence_figure(res, p))
        self.results.setdefault("converge", []).append({
            "model": sec.model, "equation": sec.equation, "channel": cname, "energy_unit_of_rows": "hartree",
            **_clean(res.to_dict())})
        md = [f"## Convergence{suffix}", "",
              f"Model {sec.model}, {sec.equation} equation, channel {cname}: relative error of the binding energy "
              "against resolution, measured against a spectral solve at tol 1e-13 "
              f"(table `convergence{suffix}.csv`).", "", "| method | level | observed order |", "|---|---|---:|"]
        for (m, lab), v in res.orders.items():
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

    # -- [scan] ----------------------------------------------------------------------------
    def _scan(self, sec: ScanSection, suffix: str) -> None:
        studies = importlib.import_module("boundkit.studies")
        spec = self.spec
        vector, scalar, params = spec.models[sec.model].arguments(spec.units)
        channels = []
        for kw, _name, _n in _channels_for(sec.channels, sec.equation, sec.levels):
            channels.append(dict(kw))
        levels = max(n for _kw, _name, n in _channels_for(sec.channels, sec.equation, sec.levels))
        res = _call(studies.scan, equation=sec.equation, potential=vector, params=params,
                    vary={sec.parameter: list(sec.values)}, channels=channels, levels=levels, tol=sec.tolerance,
                    method=sec.method, workers=_workers(sec.workers), scalar=scalar or None, units=spec.units,
                    max_points=sec.max_points * len(channels), **self.particle_kwargs())
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
        caption = f"Levels against {sec.parameter}, model {sec.model}"
        try:
            figures = importlib.import_module("boundkit.studies.figures")
            title = f"{spec.models[sec.model].label}: levels against {sec.parameter}"
            self.figure(f"scan{suffix}", caption, lambda p: _call(figures.scan_figure, result=res, path=p,
                                                                  unit=self.e_unit, title=title))
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
            labels = sorted({lab for per in table.values() for lab in per}, key=_label_order)
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
        for a, b in sec.differences:
            pts = [(v, table[v][a] - table[v][b]) for v in sorted(table) if a in table[v] and b in table[v]]
            if not pts:
                self.problems.append(f"scan{suffix}: E({a}) - E({b}) not available at any value")
                continue
            item = {"a": a, "b": b, "values": [p[0] for p in pts], "difference": [self.E(p[1]) for p in pts],
                    "difference_hartree": [p[1] for p in pts]}
            if len(pts) >= 2:
                slope = float(np.polyfit([p[0] for p in pts], [p[1] for p in pts], 1)[0])
                item["slope_per_parameter"] = self.E(slope)
            diffs.append(item)
            line = f"E({a}) - E({b}) ({self.e_unit}) at {sec.parameter} = " + ", ".join(
                f"{v:g}: {_fmt(self.E(d), 8)}" for v, d in pts) + "."
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

    # -- [critical] ------------------------------------------------------------------------
    def _critical(self, sec: CriticalSection, suffix: str) -> None:
        spec = self.spec
        vector, scalar, params = spec.models[sec.model].arguments(spec.units)
        jobs = [dict(equation=sec.equation, potential=vector, params=params, state=state, vary=sec.parameter,
                     bracket=tuple(sec.bracket) if sec.bracket else None, tol=sec.tolerance,
                     energy_tol=sec.energy_tolerance, method=spec.method, kind=sec.kind, scalar=scalar or None,
                     units=spec.units, **self.particle_kwargs()) for state in sec.states]
        rows = []
        for state, (ok, got) in zip(sec.states, _map_jobs(_critical_job, jobs, sec.workers)):
            if not ok:
                self.problems.append(f"critical {sec.parameter} of {state} ({sec.model}): {got}")
                rows.append({"state": state, "error": got})
                continue
            rows.append({"state": state, **got})
            if got.get("status", "ok") != "ok":
                self.problems.append(f"critical {sec.parameter} of {state} ({sec.model}): {got.get('status')}: "
                                     f"{got.get('message', '')}")
        flat = [{k: v for k, v in r.items() if not isinstance(v, (dict, list))} for r in rows]
        self.write(f"critical{suffix}.csv", _csv_text(flat))
        self.results.setdefault("critical", []).append({"model": sec.model, "equation": sec.equation,
                                                         "parameter": sec.parameter, "units": spec.units,
                                                         "states": rows})
        md = [f"## Critical {sec.parameter}{suffix}", "",
              f"Model {sec.model}, {sec.equation} equation: the value of {sec.parameter} at which each level stops "
              f"being bound (table `critical{suffix}.csv`; parameter in {spec.units} units).", "",
              f"| state | critical {sec.parameter} | details |", "|---|---:|---|"]
        for r in rows:
            value = _critical_value(r, sec.parameter)
            if "error" in r:
                details = r["error"]
            else:
                bits = []
                if isinstance(r.get("uncertainty"), float):
                    bits.append(f"+- {r['uncertainty']:.2g}")
                bits += [f"status {r['status']}"] if "status" in r else []
                bits += [f"{r['evaluations']} evaluations"] if "evaluations" in r else []
                details = ", ".join(bits)
            md.append(f"| {r['state']} | {_fmt(value, 8)} | {details} |")
            if value is not None:
                self.headline.append(f"critical {sec.parameter} of {r['state']} ({sec.model}, {sec.equation}): "
                                     f"{_fmt(value, 7)}")
        md.append("")
        self.md += md

    # -- [compare] -------------------------------------------------------------------------
    def _compare(self, sec: CompareSection, suffix: str) -> None:
        studies = importlib.import_module("boundkit.studies")
        spec = self.spec
        pot = spec.models[sec.model].potential(spec.units)
        res = _call(studies.compare, potential=pot, params=None, l_max=sec.l_max, levels=sec.levels,
                    particle=spec.particle.name, mass_mev=spec.particle.mass_mev,
                    nucleus_mass_mev=spec.particle.nucleus_mass_mev, tol=sec.tolerance, method=spec.method)
        if not (hasattr(res, "to_dict") and hasattr(res, "table")):
            raise ValueError("boundkit.studies.compare returned no comparison (this installation's studies "
                             "package does not provide it yet)")
        data = _clean(res.to_dict(self.e_unit))
        rows = _rows_of_dict(data)
        self.write(f"compare{suffix}.csv", _csv_text(rows) if rows else json.dumps(data, indent=2))
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

    # -- output ----------------------------------------------------------------------------
    def _write_results(self, seconds: float) -> None:
        spec = self.spec
        doc = {
            "boundkit_version": __version__,
            "run_id": self.run_id,
            "spec": {"file": str(spec.path), "name": spec.name, "title": spec.title, "description": spec.description,
                     "sha256": hashlib.sha256(spec.text.encode("utf-8")).hexdigest()},
            "created": _dt.datetime.now(_dt.timezone.utc).isoformat(timespec="seconds"),
            "seconds": seconds,
            "units": {"energy": self.e_unit, "length": self.l_unit, "parameters": spec.units,
                      "energy_convention": "binding energy = total energy minus rest energy",
                      "energy_hartree_columns": "hartree", "energy_unit_factor_per_hartree": ENERGY_UNITS[self.e_unit],
                      "length_unit_factor_per_bohr": LENGTH_UNITS[self.l_unit]},
            "constants": constants_record(),
            "settings": self._settings(),
            **self.results,
            "problems": list(self.problems),
            "success": not self.problems,
            "headline": list(self.headline),
            "files": sorted(set(self.files) | {"results.json", "report.md"}),
        }
        self.write("results.json", json.dumps(_clean(doc), indent=2, default=_json_default) + "\n")

    def _write_report(self, seconds: float) -> None:
        spec = self.spec
        s = self._settings()
        mass = f"{s['particle_mass_MeV']:.9g} MeV"
        nucleus = (f", reduced mass with a nucleus of {s['nucleus_mass_MeV']:.9g} MeV"
                   if s["nucleus_mass_MeV"] else "")
        lines = [f"# {spec.title}", "", spec.description, "",
                 f"Computed by boundkit {__version__} in {seconds:.1f} s from `spec.toml` (a copy of "
                 f"`{spec.path.name}`). Particle: {s['particle']} ({mass}){nucleus}. Potential parameters in "
                 f"{spec.units} units ({'MeV and fm' if spec.units == 'nuclear' else 'hartree and bohr'}). "
                 f"Energies in {self.e_unit} (binding energy: total minus rest energy), lengths in {self.l_unit}. "
                 f"Constants: CODATA via scipy.constants (alpha = {constants_record()['alpha']:.12g}). "
                 "All numbers are in `results.json`; tables are CSV files.", ""]
        lines += ["## Headline numbers", ""]
        lines += [f"- {h}" for h in self.headline] or ["- (none)"]
        lines.append("")
        lines += ["## Status", ""]
        if self.problems:
            lines.append("Some things did not go as asked:")
            lines += [f"- {p}" for p in self.problems]
        else:
            lines.append("Every requested level was found and met its tolerance.")
        lines.append("")
        lines += self.md
        if self.figures:
            lines += ["## Figures", ""]
            for name, caption in self.figures:
                lines += [f"![{caption}]({name})", "", f"*{caption}* (`{name}`)", ""]
        self.write("report.md", "\n".join(lines).rstrip() + "\n")


# ---------------------------------------------------------------------------------------------
# reading study results whose exact layout belongs to boundkit.studies
# ---------------------------------------------------------------------------------------------
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


def _scan_table(rows: list[dict], parameter: str) -> dict[float, dict[str, float]]:
    """{parameter value: {level label: energy in hartree}} from scan rows."""
    out: dict[float, dict[str, float]] = {}
    for r in rows:
        value = r.get(parameter, r.get("value"))
        label = r.get("label")
        energy = r.get("energy_hartree", r.get("energy"))
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
    from threadpoolctl import threadpool_limits

    studies = importlib.import_module("boundkit.studies")
    try:
        with threadpool_limits(limits=1, user_api="blas"):   # small matrices: threads only contend
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


def _map_jobs(func, jobs: list, workers: int | None) -> list:
    """``[func(job) for job in jobs]``, on up to ``workers`` processes (default: all cores)."""
    workers = min(_workers(workers) or os.cpu_count() or 1, len(jobs))
    if workers <= 1:
        return [func(j) for j in jobs]
    try:
        import pickle

        pickle.dumps(jobs)
    except Exception as exc:  # noqa: BLE001 - unpicklable terms: run here instead
        log.info("jobs cannot go to worker processes (%s); running them here", exc)
        return [func(j) for j in jobs]
    from concurrent.futures import ProcessPoolExecutor

    with ProcessPoolExecutor(max_workers=workers) as pool:
        return list(pool.map(func, jobs))


def _label_order(label: str) -> tuple:
    """Sort key of a level label: n, then l, then j (``2s`` < ``2p1/2`` < ``2p3/2`` < ``3s``)."""
    m = re.match(r"(\d+)([a-z])(?:(\d+)/2)?", label)
    if not m:
        return (math.inf, label)
    return (int(m.group(1)), _LETTERS.find(m.group(2)), int(m.group(3) or 0), label)


def _scan_figure(table: dict, parameter: str, unit: str, path, title: str = "", x_unit: str = ""):
    """Levels against the scanned parameter (used when boundkit.studies.figures is not there)."""
    from ..plots import _colour, plt, save_figure

    fig, ax = plt.subplots(figsize=(6.8, 4.6))
    labels = sorted({lab for per in table.values() for lab in per}, key=_label_order)
    xs = sorted(table)
    for i, lab in enumerate(labels):
        y = [hartree_to(table[x][lab], unit) if lab in table[x] else np.nan for x in xs]
        ax.plot(xs, y, "o-", ms=3.5, lw=1.4, color=_colour(i), label=lab)
    if xs and min(xs) > 0 and max(xs) / min(xs) > 20:
        ax.set_xscale("log")
    ax.axhline(0.0, color="0.6", lw=0.7)
    ax.set_xlabel(f"{parameter} ({x_unit})" if x_unit else parameter)
    ax.set_ylabel(f"binding energy ({unit})")
    ax.set_title(title or f"levels against {parameter}")
    ax.legend(fontsize=8)
    ax.grid(True, alpha=0.25)
    return save_figure(fig, path)


def _split_label(text: str) -> tuple[str | None, str]:
    """("dirac", "1s1/2") from "dirac:1s1/2"; (None, "1s1/2") from "1s1/2"."""
    eq, sep, label = text.partition(":")
    if not sep:
        return None, text.strip()
    return _EQUATIONS.get(eq.strip().lower(), eq.strip().lower()), label.strip()


def _critical_value(row: dict, parameter: str) -> float | None:
    for key in ("critical", "value", parameter, "critical_value"):
        v = row.get(key)
        if isinstance(v, (int, float)) and not isinstance(v, bool) and math.isfinite(v):
            return float(v)
    return None
