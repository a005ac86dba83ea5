"""Command line for the studies: ``boundkit scan``, ``boundkit critical``, ``boundkit compare``.

Parse, call :mod:`boundkit.studies`, print. No numerics here. Registered on the ``boundkit`` group by :mod:`boundkit.cli`.
"""
from __future__ import annotations

import math
import sys

import click

from .._checks import MAX_L
from .common import (EXIT_BAD_INPUT, EXIT_NOT_CONVERGED, MAX_MESSAGE, api_message, check_output_folder, check_particle,
                     check_plot_path, check_tol,
                     clip_message, fail, json_text, report_unit, write_figure)
from .options import (build_potential, channel_options, energy_unit_option, equation_option, json_option,
                      labels_option, levels_option, method_option, order_option, particle_options,
                      plot_option, potential_options, tol_option)

__all__ = ["scan_cmd", "critical_cmd", "compare_cmd"]


def _rms_rule(text: str | None, values: dict, varied=()) -> None:
    """--rms-rule R0,A_PER_Z: rms_fm follows Z at every point (so it cannot be one of ``varied``)."""
    if text is None:
        return
    from ..studies import NuclearRadius

    if "rms_fm" in varied:
        fail("--vary rms_fm: --rms-rule computes rms_fm from Z at every point, so rms_fm cannot be varied; "
             "drop --rms-rule, or vary Z")

    parts = [p.strip() for p in str(text).replace(":", ",").split(",")]
    try:
        r0, apz = (float(p) for p in parts)
    except ValueError:
        fail(f"--rms-rule {text!r}: write R0,A_PER_Z in fm and nucleons per charge, e.g. --rms-rule 1.2,2.5")
    if "rms_fm" in values:
        fail("--rms-rule sets rms_fm at every point; leave out --param rms_fm")
    values["rms_fm"] = NuclearRadius(r0, apz)


def _check_vary(text: str, values: list[float]) -> None:
    """Refuse what a run spec's [scan] refuses (:mod:`boundkit.runspec.spec`): a range of fewer than 2
    points (``START:STOP:1`` drops STOP) and a value given twice (solved twice)."""
    name, _, rhs = str(text).partition("=")
    name, parts = name.strip(), [p.strip() for p in rhs.split(":")]
    if len(parts) > 1 and len(values) < 2:
        fail(f"--vary {text!r}: a range needs N >= 2 points (N = 1 drops STOP = {parts[1]}); write e.g. "
             f"{name}={parts[0]}:{parts[1]}:2, or {name}={parts[0]} for one value")
    seen = set()
    for v in values:
        if v in seen:
            if len(parts) > 1:
                fail(f"--vary {text!r}: the range gives the value {v:g} more than once (it would be solved again); "
                     f"make START and STOP differ, or write {name}={v:g} for one value")
            fail(f"--vary {text!r}: the value {v:g} is listed twice (it would be solved twice); list each value once")
        seen.add(v)


# --- scan -----------------------------------------------------------------------------------
@click.command("scan")
@equation_option(multiple=True)
@potential_options
@click.option("--vary", "varies", multiple=True, required=True, metavar="NAME=START:STOP:N[:log]",
              help="Parameter to vary: NAME=START:STOP:N (even steps), NAME=START:STOP:N:log, or "
                   "NAME=v1,v2,...; give one or two.")
@channel_options(multiple=True)
@levels_option(3, what="Number of lowest levels followed per channel")
@tol_option(1e-10)
@particle_options()
@method_option()
@order_option()
@click.option("--rms-rule", default=None, metavar="R0,A_PER_Z",
              help="Set rms_fm at every point from Z: uniform sphere of radius R0 (A_PER_Z Z)^(1/3) fm.")
@click.option("--workers", type=int, default=None, help="Local worker processes (default and most: the cores).")
@click.option("--max-points", type=int, default=None,
              help="Largest number of points the scan may have (default 10000).")
@click.option("--scheduler", default=None, metavar="ADDRESS",
              help="Dask scheduler address, e.g. tcp://127.0.0.1:8786 (needs boundkit[dask]).")
@click.option("--out", "out", default=None, type=click.Path(file_okay=False),
              help="Directory for per-point files, scan.csv and scan.json; a rerun reuses finished points.")
