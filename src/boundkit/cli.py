"""Command line: parse, call the public API, print. No numerics here."""
from __future__ import annotations

import json
import logging
import math
import sys

import click

from . import __version__
from .solver import solve
from .units import ENERGY_UNITS, hartree_to
from .units import energy_unit as canonical_unit

__all__ = ["main"]

EXIT_BAD_INPUT = 2
EXIT_NOT_CONVERGED = 3


def _fail(message: str) -> None:
    click.echo(f"boundkit: error: {message}", err=True)
    sys.exit(EXIT_BAD_INPUT)


def _parse_params(items: tuple[str, ...]) -> dict[str, float]:
    params: dict[str, float] = {}
    for item in items:
        name, eq, value = item.partition("=")
        name = name.strip()
        if not eq or not name or not value.strip():
            _fail(f"--param {item!r} is malformed; write NAME=VALUE, for example --param Z=1")
        try:
            x = float(value)
        except ValueError:
            _fail(f"--param {item!r}: {value.strip()!r} is not a number; write NAME=VALUE, e.g. --param Z=82")
        if not math.isfinite(x):
            _fail(f"--param {item!r}: the value must be finite")
        params[name] = x
    return params


def _default(x):
    """JSON fallback for numpy scalars."""
    try:
        return float(x)
    except (TypeError, ValueError):
        return str(x)


def _table(res, unit: str) -> str:
    s = res.settings
    head = [
        f"{res.equation} equation, potential {res.potential}, particle {s.get('particle')} "
        f"({s.get('particle_mass_MeV'):.9g} MeV)",
        f"method {s['method']['method']}, tol {s['tol']:g}, alpha = {res.constants['alpha']:.13g} (CODATA)",
        f"binding energies (total minus rest energy) in {unit}",
        "",
        f"{'level':<8} {'n':>3} {'l':>3} {'j':>5} {'kappa':>6} {'energy':>24} {'error estimate':>15}",
    ]
    rows = []
    for lv in res.levels:
        j = "" if lv.j is None else f"{lv.j:g}"
        kappa = "" if lv.kappa is None else str(lv.kappa)
        rows.append(f"{lv.label:<8} {lv.n:>3} {lv.l:>3} {j:>5} {kappa:>6} "
                    f"{lv.energy_in(unit):>24.16g} {lv.error_in(unit):>15.2g}")
    d = res.diagnostics
    if "cross_check" in d:
        rows.append("")
        rows.append(f"cross-check against {d['cross_check'][0]['other_method'] if d['cross_check'] else '-'}:")
        for c in d["cross_check"]:
            if c["other_energy"] is None:
                rows.append(f"  {c['label']:<8} not found by the other family")
                continue
            rows.append(f"  {c['label']:<8} other {hartree_to(c['other_energy'], unit):>24.16g}  "
                        f"|difference| {hartree_to(c['difference'], unit):.2g}  "
                        f"(estimates {hartree_to(c['error_estimate'], unit):.2g}, "
                        f"{hartree_to(c['other_error_estimate'], unit):.2g})")
    dropped = d.get("dropped_node_mismatch", 0) + d.get("dropped_unstable", 0)
    tail = ["", f"status: {res.status} - {res.message}",
            f"dropped candidates: {dropped} (node mismatch or unstable), {d.get('dropped_unstable_seed', 0)} "
            f"unstable seeds; {d.get('seconds', 0):.2f} s"]
    return "\n".join(head + rows + tail)


@click.group(context_settings={"help_option_names": ["-h", "--help"]})
@click.version_option(__version__, prog_name="boundkit")
@click.option("-v", "--verbose", count=True, help="More log output (-v info, -vv debug).")
def main(verbose: int) -> None:
    """boundkit: bound states of central potentials (Schrodinger, Klein-Gordon, Dirac)."""
    level = logging.WARNING - 10 * min(verbose, 2)
    logging.basicConfig(level=level, format="%(levelname)s %(name)s: %(message)s")


@main.command("solve")
@click.option("--equation", "-e", default="dirac", show_default=True,
              help="schrodinger, klein-gordon or dirac.")
@click.option("--potential", "-p", "potentials", multiple=True,
              help="Built-in potential term (repeatable; terms add). Default: coulomb.")
@click.option("--scalar", "scalars", multiple=True,
              help="Built-in term used as a Lorentz scalar (Dirac, Klein-Gordon; repeatable).")
@click.option("--param", "params", multiple=True, metavar="NAME=VALUE",
              help="Potential parameter (repeatable), e.g. --param Z=1.")
@click.option("--l", "l", type=int, default=None, help="Orbital l (Schrodinger, Klein-Gordon).")
@click.option("--kappa", type=int, default=None, help="Dirac kappa (-1 = s1/2, 1 = p1/2, -2 = p3/2, ...).")
@click.option("--levels", "-n", type=int, default=3, show_default=True, help="Number of lowest levels.")
@click.option("--tol", type=float, default=1e-10, show_default=True,
              help="Relative tolerance on binding energies.")
