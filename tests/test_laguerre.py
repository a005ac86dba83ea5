"""The one-matrix Lagrange-Laguerre path of the spectral family (boundkit.laguerre_solver).

Checks from outside the project: the hydrogen levels -Z^2/(2 n^2) and radial
functions (Bethe and Salpeter, Quantum Mechanics of One- and Two-Electron
Atoms, 1957, eqs. 3.16-3.17); the kinetic matrix against its definition,
differentiated in 40-digit arithmetic with mpmath. Potentials without a closed
form are compared with the spectral-element path, which is itself checked
against exact cases and independent integrations elsewhere in the suite.
"""
from __future__ import annotations

import math

import mpmath as mp
import numpy as np
import pytest
from scipy.special import eval_genlaguerre, factorial

import boundkit
import boundkit.laguerre_solver as lag
from boundkit.discretize.laguerre import cardinal_matrix, laguerre_mesh


def _elements_only(monkeypatch):
    monkeypatch.setattr(lag, "applies", lambda *a, **k: False)


def _hydrogen_P(n: int, l: int, r, Z: float = 1.0):
    """r R_nl(r) of hydrogen (Bethe and Salpeter 1957, eq. 3.17), normalised to 1 over dr."""
    rho = 2 * Z * r / n
    norm = math.sqrt((2 * Z / n) ** 3 * factorial(n - l - 1) / (2 * n * factorial(n + l)))
    return norm * np.exp(-rho / 2) * rho**l * eval_genlaguerre(n - l - 1, 2 * l + 1, rho) * r


# --- the mesh ---------------------------------------------------------------------------------

@pytest.mark.parametrize("n", [4, 7])
def test_kinetic_matrix_is_the_collocation_second_derivative(n):
    """T_ij = -lambda_i^(1/2) f_j''(x_i), f_j = C_j / lambda_j^(1/2), in 40-digit arithmetic."""
    mp.mp.dps = 40
    try:
        mesh = laguerre_mesh(n)
        x = [mp.findroot(lambda t: mp.laguerre(n, 0, t), mp.mpf(float(v))) for v in mesh.x]
        # L_N in power form, then L_N(t) / (t - x_j) by synthetic division (no removable 0/0)
        c = [(-1) ** k * mp.binomial(n, k) / mp.factorial(k) for k in range(n + 1)][::-1]

        def quotient(xj):
            q, acc = [], mp.mpf(0)
            for ck in c[:-1]:
                acc = acc * xj + ck
                q.append(acc)
            return q

        dL = [mp.polyval(quotient(xj), xj) for xj in x]
        lam = [mp.e**xj / (xj * d**2) for xj, d in zip(x, dL)]
        T = np.empty((n, n))
        for j in range(n):
            q = quotient(x[j])

            def f(t, j=j, q=q):
                return (t / x[j]) * mp.polyval(q, t) / dL[j] * mp.e ** (-(t - x[j]) / 2) / mp.sqrt(lam[j])

            for i in range(n):
                T[i, j] = float(-mp.sqrt(lam[i]) * mp.diff(f, x[i], 2))
    finally:
        mp.mp.dps = 15
    assert np.max(np.abs(T - mesh.T)) <= 1e-12 * np.max(np.abs(mesh.T))
    assert np.allclose(mesh.weights, [float(v) for v in lam], rtol=1e-12, atol=0)


