"""Finite differences across a jump of the potential: error estimates against the exact square well.

At a jump of V, u'' jumps. With the jump between two nodes the finite differences converge at first
order with a coefficient that swings with where the jump falls (E - E_exact changed sign from one
size of the ladder to the next), so no change between sizes measured the error: a square well
written as a callable had its energy error equal to its estimate to 4 digits (the estimate was the
distance to the located level), and <r>, <r^2>, <1/r>, <1/r^2> up to 1.7 times their estimates. The
grid now puts a node on the jump at every size (discretize.finite_difference.clustered_nodes), where
the operator samples the mean of the two sides, and the energy estimate of such a channel is the
change between the last two sizes itself.

Check values: the finite square well (m = hbar = 1, V = -V0 for r < R, 0 outside), whose levels meet
the matching of the regular inner solution u = r j_l(k r) and the decaying outer one u = r k_l(q r) at
R, k^2 = 2 (E + V0), q^2 = -2 E (l = 0: k cot kR = -q; the odd states of the finite square well,
Griffiths, Introduction to Quantum Mechanics, sec. 2.6, from memory; the spherical Bessel form is
common practice). Roots by mpmath.findroot at 30 digits, moments by mpmath.quad on the exact wave
function, split at R.
"""
from __future__ import annotations

import math
from functools import lru_cache

import mpmath as mp
import numpy as np
import pytest

import boundkit
from boundkit.discretize.finite_difference import FiniteDifference
from boundkit.mesh import LogMap
from boundkit.observables import radial_moment
from boundkit.solver import prepare_channel, setup

_DPS = 30


def _u_in(l, k, r):
    """(u, du/dr) of the regular solution inside: r j_l(k r), up to a constant."""
    x = k * r
    if l == 0:
        return mp.sin(x), k * mp.cos(x)
    return mp.sin(x) / x - mp.cos(x), k * (mp.cos(x) / x - mp.sin(x) / x**2 + mp.sin(x))


def _u_out(l, q, r):
    """(u, du/dr) of the decaying solution outside: r k_l(q r), up to a constant."""
    x = q * r
    if l == 0:
        return mp.exp(-x), -q * mp.exp(-x)
    return mp.exp(-x) * (1 + 1 / x), -q * mp.exp(-x) * (1 + 1 / x + 1 / x**2)


def _wronskian(l, V0, R, k):
    q = mp.sqrt(2 * V0 - k**2)
    ui, dui = _u_in(l, k, R)
    uo, duo = _u_out(l, q, R)
    return dui * uo - ui * duo


@lru_cache(maxsize=None)
def square_well(V0: float, R: float, l: int, count: int):
    """The lowest ``count`` levels (E, {p: <r^p>} for p = 1, 2, -1, -2), exact to 30 digits."""
    with mp.workdps(_DPS):
        V0m, Rm = mp.mpf(V0), mp.mpf(R)
        k0 = mp.sqrt(2 * V0m)
        n = int(k0 * Rm / 0.02) + 2             # steps of 0.02 in k R: roots are about pi apart
        ks = [k0 * (i + 0.5) / n for i in range(n)]
        roots = []
        for a, b in zip(ks[:-1], ks[1:]):
            if mp.sign(_wronskian(l, V0m, Rm, a)) != mp.sign(_wronskian(l, V0m, Rm, b)):
                roots.append(mp.findroot(lambda k: _wronskian(l, V0m, Rm, k), (a, b), solver="anderson"))
            if len(roots) == count:
                break
        assert len(roots) == count, (V0, R, l, len(roots))
        out = []
        for k in roots:
            q = mp.sqrt(2 * V0m - k**2)
            A = _u_in(l, k, Rm)[0] / _u_out(l, q, Rm)[0]

            def rho(r, k=k, q=q, A=A):
                return _u_in(l, k, r)[0] ** 2 if r < Rm else (A * _u_out(l, q, r)[0]) ** 2

            def integral(p):
                f = lambda r: rho(r) * r**p        # noqa: E731
                return mp.quad(f, [0, Rm]) + mp.quad(f, [Rm, mp.inf])

            norm = integral(0)
            E = -(q**2) / 2
            out.append((float(E), {p: float(integral(p) / norm) for p in (1, 2, -1, -2)}))
        return tuple(out)