@click.option("--method", default="auto", show_default=True, help="auto, spectral or finite-difference.")
@click.option("--order", type=int, default=None, help="Finite-difference accuracy order (default 8).")
@click.option("--particle", default=None, help="electron (default), muon, pion, kaon, proton, antiproton.")
@click.option("--mass-mev", type=float, default=None, help="Particle mass in MeV/c^2 (instead of --particle).")
@click.option("--nucleus-mass-mev", type=float, default=None, help="Nucleus mass in MeV/c^2 (reduced mass).")
@click.option("--energy-unit", default="hartree", show_default=True,
              help="Unit of reported energies: " + ", ".join(ENERGY_UNITS) + ".")
@click.option("--units", "unit_system", type=click.Choice(["atomic", "nuclear"]), default="atomic",
              show_default=True, help="Parameters in hartree and bohr, or in MeV and fm.")
@click.option("--cross-check", is_flag=True, help="Also solve with the other discretization family.")
@click.option("--json", "as_json", is_flag=True, help="Print one JSON object instead of a table.")
def solve_cmd(equation, potentials, scalars, params, l, kappa, levels, tol, method, order, particle,
              mass_mev, nucleus_mass_mev, energy_unit, unit_system, cross_check, as_json):
    """Bound levels of one channel.

    Without options: the hydrogen atom (Z = 1), Dirac equation, kappa = -1,
    three lowest levels.
    """
    values = _parse_params(params)
    if not potentials and not scalars:
        potentials = ("coulomb",)
        values.setdefault("Z", 1.0)
    try:
        if unit_system == "nuclear" and energy_unit == "hartree":
            energy_unit = "MeV"
        unit = canonical_unit(energy_unit)
        res = solve(equation=equation, potential=list(potentials), params=values, l=l, kappa=kappa,
                    levels=levels, tol=tol, method=method, order=order, particle=particle,
                    mass_mev=mass_mev, nucleus_mass_mev=nucleus_mass_mev,
                    scalar=list(scalars) or None, units=unit_system, cross_check=cross_check)
    except ValueError as exc:
        _fail(str(exc))
    if as_json:
        click.echo(json.dumps(res.to_dict(unit), default=_default, indent=2))
    else:
        click.echo(_table(res, unit))
    if not res.success:
        click.echo(f"boundkit: {res.status}: {res.message}", err=True)
        sys.exit(EXIT_NOT_CONVERGED)


@main.command("converge")
@click.option("--equation", "-e", default="dirac", show_default=True)
@click.option("--potential", "-p", "potentials", multiple=True)
@click.option("--scalar", "scalars", multiple=True)
@click.option("--param", "params", multiple=True, metavar="NAME=VALUE")
@click.option("--l", "l", type=int, default=None)
@click.option("--kappa", type=int, default=None)
@click.option("--levels", "-n", type=int, default=1, show_default=True)
@click.option("--method", type=click.Choice(["both", "spectral", "finite-difference"]), default="both",
              show_default=True)
@click.option("--order", type=int, default=8, show_default=True, help="Finite-difference order.")
@click.option("--particle", default=None)
@click.option("--mass-mev", type=float, default=None)
@click.option("--units", "unit_system", type=click.Choice(["atomic", "nuclear"]), default="atomic")
@click.option("--plot", "plot_path", default=None, help="Write a log-log figure (.png, .svg or .pdf).")
@click.option("--json", "as_json", is_flag=True)
def converge_cmd(equation, potentials, scalars, params, l, kappa, levels, method, order, particle, mass_mev,
                 unit_system, plot_path, as_json):
    """Energies against resolution for one channel, with the observed order."""
    from .accuracy import converge

    values = _parse_params(params)
    if not potentials and not scalars:
        potentials = ("coulomb",)
        values.setdefault("Z", 1.0)
    methods = ("spectral", "finite-difference") if method == "both" else (method,)
    try:
        res = converge(equation, list(potentials), values, l=l, kappa=kappa, levels=levels, methods=methods,
                       order=order, particle=particle, mass_mev=mass_mev, scalar=list(scalars) or None,
                       units=unit_system)
        if plot_path:
            from .plots import convergence_figure
            convergence_figure(res, plot_path)
    except ValueError as exc:
        _fail(str(exc))
    if as_json:
        click.echo(json.dumps(res.to_dict(), default=_default, indent=2))
    else:
        click.echo(f"{res.equation} equation, potential {res.potential}; errors relative to a spectral "
                   "solve at tol 1e-13")
        click.echo(res.table())
        if plot_path:
            click.echo(f"figure: {plot_path}")


@main.command("validate")
@click.option("--quick", is_flag=True, help="A small subset that runs in seconds.")
@click.option("--method", type=click.Choice(["both", "spectral", "finite-difference"]), default="both",
              show_default=True)
@click.option("--json", "as_json", is_flag=True)
def validate_cmd(quick, method, as_json):
    """Run the exact-case catalogue; exit 1 if any case fails."""
    from .validate import format_table, run_validation

    methods = ("spectral", "finite-difference") if method == "both" else (method,)
    rows = run_validation(quick=quick, methods=methods)
    if as_json:
        click.echo(json.dumps({"cases": rows, "passed": all(r["passed"] for r in rows)}, default=_default,
                              indent=2))
    else:
        click.echo(format_table(rows))
    if not all(r["passed"] for r in rows):
        sys.exit(1)


if __name__ == "__main__":  # pragma: no cover
    main()
