"""Radial functions between the nodes: interpolation in t = ln r.

The solver represents every radial function as P(r) = w(r) f(t), t = ln r,
w(r) = (r / (r + r_core))^gamma, with f smooth in t (see
:class:`~boundkit.results.RadialState`). Between the nodes this module
evaluates f by polynomial interpolation in t and multiplies by w again.

Method
------
Spectral family: on the element that holds t, f is the polynomial through
all nodes t_j of that element, evaluated in the barycentric form

    f(t) = sum_j [b_j / (t - t_j)] f_j / sum_j [b_j / (t - t_j)],
    b_j = 1 / prod_(k != j) (x_j - x_k),

with x the nodes mapped affinely onto [-1, 1] (this keeps the b_j in
range). Nothing assumes a particular node set: any distinct nodes work,
with spectral accuracy when the nodes cluster like Chebyshev or Legendre
points. Finite differences: the polynomial through the ``stencil`` nodes
nearest t (degree stencil - 1, default 10 nodes, matching the default
8th-order family and above).

Outside the mesh: for r < r_min, P / r^gamma (a power series in r at a
Coulomb-like origin) is extrapolated linearly in r from the first node and one
near 4 r_min (relative error O(r_min^2); nodes further apart than the first
two carry less of their rounding to the origin). A Dirac Q follows its own power
there (:func:`origin_shift`): r^gamma at a point charge, r^(gamma + 1) for
kappa < 0 and r^(gamma - 1) for kappa > 0 where the origin has none (a finite
nucleus); the first, and P with it, is the regular series fitted on the first element beside
the irregular solution's admixture (:func:`origin_series`, which also takes that admixture off the
nodal values: :func:`regular_values`), the second is extrapolated as (a + b r) r^(gamma - 1). The
Klein-Gordon density weight, ~ 1/r at a point charge, is handled the same way with exponent -1:
weight r / (r + r_core) is interpolated, and extrapolated as a + b / r below r_min. For r > r_max the
functions are returned as 0 (the solver's outer radius lies where the level has
decayed by about e^-42).
"""
from __future__ import annotations

import math
from functools import lru_cache

import numpy as np

__all__ = ["barycentric_weights", "interpolate_f", "cardinal_rows", "evaluate", "components_at", "origin_coefficient",
           "origin_noise", "origin_shift", "origin_series", "regular_values", "derivative_t", "radial_derivative_state"]

FD_STENCIL = 10
"""Nodes used for local interpolation of finite-difference states."""


def barycentric_weights(x: np.ndarray) -> np.ndarray:
    """Barycentric weights of distinct nodes ``x`` (scaled to max |b| = 1).

    Notes
    -----
    b_j = 1 / prod_(k != j) (y_j - y_k) with y the nodes mapped onto [-1, 1].
    """
    x = np.asarray(x, dtype=float)
    lo, hi = x.min(), x.max()
    y = (2 * x - (lo + hi)) / (hi - lo) if hi > lo else x
    diff = y[:, None] - y[None, :]
    np.fill_diagonal(diff, 1.0)
    # product in log form: no overflow for a few hundred nodes
    logabs = np.sum(np.log(np.abs(diff)), axis=1)
    sign = np.prod(np.sign(diff), axis=1)
    b = sign * np.exp(-(logabs - logabs.min()))
    return b / np.max(np.abs(b))


@lru_cache(maxsize=8192)
def _weights_of(nodes: bytes) -> np.ndarray:
    """:func:`barycentric_weights` of the float64 nodes packed in ``nodes`` (read-only, cached: a
    state's elements are interpolated on again and again, by every matrix element and line that
    involves it, and their weights were most of the time of a transitions table)."""
    b = barycentric_weights(np.frombuffer(nodes, dtype=float))
    b.flags.writeable = False
    return b


def _weights(nodes: np.ndarray) -> np.ndarray:
    return _weights_of(np.ascontiguousarray(nodes, dtype=float).tobytes())


def _bary_eval(tn: np.ndarray, fn: np.ndarray, b: np.ndarray, t: np.ndarray) -> np.ndarray:
    d = t[:, None] - tn[None, :]
    exact = d == 0
    d[exact] = 1.0
    k = b[None, :] / d
    total = k.sum(axis=1)
    out = (k @ fn) / (total if fn.ndim == 1 else total[:, None])
    hit = exact.any(axis=1)
    if hit.any():
        out[hit] = fn[np.argmax(exact[hit], axis=1)]
    return out


