"""Options shared by several commands, defined once, and the potential they describe.

A command takes a group of options with a decorator (``@potential_options``)
and gets them as keyword arguments; :func:`build_potential` turns the
potential options into the terms and parameters of the public API.
"""
from __future__ import annotations

import click

from .common import parse_params

__all__ = ["potential_options", "build_potential", "subset_params"]


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
    from ..potentials.catalog import read_model_file
    from ..potentials.expression import ExpressionTerm
    from ..potentials.tabulated import TabulatedTerm

    values = parse_params(params)
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

