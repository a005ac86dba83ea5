"""``boundkit solve``: the bound levels of one channel, as a table or JSON."""
from __future__ import annotations

import sys

import click

from .common import (EXIT_BAD_INPUT, EXIT_NOT_CONVERGED, api_message, check_output_path, check_particle,
                     check_plot_path, clip_message, fail, json_text, report_length, report_unit, write_figure)
from .options import (build_potential, channel_options, energy_unit_option, equation_option, json_option,
                      labels_option, length_unit_option, levels_option, method_option, order_option,
                      particle_options, plot_option, potential_options, tol_option)

__all__ = ["solve_cmd"]


_CONVENTION = {"atomic": "atomic labels: n = nodes + l + 1",
               "nuclear": "nuclear labels: n = radial nodes, counted from 0 (0s1/2, 0p3/2, 1s1/2)",
               "quarkonium": "quarkonium labels: n = nodes + 1 (1S, 2S, 1P)"}


def _mesh(res) -> str:
    """' (Lagrange-Laguerre mesh, N = 45)', ' (spectral elements, 301 nodes)' or ' (finite differences,
    1200 grid points)', from the result."""
    mesh = res.diagnostics.get("mesh")
    if not mesh or not res.levels:
        return ""
    size = res.levels[-1].resolution
    return {"lagrange-laguerre": f" (Lagrange-Laguerre mesh, N = {size})",
            "finite-difference": f" (finite differences, {size} grid points)"}.get(
        mesh, f" (spectral elements, {size} nodes)")


def _table(res, unit: str, length: str = "bohr") -> str:
    from ..states import level_n
    from ..units import MASS_UNIT_MEV, bohr_to, hartree_to

    s = res.settings
    labels = s.get("labels", "atomic")
    d = res.diagnostics
    head = [
        f"{res.equation} equation, potential {res.potential}, particle {s.get('particle')} "
        f"({s.get('particle_mass_MeV'):.9g} MeV/c^2)"
        + (f", reduced mass {s['mass_atomic_units'] * MASS_UNIT_MEV:.9g} MeV/c^2 with a nucleus of "
           f"{s['nucleus_mass_MeV']:.9g} MeV/c^2" if s.get("nucleus_mass_MeV") is not None else ""),
        f"method {s['method']['method']}{_mesh(res)}, tol {s['tol']:g} (relative), "
        f"alpha = {res.constants['alpha']:.13g} (CODATA)",
        f"binding energies (total minus rest energy) in {unit}; {_CONVENTION[labels]}",
        f"natural length of the potential {bohr_to(d.get('natural_length_bohr') or 0.0, length):.6g} {length}",
        *(["potential breakpoints (jumps, kinks or surfaces, where the mesh puts an edge): r = "
           + ", ".join(f"{bohr_to(b, length):.10g}" for b in d["breakpoints_bohr"][:8])
           + (f" and {len(d['breakpoints_bohr']) - 8} more" if len(d["breakpoints_bohr"]) > 8 else "")
           + f" {length}"] if d.get("breakpoints_bohr") else []),
        "",
        f"{'level':<8} {'n':>3} {'l':>3} {'j':>5} {'kappa':>6} {'energy (' + unit + ')':>24} "
        f"{'error (' + unit + ')':>15}",
    ]
    rows = []
    for lv in res.levels:
        n = level_n(lv.nodes, lv.l, labels)
        j = "" if lv.j is None else f"{lv.j:g}"
        kappa = "" if lv.kappa is None else str(lv.kappa)
        rows.append(f"{lv.label:<8} {n:>3} {lv.l:>3} {j:>5} {kappa:>6} "
                    f"{lv.energy_in(unit):>24.15g} {lv.error_in(unit):>15.2g}")
    if "cross_check" in d:
        rows.append("")
        rows.append(f"cross-check against {d['cross_check'][0]['other_method'] if d['cross_check'] else '-'}:")
        for c in d["cross_check"]:
            if c["other_energy"] is None:
                rows.append(f"  {c['label']:<8} not found by the other family")
                continue
            rows.append(f"  {c['label']:<8} other {hartree_to(c['other_energy'], unit):>24.16g} {unit}  "
                        f"|difference| {hartree_to(c['difference'], unit):.2g} {unit}  "
                        f"(estimates {hartree_to(c['error_estimate'], unit):.2g}, "
                        f"{hartree_to(c['other_error_estimate'], unit):.2g} {unit})")
    dropped = d.get("dropped_node_mismatch", 0) + d.get("dropped_unstable", 0)
    count = d.get("bound_count")
    threshold = d.get("threshold_hartree") or 0.0
    tail = ["", f"bound levels below the threshold ({hartree_to(threshold, unit):.9g} {unit}): "
            + (str(count) if count is not None else "infinitely many (Coulomb tail or confining)"),
            f"status: {res.status} - {res.message}",
            (f"guesses re-seeded: {d.get('reseeded_guesses', 0)}, levels located by bisection: "
             f"{d.get('bisected_levels', 0)}" if res.settings.get("method", {}).get("family") == "spectral"
             else f"dropped candidates: {dropped} (node mismatch or unstable)") + f"; {d.get('seconds', 0):.2f} s"]
    return "\n".join(head + rows + tail)



