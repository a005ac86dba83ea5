"""Command line: parse, call the public API, print. No numerics here."""
from __future__ import annotations

import errno
import json
import logging
import math
import os
import signal
import sys
import unicodedata
import warnings
from pathlib import Path

import click

from . import __version__
from .units import ENERGY_UNITS, hartree_to
from .units import energy_unit as canonical_unit

__all__ = ["main"]

EXIT_BAD_INPUT = 2
EXIT_NOT_CONVERGED = 3


EXIT_INTERRUPTED = 130
MAX_MESSAGE = 290
"""Longest error line (characters); long quoted values in a message are shortened."""


def _fail(message: str) -> None:
    click.echo(f"boundkit: error: {clip_message(message)}", err=True)
    sys.exit(EXIT_BAD_INPUT)


def clip_message(message: str) -> str:
    """``message`` on one line and at most :data:`MAX_MESSAGE` characters.

    Quoted values longer than 40 characters are cut in the middle first (an
    argument of a megabyte must not be echoed whole), then the tail.
    """
    import re

    text = " ".join(str(message).split())
    if len(text) <= MAX_MESSAGE:
        return text
    text = re.sub(r"'[^']{41,}'|\"[^\"]{41,}\"", lambda m: m.group(0)[:24] + "..." + m.group(0)[-8:], text)
    text = re.sub(r"\S{61,}", lambda m: m.group(0)[:40] + "..." + m.group(0)[-12:], text)
    return text if len(text) <= MAX_MESSAGE else text[: MAX_MESSAGE - 4] + " ..."


class BoundkitGroup(click.Group):
    """The command group. Whatever goes wrong ends in one line on stderr:

    - bad input, usage errors (unknown option, bad value, missing argument):
      ``boundkit: error: ... ; see boundkit CMD --help``, exit 2;
    - Ctrl-C or SIGTERM: ``boundkit: interrupted``, exit 130 (143 for SIGTERM);
    - standard output that cannot be written (a full disk, a closed pipe):
      one line, exit 2 (a closed pipe ends quietly).
    """

    def main(self, args=None, prog_name=None, complete_var=None, standalone_mode=True, **extra):
        if not standalone_mode:
            return super().main(args, prog_name, complete_var, standalone_mode, **extra)
        try:   # SIGTERM unwinds like Ctrl-C (temporary files go), for this command only
            previous = signal.signal(signal.SIGTERM, _on_sigterm)
        except ValueError:   # not the main thread (an embedding program)
            previous = None
        try:
            with warnings.catch_warnings():
                if not any(a in ("-vv", "-vvv") for a in (args if args is not None else sys.argv[1:])):
                    warnings.simplefilter("ignore", RuntimeWarning)   # numerical noise: see -vv
                rv = super().main(args, prog_name, complete_var, standalone_mode=False, **extra)
        except click.exceptions.NoArgsIsHelpError as exc:
            click.echo(exc.ctx.get_help() if exc.ctx else "")
            sys.exit(0)
        except click.UsageError as exc:
            _fail(f"{_lower(exc.format_message()).rstrip('.')}; see {_command_path(exc.ctx)} --help")
        except click.ClickException as exc:
            _fail(exc.format_message())
        except click.exceptions.Abort:
            click.echo("boundkit: interrupted", err=True)
            sys.exit(EXIT_INTERRUPTED)
        except Terminated as exc:
            click.echo("boundkit: interrupted", err=True)
            sys.exit(exc.code)
        except OSError as exc:
            _stdout_failed(exc)
        finally:
            if previous is not None:
                signal.signal(signal.SIGTERM, previous)
        sys.exit(rv if isinstance(rv, int) else 0)


def _lower(text: str) -> str:
    return text[:1].lower() + text[1:] if text[:2] != text[:2].upper() else text


def _command_path(ctx) -> str:
    names = []
    while ctx is not None:
        names.append(ctx.info_name if ctx.parent is not None else "boundkit")
        ctx = ctx.parent
    return " ".join(reversed(names)) if names else "boundkit"


