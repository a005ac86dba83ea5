"""Which roots of the relativistic equations are particle levels, and how many a short-range well holds.

Klein-Gordon: the energy enters K(E) quadratically, dK/dE = -(E + m c^2 - V)/(m c^2) (times the
mass), so a root of det K(E) = 0 can be a particle level (positive charge, the conserved norm
int (E + m c^2 - V) P^2 dr > 0) or an antiparticle level (negative charge). With a Lorentz-scalar
potential alone the equation depends on the total energy W = E + m c^2 only through W^2, and every
particle level W has its antiparticle mirror -W in the window (-2 m c^2, 0).

Before: the scalar Coulomb Z = 300 1s came back as -30112.06 hartree (the mirror, total energy
-11333.2 hartree, negative norm) with status ok, and Z = 250 with levels=1 found nothing ('partial').

Dirac and Klein-Gordon square wells (nuclear units, an electron): once the 1s has dived (Dirac) or
merged with its antiparticle partner (Klein-Gordon), the far box still counted it as bound, and the
solve said 'partial - found 0 of 1' (or 1 of 2) although every existing level had been found.

References: the matching conditions below, solved with mpmath at run time (common practice: a
square well's interior solution is a spherical Bessel function j_l, the exterior one a modified
spherical Bessel function k_l; the Dirac s1/2 condition matches F/G, the Klein-Gordon one u'/u).
The scalar-Coulomb Klein-Gordon levels: with V = 0 and S = -Z/r the radial equation is the
Schrodinger-Coulomb one with l(l+1) -> l(l+1) + (Z alpha)^2 and charge m Z, so
W = m c^2 [1 - (Z alpha)^2 / (n_r + 1/2 + sqrt((l + 1/2)^2 + (Z alpha)^2))^2]^(1/2) (derived here by
the same substitution as the vector case, Greiner, Relativistic Quantum Mechanics: Wave Equations,
2000).
"""
from __future__ import annotations

import pytest

import boundkit
from boundkit.potentials.expression import ExpressionTerm

R_FM = 100.0      # square-well radius, fm


def _constants():
    import mpmath as mp
    from scipy.constants import physical_constants as pc

    hbarc = mp.mpf(pc["reduced Planck constant times c in MeV fm"][0])
    m = mp.mpf(pc["electron mass energy equivalent in MeV"][0])
    return mp, hbarc, m


def _square_well_roots(equation: str, V0: float) -> list[float]:
    """Binding energies (MeV) of the s (Klein-Gordon l = 0) or s1/2 (Dirac kappa = -1) levels of
    -V0 inside R_FM, by sign changes of the matching determinant on a fine grid and mpmath's root finder."""
    mp, hbarc, m = _constants()
    mp.mp.dps = 30
    V0 = mp.mpf(V0)
    R = mp.mpf(R_FM)

    def det(E):
        W = E + m
        p = mp.sqrt((W + V0) ** 2 - m * m) / hbarc
        q = mp.sqrt(m * m - W * W) / hbarc
        x = p * R
        if equation == "klein-gordon":     # u = sin(p r) inside, exp(-q r) outside: p cot(pR) = -q
            return mp.cos(x) + q * mp.sin(x) / p
        # Dirac kappa = -1: G = r j0(p r), F = hbar c r g'/(W + m - V); outside g = k0(q r);
        # p j1 / ((W + m + V0) j0) = q k1 / ((W + m) k0), multiplied out (no poles)
        j0, j1 = mp.sin(x) / x, mp.sin(x) / x**2 - mp.cos(x) / x
        return p * j1 * (W + m) - q * (1 + 1 / (q * R)) * (W + m + V0) * j0

    lo, hi = -2 * m * (1 - mp.mpf(10) ** -12), -mp.mpf(10) ** -12
    n = 3000
    out, prev = [], None
    for i in range(n + 1):
        E = lo + (hi - lo) * i / n
        v = det(E)
        if prev is not None and mp.sign(v) != mp.sign(prev[1]):
            out.append(float(mp.findroot(det, (prev[0], E), solver="illinois")))
        prev = (E, v)
    return out


# the square wells are compared to 1e-10 relative: the CODATA values of the hartree, the bohr radius, m_e c^2
# and hbar c that convert nuclear units agree with each other only to about 1e-11
# (E_h / (alpha^2 m_e c^2) - 1 = 1.4e-11), and both wells' levels sit 5e-11 relative from the references


def _well(equation: str, V0: float, **kw):
    return boundkit.solve(equation, ExpressionTerm("where(r < 100, -V0, 0)", {"V0": V0}), {},
                          units="nuclear", levels="all", **kw)


def test_square_well_references_are_what_the_tester_reported():
    # the mpmath matching reproduces the tester's scan (6e-6 MeV grid) and has the expected structure
    assert _square_well_roots("dirac", 8.0) == []
    assert _square_well_roots("dirac", 12.0) == pytest.approx([-0.5038603], abs=3e-6)
    assert _square_well_roots("klein-gordon", 3.7) == pytest.approx([-1.0140005, -0.8433185], abs=3e-6)
    assert _square_well_roots("klein-gordon", 3.8) == []


