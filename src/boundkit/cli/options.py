"""Options shared by several commands, defined once, and the potential they describe.

A command takes an option (or a group of them) with a decorator and gets it as
a keyword argument; :func:`build_potential` turns the potential options into
the terms and parameters of the public API.

One interface: an option has the same name, meaning and help text in every
command, and the name of the API keyword it feeds (``--tol`` -> ``tol``,
``--levels`` -> ``levels``, ``--method`` -> ``method``; in run specs
``tol``, ``levels``, ``method``). Defaults are the API's: a command's
default is the default of the function it calls (``boundkit solve`` ->
:func:`boundkit.solve`: Schrodinger equation, 1 level, tol 1e-10), and the
equation defaults to Schrodinger everywhere.
"""
from __future__ import annotations

import click

from .common import channel_number, given_option, parse_params

__all__ = ["potential_options", "build_potential", "subset_params", "equation_option", "channel_options",
           "levels_option", "tol_option", "method_option", "order_option", "particle_options", "energy_unit_option",
           "plot_option", "json_option", "METHODS", "ENERGY_UNIT_NAMES", "length_unit_option", "labels_option",
           "LENGTH_UNIT_NAMES"]

METHODS = ("auto", "spectral", "finite-difference")
ENERGY_UNIT_NAMES = ("hartree", "eV", "meV", "keV", "MeV", "cm^-1", "MHz", "GHz", "THz")
"""The names of :data:`boundkit.units.ENERGY_UNITS`, for help texts (`boundkit --help` does not load
scipy.constants; a test checks that both lists agree)."""


def _apply(f, opts):
    for opt in reversed(opts):
        f = opt(f)
    return f


def equation_option(multiple: bool = False):
    """``-e/--equation``: default schrodinger (repeatable for scan)."""
    if multiple:
        return click.option("--equation", "-e", "equations", multiple=True,
                            help="schrodinger, klein-gordon or dirac; repeatable (default schrodinger).")
    return click.option("--equation", "-e", default="schrodinger", show_default=True,
                        help="schrodinger, klein-gordon or dirac.")



def channel_options(j: bool = True, multiple: bool = False):
    """``--l``, ``--kappa`` (and ``--j``): the channel, as the API's l=, kappa=, j=."""
    if multiple:
        opts = [click.option("--l", "ls", type=int, multiple=True, callback=channel_number,
                             help="Orbital l of a channel (Schrodinger, Klein-Gordon; repeatable; default 0)."),
                click.option("--kappa", "kappas", type=int, multiple=True, callback=channel_number,
                             help="Dirac kappa of a channel (repeatable; default -1): -1 = s1/2, 1 = p1/2, "
                                  "-2 = p3/2, ...; needs -e dirac (another equation of the same scan takes the l "
                                  "of that kappa).")]
    else:
        opts = [click.option("--l", "l", type=int, default=None, callback=channel_number,
                             help="Orbital l (Schrodinger, Klein-Gordon; default 0; Dirac: with --j, naming kappa)."),
                click.option("--kappa", type=int, default=None, callback=channel_number,
                             help="Dirac kappa (default -1): -1 = s1/2, 1 = p1/2, -2 = p3/2, ...")]
    if j and multiple:
        opts.append(click.option("--j", "js", type=float, multiple=True,
                                 help="j = l +- 1/2 of each --l, in the same order (one per --l): Schrodinger, for "
                                      "a spin-orbit term such as woods-saxon spin_orbit; Dirac, naming the kappa "
                                      "(j = l + 1/2: kappa = -(l+1); j = l - 1/2: kappa = l)."))
    elif j:
        opts.append(click.option("--j", "j", type=float, default=None,
                                 help="j = l +- 1/2: Schrodinger, for a spin-orbit term such as woods-saxon "
                                      "spin_orbit; Dirac, with --l instead of --kappa (j = l + 1/2: kappa = -(l+1); "
                                      "j = l - 1/2: kappa = l), or beside --kappa, its own j."))
    return lambda f: _apply(f, opts)


def levels_option(default: int, allow_all: bool = False, what: str = "Number of lowest levels per channel"):
    """``-n/--levels``: number of lowest levels (``all`` where the API takes it), and ``--max-levels``, the
    API's ``max_levels`` (the largest ``--levels`` accepted). The command gets both keywords."""
    from .._checks import MAX_LEVELS
    from .common import MAX_LEVELS_KEY, check_max_levels, level_count, levels_arg

    if allow_all:
        levels = click.option("--levels", "-n", default=str(default), show_default=True, metavar="N|all",
                              callback=lambda ctx, param, value: levels_arg(value, ctx.meta.get(MAX_LEVELS_KEY)),
                              help=f"{what}, or 'all' for every bound level of a potential that has finitely "
                                   "many.")
    else:
        levels = click.option("--levels", "-n", type=int, default=default, show_default=True,
                              callback=lambda ctx, param, value: level_count(value, ctx.meta.get(MAX_LEVELS_KEY)),
                              help=f"{what}.")
    # eager, so that --levels is checked against it whatever their order on the command line
    limit = click.option("--max-levels", type=int, default=MAX_LEVELS, show_default=True, is_eager=True,
                         callback=check_max_levels,
                         help="Largest --levels accepted (1000 hydrogen levels take 40 s and 1.2 GB; 'all' is "
                              "not limited).")
    return lambda f: _apply(f, [levels, limit])


def tol_option(default: float, what: str = "Relative tolerance on binding energies."):
    """``--tol``: the API's ``tol`` (run specs: ``tol``); checked to lie in (0, 1)."""
    def check(ctx, param, value):
        from .common import check_tol

        check_tol(value)
        return value
    return click.option("--tol", type=float, default=default, show_default=True, callback=check, help=what)