@plot_option("the levels against the varied parameter")
@energy_unit_option()
@click.option("--progress/--no-progress", default=None, help="Progress bar on stderr (default: on a terminal).")
@labels_option
@json_option()
def scan_cmd(equations, potentials, scalars, exprs, scalar_exprs, files, table_tail, table_tail_charge,
             table_origin, table_r_unit, table_v_unit, params, unit_system, varies, ls, kappas, js, levels, max_levels,
             tol, particle, mass_mev, nucleus_mass_mev, method, order, rms_rule, workers, max_points, scheduler, out,
             plot_path, energy_unit, progress, labels, as_json):
    """Levels over a grid of one or two potential parameters.

    Each level is followed across the grid by its label (node count), so a
    curve is broken only where the level is not bound.
    """
    from ..studies import StudyError, parse_vary, scan

    check_particle(particle, mass_mev)
    check_plot_path(plot_path)
    check_output_folder(out, "--out")
    try:
        unit = report_unit(energy_unit, unit_system)
        if len(varies) > 2:
            raise ValueError("--vary: give one or two parameters")
        limit = {} if max_points is None else {"max_points": max_points}
        vary = {}
        for text in varies:
            name, values = parse_vary(text, **limit)
            _check_vary(text, values)
            vary[name] = values
        if len(vary) < len(varies):
            raise ValueError("--vary: each parameter may be varied once")
        # expression and model-file terms are built now: give them the first value of each varied parameter
        first = tuple(f"{k}={v[0]!r}" for k, v in vary.items() if not any(p.split("=")[0].strip() == k
                                                                         for p in params))
        vector, scalar, values = build_potential(potentials, scalars, exprs, scalar_exprs, files, table_tail,
                                                 table_tail_charge, table_origin, table_r_unit, table_v_unit,
                                                 tuple(params) + first)
        _rms_rule(rms_rule, values, vary)
        if js and len(js) != len(ls):
            raise ValueError(f"--j: give one --j per --l, in the same order (got {len(js)} --j for {len(ls)} --l)")
        channels = ([{"l": x, "j": y} for x, y in zip(ls, js)] if js else [{"l": x} for x in ls]) + \
            [{"kappa": x} for x in kappas] or None
        kwargs = {k: v for k, v in (("particle", particle), ("mass_mev", mass_mev),
                                    ("nucleus_mass_mev", nucleus_mass_mev), ("order", order)) if v is not None}
        res = scan(list(equations) or ["schrodinger"], vector, values, vary, channels=channels, levels=levels,
                   max_levels=max_levels, tol=tol, method=method, workers=workers, scheduler=scheduler, out=out,
                   progress=progress, scalar=scalar or None, units=unit_system, labels=labels, energy_unit=unit,
                   **limit, **kwargs)
    except (ValueError, StudyError) as exc:   # StudyError: a Dask cluster without workers
        fail(api_message(exc, {"max_levels": "--max-levels", "vary": "--vary"}))
    if as_json:
        click.echo(json_text(res.to_dict(unit)))
    else:
        click.echo(res.table(unit))
        click.echo("")
        click.echo(f"{len(res.rows)} rows; {res.solved} point(s) solved, {res.reused} reused; {res.seconds:.1f} s")
        if out and not res.problems:
            click.echo(f"results: {out}/scan.csv, {out}/scan.json")
    for problem in res.problems:   # output files that could not be written; the table above is complete
        click.echo(f"boundkit: error: {problem}", err=True)
    written = None
    if plot_path:
        from ..studies.figures import scan_figure

        written = write_figure(lambda p: scan_figure(res, p, unit=unit), plot_path)
        if written and not as_json:
            click.echo(f"figure: {written}")
    bad = [r for r in res.rows if r["status"] in ("error", "tolerance-not-met", "missing")]
    if bad:
        click.echo("boundkit: " + clip_message(f"{len(bad)} row(s) with status error, tolerance-not-met or missing; "
                                               f"first: {bad[0]['label']} ({bad[0]['status']}: {bad[0]['message']})"),
                   err=True)
        sys.exit(EXIT_NOT_CONVERGED)
    if res.problems or (plot_path and written is None):
        sys.exit(EXIT_BAD_INPUT)


