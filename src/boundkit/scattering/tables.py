"""The interpolation error of a tabulated potential in continuum results, to first order.

A table (:class:`boundkit.potentials.tabulated.TabulatedTerm`) is interpolated between its points and
modelled below its first one; the phases and lengths computed are those of the interpolant. As a solve
does for a level's energy (``boundkit.solver.table_error``), a phase shift and a scattering length take
in the change that the table's own uncertainty d(r) would make, to first order: d is the difference of
the splines of two degrees between the points (:meth:`TabulatedTerm.interpolation_difference`) and that
of a linear continuation below the first point (:meth:`TabulatedTerm.origin_difference`).

Notes
-----
For the factorized radial operator of :mod:`boundkit.equations.base`,
T u = -(d/dr - kappa/r) p (d/dr + kappa/r) u + (q - E) u, two regular solutions u_1, u_2 of the
operators with (p_1, q_1) and (p_2, q_2) at the same E obey, after one integration by parts
(the Wronskian identity),

    [u_2 p_1 D u_1 - u_1 p_2 D u_2](R) = integral_0^R [(p_1 - p_2) D u_1 D u_2 + (q_1 - q_2) u_1 u_2] dr,

D = d/dr + kappa/r. Beyond the range, p -> p_inf (its value at V = S = 0). Phase shifts: with
u ~ sin(k r - eta ln 2kr - l pi/2 + theta + delta) (unit amplitude) the left side tends to
p_inf k sin(delta_2 - delta_1), so to first order in dp, dq

    d delta = -(1 / (p_inf k)) integral [dp (D u)^2 + dq u^2] dr.

Schrodinger (p = 1/2m, dq = dV): d delta = -(2 m / (hbar^2 k)) integral dV u^2 dr, the first-order
phase-shift formula (Calogero, Variable Phase Approach to Potential Scattering, 1967; Newton,
Scattering Theory of Waves and Particles, 1982, ch. 12 -- from memory). Klein-Gordon (p = 1/2m,
q = V + S + (S^2 - (E - V)^2)/(2 m c^2)) and Dirac (u = P, p = c^2/(E + 2 m c^2 - V + S), q = V + S,
so dp (D u)^2 = (dV - dS) Q^2 with Q = p D u / c) take dp and dq from the equation's own p and q at
V + d (vector table) or S + d (scalar table), minus those at V, S. Scattering length (s wave, E = 0):
beyond the range u = r - a, the left side is p_inf (a_1 - a_2), and

    d a = (1 / p_inf) integral [dp (D u)^2 + dq u^2] dr,   u -> r - a,

which is 2 m integral dV u^2 dr for Schrodinger (the k -> 0 limit of the phase formula with
delta = -k a, u_k = k u).

The estimate is twice the magnitude of the signed integral with d for a table within SPREAD_WARN (as a
solve's, ``boundkit.solver._table_error``), twice the integral of the absolute integrand for a coarser
one (a solve takes it once), plus twice the magnitude of the signed integral with the origin's
difference. Measured against the same potentials written as callables (tests/test_continuum_tables.py):
the formula above with d = (callable - table) gives the differences of the results to 4 digits (a
601-point Woods-Saxon table in fm, 0.01 to 20 fm, spread 8e-5, proton at 1 MeV: 3.8204e-7 rad with
origin 'finite'; 9.34e-7 rad with origin 'coulomb', 5.5e-7 of it from below the first point, which the
origin's term gives to 4 digits). On such coarse tables the spline of the other degree is itself off:
the signed integral with d was 0.86 of the interpolation's part (that Woods-Saxon phase) and 0.48 (the
scattering length of a 40-point table of -exp(-r/2)/r, 1e-3 to 60 bohr), the absolute one 0.98 and 0.90
of it, hence twice that.
"""
from __future__ import annotations

import math

import numpy as np

from ..equations import Sample
from ..potentials.base import table_terms

__all__ = ["TableGrid", "table_grid", "table_change"]

_GAUSS = 8            # Gauss-Legendre points per sub-interval (in ln r)
_ORIGIN_STEP = 0.5    # sub-intervals in ln r below the first point (the integrand goes as r^(2 gamma + 1))
_MAX_SUB = 256        # sub-intervals per table interval, at most