def test_kinetic_matrix_is_its_closed_form_at_the_exact_zeros_correctly_rounded(laguerre_builder):
    """The closed form of T (Baye 2015; see laguerre_mesh) evaluated at the zeros of L_111 found in
    30-digit arithmetic (mpmath Newton steps from the mesh's nodes, L_N' = N (L_N - L_(N-1)) / x:
    standard). Built on scipy's double zeros (up to 4.5e-16 off) its entries were up to 9.1e-15
    (relative) off, enough to move the hydrogen n = 20..40 states' <r^-2> by 1e-13
    (tests/test_error_estimates_hydrogen.py). Both builders; the nodes, L_N'(x_j) and the Gauss
    weights e^x / (x L_N'^2) too (the extended builder's L_N' near x = 0 is good to 1.7e-14 only,
    the recurrence's rounding in 64-bit mantissas)."""
    n = 111
    mesh = laguerre_mesh(n)
    mp.mp.dps = 30
    try:
        X = []
        for v in mesh.x:
            R = mp.mpf(float(v))
            for _ in range(3):
                L = mp.laguerre(n, 0, R)
                R = R - R * L / (n * (L - mp.laguerre(n - 1, 0, R)))
            X.append(R)
        dL = [-n * mp.laguerre(n - 1, 0, R) / R for R in X]
        assert max(float(abs(mesh.x[j] / X[j] - 1)) for j in range(n)) <= 2.3e-16
        assert max(float(abs(mesh.dL[j] / dL[j] - 1)) for j in range(n)) <= (2e-16 if laguerre_builder != "extended"
                                                                             else 2e-14)
        assert max(float(abs(mesh.weights[j] / (mp.e ** X[j] / (X[j] * dL[j] ** 2)) - 1))
                   for j in range(n)) <= (1e-15 if laguerre_builder != "extended" else 5e-14)
        worst = 0.0
        for i in range(n):
            for j in range(n):
                if i == j:
                    t = (4 + (4 * n + 2) * X[i] - X[i] ** 2) / (12 * X[i] ** 2)
                else:
                    t = (-1) ** (i - j) * (X[i] + X[j]) / (mp.sqrt(X[i] * X[j]) * (X[i] - X[j]) ** 2)
                worst = max(worst, float(abs(mesh.T[i, j] / t - 1)))
    finally:
        mp.mp.dps = 15
    assert worst <= 2.5e-16


def test_cardinal_functions_are_one_at_their_node_and_zero_at_the_others():
    mesh = laguerre_mesh(9)
    C = cardinal_matrix(mesh, mesh.x)
    assert np.array_equal(C, np.eye(9))
    near = cardinal_matrix(mesh, mesh.x * (1 + 1e-9))
    assert np.max(np.abs(near - np.eye(9))) < 1e-6


def test_mesh_rejects_fewer_than_two_nodes():
    with pytest.raises(ValueError, match="n: a Laguerre mesh needs at least 2 nodes"):
        laguerre_mesh(1)


def test_weights_stay_finite_where_e_to_the_x_overflows(laguerre_builder):
    mesh = laguerre_mesh(230)         # x_N ~ 900: e^x alone overflows
    assert np.all(np.isfinite(mesh.weights)) and np.all(mesh.weights > 0)


# --- hydrogen: exact levels and functions ----------------------------------------------------

@pytest.mark.parametrize("l", [0, 1, 3])
@pytest.mark.parametrize("levels", [1, 5, 12])
@pytest.mark.parametrize("tol", [1e-6, 1e-10, 1e-13])
def test_hydrogen_levels_exact_with_honest_estimates(l, levels, tol):
    res = boundkit.solve("schrodinger", "coulomb", {"Z": 1}, l=l, levels=levels, tol=tol)
    assert res.diagnostics["mesh"] == "lagrange-laguerre"
    assert res.success and len(res.levels) == levels
    for k, lv in enumerate(res.levels):
        n = k + l + 1
        exact = -1 / (2 * n**2)
        assert lv.n == n and lv.nodes == k
        assert abs(lv.energy - exact) <= lv.error_estimate + 4e-15 * abs(exact), lv.label
        assert lv.error_estimate <= tol * abs(exact)


def test_scaled_charge_and_mass_follow_the_hydrogen_scaling():
    """E = -mu Z^2 / (2 n^2) with the muon mass the solve states (CODATA, in electron masses) on Z = 6;
    that mass agrees with scipy.constants' muon-electron mass ratio to 1e-9."""
    import scipy.constants as sc
    res = boundkit.solve("schrodinger", "coulomb", {"Z": 6}, l=1, levels=3, tol=1e-12, particle="muon")
    mu = res.settings["mass_atomic_units"]
    assert abs(mu / sc.physical_constants["muon-electron mass ratio"][0] - 1) < 1e-9
    assert res.diagnostics["mesh"] == "lagrange-laguerre"
    for k, lv in enumerate(res.levels):
        exact = -mu * 36 / (2 * (k + 2) ** 2)
        assert abs(lv.energy / exact - 1) < 1e-13


