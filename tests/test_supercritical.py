"""A dived Dirac level followed past the diving point as a resonance (boundkit.critical(beyond=...)).

The 1s1/2 of a uniformly charged nucleus whose radius follows Z (NuclearRadius: R = 1.2 (2.5 Z)^(1/3)
fm) dives at Z_cr ~ 169.7; beyond, it is a resonance E + i Gamma/2 in the lower continuum.

Independent check: an outgoing-wave (Siegert) shooting written here. Inside the sphere the radial
Dirac equations are integrated from the origin with scipy's DOP853; outside, V = -Z/r exactly and
the outgoing solution is closed-form, in Whittaker functions (mpmath.whitw). With W = E + c^2 (total
energy, m = 1, atomic units), k = sqrt(W^2 - c^4)/c, lambda = -i k (outgoing), a = sqrt(c^2 + W),
b = c lambda / a, nu = Z/c, xi = nu W/(c lambda), zeta = nu c/lambda, gamma = sqrt(kappa^2 - nu^2),
x = 2 lambda r, the functions

    P = a (u1 + u2),  Q = b (u1 - u2),
    u1 = (kappa + zeta) x^(-1/2) W_{xi-1/2, gamma}(x),  u2 = x^(-1/2) W_{xi+1/2, gamma}(x)

solve P' = -kappa P/r + (W + c^2 - V) Q/c, Q' = kappa Q/r - (W - c^2 - V) P/c (derived here from
the Whittaker recurrences, DLMF 13.15.23-24 (x W' = (k - x/2) W_k - (mu^2 - (k - 1/2)^2) W_{k-1},
x W' = (x/2 - k) W_k - W_{k+1}); the test checks the ODE residual with mpmath). The resonance is
the root in complex E of the mismatch of Q/P at the surface, found with mpmath.findroot from a
guess 1000 hartree off.
"""
from __future__ import annotations

import json
import math
import sys

import mpmath as mp
import numpy as np
import pytest
import scipy.constants as sc
from click.testing import CliRunner
from scipy.integrate import solve_ivp

import boundkit
from boundkit.cli import main
from boundkit.studies import NuclearRadius

C = 1 / sc.fine_structure                                    # c in atomic units (CODATA, scipy)
BOHR_FM = sc.physical_constants["Bohr radius"][0] * 1e15
MC2 = C**2                                                   # electron rest energy, hartree


def _exterior(E, Z, kappa):
    """(a, b, lambda, xi, zeta, gamma) of the outgoing Dirac-Coulomb solution (module docstring)."""
    W = mp.mpc(E) + C**2
    lam = -1j * mp.sqrt(W**2 - C**4) / C
    a = mp.sqrt(C**2 + W)
    nu = Z / C
    return a, C * lam / a, lam, nu * W / (C * lam), nu * C / lam, mp.sqrt(kappa**2 - nu**2)


def outgoing_PQ(E, Z, kappa, r):
    a, b, lam, xi, zeta, g = _exterior(E, Z, kappa)
    x = 2 * lam * r
    u1 = (kappa + zeta) * mp.whitw(xi - 0.5, g, x) / mp.sqrt(x)
    u2 = mp.whitw(xi + 0.5, g, x) / mp.sqrt(x)
    return a * (u1 + u2), b * (u1 - u2)


def interior_ratio(E, Z, R):
    """Q/P at R of the regular kappa = -1 solution in the uniform sphere V = -Z (3 - r^2/R^2)/(2R)."""
    V = lambda r: -Z * (3 - r * r / (R * R)) / (2 * R)     # noqa: E731
    f = lambda r, y: [y[0] / r + (E - V(r) + 2 * C**2) / C * y[1], -y[1] / r - (E - V(r)) / C * y[0]]  # noqa: E731
    r0 = 1e-6 * R
    y0 = [r0 + 0j, -(E - V(0.0)) / (3 * C) * r0**2 + 0j]       # P ~ r, Q ~ -(E - V0) r^2/(3c) at the origin
    sol = solve_ivp(f, (r0, R), y0, method="DOP853", rtol=1e-13, atol=1e-30)
    P, Q = sol.y[:, -1]
    return Q / P