# --- critical -------------------------------------------------------------------------------
def _bracket(text: str | None):
    if text is None:
        return None
    parts = [p.strip() for p in str(text).replace(":", ",").split(",")]
    try:
        a, b = (float(p) for p in parts)
    except ValueError:
        fail(f"--bracket {text!r}: write two numbers, e.g. --bracket 1.0,3.0")
    return a, b


def _number(x: float | None, spec: str) -> str:
    """``x`` formatted by ``spec``; 'nan' right-aligned for None (a value a record could not convert)."""
    return format(math.nan if x is None else x, spec)


@click.command("critical")
@equation_option()
@potential_options
@click.option("--state", required=True, help="Level: 1s, 2p (Schrodinger, Klein-Gordon); 1s1/2, 2p3/2 (Dirac).")
@click.option("--vary", required=True, metavar="NAME", help="Parameter to vary; its --param value is the start.")
@click.option("--bracket", default=None, metavar="A,B", help="Values with the level bound at one, absent at the other.")
@click.option("--kind", type=click.Choice(["unbind", "dive", "merge"]), default=None,
              help="unbind (E -> 0), dive (E -> -2mc^2) or merge (Klein-Gordon: meets an antiparticle level); "
                   "default: dive with a Coulomb tail, else unbind.")
@tol_option(1e-8, "Relative tolerance of the critical value.")
@click.option("--energy-tol", type=float, default=1e-10, show_default=True, help="Relative tolerance of each energy.")
@click.option("--max-evaluations", type=int, default=40, show_default=True, help="Budget of solves.")
@particle_options()
@method_option()
@order_option()
@click.option("--rms-rule", default=None, metavar="R0,A_PER_Z",
              help="Set rms_fm at every point from Z: uniform sphere of radius R0 (A_PER_Z Z)^(1/3) fm.")
@labels_option
@click.option("--beyond", default=None, metavar="D1,D2,...",
              help="Diving only: follow the dived level this far past the critical value (e.g. 3,5,10) as a "
                   "resonance E + i Gamma/2 in the lower continuum (complex scaling).")
@energy_unit_option()
@click.option("--json", "as_json", is_flag=True,
              help="Print one JSON object (parameter, value, uncertainty, state, equation, kind, bracket, ...).")
def critical_cmd(equation, potentials, scalars, exprs, scalar_exprs, files, table_tail, table_tail_charge,
                 table_origin, table_r_unit, table_v_unit, params, unit_system, state, vary, bracket, kind, tol,
                 energy_tol, max_evaluations, particle, mass_mev, nucleus_mass_mev, method, order, rms_rule,
                 labels, beyond, energy_unit, as_json):
    """Parameter value where a level unbinds (E -> 0), dives into the lower continuum, or merges."""
    from ..studies import StudyError, critical

    check_tol(energy_tol, "--energy-tol")
    check_particle(particle, mass_mev)
    br = _bracket(bracket)
    try:
        unit = report_unit(energy_unit, unit_system)
        extra = ()
        if br is not None and not any(p.split("=")[0].strip() == vary for p in params):
            extra = (f"{vary}={br[0]!r}",)
        vector, scalar, values = build_potential(potentials, scalars, exprs, scalar_exprs, files, table_tail,
                                                 table_tail_charge, table_origin, table_r_unit, table_v_unit,
                                                 tuple(params) + extra)
        _rms_rule(rms_rule, values, (vary,))
        kwargs = {k: v for k, v in (("particle", particle), ("mass_mev", mass_mev),
                                    ("nucleus_mass_mev", nucleus_mass_mev), ("order", order)) if v is not None}
        if beyond is not None:
            try:
                kwargs["beyond"] = tuple(float(x) for x in beyond.split(","))
            except ValueError:
                raise ValueError(f"--beyond {beyond!r}: write distances separated by commas, e.g. --beyond 3,5,10") \
                    from None
        res = critical(equation, vector, values, state=state, vary=vary, bracket=br, tol=tol, kind=kind,
                       energy_tol=energy_tol, max_evaluations=max_evaluations, method=method,
                       scalar=scalar or None, units=unit_system, labels=labels, energy_unit=unit, **kwargs)
    except ValueError as exc:
        fail(api_message(exc, {"vary": "--vary"}))
    except StudyError as exc:
        click.echo(f"boundkit: failed: {exc}", err=True)
        sys.exit(EXIT_NOT_CONVERGED)
    if as_json:
        click.echo(json_text(res.to_dict(unit)))
    else:
        lo, hi = res.bracket
        pu = f" {res.parameter_unit}" if res.parameter_unit else ""
        doing = {"unbind": "unbinding", "dive": "diving", "merge": "merging with an antiparticle level"}[res.kind]
        click.echo(f"{res.state} ({res.equation} equation), {doing}")
        click.echo(f"critical {res.parameter} = {res.value_text}")
        click.echo(f"bracket: level found at {res.parameter} = {lo:.12g}{pu}, absent at "
                   f"{'-' if hi is None else format(hi, '.12g') + pu}")
        click.echo(f"{res.evaluations} evaluations; status: {res.status} - {res.message}")
        click.echo(f"uncertainty: {res.uncertainty_meaning}")
        click.echo(f"bracket: {res.bracket_meaning}")
        if res.beyond:
            click.echo(f"past the critical value, a resonance E + i Gamma/2 below -2 m c^2 (complex scaling), {unit}:")
            click.echo(f"{res.parameter:>14} {'label':<8} {'energy':>20} {'+-':>8} {'width':>14} {'+-':>8}  status")
            for b in (b.to_dict(unit) for b in res.beyond):
                click.echo(f"{b['value']:>14.10g} {b['label']:<8} {_number(b['energy'], '20.12g')} "
                           f"{_number(b['energy_error'], '8.2g')} {_number(b['width'], '14.8g')} "
                           f"{_number(b['width_error'], '8.2g')}  {b['status']}")
    if not res.success:
        click.echo(f"boundkit: {res.status}: {res.message}", err=True)
        sys.exit(EXIT_NOT_CONVERGED)