def _stdout_failed(exc: OSError) -> None:
    """Standard output could not be written: say so on stderr (a closed pipe quietly)."""
    try:   # nothing more may reach the broken stream, not even at interpreter exit
        devnull = os.open(os.devnull, os.O_WRONLY)
        os.dup2(devnull, sys.stdout.fileno())
    except (OSError, ValueError, AttributeError):
        pass
    if exc.errno == errno.EPIPE:
        sys.exit(EXIT_BAD_INPUT)
    _fail(f"cannot write the output ({exc.strerror or exc}); redirect it to a writable place")


class Terminated(SystemExit):
    """SIGTERM: unwinds like Ctrl-C (``finally`` blocks remove temporary files), exit 128 + 15."""


def _on_sigterm(signum, frame):  # pragma: no cover - exercised in a subprocess test
    raise Terminated(128 + signum)


def _parse_params(items: tuple[str, ...]) -> dict[str, float]:
    """NAME=VALUE pairs; names are read in NFKC form, as Python and the expression parser read them."""
    params: dict[str, float] = {}
    given: dict[str, str] = {}
    for item in items:
        name, eq, value = item.partition("=")
        name = unicodedata.normalize("NFKC", name.strip())
        if not eq or not name or not value.strip():
            _fail(f"--param {item!r} is malformed; write NAME=VALUE, for example --param Z=1")
        try:
            x = float(value)
        except ValueError:
            _fail(f"--param {item!r}: {value.strip()!r} is not a number; write NAME=VALUE, e.g. --param Z=82")
        if not math.isfinite(x):
            _fail(f"--param {item!r}: the value must be finite")
        if name in given and x != params[name]:
            _fail(f"--param {name} is given twice ({given[name]} and {value.strip()}); give it once")
        params[name] = x
        given.setdefault(name, value.strip())
    return params


def check_tol(tol: float | None, option: str = "--tol") -> None:
    """The CLI's tolerances lie strictly between 0 and 1, as in run specs."""
    if tol is not None and not 0 < tol < 1:
        _fail(f"{option}: must lie between 0 and 1, got {tol:g}; e.g. {option} 1e-10")


def check_particle(particle: str | None, mass_mev: float | None) -> None:
    """--particle and --mass-mev name the same thing: one of them."""
    if particle is not None and mass_mev is not None:
        _fail(f"--particle {particle} and --mass-mev {mass_mev:g}: give one of them (a mass makes a particle "
              "of its own)")


_PLOT_FORMATS = (".png", ".svg", ".pdf")


def check_plot_path(path: str | None, option: str = "--plot") -> None:
    """Refuse a figure path that cannot be a file, before anything is computed."""
    if path is None:
        return
    p = Path(path)
    if not p.name or path.endswith(("/", os.sep)) or p.is_dir():
        _fail(f"{option} {path!r}: not a file name; write e.g. {option} levels.png")
    if p.suffix and p.suffix.lower() not in _PLOT_FORMATS:
        _fail(f"{option} {path!r}: unsupported figure format {p.suffix!r}; use .png, .svg or .pdf")


def write_figure(draw, path: str, option: str = "--plot") -> str | None:
    """Draw a figure after the results are out; an error costs only the figure.

    Returns the path written, or None after a one-line message on stderr.
    """
    try:
        return str(draw(path))
    except (OSError, ValueError) as exc:
        reason = exc.strerror if isinstance(exc, OSError) and exc.strerror else str(exc)
        click.echo(f"boundkit: error: {clip_message(f'{option} {path!r}: cannot write the figure ({reason}); the results above are complete')}",
                   err=True)
        return None


def _default(x):
    """JSON fallback for numpy scalars."""
    try:
        return float(x)
    except (TypeError, ValueError):
        return str(x)


