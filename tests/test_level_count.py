"""The number of bound levels of a short-range potential (levels='all'), checked by a scaling law.

The Schrodinger equation with mass m in V(r) is, with s = sqrt(m) r, the equation with mass 1 in
V(s / sqrt(m)), at the same energies (common practice: a change of length unit). A Yukawa potential
-Z exp(-r / lambda) / r thus has the levels of -Z sqrt(m) exp(-s / (lambda sqrt(m))) / s for an electron:
the same number of them and the same energies.

Before: a muon in Yukawa(Z = 1.129, lambda = 8.2 bohr) had 44 bound s levels and the electron in the scaled
potential 43, both with status 'ok' and 'all ... bound level(s)'. The levels were counted on a far box of
1e4 natural lengths (22 bohr for the muon), but the top level (-0.00187 hartree) turns round at 25.8 bohr:
the box squeezed it up to the threshold, and 2 % of difference in the two natural lengths decided which
side of it. The far box now also reaches ten times the radius beyond which 2 m r^2 |V| < 1e-3.
"""
from __future__ import annotations

import math
import re

import numpy as np
import pytest

import boundkit


@pytest.mark.parametrize("potential, params, scaled", [
    ("yukawa", {"Z": 1.128892320192634, "screening_length": 8.201338958553052},
     lambda p, s: {"Z": p["Z"] * s, "screening_length": p["screening_length"] * s}),
    ("hulthen", {"Z": 4.479961372072959, "delta": 0.06807964816260993},
     lambda p, s: {"Z": p["Z"] * s, "delta": p["delta"] / s}),
])
def test_level_count_obeys_the_scaling_law(potential, params, scaled):
    heavy = boundkit.solve("schrodinger", potential, params, l=0, levels="all", tol=1e-8, particle="muon")
    s = math.sqrt(heavy.settings["mass_atomic_units"])
    light = boundkit.solve("schrodinger", potential, scaled(params, s), l=0, levels="all", tol=1e-8)
    assert heavy.status == light.status == "ok"
    assert len(heavy.levels) == len(light.levels)
    for a, b in zip(heavy.levels, light.levels):
        assert a.label == b.label
        assert abs(a.energy - b.energy) <= 2 * (a.error_estimate + b.error_estimate), (a.label, a.energy, b.energy)


def test_hulthen_count_is_the_exact_one():
    """Hulthen s levels exist for n < sqrt(2 Z m / delta) (E_n = -(Z m / n - n delta / 2)^2 / (2 m); Flugge 1971,
    from memory): 61 levels for Z = 4.48 with a muon and delta = 0.0681."""
    res = boundkit.solve("schrodinger", "hulthen", {"Z": 4.479961372072959, "delta": 0.06807964816260993}, l=0,
                         levels="all", tol=1e-8, particle="muon")
    m = res.settings["mass_atomic_units"]
    assert len(res.levels) == math.ceil(math.sqrt(2 * 4.479961372072959 * m / 0.06807964816260993)) - 1


@pytest.mark.parametrize("l", [0, 1])
def test_morse_well_behind_a_huge_core_is_found(l):
    """A pion in a Morse well with a r_e = 50: the core reaches 1e43 hartree. Its strength set the
    natural length to 1e-14 bohr, the far box and the search for the well (up to 1e10 natural
    lengths) never reached the well at 7 bohr, and the answer was 'no bound level', status ok. The
    natural length now starts at the well's inner edge. l = 0 against the exact Morse levels
    E_v = -(a^2 / 2m)(lambda - v - 1/2)^2, lambda = sqrt(2 m D) / a (Morse, Phys. Rev. 34, 57, 1929; the
    half-line correction is of order exp(-lambda e^(a r_e)), far below double precision); l = 1 has
    the same number of levels (its centrifugal energy, 1/(m r_e^2) ~ 7e-5 hartree, is far below the top
    level's binding)."""
    D, a, re = 2.476938255733866, 7.079457843841379, 7.079457843841379
    res = boundkit.solve("schrodinger", "morse", {"D": D, "a": a, "r_e": re}, l=l, levels="all", tol=1e-12,
                         particle="pion")
    assert res.status == "ok", res.message
    m = res.settings["mass_atomic_units"]
    lam = math.sqrt(2 * m * D) / a
    exact = [-(a * a / (2 * m)) * (lam - v - 0.5) ** 2 for v in range(math.ceil(lam - 0.5))]
    assert len(exact) == 5 and len(res.levels) == 5
    if l == 0:
        for lv, E in zip(res.levels, exact):
            assert abs(lv.energy - E) <= max(lv.error_estimate, 1e-14 * abs(E)), (lv.label, lv.energy, E)


