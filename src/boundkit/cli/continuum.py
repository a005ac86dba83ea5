"""Command line for the continuum: ``boundkit phases``.

Parse, call :mod:`boundkit.scattering`, print. No numerics here. Registered on the
``boundkit`` group by :mod:`boundkit.cli`.
"""
from __future__ import annotations

import sys

import click

from .._checks import MAX_PHASE_NODES, MAX_REPULSIVE_ETA
from .common import (EXIT_BAD_INPUT, EXIT_NOT_CONVERGED, api_message, check_plot_path, fail, json_text, report_unit,
                     write_figure)
from .options import (build_potential, channel_options, energy_unit_option, equation_option, json_option,
                      particle_options, plot_option, potential_options, tol_option)

__all__ = ["phases_cmd"]

_LIMITS = {"max_nodes": "--max-nodes", "max_eta": "--max-eta", "hard_core": "--hard-core", "tol": "--tol"}
"""The API keywords of the limits of :func:`boundkit.scattering.phase_shifts` -> the options that feed them."""


def _energy_grid(text: str | None) -> list[float] | None:
    """--energies START:STOP:N, START:STOP:N:log or E1,E2,..."""
    if text is None:
        return None
    from ..studies.scan import parse_vary

    try:
        return parse_vary(f"energies={text}")[1]
    except ValueError:
        raise ValueError(f"--energies: cannot read {text!r}; write START:STOP:N, START:STOP:N:log or E1,E2,... "
                         "(kinetic energies above threshold, N a whole number)") from None


@click.command("phases")
@equation_option()
@potential_options
@channel_options()
@click.option("--energies", default=None, metavar="START:STOP:N[:log] | E1,E2,...",
              help="Kinetic energies above threshold (total minus rest), in --energy-unit.")
@energy_unit_option(what="Unit of --energies and of reported energies")
@click.option("--hard-core", type=float, default=None, help="Radius of an impenetrable core (bohr; fm with --units nuclear).")
@tol_option(1e-8, "Target accuracy of each phase (rad).")
@click.option("--scattering-length", "want_a", is_flag=True, help="Also give the s-wave scattering length and effective range (l = 0; Dirac kappa = -1).")
@click.option("--levinson", "want_levinson", is_flag=True,
              help="Check Levinson's theorem on its own energy grid (Schrodinger, short-range; no --energies).")
@click.option("--bound-levels", type=int, default=None, help="With --levinson: number of bound levels to compare with.")
@click.option("--max-nodes", type=int, default=None,
              help=f"Most nodes of the solution the integration follows up to the matching radius (default "
                   f"{MAX_PHASE_NODES}; about 100 a second); higher energies or a larger --hard-core need more.")
@click.option("--max-eta", type=float, default=None,
              help=f"Largest Sommerfeld parameter eta of a repulsive Coulomb tail (default {MAX_REPULSIVE_ETA:g}; "
                   "Schrodinger, Klein-Gordon): deeper under the barrier the Coulomb functions take minutes.")
