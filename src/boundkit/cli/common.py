"""What every command shares: exit codes, the one-line error, argument checks, figure writing.

No click options here (they live in :mod:`boundkit.cli.options`) and no
numerics: these helpers check what the user typed and report failures the
way the command group does (``boundkit: error: ...``, exit 2).
"""
from __future__ import annotations

import math
import os
import re
import unicodedata
from pathlib import Path

import click

from .._checks import shorten

__all__ = ["Refused", "EXIT_BAD_INPUT", "EXIT_NOT_CONVERGED", "EXIT_INTERRUPTED", "MAX_MESSAGE", "fail", "clip_message",
           "check_output_path", "check_output_folder", "check_tol", "check_particle", "check_plot_path", "write_figure", "json_text",
           "levels_arg", "level_count", "channel_number", "parse_params", "report_unit", "report_length", "api_message",
           "given_option"]

EXIT_BAD_INPUT = 2
EXIT_NOT_CONVERGED = 3
EXIT_INTERRUPTED = 130
MAX_MESSAGE = 280      # with "boundkit: error: " the line stays under 300 characters
"""Longest error line (characters); long quoted values in a message are shortened."""


class Refused(SystemExit):
    """The exit of :func:`fail`: the input was refused (exit 2). The command group then drops the log
    records that such a refusal makes moot (:class:`boundkit.cli.group.HeldRecords`)."""


def fail(message: str) -> None:
    """One line ``boundkit: error: ...`` on stderr, exit 2."""
    click.echo(f"boundkit: error: {clip_message(message)}", err=True)
    raise Refused(EXIT_BAD_INPUT)


def api_message(exc: Exception, options: dict[str, str] | None = None) -> str:
    """The message of an error from the public API, with the keywords named the way the command names them.

    ``options``: keyword -> option of the command that feeds it, e.g. ``{"max_nodes": "--max-nodes"}``.
    A :class:`boundkit._checks.LimitError` names the keyword that raises its limit
    (``max_nodes= (API)``); the message then names the option instead. An
    :class:`boundkit._checks.OptionError` carries its command-line wording (``--param Z=1`` for the
    API's ``params={'Z': 1} (--param Z=1 on the command line)``), which is used. A message that starts
    with a keyword (``hard_core: must be positive``; ``params``, ``r_unit``, ``v_unit``, ``l``, ``kappa`` and
    ``j`` are always ``--param``, ``--table-r-unit``, ``--table-v-unit``, ``--l``, ``--kappa`` and ``--j``)
    starts with its option. Any other error is
    its own message.
    """
    from .._checks import LimitError, OptionError

    options = {"params": "--param", "r_unit": "--table-r-unit", "v_unit": "--table-v-unit", "l": "--l",
               "kappa": "--kappa", "j": "--j", **(options or {})}
    if isinstance(exc, LimitError) and exc.keyword in options:
        return exc.naming(options[exc.keyword])
    text = exc.command_line if isinstance(exc, OptionError) else str(exc)
    head, sep, rest = text.partition(":")
    if sep and head in options:
        return f"{options[head]}:{rest}"
    return text


def given_option(name: str) -> str | None:
    """The option (``--table-tail``) of the parameter ``name`` of the running command when the user gave it on
    the command line (or in the environment), None when it holds its default or no command is running."""
    from click.core import ParameterSource

    ctx = click.get_current_context(silent=True)
    if ctx is None or ctx.get_parameter_source(name) in (None, ParameterSource.DEFAULT, ParameterSource.DEFAULT_MAP):
        return None
    return next((p.opts[0] for p in ctx.command.params if p.name == name), f"--{name.replace('_', '-')}")


def clip_message(message: str) -> str:
    """``message`` on one line and at most :data:`MAX_MESSAGE` characters.

    Quoted values longer than 40 characters are cut in the middle first (an
    argument of a megabyte must not be echoed whole), then the tail.
    """
    text = " ".join(str(message).split())
    if len(text) <= MAX_MESSAGE:
        return text
    text = re.sub(r"'[^']{41,}'|\"[^\"]{41,}\"", lambda m: m.group(0)[:24] + "..." + m.group(0)[-8:], text)
    text = re.sub(r"\S{61,}", lambda m: m.group(0)[:40] + "..." + m.group(0)[-12:], text)
    return text if len(text) <= MAX_MESSAGE else text[: MAX_MESSAGE - 4] + " ..."


def parse_params(items: tuple[str, ...]) -> dict[str, float]:
    """NAME=VALUE pairs; names are read in NFKC form, as Python and the expression parser read them."""
    params: dict[str, float] = {}
    given: dict[str, str] = {}
    for item in items:
        name, eq, value = item.partition("=")
        name = unicodedata.normalize("NFKC", name.strip())
        if not eq or not name or not value.strip():
            fail(f"--param {item!r} is malformed; write NAME=VALUE, for example --param Z=1")
        if "_" in value:    # Python reads 1_0 as 10: a typo would pass unseen
            fail(f"--param {item!r}: {value.strip()!r} has an underscore in the number; write the digits without it")
        try:
            x = float(value)
        except ValueError:
            try:    # a complex value, e.g. W=-0.01j or V0=50+5j (expressions and resonances only)
                x = complex("".join(value.split()))
            except ValueError:
                fail(f"--param {item!r}: {value.strip()!r} is not a number; write NAME=VALUE, e.g. --param Z=82")
        if not (math.isfinite(x.real) and math.isfinite(x.imag)):
            fail(f"--param {item!r}: the value must be finite")
        if name in given and x != params[name]:
            fail(f"--param {name} is given twice ({given[name]} and {value.strip()}); give it once")
        params[name] = x
        given.setdefault(name, value.strip())
    return params