# --- compare --------------------------------------------------------------------------------
@click.command("compare")
@potential_options
@click.option("--l-max", type=int, default=1, show_default=True, help="Largest orbital l.")
@click.option("--max-l-max", type=int, default=MAX_L, show_default=True,
              help="Largest --l-max accepted (each l is three equations' solves).")
@levels_option(2)
@tol_option(1e-10)
@particle_options()
@method_option()
@order_option()
@energy_unit_option()
@click.option("--splitting-unit", default=None,
              help="Unit of shifts and splittings (default: the energy unit), e.g. MHz or GHz.")
@labels_option
@json_option("Print one JSON object instead of tables.")
def compare_cmd(potentials, scalars, exprs, scalar_exprs, files, table_tail, table_tail_charge, table_origin,
                table_r_unit, table_v_unit, params, unit_system, l_max, max_l_max, levels, max_levels, tol, particle,
                mass_mev, nucleus_mass_mev, method, order, energy_unit, splitting_unit, labels, as_json):
    """Schrodinger, Klein-Gordon and Dirac levels side by side, with shifts and fine structure."""
    from ..studies import compare

    check_particle(particle, mass_mev)
    try:
        unit = report_unit(energy_unit, unit_system)
        sunit = report_unit(splitting_unit, unit_system) if splitting_unit else unit
        vector, scalar, values = build_potential(potentials, scalars, exprs, scalar_exprs, files, table_tail,
                                                 table_tail_charge, table_origin, table_r_unit, table_v_unit,
                                                 params)
        kwargs = {k: v for k, v in (("nucleus_mass_mev", nucleus_mass_mev), ("order", order)) if v is not None}
        res = compare(vector, values, l_max=l_max, max_l_max=max_l_max, levels=levels, max_levels=max_levels,
                      particle=particle, mass_mev=mass_mev, tol=tol, method=method, scalar=scalar or None,
                      units=unit_system, labels=labels, **kwargs)
    except ValueError as exc:
        fail(api_message(exc, {"max_levels": "--max-levels", "max_l_max": "--max-l-max"}))
    if as_json:
        click.echo(json_text(res.to_dict(unit, sunit)))
    else:
        click.echo(res.table(unit, sunit))
    if not res.success:    # one line: channels grouped by status and reason, each reason once (--json: all)
        head = "not every channel was solved: "
        click.echo(f"boundkit: {clip_message(head + res.problems(MAX_MESSAGE - len(head)))}", err=True)
        sys.exit(EXIT_NOT_CONVERGED)
