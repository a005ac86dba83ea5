"""Spectral elements on a sharp Woods-Saxon surface: the estimate bounds the error at every tolerance.

The integrals of the elements' quadratic form were taken with degree + 2 Gauss points, which is exact
when r (V + S) is a cubic on the element. Across a Woods-Saxon surface of small diffuseness it is not,
and the rule's aliasing error in the potential term fell erratically from rung to rung: two rungs could
carry the same error (2.52e-9 and 2.53e-9 hartree at degrees 15 and 18 for the first well below), so
their difference, the estimate, was 177 times below the true error; at tol 1e-6 the second well's 1s was
3.1e-6 (relative) off with status ok. Elements on which r (V + S) is not a cubic to rounding got half
their degree again in Gauss points, and now their whole degree again (SHARP below: half was still too few).

References: an independent matched shooting (scipy DOP853, rtol 1e-13, outward from r0 with u = r and
inward from r1 with exponential decay, met at rm; (r0, rm, r1) = (1e-8, R, R + 60/k) and
(1e-7, 0.7 R, R + 50/k), k = sqrt(-2E)), computed for this test (2026-12-05) by _shot_1s below, which the
slow test reruns; both cuts agree with the stored values to 1.3e-15 (relative).
"""
from __future__ import annotations

import math

import pytest

import boundkit

WELLS = [
    # depth (hartree), radius (bohr), diffuseness (bohr), 1s binding energy (hartree)
    (1.7254044576900245, 2.403022941724509, 0.02771814504543994, -1.166710215911802),
    (0.18692016579431744, 5.193817476458639, 0.05768880579615062, -0.08689680320695922),
]


def _shot_1s(depth, R, a, E_guess, r0, rm_frac, r1_decay):
    from scipy.integrate import solve_ivp
    from scipy.optimize import brentq

    def V(r):
        return -depth / (1 + math.exp(min((r - R) / a, 700.0)))

    def rhs(r, y, E):
        return [y[1], 2 * (V(r) - E) * y[0]]

    rm, r1 = rm_frac * R, R + r1_decay / math.sqrt(-2 * E_guess)

    def mismatch(E):
        k = math.sqrt(-2 * E)
        out = solve_ivp(rhs, (r0, rm), [r0, 1.0], args=(E,), method="DOP853", rtol=1e-13, atol=1e-300,
                        max_step=a / 4).y[:, -1]
        inn = solve_ivp(rhs, (r1, rm), [1e-30, -k * 1e-30], args=(E,), method="DOP853", rtol=1e-13, atol=1e-300,
                        max_step=a / 4).y[:, -1]
        return (out[0] * inn[1] - inn[0] * out[1]) / math.hypot(*out) / math.hypot(*inn)

    return brentq(mismatch, E_guess * 1.001, E_guess * 0.999, xtol=1e-16, rtol=1e-15)


@pytest.mark.parametrize("tol", [1e-6, 1e-8, 1e-10])
@pytest.mark.parametrize("depth, R, a, exact", WELLS)
def test_the_estimate_bounds_the_error_across_a_sharp_surface(depth, R, a, exact, tol):
    res = boundkit.solve("schrodinger", "woods-saxon", {"depth": depth, "radius": R, "diffuseness": a}, l=0,
                         levels=1, tol=tol, method="spectral")
    assert res.status == "ok", res.message
    lv = res.levels[0]
    err = abs(lv.energy - exact)
    assert err <= max(lv.error_estimate, 1e-14 * abs(exact)), (err, lv.error_estimate)
    assert err <= tol * abs(exact)


# Dirac kappa = -1 in a Fermi nucleus, Z = 92, rms radius 7.473720969742803 fm (a case of the cross-method sweep):
# the 1s by the matched shooting of tests/test_locator_shooting.py (_matched_energy, DOP853 at rtol 1e-13), cuts
# (r0, rm, r1) = (1e-9, 2e-3, 0.5), (1e-8, 1e-3, 0.6), (1e-9, 5e-3, 0.45) bohr: -4850.7827145203{43, 40, 40}
# hartree, computed 2026-12-05 with fm converted by a0 = alpha hbar c / E_h (with CODATA's tabulated a0, 5.6e-12
# larger, the radius in bohr was that much smaller and the 1s -4850.78271452042{5, 9, 4}). Before, at tol 1e-7 the elements gave -4850.7827367468 +- 3.3e-7: 2.2e-5 off
# (rungs of 121 and 151 unknowns agreed by accident; the next moved by 2.2e-5).
FERMI_RMS = 7.473720969742803
FERMI_1S = -4850.782714520343