def siegert_dirac_1s(Z, rms_fm, guess):
    R = math.sqrt(5 / 3) * rms_fm / BOHR_FM
    def mismatch(E):
        P, Q = outgoing_PQ(E, Z, -1, R)
        return interior_ratio(complex(E), Z, R) - complex(Q / P)
    with mp.workdps(20):
        return complex(mp.findroot(mismatch, mp.mpc(guess), solver="secant", tol=1e-18))


def test_outgoing_whittaker_solution_solves_the_dirac_equation():
    E, Z, kappa, r = -43681.08 + 4.47j, 174.7, -1, 2e-4
    with mp.workdps(25):
        P, Q = outgoing_PQ(E, Z, kappa, r)
        dP = mp.diff(lambda t: outgoing_PQ(E, Z, kappa, t)[0], r)
        dQ = mp.diff(lambda t: outgoing_PQ(E, Z, kappa, t)[1], r)
        W = E + C**2
        assert abs(dP - (-kappa * P / r + (W + C**2 + Z / r) * Q / C)) < 1e-12 * abs(dP)
        assert abs(dQ - (kappa * Q / r - (W - C**2 + Z / r) * P / C)) < 1e-12 * abs(dQ)


@pytest.fixture(scope="module")
def dive():
    return boundkit.critical("dirac", "uniform-sphere", {"Z": 160, "rms_fm": NuclearRadius()}, state="1s1/2",
                             vary="Z", beyond=(3, 5))


def test_critical_dive_continues_as_a_resonance(dive):
    assert dive.success and dive.kind == "dive"
    assert 169 < dive.value < 171                     # the diving charge, about 170 for this radius rule
    b3, b5 = dive.beyond
    assert [b.label for b in dive.beyond] == ["1s1/2", "1s1/2"] and all(b.status == "ok" for b in dive.beyond)
    assert b3.value == pytest.approx(dive.value + 3) and b5.value == pytest.approx(dive.value + 5)
    for b in dive.beyond:
        assert b.energy < -2 * MC2 and b.depth == pytest.approx(-(b.energy + 2 * MC2))
        assert b.width > 100 * b.width_error and b.energy_error < 1e-6
    # deeper and wider with Z
    assert b5.depth > b3.depth > 0 and b5.width > 5 * b3.width
    data = dive.to_dict()
    row = data["beyond"][1]
    assert row["units"] == {"energy": "hartree", "width": "hartree", "depth": "hartree"}
    assert row["energy"] == b5.energy and row["width"] == b5.width
    json.dumps(data)


def test_dived_resonance_against_outgoing_wave_shooting(dive):
    b = dive.beyond[1]
    E = siegert_dirac_1s(b.value, NuclearRadius()({"Z": b.value}), guess=b.energy + 1000.0 + 1j)
    # complex scaling puts the dived resonance at E_R + i Gamma/2 (module boundkit.resonances)
    assert E.real == pytest.approx(b.energy, abs=max(10 * b.energy_error, 1e-8))
    assert 2 * E.imag == pytest.approx(b.width, abs=max(10 * b.width_error, 1e-8))


def test_beyond_is_refused_where_it_makes_no_sense():
    with pytest.raises(ValueError, match="beyond: a level is followed past its critical value only when it dives"):
        boundkit.critical("schrodinger", "yukawa", {"Z": 1.0, "screening_length": 2.0}, state="1s",
                          vary="screening_length", kind="unbind", beyond=(0.1,))
    with pytest.raises(ValueError, match=r"only when it dives \(kind='dive'\); this search is kind='unbind'"):
        boundkit.critical("dirac", "yukawa", {"Z": 1.0, "screening_length": 2.0}, state="1s1/2",
                          vary="screening_length", beyond=(0.1,))      # short range: unbinds, refused up front
    with pytest.raises(ValueError, match=r"beyond: distances past the critical value must be finite and > 0"):
        boundkit.critical("dirac", "uniform-sphere", {"Z": 160, "rms_fm": 7.0}, state="1s1/2", vary="Z",
                          beyond=(3, -1))
    with pytest.raises(ValueError, match="beyond: 21 distances is more than 20"):
        boundkit.critical("dirac", "uniform-sphere", {"Z": 160, "rms_fm": 7.0}, state="1s1/2", vary="Z",
                          beyond=range(1, 22))
    with pytest.raises(ValueError, match="beyond: give distances past the critical value"):
        boundkit.critical("dirac", "uniform-sphere", {"Z": 160, "rms_fm": 7.0}, state="1s1/2", vary="Z",
                          beyond="x")