def test_reference_meets_the_matching_condition():
    """The roots, checked apart from the code that found them: l = 0 against k cot kR = -q, l = 1
    against scipy's spherical Bessel functions (k j1'(kR) / j1(kR) = q k1'(qR) / k1(qR)); the moments
    against Jensen's inequalities (<1/r> >= 1/<r>, <r^2> >= <r>^2)."""
    from scipy.special import spherical_jn, spherical_kn

    for (E, _) in square_well(50.0, 1.0, 0, 3):
        k, q = math.sqrt(2 * (E + 50.0)), math.sqrt(-2 * E)
        assert abs(k / math.tan(k) + q) <= 1e-12 * q
    for (E, m) in square_well(30.0, 1.5, 1, 3):
        k, q = math.sqrt(2 * (E + 30.0)), math.sqrt(-2 * E)
        inner = k * spherical_jn(1, 1.5 * k, derivative=True) / spherical_jn(1, 1.5 * k)
        outer = q * spherical_kn(1, 1.5 * q, derivative=True) / spherical_kn(1, 1.5 * q)
        assert abs(inner - outer) <= 1e-10 * abs(outer)
        assert m[-1] >= 1.0 / m[1] and m[2] >= m[1] ** 2


CASES = [(10.0, 1.0, 0, 1), (10.0, 1.0, 1, 1), (50.0, 1.0, 0, 3), (3.0, 2.0, 0, 2), (200.0, 0.3, 0, 2),
         (30.0, 1.5, 1, 3)]


def _check_square_well(V0, R, l, count, tol):
    res = boundkit.solve("schrodinger", lambda r: np.where(r < R, -V0, 0.0), l=l, levels=count, tol=tol,
                         method="fd")
    exact = square_well(V0, R, l, count)
    assert len(res.levels) == count, res.message
    bad = []
    for lv, (E, moments) in zip(res.levels, exact):
        err = abs(lv.energy - E)
        if not err <= lv.error_estimate:
            bad.append((lv.label, "E", err / lv.error_estimate))
        for p, value in moments.items():
            q = radial_moment(lv, p)
            if not abs(q.value - value) <= q.error:
                bad.append((lv.label, f"<r^{p}>", abs(q.value - value) / q.error))
    assert not bad, bad               # (level, quantity, error / estimate)


@pytest.mark.parametrize("V0, R, l, count", [(10.0, 1.0, 0, 1), (30.0, 1.5, 1, 3), (200.0, 0.3, 0, 2)])
def test_square_well_estimates_bound_the_errors(V0, R, l, count):
    """Before the node on the jump (tol 1e-8): every energy error 1.00000005 to 1.000001 times its
    estimate, the 30/1.5 2p <r^k> 1.175 to 1.177 times theirs, the 200/0.3 2s <1/r> 1.08 times."""
    _check_square_well(V0, R, l, count, 1e-8)


@pytest.mark.slow
@pytest.mark.parametrize("tol", [1e-6, 1e-8, 1e-10])
@pytest.mark.parametrize("V0, R, l, count", CASES)
def test_square_well_estimates_bound_the_errors_everywhere(V0, R, l, count, tol):
    _check_square_well(V0, R, l, count, tol)


# --- the grid ---------------------------------------------------------------------------------------
def test_a_node_sits_on_the_jump_at_every_size():
    """On the grid of each ladder size one node is the jump's t (bit for bit), reported in on_jumps,
    and the sample there is the mean of the two sides."""
    from boundkit.solver import _edges, _grid_sample, _jumps

    eq, pot, _ = setup("schrodinger", lambda r: np.where(r < 1.3, -7.0, 0.0))
    assert _jumps(pot) == pot.breakpoints == (1.3,)

    disc = FiniteDifference()
    mesh = LogMap(1e-6, 30.0)
    tj = math.log(1.3)
    for size in [*disc.ladder(), 777, 1001]:
        grid = disc.grid(mesh, size, edges=_edges(pot), jumps=_jumps(pot))
        (i,) = grid.on_jumps
        assert grid.t[i] == tj
        assert np.all(np.diff(grid.t) > 0) and grid.t[0] == mesh.t_min and grid.t[-1] == mesh.t_max
        sample = _grid_sample(pot, grid)
        assert sample.V[i] == -3.5 and sample.V[i - 1] == -7.0 and sample.V[i + 1] == 0.0


def test_a_kink_is_not_a_jump():
    from boundkit.solver import _jumps

    eq, pot, _ = setup("schrodinger", lambda r: -np.maximum(0.0, 10.0 - 3.0 * r))
    assert len(pot.breakpoints) == 1 and _jumps(pot) == ()