@particle_options()
@plot_option("the phase shift delta against E")
@json_option()
def phases_cmd(equation, potentials, scalars, exprs, scalar_exprs, files, table_tail, table_tail_charge, table_origin,
               table_r_unit, table_v_unit, params, unit_system, l, kappa, j, energies, energy_unit, hard_core, tol,
               want_a, want_levinson, bound_levels, max_nodes, max_eta, particle, mass_mev, nucleus_mass_mev, plot_path,
               as_json):
    """Phase shifts delta(E) of one channel above threshold (absolute branch; relative to
    the Coulomb phase when the potential has a Coulomb tail)."""
    from ..scattering import levinson, phase_shifts, scattering_length

    check_plot_path(plot_path)
    out: dict = {}
    try:
        unit = report_unit(energy_unit, unit_system)
        grid = _energy_grid(energies)
        if want_levinson and grid is not None:
            raise ValueError("--levinson chooses its own energy grid; leave out --energies")
        if not want_levinson and grid is None:
            raise ValueError("--energies is required (e.g. --energies 0.01:2:40:log), or give --levinson")
        for option, value in (("--kappa", kappa), ("--j", j)):
            if want_levinson and value is not None:     # levinson() takes l alone
                raise ValueError(f"{option}: --levinson checks a Schrodinger channel given by --l alone; leave out "
                                 f"{option}")
        if bound_levels is not None and not want_levinson:
            raise ValueError("--bound-levels goes with --levinson")
        limits = {k: v for k, v in (("max_nodes", max_nodes), ("max_eta", max_eta)) if v is not None}
        if want_levinson and limits:
            raise ValueError(f"{_LIMITS[next(iter(limits))]} goes with --energies (the phase shifts); --levinson "
                             "chooses its own energy grid: leave it out")
        if want_a and l not in (None, 0):     # the API's scattering length takes no l: it is the s-wave one
            raise ValueError(f"--scattering-length is the s-wave (l = 0) scattering length; leave it out with "
                             f"--l {l} (no scattering volume for l > 0 is computed), or give --l 0")
        vector, scalar, values = build_potential(potentials, scalars, exprs, scalar_exprs, files, table_tail,
                                                 table_tail_charge, table_origin, table_r_unit, table_v_unit, params)
        common = dict(particle=particle, mass_mev=mass_mev, nucleus_mass_mev=nucleus_mass_mev, units=unit_system)
        if want_levinson:
            if hard_core is not None or scalar:
                raise ValueError("--levinson takes neither --hard-core nor scalar terms")
            check = levinson(equation, vector, values, l=l, n_bound=bound_levels, **common)
            res = check.phases
            out["levinson"] = check
        else:
            res = phase_shifts(grid, equation, vector, values, l=l, kappa=kappa, j=j, scalar=scalar or None,
                               hard_core=hard_core, energy_unit=unit, tol=tol, **limits, **common)
        if want_a:
            out["scattering_length"] = scattering_length(equation, vector, values, kappa=kappa,
                                                         scalar=scalar or None, hard_core=hard_core, **common)
    except ValueError as exc:
        fail(api_message(exc, _LIMITS))
    if as_json:     # to_dict gives lengths in the call's unit system (fm with --units nuclear), as the text
        record = {"phases": res.to_dict(unit)}
        if "levinson" in out:
            record["levinson"] = {k: v for k, v in out["levinson"].to_dict(unit).items() if k != "phases"}
        if "scattering_length" in out:
            record["scattering_length"] = out["scattering_length"].to_dict()
        click.echo(json_text(record))
    else:
        from ..units import FM_PER_BOHR
        lunit = "fm" if unit_system == "nuclear" else "bohr"
        per = FM_PER_BOHR if unit_system == "nuclear" else 1.0
        click.echo(res.table(unit, lunit))
        if "levinson" in out:
            c = out["levinson"]
            click.echo(f"Levinson: delta(0) - delta(inf) = {c.count_from_phase} pi (following delta along the grid: "
                       f"{c.count_unwrapped} pi); status: {c.status} - {c.message}")
        if "scattering_length" in out:
            a = out["scattering_length"]
            re_ = "" if a.effective_range is None else (f", effective range r_e = {a.effective_range * per:.12g} +- "
                                                        f"{a.effective_range_error * per:.2g} {lunit}")
            click.echo(f"scattering length a = {a.a * per:.12g} +- {a.a_error * per:.2g} {lunit}{re_} "
                       f"({a.convention}); status: {a.status}")
    written = None
    if plot_path:         # after the results are out: a figure that cannot be written costs only the figure
        from ..scattering.figure import phase_figure

        written = write_figure(lambda p: phase_figure(res, p, unit=unit), plot_path)
        if written and not as_json:
            click.echo(f"figure: {written}")
    bad = [x for x in (res, *out.values()) if not x.success]
    if bad:
        click.echo(f"boundkit: {bad[0].status}: {bad[0].message}", err=True)
        sys.exit(EXIT_NOT_CONVERGED)
    if plot_path and written is None:
        sys.exit(EXIT_BAD_INPUT)