def test_hydrogen_radial_functions_match_bethe_salpeter():
    res = boundkit.solve("schrodinger", "coulomb", {"Z": 1}, l=0, levels=5, tol=1e-12)
    for lv in res.levels:
        r = np.geomspace(1e-4, 4 * lv.n**2, 2000)
        exact = _hydrogen_P(lv.n, 0, r)
        assert np.max(np.abs(lv.state(r) - exact)) < 1e-10 * np.max(np.abs(exact)), lv.label
        assert lv.previous_state is not None


def test_convergence_is_geometric_in_the_number_of_nodes():
    """log10 of the worst error of the 5 lowest s-levels falls linearly in N (spectral convergence):
    measured slope -0.37 decades per node between N = 14 and 30."""
    from boundkit.equations.schrodinger import Schrodinger
    from boundkit.potentials import make_potential
    from boundkit.solver import _sample

    pot = make_potential("coulomb", {"Z": 1})
    eq = Schrodinger(l=0)
    exact = -1 / (2 * np.arange(1, 6) ** 2.0)
    sizes = np.arange(14, 31, 4)
    errs = []
    for N in sizes:
        mesh = laguerre_mesh(int(N))
        E, _, _, _ = lag._levels_on(eq, lambda r: _sample(pot, r), mesh, 300 / mesh.x[-1], 5)
        errs.append(np.max(np.abs(E / exact - 1)))
    slope = np.polyfit(sizes, np.log10(errs), 1)[0]
    assert slope < -0.3
    assert errs[-1] < 1e-6          # measured 4.4e-7 at N = 30


# --- other Coulomb-tailed potentials: the same numbers as the elements ------------------------

def _agree(fast, slow, tol: float, slack: float = 0.0) -> None:
    """Same labels, and energies equal within both estimates plus tol (and ``slack``) relative."""
    assert [lv.label for lv in fast.levels] == [lv.label for lv in slow.levels]
    for x, y in zip(fast.levels, slow.levels):
        assert abs(x.energy - y.energy) <= (tol + slack) * abs(y.energy) + x.error_estimate + y.error_estimate, \
            (x.label, x.energy, y.energy)


def _agree_when_solvable(monkeypatch, V, tol: float, **kw):
    """Both paths on V, compared with :func:`_agree` (slack 3e-14); (fast, slow), or None when the
    channel is refused (a random potential that binds nothing)."""
    try:
        fast, slow = _both(monkeypatch, "schrodinger", V, tol=tol, **kw)
    except ValueError:
        return None
    _agree(fast, slow, tol, slack=3e-14)
    return fast, slow


def _both(monkeypatch, *args, **kw):
    fast = boundkit.solve(*args, **kw)
    with monkeypatch.context() as m:
        _elements_only(m)
        slow = boundkit.solve(*args, **kw)
    if slow.diagnostics["mesh"] is None:      # a Schrodinger potential repulsive everywhere: no solve at all
        assert slow.diagnostics["bound_count"] == 0 and not slow.levels and not fast.levels
        assert "nowhere attractive" in slow.message and "nowhere attractive" in fast.message
    else:
        assert slow.diagnostics["mesh"] == "spectral-elements"
    return fast, slow


@pytest.mark.parametrize("l", [0, 2])
def test_screened_core_agrees_with_the_elements(monkeypatch, l):
    """A Coulomb tail with a smooth, more attractive core (charge 3 inside, 1 outside)."""
    def V(r):
        return -(1 + 2 * np.exp(-r / 0.8)) / r

    fast, slow = _both(monkeypatch, "schrodinger", V, l=l, levels=6, tol=1e-11)
    assert fast.diagnostics["mesh"] == "lagrange-laguerre"
    _agree(fast, slow, 1e-11)


def test_repulsive_core_widens_the_mesh_and_agrees(monkeypatch):
    """Levels less bound than hydrogen's: the first scale is too short, and the path moves it out."""
    def V(r):
        return -1 / r + 3 * np.exp(-r / 2) / r

    fast, slow = _both(monkeypatch, "schrodinger", V, l=0, levels=4, tol=1e-10)
    assert fast.diagnostics["mesh"] == "lagrange-laguerre"
    _agree(fast, slow, 1e-10)


