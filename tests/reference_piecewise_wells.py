"""Exact l = 0 levels of a piecewise-constant radial potential (m = 1, atomic units), in mpmath.

Common practice: on each piece of constant V the regular solution is a combination of sin and cos
(E > V) or sinh and cosh (E < V), matched in value and slope at each jump, and of the decaying
exponential beyond the last piece (V = 0, E < 0). The k-th level (k nodes) is found by bisection on
the node count N(E) of the solution regular at the origin (Sturm's oscillation theorem: N(E) is the
number of levels below E), counted in closed form piece by piece, so nothing of boundkit enters.
"""
from __future__ import annotations

import mpmath as mp


def node_count(E, pieces, dps: int = 60) -> int:
    """Nodes on (0, inf) of the solution regular at 0 at energy E < 0; ``pieces``: (r_end, V) in
    increasing r from 0, V = 0 beyond the last r_end."""
    with mp.workdps(dps):
        E = mp.mpf(E)
        u, du, r0, n = mp.mpf(0), mp.mpf(1), mp.mpf(0), 0
        for r_end, V in pieces:
            L = mp.mpf(r_end) - r0
            q2 = 2 * (E - mp.mpf(V))
            if q2 > 0:       # u = A sin(theta), u' = A k cos(theta): a node each time theta passes m pi
                k = mp.sqrt(q2)
                th0 = mp.atan2(k * u, du)
                if th0 <= 0:
                    th0 += mp.pi
                n += int(mp.floor((th0 + k * L) / mp.pi)) - int(mp.floor(th0 / mp.pi))
                c, s = mp.cos(k * L), mp.sin(k * L)
                u, du = u * c + du / k * s, -u * k * s + du * c
            else:            # at most one node on a sinh/cosh piece: where u changes sign
                k = mp.sqrt(-q2)
                c, s = mp.cosh(k * L), mp.sinh(k * L)
                u1, du1 = u * c + du / k * s, u * k * s + du * c
                if u != 0 and u1 != 0 and (u > 0) != (u1 > 0):
                    n += 1
                u, du = u1, du1
            r0 = mp.mpf(r_end)
        # beyond: u = a e^{kappa (r - r0)} + b e^{-kappa (r - r0)}; one more node when it crosses 0 there
        kap = mp.sqrt(-2 * E)
        a, b = (u + du / kap) / 2, (u - du / kap) / 2
        if a != 0 and -b / a > 1:
            n += 1
        return n


def level(k: int, pieces, lo, hi, dps: int = 60, rtol: str = "1e-35"):
    """The level with k nodes in [lo, hi] (N(lo) <= k < N(hi)), by bisection on :func:`node_count`."""
    with mp.workdps(dps):
        lo, hi = mp.mpf(lo), mp.mpf(hi)
        if not node_count(lo, pieces, dps) <= k < node_count(hi, pieces, dps):
            raise ValueError(f"level {k} is not bracketed by [{lo}, {hi}]")
        while hi - lo > mp.mpf(rtol) * abs(lo):
            mid = (lo + hi) / 2
            if node_count(mid, pieces, dps) > k:
                hi = mid
            else:
                lo = mid
        return (lo + hi) / 2
