"""Small input checks shared by every layer.

Each helper converts its argument, raises :class:`ValueError` naming the
argument and what is allowed, and returns the converted value.
"""
from __future__ import annotations

import math
from typing import Iterable

__all__ = ["check_finite", "check_positive", "check_int", "check_choice", "check_parameter", "check_count",
           "check_workers", "LimitError", "OptionError", "shorten", "MAX_MAGNITUDE", "MAX_GRID_POINTS", "MAX_L", "MAX_N",
           "MAX_LEVELS", "MAX_TABLE_POINTS", "MAX_PHASE_NODES", "MAX_REPULSIVE_ETA"]

MAX_GRID_POINTS = 10_000
"""Most points of a scan grid (values x values x equations x channels), or of one
range in a run spec. Override: ``max_points=`` (API), ``--max-points`` (CLI),
``max_points = ...`` in a spec's [scan] section."""

MAX_L = 20
"""Largest l_max of a comparison. Override: ``compare(..., max_l_max=...)``."""

MAX_N = 20
"""Largest max_n of :func:`boundkit.transitions.transitions`: every channel l < max_n is solved for
its levels up to max_n, and the lines grow as max_n^4 (max_n = 20: 210 levels, about 40 s for
hydrogen). Override: ``transitions(..., max_n_limit=...)`` (API), ``--max-n-limit`` (CLI)."""

MAX_LEVELS = 1000
"""Most levels asked of one channel (``levels=N``; ``'all'`` is not limited by it): time and memory grow
faster than the count (hydrogen s levels, measured on a shared 2-core machine: Schrodinger 100 levels
1.2 s and 90 MB, 500 levels 12 s and 0.4 GB, 1000 levels 40 s and 1.2 GB; Dirac 1000 levels 65 s and
1.3 GB), so that 10^5 levels would never finish and eat the memory on the way.
Override: ``solve(..., max_levels=...)``, ``scan(..., max_levels=...)``, ``compare(..., max_levels=...)``
(API; compare passes it to solve). The command line's ``--levels`` and a run spec's ``levels`` are held
to this limit (a spec at load, dry run too)."""

MAX_PHASE_NODES = 10_000
"""Most nodes (half wavelengths) the outward integration of a phase shift or continuum state
follows from its start to the matching radius, at about 100 per second. Override:
``phase_shifts(..., max_nodes=...)``, ``continuum_state(..., max_nodes=...)`` (API),
``boundkit phases --max-nodes`` (CLI)."""

MAX_REPULSIVE_ETA = 300.0
"""Largest Sommerfeld parameter of a repulsive Coulomb tail a Schrodinger or Klein-Gordon phase shift or
continuum state is computed at: mpmath's irregular Coulomb function deep under the barrier costs about
eta^2 (3.5 s for one energy at 300, 47 s at 800, measured), and the phase relative to the Coulomb waves
is of order e^(-2 pi eta) there.
Override: ``phase_shifts(..., max_eta=...)``, ``continuum_state(..., max_eta=...)`` (API),
``boundkit phases --max-eta`` (CLI)."""

MAX_TABLE_POINTS = 200_000
"""Most points of a potential table. Override: ``read_table(..., max_points=...)``
or ``TabulatedTerm(..., max_points=...)``."""

MAX_SPEC_BYTES = 1_000_000
"""Largest run spec file, in bytes (a spec is a short text of settings; a few kB in practice). Checking
one costs about 150 times its size in memory (measured: a 1 MB description string, 157 MB traced peak
and 0.8 s; 20 MB reached 2.8 GB). Override: ``load_spec(..., max_bytes=...)``."""

MAX_MAGNITUDE = 1e30
"""Largest magnitude of a potential parameter (in atomic units) or of a probed
charge. Far beyond any physical value (a nuclear oscillator constant is about
1e14 hartree/bohr^2); it keeps squares and products of parameters inside the
floating-point range, so that the solver never overflows."""


def check_finite(name: str, value) -> float:
    if isinstance(value, (bool, str, bytes)):   # True is not 1.0 and "1" is not a number here
        raise ValueError(f"{name}: expected a number, got {_short(value)}")
    try:
        x = float(value)
    except (TypeError, ValueError):
        raise ValueError(f"{name}: expected a number, got {_short(value)}") from None
    if not math.isfinite(x):
        raise ValueError(f"{name}: expected a finite number, got {_short(value)}")
    return x


def check_positive(name: str, value) -> float:
    x = check_finite(name, value)
    if x <= 0:
        raise ValueError(f"{name}: must be positive, got {value!r}")
    return x


def check_int(name: str, value, minimum: int | None = None) -> int:
    if isinstance(value, (bool, str, bytes)):   # as for numbers: True and "3" are refused
        raise ValueError(f"{name}: expected an integer, got {_short(value)}")
    try:
        i = int(value)
    except (TypeError, ValueError, OverflowError):
        raise ValueError(f"{name}: expected an integer, got {_short(value)}") from None
    if i != value:
        raise ValueError(f"{name}: expected an integer, got {_short(value)}")
    if minimum is not None and i < minimum:
        raise ValueError(f"{name}: must be >= {minimum}, got {i}")
    return i


