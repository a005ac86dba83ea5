"""SIGTERM for the command line: unwind like Ctrl-C, and never be lost.

The handler raises :class:`Terminated` (a ``SystemExit``) where the main thread
is, so ``finally`` blocks remove temporary files. If that place is a finalizer
(a ``__del__`` or a weakref callback), Python prints the exception and goes on;
the handler therefore also records the signal, and :func:`check` raises it
again at the next safe point (every progress update of a scan or run, and the
end of the command).
"""
from __future__ import annotations

_pending = {"code": 0}


class Terminated(SystemExit):
    """SIGTERM: unwinds like Ctrl-C (``finally`` blocks remove temporary files), exit 128 + 15."""


def on_sigterm(signum, frame):  # pragma: no cover - exercised in a subprocess test
    _pending["code"] = 128 + signum
    raise Terminated(128 + signum)


def check() -> None:
    """Raise :class:`Terminated` if a SIGTERM arrived and its first raise was swallowed."""
    code = _pending["code"]
    if code:
        raise Terminated(code)


def pending() -> int:
    """The exit code of a SIGTERM that arrived (0 if none)."""
    return _pending["code"]


def reset() -> None:
    _pending["code"] = 0
