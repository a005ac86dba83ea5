"""``boundkit potentials``: what the library knows (its model potentials)."""
from __future__ import annotations

import click

from .common import fail

__all__ = ["potentials_cmd"]


@click.command("potentials")
@click.argument("name", required=False)
def potentials_cmd(name):
    """List the library's model potentials, or show one."""
    from ..potentials.catalog import library_model, library_models
    from ..units import unit_label

    if name is None:
        for spec in library_models().values():
            params = ", ".join(spec.parameters)
            click.echo(f"{spec.name:<16} {spec.description}  [{params}]")
        return
    try:
        spec = library_model(name)
    except ValueError as exc:
        fail(str(exc))
    click.echo(f"{spec.name}: {spec.description}")
    click.echo(f"formula: {spec.formula}")
    click.echo(f"source:  {spec.source}")
    click.echo("parameters (unit with --units atomic / --units nuclear):")
    for pname, p in spec.parameters.items():
        default = ("required" if "default" not in p else f"default {p['default']}" if isinstance(p["default"], str)
                   else f"default {p['default']:g}")      # a string default is a complex number
        click.echo(f"  {pname:<18} {p['unit']:>16} / {unit_label(p['unit'], 'nuclear'):<14} {default:<16} "
                   f"{p['description']}")


