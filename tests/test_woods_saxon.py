"""Woods-Saxon s-waves against the exact hypergeometric quantization condition."""
from __future__ import annotations

import mpmath as mp
import numpy as np
import pytest
from scipy.constants import physical_constants

import boundkit

HBARC = physical_constants["reduced Planck constant times c in MeV fm"][0]   # CODATA
MP = physical_constants["proton mass energy equivalent in MeV"][0]             # CODATA


def ws_condition(E, V0, R, a, m):
    """u(r = 0) for the s-wave solution that decays at infinity (Flugge, Practical
    Quantum Mechanics, 1971, problem on the Woods-Saxon well; from memory, so
    derived here). With z = 1/(1 + exp((r - R)/a)) the radial equation
    u'' + 2m(E + V0 z) u = 0 (hbar = c = 1, MeV and fm) becomes
    z^2 (1-z)^2 u_zz + z (1-z)(1-2z) u_z + (eps + lam z) u = 0 with
    eps = 2 m E a^2, lam = 2 m V0 a^2. Its solution regular as r -> infinity
    (z -> 0) is u = z^nu (1-z)^mu 2F1(nu+mu, nu+mu+1; 2nu+1; z) with
    nu = sqrt(-eps), mu = i sqrt(eps + lam); it is real (Euler's transformation
    maps mu to -mu). A level is a zero of u at z0 = 1/(1 + exp(-R/a))."""
    mp.mp.dps = 30
    k = mp.mpf(2) * m / HBARC**2 * mp.mpf(a) ** 2
    eps, lam = k * E, k * V0
    nu = mp.sqrt(-eps)
    mu = 1j * mp.sqrt(eps + lam)
    z0 = 1 / (1 + mp.exp(-mp.mpf(R) / a))
    return mp.re(z0**nu * (1 - z0) ** mu * mp.hyp2f1(nu + mu, nu + mu + 1, 2 * nu + 1, z0))


@pytest.mark.parametrize("V0, R, a", [(50.0, 5.0, 0.6), (45.0, 6.5, 0.5)])
def test_woods_saxon_s_levels(V0, R, a):
    res = boundkit.solve("schrodinger", "woods-saxon", {"depth": V0, "radius": R, "diffuseness": a},
                         l=0, levels=2, units="nuclear", particle="proton")
    assert res.success, res.message
    for lv in res.levels:
        E = lv.energy_in("MeV")
        exact = mp.findroot(lambda e: ws_condition(e, V0, R, a, MP), (E * (1 - 1e-6), E * (1 + 1e-6)),
                            solver="secant")
        # the check value is the root of the exact condition; 1e-8 leaves room for the ~1e-12
        # spread between the printed CODATA values of hbar c, the hartree and the bohr
        assert abs(E - float(exact)) <= 1e-8 * abs(float(exact)), (lv.label, E, float(exact))
        # and it is a root: the condition changes sign across it
        assert ws_condition(float(exact) * (1 - 1e-7), V0, R, a, MP) * \
            ws_condition(float(exact) * (1 + 1e-7), V0, R, a, MP) < 0


def test_spin_orbit_splitting_matches_first_order_perturbation_theory():
    """For a small spin-orbit strength lambda the p doublet splits by
    E(j=1/2) - E(j=3/2) = -(2l+1)/2 <U1> lambda + O(lambda^2), with
    U1 = (1/r) df/dr and <U1> taken in the unperturbed state (first-order
    perturbation theory, common practice; <l.s> = l/2 and -(l+1)/2). Richardson's
    combination of lambda and 2 lambda removes the second-order term."""
    p = {"depth": 50.0, "radius": 5.0, "diffuseness": 0.6}
    kw = dict(l=1, levels=1, units="nuclear", particle="proton")

    def split(lam):
        hi = boundkit.solve("schrodinger", "woods-saxon", {**p, "spin_orbit": lam}, j=0.5, **kw)
        lo = boundkit.solve("schrodinger", "woods-saxon", {**p, "spin_orbit": lam}, j=1.5, **kw)
        assert hi.success and lo.success
        assert lo.levels[0].label == "2p3/2" and hi.levels[0].label == "2p1/2"
        return hi.levels[0].energy_in("MeV") - lo.levels[0].energy_in("MeV")

    lam = 0.05   # MeV fm^2
    first_order = (2 * split(lam) / lam - split(2 * lam) / (2 * lam))
    base = boundkit.solve("schrodinger", "woods-saxon", p, **kw).levels[0]
    st = base.state
    term = boundkit.make_potential("woods-saxon", {**p, "spin_orbit": 1.0}, units="nuclear")
    u1 = term.spin_orbit(st.r)                     # hartree for lambda = 1 MeV fm^2
    expect = -(2 * 1 + 1) / 2 * float(np.sum(st.weights * u1 * st.P**2))
    mev = 1 / boundkit.units.MEV_IN_HARTREE
    assert first_order == pytest.approx(expect * mev, rel=1e-6)
    assert split(20.0) > 0                         # j = l + 1/2 lies lower for lambda > 0


def test_spin_orbit_needs_j_and_the_schrodinger_equation():
    p = {"depth": 50.0, "radius": 5.0, "diffuseness": 0.6, "spin_orbit": 20.0}
    with pytest.raises(ValueError, match="give j = l"):
        boundkit.solve("schrodinger", "woods-saxon", p, l=1, units="nuclear", particle="proton")
    with pytest.raises(ValueError, match="j = l \\+- 1/2"):
        boundkit.solve("schrodinger", "woods-saxon", p, l=1, j=2.5, units="nuclear", particle="proton")
    with pytest.raises(ValueError, match="makes its own spin-orbit force"):
        boundkit.solve("dirac", "woods-saxon", p, kappa=-2, units="nuclear", particle="proton")
