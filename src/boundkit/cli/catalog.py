"""``boundkit potentials`` and ``boundkit particles``: what the library knows (model potentials, particles)."""
from __future__ import annotations


import click

from .common import fail, json_text

__all__ = ["potentials_cmd", "particles_cmd"]


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


@click.command("particles")
@click.option("--json", "as_json", is_flag=True, help="Print one JSON object (a list of particles with units).")
def particles_cmd(as_json):
    """List the particles --particle accepts: mass, charge, spin and where the mass comes from."""
    from ..units import particle_table

    rows = particle_table()
    if as_json:
        click.echo(json_text({"units": {"mass": "MeV/c^2", "charge": "e", "spin": "hbar"}, "particles": rows}))
        return
    click.echo(f"{'name':<11} {'mass (MeV/c^2)':>17} {'charge (e)':>10} {'spin (hbar)':>11}  source")
    for r in rows:
        charge = "-" if r["charge"] is None else ("0" if r["charge"] == 0 else f"{r['charge']:+g}")
        spin = "-" if r["spin"] is None else f"{r['spin']:g}"
        click.echo(f"{r['name']:<11} {r['mass']:>17.12g} {charge:>10} {spin:>11}  {r['source']}")