def test_the_all_levels_message_of_a_huge_counting_box_says_what_was_found():
    """A proton in a nucleus (a Woods-Saxon well and a repulsive uniformly charged sphere, Z = -82 in the tail;
    demonstration values) is counted on a box of 5e13 fm, and the message said 'a level bound by less than
    about 7e-27 MeV ... is not counted': far below the last digit of any energy of the well (a reviewer).
    The count's box is now open to the exterior and misses no such level; the message says what was found."""
    res = boundkit.solve("schrodinger", ["woods-saxon", "uniform-sphere"],
                         {"depth": 50.0, "radius": 7.0, "diffuseness": 0.65, "Z": -82.0, "rms_fm": 5.5},
                         units="nuclear", particle="proton", l=0, levels="all")
    assert res.status == "ok", res.message
    assert re.fullmatch(r"all \d+ bound level\(s\) of this channel; estimated relative error <= \S+ \(tol 1e-10\)",
                        res.message), res.message


def _well_in_repulsive_coulomb(V0: float, R: float, Z: float) -> list[float]:
    """Bound s levels (hartree, m = 1) of V = -V0 inside R and +Z/r outside, by matching at R: sin(k r)
    inside (k = sqrt(2 (E + V0))), Whittaker's W_{-Z/q, 1/2}(2 q r) outside (q = sqrt(-2 E); the decaying
    solution of the Coulomb equation, e.g. Abramowitz and Stegun 13.1.33, from memory); the roots of the
    Wronskian k cos(kR) W - sin(kR) W' (no poles), bracketed on 60 energies, at 30 digits."""
    import mpmath as mp

    with mp.workdps(30):
        def wronskian(E):
            k, q = mp.sqrt(2 * (E + V0)), mp.sqrt(-2 * E)
            W = lambda r: mp.whitw(-Z / q, mp.mpf(1) / 2, 2 * q * r)  # noqa: E731
            return k * mp.cos(k * R) * W(R) - mp.sin(k * R) * mp.diff(W, R)

        grid = np.linspace(-V0 + 1e-3, -1e-3, 60)
        vals = [wronskian(mp.mpf(E)) for E in grid]
        return [float(mp.findroot(wronskian, (mp.mpf(a), mp.mpf(b)), solver="anderson"))
                for a, b, fa, fb in zip(grid[:-1], grid[1:], vals[:-1], vals[1:]) if fa * fb < 0]


def test_a_repulsive_coulomb_tail_binds_finitely_many_levels_and_all_are_found():
    """A proton in a nucleus sees a repulsive Coulomb tail: finitely many levels. Before: levels='all' was
    refused ('has a Coulomb tail and binds infinitely many'), and asking for more levels than exist gave
    'partial ... levels too close to the threshold?' (a tester; the Dirac relativistic-mean-field case agreed
    with its shooting to 1e-10 MeV once counted on the far box). Here against an exact matching."""
    V0, R, Z = 30.0, 1.0, 1.0
    exact = _well_in_repulsive_coulomb(V0, R, Z)
    assert len(exact) == 2
    V = lambda r: np.where(r < R, -V0, Z / r)  # noqa: E731
    for levels in ("all", 2, 5):
        res = boundkit.solve("schrodinger", V, l=0, levels=levels, tol=1e-10)
        assert res.status == "ok", res.message
        assert res.diagnostics["bound_count"] == 2
        assert len(res.levels) == 2
        for lv, E in zip(res.levels, exact):
            assert abs(lv.energy - E) <= max(lv.error_estimate, 1e-13 * abs(E)), (lv.label, lv.energy - E)


def test_a_dirac_well_that_binds_nothing_is_not_counted_below_its_window():
    """Found by the thorough fuzz run: the Dirac exp-cosine well Z = 1, D = 0.01 bohr (Z D far below what a
    1/r-like well needs to bind: the Schrodinger count is 0) counted one state below the window's bottom and
    none below its top; the bound count came out -1 and the locator raised an IndexError. Now no level, status
    ok, as the Schrodinger equation says."""
    kw = dict(levels=1, tol=1e-6)
    dirac = boundkit.solve("dirac", "exp-cosine", {"Z": 1.0, "screening_length": 0.01}, kappa=-1, **kw)
    schr = boundkit.solve("schrodinger", "exp-cosine", {"Z": 1.0, "screening_length": 0.01}, l=0, **kw)
    assert schr.levels == () and schr.status == "ok"
    assert dirac.levels == () and dirac.status == "ok", dirac.message
    assert dirac.diagnostics["bound_count"] == 0