@pytest.mark.parametrize("V0", [6.0, 8.0, 12.0])
def test_dirac_square_well_counts_no_dived_level(V0):
    exact = _square_well_roots("dirac", V0)
    res = _well("dirac", V0, kappa=-1)
    assert res.status == "ok", res.message
    assert res.diagnostics["bound_count"] == len(exact)
    assert len(res.levels) == len(exact)
    for lv, E in zip(res.levels, exact):
        got, err = lv.energy_in("MeV"), lv.error_in("MeV")
        assert abs(got - E) <= max(4 * err, 1e-10 * abs(E)), (lv.label, got, E)
    if V0 > 6:      # the 1s has dived: the level found (if any) keeps its node count
        assert any("dived" in note for note in res.diagnostics["notes"])
        assert all(lv.nodes >= 1 for lv in res.levels)


@pytest.mark.parametrize("V0", [3.0, 3.7, 3.8])
def test_klein_gordon_square_well_counts_particle_levels_only(V0):
    exact = _square_well_roots("klein-gordon", V0)
    particles = exact[-1:]          # the upper root of a pair is the particle level (positive charge)
    res = _well("klein-gordon", V0, l=0)
    assert res.status == "ok", res.message
    assert res.diagnostics["bound_count"] == len(particles)
    assert [lv.label for lv in res.levels] == ["1s"] * len(particles)
    for lv, E in zip(res.levels, particles):
        got, err = lv.energy_in("MeV"), lv.error_in("MeV")
        assert abs(got - E) <= max(4 * err, 1e-10 * abs(E)), (got, E)
    if V0 == 3.8:
        assert any("merged" in note for note in res.diagnostics["notes"])


def _scalar_coulomb_kg(Z: int, n_r: int) -> float:
    import mpmath as mp
    from scipy.constants import alpha

    mp.mp.dps = 30
    c = 1 / mp.mpf(alpha)
    za = Z / c
    N = n_r + mp.mpf(1) / 2 + mp.sqrt(mp.mpf(1) / 4 + za**2)
    return float(c * c * (mp.sqrt(1 - (za / N) ** 2) - 1))


@pytest.mark.parametrize("Z, levels", [(300, 2), (250, 1), (250, 2), (50, 2)])
def test_klein_gordon_scalar_coulomb_finds_particle_levels(Z, levels):
    import warnings

    with warnings.catch_warnings():
        warnings.simplefilter("error", RuntimeWarning)      # a negative norm met a square root before
        res = boundkit.solve("klein-gordon", [], {"Z": Z}, scalar="coulomb", levels=levels)
    assert res.status == "ok", res.message
    assert len(res.levels) == levels
    for n_r, lv in enumerate(res.levels):
        E = _scalar_coulomb_kg(Z, n_r)
        assert lv.nodes == n_r
        assert abs(lv.energy - E) <= max(4 * lv.error_estimate, 1e-12 * abs(E)), (lv.label, lv.energy, E)
        assert lv.state.density_weight is not None
        # positive charge: the particle, not its mirror
        assert float((lv.state.weights * lv.state.density_weight * lv.state.P**2).sum()) > 0


def test_scalar_coulomb_reference_matches_the_exact_module():
    # boundkit.exact has the vector case only; at Z alpha small the scalar and vector 1s agree to first
    # order in (Z alpha)^2 (both tend to the Schrodinger -Z^2/2), a check that the formula above is scaled right
    from boundkit import exact

    E_s, E_v = _scalar_coulomb_kg(1, 0), exact.klein_gordon_coulomb(1, 1, 0)
    assert abs(E_s + 0.5) < 1e-4 and abs(E_v + 0.5) < 1e-4


def test_a_root_of_negative_charge_is_dropped_not_reported(monkeypatch):
    # the safety net behind the particle floor: with the window's old bottom (-2 m c^2) the mirror of
    # the 1s (negative charge) is located and certified by the count; it must not be reported as a level
    import warnings

    import boundkit.solver as solver

    monkeypatch.setattr(solver, "_particle_floor_by_bound", lambda eq, sample, r_min, lo: (lo, None))
    with warnings.catch_warnings():
        warnings.simplefilter("error", RuntimeWarning)
        res = boundkit.solve("klein-gordon", [], {"Z": 300}, scalar="coulomb", levels=2)
    assert res.status == "partial"
    assert "negative charge" in res.message
    assert any("antiparticle state); dropped" in note for note in res.diagnostics["notes"])
    assert [lv.label for lv in res.levels] == ["2s"]
    assert abs(res.levels[0].energy - _scalar_coulomb_kg(300, 1)) <= 4 * res.levels[0].error_estimate + 1e-12 * 3541