class TableGrid:
    """Quadrature radii (bohr) and weights (dr) on [r_lo, r_hi] for the tables' first-order change:
    Gauss-Legendre in ln r on every interval of every table (the spline difference vanishes at the
    points and bends between them), split so that a sub-interval spans at most 1 / K, K the largest
    local wave number there, and on steps of 0.5 in ln r below the first point; with the potential's
    sample there."""

    def __init__(self, ch, tabs, r_lo: float, r_hi: float, E_max: float) -> None:
        pts = np.unique(np.concatenate([np.asarray(t.r, dtype=float) for t, _ in tabs]))
        first = float(pts[0])
        below = np.exp(np.arange(math.log(r_lo), math.log(min(first, r_hi)), _ORIGIN_STEP)) if r_lo < first else []
        x = np.log(np.unique(np.clip(np.concatenate((below, pts, [r_lo, r_hi])), r_lo, r_hi)))
        smp = ch.sample(np.exp(x))
        eq = ch.eq
        K = math.sqrt(float(np.max(np.abs((eq.q(E_max, smp) - E_max) / eq.p(E_max, smp)))))
        h = np.diff(x)
        n = np.clip(np.ceil(K * (np.exp(x[1:]) - np.exp(x[:-1]))), 1, _MAX_SUB).astype(int)
        idx = np.repeat(np.arange(h.size), n)
        j = np.arange(idx.size) - np.repeat(np.cumsum(n) - n, n)
        step = h[idx] / n[idx]
        a = x[idx] + step * j
        g, wg = np.polynomial.legendre.leggauss(_GAUSS)
        t = (a[:, None] + 0.5 * step[:, None] * (1.0 + g[None, :])).ravel()
        self.r = np.exp(t)
        self.dr = (0.5 * step[:, None] * wg[None, :]).ravel() * self.r
        self.sample = ch.sample(self.r)
        # (term, scalar?, its spline difference, its origin's difference) on r: the same for every energy
        self.tables = [(t, scalar, t.interpolation_difference(self.r), t.origin_difference(self.r))
                       for t, scalar in tabs]


def table_grid(ch, r_lo: float, r_hi: float, E_max: float) -> TableGrid | None:
    """The grid of :class:`TableGrid` for the channel's tables, or None without tables."""
    tabs = table_terms(ch.pot)
    return TableGrid(ch, tabs, r_lo, r_hi, E_max) if tabs else None


def table_change(ch, E: float, grid: TableGrid, uu: np.ndarray, dd: np.ndarray) -> float:
    """The error estimate of integral [dp dd + dq uu] dr from the tables' uncertainty (see the module's
    Notes), summed over the tables; ``uu`` = u^2 and ``dd`` = (D u)^2 on ``grid.r`` with u normalised as
    the quantity asks (unit amplitude for a phase shift, u -> r - a for a scattering length), or another
    kernel of that integral (an effective range's). The caller divides by p_inf k (phase) or p_inf
    (length)."""
    from ..potentials.tabulated import SPREAD_WARN

    eq, smp = ch.eq, grid.sample
    p0, q0 = eq.p(E, smp), eq.q(E, smp)
    total = 0.0
    for term, scalar, d_spline, d_origin in grid.tables:
        parts = []
        for d in (d_spline, d_origin):
            moved = Sample(smp.r, smp.V + (0 if scalar else d), smp.S + (d if scalar else 0), smp.W)
            fp, fq = (eq.p(E, moved) - p0) * dd, (eq.q(E, moved) - q0) * uu
            parts.append((float(np.sum(grid.dr * (fp + fq))), float(np.sum(grid.dr * (np.abs(fp) + np.abs(fq))))))
        (signed, absolute), (origin, _) = parts
        total += 2.0 * (abs(signed) if term.interpolation_spread <= SPREAD_WARN else absolute) + 2.0 * abs(origin)
    return total


def p_far(ch, E: float) -> float:
    """p of the channel's equation at energy E where V = S = 0 (its value beyond the range)."""
    z = np.zeros(1)
    return float(np.broadcast_to(ch.eq.p(E, Sample(np.ones(1), z, z, None)), (1,))[0])