@pytest.mark.parametrize("l,j,levels", [(0, 0.5, 2), (1, 1.5, 3)])
def test_a_nuclear_well_tightens_the_box_and_agrees(monkeypatch, l, j, levels):
    """A Woods-Saxon neutron well binds far more tightly than the hydrogen-like first scale assumes
    (its top level had decayed by 100 to 230 e-folds at the last node): the box is tightened once,
    to where that level has decayed by e^-32, and the levels agree with the elements."""
    par = {"depth": 60.0, "radius": 7.0, "diffuseness": 0.5, "spin_orbit": 10.0} if l else \
        {"depth": 50.0, "radius": 5.0, "diffuseness": 0.6, "spin_orbit": 20.0}
    fast, slow = _both(monkeypatch, "schrodinger", "woods-saxon", par, l=l, j=j, levels=levels, tol=1e-10,
                       units="nuclear", particle="neutron")
    assert fast.diagnostics["mesh"] == "lagrange-laguerre"
    eq, pot, _ = boundkit.solver.setup("schrodinger", "woods-saxon", par, l=l, j=j, units="nuclear",
                                       particle="neutron")
    L, a, _ = boundkit.solver.laguerre_scale(eq, pot, eq.gamma(pot))
    first = a * lag._hydrogenic_reach(levels + l, lag._DECAY_NEEDED + 2)
    assert fast.diagnostics["levels"][0]["r_max"] < 0.5 * first
    _agree(fast, slow, 1e-10)


def test_a_level_not_yet_bound_on_the_first_size_sends_the_climb_on(monkeypatch):
    """A nuclear d level: on the first sizes the mesh has too few nodes in the well to bind the
    second level, which exists (the far box counts it); the climb goes on instead of handing over."""
    par = {"depth": 50.0, "radius": 5.0, "diffuseness": 0.6, "spin_orbit": 20.0}
    fast, slow = _both(monkeypatch, "schrodinger", "woods-saxon", par, l=2, j=2.5, levels=2, tol=1e-8,
                       units="nuclear", particle="neutron")
    assert fast.diagnostics["mesh"] == "lagrange-laguerre"
    assert lag._start_size(2, 2, 1e-8) < fast.diagnostics["levels"][0]["sizes"][0]   # sizes were skipped
    _agree(fast, slow, 1e-8)


def test_a_box_is_tightened_only_when_far_too_large():
    """Hydrogen's first scale already puts the top level at about e^-32: no tightening there."""
    eq, pot, _ = boundkit.solver.setup("schrodinger", "coulomb", {"Z": 1}, l=0)
    sample = boundkit.solver.sampler(pot)
    r_last = lag._hydrogenic_reach(5, lag._DECAY_NEEDED + 2)
    probe = lag._Probe.on(sample, 1e-9, r_last)
    decay = probe.decay(eq, -0.5 / 25)
    assert lag._DECAY_NEEDED < decay < lag._OVERSIZED * (lag._DECAY_NEEDED + 2)
    assert lag._tighter_scale(probe, eq, -0.5 / 25, decay) is None
    # the same level in a box three times larger is tightened back to about the hydrogen scale
    big = lag._Probe.on(sample, 1e-9, 3 * r_last)
    tighter = lag._tighter_scale(big, eq, -0.5 / 25, big.decay(eq, -0.5 / 25))
    assert tighter == pytest.approx(r_last, rel=0.05)


# --- what the path must hand over to the elements --------------------------------------------

def test_a_narrow_well_between_nodes_is_not_missed(monkeypatch):
    """A deep, narrow well at r = 6 bohr binds a level of its own below the 2s; a mesh that does not
    resolve it would report hydrogen's levels and skip that one."""
    def V(r):
        return -1 / r - 40 * np.exp(-(((r - 6) / 0.05) ** 2))

    fast, slow = _both(monkeypatch, "schrodinger", V, l=0, levels=4, tol=1e-10)
    assert fast.diagnostics["mesh"] == "spectral-elements"
    assert fast.energies().tolist() == slow.energies().tolist()
    assert slow.levels[1].energy < -0.2        # the well's own level, far below hydrogen's 2s