@click.command("solve")
@equation_option()
@potential_options
@channel_options()
@levels_option(1, allow_all=True)
@tol_option(1e-10)
@method_option()
@order_option()
@particle_options()
@energy_unit_option()
@length_unit_option
@labels_option
@click.option("--cross-check", is_flag=True, help="Also solve with the other discretization family.")
@json_option()
@click.option("--observables", "with_observables", is_flag=True,
              help="Also print <r>, r_rms, <1/r> (and g for Dirac) with error estimates.")
@click.option("--states", "states_path", default=None, metavar="FILE.csv|FILE.npz",
              help="Write r, P, Q and the density of every level (units in the header).")
@plot_option("the radial functions of the levels")
def solve_cmd(equation, potentials, scalars, exprs, scalar_exprs, files, table_tail, table_tail_charge,
              table_origin, table_r_unit, table_v_unit, params, unit_system, l, kappa, j, levels, max_levels, tol,
              method, order, particle, mass_mev, nucleus_mass_mev, energy_unit, length_unit, labels, cross_check,
              as_json, with_observables, states_path, plot_path):
    """Bound levels of one channel.

    Without options: the hydrogen atom (Z = 1), Schrodinger equation, l = 0,
    the lowest level (the defaults of boundkit.solve).
    """
    from ..solver import solve  # lazy: `boundkit --help` need not import the solver

    check_particle(particle, mass_mev)
    check_plot_path(plot_path)
    check_output_path(states_path, "--states", (".csv", ".npz"), "levels.csv", "states format")
    try:
        unit = report_unit(energy_unit, unit_system)
        length = report_length(length_unit, unit_system)
        vector, scalar, values = build_potential(potentials, scalars, exprs, scalar_exprs, files, table_tail,
                                                 table_tail_charge, table_origin, table_r_unit, table_v_unit,
                                                 params)
        res = solve(equation=equation, potential=vector, params=values, l=l, kappa=kappa,
                    levels=levels, max_levels=max_levels, tol=tol, method=method, order=order, particle=particle,
                    mass_mev=mass_mev, nucleus_mass_mev=nucleus_mass_mev,
                    scalar=scalar or None, units=unit_system, cross_check=cross_check, j=j, labels=labels)
        from .observables import add_observables, observables_table, write_states_file
        record = res.to_dict(unit, length)
        extra = ""
        if with_observables and res.levels:
            record = add_observables(record, res, length)
            extra = observables_table(res, length)
    except ValueError as exc:
        fail(api_message(exc, {"max_levels": "--max-levels"}))
    if as_json:
        click.echo(json_text(record))
    else:
        click.echo(_table(res, unit, length) + extra)
    outputs_ok = True
    if states_path:
        try:
            write_states_file(res, states_path, length, unit)
        except (OSError, ValueError) as exc:   # the levels above are complete; only this file is missing
            text = str(exc) if isinstance(exc, ValueError) else \
                f"--states {states_path!r}: cannot write it ({exc.strerror or exc})"
            click.echo(f"boundkit: error: {clip_message(text)}", err=True)
            outputs_ok = False
    if plot_path and not res.levels:
        click.echo(f"boundkit: error: no figure written to {plot_path!r}: there is no level to draw", err=True)
        outputs_ok = False
    if plot_path and res.levels:
        from ..plots import radial_figure

        written = write_figure(lambda p: radial_figure(
            res.levels, p, length_unit=length, title=f"{res.equation}: {res.potential}"), plot_path)
        if written is not None:
            click.echo(f"figure: {written}", err=True)      # the name may have gained .png
        outputs_ok = written is not None and outputs_ok
    if not res.success:
        click.echo(f"boundkit: {res.status}: {res.message}", err=True)
        sys.exit(EXIT_NOT_CONVERGED)
    if not outputs_ok:
        sys.exit(EXIT_BAD_INPUT)