def _levels_arg(text: str):
    """--levels N or --levels all."""
    if str(text).strip().lower() == "all":
        return "all"
    try:
        n = int(str(text).strip())
    except ValueError:
        raise click.BadParameter(f"{clip_message(repr(str(text)))} is not a valid integer (or 'all')",
                                 param_hint="'--levels'") from None
    if n < 1:
        raise click.BadParameter(f"levels: must be >= 1 (or 'all'), got {n}", param_hint="'--levels'")
    return n


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
                    f"{lv.energy_in(unit):>24.15g} {lv.error_in(unit):>15.2g}")
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
    count = d.get("bound_count")
    threshold = d.get("threshold_hartree") or 0.0
    tail = ["", f"bound levels below the threshold ({hartree_to(threshold, unit):.9g} {unit}): "
            + (str(count) if count is not None else "infinitely many (Coulomb tail or confining)"),
            f"status: {res.status} - {res.message}",
            f"dropped candidates: {dropped} (node mismatch or unstable), {d.get('dropped_unstable_seed', 0)} "
            f"unstable seeds; {d.get('seconds', 0):.2f} s"]
    return "\n".join(head + rows + tail)


def potential_options(f):
    """Options that describe the potential, shared by the commands that solve."""
    opts = [
        click.option("--potential", "-p", "potentials", multiple=True,
                     help="Built-in term or library model, repeatable (terms add). Default: coulomb."),
        click.option("--scalar", "scalars", multiple=True,
                     help="Built-in term used as a Lorentz scalar (Dirac, Klein-Gordon; repeatable)."),
        click.option("--expr", "exprs", multiple=True,
                     help="Potential expression in r, e.g. \"-Z*exp(-r/D)/r\" (repeatable)."),
        click.option("--scalar-expr", "scalar_exprs", multiple=True, help="Expression used as a Lorentz scalar."),
        click.option("--potential-file", "files", multiple=True, type=click.Path(dir_okay=False),
                     help="A model file (.toml) or a table of r and V (any other suffix)."),
        click.option("--table-tail", type=click.Choice(["coulomb", "zero", "exponential"]), default="coulomb",
                     show_default=True, help="Table: behaviour beyond the last point."),
        click.option("--table-tail-charge", type=float, default=None,
                     help="Table: charge of the Coulomb tail (default from the last point)."),
        click.option("--table-origin", type=click.Choice(["coulomb", "finite"]), default="coulomb",
                     show_default=True, help="Table: behaviour below the first point."),
        click.option("--table-r-unit", default="bohr", show_default=True, help="Table: unit of r (bohr, angstrom, fm, nm)."),
        click.option("--table-v-unit", default="hartree", show_default=True, help="Table: unit of V (hartree, eV, keV, MeV)."),
        click.option("--param", "params", multiple=True, metavar="NAME=VALUE",
                     help="Potential parameter (repeatable), e.g. --param Z=1."),
        click.option("--units", "unit_system", type=click.Choice(["atomic", "nuclear"]), default="atomic",
                     show_default=True, help="Parameters in hartree and bohr, or in MeV and fm."),
    ]
    for opt in reversed(opts):
        f = opt(f)
    return f


def build_potential(potentials, scalars, exprs, scalar_exprs, files, table_tail, table_tail_charge,
                    table_origin, table_r_unit, table_v_unit, params):
    """(vector terms, scalar terms, parameter values) from the potential options.

    Raises ValueError for bad input (the caller reports it).
    """
    from .potentials.catalog import read_model_file
    from .potentials.expression import ExpressionTerm
    from .potentials.tabulated import TabulatedTerm

    values = _parse_params(params)
    vector, scalar = list(potentials), list(scalars)
    for text in exprs:
        vector.append(ExpressionTerm(text, _subset(text, values)))
    for text in scalar_exprs:
        scalar.append(ExpressionTerm(text, _subset(text, values)))
    for path in files:
        if str(path).lower().endswith(".toml"):
            spec = read_model_file(path)
            term, _ = spec.build(values)
            (scalar if spec.role == "scalar" else vector).append(term)
        else:
            vector.append(TabulatedTerm(path, tail=table_tail, tail_charge=table_tail_charge,
                                        origin=table_origin, r_unit=table_r_unit, v_unit=table_v_unit))
    if not vector and not scalar:
        vector = ["coulomb"]
        values.setdefault("Z", 1.0)
    return vector, scalar, values


