"""Where a user's potential jumps or has a kink: the breakpoints of expressions and callables.

A library term knows the radii where it is not smooth and declares them
(:attr:`boundkit.potentials.base.Term.breakpoints`); the spectral elements put an
element edge there, so that every element sees a smooth potential. A term written
by the user must have them found:

- an expression (:mod:`boundkit.potentials.expression`) can switch only where the
  condition of a ``where`` changes its truth value, and has a kink only where the
  argument of an ``abs`` changes sign. A comparison of ``r`` itself with a quantity
  free of ``r`` (``r < R``, ``1 < r <= 3``) gives its radius directly; any other
  (``r/R < 1``, ``abs(r - 2)``) is located numerically: sign changes of the
  difference of its two sides on a grid of 1000 points per decade from 1e-12 to
  1e8 (in the term's own length unit), each bisected down to neighbouring floating
  point numbers;
- a Python callable is a black box: a jump is a difference between neighbouring
  samples of that grid far larger than the differences beside it, confirmed by
  bisection to neighbouring floating point numbers (across which the value still
  changes by at least half of it); a kink or a jump of the curvature is a divided
  difference of order 2 or 3 far larger than those beside it, located where the
  polynomials fitted on either side meet (:func:`_break_in`). A smooth but steep
  change (a Woods-Saxon edge far thinner than the grid) fades under either search
  and is not reported; a jump of the third or a higher derivative is not looked for.

Neither search can see a switch on an interval narrower than the grid spacing
(0.23 %) unless it is written as ``r`` compared with a constant. More than
:data:`MAX_SWITCHES` radii are not reported (a staircase of steps): the solver then
proceeds without them.
"""
from __future__ import annotations

import logging
import math
from functools import lru_cache
from typing import Callable

import numpy as np

__all__ = ["MAX_SWITCHES", "breaks", "jumps", "reported", "sign_changes", "wide_grid"]

log = logging.getLogger(__name__)

MAX_SWITCHES = 256
"""Most radii a term reports; beyond that none are reported (and the fact is logged)."""

_JUMP_RATIO = 50.0      # a jump: a neighbour difference this many times those beside it


@lru_cache(maxsize=1)
def wide_grid() -> np.ndarray:
    """1000 radii per decade from 1e-12 to 1e8 (read-only; built once)."""
    r = np.logspace(-12, 8, 20001)
    r.flags.writeable = False
    return r


def _values(fn: Callable, r) -> np.ndarray:
    with np.errstate(all="ignore"):
        v = np.asarray(fn(np.asarray(r, dtype=float)))
    if np.iscomplexobj(v):
        v = v.real
    return np.broadcast_to(v.astype(float), np.shape(r))


def _narrowed(a: float, b: float, same_as_a: Callable[[float], bool]) -> float:
    """The smallest float in (a, b] where ``same_as_a`` is False, given it is True at a, False at b."""
    for _ in range(200):
        m = 0.5 * (a + b)
        if not a < m < b:
            break
        if same_as_a(m):
            a = m
        else:
            b = m
    return b


def sign_changes(fn: Callable) -> list[float] | None:
    """Radii on the wide grid's range where fn(r) > 0 changes its truth value (non-finite
    samples ignored), each to neighbouring floating point numbers; None when there are more than
    :data:`MAX_SWITCHES`."""
    r = wide_grid()
    v = _values(fn, r)
    ok = np.isfinite(v)
    pos = v > 0
    idx = np.nonzero(ok[:-1] & ok[1:] & (pos[:-1] != pos[1:]))[0]
    if len(idx) > MAX_SWITCHES:
        return None
    out = []
    for i in idx:
        side = bool(pos[i])
        out.append(_narrowed(float(r[i]), float(r[i + 1]), lambda x: bool(_values(fn, [x])[0] > 0) == side))
    return out


def jumps(fn: Callable) -> tuple[float, ...]:
    """Radii where the values of fn jump (see the module docstring), ascending."""
    r = wide_grid()
    v = _values(fn, r)
    d = np.abs(np.diff(v))
    d = np.where(np.isfinite(d), d, 0.0)
    beside = np.maximum(np.concatenate(([0.0], d[:-1])), np.concatenate((d[1:], [0.0])))
    size = np.maximum(np.abs(v[:-1]), np.abs(v[1:]))
    cand = np.nonzero((d > _JUMP_RATIO * beside) & (d > 1e-9 * np.where(np.isfinite(size), size, 0.0))
                      & (d > 0))[0]
    if len(cand) > MAX_SWITCHES:
        log.info("potential: %d jumps or more; none reported (the solver proceeds without them)", len(cand))
        return ()
    out = []
    for i in cand:
        a, b = float(r[i]), float(r[i + 1])
        va, vb = float(v[i]), float(v[i + 1])
        jump = abs(vb - va)
        for _ in range(200):
            m = 0.5 * (a + b)
            if not a < m < b:
                break
            vm = float(_values(fn, [m])[0])
            if not math.isfinite(vm):
                break
            if abs(vm - va) >= abs(vb - vm):
                b, vb = m, vm
            else:
                a, va = m, vm
            if abs(vb - va) < 0.5 * jump:       # shrinking with the bracket: steep, not a jump
                break
        if abs(vb - va) >= 0.5 * jump and not a < 0.5 * (a + b) < b:
            out.append(b)
    return tuple(out)


