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
  difference of its two sides on a grid of 1000 points per decade from 1e-9 to
  1e8 (in the term's own length unit), each bisected down to neighbouring floating
  point numbers;
- a Python callable is a black box: a jump is a difference between neighbouring
  samples of that grid far larger than the differences beside it, confirmed by
  bisection to neighbouring floating point numbers (across which the value still
  changes by at least half of it); a kink or a jump of the curvature is a divided
  difference of order 2 or 3 far larger than those beside it, located where the
  polynomials fitted on either side meet (:func:`_break_in`). A jump of the third or
  a higher derivative is not looked for;
- for both: a smooth but steep change narrower than the grid (a Woods-Saxon edge of
  a/R = 1e-4 written by hand) fades under those searches, but shows as a step between
  two samples; a step between two plateaus over a few samples (a/R up to 1e-2) is still
  narrower than the layout's own sampling. Either is reported with graded radii
  around it, as the built-in Woods-Saxon term declares its own for a < 0.01 R
  (:func:`steep_edges`).

Neither search can see a switch on an interval narrower than the grid spacing
(0.23 %) unless it is written as ``r`` compared with a constant. More than
:data:`MAX_SWITCHES` radii are not reported (a staircase of steps): the solver then
proceeds without them.
"""
from __future__ import annotations

import logging
import math
from functools import lru_cache
from typing import Callable, NamedTuple

import numpy as np

__all__ = ["MAX_SWITCHES", "breaks", "graded_around", "graded_edge", "jumps", "reported", "sign_changes", "steep_edges",
           "wide_grid"]

log = logging.getLogger(__name__)

MAX_SWITCHES = 256
"""Most radii a term reports; beyond that none are reported (and the fact is logged)."""

_JUMP_RATIO = 50.0      # a jump: a neighbour difference this many times those beside it


@lru_cache(maxsize=1)
def wide_grid() -> np.ndarray:
    """1000 radii per decade from 1e-9 to 1e8 (read-only; built once). Below 1e-9 (bohr, or fm for a
    term in nuclear units) nothing physical happens, and a value that is a difference of large terms
    is mostly rounding there."""
    r = np.logspace(-9, 8, 17001)
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


def jumps(fn: Callable, v: np.ndarray | None = None, steps: _Steps | None = None) -> tuple[float, ...]:
    """Radii where the values of fn jump (see the module docstring), ascending.

    Notes
    -----
    A jump J between samples i and i + 1 on a smooth slope shows as the excess of that difference
    over the mean of its two neighbours, about J, far above the same excess elsewhere in a window of
    12 samples on either side (which measures the curvature), and above 1e-7 of |V|: a value that is
    a difference of large terms (-Z/r + Z/r inside a nucleus written by hand) steps by the ulp of its
    terms, 2e-8 of itself at r = 1e-9 for a nucleus of 0.1 bohr. On 33 points across the two samples
    the value must change by half of J exactly once (a steep smooth change spreads over several).
    The bisection then follows the half whose change
    departs more from the neighbours' slope, down to neighbouring floating point numbers, across
    which the value must still change by half of J.
    """
    r = wide_grid()
    v = _values(fn, r) if v is None else v         # fn on the wide grid, when the caller has it
    steps = steps or _step_candidates(v)
    cand, excess, trend = steps.cand, steps.excess, steps.trend
    if len(cand) > MAX_SWITCHES:
        log.info("potential: %d jumps or more; none reported (the solver proceeds without them)", len(cand))
        return ()
    out = []
    for i in cand:
        a, b = float(r[i]), float(r[i + 1])
        va, vb = float(v[i]), float(v[i + 1])
        jump = float(excess[i])
        slope = float(trend[i]) / (b - a)
        fine = _values(fn, np.linspace(a, b, 33))
        steps = np.abs(np.diff(fine) - slope * (b - a) / 32)
        if np.count_nonzero(steps >= 0.5 * jump) != 1:
            continue                              # a smooth change
        for _ in range(200):
            m = 0.5 * (a + b)
            if not a < m < b:
                break
            vm = float(_values(fn, [m])[0])
            if not math.isfinite(vm):
                break
            left, right = abs(vm - va - slope * (m - a)), abs(vb - vm - slope * (b - m))
            if max(left, right) < 0.5 * jump:     # shrinking with the bracket: steep, not a jump
                break
            if left >= right:
                b, vb = m, vm
            else:
                a, va = m, vm
        if abs(vb - va) >= 0.5 * jump and not a < 0.5 * (a + b) < b:
            out.append(b)
    return tuple(out)


class _Steps(NamedTuple):
    """The wide grid's neighbour differences ``d``, the larger |value| of each pair ``size``, and
    :func:`_step_candidates`' ``cand``, ``excess`` and ``trend``: computed once per function and
    shared by :func:`jumps`, :func:`steep_edges` and :func:`_sharp_steps`."""

    d: np.ndarray
    size: np.ndarray
    cand: np.ndarray
    excess: np.ndarray
    trend: np.ndarray


def _step_candidates(v: np.ndarray) -> _Steps:
    """Indices i where the wide grid's samples i, i + 1 differ far more than their neighbours (with
    that excess and the neighbours' mean difference): the candidates of :func:`jumps` and
    :func:`steep_edges`. Values that overflow (exp(r**2) far out) count as no difference."""
    with np.errstate(all="ignore"):
        d = np.diff(v)
        d = np.where(np.isfinite(d), d, 0.0)
        trend = np.zeros_like(d)
        trend[1:-1] = 0.5 * (d[:-2] + d[2:])
        excess = np.abs(d - trend)
        excess = np.where(np.isfinite(excess), excess, 0.0)
        # the largest excess 3 to 14 places away on either side (one shifted maximum per offset: the
        # same values as a sliding window's, five times faster)
        w = 12
        n = len(excess)
        pad = np.pad(excess, w + 2)
        background = np.zeros_like(excess)
        for j in range(3, w + 3):
            np.maximum(background, pad[w + 2 - j:w + 2 - j + n], out=background)
            np.maximum(background, pad[w + 2 + j:w + 2 + j + n], out=background)
        size = np.maximum(np.abs(v[:-1]), np.abs(v[1:]))
        size = np.where(np.isfinite(size), size, 0.0)
        peak = np.ones_like(excess, dtype=bool)
        peak[1:] &= excess[1:] >= excess[:-1]
        peak[:-1] &= excess[:-1] >= excess[1:]
        cand = np.nonzero(peak & (excess > _JUMP_RATIO * background) & (excess > 1e-7 * size) & (excess > 0))[0]
    return _Steps(d, size, cand, excess, trend)


def steep_edges(fn: Callable, v: np.ndarray | None = None, skip=(),
                steps: _Steps | None = None) -> tuple[float, ...]:
    """Radii that grade the elements at each smooth edge of fn narrower than the wide grid, ascending.

    Notes
    -----
    A candidate of :func:`jumps` (two neighbouring samples differing far more than those beside
    them) that is no jump, and not within the bracket of one in ``skip``, is a smooth change
    narrower than the grid spacing (0.23 %): a Woods-Saxon edge of a/R = 1e-4 written as an
    expression. Its centre c is where fn crosses halfway between the samples on either side of the
    two (where it has reached its plateaus), and its width
    w = (r_75 - r_25) / (2 ln 3), from where it crosses a quarter and three quarters (exactly the
    diffuseness for a Woods-Saxon or Fermi shape). Reported: c, and c -+ 2w, 8w, 32w, ... up to
    0.05 c, the graded boundaries the built-in Woods-Saxon term declares for its sharp edges
    (:class:`boundkit.potentials.library.WoodsSaxon`), so that each element spans a stretch where
    the shape is analytic on a scale of its own length. Without them the layout's sampling never saw
    the edge: a solve ended 'ok' with estimates 35 times below its error. Steps wider than the grid's
    spacing but narrower than 0.01 c are found by :func:`_sharp_steps` and graded the same way.
    """
    r = wide_grid()
    v = _values(fn, r) if v is None else v
    steps = steps or _step_candidates(v)
    cand = steps.cand
    if len(cand) > MAX_SWITCHES:
        return ()
    out: list[float] = []
    for i in cand:
        if i == 0 or i >= len(r) - 3:
            continue                                   # the grid's ends: no neighbour on one side
        if any(float(r[i]) <= x <= float(r[i + 1]) for x in skip):
            continue
        # the samples either side of the candidate interval: an edge narrower than the grid has
        # reached its plateaus there even when one end of the interval lies on its slope
        a, b = float(r[i - 1]), float(r[i + 2])
        va, vb = float(v[i - 1]), float(v[i + 2])
        if not (math.isfinite(va) and math.isfinite(vb)) or va == vb:
            continue

        c, w = _centre_and_width(fn, a, b, va, vb)
        # narrower than the grid: a change spread evenly over the interval has w = 0.23 (b - a); a
        # jump has no width at all (the three crossings meet at neighbouring floating point numbers)
        if not (a < c < b and 1e-12 * c < w < 0.05 * (b - a)):
            continue
        out += graded_edge(c, w)
    for c, w in _sharp_steps(fn, r, v, steps, skip=[*skip, *out]):      # (out: the narrow edges' radii)
        out += graded_edge(c, w)
    return tuple(sorted(out))


def _centre_and_width(fn: Callable, a: float, b: float, va: float, vb: float) -> tuple[float, float]:
    """(c, w) of a step of fn from va at a to vb at b: c where it crosses halfway, and
    w = (r_75 - r_25) / (2 ln 3) from where it crosses a quarter and three quarters of the way (the
    diffuseness of a Woods-Saxon or Fermi shape), each bisected to neighbouring floating point numbers."""

    def crossing(f):
        target = va + f * (vb - va)
        above = va > target
        return _narrowed(a, b, lambda x: bool(float(_values(fn, [x])[0]) > target) == above)

    c, lo, hi = crossing(0.5), crossing(0.25), crossing(0.75)
    return c, abs(hi - lo) / (2.0 * math.log(3.0))


_STEP_REACH = 40        # most samples of the wide grid a step of width 0.01 c spreads over on each side
_STEP_QUIET = 12        # samples beyond it that must be quiet (a plateau)


def _sharp_steps(fn: Callable, r: np.ndarray, v: np.ndarray, steps: _Steps, skip) -> list[tuple[float, float]]:
    """(centre c, width w) of each smooth step of fn between two plateaus, w < 0.01 c, that spreads
    over a few samples of the wide grid (the steps narrower than one spacing are :func:`steep_edges`'
    first search). The built-in Woods-Saxon term grades its elements around such an edge
    (a < 0.01 R); the layout's own sampling is coarser than it, and a hand-written edge of
    a/R = 4e-4 to 2e-3 ended 'ok' with errors 7 times its estimates, or 'tolerance-not-met'.

    Notes
    -----
    A candidate is a local maximum of the difference between neighbouring samples. The step runs
    outwards from it while the differences keep their sign and stay above 1 % of it, at most
    _STEP_REACH samples each way, and must be followed by _STEP_QUIET samples whose differences stay
    below 2 % of it on either side: a plateau, not a slope, a well's wall or a bump's far flank. The
    values at the ends of those quiet stretches must differ by at least 90 % of the step (a bump
    narrower than the spacing has one flank sampled and returns to where it started). Its centre and
    width come from the crossings of a quarter, a half and three quarters of the way between those
    ends, as for the narrow edges.
    """
    d = steps.d
    ad = np.abs(d)
    peak = ad > 1e-7 * steps.size
    peak[1:] &= ad[1:] >= ad[:-1]
    peak[:-1] &= ad[:-1] > ad[1:]
    peak[:_STEP_REACH + _STEP_QUIET] = peak[-(_STEP_REACH + _STEP_QUIET):] = False
    cand = np.nonzero(peak)[0]
    if len(cand) > 4 * MAX_SWITCHES:
        return []
    out = []
    for i in cand:
        top, sign = ad[i], d[i] > 0
        lo = hi = int(i)
        while i - lo < _STEP_REACH and (d[lo - 1] > 0) == sign and ad[lo - 1] > 0.01 * top:
            lo -= 1
        while hi - i < _STEP_REACH and (d[hi + 1] > 0) == sign and ad[hi + 1] > 0.01 * top:
            hi += 1
        if i - lo >= _STEP_REACH or hi - i >= _STEP_REACH:
            continue                               # wider than 0.01 c, or no plateau within reach
        if max(ad[lo - _STEP_QUIET:lo].max(), ad[hi + 1:hi + 1 + _STEP_QUIET].max()) >= 0.02 * top:
            continue
        # the ends: the last quiet samples, where a step of width up to 0.01 c is within 1e-5 of its
        # plateaus; a bump (or a wall) is no step, even when its flank looks like one
        a, b = float(r[lo - _STEP_QUIET]), float(r[hi + 1 + _STEP_QUIET])
        va, vb = float(v[lo - _STEP_QUIET]), float(v[hi + 1 + _STEP_QUIET])
        if not abs(vb - va) >= 0.9 * abs(float(v[hi + 1]) - float(v[lo])) or any(a <= x <= b for x in skip):
            continue
        c, w = _centre_and_width(fn, a, b, va, vb)
        if a < c < b and 1e-12 * c < w < 0.01 * c:
            out.append((c, w))
    return out


def graded_edge(c: float, w: float) -> tuple[float, ...]:
    """c and :func:`graded_around` (c, w), ascending: the breakpoints of a sharp edge of width w at
    c > 0 (every radius is positive: the grading stops at 0.05 c)."""
    return tuple(sorted((c, *graded_around(c, w))))


def graded_around(c: float, w: float) -> list[float]:
    """c -+ 2w, 8w, 32w, ... up to 0.05 c: element ends graded geometrically from an edge of width w
    at c, each element spanning a stretch where the shape is analytic on a scale of its own length
    (the built-in Woods-Saxon term's sharp surface, and :func:`steep_edges`)."""
    out, k = [], 2.0
    while k * w < 0.05 * c:
        out += [c - k * w, c + k * w]
        k *= 4.0
    return out


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
    (m - 1)-th derivative there, so their difference is J (r - c)^m / m! near the break c (plus
    higher terms). The polynomials of degree m + 1 through m + 2 samples spaced h to the left of a
    and to the right of b stand for the two; c is the root, inside the bracket, of the (m - 1)-th
    derivative of their difference. The bracket then closes around c and the step repeats, down to about 1e-9 relative for a
    kink and 1e-6 for a curvature jump (rounding limits the finite differences; a break misplaced by
    d perturbs V over a length d by J d^m, far below the digits kept).
    """
    stop = 1e-9 if m == 1 else 1e-6
    first = None
    steps = np.arange(m + 2)
    for _ in range(60):
        h = b - a
        mid = 0.5 * (a + b)
        left, right = a - h * steps, b + h * steps
        if left[-1] <= 0:
            return None
        vals = _values(fn, np.concatenate((left, right)))
        if not np.all(np.isfinite(vals)):
            return None
        # interpolating polynomials of degree m + 1 (they follow the curvature each side shares, a
        # Coulomb core's) in x = (r - mid) / h; their difference, and its m-th coefficient
        cl = np.polynomial.polynomial.polyfit((left - mid) / h, vals[:m + 2], m + 1)
        cr = np.polynomial.polynomial.polyfit((right - mid) / h, vals[m + 2:], m + 1)
        diff = np.polynomial.Polynomial(cr - cl)
        jump = abs(diff.coef[m]) / h**m         # about J / m!, in r
        if first is None:
            first = jump
        if jump == 0.0 or not 0.25 * first < jump < 4.0 * first:
            # fading: a smooth change, not a break; growing (as h^-m): rounding noise, not a break
            return None
        line = diff.deriv(m - 1) if m > 1 else diff           # nearly straight: J x + a small bend
        p0, p1 = line.coef[0], line.coef[1] if len(line.coef) > 1 else 0.0
        if p1 == 0.0:
            return None
        x = -p0 / p1
        for _ in range(3):                       # Newton's method for the bend
            slope = line.deriv()(x)
            if slope == 0.0:
                return None
            x -= line(x) / slope
        if not -0.5 <= x <= 0.5:                 # outside the bracket
            return None
        c = mid + h * x
        if h <= stop * c:
            return float(c)
        a, b = max(a, c - h / 4), min(b, c + h / 4)
    return None


def breaks(fn: Callable) -> list[float] | None:
    """Radii where fn jumps, has a kink or a jump of its curvature (see the module docstring),
    ascending; None when there are more than :data:`MAX_SWITCHES`."""
    r = wide_grid()
    v = _values(fn, r)
    steps = _step_candidates(v)
    found = list(jumps(fn, v, steps))
    found += steep_edges(fn, v, skip=found, steps=steps)
    v = np.where(np.isfinite(v), v, 0.0)
    for m in (1, 2):
        # the excess of each divided difference over the mean of those m + 2 places away (outside the
        # windows one break disturbs): a kink hidden in the curvature of a Coulomb core still stands
        # out against the same excess elsewhere (as for jumps)
        dm = _divided(r, v, m + 1)
        n = len(dm)
        w = m + 2                               # a break disturbs the m + 1 windows holding its interval
        trend = np.zeros(n)
        trend[w:-w] = 0.5 * (dm[:-2 * w] + dm[2 * w:])
        d = np.abs(dm - trend)
        d[:w] = d[-w:] = 0.0
        # beside: the largest excess 2w + 2 to 4w + 1 places away (nearer ones hold the break's own
        # trace, and its echo in the trend of the entries w away)
        pad = np.pad(d, 4 * w + 1)
        beside = np.zeros(n)
        for o in range(2 * w + 2, 4 * w + 2):
            beside = np.maximum(beside, np.maximum(pad[4 * w + 1 - o:4 * w + 1 - o + n], pad[4 * w + 1 + o:4 * w + 1 + o + n]))
        spacing = r[1:n + 1] - r[:n]
        scale = np.maximum.reduce([np.abs(v[k:k + n]) for k in range(m + 2)])
        noise = 1e-7 * scale / spacing ** (m + 1)     # a value that is a difference of large terms
        cand = np.nonzero((d > _JUMP_RATIO * beside) & (d > noise))[0]
        for i0, i1 in _clusters(cand, w):
            k = i0 + int(np.argmax(d[i0:i1 + 1]))     # the strongest window of the cluster holds the break
            a, b = float(r[k]), float(r[min(k + m + 1, len(r) - 1)])
            if any(a - 2 * (b - a) <= x <= b + 2 * (b - a) for x in found):
                continue                        # the trace of a break already found
            c = _break_in(fn, a, b, m)
            if c is not None:
                found.append(c)
        if len(found) > MAX_SWITCHES:
            return None
    return sorted(found)