def test_a_deeper_well_beyond_the_mesh_is_not_missed(monkeypatch):
    """Found by the property test below: charge 5 with a screened core, whose 1s alone is asked
    for, fixes a mesh ending at 7.5 bohr; a broad well 46 hartree deep at r = 10.9 binds a level
    far below that 1s, outside the mesh."""
    def V(r):
        return -5 / r - 7.5038 * np.exp(-r / 0.098542) / r - 45.873 * np.exp(-(((r - 10.856) / 3.2563) ** 2))

    fast, slow = _both(monkeypatch, "schrodinger", V, l=0, levels=1, tol=1e-13)
    assert fast.diagnostics["mesh"] == "spectral-elements"
    assert fast.levels[0].energy == slow.levels[0].energy
    assert slow.levels[0].energy < -44                # the well's level, not the core's -33.4


def test_vacuum_polarisation_near_the_origin_goes_to_the_elements():
    """The Uehling term lives within ~1e-3 bohr, below the first Laguerre node."""
    res = boundkit.solve("schrodinger", ["coulomb", "uehling"], {"Z": 1}, l=0, levels=2, tol=1e-10)
    assert res.diagnostics["mesh"] == "spectral-elements"


@pytest.mark.parametrize("case", [
    dict(equation="dirac", kappa=-1),
    dict(equation="klein-gordon", l=0),
    dict(equation="schrodinger", l=0, tol=1e-14),
    dict(equation="schrodinger", l=0, method="finite-difference"),
])
def test_other_equations_tolerances_and_families_do_not_take_the_path(case):
    kw = dict(levels=2, tol=1e-10)
    kw.update(case)
    equation = kw.pop("equation")
    res = boundkit.solve(equation, "coulomb", {"Z": 1}, **kw)
    assert res.diagnostics["mesh"] != "lagrange-laguerre"


def test_short_range_levels_are_counted_first_and_all_returned():
    """Asking a Yukawa well (screening length 5 bohr) for 10 s-levels gives all it binds, counted on
    the far box as the elements count them, and the same energies as the elements."""
    res = boundkit.solve("schrodinger", "yukawa", {"Z": 1, "screening_length": 5}, l=0, levels=10, tol=1e-10)
    assert res.diagnostics["mesh"] == "lagrange-laguerre"
    assert res.diagnostics["bound_count"] == len(res.levels) == 2
    assert res.success and "all 2 bound level(s)" in res.message


def test_all_levels_of_a_short_range_well_on_the_mesh():
    """levels='all': the far box counts the Hulthen s-levels (n^2 < 2 Z / delta: 4 of them for
    delta = 0.1), the mesh solves all four, and each equals E_n = -(Z / n - n delta / 2)^2 / 2
    (Flugge 1971, from memory; boundkit.exact)."""
    from boundkit.exact import hulthen
    res = boundkit.solve("schrodinger", "hulthen", {"Z": 1, "delta": 0.1}, l=0, levels="all", tol=1e-10)
    assert res.diagnostics["mesh"] == "lagrange-laguerre"
    assert res.diagnostics["bound_count"] == len(res.levels) == 4
    assert res.success and "all 4 bound level(s)" in res.message
    for k, lv in enumerate(res.levels):
        exact = hulthen(1, 0.1, k + 1)
        assert abs(lv.energy - exact) <= lv.error_estimate + 1e-10 * abs(exact), lv.label


def test_all_levels_hand_over_to_the_elements_when_the_top_one_is_barely_bound(monkeypatch):
    """A Yukawa well whose sixth s-level is bound by 2.3e-5 hartree only: the mesh cannot reach
    it, the elements take the channel with the far-box count already made, and both give the
    same six levels."""
    fast, slow = _both(monkeypatch, "schrodinger", "yukawa", {"Z": 1, "screening_length": 30.0}, l=0,
                       levels="all", tol=1e-10)
    assert fast.diagnostics["mesh"] == "spectral-elements"
    assert fast.diagnostics["bound_count"] == slow.diagnostics["bound_count"] == len(fast.levels) == 6
    _agree(fast, slow, 1e-10)


@pytest.mark.parametrize("delta,levels", [(0.05, 3), (0.01, 5)])
def test_hulthen_s_levels_exact(delta, levels):
    """E_n = -(Z mu / n - n delta / 2)^2 / (2 mu) (Flugge 1971, from memory; boundkit.exact)."""
    from boundkit.exact import hulthen
    res = boundkit.solve("schrodinger", "hulthen", {"Z": 1, "delta": delta}, l=0, levels=levels, tol=1e-12)
    assert res.diagnostics["mesh"] == "lagrange-laguerre"
    for k, lv in enumerate(res.levels):
        exact = hulthen(1, delta, k + 1)
        assert abs(lv.energy - exact) <= lv.error_estimate + 4e-15 * abs(exact), lv.label