def method_option(families: bool = False):
    """``--method``: a choice everywhere. ``families``: the families to compare (converge, validate)."""
    if families:
        return click.option("--method", type=click.Choice(["both", "spectral", "finite-difference"]),
                            default="both", show_default=True,
                            help="Discretization family to run: both, spectral or finite-difference.")
    return click.option("--method", type=click.Choice(METHODS, case_sensitive=False), default="auto",
                        show_default=True,
                        help="Discretization: auto (the spectral family), spectral or finite-difference.")


def order_option(default: int | None = None):
    return click.option("--order", type=int, default=default, show_default=default is not None,
                        help="Finite-difference accuracy order" + (" (default 8)." if default is None else "."))


def particle_options():
    """``--particle`` or ``--mass-mev`` (one of them), and ``--nucleus-mass-mev`` for the reduced mass."""
    opts = [click.option("--particle", default=None,
                         help="electron (default), muon, pion, kaon, proton, antiproton, neutron, deuteron "
                              "(boundkit particles)."),
            click.option("--mass-mev", type=float, default=None,
                         help="Particle mass in MeV/c^2 (instead of --particle)."),
            click.option("--nucleus-mass-mev", type=float, default=None,
                         help="Nucleus mass in MeV/c^2 (reduced mass).")]
    return lambda f: _apply(f, opts)


def energy_unit_option(default: str | None = None, what: str = "Unit of reported energies"):
    """``--energy-unit``: default hartree, MeV with --units nuclear (or the API's own default)."""
    rule = f"default {default}" if default else "default hartree; MeV with --units nuclear"
    return click.option("--energy-unit", default=default, show_default=False,
                        help=f"{what}: {', '.join(ENERGY_UNIT_NAMES)} ({rule}).")


def plot_option(what: str):
    """``--plot FILE``: a figure written after the results are out."""
    return click.option("--plot", "plot_path", default=None, metavar="FILE",
                        help=f"Also draw {what} (.png, .svg or .pdf).")


def json_option(what: str = "Print one JSON object instead of a table."):
    return click.option("--json", "as_json", is_flag=True, help=what)


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
        click.option("--table-r-unit", default=None,
                     help="Table: unit of r (bohr, angstrom, fm, nm) when the file has no units line; "
                          "default bohr, fm with --units nuclear."),
        click.option("--table-v-unit", default=None,
                     help="Table: unit of V (hartree, eV, keV, MeV) when the file has no units line; "
                          "default hartree, MeV with --units nuclear."),
        click.option("--param", "params", multiple=True, metavar="NAME=VALUE",
                     help="Potential parameter (repeatable), e.g. --param Z=1."),
        click.option("--units", "unit_system", type=click.Choice(["atomic", "nuclear"]), default="atomic",
                     show_default=True, help="Parameters in hartree and bohr, or in MeV and fm."),
    ]
    return _apply(f, opts)


def build_potential(potentials, scalars, exprs, scalar_exprs, files, table_tail, table_tail_charge,
                    table_origin, table_r_unit, table_v_unit, params):
    """(vector terms, scalar terms, parameter values) from the potential options.

    Raises ValueError for bad input (the caller reports it).
    """
    from ..potentials.catalog import read_model_file
    from ..potentials.expression import ExpressionTerm

    values = parse_params(params)
    if not any(not str(path).lower().endswith(".toml") for path in files):
        for name in ("table_tail", "table_tail_charge", "table_origin", "table_r_unit", "table_v_unit"):
            option = given_option(name)
            if option:
                raise ValueError(f"{option}: there is no table to apply it to (a --potential-file of r and V other "
                                 "than a .toml model file); drop it, or give the table")
    vector, scalar = list(potentials), list(scalars)
    for text in exprs:
        vector.append(ExpressionTerm(text, subset_params(text, values)))
    for text in scalar_exprs:
        scalar.append(ExpressionTerm(text, subset_params(text, values)))
    for path in files:
        if str(path).lower().endswith(".toml"):
            spec = read_model_file(path)
            term, _ = spec.build(values)
            (scalar if spec.role == "scalar" else vector).append(term)
        else:
            from ..potentials.tabulated import TabulatedTerm    # lazy: scipy.interpolate costs ~0.1 s

            vector.append(TabulatedTerm(path, tail=table_tail, tail_charge=table_tail_charge,
                                        origin=table_origin, r_unit=table_r_unit, v_unit=table_v_unit))
    if not vector and not scalar:
        vector = ["coulomb"]
        values.setdefault("Z", 1.0)
    return vector, scalar, values


def subset_params(text, values):
    from ..potentials.expression import parse_expression

    names = parse_expression(text).parameter_names
    return {k: v for k, v in values.items() if k in names}


LENGTH_UNIT_NAMES = ("bohr", "fm", "pm", "angstrom", "nm")
"""The names of :data:`boundkit.units.LENGTH_UNITS`, for help texts (checked against it by a test)."""


def length_unit_option(f):
    """``--length-unit``: unit of every reported length (default bohr, fm with --units nuclear)."""
    return click.option("--length-unit", default=None,
                        help="Unit of reported lengths: " + ", ".join(LENGTH_UNIT_NAMES)
                             + " (default bohr; fm with --units nuclear).")(f)


def labels_option(f):
    """``--labels``: the labelling convention of the levels (see boundkit.states)."""
    return click.option("--labels", type=click.Choice(["atomic", "nuclear", "quarkonium"]), default="atomic",
                        show_default=True,
                        help="Level names: atomic n = nodes + l + 1 (2p1/2), nuclear n = nodes from 0 (0p1/2), "
                             "quarkonium n = nodes + 1 (1P).")(f)

