"""Own Dirac reference for a uniformly charged sphere, independent of boundkit (scipy only).

The 1s1/2 (kappa = -1) level of a particle of mass m in V = -Z (3 - r^2/R^2)/(2R) inside, -Z/r outside,
by shooting (scipy solve_ivp DOP853, rtol 1e-13) from the regular start inside the nucleus (P = r (1 + p2 r^2),
Q = -(E - V(0)) r^2/(3c), the leading terms of the series; common practice) and from far out, matched
at a radius beyond R; the integrals int (P^2 + Q^2) dr, int r (P^2 + Q^2) dr and int P Q / r^2 dr ride
along as extra components, split at R. Written by a tester (tests of the small component near the
origin and of the point-dipole hyperfine integral); two matching settings bracket its own error.
"""
from __future__ import annotations

import math

import numpy as np
import scipy.constants as sc
from scipy.integrate import solve_ivp
from scipy.optimize import brentq

C = 1 / sc.fine_structure
BOHR_FM = 1e15 * sc.fine_structure * sc.hbar * sc.c / sc.physical_constants["Hartree energy"][0]


def sphere_radius(rms_fm: float) -> float:
    """R = sqrt(5/3) r_rms of a uniform sphere, in bohr (a0 = alpha hbar c / E_h)."""
    return math.sqrt(5.0 / 3.0) * rms_fm / BOHR_FM


def _potential(Z: float, R: float):
    return lambda r: -Z * (3 - r * r / R**2) / (2 * R) if r < R else -Z / r


def _run(E, a, b, y0, V, m, kappa=-1):
    def rhs(r, y):
        P, Q = y[0], y[1]
        v = V(r)
        return [-kappa / r * P + (E + 2 * m * C * C - v) / C * Q, kappa / r * Q - (E - v) / C * P,
                P * P + Q * Q, r * (P * P + Q * Q), P * Q / r**2, (P * P + Q * Q) / r**2]
    # a given first step: with atol 1e-300 on components that start at 0, scipy's own first-step guess
    # overflows (inf / inf); the adaptive steps take over after it
    return solve_ivp(rhs, [a, b], y0, method="DOP853", rtol=1e-13, atol=1e-300,
                     first_step=abs(b - a) * 1e-8).y[:, -1]


def _shoot(E, Z, R, m, rm, rmax, full=False):
    V = _potential(Z, R)
    r0 = 1e-6 * R
    # P = r (1 + p2 r^2), Q = b r^2: b = -(E - V(0)) / (3c), and P' - P / r = (E + 2mc^2 - V(0)) Q / c at
    # leading order gives p2 = (E + 2mc^2 - V(0)) b / (2c) (derived here). Without p2, P / r at r0 was
    # 1 + 1.6e-13 for a muon in a Z = 20 sphere, and rho0 = 1 / norm 3.2e-13 low.
    b = -(E + 1.5 * Z / R) / (3 * C)
    p2 = (E + 2 * m * C * C + 1.5 * Z / R) * b / (2 * C)
    y = [r0 * (1 + p2 * r0 * r0), b * r0 * r0, 0.0, 0.0, 0.0, r0]      # int_0^r0 of rho / r^2 ~ r0
    y = _run(E, r0, R, y, V, m)
    yo = _run(E, R, rm, y, V, m)
    yi = _run(E, rmax, rm, [1e-30, -1e-30 * math.sqrt(-E / (E + 2 * m * C * C)), 0.0, 0.0, 0.0, 0.0], V, m)
    if not full:
        return yo[1] / yo[0] - yi[1] / yi[0]
    s = yo[0] / yi[0]
    integrals = yo[2:] - s * s * yi[2:]
    # the start P = r0 (Q ~ r0^2) makes P / r -> 1 at the origin: rho / r^2 there is 1 / norm
    return np.append(integrals / integrals[0], 1.0 / integrals[0])


def sphere_1s(Z: float, rms_fm: float, guess: float, m: float = 1.0) -> list[dict]:
    """The 1s1/2 level near ``guess`` (hartree, binding) with two matching settings: a list of dicts with
    E, r_mean, pq_r2 (int P Q / r^2 dr, normalised), r_m2 (<r^-2>) and rho0 (lim rho / r^2 at the origin,
    normalised)."""
    R = sphere_radius(rms_fm)
    out = []
    for rm, rmax in ((max(0.83 / (Z * m), 3 * R), 60 / (Z * m)), (max(1.66 / (Z * m), 5 * R), 75 / (Z * m))):
        E = brentq(lambda e: _shoot(e, Z, R, m, rm, rmax), guess * 1.0001, guess * 0.9999, xtol=1e-14, rtol=1e-15)
        _, r_mean, pq, r_m2, rho0 = _shoot(E, Z, R, m, rm, rmax, True)
        out.append({"E": E, "r_mean": r_mean, "pq_r2": pq, "r_m2": r_m2, "rho0": rho0})
    return out


def small_over_large(E: float, Z: float, rms_fm: float) -> float:
    """lim_(r -> 0) Q / (P r) of the kappa = -1 level: -(E - V(0)) / (3c), V(0) = -3Z/(2R) (the series)."""
    return -(E + 1.5 * Z / sphere_radius(rms_fm)) / (3 * C)


if __name__ == "__main__":
    print(sphere_1s(83, 5.5, -3.8336e3))