@pytest.mark.parametrize("D", [5.0, 100.0])
def test_yukawa_agrees_with_the_elements(monkeypatch, D):
    fast, slow = _both(monkeypatch, "schrodinger", "yukawa", {"Z": 1, "screening_length": D}, l=1, levels=3,
                       tol=1e-11)
    assert fast.diagnostics["mesh"] == "lagrange-laguerre"
    assert fast.diagnostics["bound_count"] == slow.diagnostics["bound_count"]
    _agree(fast, slow, 1e-11)


def test_a_level_near_threshold_goes_to_the_elements():
    """Hulthen delta = 0.2: the 3s lies at -1.6e-4 hartree (bound while delta < 2/9); its decay needs a
    box the Laguerre scale does not reach in three moves."""
    res = boundkit.solve("schrodinger", "hulthen", {"Z": 1, "delta": 0.2}, l=0, levels=3, tol=1e-12)
    assert res.diagnostics["mesh"] == "spectral-elements"
    assert res.diagnostics["bound_count"] == 3


# --- property: the path never reports other levels than the elements -------------------------

from hypothesis import HealthCheck, given, settings  # noqa: E402
from hypothesis import strategies as st  # noqa: E402

_QUICK = settings(max_examples=12, deadline=None, derandomize=True, database=None,
                  suppress_health_check=[HealthCheck.too_slow, HealthCheck.function_scoped_fixture])
_THOROUGH = settings(max_examples=300, deadline=None, database=None,
                     suppress_health_check=[HealthCheck.too_slow, HealthCheck.function_scoped_fixture])

_CASES = st.fixed_dictionaries({
    "Zt": st.sampled_from([0.0, 0.5, 1.0, 2.5, 5.0]), "A": st.floats(-3.0, 10.0), "b": st.floats(-2.0, 1.0),
    "C": st.floats(-50.0, 20.0), "c0": st.floats(-1.0, 1.3), "w": st.floats(-2.0, 0.7),
    "l": st.integers(0, 3), "levels": st.integers(1, 7), "tol": st.floats(-13.0, -5.0)})


def _same_levels_as_the_elements(monkeypatch, p):
    """A Coulomb tail (or none: short range), a screened core and a Gaussian bump or well (narrow ones
    included, which bind levels of their own or shift the ones near them): the answer is the elements' answer whichever
    path is taken. Found by this search before check (d) existed: a narrow well at r = 19.5 whose
    level the Laguerre mesh skipped."""
    b, c0, w, tol = 10 ** p["b"], 10 ** p["c0"], 10 ** p["w"], 10 ** p["tol"]

    def V(r):
        return -p["Zt"] / r - p["A"] * np.exp(-r / b) / r + p["C"] * np.exp(-(((r - c0) / w) ** 2))

    _agree_when_solvable(monkeypatch, V, tol, l=p["l"], levels=p["levels"])


@pytest.mark.xfail(strict=True, reason="known: a bump 1e-7 hartree high and 0.03 bohr wide at r = 17 bohr escapes the "
                                       "Laguerre path's checks (c) and (d); its 4s is 2.3e-10 off at tol 1e-10")
def test_a_faint_narrow_bump_far_out(monkeypatch):
    """Found by the thorough search below (2026-12-04): V = -2.5/r + 1e-7 exp(-((r - 17.14)/0.0316)^2), l = 0,
    4 levels, tol 1e-10. The elements give the 4s 4.4e-11 hartree (2.3e-10 relative) above -2.5^2/32, the
    first-order shift C w sqrt(pi) u(17.1)^2 of the bump; the Laguerre mesh gives -2.5^2/32 itself, with an
    estimate of 4e-15. The bump is too faint for the shape measure (d), relative to max |r V|, and too narrow
    for the state grid of (c) (points 0.1 bohr apart there). Not fixed yet."""
    p = {"Zt": 2.5, "A": 0.0, "b": 0.0, "C": 1e-7, "c0": 1.234375, "w": -1.5, "l": 0, "levels": 4, "tol": -10.0}
    _same_levels_as_the_elements(monkeypatch, p)