def _subset(text, values):
    from .potentials.expression import parse_expression

    names = parse_expression(text).parameter_names
    return {k: v for k, v in values.items() if k in names}


@click.group(cls=BoundkitGroup, context_settings={"help_option_names": ["-h", "--help"]})
@click.version_option(__version__, prog_name="boundkit")
@click.option("-v", "--verbose", count=True, help="More log output (-v info, -vv debug).")
def main(verbose: int) -> None:
    """boundkit: bound states of central potentials (Schrodinger, Klein-Gordon, Dirac)."""
    level = logging.WARNING - 10 * min(verbose, 2)
    logging.basicConfig(level=level, format="%(levelname)s %(name)s: %(message)s")
    if verbose >= 2:
        warnings.simplefilter("default", RuntimeWarning)


@main.command("solve")
@click.option("--equation", "-e", default="dirac", show_default=True,
              help="schrodinger, klein-gordon or dirac.")
@potential_options
@click.option("--l", "l", type=int, default=None, help="Orbital l (Schrodinger, Klein-Gordon).")
@click.option("--kappa", type=int, default=None, help="Dirac kappa (-1 = s1/2, 1 = p1/2, -2 = p3/2, ...).")
@click.option("--j", "j", type=float, default=None,
              help="j = l +- 1/2 (Schrodinger, for a spin-orbit term such as woods-saxon spin_orbit).")
@click.option("--levels", "-n", default="3", show_default=True,
              help="Number of lowest levels, or 'all' for every bound level of a potential that has "
                   "finitely many.")
@click.option("--tol", type=float, default=1e-10, show_default=True,
              help="Relative tolerance on binding energies.")
@click.option("--method", default="auto", show_default=True, help="auto, spectral or finite-difference.")
@click.option("--order", type=int, default=None, help="Finite-difference accuracy order (default 8).")
@click.option("--particle", default=None, help="electron (default), muon, pion, kaon, proton, antiproton.")
@click.option("--mass-mev", type=float, default=None, help="Particle mass in MeV/c^2 (instead of --particle).")
@click.option("--nucleus-mass-mev", type=float, default=None, help="Nucleus mass in MeV/c^2 (reduced mass).")
@click.option("--energy-unit", default=None,
              help="Unit of reported energies: " + ", ".join(ENERGY_UNITS) + " (default hartree; MeV with --units nuclear).")
@click.option("--cross-check", is_flag=True, help="Also solve with the other discretization family.")
@click.option("--json", "as_json", is_flag=True, help="Print one JSON object instead of a table.")
@click.option("--observables", "with_observables", is_flag=True,
              help="Also print <r>, r_rms, <1/r> (and g for Dirac) with error estimates.")
@click.option("--states", "states_path", default=None, metavar="FILE.csv|FILE.npz",
              help="Write r, P, Q and the density of every level (units in the header).")
@click.option("--plot", "plot_path", default=None, metavar="FILE",
              help="Also draw the radial functions of the levels (.png, .svg or .pdf).")