def check_choice(name: str, value: str, allowed: Iterable[str]) -> str:
    allowed = list(allowed)
    if value not in allowed:
        raise ValueError(f"{name}: unknown value {_short(value)}; choose one of {', '.join(allowed)}")
    return value


def check_parameter(name: str, value, allow_complex: bool = False) -> float | complex:
    """A finite potential parameter of magnitude at most :data:`MAX_MAGNITUDE`.

    With ``allow_complex`` a complex value (finite real and imaginary parts)
    is returned as a complex; one with a zero imaginary part as a float.
    """
    if isinstance(value, complex) or "complex" in type(value).__name__:   # numpy's complex64 too
        z = complex(value)
        if z.imag == 0:
            value = z.real
        elif not allow_complex:
            raise ValueError(f"{name}: complex value {_short(value)} is taken by expression terms and model files "
                             "with an expression only; for a built-in term give its imaginary part as "
                             "absorptive= (boundkit.resonances) or write the term as an expression with 1j")
        else:
            re_, im_ = (check_parameter(name, part) for part in (z.real, z.imag))
            return complex(re_, im_)
    x = check_finite(name, value)
    if abs(x) > MAX_MAGNITUDE:
        raise ValueError(f"{name}: magnitude {x:.3g} is beyond {MAX_MAGNITUDE:g}, the largest boundkit accepts "
                         "(no physical potential needs more); give a smaller value")
    return x


def shorten(text, limit: int = 60) -> str:
    """``text`` cut in the middle to at most ``limit`` characters (messages stay
    short whatever the input; the end, e.g. a file name, is kept)."""
    text = str(text)
    if len(text) <= limit:
        return text
    tail = limit // 2
    return text[: limit - tail - 3] + "..." + text[-tail:]


def _short(value, limit: int = 60) -> str:
    """repr of ``value``, shortened."""
    return shorten(repr(value), limit)


class LimitError(ValueError):
    """Input beyond a limit that a keyword of the function raises.

    The message ends with the fix, ``override`` (by default ``'<keyword>= (API)'``);
    :meth:`naming` gives the same message ending with another name of the fix, so
    that a caller that feeds ``keyword`` from an option of its own (the command line)
    names that option instead.

    Parameters
    ----------
    lead : str
        The message up to the name of the fix, e.g. ``"max_n: 30 is more than the
        limit of 20; use fewer, or raise the limit with "``.
    keyword : str or None
        The keyword that raises the limit (None: no keyword; ``override`` says what to do).
    override : str, optional
        The fix as the function's caller names it (default ``f"{keyword}= (API)"``).
    """

    def __init__(self, lead: str, keyword: str | None, override: str | None = None):
        self.lead, self.keyword = lead, keyword
        self.override = override if override is not None else f"{keyword}= (API)"
        super().__init__(lead + self.override)

    def naming(self, fix: str) -> str:
        """The message with ``fix`` (e.g. ``"--max-nodes"``) as the name of the fix."""
        return self.lead + fix

    def __reduce__(self):      # picklable across worker processes, whatever the arguments
        return type(self), (self.lead, self.keyword, self.override)


class OptionError(ValueError):
    """Bad input whose message names its fix in the API's terms, with the command line's wording beside it.

    ``str(exc)`` is the API's message (e.g. ``... give it, e.g. params={'Z': 1} (--param Z=1 on the command
    line)``); :attr:`command_line` is the same message as a command gives it (``... e.g. --param Z=1``):
    :func:`boundkit.cli.common.api_message` prints that one, as it prints :meth:`LimitError.naming`.

    Parameters
    ----------
    api : str
        The message from the API.
    command_line : str
        The message on the command line; it may start with the API keyword (``params: ...``), which the
        command renames to its option.
    """

    def __init__(self, api: str, command_line: str):
        self.command_line = command_line
        super().__init__(api)

    def amended(self, suffix: str) -> "OptionError":
        """The same error with ``suffix`` added to both wordings (e.g. ``" (at Z = 1)"``)."""
        return type(self)(str(self) + suffix, self.command_line + suffix)

    def __reduce__(self):      # picklable across worker processes
        return type(self), (str(self), self.command_line)


def check_count(name: str, count: int, limit: int, override: str, what: str = "points", *,
                keyword: str | None = None) -> int:
    """Refuse ``count`` above ``limit`` with a :class:`LimitError`; the message names the override
    (``keyword``: the keyword that raises ``limit``, for callers that name it otherwise)."""
    if count > limit:
        raise LimitError(f"{name}: {count}{' ' + what if what else ''} is more than the limit of {limit}; use "
                         "fewer, or raise the limit with ", keyword, override)
    return count


def check_workers(workers) -> int | None:
    """Worker processes: an integer from 1 to the number of cores (None: the caller's default)."""
    from ._threads import usable_cores

    if workers is None:
        return None
    workers = check_int("workers", workers, minimum=1)
    cores = usable_cores()
    if workers > cores:
        raise ValueError(f"workers: {workers} is more than the {cores} cores this process may use; use at most {cores} "
                         "(each worker is a process with its own memory; more than the cores only costs memory)")
    return workers