@pytest.mark.parametrize("angles,match", [
    ((0.3, 0.3), r"beyond_angles: the stability test compares every run with the first angle, 0.3 rad"),
    ((0.3,), r"beyond_angles: give at least two scaling angles in \(0, pi/2\) radians"),
    (0.3, r"beyond_angles: give at least two scaling angles in radians, e.g. \(0.25, 0.35\); got 0.3"),
])
def test_beyond_angles_are_checked_before_the_search_under_their_own_name(angles, match):
    """Before: the whole search ran first (minutes), then boundkit.resonances refused the pair naming
    ``angles``, an argument critical does not have."""
    with pytest.raises(ValueError, match=match):
        boundkit.critical("dirac", "uniform-sphere", {"Z": 160, "rms_fm": 7.0}, state="1s1/2", vary="Z",
                          beyond=(3,), beyond_angles=angles)
    with pytest.raises(ValueError, match="beyond_order: must be >= 6, got 4"):
        boundkit.critical("dirac", "uniform-sphere", {"Z": 160, "rms_fm": 7.0}, state="1s1/2", vary="Z",
                          beyond=(3,), beyond_order=4)


def test_a_lost_resonance_is_reported_not_invented(monkeypatch, dive):
    from boundkit.studies.supercritical import follow_dived

    from boundkit.resonances import ResonanceResult

    mod = sys.modules["boundkit.resonances"]

    def nothing(*args, **kwargs):          # a complex-scaling run that finds nothing stable
        return ResonanceResult((), True, "none-stable", "no eigenvalue is stable", "dirac", "uniform-sphere")

    monkeypatch.setattr(mod, "resonances", nothing)
    (b,) = follow_dived("dirac", "uniform-sphere", {"Z": 160, "rms_fm": NuclearRadius()}, label="1s1/2",
                        channel={"kappa": -1}, vary="Z", critical_value=dive.value, direction=1.0,
                        points=dive.points, beyond=(4,))
    assert b.status == "not-found" and math.isnan(b.width)
    assert "1s1/2 not found as a stable eigenvalue below -2 m c^2" in b.message


def test_cli_critical_beyond_error():
    out = CliRunner().invoke(main, ["critical", "-e", "dirac", "--potential", "uniform-sphere", "--param", "Z=160",
                                    "--rms-rule", "1.2,2.5", "--state", "1s1/2", "--vary", "Z", "--beyond", "3,x"])
    assert out.exit_code == 2 and "Traceback" not in out.output
    assert "boundkit: error: --beyond '3,x': write distances separated by commas" in out.output


