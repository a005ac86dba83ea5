"""Small phase shifts of high partial waves keep relative accuracy (delta_l ~ k^(2l+1) at low energy).

A user who divides delta_l by k^(2l+1) (scattering volume, threshold laws) needs delta_l to
relative accuracy, not only to an absolute 1e-11 rad. Matched far beyond the potential, the
interior solution differs from the free regular one only by ~ delta / (k r)^(2l+1), and every digit
cancelled: a hard sphere's l = 20 phase at 1e-8 hartree came out as -3.5e-196 (exact -3.5e-207),
with an estimate of 7e-12 and status ok. Every check value is computed here from a closed form
(source named beside it) with mpmath, or by an independent integration written here.
"""
from __future__ import annotations

import math

import mpmath
import numpy as np
import pytest
from scipy.integrate import solve_ivp
from scipy.special import spherical_jn, spherical_yn

from boundkit.potentials import Parameter, Term
from boundkit.scattering import phase_shifts

ZERO = lambda r: 0.0 * r   # noqa: E731  (free particle, used with a hard core)


class SquareWell(Term):
    """V = -V0 for r < R, 0 outside; its jump at R declared."""

    name, parameters = "square-well-relative-test", (Parameter("V0", None, "hartree", "depth"),
                                                     Parameter("R", None, "bohr", "radius"))
    breakpoints = property(lambda self: (self.values["R"],))

    def _evaluate(self, r):
        return np.where(np.asarray(r) < self.values["R"], -self.values["V0"], 0.0)


def _sph(l, x):
    """mpmath j_l(x), y_l(x) (x an mpf): sqrt(pi / 2x) J_(l+1/2), Y_(l+1/2) (common practice)."""
    f = mpmath.sqrt(mpmath.pi / (2 * x))
    return f * mpmath.besselj(l + mpmath.mpf(1) / 2, x), f * mpmath.bessely(l + mpmath.mpf(1) / 2, x)


def hard_sphere_exact(l, E, a):
    """tan delta_l = j_l(ka) / y_l(ka), k = sqrt(2E) (Sakurai, Modern Quantum Mechanics, rev. ed. 1994,
    sec. 7.6, hard-sphere scattering; common practice), at 60 digits: an mpmath number."""
    with mpmath.workdps(60):
        k = mpmath.sqrt(2 * mpmath.mpf(E))
        j, y = _sph(l, k * a)
        return mpmath.atan(j / y)


def square_well_exact(l, E, V0, R):
    """tan delta_l of a square well: u = x j_l(K r) inside, x j_l(k r) cos d - x y_l(k r) sin d outside,
    value and slope continuous at R (Schiff, Quantum Mechanics, 3rd ed. 1968, sec. 19; common practice);
    slopes from (x j_l)' = x j_(l-1) - l j_l. mpmath, 60 digits."""
    with mpmath.workdps(60):
        E = mpmath.mpf(E)
        k, K = mpmath.sqrt(2 * E), mpmath.sqrt(2 * (E + V0))

        def rb(x):
            j, y = _sph(l, x)
            jm, ym = _sph(l - 1, x)
            return x * j, x * jm - l * j, x * y, x * ym - l * y

        Fi, dFi, _, _ = rb(K * R)
        L = K * dFi / Fi
        F, dF, Y, dY = rb(k * R)
        return mpmath.atan((k * dF - L * F) / (k * dY - L * Y))


def yukawa_variable_phase(l, E, Z, D):
    """delta_l of V = -Z exp(-r/D)/r (m = 1) by the variable-phase equation
    delta'(r) = -(2 V / k) (jh cos delta - nh sin delta)^2, jh = x j_l, nh = x y_l, x = k r
    (Calogero, Variable Phase Approach to Potential Scattering, 1967; common practice), integrated
    here with scipy's DOP853 at rtol 1e-13 from r = 1e-6 (delta there ~ r^(2l+2), negligible) to
    r = 400 D (the rest ~ e^-400)."""
    k = math.sqrt(2 * E)

    def rhs(r, d):
        x = k * r
        jh, nh = x * spherical_jn(l, x), x * spherical_yn(l, x)
        return [2 * Z * math.exp(-r / D) / r / k * (jh * math.cos(d[0]) - nh * math.sin(d[0])) ** 2]

    sol = solve_ivp(rhs, (1e-6, 400 * D), [0.0], method="DOP853", rtol=1e-13, atol=1e-80)
    assert sol.success
    return float(sol.y[0, -1])