def check_tol(tol: float | None, option: str = "--tol") -> None:
    """The CLI's tolerances lie strictly between 0 and 1, as in run specs."""
    if tol is not None and not 0 < tol < 1:
        fail(f"{option}: must lie between 0 and 1, got {tol:g}; e.g. {option} 1e-10")


def check_particle(particle: str | None, mass_mev: float | None) -> None:
    """--particle and --mass-mev name the same thing: one of them."""
    if particle is not None and mass_mev is not None:
        fail(f"--particle {particle} and --mass-mev {mass_mev:g}: give one of them (a mass makes a particle "
              "of its own)")


_PLOT_FORMATS = (".png", ".svg", ".pdf")


def check_plot_path(path: str | None, option: str = "--plot") -> None:
    """Refuse a figure path that cannot be a file, before anything is computed."""
    check_output_path(path, option, _PLOT_FORMATS, "levels.png", "figure format", optional_suffix=True)


def check_output_path(path: str | None, option: str, formats: tuple[str, ...], example: str,
                      what: str = "format", optional_suffix: bool = False) -> None:
    """Refuse an output path that cannot be a file of one of ``formats`` (suffixes; any case), before
    anything is computed. A missing folder is fine (it is created when the file is written)."""
    if path is None:
        return
    p = Path(path)
    try:
        is_dir = p.is_dir()
    except OSError as exc:      # a name too long for the file system, say
        fail(f"{option} {shorten(path, 80)!r}: cannot be a file here ({exc.strerror or exc}); choose a shorter "
             "name or another folder")
    if not p.name or path.endswith(("/", os.sep)) or is_dir:
        fail(f"{option} {path!r}: not a file name; write e.g. {option} {example}")
    check_output_folder(path, option)
    if (p.suffix or not optional_suffix) and p.suffix.lower() not in formats:
        fail(f"{option} {path!r}: unsupported {what} {p.suffix or '(none)'!r}; use {', '.join(formats[:-1])} or "
             f"{formats[-1]}")


def check_output_folder(path: str | None, option: str) -> None:
    """Refuse a folder or file ``path`` to be created under a file (``--out /dev/null/x``), before anything is
    computed: the message names the file in the way."""
    if path is None:
        return
    blocking = next((a for a in Path(path).parents if a.exists() and not a.is_dir()), None)
    if blocking is not None:
        fail(f"{option} {path!r}: {str(blocking)!r} is a file, not a folder; choose another folder")


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


def json_text(doc) -> str:
    """``doc`` as strict JSON text (indented), the one path of every ``--json``: NaN and +-inf become null,
    as in a run's results.json (:func:`boundkit._jsonsafe.json_text`), since strict parsers reject NaN and
    Infinity."""
    from .._jsonsafe import json_text as strict

    return strict(doc)


MAX_LEVELS_KEY = "boundkit.max_levels"
"""Key of ``--max-levels`` in the click context's ``meta``, where ``--levels`` reads it."""


def check_max_levels(ctx, param, value: int) -> int:
    """Callback of ``--max-levels`` (eager): at least 1, kept in ``ctx.meta`` for ``--levels``."""
    from .._checks import check_int

    try:
        value = check_int("max_levels", value, minimum=1)
    except ValueError as exc:
        raise click.BadParameter(str(exc), param_hint="'--max-levels'") from None
    ctx.meta[MAX_LEVELS_KEY] = value
    return value


def levels_arg(text: str, max_levels: int | None = None):
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
    return level_count(n, max_levels)


def channel_number(ctx, param, value):
    """Callback of ``--l`` and ``--kappa`` (one value or repeated): the API's check as click reads the option, so
    that a bad channel number is a usage error (``; see boundkit CMD --help``) like any bad option value."""
    from .._checks import check_int
    from ..equations.dirac import kappa_to_lj

    for v in value if isinstance(value, tuple) else (value,):
        try:
            if v is not None:
                kappa_to_lj(v) if param.name.startswith("kappa") else check_int("l", v, minimum=0)
        except ValueError as exc:
            raise click.BadParameter(str(exc), param_hint=f"'{param.opts[0]}'") from None
    return value


def level_count(n: int, max_levels: int | None = None) -> int:
    """--levels N at most ``--max-levels`` (default :data:`boundkit._checks.MAX_LEVELS`), refused before
    anything is read or solved (every command that takes --levels, also those whose study does not check
    it itself)."""
    from .._checks import MAX_LEVELS
    from ..solver import check_levels

    try:
        return check_levels(n, MAX_LEVELS if max_levels is None else max_levels)
    except ValueError as exc:
        raise click.BadParameter(api_message(exc, {"max_levels": "--max-levels"}), param_hint="'--levels'") from None


def report_unit(energy_unit: str | None, unit_system: str) -> str:
    """Canonical name of the unit of reported energies: ``--energy-unit``, else hartree (MeV with --units nuclear)."""
    from ..units import call_energy_unit

    return call_energy_unit(energy_unit, unit_system)


def report_length(length_unit: str | None, unit_system: str) -> str:
    """Canonical name of the unit of reported lengths: ``--length-unit``, else bohr (fm with --units nuclear)."""
    from ..units import length_unit as canonical_length

    return canonical_length(length_unit or ("fm" if unit_system == "nuclear" else "bohr"))

