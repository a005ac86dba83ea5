"""Woods-Saxon s-waves against the exact hypergeometric quantization condition."""
from __future__ import annotations

import mpmath as mp
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
