"""Command line for ``boundkit resonances``: complex-scaling eigenvalues in an energy window.

Parse, call :func:`boundkit.resonances`, print. No numerics here. Registered on the ``boundkit`` group by :mod:`boundkit.cli`.
"""
from __future__ import annotations


import click

from .common import api_message, fail, json_text, report_length, report_unit
from .options import (build_potential, channel_options, energy_unit_option, equation_option, json_option, particle_options,
                      potential_options, subset_params, tol_option)

__all__ = ["resonances_cmd"]

_OPTIONS = {"window": "--window", "r0": "--r0", "r_max": "--r-max"}
"""API keywords of :func:`boundkit.resonances` -> the options that feed them, named in refusals."""


def _numbers(option: str, text: str, count: int | None = None) -> tuple[float, ...]:
    parts = [p.strip() for p in str(text).split(",")]
    try:
        values = tuple(float(p) for p in parts)
    except ValueError:
        values = ()
    if not values or (count is not None and len(values) != count):
        want = "two numbers LO,HI" if count == 2 else "numbers separated by commas"
        fail(f"{option} {text!r}: write {want}, e.g. {option} {'3,4' if count == 2 else '0.25,0.35'}")
    return values


@click.command("resonances")
@equation_option()
@potential_options
@click.option("--absorptive-expr", "absorptive", multiple=True,
              help="Imaginary part W(r) of the potential as an expression, V = V_R + i W (W < 0 absorbs).")
@channel_options(j=False)
@click.option("--window", required=True, metavar="LO,HI",
              help="Range of the real part of the binding energy, in --energy-unit.")
@click.option("--angles", default="0.25,0.35", show_default=True, metavar="T1,T2,...",
              help="Complex-scaling angles in radians (at least two, one at least 0.05 rad from the first).")
@click.option("--order", type=int, default=12, show_default=True,
              help="Lobatto order of the elements; the stability test also uses order - 4.")
@click.option("--r0", type=float, default=None,
              help="Start of the rotated segment in bohr, fm with --units nuclear (default: automatic).")
@click.option("--r-max", type=float, default=None,
              help="End of the mesh in bohr, fm with --units nuclear (default: automatic).")
@click.option("--analytic", is_flag=True, default=False,
              help="Continue the potential itself to complex r on the rotated segment (expressions without abs "
                   "and where, and coulomb terms); --r0 then defaults to 0, uniform scaling. Finds broad "
                   "resonances the default contour misses; V must have no poles in the swept sector.")
@tol_option(1e-6, "Relative stability an eigenvalue must show over angles and orders.")
@particle_options()
@energy_unit_option(what="Unit of --window and of reported energies")
@json_option("Print one JSON object (each eigenvalue with separate energy and width fields) instead of a table.")
def resonances_cmd(equation, potentials, scalars, exprs, scalar_exprs, files, table_tail, table_tail_charge,
                   table_origin, table_r_unit, table_v_unit, params, unit_system, absorptive, l, kappa, window,
                   angles, order, r0, r_max, analytic, tol, particle, mass_mev, nucleus_mass_mev, energy_unit,
                   as_json):
    """Resonances, bound and quasi-bound levels in an energy window (complex scaling)."""
    from .. import resonances
    from ..units import ENERGY_UNITS, bohr_to
    from ..potentials.expression import ExpressionTerm
    from ..potentials.optical import ImaginaryPart

    lo, hi = _numbers("--window", window, 2)
    thetas = _numbers("--angles", angles)
    try:
        unit = report_unit(energy_unit, unit_system)
        vector, scalar, values = build_potential(potentials, scalars, exprs, scalar_exprs, files, table_tail,
                                                 table_tail_charge, table_origin, table_r_unit, table_v_unit,
                                                 params)
        vector = list(vector) + [ImaginaryPart(ExpressionTerm(t, subset_params(t, values))) for t in absorptive]
        kwargs = {k: v for k, v in (("particle", particle), ("mass_mev", mass_mev),
                                    ("nucleus_mass_mev", nucleus_mass_mev)) if v is not None}
        per = ENERGY_UNITS[unit]
        res = resonances(equation, vector, values, window=(lo, hi), energy_unit=unit, l=l, kappa=kappa, angles=thetas,
                         order=order, r0=r0, r_max=r_max, tol=tol, scalar=scalar or None, units=unit_system,
                         analytic=True if analytic else None, **kwargs)
    except ValueError as exc:
        fail(api_message(exc, _OPTIONS))
    if as_json:
        click.echo(json_text(res.to_dict(unit)))
        return
    s = res.settings
    length = report_length(None, unit_system)      # the contour in fm under --units nuclear
    click.echo(f"{res.equation} equation, potential {res.potential}; {s['scaling']} complex scaling beyond "
               f"r0 = {bohr_to(s['r0_bohr'], length):.6g} {length} to {bohr_to(s['r_max_bohr'], length):.6g} "
               f"{length}, theta = "
               f"{', '.join(f'{a:g}' for a in s['angles_rad'])} rad, orders {s['orders'][0]}, {s['orders'][1]}")
    click.echo(f"binding energy E and width Gamma (eigenvalue E - i Gamma/2) in {unit}")
    click.echo("")
    click.echo(f"{'label':<16} {'kind':<14} {'energy':>22} {'+-':>9} {'width':>16} {'+-':>9}")
    for r in res.resonances:
        click.echo(f"{r.label:<16} {r.kind:<14} {r.energy_in(unit):>22.14g} "
                   f"{float(r.energy_error * per):>9.2g} {r.width_in(unit):>16.9g} {float(r.width_error * per):>9.2g}")
    d = res.diagnostics
    click.echo("")
    click.echo(f"stability test: {d['in_window']} eigenvalue(s) in the window, {d['stable']} stable, "
               f"{d['rejected_as_continuum']} moved with theta or order (rotated continuum)")
    click.echo(res.message)