@pytest.mark.slow
def test_width_growth_law_beyond_diving():
    # Gamma from 2 to 40 charges past diving. Published behaviour (from memory): near Z_cr the
    # positron tunnels through the Coulomb barrier, Gamma ~ exp(-2 pi eta), eta = Z alpha |W|/(p c)
    # (Zeldovich and Popov, Sov. Phys. Usp. 14, 673 (1972)), so Gamma vanishes faster than any power;
    # further out it grows roughly as (Z - Z_cr)^2 (Mueller, Rafelski and Greiner, Z. Phys. 257, 62
    # and 183 (1972); Reinhardt and Greiner, Rep. Prog. Phys. 40, 219 (1977)), a few keV ten charges
    # past diving.
    res = boundkit.critical("dirac", "uniform-sphere", {"Z": 160, "rms_fm": NuclearRadius()}, state="1s1/2",
                            vary="Z", beyond=(2, 3, 5, 10, 20, 28, 40))
    assert all(b.status == "ok" and b.label == "1s1/2" for b in res.beyond), res
    d = np.array([b.distance for b in res.beyond])
    g = np.array([b.width for b in res.beyond])
    assert np.all(np.diff(g) > 0) and np.all(np.diff([b.depth for b in res.beyond]) > 0)
    # threshold: ln Gamma changes like -2 pi eta between the two nearest points (to 10 %)
    def two_pi_eta(b):
        W = MC2 + b.depth                                   # |total energy| of the emitted positron
        return 2 * math.pi * (b.value / C) * W / math.sqrt(W * W - MC2 * MC2)
    b2, b3 = res.beyond[:2]
    ratio = math.log(b3.width / b2.width) / (two_pi_eta(b2) - two_pi_eta(b3))
    assert 0.9 < ratio < 1.1, ratio
    # local power d ln Gamma / d ln (Z - Z_cr): far above 2 near threshold, about 2 at 20-40 past it
    power = np.diff(np.log(g)) / np.diff(np.log(d))
    assert power[1] > 4                                      # 3 -> 5 (measured 5.1)
    assert 1.6 < power[-1] < 2.4 and 1.6 < power[-2] < 2.6   # 20 -> 28 -> 40 (measured 2.1, 1.9)
    keV = 1e-3 * sc.physical_constants["Hartree energy in eV"][0]
    assert 1 < res.beyond[3].width * keV < 10                 # 10 past diving: 3.1 keV measured


def test_cli_beyond_table_follows_the_energy_unit(monkeypatch, dive):
    """The resonances past diving were printed in hartree whatever --units or --energy-unit said."""
    import boundkit.studies
    from boundkit.units import hartree_to

    monkeypatch.setattr(boundkit.studies, "critical", lambda *a, **k: dive)
    out = CliRunner().invoke(main, ["critical", "-e", "dirac", "--potential", "uniform-sphere", "--param", "Z=160",
                                    "--rms-rule", "1.2,2.5", "--state", "1s1/2", "--vary", "Z", "--beyond", "3,5",
                                    "--units", "nuclear"])
    assert out.exit_code == 0, out.output
    assert "(complex scaling), MeV:" in out.output
    for b in dive.beyond:
        row = next(line for line in out.output.splitlines() if line.split()[:1] == [f"{b.value:.10g}"])
        assert float(row.split()[2]) == pytest.approx(hartree_to(b.energy, "MeV"), rel=1e-11)
        assert float(row.split()[4]) == pytest.approx(hartree_to(b.width, "MeV"), rel=1e-7)


def test_a_dived_resonance_message_quotes_energies_in_the_unit_asked(dive):
    """The messages of the resonances past diving said hartree whatever unit the critical search was asked in.
    The same point as dive.beyond[0] (3 past diving), in keV: the factor from CODATA via scipy.constants."""
    import re

    from boundkit.studies.supercritical import follow_dived

    kev = 1e-3 * sc.physical_constants["Hartree energy in eV"][0]
    (b,) = follow_dived("dirac", "uniform-sphere", {"Z": 160, "rms_fm": NuclearRadius()}, label="1s1/2",
                        channel={"kappa": -1}, vary="Z", critical_value=dive.value, direction=1.0,
                        points=dive.points, beyond=(3,), energy_unit="keV")
    ref = dive.beyond[0]
    assert b.status == ref.status == "ok"
    got = re.fullmatch(r"E = (\S+) \+ i Gamma/2, Gamma = (\S+) keV \((\S+) keV below -2 m c\^2\)", b.message)
    assert got is not None, b.message
    for text, hartree, digits in zip(got.groups(), (ref.energy, ref.width, ref.depth), (12, 6, 6)):
        assert float(text) == pytest.approx(hartree * kev, rel=10.0 ** (1 - digits))
    assert "hartree" in ref.message            # the default stays hartree
