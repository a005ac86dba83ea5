"""``boundkit converge`` (energies against resolution) and ``boundkit validate`` (the exact-case catalogue)."""
from __future__ import annotations

import json
import sys

import click

from .common import (EXIT_BAD_INPUT, EXIT_NOT_CONVERGED, check_particle, check_plot_path, fail, json_default,
                     write_figure)
from .options import build_potential, potential_options

__all__ = ["converge_cmd", "validate_cmd"]


@click.command("converge")
@click.option("--equation", "-e", default="dirac", show_default=True)
@potential_options
@click.option("--l", "l", type=int, default=None)
@click.option("--kappa", type=int, default=None)
@click.option("--levels", "-n", type=int, default=1, show_default=True)
@click.option("--method", type=click.Choice(["both", "spectral", "finite-difference"]), default="both",
              show_default=True)
@click.option("--order", type=int, default=8, show_default=True, help="Finite-difference order.")
@click.option("--particle", default=None)
@click.option("--mass-mev", type=float, default=None)
@click.option("--plot", "plot_path", default=None, help="Write a log-log figure (.png, .svg or .pdf).")
@click.option("--json", "as_json", is_flag=True)
def converge_cmd(equation, potentials, scalars, exprs, scalar_exprs, files, table_tail, table_tail_charge,
                 table_origin, table_r_unit, table_v_unit, params, unit_system, l, kappa, levels, method, order,
                 particle, mass_mev, plot_path, as_json):
    """Energies against resolution for one channel, with the observed order."""
    from ..accuracy import converge

    methods = ("spectral", "finite-difference") if method == "both" else (method,)
    check_particle(particle, mass_mev)
    check_plot_path(plot_path)
    try:
        vector, scalar, values = build_potential(potentials, scalars, exprs, scalar_exprs, files, table_tail,
                                                 table_tail_charge, table_origin, table_r_unit, table_v_unit,
                                                 params)
        res = converge(equation, vector, values, l=l, kappa=kappa, levels=levels, methods=methods,
                       order=order, particle=particle, mass_mev=mass_mev, scalar=scalar or None,
                       units=unit_system)
    except ValueError as exc:
        fail(str(exc))
    if as_json:
        click.echo(json.dumps(res.to_dict(), default=json_default, indent=2))
    else:
        click.echo(f"{res.equation} equation, potential {res.potential}; errors relative to a spectral "
                   "solve at tol 1e-13")
        click.echo(res.table())
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
    if plot_path and written is None:
        sys.exit(EXIT_BAD_INPUT)


@click.command("validate")
@click.option("--quick", is_flag=True, help="A small subset that runs in seconds.")
@click.option("--method", type=click.Choice(["both", "spectral", "finite-difference"]), default="both",
              show_default=True)
@click.option("--json", "as_json", is_flag=True)
def validate_cmd(quick, method, as_json):
    """Run the exact-case catalogue; exit 1 if any case fails."""
    from ..validate import format_table, run_validation

    methods = ("spectral", "finite-difference") if method == "both" else (method,)
    rows = run_validation(quick=quick, methods=methods)
    if as_json:
        click.echo(json.dumps({"cases": rows, "passed": all(r["passed"] for r in rows)}, default=json_default,
                              indent=2))
    else:
        click.echo(format_table(rows))
    if not all(r["passed"] for r in rows):
        sys.exit(1)