def reported(radii, label: str) -> tuple[float, ...]:
    """The radii a term reports: positive, finite, sorted, without repeats; none when ``radii`` is
    None (too many found) or holds more than :data:`MAX_SWITCHES`."""
    if radii is None or len(radii) > MAX_SWITCHES:
        log.info("%s: more than %d switching radii; none reported (the solver proceeds without them)",
                 label, MAX_SWITCHES)
        return ()
    return tuple(sorted({float(x) for x in radii if math.isfinite(x) and x > 0}))


def _divided(r: np.ndarray, v: np.ndarray, order: int) -> np.ndarray:
    """Divided differences of the given order: entry i spans the samples i .. i + order."""
    d = v
    for k in range(1, order + 1):
        d = (d[1:] - d[:-1]) / (r[k:] - r[:-k])
    return d


def _clusters(idx: np.ndarray, gap: int) -> list[tuple[int, int]]:
    out: list[tuple[int, int]] = []
    for i in idx:
        if out and i - out[-1][1] <= gap:
            out[-1] = (out[-1][0], int(i))
        else:
            out.append((int(i), int(i)))
    return out


def _break_in(fn: Callable, a: float, b: float, m: int) -> float | None:
    """The radius in [a, b] where the m-th derivative of fn jumps (m = 1: a kink, 2: a jump of the
    curvature), or None when the jump fades as the bracket shrinks (a smooth, steep change).

    Notes
    -----
    Left of the break fn is one smooth function, right of it another, and the two agree up to the
    (m - 1)-th derivative there, so their difference is J (r - c)^m / m! near the break c. The
    polynomials of degree m through m + 1 samples spaced h to the left of a and to the right of b
    stand for the two; c is the root of the (m - 1)-th derivative of their difference (a straight
    line). The bracket then closes around c and the step repeats, down to about 1e-9 relative for a
    kink and 1e-6 for a curvature jump (rounding limits the finite differences; a break misplaced by
    d perturbs V over a length d by J d^m, far below the digits kept).
    """
    stop = 1e-9 if m == 1 else 1e-6
    first = None
    steps = np.arange(m + 1)
    for _ in range(60):
        h = b - a
        mid = 0.5 * (a + b)
        left, right = a - h * steps, b + h * steps
        if left[-1] <= 0:
            return None
        vals = _values(fn, np.concatenate((left, right)))
        if not np.all(np.isfinite(vals)):
            return None
        # interpolating polynomials in x = (r - mid) / h; their difference, and its m-th coefficient
        cl = np.polynomial.polynomial.polyfit((left - mid) / h, vals[:m + 1], m)
        cr = np.polynomial.polynomial.polyfit((right - mid) / h, vals[m + 1:], m)
        diff = cr - cl
        jump = abs(diff[m]) / h**m          # J / m!, in r
        if first is None:
            first = jump
        if jump == 0.0 or not jump > 0.25 * first:
            return None                        # fading: a smooth change, not a break
        c = mid - h * diff[m - 1] / (m * diff[m])      # root of the (m - 1)-th derivative
        if not a <= c <= b:
            return None
        if h <= stop * c:
            return float(c)
        a, b = max(a, c - h / 4), min(b, c + h / 4)
    return None


def breaks(fn: Callable) -> list[float] | None:
    """Radii where fn jumps, has a kink or a jump of its curvature (see the module docstring),
    ascending; None when there are more than :data:`MAX_SWITCHES`."""
    found = list(jumps(fn))
    r = wide_grid()
    v = _values(fn, r)
    if not np.all(np.isfinite(v)):
        ok = np.isfinite(v)
        v = np.where(ok, v, 0.0)
    for m in (1, 2):
        d = np.abs(_divided(r, v, m + 1))
        n = len(d)
        w = m + 2                               # a break disturbs the m + 1 windows holding its interval
        beside = np.zeros(n)
        beside[w:] = d[:-w]
        beside[:-w] = np.maximum(beside[:-w], d[w:])
        spacing = r[1:n + 1] - r[:n]
        scale = np.maximum.reduce([np.abs(v[k:k + n]) for k in range(m + 2)])
        noise = 1e-12 * scale / spacing ** (m + 1)
        cand = np.nonzero((d > _JUMP_RATIO * beside) & (d > noise))[0]
        if len(cand) > 4 * MAX_SWITCHES:
            return None
        for i0, i1 in _clusters(cand, w):
            a, b = float(r[i0]), float(r[min(i1 + m + 1, len(r) - 1)])
            if any(a - 2 * (b - a) <= x <= b + 2 * (b - a) for x in found):
                continue                        # the trace of a break already found
            c = _break_in(fn, a, b, m)
            if c is not None:
                found.append(c)
        if len(found) > MAX_SWITCHES:
            return None
    return sorted(found)