def interpolate_f(tn: np.ndarray, fn: np.ndarray, elements, family: str, t: np.ndarray,
                  stencil: int = FD_STENCIL) -> np.ndarray:
    """Interpolate nodal values ``fn`` (at ascending nodes ``tn``) to ``t``.

    ``t`` must lie in [tn[0], tn[-1]]. ``elements`` are (first, last) node
    index pairs; ``family`` selects global-per-element (spectral) or local
    (finite-difference) interpolation. ``fn`` may hold several functions on
    the same nodes, one per column (the result then has one column each).
    """
    t = np.asarray(t, dtype=float)
    out = np.empty(t.shape + fn.shape[1:])
    if not elements:
        elements = ((0, len(tn) - 1),)
    if family != "finite-difference":
        return _spectral_eval(tn, fn, tuple(elements), t)
    for a, b in elements:
        inside = (t >= tn[a]) & (t <= tn[b])
        idx = np.nonzero(inside)[0]
        if not idx.size:
            continue
        m = min(stencil, b - a + 1)
        pos = np.searchsorted(tn[a:b + 1], t[idx]) + a
        first = np.clip(pos - m // 2, a, b + 1 - m)
        for s in np.unique(first):
            sel = idx[first == s]
            nodes = tn[s:s + m]
            out[sel] = _bary_eval(nodes, fn[s:s + m], _weights(nodes), t[sel])
    return out


@lru_cache(maxsize=256)
def _element_table_of(nodes: bytes, elements: tuple) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """``(index, weights, right ends)`` of the elements of the nodes packed in ``nodes``: row e of
    ``index`` holds element e's node indices, padded with its last one, and row e of ``weights`` their
    barycentric weights, padded with 0 (a padded column adds nothing to either sum); ``right ends``
    the t of each element's last node (cached and read-only: a state is interpolated by every
    matrix element and line that involves it)."""
    tn = np.frombuffer(nodes, dtype=float)
    width = max(b - a + 1 for a, b in elements)
    index = np.empty((len(elements), width), dtype=np.intp)
    weights = np.zeros((len(elements), width))
    for e, (a, b) in enumerate(elements):
        index[e, : b - a + 1] = np.arange(a, b + 1)
        index[e, b - a + 1:] = b
        weights[e, : b - a + 1] = _weights(tn[a:b + 1])
    right = tn[[b for _, b in elements]]
    for arr in (index, weights, right):
        arr.flags.writeable = False
    return index, weights, right


def _spectral_eval(tn: np.ndarray, fn: np.ndarray, elements: tuple, t: np.ndarray, rows_k=None) -> np.ndarray:
    """The spectral family's interpolation (the polynomial through all nodes of the element holding
    each t, barycentric form), every t at once: t on a node shared by two elements takes the node's
    value, as either element's polynomial does. ``rows_k``: :func:`cardinal_rows` at t, when the caller has
    them."""
    rows, k = cardinal_rows(tn, elements, t) if rows_k is None else rows_k
    return np.einsum("ij,ij...->i...", k, fn[rows])


def cardinal_rows(tn: np.ndarray, elements: tuple, t: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """``(rows, values)``: the spectral family's interpolant at each t is sum_j values[i, j] f[rows[i, j]]
    (the cardinal functions of the element holding t, at t; a row of a t on a node picks that node)."""
    index, weights, right = _element_table_of(np.ascontiguousarray(tn, dtype=float).tobytes(), tuple(elements))
    e = np.minimum(np.searchsorted(right, t, side="left"), len(right) - 1)
    rows = index[e]
    d = t[:, None] - tn[rows]
    exact = d == 0
    d[exact] = 1.0
    k = weights[e] / d
    k /= k.sum(axis=1)[:, None]
    hit = exact.any(axis=1)
    if hit.any():
        k[hit] = exact[hit] & (np.cumsum(exact[hit], axis=1) == 1)      # the first node it sits on
    return rows, k


def _weight(r, r_core: float, gamma: float):
    return (r / (r + r_core)) ** gamma if r_core > 0 else r**gamma


_ORIGIN_SPAN = 4.0    # the nodes the origin extrapolation reads reach this many times the first node's radius


def _origin_nodes(rn: np.ndarray, points: int) -> np.ndarray:
    """Indices of the ``points`` nodes P / r^gamma is extrapolated to the origin from: the first node
    and nodes near r_min _ORIGIN_SPAN^(i / (points - 1)) (distinct, in order).

    Spectral nodes crowd at an element's end (the second node 1.02 r_min): a line through the first
    two carries their rounding (1e-13 of Q at Z = 116) times r_min / (r_1 - r_min) = 57 to the origin,
    1.5e-11 of a point-dipole hyperfine integral whose integrand lies 27 % below r_min. Reaching 4 r_min
    cuts that factor to 1/3; the curvature term this lets in is O(r_min * 4 r_min / L^2), L the length
    the potential changes on.
    """
    targets = rn[0] * _ORIGIN_SPAN ** (np.arange(points) / max(points - 1, 1))
    idx = np.minimum(np.searchsorted(rn, targets), len(rn) - 1)
    idx[0] = 0
    for i in range(1, points):               # distinct and increasing, as the fit needs
        idx[i] = max(idx[i], idx[i - 1] + 1)
    return idx


def _over_r_gamma(state, values: np.ndarray, idx) -> np.ndarray:
    """h = component / r^gamma at the nodes ``idx`` (an index array or slice), the smooth power series
    the origin extrapolations read."""
    rn = state.r[idx]
    rc, g = state.r_core, state.gamma
    fn = values[idx] / _weight(rn, rc, g)
    return fn * (rn + rc) ** -g if rc > 0 else fn


def _towards_origin(rn, fn, state, r, gamma: float, shift: int = 0):
    """f below the first node. At a Coulomb-like origin P / r^gamma = h(r), a power series
    in r, with h = f (r + r_core)^-gamma; h is extrapolated linearly in r from the first node and
    one near 4 r_min (:func:`_origin_nodes`; error O(r_min^2)) and returned as f = h (r + r_core)^gamma.

    ``shift`` (:func:`origin_shift`) is the power by which the component departs from r^gamma there.
    +1 (Q of kappa < 0 at an origin without a point charge, Q ~ r^(gamma + 1)): h = b r, its
    leading coefficient 0 (a line with a free intercept read that intercept off the errors of the
    first nodes, and Q / (P r) grew like 1/r below them: -23145 at 1e-9 bohr instead of -2248 for a
    Z = 83 sphere), b = h / r at the node near 4 r_min alone: the cancellation in P' + kappa P / r
    that makes Q spoils the first nodes most (Q / (P r) 50 % off at r_min, 0.6 % near 4 r_min; a
    least-squares b over the nodes between was 6 % off). The term left out is O(4 r_min / L).
    -1 (Q of kappa > 0 there, Q ~ r^(gamma - 1)): h r is the line."""
    rc, g = state.r_core, gamma
    i, j = _memo(state, "origin_nodes", lambda: tuple(_origin_nodes(rn, 2)))
    if shift == 1:
        hj = fn[j] * (rn[j] + rc) ** -g if rc > 0 else fn[j]
        h = float(hj / rn[j]) * r
    else:
        x = rn[[i, j]]
        h0, h1 = (fn[[i, j]] * (x + rc) ** -g) if rc > 0 else fn[[i, j]]
        if shift == -1:
            h0, h1 = h0 * x[0], h1 * x[1]
        h = h0 + (h1 - h0) / (x[1] - x[0]) * (r - x[0])
        if shift == -1:
            with np.errstate(divide="ignore", invalid="ignore"):
                h = np.where(r > 0, h / np.where(r > 0, r, 1.0), 0.0)  # Q(0) = 0: r^(gamma - 1), gamma >= 2
    return h * (r + rc) ** g if rc > 0 else h


def origin_shift(state, component: str = "Q") -> int:
    """The power by which ``component`` departs from r^gamma at the origin: 0, +1 or -1 (kept in
    ``state.memo``).

    P ~ r^gamma by the definition of gamma. At a point charge Q ~ r^gamma as well (gamma irrational).
    Where the origin has no point charge, or the vector and scalar charges cancel (gamma is then the
    integer |kappa| for kappa < 0 and kappa + 1 for kappa > 0), the regular solution has
    Q ~ r^(gamma + 1) for kappa < 0 and Q ~ r^(gamma - 1) for kappa > 0 at a finite potential (a spin-
    symmetric Coulomb origin keeps Q ~ r^gamma for kappa < 0). A state does not carry its kappa or
    potential, so for an integer gamma the power is read from Q: the slope of ln |Q / r^gamma| in ln r
    between the nodes near 4 r_min and 16 r_min (past the first nodes, whose Q the cancellation in
    P' + kappa P / r spoils most), rounded to the nearest of -1, 0, +1 (it is 1.00 for a Z = 83 sphere,
    -1.00 for its kappa = 1 level). A non-integer gamma returns 0 without reading anything.
    """
    if component != "Q" or state.Q is None:
        return 0
    return _memo(state, "origin_shift", lambda: _q_shift(state))


def _q_shift(state) -> int:
    g = float(state.gamma)
    if g != round(g):
        return 0
    rn = state.r
    idx = np.minimum(np.searchsorted(rn, rn[0] * np.array([_ORIGIN_SPAN, _ORIGIN_SPAN**2])), len(rn) - 1)
    if idx[1] <= idx[0]:
        return 0
    h = _over_r_gamma(state, state.Q, idx)
    if not (np.all(np.isfinite(h)) and h[0] * h[1] > 0):
        return 0
    slope = float(np.log(h[1] / h[0]) / np.log(rn[idx[1]] / rn[idx[0]]))
    shift = int(round(slope))
    return shift if shift in (-1, 1) else 0


_SERIES_TERMS = 3      # terms of the regular series fitted to each component near the origin (origin_series)
_SERIES_SPAN = 16.0    # its nodes reach at most this many times r_min (and the first element's end)
_SERIES_FIT = 1e-6     # largest relative residual of P's fit for the series to be used


def origin_series(state, terms: int = _SERIES_TERMS) -> dict | None:
    """The regular series of a Dirac level with kappa < 0 at an origin without a point charge
    (:func:`origin_shift` +1), fitted to its nodal values on the first element, and the
    irregular solution's admixture found beside it; None for any other state (kept in ``state.memo``).

    Near such an origin the regular solution is P = r^gamma (a_0 + a_1 r + ...), Q = r^(gamma + 1)
    (b_0 + b_1 r + ...), gamma = -kappa, and the irregular one P ~ r^(1 - gamma), Q ~ r^(-gamma) (P' +
    kappa P / r = (M / c) Q with Q = r^kappa). The elements' inner end (natural boundary condition at
    r_min) lets a little of the irregular solution in: for the Z = 83 sphere's 1s (r_min = 1.1e-4 R)
    P is 1.7e-9 and Q 50 % off at r_min, errors falling as r^(1 - 2 gamma) and r^(-2 gamma - 1) (their
    ratio is the irregular solution's -M / c), Q still 1.9e-10 off at 0.15 R, and the point-dipole
    hyperfine integral, whose integrand ~ r^(2 gamma - 1) P Q / r^(2 gamma + 1) weighs Q's error by 1 / r^2,
    4.8e-10 off with an estimate 3.4 times smaller. Fitted as

        P / r^gamma       = A s^(1 - 2 gamma) + sum_(i < terms) a_i s^i,
        Q / r^(gamma + 1) = K s^(-2 gamma - 1) + sum_(i < terms) b_i s^i,   s = r / r_e,

    by least squares over the first element's nodes (at most ``_SERIES_SPAN`` r_min; r_e the last of
    them), the irregular parts A s^(1 - gamma), K s^(-gamma) (in units of the fit's scale) are taken off
    the nodal values (:func:`regular_values`) and the series gives both components below r_min.
    Returns {'scale': r_e, 'P': (coefficients, residual, lead), 'Q': (...)}: coefficients [A, a_0, a_1, ...]
    in the scaled form above, residual the largest relative deviation of the nodal values from the
    fit (their rounding: the cancellation in P' + kappa P / r that makes Q leaves 1e-6 of Q there, P's is
    1e-15), lead that deviation carried to a_0 (times the sum of |a_0|'s row of the pseudo-inverse).
    None also when P's residual exceeds ``_SERIES_FIT`` (the nodes are not in the series' region).
    Spectral states only (a finite-difference state's first element spans the whole grid).
    """
    if state.Q is None or state.family != "spectral" or origin_shift(state) != 1:
        return None
    return _memo(state, ("origin_series", terms), lambda: _fit_series(state, terms))


def _fit_series(state, terms: int):
    rn = state.r
    last = min(state.elements[0][1], int(np.searchsorted(rn, _SERIES_SPAN * rn[0], side="right")) - 1)
    if last + 1 < terms + 3:
        return None
    g = float(state.gamma)
    s = rn[: last + 1] / rn[last]
    out = {"scale": float(rn[last])}
    for name, values, lead, irregular in (("P", state.P, g, 1.0 - g), ("Q", state.Q, g + 1.0, -g)):
        y = values[: last + 1] / s**lead
        basis, pinv = _series_basis(s.tobytes(), irregular - lead, terms)
        coef = pinv @ y
        if not (np.all(np.isfinite(coef)) and coef[1] != 0.0):
            return None
        noise = float(np.max(np.abs(y - basis @ coef))) / abs(float(coef[1]))
        # the leading coefficient moves by at most sum |pinv| times the nodal values' deviation
        out[name] = (coef, noise, noise * float(np.sum(np.abs(pinv[1]))))
    if not out["P"][1] <= _SERIES_FIT:
        return None
    return out


@lru_cache(maxsize=64)
def _series_basis(s_bytes: bytes, irregular: float, terms: int) -> tuple[np.ndarray, np.ndarray]:
    """(basis, its pseudo-inverse) of :func:`origin_series`' fit on the scaled radii s (given as bytes: the states
    of one grid and exponent share it; read-only)."""
    s = np.frombuffer(s_bytes)
    basis = np.column_stack([s**irregular] + [s**i for i in range(terms)])
    pinv = np.linalg.pinv(basis)
    for a in (basis, pinv):
        a.flags.writeable = False
    return basis, pinv


def _irregular(series, name: str, r: np.ndarray, gamma: float) -> np.ndarray:
    """The irregular solution's part of component ``name`` at radii ``r`` (:func:`origin_series`)."""
    s = r / series["scale"]
    return series[name][0][0] * s ** ((1.0 - gamma) if name == "P" else -gamma)


def _regular_series(state, series, name: str, r: np.ndarray, gamma: float) -> np.ndarray:
    """The regular series of component ``name`` at radii ``r`` (:func:`origin_series`), in the normalisation of
    :func:`regular_values`."""
    s = r / series["scale"]
    coef = series[name][0]
    return _regular_norm(state) * s ** (gamma + (name == "Q")) * np.polyval(coef[:0:-1], s)


def regular_values(state) -> tuple[np.ndarray, np.ndarray | None]:
    """(P, Q) at the nodes with the irregular solution's admixture near the origin taken off
    (:func:`origin_series`; the nodal values themselves for other states). It is taken off the first
    elements up to the first one where it stays below the rounding of Q (2^-52 of |Q|'s largest value
    on that element): Q's part falls like r^(-2 gamma - 1) relative to Q (1e-16 of it near 12 R at Z = 83),
    P's like r^(1 - 2 gamma) (it is the same solution: its P is left beside Q's end, 1e-14 of P there).
    It stops before an element where either part grows against its component (the component decays
    faster: out of the origin's region; Z = 20 near 1 bohr, where P's part was 5e-8 of P). The values are then
    normalised again (the solver normalised them with the admixture: the norm of the rest was 1 - 4e-14 at a
    Z = 92 sphere, twice the estimate of <1>); the series below r_min carries the same factor
    (:func:`_regular_norm`)."""
    return _memo(state, "regular values", lambda: _regular_values(state))[:2]


def _regular_norm(state) -> float:
    """The factor :func:`regular_values` normalised the nodal values by (1 without an admixture taken off)."""
    return _memo(state, "regular values", lambda: _regular_values(state))[2]


def _regular_values(state):
    """(P, Q, the factor they were normalised by) of :func:`regular_values`."""
    series = origin_series(state)
    if series is None:
        return state.P, state.Q, 1.0
    P, Q = state.P.copy(), state.Q.copy()
    g = float(state.gamma)
    before = np.array([np.inf, np.inf])
    for a, b in state.elements:
        r = state.r[a:b + 1]
        dp, dq = _irregular(series, "P", r, g), _irregular(series, "Q", r, g)
        with np.errstate(divide="ignore", invalid="ignore"):
            part = np.array([np.max(np.abs(dp)) / np.max(np.abs(state.P[a:b + 1])),
                             np.max(np.abs(dq)) / np.max(np.abs(state.Q[a:b + 1]))])
        if not np.all(part <= before):
            break      # a component falls faster than the irregular part: past the origin's region (its decay)
        P[a:b + 1] = state.P[a:b + 1] - dp
        Q[a:b + 1] = state.Q[a:b + 1] - dq
        if part[1] <= np.finfo(float).eps:
            break
        before = part
    factor = 1.0 / math.sqrt(float(state.weights @ (P * P + Q * Q)))
    return P * factor, Q * factor, factor


def origin_coefficient(state, component: str = "P", points: int = 2, own_power: bool = False) -> float:
    """lim_(r -> 0) component / r^gamma (bohr^(-1/2 - gamma)): h = P / r^gamma at ``points`` nodes
    from the first one to about 4 r_min (:func:`_origin_nodes`) extrapolated to r = 0 by the
    polynomial through them (2: linear, as in :func:`_towards_origin`; 3: quadratic).

    A Q that vanishes one power faster than r^gamma (:func:`origin_shift` +1: kappa < 0 without a
    point charge at the origin) has the limit 0, returned as such. One that vanishes one power slower
    (-1: kappa > 0 there) has no finite limit: ValueError. With ``own_power`` the limit is taken over
    the component's own power r^(gamma + shift) instead (the leading coefficient of its series; for
    shift -1 h r is extrapolated, as :func:`_towards_origin` does). Where :func:`origin_series` fits the
    regular series (kappa < 0 without a point charge) its leading coefficient is returned instead, from a
    fit with ``points`` - 2 more terms than the default."""
    values = state.P if component == "P" else state.Q
    if values is None:
        return 0.0
    shift = origin_shift(state, component)
    if shift == 1 and not own_power:
        return 0.0
    series = origin_series(state, _SERIES_TERMS + points - 2)
    if series is not None:      # the fitted series' leading coefficient (points - 2 more terms than the default)
        power = state.gamma + (component == "Q")
        return _regular_norm(state) * float(series[component][0][1]) / series["scale"] ** power
    if shift == -1 and not own_power:
        raise ValueError(f"component: {component} of this state goes like r^(gamma - 1) at the origin (kappa > 0 "
                         f"without a point charge there, gamma = {state.gamma:g}), so {component} / r^gamma has no "
                         "finite limit; the density's leading power there is r^(2 gamma - 2)")
    idx = _origin_nodes(state.r, points)
    rn = state.r[idx]
    if shift == 1:      # read at the node near 4 r_min alone, as _towards_origin does
        return float(_over_r_gamma(state, values, idx[-1:])[0] / rn[-1])
    h = _over_r_gamma(state, values, idx) * rn ** -shift
    # Lagrange polynomial through (rn, h) evaluated at 0
    total = 0.0
    for i in range(points):
        others = np.delete(rn, i)
        total += h[i] * float(np.prod(others / (others - rn[i])))
    return float(total)


def origin_noise(state, component: str | None = None) -> float:
    """Relative rounding of P / r^gamma (and Q / r^gamma) near the origin: the largest deviation of
    its nodal values from r_min to about 4 r_min (:func:`_origin_nodes`) from their least-squares
    line, over its mean. There h is a line to O(r_min^2 / L^2), so the scatter is rounding (1e-13 of
    Q at the first nodes of a Z = 116 1s level), which every quantity read below r_min carries; 0 when
    fewer than three nodes lie there (kept in ``state.memo``).

    A Q of another power than r^gamma (:func:`origin_shift`) is read over its own power. Where Q vanishes
    one power faster (kappa < 0 at a finite nucleus) its first nodes carry the cancellation in
    P' + kappa P / r that makes Q, not rounding alone: 0.15 for the 1s of a Z = 20 or 83 sphere, 0.56 for
    a muon's (Q / (P r) 96 % off at r_min, 0.8 % near 4 r_min), while P's is 3e-9 (Z = 83). ``component``
    ('P' or 'Q') gives that component's alone; None the larger of the two."""
    if component not in (None, "P", "Q"):
        raise ValueError(f"component: {component!r} is not one of 'P', 'Q' (or None for both)")
    return _memo(state, ("origin_noise", component), lambda: _origin_noise(state, component))


def _origin_noise(state, component: str | None = None) -> float:
    series = origin_series(state)
    if series is not None:       # the fit's rounding carried to its coefficients: what the series below r_min carries
        return max(series[c][2] for c in ("P", "Q") if component in (None, c))
    j = int(_origin_nodes(state.r, 2)[1])
    if j < 2:
        return 0.0
    rn = state.r[: j + 1]
    worst = 0.0
    for name, values in (("P", state.P), ("Q", state.Q)):
        if values is None or component not in (None, name):
            continue
        # the component over its own power of r at the origin (origin_shift): the series it follows there
        h = _over_r_gamma(state, values, slice(0, j + 1)) / rn ** origin_shift(state, name)
        scale = abs(float(np.mean(h)))
        if scale == 0.0 or not np.all(np.isfinite(h)):
            continue
        line = np.polyval(np.polyfit(rn - rn[0], h, 1), rn - rn[0])
        worst = max(worst, float(np.max(np.abs(h - line))) / scale)
    return worst


def _nodal(state, component: str):
    """``(values, t_n, f_n, exponent)`` of one component of ``state``: its nodal values, t = ln r at the
    nodes and f = values / w(r), w the origin factor with that exponent (the Klein-Gordon weight's own,
    see :func:`evaluate`); None when the state has no such component. Kept in ``state.memo``."""
    values = state.density_weight if component == "weight" else regular_values(state)[component == "Q"]
    if values is None:
        return None

    def make():
        rn = state.r
        gamma = _weight_exponent(rn, values) if component == "weight" else state.gamma
        return values, np.log(rn), values / _weight(rn, state.r_core, gamma), gamma
    return _memo(state, ("nodal", component), make)


_MISSING = object()


def _memo(state, key, make):
    """``state.memo[key]``, made by ``make()`` on first use (a state's nodal values never change); a result of
    None is kept too (a series fit that failed was tried again on every read below r_min)."""
    got = state.memo.get(key, _MISSING)
    if got is _MISSING:
        got = state.memo[key] = make()
    return got


def evaluate(state, r, component: str = "P") -> np.ndarray:
    """Value of one component (``"P"``, ``"Q"`` or ``"weight"``, the density
    weight) of ``state`` at radii ``r`` in bohr; see the module docstring.
    At the state's own nodes (``r`` is ``state.r``) the nodal values (:func:`regular_values`)."""
    if r is not state.r:
        r = np.atleast_1d(np.asarray(r, dtype=float))
        if np.any(~np.isfinite(r)) or np.any(r < 0):
            raise ValueError("r: radii must be finite and >= 0 (bohr)")
    return components_at(state, r, (component,))[0]


def components_at(state, r: np.ndarray, components) -> list[np.ndarray]:
    """:func:`evaluate` of several ``components`` of ``state`` at the same radii ``r`` (a 1-D array of
    finite radii >= 0, not checked), one array each: the element search and the interpolation kernel
    are shared."""
    nodal = [_nodal(state, c) for c in components]
    absent = [np.ones_like(r) if c == "weight" else np.zeros_like(r) for c in components]
    if r is state.r:
        return [a if n is None else n[0].copy() for a, n in zip(absent, nodal)]
    live = [i for i, n in enumerate(nodal) if n is not None]
    if not live:
        return absent
    # the Klein-Gordon weight (E + mc^2 - V)/mc^2 grows like 1/r at a point charge: it is
    # interpolated as weight * r / (r + r_core), bounded at both ends (exponent -1 below); at a finite
    # nucleus it tends to a constant, and is taken as it is (exponent 0)
    rn, tn = state.r, nodal[live[0]][1]
    fn = nodal[live[0]][2] if len(live) == 1 else np.stack([nodal[i][2] for i in live], axis=1)
    out = np.zeros(r.shape + fn.shape[1:])
    mid = (r >= rn[0]) & (r <= rn[-1])
    i_w = components.index("weight") if "weight" in components else None
    # a weight that jumps (weight_sides: spectral states only) reads the cardinal rows again: found once
    sided = mid.any() and bool(state.weight_sides) and i_w is not None and nodal[i_w] is not None
    if mid.any():
        t_mid = np.log(r[mid])
        rows_k = cardinal_rows(tn, tuple(state.elements), t_mid) if sided else None
        out[mid] = (_spectral_eval(tn, fn, tuple(state.elements), t_mid, rows_k) if sided else
                    interpolate_f(tn, fn, state.elements, state.family, t_mid))
    if len(live) == 1:
        out = out[:, None]
    if sided:
        out[mid, live.index(i_w)] += _side_correction(state, *rows_k, nodal[i_w])
    low = r < rn[0]
    inside = low | mid
    beyond = r > rn[-1]
    series = origin_series(state) if low.any() else None
    for col, i in enumerate(live):
        values, _, f_i, gamma = nodal[i]
        own = series is not None and components[i] in ("P", "Q")
        if low.any() and not own:
            out[low, col] = _towards_origin(rn, f_i, state, r[low], gamma, origin_shift(state, components[i]))
        out[inside, col] *= _weight(r[inside], state.r_core, gamma)
        if own:
            out[low, col] = _regular_series(state, series, components[i], r[low], gamma)
        if components[i] == "weight" and beyond.any():
            out[beyond, col] = values[-1]
        absent[i] = out[:, col]
    return absent


def _side_correction(state, rows: np.ndarray, k: np.ndarray, nodal) -> np.ndarray:
    """What each element's own side of the density weight at its ends on a jump (``state.weight_sides``)
    adds to the interpolant of the weight's nodal values (f = weight / w there) at the radii whose cardinal
    rows and values are ``rows, k`` (:func:`cardinal_rows`): the node's cardinal function times (the side's
    value - the nodal one). A t on such a node is read on the inner element (its inside value)."""
    values, _, _, gamma = nodal
    first = rows[:, 0]
    out = np.zeros(len(rows))
    for j, w_in, w_out in state.weight_sides:
        at = np.sum(np.where(rows == j, k, 0.0), axis=1)
        side = np.where(first == j, w_out, w_in)
        out += at * (side - values[j]) / _weight(state.r[j], state.r_core, gamma)
    return out


def _weight_exponent(rn: np.ndarray, w: np.ndarray) -> float:
    """-1 when the Klein-Gordon weight w grows like 1/r towards the origin (a point charge: w r is the
    flatter of w and w r between the nodes the origin extrapolation reads), else 0 (a potential finite
    at the origin: w is the flatter).

    With -1 always, w r of a finite nucleus was extrapolated as a line whose intercept is the rounding
    of w r_min, which the factor 1/r below the first node turned into a weight of 1e15 at 1e-26 r_min:
    <r^-2> of a pionic level was refused as divergent at the origin (a tester)."""
    i, j = _origin_nodes(rn, 2)
    flat_w = abs(w[j] / w[i] - 1.0)
    flat_wr = abs(w[j] * rn[j] / (w[i] * rn[i]) - 1.0)
    return 0.0 if flat_w <= flat_wr else -1.0


def _diff_matrix(x: np.ndarray) -> np.ndarray:
    """Derivative matrix of the interpolating polynomial on nodes x (barycentric form):
    D_ij = (b_j / b_i) / (x_i - x_j), D_ii = -sum_(j != i) D_ij (cached, read-only)."""
    return _diff_matrix_of(np.ascontiguousarray(x, dtype=float).tobytes())


@lru_cache(maxsize=8192)
def _diff_matrix_of(nodes: bytes) -> np.ndarray:
    x = np.frombuffer(nodes, dtype=float)
    b = barycentric_weights(x)
    d = x[:, None] - x[None, :]
    np.fill_diagonal(d, 1.0)
    D = (b[None, :] / b[:, None]) / d
    np.fill_diagonal(D, 0.0)
    np.fill_diagonal(D, -D.sum(axis=1))
    D.flags.writeable = False
    return D


def derivative_t(tn: np.ndarray, fn: np.ndarray, elements, family: str, stencil: int = FD_STENCIL) -> np.ndarray:
    """df/dt at the nodes, from the same interpolant as :func:`interpolate_f`
    (a node shared by two elements gets the mean of the one-sided values)."""
    out = np.zeros_like(fn)
    count = np.zeros_like(fn)
    if not elements:
        elements = ((0, len(tn) - 1),)
    for a, b in elements:
        if family == "finite-difference":
            m = min(stencil, b - a + 1)
            for i in range(a, b + 1):
                s = int(np.clip(i - m // 2, a, b + 1 - m))
                D = _diff_matrix(tn[s:s + m])
                out[i] += D[i - s] @ fn[s:s + m]
                count[i] += 1
        else:
            D = _diff_matrix(tn[a:b + 1])
            out[a:b + 1] += D @ fn[a:b + 1]
            count[a:b + 1] += 1
    return out / count


def radial_derivative_state(state):
    """A copy of ``state`` whose P is r dP/dr (same origin exponent, Q and weight dropped),
    for velocity-form matrix elements: integral g P_b' dr = integral (g / r) (r P_b') dr.

    Made once per state (kept in ``state.memo``: a level's lines all read it).

    Notes
    -----
    P = w f, t = ln r: r dP/dr = w (df/dt + gamma r_core / (r + r_core) f).
    """
    return _memo(state, "r dP/dr", lambda: _radial_derivative(state))


def _radial_derivative(state):
    from dataclasses import replace

    rn = state.r
    w = _weight(rn, state.r_core, state.gamma)
    f = state.P / w
    dlogw = state.gamma * (state.r_core / (rn + state.r_core) if state.r_core > 0 else 1.0)
    rdP = w * (derivative_t(np.log(rn), f, state.elements, state.family) + dlogw * f)
    return replace(state, P=rdP, Q=None, density_weight=None, weight_sides=())
