"""Error estimates of expectation values with the finite-difference family.

The estimate of an observable is formed from the change between the level's state and its previous
resolution (boundkit.observables). With finite differences that change was both too large and too
small: 250 times the true error of <r^k> in the asymptotic regime (order 8, sizes in ratio 2: the
change is (2^8 - 1) times the error of the finer state), and far below it at the rounding floor,
where the states carry an error that successive sizes share in size but not in sign (<r^20> of the
hydrogen 4f at tol 1e-14: 7.8e-13 relative error against an estimate of 2e-14).

References:

* hydrogen <r^k> of P_(n,l) = N r^(l+1) e^(-r/n) L_(n-l-1)^(2l+1)(2r/n): exact sums of Gamma functions
  (tests/test_observables_tail.py, checked there against mpmath quadrature), and the closed forms
  <r> = (3 n^2 - l(l+1))/2, <r^2> = n^2 (5 n^2 + 1 - 3 l(l+1))/2, <1/r> = 1/n^2
  (Bethe and Salpeter, Quantum Mechanics of One- and Two-Electron Atoms, 1957, sec. 3), checked below
  against those sums;
* Dirac-Coulomb <r^k>: tests/exact_dirac_states.py (its own sources and residual check).
"""
from __future__ import annotations

import functools
from dataclasses import replace

import numpy as np
import pytest
import scipy.constants as sc

import boundkit
from boundkit.observables import expectation, radial_moment

from exact_dirac_states import moment as dirac_moment
from test_observables_tail import hydrogen_integral

KS = (-2, -1, 1, 2, 5, 10, 20)
LEVELS = ((2, 0), (3, 2), (4, 3), (6, 4))       # (n, l): the worst cases measured before the fix among them


@functools.lru_cache(maxsize=None)
def _hydrogen(l: int, count: int, tol: float):
    return boundkit.solve("schrodinger", "coulomb", {"Z": 1}, l=l, levels=count, tol=tol,
                          method="finite-difference").levels


def _hydrogen_ratios(tol: float) -> list[tuple[str, int, float]]:
    """(label, k, estimate / true error) of <r^k> of LEVELS."""
    out = []
    for n, l in LEVELS:
        lv = _hydrogen(l, n - l, tol)[-1]
        assert lv.label == f"{n}{'spdfg'[l]}"
        for k in KS:
            exact = hydrogen_integral(n, l, n, l, k)
            q = radial_moment(lv, k)
            out.append((lv.label, k, q.error / abs(q.value - exact)))
    return out


def test_closed_forms_agree_with_the_gamma_sums():
    for n, l in LEVELS:
        assert hydrogen_integral(n, l, n, l, 1) == pytest.approx((3 * n * n - l * (l + 1)) / 2, rel=1e-14)
        assert hydrogen_integral(n, l, n, l, 2) == pytest.approx(n * n * (5 * n * n + 1 - 3 * l * (l + 1)) / 2,
                                                                 rel=1e-14)
        assert hydrogen_integral(n, l, n, l, -1) == pytest.approx(1 / n**2, rel=1e-14)


@pytest.mark.parametrize("tol, pessimism", [(1e-8, 1000), (1e-14, 60)])
def test_hydrogen_moment_estimates_bound_the_error_and_are_not_far_above_it(tol, pessimism):
    """Before: 15 of these 28 values outside their estimates at tol 1e-14. At the rounding floor (tol
    1e-14) the estimate is the rounding term, measured a median 32 times the error here (22 over hydrogen
    n <= 6, k in -2..20). At tol 1e-8 the estimate is the change between sizes, a median 250 times the
    error (order 8, sizes in ratio 2: 2^8 - 1); scaling it down by that ratio failed on the Dirac 1s (see
    below), so it stays pessimistic there."""
    ratios = _hydrogen_ratios(tol)
    short = [(label, k, f"{r:.3g}") for label, k, r in ratios if r < 1]
    assert not short, short
    assert np.median([r for _, _, r in ratios]) < pessimism, sorted(r for _, _, r in ratios)


def test_dirac_moment_estimates_bound_the_error_at_the_rounding_floor():
    """Dirac Z = 50 3p3/2 at tol 1e-14: before, <r^20> was 3.2e-12 off with an estimate of 8.2e-13."""
    lv = boundkit.solve("dirac", "coulomb", {"Z": 50}, kappa=-2, levels=2, tol=1e-14,
                        method="finite-difference").levels[-1]
    assert lv.label == "3p3/2"
    for k in KS:
        exact = dirac_moment(3, -2, 50, sc.fine_structure, k)
        q = radial_moment(lv, k)
        assert abs(q.value - exact) <= q.error, (k, q.value / exact - 1, q.error / abs(exact))
        assert q.error <= 1e-10 * abs(exact), (k, q.error / abs(exact))


def test_spectral_states_keep_the_change_as_their_estimate():
    """The Richardson factor and the rounding term belong to the finite-difference family only: a
    spectral level's estimate of <r> is still at least its change from the previous resolution."""
    lv = boundkit.solve("schrodinger", "coulomb", {"Z": 1}, l=1, levels=2, tol=1e-10).levels[-1]
    q = radial_moment(lv, 1)
    prev = expectation(replace(lv, state=lv.previous_state, previous_state=None), lambda r: r)
    assert q.error >= abs(q.value - prev)


@pytest.mark.parametrize("Z", [50, 80])
def test_dirac_1s_moments_are_within_their_estimates_at_the_default_tolerance(Z):
    """A tester: with the change between sizes scaled by 16 / (2^8 - 1) (the order-8 Richardson factor),
    <r^-2> of the Dirac 1s at Z = 80 was 1.0e-6 off with an estimate of 2.0e-7: near the origin, where
    P ~ r^gamma with gamma not an integer, the two sizes are not yet in the asymptotic regime (their change
    was only 3.2 times the finer one's error). The change itself is the estimate again."""
    lv = boundkit.solve("dirac", "coulomb", {"Z": Z}, kappa=-1, method="finite-difference").levels[0]
    for k in (-2, -1, 1, 2):
        exact = dirac_moment(1, -1, Z, sc.fine_structure, k)
        q = radial_moment(lv, k)
        assert abs(q.value - exact) <= q.error, (k, q.value / exact - 1, q.error / abs(exact))
