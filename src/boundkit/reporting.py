"""Numbers in reports: differences of levels printed with the digits their error supports.

A difference d = E_a - E_b of two computed levels has the error estimate

    delta = delta_a + delta_b + 2 eps max(|E_a|, |E_b|),

the two levels' own estimates plus the rounding of the subtraction (eps the
double-precision machine epsilon). The rule for printing it:

- |d| <= delta: nothing distinguishes d from zero, and it is printed as ``0``
  (not as the 4.9e-14 keV of rounding noise left by two equal levels);
- otherwise d is printed with the significant digits that delta supports
  (one guard digit, between 3 and 15).

The same rule serves tables of shifts, splittings and scan differences.

Channels that failed are summarised on one line (:func:`channel_summary`): channels that share a status
and a reason are named together and the reason is given once.
"""
from __future__ import annotations

import math
import re
from typing import Iterable

import numpy as np

__all__ = ["difference_error", "is_zero", "format_difference", "channel_summary"]

_EPS = float(np.finfo(float).eps)


def difference_error(a: float, b: float, error_a: float = 0.0, error_b: float = 0.0) -> float:
    """Error estimate of a - b: the two estimates plus the rounding of the subtraction (module docstring)."""
    return abs(error_a) + abs(error_b) + 2 * _EPS * max(abs(a), abs(b))


def is_zero(d: float, error: float) -> bool:
    """True when |d| does not exceed its error estimate."""
    return abs(d) <= error


def format_difference(d: float, error: float, digits: int = 15) -> str:
    """``d`` as text: ``0`` when it is within its error of zero, else with the digits ``error`` supports.

    Parameters
    ----------
    d : float
        The difference, in the unit it is printed in.
    error : float
        Its error estimate (same unit), e.g. from :func:`difference_error`.
    digits : int
        Most significant digits printed.

    Examples
    --------
    >>> format_difference(4.9e-14, 3e-13)
    '0'
    >>> format_difference(0.19902934567, 2e-9)
    '0.199029346'
    """
    if not math.isfinite(d):
        return str(d)
    if is_zero(d, error):
        return "0"
    if error > 0 and math.isfinite(error):
        digits = min(digits, max(3, math.ceil(math.log10(abs(d) / error)) + 1))
    return f"{d:.{digits}g}"


_EQUATION_NAMES = {"schrodinger": "Schrodinger", "klein-gordon": "Klein-Gordon", "dirac": "Dirac"}


def _numbers(values: list[str]) -> str | None:
    """``['l=0', 'l=1', 'l=2']`` as ``'l=0..2'`` (kappa runs step over 0); None unless all are ``key=int``."""
    found = [re.fullmatch(r"(\w+)=(-?\d+)", v) for v in values]
    if not all(found) or len({m.group(1) for m in found}) != 1:
        return None
    key = found[0].group(1)
    nums = sorted({int(m.group(2)) for m in found})
    runs: list[list[int]] = []
    for n in nums:
        step = 2 if key == "kappa" and runs and runs[-1][-1] == -1 else 1
        if runs and n == runs[-1][-1] + step:
            runs[-1].append(n)
        else:
            runs.append([n])
    parts = [f"{r[0]}..{r[-1]}" if len(r) > 2 else ",".join(map(str, r)) for r in runs]
    return f"{key}=" + ",".join(parts)


def channel_summary(entries: Iterable[tuple[str, str, str]], width: int = 280) -> str:
    """One line naming channels that were not solved, each shared reason once, at most ``width`` characters.

    Parameters
    ----------
    entries : iterable of (channel, status, reason)
        ``channel`` as ``'<equation> <numbers>'`` (``'klein-gordon l=0'``, ``'dirac kappa=-1'``), ``reason``
        the channel's message ('' for none).
    width : int
        Longest line returned.

    Returns
    -------
    str
        Groups of channels with the same status and reason (a reason that differs only by the name of the
        channel's own equation counts as the same), e.g. ``'klein-gordon l=0..2, dirac kappa=-3..2: error
        (... the Klein-Gordon/Dirac equation binds nothing ...)'``; reasons that do not fit are cut, and
        groups that do not fit are counted at the end. The full messages stay with the caller.
    """
    groups: dict[tuple[str, str], dict[str, list[str]]] = {}
    for channel, status, reason in entries:
        eq, _, numbers = str(channel).partition(" ")
        reason = " ".join(str(reason or "").split())
        name = _EQUATION_NAMES.get(eq)
        if name:
            reason = reason.replace(f"{name} equation", "\0 equation")
        groups.setdefault((status, reason), {}).setdefault(eq, []).append(numbers)
    pieces = []
    for (status, reason), members in groups.items():
        names = []
        for eq, nums in members.items():
            compact = _numbers(nums)
            names += [f"{eq} {compact}"] if compact else [f"{eq} {n}".strip() for n in nums]
        shown = reason.replace("\0", "/".join(_EQUATION_NAMES.get(eq, eq) for eq in members))
        pieces.append((f"{', '.join(names)}: {status}", shown))
    out: list[str] = []
    for i, (head, reason) in enumerate(pieces):
        used = len("; ".join(out)) + (2 if out else 0)
        later = sum(len(h) + 2 for h, _ in pieces[i + 1:])
        room = width - used - len(head) - later
        if reason and room >= len(reason) + 3:
            head = f"{head} ({reason})"
        elif reason and room >= 40:
            head = f"{head} ({reason[:room - 7].rsplit(' ', 1)[0]} ...)"
        out.append(head)
    text = "; ".join(out)
    while len(text) > width and len(out) > 1:   # too many groups for the line: count the rest
        out.pop()
        text = "; ".join(out) + f"; {len(pieces) - len(out)} more"
    return text if len(text) <= width else text[:width - 4] + " ..."