def solve_cmd(equation, potentials, scalars, exprs, scalar_exprs, files, table_tail, table_tail_charge,
              table_origin, table_r_unit, table_v_unit, params, unit_system, l, kappa, j, levels, tol, method,
              order, particle, mass_mev, nucleus_mass_mev, energy_unit, cross_check, as_json, with_observables,
              states_path, plot_path):
    """Bound levels of one channel.

    Without options: the hydrogen atom (Z = 1), Dirac equation, kappa = -1,
    three lowest levels.
    """
    from .solver import solve  # lazy: `boundkit --help` need not import the solver

    levels = _levels_arg(levels)
    check_tol(tol)
    check_particle(particle, mass_mev)
    check_plot_path(plot_path)
    try:
        unit = canonical_unit(energy_unit or ("MeV" if unit_system == "nuclear" else "hartree"))
        vector, scalar, values = build_potential(potentials, scalars, exprs, scalar_exprs, files, table_tail,
                                                 table_tail_charge, table_origin, table_r_unit, table_v_unit,
                                                 params)
        res = solve(equation=equation, potential=vector, params=values, l=l, kappa=kappa,
                    levels=levels, tol=tol, method=method, order=order, particle=particle,
                    mass_mev=mass_mev, nucleus_mass_mev=nucleus_mass_mev,
                    scalar=scalar or None, units=unit_system, cross_check=cross_check, j=j)
        from .cli_observables import add_observables, observables_table, write_states_file
        length = "fm" if unit_system == "nuclear" else "bohr"
        record = res.to_dict(unit)
        extra = ""
        if with_observables and res.levels:
            record = add_observables(record, res, length)
            extra = observables_table(res, length)
    except ValueError as exc:
        _fail(str(exc))
    if as_json:
        click.echo(json.dumps(record, default=_default, indent=2))
    else:
        click.echo(_table(res, unit) + extra)
    outputs_ok = True
    if states_path:
        try:
            write_states_file(res, states_path, length)
        except (OSError, ValueError) as exc:   # the levels above are complete; only this file is missing
            text = str(exc) if isinstance(exc, ValueError) else \
                f"--states {states_path!r}: cannot write it ({exc.strerror or exc})"
            click.echo(f"boundkit: error: {clip_message(text)}", err=True)
            outputs_ok = False
    if plot_path and res.levels:
        from .plots import radial_figure

        outputs_ok = write_figure(lambda p: radial_figure(
            res.levels, p, length_unit=length, title=f"{res.equation}: {res.potential}"), plot_path) is not None \
            and outputs_ok
    if not res.success:
        click.echo(f"boundkit: {res.status}: {res.message}", err=True)
        sys.exit(EXIT_NOT_CONVERGED)
    if not outputs_ok:
        sys.exit(EXIT_BAD_INPUT)


@main.command("converge")
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
    from .accuracy import converge

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
        _fail(str(exc))
    if as_json:
        click.echo(json.dumps(res.to_dict(), default=_default, indent=2))
    else:
        click.echo(f"{res.equation} equation, potential {res.potential}; errors relative to a spectral "
                   "solve at tol 1e-13")
        click.echo(res.table())
    written = None
    if plot_path:
        from .plots import convergence_figure

        written = write_figure(lambda p: convergence_figure(res, p), plot_path)
        if written and not as_json:
            click.echo(f"figure: {written}")
    if len(res.reference) < levels:
        click.echo(f"boundkit: partial: found {len(res.reference)} of {levels} requested levels; the table "
                   "shows those found", err=True)
        sys.exit(EXIT_NOT_CONVERGED)
    if plot_path and written is None:
        sys.exit(EXIT_BAD_INPUT)


@main.command("potentials")
@click.argument("name", required=False)
def potentials_cmd(name):
    """List the library's model potentials, or show one."""
    from .potentials.catalog import library_model, library_models
    from .units import unit_label

    if name is None:
        for spec in library_models().values():
            params = ", ".join(spec.parameters)
            click.echo(f"{spec.name:<16} {spec.description}  [{params}]")
        return
    try:
        spec = library_model(name)
    except ValueError as exc:
        _fail(str(exc))
    click.echo(f"{spec.name}: {spec.description}")
    click.echo(f"formula: {spec.formula}")
    click.echo(f"source:  {spec.source}")
    click.echo("parameters (unit with --units atomic / --units nuclear):")
    for pname, p in spec.parameters.items():
        default = f"default {p['default']:g}" if "default" in p else "required"
        click.echo(f"  {pname:<18} {p['unit']:>16} / {unit_label(p['unit'], 'nuclear'):<14} {default:<16} "
                   f"{p['description']}")


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


from . import cli_run  # noqa: E402,F401  (registers `boundkit run`)

from . import cli_studies  # noqa: E402,F401  (registers scan, critical, compare)

from . import cli_observables  # noqa: E402,F401  (registers transitions; solve --observables/--states)
from . import cli_continuum  # noqa: E402,F401  (registers phases)
from . import cli_resonances  # noqa: E402,F401  (registers resonances)

if __name__ == "__main__":  # pragma: no cover - `python -m boundkit.cli`: the commands live on boundkit.cli.main
    sys.modules["boundkit.cli"].main()
