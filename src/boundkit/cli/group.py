"""The command group ``boundkit``: logging, and one line on stderr for whatever goes wrong.

The commands themselves live in the sibling modules and are registered on
:data:`main` by :mod:`boundkit.cli` (the package ``__init__``).
"""
from __future__ import annotations

import errno
import logging
import os
import signal
import sys
import warnings

import click

from .. import __version__
from .._signals import Terminated, on_sigterm as _on_sigterm, pending
from .common import EXIT_BAD_INPUT, EXIT_INTERRUPTED, Refused, fail

__all__ = ["main", "BoundkitGroup", "HeldRecords", "MOOT_IF_REFUSED"]

MOOT_IF_REFUSED = "moot_if_refused"
"""Attribute of a log record (``log.warning(..., extra={MOOT_IF_REFUSED: True})``) that a refusal of the input
would make moot: a far behaviour assumed for a potential that is not finite out there, when the solver then
refuses the potential at a nearer radius (its error names that radius)."""


class HeldRecords(logging.Filter):
    """Filter on the root handlers during a command: holds the records marked :data:`MOOT_IF_REFUSED` and
    shows them when the command ends, unless it ended by refusing its input (:class:`Refused`: then the
    one error line says it all)."""

    def __init__(self) -> None:
        super().__init__()
        self.records: list[logging.LogRecord] = []
        self.handlers: list[logging.Handler] = []

    def filter(self, record: logging.LogRecord) -> bool:
        if not getattr(record, MOOT_IF_REFUSED, False):
            return True
        if not any(r is record for r in self.records):    # once, whatever the number of handlers
            self.records.append(record)
        return False

    def attach(self) -> None:
        self.handlers = list(logging.getLogger().handlers)
        for h in self.handlers:
            h.addFilter(self)

    def release(self, show: bool) -> None:
        for h in self.handlers:
            h.removeFilter(self)
        records, self.records, self.handlers = self.records, [], []
        for record in records if show else ():
            setattr(record, MOOT_IF_REFUSED, False)
            logging.getLogger(record.name).handle(record)


_HELD = HeldRecords()


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
        try:
            self._standalone(args, prog_name, complete_var, **extra)
        except Refused:
            _HELD.release(show=False)
            raise
        except BaseException:
            _HELD.release(show=True)
            raise

    def _standalone(self, args, prog_name, complete_var, **extra):
        argv = args if args is not None else sys.argv[1:]
        if any("\x00" in str(a) for a in argv):   # os.stat and open() would raise ValueError on it
            fail("an argument contains a NUL character (\\x00); remove it")
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
            fail(f"{_lower(exc.format_message()).rstrip('.')}; see {_command_path(exc.ctx)} --help")
        except click.ClickException as exc:
            fail(exc.format_message())
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
        if pending():          # a SIGTERM whose raise a finalizer swallowed: still an interruption
            click.echo("boundkit: interrupted", err=True)
            sys.exit(pending())
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
    fail(f"cannot write the output ({exc.strerror or exc}); redirect it to a writable place")


@click.group(cls=BoundkitGroup, context_settings={"help_option_names": ["-h", "--help"]})
@click.version_option(__version__, prog_name="boundkit")
@click.option("-v", "--verbose", count=True, help="More log output (-v info, -vv debug).")
def main(verbose: int) -> None:
    """boundkit: bound states of central potentials (Schrodinger, Klein-Gordon, Dirac)."""
    level = logging.WARNING - 10 * min(verbose, 2)
    logging.basicConfig(level=level, format="%(levelname)s %(name)s: %(message)s")
    _HELD.attach()
    if verbose >= 2:
        warnings.simplefilter("default", RuntimeWarning)


