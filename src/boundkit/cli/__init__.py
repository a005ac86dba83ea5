"""Command line: parse, call the public API, print. No numerics here.

One module per command group; the imports run one way (no cycle)::

    cli/__init__.py   the ``boundkit`` group with every command registered (entry point ``main``)
    cli/group.py      BoundkitGroup: logging, one-line errors, exit codes, signals
    cli/common.py     exit codes, ``fail``, argument checks, figure writing
    cli/options.py    options shared by several commands (defined once) and ``build_potential``
    cli/solve.py      solve                      cli/convergence.py  converge, validate
    cli/catalog.py    potentials, particles      cli/studies.py      scan, critical, compare
    cli/run.py        run SPEC.toml              cli/observables.py  transitions, hyperfine (+ solve extras)
    cli/continuum.py  phases                     cli/resonances.py   resonances

A command module defines its commands with ``@click.command`` and imports only
``common`` and ``options``; this file adds them to :data:`main`. To add a
command: write it in its group's module (or a new one) and list it below.
"""
from __future__ import annotations

from .catalog import particles_cmd, potentials_cmd
from .continuum import phases_cmd
from .convergence import converge_cmd, validate_cmd
from .group import main
from .observables import hyperfine_cmd, transitions_cmd
from .resonances import resonances_cmd
from .run import run_cmd
from .solve import solve_cmd
from .studies import compare_cmd, critical_cmd, scan_cmd

__all__ = ["main"]

for _command in (solve_cmd, converge_cmd, potentials_cmd, validate_cmd, run_cmd, scan_cmd, critical_cmd,
                 compare_cmd, transitions_cmd, hyperfine_cmd, phases_cmd, resonances_cmd, particles_cmd):
    main.add_command(_command)
del _command