def test_a_strong_narrow_bump_the_potential_declares_is_not_missed(monkeypatch):
    """Found by the thorough search below (2026-12-05): V = -0.5/r + exp(-((r - 17.78)/0.01)^2), l = 1, one level,
    tol 1e-5 (and 1e-8). The bump, 1 hartree high and 0.01 bohr wide, sits where the 2p lives; the Laguerre mesh
    gave the bare Coulomb 2p, -0.03125 hartree with an estimate of 6e-16, while the elements give -0.0309603 (the
    bump's first-order shift C w sqrt(pi) u^2 is of that size). It fell between the probe's samples (0.26 bohr
    apart there) and the state grid's; the callable's own sampling declares breakpoints around it, which the
    path now takes as a reason to hand the channel to the elements."""
    p = {"Zt": 0.5, "A": 0.0, "b": 0.0, "C": 1.0, "c0": 1.25, "w": -2.0, "l": 1, "levels": 1, "tol": -5.0}
    _same_levels_as_the_elements(monkeypatch, p)
    _same_levels_as_the_elements(monkeypatch, {**p, "tol": -8.0})


@_QUICK
@given(p=_CASES)
def test_random_coulomb_tailed_potentials_give_the_elements_levels(monkeypatch, p):
    _same_levels_as_the_elements(monkeypatch, p)


@pytest.mark.slow
@_THOROUGH
@given(p=_CASES)
def test_random_coulomb_tailed_potentials_give_the_elements_levels_thorough(monkeypatch, p):
    _same_levels_as_the_elements(monkeypatch, p)


_WELLS = st.fixed_dictionaries({
    "kind": st.sampled_from(["woods-saxon", "screened+gauss"]), "depth": st.floats(0.3, 30.0),
    "R": st.floats(-0.5, 1.0), "a": st.floats(-1.5, -0.3), "A": st.floats(0.5, 8.0), "b": st.floats(-1.0, 0.8),
    "C": st.floats(-20.0, 5.0), "c0": st.floats(-0.5, 1.2), "w": st.floats(-1.5, 0.3),
    "l": st.integers(0, 3), "tol": st.floats(-12.0, -6.0)})


def _all_levels_as_the_elements(monkeypatch, p):
    """levels='all' of a short-range well (a Woods-Saxon shape, or a screened core with a Gaussian
    well or bump; lengths in bohr): the same count and levels whichever path is taken, including
    the box tightening and the climb past sizes that do not bind the top level yet."""
    R, a, b, c0, w, tol = 10 ** p["R"], 10 ** p["a"], 10 ** p["b"], 10 ** p["c0"], 10 ** p["w"], 10 ** p["tol"]
    if p["kind"] == "woods-saxon":
        def V(r):
            return -p["depth"] / (1 + np.exp((r - R) / a))
    else:
        def V(r):
            return -p["A"] * np.exp(-r / b) / r + p["C"] * np.exp(-(((r - c0) / w) ** 2))
    both = _agree_when_solvable(monkeypatch, V, tol, l=p["l"], levels="all")
    if both is not None:
        assert both[0].diagnostics["bound_count"] == both[1].diagnostics["bound_count"]


@_QUICK
@given(p=_WELLS)
def test_all_levels_of_random_short_range_wells_are_the_elements_levels(monkeypatch, p):
    _all_levels_as_the_elements(monkeypatch, p)


@pytest.mark.slow
@settings(_THOROUGH, max_examples=100)
@given(p=_WELLS)
def test_all_levels_of_random_short_range_wells_are_the_elements_levels_thorough(monkeypatch, p):
    _all_levels_as_the_elements(monkeypatch, p)


def test_cli_table_names_the_mesh_that_produced_the_levels():
    from click.testing import CliRunner

    from boundkit.cli import main

    out = CliRunner().invoke(main, ["solve", "--param", "Z=1", "--levels", "2"])
    assert out.exit_code == 0
    assert "method spectral (Lagrange-Laguerre mesh, N = " in out.output
    out = CliRunner().invoke(main, ["solve", "--equation", "dirac", "--kappa", "-1", "--param", "Z=1"])
    assert out.exit_code == 0
    assert "method spectral (spectral elements, " in out.output


# --- convergence study of the path ----------------------------------------------------------

