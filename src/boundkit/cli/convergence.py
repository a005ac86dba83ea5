"""``boundkit converge`` (energies against resolution) and ``boundkit validate`` (the exact-case catalogue)."""
from __future__ import annotations

import sys

import click

from .common import (EXIT_BAD_INPUT, EXIT_NOT_CONVERGED, api_message, check_particle, check_plot_path, fail,
                     given_option, json_text, report_unit, write_figure)
from .options import (build_potential, channel_options, energy_unit_option, equation_option, json_option,
                      levels_option, method_option, order_option, particle_options, plot_option,
                      potential_options, tol_option)

__all__ = ["converge_cmd", "validate_cmd"]


@click.command("converge")
@equation_option()
@potential_options
@channel_options(j=False)
@levels_option(1)
@method_option(families=True)
@order_option()
@tol_option(1e-13, "Relative tolerance of the reference solve the errors are measured against.")
@particle_options()
@energy_unit_option()
@plot_option("the errors against resolution on log-log axes")
@json_option()
def converge_cmd(equation, potentials, scalars, exprs, scalar_exprs, files, table_tail, table_tail_charge,
                 table_origin, table_r_unit, table_v_unit, params, unit_system, l, kappa, levels, max_levels, method,
                 order, tol, particle, mass_mev, nucleus_mass_mev, energy_unit, plot_path, as_json):
    """Energies against resolution for one channel, with the observed order."""
    from ..accuracy import converge

    methods = ("spectral", "finite-difference") if method == "both" else (method,)
    if method == "spectral" and given_option("order"):
        fail("--order: only the finite-difference family takes an order; drop it, or use --method "
             "finite-difference or both")
    check_particle(particle, mass_mev)
    check_plot_path(plot_path)
    try:
        unit = report_unit(energy_unit, unit_system)
        vector, scalar, values = build_potential(potentials, scalars, exprs, scalar_exprs, files, table_tail,
                                                 table_tail_charge, table_origin, table_r_unit, table_v_unit,
                                                 params)
        res = converge(equation, vector, values, l=l, kappa=kappa, levels=levels, max_levels=max_levels,
                       methods=methods, order=order, tol=tol, particle=particle, mass_mev=mass_mev,
                       nucleus_mass_mev=nucleus_mass_mev, scalar=scalar or None, units=unit_system)
    except ValueError as exc:
        fail(api_message(exc, {"max_levels": "--max-levels"}))
    if as_json:
        click.echo(json_text(res.to_dict(unit)))
    else:
        missed = "" if res.reference_status == "ok" else f", which it did not meet ({res.reference_status})"
        click.echo(f"{res.equation} equation, potential {res.potential}; errors relative to a spectral "
                   f"solve at tol {tol:g}{missed}")
        click.echo(res.table(unit))
    written = None
    if plot_path:
        from ..plots import convergence_figure

        written = write_figure(lambda p: convergence_figure(res, p), plot_path)
        if written and not as_json:
            click.echo(f"figure: {written}")
    if len(res.reference) < levels:
        click.echo(f"boundkit: partial: found {len(res.reference)} of {levels} requested levels; the table "
                   "shows those found", err=True)
        sys.exit(EXIT_NOT_CONVERGED)
    if res.reference_status != "ok":     # as solve reports a tol it cannot reach: the table stands, exit 3
        click.echo(f"boundkit: {res.reference_status}: reference solve: {res.reference_message}", err=True)
        sys.exit(EXIT_NOT_CONVERGED)
    if plot_path and written is None:
        sys.exit(EXIT_BAD_INPUT)


@click.command("validate")
@click.option("--quick", is_flag=True, help="A small subset that runs in seconds.")
@method_option(families=True)
@json_option()
def validate_cmd(quick, method, as_json):
    """Run the exact-case catalogue; exit 1 if any case fails."""
    from ..validate import format_table, run_validation

    methods = ("spectral", "finite-difference") if method == "both" else (method,)
    rows = run_validation(quick=quick, methods=methods)
    if as_json:
        click.echo(json_text({"cases": rows, "passed": all(r["passed"] for r in rows)}))
    else:
        click.echo(format_table(rows))
    if not all(r["passed"] for r in rows):
        sys.exit(1)


