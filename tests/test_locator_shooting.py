"""Deep relativistic and scalar-vector levels against an independent shooting integration.

The check integrates the two-component Dirac radial system written in the test,

    P' = -kappa P / r + (E + 2 m c^2 - V + S) Q / c,
    Q' =  kappa Q / r - (E - V - S) P / c,

outward from the regular behaviour at a small radius (finite nucleus: P ~ r^|kappa| for kappa < 0,
Q ~ r^kappa for kappa > 0) and inward from a decaying start far out, with scipy's DOP853 at
rtol 1e-13, and finds the energy where the two solutions match (P_out Q_in - P_in Q_out = 0) by
Brent's method. It shares only the potential functions with boundkit: none of its discretization,
eigen solver or level locator. Values checked: common practice (shooting and matching), no table.
"""
from __future__ import annotations

import math

import numpy as np
import pytest
from scipy.integrate import solve_ivp
from scipy.optimize import brentq

import boundkit
from boundkit.potentials import TERMS
from boundkit.solver import setup
from boundkit.units import BOHR_M, C_AU


def _shoot(pot, kappa: int, mass: float, E: float, r0: float, rm: float, r1: float) -> float:
    c = C_AU
    mc2 = mass * c * c

    def rhs(r, y):
        V = float(pot.V(np.array([r]))[0])
        S = float(pot.S(np.array([r]))[0])
        P, Q = y
        return [-kappa * P / r + (E + 2 * mc2 - V + S) * Q / c, kappa * Q / r - (E - V - S) * P / c]

    V0 = float(pot.V(np.array([r0]))[0])
    S0 = float(pot.S(np.array([r0]))[0])
    if kappa < 0:
        g = -kappa
        y0 = [r0**g, -(E - V0 - S0) / (c * (2 * g + 1)) * r0 ** (g + 1)]
    else:
        g = kappa
        y0 = [(E + 2 * mc2 - V0 + S0) / (c * (2 * g + 1)) * r0 ** (g + 1), r0**g]
    out = solve_ivp(rhs, (r0, rm), y0, method="DOP853", rtol=1e-13, atol=1e-300).y[:, -1]
    lam = math.sqrt(-E * (E + 2 * mc2)) / c
    y1 = [1e-30, -1e-30 * c * lam / (E + 2 * mc2)]
    inn = solve_ivp(rhs, (r1, rm), y1, method="DOP853", rtol=1e-13, atol=1e-300).y[:, -1]
    return float(out[0] * inn[1] - inn[0] * out[1]) / math.hypot(*out) / math.hypot(*inn)


def _matched_energy(pot, kappa, mass, E_guess, r0, rm, r1, width=1e-6):
    a, b = E_guess * (1 + width), E_guess * (1 - width)
    return brentq(lambda E: _shoot(pot, kappa, mass, E, r0, rm, r1), a, b, xtol=1e-15 * abs(E_guess),
                  rtol=1e-15)


@pytest.mark.slow
@pytest.mark.parametrize("Z", [160, 165])
def test_fermi_nucleus_1s_near_diving(Z):
    res = boundkit.solve("dirac", "fermi", {"Z": Z, "rms_fm": 7.0}, kappa=-1, levels=1, tol=1e-10)
    assert res.status == "ok", res.message
    E = res.levels[0].energy
    eq, pot, _ = setup("dirac", "fermi", {"Z": Z, "rms_fm": 7.0}, kappa=-1)
    E_shoot = _matched_energy(pot, -1, eq.mass, E, 1e-9, 2e-3, 0.5)
    assert abs(E - E_shoot) / abs(E_shoot) < 1e-9


@pytest.mark.slow
@pytest.mark.parametrize("kappa,label", [(-2, "3p3/2"), (1, "3p1/2")])
def test_scalar_vector_woods_saxon_3p(kappa, label):
    WS = TERMS["woods-saxon"]
    V = WS(depth=-300.0, radius=5.0, diffuseness=0.6)       # +300 MeV vector (repulsive)
    S = WS(depth=350.0, radius=5.0, diffuseness=0.6)        # -350 MeV scalar (attractive)
    res = boundkit.solve("dirac", V, kappa=kappa, scalar=S, units="nuclear", particle="proton",
                         levels="all", tol=1e-12)
    lv = res.level(label)
    eq, pot, _ = setup("dirac", V, kappa=kappa, scalar=S, units="nuclear", particle="proton")
    fm = 1e-15 / BOHR_M          # 1 fm in bohr (CODATA Bohr radius, scipy.constants)
    E_shoot = _matched_energy(pot, kappa, eq.mass, lv.energy, 1e-3 * fm, 5 * fm, 60 * fm)
    assert abs(lv.energy - E_shoot) / abs(E_shoot) < 1e-9