def test_two_jumps_both_get_nodes():
    """A step well with two radii: each has its node (the c_k of both features are moved)."""
    from boundkit.solver import _edges, _jumps

    eq, pot, _ = setup("schrodinger", lambda r: np.where(r < 0.7, -20.0, np.where(r < 2.1, -4.0, 0.0)))

    disc = FiniteDifference()
    mesh = LogMap(1e-6, 40.0)
    for size in disc.ladder():
        grid = disc.grid(mesh, size, edges=_edges(pot), jumps=_jumps(pot))
        assert sorted(grid.t[i] for i in grid.on_jumps) == [math.log(0.7), math.log(2.1)]


@pytest.mark.parametrize("edges, depths", [([0, 0.7, 2.1], [-20.0, -4.0]),
                                           ([0, 0.4, 0.9, 1.6, 2.5], [-50.0, 10.0, -20.0, -1.0])])
def test_wells_of_several_steps(edges, depths):
    """Every jump gets its node; the energies of s levels of wells of constant pieces are within their
    estimates (exact levels: test_steps._piecewise_levels, the matching carried region by region).
    Before, at tol 1e-6: the 2-step well's 1s and 3s errors were 1.0000002 and 1.0000001 times their
    estimates (8.1e-8 and 3.1e-6 relative); after, 2.8e-13 and 4.5e-10, 1.9e-4 and 9.9e-4 times them."""
    from test_steps import _piecewise_levels

    def V(r):
        out = np.zeros_like(r)
        for a, b, d in zip(edges[:-1], edges[1:], depths):
            out = np.where((r >= a) & (r < b), d, out)
        return out

    exact = _piecewise_levels(edges, depths)[:3]
    res = boundkit.solve("schrodinger", V, l=0, levels=len(exact), tol=1e-6, method="fd")
    assert len(res.levels) == len(exact), res.message
    ratios = [abs(lv.energy - E) / lv.error_estimate for lv, E in zip(res.levels, exact)]
    assert max(ratios) <= 1.0, ratios


# --- the relativistic equations, and the jump's own error ------------------------------------------
@pytest.mark.parametrize("equation, channel", [("schrodinger", {"l": 0}), ("klein-gordon", {"l": 0}),
                                               ("dirac", {"kappa": -1})])
@pytest.mark.parametrize("V0, R", [(50.0, 1.0), (3000.0, 0.05)])
def test_square_well_of_each_equation(equation, channel, V0, R):
    """s levels against the matching condition of test_steps._residual (Klein-Gordon: K cot KR = -q
    with the relativistic wave numbers; Dirac kappa = -1: continuity of Q/P). Before, at tol 1e-8, the
    energy errors were 0.4 to 1.000001 times their estimates, 1.6e-8 to 1.4e-7 relative."""
    from test_steps import _square_well_level

    res = boundkit.solve(equation, lambda r: np.where(r < R, -V0, 0.0), levels=2, tol=1e-8, method="fd",
                         **channel)
    assert res.levels, res.message
    for lv in res.levels:
        exact = _square_well_level(equation, V0, R, lv.energy)
        assert abs(lv.energy - exact) <= lv.error_estimate, (lv.label, abs(lv.energy - exact), lv.error_estimate)


@pytest.mark.parametrize("equation, channel", [("schrodinger", {"l": 0}), ("klein-gordon", {"l": 0}),
                                               ("dirac", {"kappa": -1})])
def test_the_jumps_own_error_is_second_order(equation, channel, monkeypatch):
    """The jump's own term, made visible by clustering fewer nodes at it (a feature of width 0.01
    in t instead of the measured 5e-5): with the node on the jump and the coefficients' means there,
    the errors fall like h^2 and are a third of the change between sizes (measured 0.33 for each
    equation), which the estimate takes whole. With the mean of V alone, q of Klein-Gordon (quadratic
    in V) and p of Dirac (arithmetic mean) left a first-order term: error / change about 1."""
    import boundkit.solver as solver
    from test_steps import _square_well_level

    V0, R = 3000.0, 0.05
    eq, pot, _ = setup(equation, lambda r: np.where(r < R, -V0, 0.0), **channel)
    ch = prepare_channel(eq, pot, 1)
    exact = _square_well_level(equation, V0, R, ch.seeds[0])
    monkeypatch.setattr(solver, "_edges", lambda p: ((math.log(R), 0.01),))
    disc = FiniteDifference()
    mesh, rc = ch.mesh(ch.seeds[0])
    errs = [ch.level(0, disc, n, ch.seeds[0], mesh, rc, anchor=ch.seeds[0], reach=ch.reach(0))[1].energy - exact
            for n in (2400, 4800, 9600)]
    for e0, e1 in zip(errs[:-1], errs[1:]):
        assert 0.25 <= abs(e1) / abs(e1 - e0) <= 0.45, errs