def test_converge_studies_the_laguerre_mesh_solve_takes():
    """Hydrogen 1s and 2s against -1/(2 n^2) (Bethe and Salpeter 1957): the error falls faster than
    any power of N (measured 2.7e-3, 5.2e-7, 2.0e-12 at N = 12, 16, 20 for the 1s)."""
    from boundkit.accuracy import converge

    res = converge("schrodinger", "coulomb", {"Z": 1}, l=0, levels=2, methods=("spectral",))
    rows = [r for r in res.rows if r["method"] == "laguerre-mesh"]
    assert {r["label"] for r in rows} == {"1s", "2s"}
    for label, n in (("1s", 1), ("2s", 2)):
        errs = {r["size"]: abs(r["energy"] * 2 * n * n + 1) for r in rows if r["label"] == label}
        assert errs[12] > errs[16] > errs[20]
        assert errs[26] < 1e-13
        assert max(res.local_orders[("laguerre-mesh", label)]) > 20
    slopes = res.local_orders[("laguerre-mesh", "1s")]      # measured 11, 30, 56
    assert slopes[0] < slopes[1] < slopes[2]                # log-log slopes grow: not a power law
    assert "local slopes" in res.table().split("observed order laguerre-mesh")[1].splitlines()[0]


def test_converge_has_no_laguerre_rows_where_solve_uses_the_elements():
    from boundkit.accuracy import converge

    res = converge("dirac", "coulomb", {"Z": 1}, kappa=-1, levels=1, methods=("spectral",))
    assert {r["method"] for r in res.rows} == {"spectral"}


def test_study_rejects_sizes_too_small_for_the_levels():
    from boundkit.equations.schrodinger import Schrodinger
    from boundkit.potentials import make_potential
    from boundkit.solver import sampler

    pot = make_potential("coulomb", {"Z": 1})
    with pytest.raises(ValueError, match=r"sizes: a Laguerre mesh for 5 level\(s\) needs at least 7 nodes"):
        lag.study(Schrodinger(l=0), sampler(pot), 5, 1.0, 1e-9, [4, 6])


# Yukawa V = -exp(-r/10)/r (Z = 1, screening length 10 bohr), l = 0: the two lowest levels from a
# shooting written for this check (scipy solve_ivp DOP853, rtol 1e-13, from u = r - r^2 at 1e-6 bohr to
# u(80 bohr) = 0, brentq in E; 2026-12-04); boundkit's finite-difference family agrees to 1e-13. A tail
# of charge q shifts them by about q <1/r>, 1e-12 here at most.
_YUKAWA_10 = (-0.4070580306134, -0.0499282713319)


@pytest.mark.parametrize("q", [1e-16, 1e-12])
def test_a_faint_coulomb_tail_does_not_hide_the_core_levels(q):
    """A short-range well plus a Coulomb tail of tiny charge q (a table's default tail read off its last
    point gives 1e-16 .. 1e-18): the tail's Bohr radius 1/q set the mesh scale and the inner end of the
    checks, 1e-9 of it, lay beyond the well; the Laguerre path returned the tail's hydrogen levels
    -q^2 / (2 n^2) (-5e-33 hartree) with status ok. Found by a tester."""
    from boundkit.potentials import TERMS

    pot = [TERMS["yukawa"]("atomic", Z=1.0, screening_length=10.0), TERMS["coulomb"]("atomic", Z=q)]
    res = boundkit.solve("schrodinger", pot, l=0, levels=2, tol=1e-10)
    assert res.success
    assert [lv.energy for lv in res.levels] == pytest.approx(_YUKAWA_10, rel=1e-9)


def test_a_table_with_its_default_coulomb_tail_keeps_the_well_levels():
    """The same through a table: Yukawa tabulated on 400 points from 1e-4 to 400 bohr, tail 'coulomb'
    (the default) read off the last point: charge e^-40 = 4e-18."""
    from boundkit.potentials.tabulated import TabulatedTerm

    r = np.geomspace(1e-4, 400, 400)
    res = boundkit.solve("schrodinger", TabulatedTerm(r, -np.exp(-r / 10) / r), None, l=0, levels=2, tol=1e-8)
    assert res.success
    assert [lv.energy for lv in res.levels] == pytest.approx(_YUKAWA_10, rel=1e-6)   # a 400-point table