def _relative(delta, exact) -> float:
    return float(abs((mpmath.mpf(float(delta)) - exact) / exact))


@pytest.mark.parametrize("l, E", [(5, 1e-8), (20, 1e-8), (20, 0.5), (50, 1e-2), (3, 2.0), (10, 1e-4)])
def test_hard_sphere_small_phases_have_relative_accuracy(l, E):
    """Before: l = 20 at 1e-8 hartree was 1e11 times its exact value, at 0.5 hartree 2e10 times; l = 5 at
    1e-8 was 6e-9 off relatively; all with an estimate of 7e-12 rad and status ok."""
    res = phase_shifts([E], "schrodinger", ZERO, l=l, hard_core=1.0)
    exact = hard_sphere_exact(l, E, 1.0)
    rel = _relative(res.delta[0], exact)
    assert rel < 1e-10, (float(exact), res.delta[0], rel)
    # the estimate covers the error and is relative: far below |delta| itself
    assert abs(res.delta[0] - float(exact)) <= res.error_estimate[0] < 1e-8 * abs(res.delta[0])
    assert res.success, res.message


@pytest.mark.parametrize("l, E", [(4, 1e-6), (6, 1e-4), (3, 0.01), (8, 1e-3)])
def test_square_well_small_phases_have_relative_accuracy(l, E):
    V0, R = 2.0, 1.5
    res = phase_shifts([E], "schrodinger", SquareWell(V0=V0, R=R), l=l)
    exact = square_well_exact(l, E, V0, R)
    rel = _relative(res.delta[0], exact)
    assert rel < 1e-10, (float(exact), res.delta[0], rel)
    assert abs(res.delta[0] - float(exact)) <= res.error_estimate[0] < 1e-8 * abs(res.delta[0])


_OPEN = pytest.mark.xfail(reason="open: at l >= 4 and 1e-4 hartree, in a batch of three energies, the phase is 2e-9 to "
                          "2e-8 off relatively and the estimate misses it up to 7 times (integration error of the "
                          "Wronskian shared by the check run; not found yet)", strict=False)


@pytest.mark.parametrize("l", [2, 3, pytest.param(4, marks=_OPEN), pytest.param(5, marks=_OPEN),
                               pytest.param(6, marks=_OPEN)])
def test_yukawa_small_phases_against_the_variable_phase_equation(l):
    Z, D = 1.0, 2.0
    E = np.array([1e-6, 1e-4, 0.05])
    res = phase_shifts(E, "schrodinger", "yukawa", {"Z": Z, "screening_length": D}, l=l)
    for e, d, est in zip(E, res.delta, res.error_estimate):
        ref = yukawa_variable_phase(l, float(e), Z, D)
        # the reference integration's own error is about 1e-13 relative; at the default tol the phase is good
        # to a few 1e-9 relative here (its estimate says so); before, 2e-5 at l = 2 and 3e-2 at l = 6 (1e-6 hartree)
        assert abs(d - ref) <= 1e-8 * abs(ref), (l, e, d, ref)
        assert abs(d - ref) <= est + 1e-12 * abs(ref), (l, e, d, ref, est)
        assert est < 1e-7 * abs(d), (l, e, d, est)


def test_an_underflowing_phase_says_it_has_no_relative_accuracy():
    """l = 50 at 1e-8 hartree: delta ~ -1e-530, below the double range. The value cannot carry relative
    accuracy; the message must say so (it said 'ok, largest error estimate 7.1e-12 rad')."""
    res = phase_shifts([1e-8, 0.02], "schrodinger", ZERO, l=50, hard_core=1.0)
    assert abs(res.delta[0]) < 1e-290
    assert "no relative accuracy" in res.message and "E = 1e-08 hartree" in res.message
    assert res.diagnostics["no_relative_accuracy_hartree"] == [1e-8]
    exact = hard_sphere_exact(50, 0.02, 1.0)
    assert _relative(res.delta[1], exact) < 1e-10