@pytest.mark.parametrize("tol", [1e-7, 1e-10])
def test_the_estimate_bounds_the_error_of_a_fermi_nucleus_1s(tol):
    res = boundkit.solve("dirac", "fermi", {"Z": 92, "rms_fm": FERMI_RMS}, kappa=-1, levels=1, tol=tol,
                         method="spectral")
    assert res.status == "ok", res.message
    lv = res.levels[0]
    assert abs(lv.energy - FERMI_1S) <= lv.error_estimate, (lv.energy - FERMI_1S, lv.error_estimate)


def test_a_coulomb_element_keeps_its_quadrature():
    """r V = -Z is a constant: no element of a point charge needs more points (the Dirac Z = 92 benchmark
    pays nothing)."""
    import numpy as np

    from boundkit.ladder import _structure_points, make_operator
    from boundkit.solver import sampler, setup

    eq, pot, _ = setup("dirac", "coulomb", {"Z": 92}, kappa=-1)
    edges = list(np.linspace(math.log(1e-6), math.log(20.0), 12))
    op = make_operator(eq, sampler(pot), eq.gamma(pot), 0.01, edges, [False] * 11, 12, -4000.0)
    assert not any(_structure_points(op.grid, op.sample))
    eq, pot, _ = setup("schrodinger", "woods-saxon", {"depth": 1.0, "radius": 2.0, "diffuseness": 0.03}, l=0)
    op = make_operator(eq, sampler(pot), eq.gamma(pot), 0.01, edges, [False] * 11, 12, -0.5)
    assert any(_structure_points(op.grid, op.sample))


@pytest.mark.slow
def test_the_fermi_reference_is_reproduced_by_shooting():
    from test_locator_shooting import _matched_energy

    from boundkit.solver import setup

    eq, pot, _ = setup("dirac", "fermi", {"Z": 92, "rms_fm": FERMI_RMS}, kappa=-1)
    for cut in ((1e-9, 2e-3, 0.5), (1e-8, 1e-3, 0.6)):
        assert abs(_matched_energy(pot, -1, eq.mass, FERMI_1S, *cut) - FERMI_1S) <= 2e-15 * abs(FERMI_1S)


@pytest.mark.slow
@pytest.mark.parametrize("depth, R, a, exact", WELLS)
def test_the_references_are_reproduced_by_shooting(depth, R, a, exact):
    for cut in ((1e-8, 1.0, 60.0), (1e-7, 0.7, 50.0)):
        assert abs(_shot_1s(depth, R, a, exact, *cut) - exact) <= 2e-15 * abs(exact)


def test_more_points_on_a_grid_match_a_grid_built_with_them():
    """make_operator builds the nodes first and adds the quadrature once the structure points are known
    (with_quadrature); a grid given other counts first and then these has the same points, bit for bit, and
    each element's points are the reference Gauss-Legendre points mapped onto it."""
    import numpy as np
    import numpy.polynomial.legendre as npleg

    from boundkit.discretize.elements import element_grid, with_quadrature

    edges = list(np.linspace(math.log(1e-5), math.log(20.0), 9))
    quads = [14 + k for k in range(8)]
    bare = element_grid(edges, [12] * 8)
    assert bare.quad == ()
    once = with_quadrature(bare, quads)
    twice = with_quadrature(with_quadrature(bare, [14] * 8), quads)
    assert np.array_equal(once.t_ext, bare.t_ext) and np.array_equal(once.w, bare.w)
    for a, b, m, lo, hi in zip(once.quad, twice.quad, quads, edges[:-1], edges[1:], strict=True):
        assert np.array_equal(a.t, b.t) and len(a.t) == m
        y = npleg.leggauss(m)[0]
        assert np.allclose(a.t.astype(float), lo + (y + 1) * (hi - lo) / 2, rtol=0, atol=1e-14)

