"""Error estimates of observables near the origin of a finite nucleus must cover the true error.

A Dirac kappa < 0 level of a finite nucleus carries a little of the irregular solution (P ~ r^(1 - gamma),
Q ~ r^(-gamma) at the origin) from the elements' inner end: for the Z = 83 sphere's 1s its Q was 50 % off at
r_min and still 1.9e-10 at 0.15 R (errors falling as r^-3, P's as 1 / r, in the irregular solution's ratio
-M / c), which the point-dipole hyperfine integral weighs by 1 / r^2. Measured before the fix against the
shooting reference: the integral 4.8e-10 (Z = 83) and 4.0e-10 (Z = 20) off with estimates 3.4 and 3.2 times
smaller; the density at the origin 1.9e-8 and 2.2e-8 off with estimates 1.03 and 1.13 times the error (the
line through P / r at r_min and 4 r_min read that admixture and the series' curvature).
Reference: an own shooting of the Dirac equation in the uniform sphere's closed-form potential
(tests/reference_dirac_sphere.py: scipy DOP853 at rtol 1e-13 from the regular series at the origin and from
the decay far out, matched; two matching settings, whose agreement is asserted well below what is tested).
"""
from __future__ import annotations

import pytest

import boundkit
from boundkit.observables import density_at_origin, expectation_value

from reference_dirac_sphere import sphere_1s

CASES = [(83, 5.5, None), (20, 3.48, None), (20, 3.48, "muon")]


@pytest.fixture(scope="module", params=CASES, ids=["Z83", "Z20", "muonic-Z20"])
def sphere(request):
    Z, rms, particle = request.param
    res = boundkit.solve("dirac", "uniform-sphere", {"Z": Z, "rms_fm": rms}, kappa=-1, tol=1e-12, particle=particle)
    lv = res.levels[0]
    return lv, sphere_1s(Z, rms, lv.energy, m=res.settings["mass_atomic_units"])


def test_the_point_dipole_integral_of_a_finite_nucleus_is_right_and_covered(sphere):
    """int P Q / r^2 dr of the 1s1/2: measured after the fix 3.8e-14 (Z = 83), 8e-15 (Z = 20) and 5.6e-12
    (muon) relative off, 0.06, 0.20 and 0.03 of the estimates."""
    lv, refs = sphere
    ref = refs[0]["pq_r2"]
    assert abs(refs[1]["pq_r2"] - ref) <= 1e-13 * abs(ref), refs
    q = expectation_value(lv, lambda r: r**-2.0, kind="PQ")
    assert abs(q.value - ref) <= q.error, (q, ref)
    assert abs(q.value - ref) <= 2e-11 * abs(ref), (q, ref)


def test_the_density_at_the_origin_of_a_finite_nucleus_is_right_with_a_margin(sphere):
    """lim rho / r^2 of the 1s1/2 (the reference starts with P = r, so it is 1 / norm). An estimate is
    trusted with a margin: at most half of it may be error. Measured after the fix 2e-14 (Z = 83), 1.8e-12
    (Z = 20) and 1e-14 (muon) relative off, 0.02, 0.3 and 0.03 of the estimates (Z = 20: the state's own
    smooth error near r_min, 5e-13 of P, which the fit's change with its number of terms measures)."""
    lv, refs = sphere
    ref = refs[0]["rho0"]
    assert abs(refs[1]["rho0"] - ref) <= 1e-13 * ref, refs
    q = density_at_origin(lv)
    assert 2 * abs(q.value - ref) <= q.error, (q, ref)
    assert abs(q.value - ref) <= 1e-11 * ref, (q, ref)
    assert q.error <= 1e-10 * ref, q


@pytest.mark.parametrize("Z", [83, 92])
def test_the_state_stays_normalised_once_the_admixture_is_off(Z, tmp_path):
    """The admixture was taken off values the solver had normalised with it: <1> came back 1 - 4e-14 (Z = 92),
    twice its estimate (a review). The values are normalised again; the states file writes the same values
    the observables read (its Q column had been the raw one, 0.5 off at r_min, beside a corrected density).
    Reference: the norm 1 (the definition of a normalised state)."""
    import numpy as np

    from boundkit.io_states import write_states

    res = boundkit.solve("dirac", "uniform-sphere", {"Z": Z, "rms_fm": 5.86}, kappa=-1, tol=1e-12, levels=1)
    one = expectation_value(res.levels[0], lambda r: np.ones_like(r))
    assert abs(one.value - 1) <= one.error, (one.value - 1, one.error)
    path = write_states(res, tmp_path / "s.npz")
    data = np.load(path)
    P, Q, dens = (data[f"1s1/2/{k}"] for k in ("P", "Q", "density"))
    assert np.max(np.abs(P**2 + Q**2 - dens)) <= 1e-12 * np.max(dens)