# --- a scalar potential that tends to a constant far out -------------------------------------------------
def test_a_schrodinger_scalar_far_constant_moves_the_threshold():
    """The Schrodinger equation sees V + S: hydrogen plus a scalar constant 0.1 hartree has the levels
    -1/(2 n^2) + 0.1 (Bohr; common practice), two of them above 0. Before: the threshold stayed at 0 and
    levels=4 was 'partial, found 2 of 4'."""
    res = boundkit.solve("schrodinger", "coulomb", {"Z": 1}, scalar=lambda r: 0.1 + 0 * r, levels=4)
    assert res.status == "ok", res.message
    assert [lv.energy for lv in res.levels] == pytest.approx([-1 / (2 * n * n) + 0.1 for n in range(1, 5)],
                                                             abs=1e-13)


@pytest.mark.parametrize("equation,channel", [("dirac", {"kappa": -1}), ("klein-gordon", {"l": 0})])
@pytest.mark.parametrize("s_inf", [30.0, -30.0])
def test_a_relativistic_scalar_far_constant_is_refused_with_the_mass_recipe(equation, channel, s_inf):
    """Far out a scalar constant S_inf is a change of mass, and the continuum starts at S_inf. Before: with
    S_inf = +30 MeV the levels between 0 and 30 MeV were dropped with status ok; with -30 MeV the box grew
    until a MemoryError (a tester, against a shooting of both equations). The recipe is an identity of both
    equations (m and S enter only as m c^2 + S): the same well with the mass raised by S_inf."""
    m = 938.272089
    well = "-50/(1 + exp((r - 5)/0.6))"
    with pytest.raises(ValueError, match=(rf"^potential: the scalar part tends to S_inf = {s_inf:g} MeV far out, a "
                                          rf"change of mass there; the {equation} solver needs a scalar that vanishes "
                                          rf"far out: give mass_mev={m + s_inf:.10g} \(--mass-mev\) and the scalar "
                                          r"minus S_inf")):
        boundkit.solve(equation, ExpressionTerm(well, {}), scalar=ExpressionTerm(f"{s_inf} + 0*r", {}),
                       units="nuclear", mass_mev=m, levels="all", **channel)
    from click.testing import CliRunner

    from boundkit.cli import main
    out = CliRunner().invoke(main, ["solve", "-e", equation, "--units", "nuclear", "--mass-mev", str(m), "--expr", well,
                                    "--scalar-expr", f"{s_inf} + 0*r", "--levels", "all",
                                    *(["--kappa", "-1"] if equation == "dirac" else [])])
    assert out.exit_code == 2 and "Traceback" not in out.output
    assert f"give mass_mev={m + s_inf:.10g} (--mass-mev)" in out.output


@pytest.mark.parametrize("equation,channel", [("dirac", {"kappa": -1}), ("klein-gordon", {"l": 0})])
@pytest.mark.parametrize("s_inf", [30.0, -30.0])
def test_the_engine_refuses_a_relativistic_scalar_far_constant_too(equation, channel, s_inf):
    """`solve_channel` and `prepare_channel` are public and take an equation and a potential built without
    `setup`, whose check alone refused a far scalar constant: solve_channel dropped the levels between 0 and
    S_inf = +30 MeV (status ok, one level of the well where the shifted well has more). Same message, in
    the units the settings carry (hartree without settings)."""
    import re

    import scipy.constants as sc

    from boundkit.potentials import make_potential
    from boundkit.solver import get_method, make_equation, prepare_channel, solve_channel
    from boundkit.units import mass_mev_to_au

    m = 938.272089
    eq = make_equation(equation, mass=mass_mev_to_au(m), **channel)
    pot = make_potential(ExpressionTerm("-50/(1 + exp((r - 5)/0.6))", {}),
                         scalar=ExpressionTerm(f"{s_inf} + 0*r", {}), units="nuclear")
    recipe = rf"give mass_mev={m + s_inf:.10g} \(--mass-mev\) and the scalar minus S_inf"
    with pytest.raises(ValueError, match=rf"^potential: the scalar part tends to S_inf = {s_inf:g} MeV far out, a "
                                         rf"change of mass there; the {equation} solver .*{recipe}"):
        solve_channel(eq, pot, get_method("spectral"), None, settings={"units": "nuclear"})
    # 1 hartree = 27.211386... eV (CODATA 2018 through scipy.constants)
    in_hartree = s_inf * 1e6 / sc.physical_constants["Hartree energy in eV"][0]
    for call in (lambda: solve_channel(eq, pot, get_method("finite-difference"), 1),
                 lambda: prepare_channel(eq, pot, 1)):
        value = re.escape(f"{in_hartree:.6g}")
        with pytest.raises(ValueError, match=rf"^potential: the scalar part tends to S_inf = {value} hartree far out, "
                                             rf".*{recipe}"):
            call()