# Sharp Woods-Saxon wells (a / R from 0.01 to 0.025) where degree + 2 + degree / 2 Gauss points were still too
# few: the last two rungs carried nearly the same aliasing error, and the estimate fell 2.1 to 180 times below
# the true error at tol 1e-8 (found by a sweep of 15 wells, l = 0, 1, 2, 4, against independent references).
# depth, radius, diffuseness (bohr, hartree), l, the level's index k, levels asked for, its binding energy:
# - the l = 0 levels: the exact s-wave condition (the hypergeometric zero of tests/test_woods_saxon.py,
#   ws_condition, Fluegge 1971) found with mpmath at 80 digits (z0 = 1 / (1 + exp(-R/a)) needs them);
# - the 2p: a matched shooting (_shot below, scipy DOP853 at rtol 2.2e-14) at match radii 0.4 R and R, which
#   agree to 4e-15 hartree (R + 20 a gives 5e-14 more); the same shooting is within 1.1e-13 hartree of the
#   exact condition on the l = 0 levels. Computed for this test on 2026-12-05; the slow test reruns both.
SHARP = [
    (1.169, 2.399, 0.0255, 1, 0, 1, -0.1800635248034952),
    (1.7328, 1.7457, 0.01838, 0, 0, 1, -0.83463471384687059956),
    (3.1634, 2.6388, 0.03597, 0, 0, 3, -2.6292172214037830667),
    (1.1677, 4.5689, 0.06634, 0, 1, 3, -0.46637434190493164007),
]


def _shot(depth, R, a, l, E_guess, rm_frac):
    """A level of the Woods-Saxon well by matched shooting: u = r^(l+1) (1 + c r^2) outward from 1e-4 bohr,
    exp(-k r) inward from R + 40 a + 40 / k (the potential is e^-40 of its depth there), log derivatives met
    at rm_frac R; DOP853 at scipy's finest rtol (2.2e-14)."""
    import warnings

    from scipy.integrate import solve_ivp
    from scipy.optimize import brentq
    from scipy.special import expit

    def rhs(r, y, E):
        return [y[1], (l * (l + 1) / r**2 - 2 * depth * expit((R - r) / a) - 2 * E) * y[0]]

    def mismatch(E):
        k = math.sqrt(-2 * E)
        r0, rm, r1 = 1e-4, rm_frac * R, R + 40 * a + 40 / k
        c = 2 * (-depth * expit(R / a) - E) / (4 * l + 6)
        y0 = [r0 ** (l + 1) * (1 + c * r0**2), (l + 1) * r0**l + c * (l + 3) * r0 ** (l + 2)]
        with warnings.catch_warnings():
            warnings.simplefilter("ignore", UserWarning)        # rtol raised to its floor, 2.2e-14
            out = solve_ivp(rhs, (r0, rm), y0, args=(E,), method="DOP853", rtol=1e-14, atol=1e-300).y[:, -1]
            inn = solve_ivp(rhs, (r1, rm), [1.0, -k], args=(E,), method="DOP853", rtol=1e-14, atol=1e-300).y[:, -1]
        return out[1] / out[0] - inn[1] / inn[0]

    return brentq(mismatch, E_guess - 1e-9, E_guess + 1e-9, xtol=1e-17, rtol=1e-15)


@pytest.mark.parametrize("tol", [1e-6, 1e-8, 1e-10])
@pytest.mark.parametrize("depth, R, a, l, k, levels, exact", SHARP)
def test_the_estimate_bounds_the_error_of_sharper_wells(depth, R, a, l, k, levels, exact, tol):
    res = boundkit.solve("schrodinger", "woods-saxon", {"depth": depth, "radius": R, "diffuseness": a}, l=l,
                         levels=levels, tol=tol, method="spectral")
    assert res.status == "ok", res.message
    lv = res.levels[k]
    err = abs(lv.energy - exact)
    # 2e-13 relative: the references' own uncertainty (the shooting against the exact condition)
    assert err <= max(lv.error_estimate, 2e-13 * abs(exact)), (err, lv.error_estimate)
    assert err <= tol * abs(exact)


@pytest.mark.slow
@pytest.mark.parametrize("depth, R, a, l, k, levels, exact", SHARP)
def test_the_sharper_references_are_reproduced(depth, R, a, l, k, levels, exact):
    for rm_frac in (0.4, 1.0):
        assert abs(_shot(depth, R, a, l, exact, rm_frac) - exact) <= 2e-13 * abs(exact)
    if l == 0:
        import mpmath as mp

        mp.mp.dps = 80
        s = 2 * mp.mpf(a) ** 2                  # 2 m a^2 / hbar^2 in atomic units (m = 1)
        z0 = 1 / (1 + mp.exp(-mp.mpf(R) / a))

        def condition(E):       # ws_condition of tests/test_woods_saxon.py, in atomic units
            nu, mu = mp.sqrt(-s * E), 1j * mp.sqrt(s * (E + depth))
            return mp.re(z0**nu * (1 - z0) ** mu * mp.hyp2f1(nu + mu, nu + mu + 1, 2 * nu + 1, z0))

        E = mp.findroot(condition, mp.mpf(exact))
        mp.mp.dps = 15
        assert abs(float(E) - exact) <= 1e-15 * abs(exact)
