"""``boundkit run SPEC.toml``: run a study described in a run spec file.

The spec format is documented in :mod:`boundkit.runspec` and docs/runspec.md.
``--dry-run`` checks the spec and the output folder and prints what the run
would compute (:func:`boundkit.runspec.plan.plan`) without solving; ``--quiet``
hides the progress bar (stderr, tqdm) that a run longer than 2 s shows.

Exit codes: 0 everything as asked (or a valid spec with ``--dry-run``); 2 bad spec or output folder in the way (one
message, nothing written); 3 the run finished but some levels were not found,
a tolerance was not met or a study failed (the output is written and
report.md lists what went wrong; with ``--force``, a run that computed nothing
keeps the earlier run and writes nothing).
"""
from __future__ import annotations

import sys
from pathlib import Path

import click

from .common import EXIT_NOT_CONVERGED, check_output_folder, clip_message, fail

__all__ = ["run_cmd"]


@click.command("run")
@click.argument("spec_path", metavar="SPEC.toml", type=click.Path(dir_okay=False))
@click.option("--out", "out_dir", default=None, type=click.Path(file_okay=False),
              help="Output folder (default: out/<spec file name without .toml>).")
@click.option("--force", is_flag=True,
              help="Replace the output folder of an earlier run, once the new run has finished; a run that "
                   "computed nothing (every solve and study refused or failed) keeps the earlier one.")
@click.option("--dry-run", is_flag=True,
              help="Check the spec (every error, one line each) and the output folder, and list what the run would "
                   "compute: studies, models, equations, channels, number of solves. Solves and writes nothing.")
@click.option("--quiet", "-q", is_flag=True,
              help="No progress bar on stderr (it is shown for runs longer than 2 s).")
def run_cmd(spec_path: str, out_dir: str | None, force: bool, dry_run: bool, quiet: bool) -> None:
    """Run the studies of a run spec and write results.json, tables, figures and report.md."""
    from ..runspec import load_spec, run
    from ..runspec.spec import SpecErrors

    try:
        spec = load_spec(spec_path, all_errors=dry_run)
    except SpecErrors as exc:       # --dry-run: every error, one line each
        for err in exc.errors[:-1]:
            click.echo(f"boundkit: error: {clip_message(str(err))}", err=True)
        fail(str(exc.errors[-1]))
    except ValueError as exc:
        fail(str(exc))
    target = Path(out_dir) if out_dir else Path("out") / spec.name
    check_output_folder(str(target), "--out")
    if dry_run:
        from ..runspec.files import _check_target
        from ..runspec.plan import plan

        try:
            _check_target(target, force)
        except FileExistsError as exc:
            fail(str(exc))
        click.echo(plan(spec).text())
        click.echo(f"output folder: {target}" + (" (would be replaced)" if target.exists() else ""))
        return
    try:
        report = run(spec, target, force=force, progress=not quiet)
    except ValueError as exc:
        fail(str(exc))
    except OSError as exc:
        if isinstance(exc, FileExistsError) and exc.errno is None:    # the output folder's own checks
            fail(str(exc))
        fail(f"cannot create the output folder {str(target)!r} ({exc.strerror or exc}); choose a writable "
              "place with --out")
    if report.kept_earlier:
        for p in report.problems:
            click.echo(f"boundkit: problem: {clip_message(p)}", err=True)
        click.echo(f"boundkit: the run computed nothing; the earlier run in {clip_message(str(target))} is kept as "
                   "it was", err=True)
        sys.exit(EXIT_NOT_CONVERGED)
    click.echo(f"{spec.title}")
    for line in report.headline:
        click.echo(f"  {line}")
    click.echo(f"wrote {len(report.files)} files to {report.out_dir} in {report.seconds:.1f} s "
               f"(see {report.out_dir / 'report.md'})")
    if report.problems:
        for p in report.problems:
            click.echo(f"boundkit: problem: {p}", err=True)
        sys.exit(EXIT_NOT_CONVERGED)

