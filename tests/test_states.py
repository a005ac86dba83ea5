"""Properties of the reported states: no spurious levels, normalisation, node
counts, labels, exact 1s wave functions and the non-relativistic limit.

Solves shared with the exact catalogue come from the cache in :mod:`exact`
(same :class:`exact.Case`), so most checks here cost no extra solve.
"""
from __future__ import annotations

import itertools
import math

import numpy as np
import pytest

import boundkit
from boundkit.states import count_nodes, count_nodes_each

from exact import (ALPHA, C, Case, dirac_coulomb, kappa_to_l, klein_gordon_coulomb,
                   schrodinger_coulomb, solve_case)

AUTO = "auto"
FD = "finite-difference"
DIRAC_Z = (1, 10, 50, 92)


def dirac_case(Z, kappa, method=AUTO):
    """The Dirac-Coulomb catalogue solve: all levels n <= 5 of the channel."""
    return Case("dirac", "coulomb", (("Z", Z),), kappa, 5 - kappa_to_l(kappa), method)


def kg_case(Z, l, method=AUTO):
    return Case("klein-gordon", "coulomb", (("Z", Z),), l, 5 - l, method)


def schrodinger_case(Z, l, method=AUTO):
    return Case("schrodinger", "coulomb", (("Z", Z),), l, 6 - l, method)


# ---------------------------------------------------------------------------
# spurious states
# ---------------------------------------------------------------------------

@pytest.mark.parametrize("method", (AUTO, FD))
@pytest.mark.parametrize("Z", DIRAC_Z)
@pytest.mark.parametrize("kappa", (1, 2, 3, 4))
def test_no_spurious_state_for_positive_kappa(kappa, Z, method):
    """For kappa > 0 (l = kappa) the lowest level is n = kappa + 1, e.g. 2p1/2
    for kappa = 1 (common practice: Bethe & Salpeter 1957, Dirac-Coulomb
    spectrum). Two-component discretizations often add a spurious level
    degenerate with n = kappa; none may appear, below or between the true
    levels."""
    res = solve_case(dirac_case(Z, kappa, method))
    assert res.status == "ok", res.message
    lowest = res.levels[0]
    assert lowest.n == kappa + 1, [lv.label for lv in res.levels]
    assert lowest.label.startswith(f"{kappa + 1}")
    tol = 1e-12 if method == AUTO else 1e-9
    true = [dirac_coulomb(Z, n, kappa) for n in range(kappa + 1, 6)]
    assert len(res.levels) == len(true)
    for lv, E in zip(res.levels, true):
        assert abs(lv.energy - E) <= tol * abs(E), (lv.label, lv.energy, E)
    # nothing more bound than the true lowest level (a spurious n = kappa
    # copy would sit at the energy of the level with n = kappa)
    assert min(lv.energy for lv in res.levels) >= true[0] * (1 + tol)


# ---------------------------------------------------------------------------
# normalisation and nodes
# ---------------------------------------------------------------------------

STATE_CASES = [
    pytest.param(dirac_case(Z, kappa, m), id=f"dirac-Z{Z}-kappa{kappa}-{m}")
    for Z, kappa, m in itertools.product((1, 92), (-1, 1, -2, -3), (AUTO, FD))
] + [
    pytest.param(kg_case(Z, l, m), id=f"kg-Z{Z}-l{l}-{m}")
    for Z, l, m in itertools.product((1, 40), (0, 1, 3), (AUTO, FD))
] + [
    pytest.param(schrodinger_case(1, l, m), id=f"schrodinger-Z1-l{l}-{m}")
    for l, m in itertools.product((0, 2, 5), (AUTO, FD))
] + [
    pytest.param(Case("schrodinger", "oscillator", (("k", 1.0),), l, 4, m), id=f"oscillator-l{l}-{m}")
    for l, m in itertools.product((0, 3), (AUTO, FD))
] + [
    pytest.param(Case("dirac", "oscillator", (("k", 2e6),), kappa, 3, m, scalar="oscillator"),
                 id=f"dirac-SV-oscillator-kappa{kappa}-{m}")
    for kappa, m in itertools.product((-1, 2), (AUTO, FD))
]


def _potential_V(case: Case, r):
    p = dict(case.params)
    return -p["Z"] / r if case.potential == "coulomb" else 0.5 * p["k"] * r**2


def _density(case: Case, lv):
    """Charge density whose integral must be 1 (as documented for solve):
    P^2 (Schrodinger), weight (E + mc^2 - V)/(mc^2) P^2 (Klein-Gordon, the
    conserved charge density; Greiner, Relativistic Quantum Mechanics: Wave
    Equations, ch. 1), P^2 + Q^2 (Dirac). Electron mass, atomic units."""
    st = lv.state
    if case.equation == "dirac":
        assert st.Q is not None
        return st.P**2 + st.Q**2
    assert st.Q is None
    if case.equation == "klein-gordon":
        mc2 = C * C
        return (lv.energy + mc2 - _potential_V(case, st.r)) / mc2 * st.P**2
    return st.P**2


@pytest.mark.parametrize("case", STATE_CASES)
def test_states_are_normalised(case):
    """sum(weights * density) = 1 to 1e-12 for every level."""
    res = solve_case(case)
    assert res.levels
    for lv in res.levels:
        norm = float(np.sum(lv.state.weights * _density(case, lv)))
        assert abs(norm - 1.0) <= 1e-12, (lv.label, norm)


def _sign_changes(P, rel=1e-8):
    """Sign changes of P counted where |P| > rel * max|P| (common practice)."""
    P = np.asarray(P)
    s = np.sign(P[np.abs(P) > rel * np.max(np.abs(P))])
    return int(np.count_nonzero(s[1:] != s[:-1]))


@pytest.mark.parametrize("case", STATE_CASES)
def test_node_count_of_large_component(case):
    """The (large) component of the level with principal number n has
    n - l - 1 nodes (common practice; for the oscillators, whose levels are
    numbered by n_r, the k-th level has k nodes)."""
    res = solve_case(case)
    assert res.levels
    l = case.l
    for k, lv in enumerate(res.levels):
        expected = lv.n - l - 1 if case.potential == "coulomb" else k
        assert expected == k                       # the k-th level of the channel
        assert _sign_changes(lv.state.P) == expected, lv.label
        assert lv.nodes == expected


def test_weights_integrate_known_functions():
    """The quadrature weights of a state integrate r^2 e^{-2r} (the shape of
    the hydrogen 1s density) to its exact value 1/4 = Gamma(3)/2^3 (common
    practice), so 'normalised' above means normalised as a function, not
    only as a vector. The bound is 1e-11: on the 101-node spectral mesh of
    the 1s level the Clenshaw-Curtis sum is off by about 1e-12."""
    for method in (AUTO, FD):
        st = solve_case(schrodinger_case(1, 0, method)).levels[0].state
        got = float(np.sum(st.weights * st.r**2 * np.exp(-2 * st.r)))
        assert abs(got - 0.25) <= 1e-11


# ---------------------------------------------------------------------------
# exact wave functions of the 1s levels
# ---------------------------------------------------------------------------

def test_schrodinger_1s_wave_function():
    """P(r) = 2 Z^(3/2) r e^{-Z r} for hydrogen-like 1s (Bethe & Salpeter 1957)."""
    for Z, method in itertools.product((1, 26), (AUTO, FD)):
        st = solve_case(schrodinger_case(Z, 0, method)).levels[0].state
        exact = 2 * Z**1.5 * st.r * np.exp(-Z * st.r)
        assert np.max(np.abs(st.P - exact)) <= 1e-8 * np.max(exact)


@pytest.mark.parametrize("Z", DIRAC_Z)
def test_dirac_1s_wave_function(Z):
    """Dirac-Coulomb 1s1/2 (kappa = -1): with gamma = sqrt(1 - (Z alpha)^2),
    P = sqrt(1 + gamma) A r^gamma e^{-Z r}, Q = -sqrt(1 - gamma) A r^gamma e^{-Z r},
    A^2 = (2Z)^(2 gamma + 1) / (2 Gamma(2 gamma + 1)) (normalised so that
    integral P^2 + Q^2 = 1; the form from memory of Bethe & Salpeter 1957,
    section 14, and checked here only through the solver)."""
    st = solve_case(dirac_case(Z, -1)).levels[0].state
    g = math.sqrt(1 - (Z * ALPHA) ** 2)
    A = math.sqrt((2 * Z) ** (2 * g + 1) / (2 * math.gamma(2 * g + 1)))
    radial = A * st.r**g * np.exp(-Z * st.r)
    P, Q = math.sqrt(1 + g) * radial, -math.sqrt(1 - g) * radial
    scale = np.max(np.abs(P))
    assert np.max(np.abs(st.P - P)) <= 1e-8 * scale
    assert np.max(np.abs(st.Q - Q)) <= 1e-8 * scale


# ---------------------------------------------------------------------------
# labels
# ---------------------------------------------------------------------------

@pytest.mark.parametrize("kappa, label, l, j", [(-1, "1s1/2", 0, 0.5), (1, "2p1/2", 1, 0.5),
                                                (-2, "2p3/2", 1, 1.5), (-3, "3d5/2", 2, 2.5),
                                                (2, "3d3/2", 2, 1.5), (-4, "4f7/2", 3, 3.5)])
def test_dirac_labels(kappa, label, l, j):
    """Spectroscopic labels n l_j of the lowest level of each channel
    (common practice)."""
    lv = solve_case(dirac_case(1, kappa)).levels[0]
    assert (lv.label, lv.l, lv.j, lv.kappa) == (label, l, j, kappa)
    assert solve_case(dirac_case(1, kappa)).levels[1].label == f"{int(label[0]) + 1}{label[1:]}"


@pytest.mark.parametrize("equation, case", [("schrodinger", schrodinger_case(1, 1)),
                                            ("klein-gordon", kg_case(1, 1))])
def test_spin_zero_labels(equation, case):
    """'2p', '3p', ... for Schrodinger and Klein-Gordon (no j; common practice)."""
    res = solve_case(case)
    assert res.equation == equation
    assert [lv.label for lv in res.levels[:2]] == ["2p", "3p"]
    assert all(lv.j is None and lv.kappa is None and lv.l == 1 for lv in res.levels)


# ---------------------------------------------------------------------------
# non-relativistic limit
# ---------------------------------------------------------------------------

@pytest.mark.parametrize("equation, channel, exact", [
    ("dirac", -1, lambda Z: dirac_coulomb(Z, 1, -1)),
    ("dirac", -2, lambda Z: dirac_coulomb(Z, 2, -2)),
    ("klein-gordon", 0, lambda Z: klein_gordon_coulomb(Z, 1, 0)),
], ids=["dirac-1s1/2", "dirac-2p3/2", "kg-1s"])
def test_non_relativistic_limit(equation, channel, exact):
    """Relativistic binding energies approach the Schrodinger ones as alpha -> 0.

    There is no alpha knob, but this is the alpha -> 0 limit in disguise: for
    a point Coulomb charge E / (Z^2 hartree) depends on Z and alpha only
    through Z alpha, so the relative correction
    delta(Z) = (E_rel - E_schr) / E_schr is a function of Z alpha alone and
    Z -> 0 at fixed alpha is alpha -> 0 at fixed Z. The leading correction
    is of order (Z alpha)^2 (Bethe & Salpeter 1957, fine-structure
    expansion), so log delta vs log Z has slope 2; delta must be positive
    (relativistic levels are more bound, same source), below 1e-4 at Z = 1,
    and match the exact formulas.
    """
    Zs = (1, 2, 4, 8)
    key = "kappa" if equation == "dirac" else "l"
    l = kappa_to_l(channel) if equation == "dirac" else channel
    n = l + 1
    deltas = []
    for Z in Zs:
        res = boundkit.solve(equation, "coulomb", {"Z": Z}, levels=1, **{key: channel})
        E = res.levels[0].energy
        E0 = schrodinger_coulomb(Z, n)
        d = (E - E0) / E0
        d_exact = (exact(Z) - E0) / E0
        assert abs(d - d_exact) <= 1e-6 * d_exact
        deltas.append(d)
    deltas = np.array(deltas)
    assert np.all(deltas > 0)
    slope = np.polyfit(np.log(Zs), np.log(deltas), 1)[0]
    assert abs(slope - 2.0) <= 0.05, slope
    assert deltas[0] < 1e-4


def test_normalise_rows_match_one_at_a_time():
    """Several states as the rows of one array get the norm and sign (P > 0 near the origin) that
    each gets alone, including a row whose first large value is negative."""
    from boundkit.states import normalise

    rng = np.random.default_rng(7)
    w = rng.uniform(0.1, 1.0, 50)
    P = rng.normal(size=(4, 50))
    P[1, :3] = [1e-9, -2.0, 5.0]       # first value above 1e-6 max|P| is negative: flipped
    (rows,), norms = normalise(w, P)
    for k in range(4):
        (alone,), norm = normalise(w, P[k])
        assert np.allclose(rows[k], alone, rtol=1e-14, atol=0)
        assert norms[k] == pytest.approx(norm, rel=1e-14)
    assert rows[1][1] > 0
    assert np.sum(w * rows[0] ** 2) == pytest.approx(1.0, rel=1e-14)


@pytest.mark.parametrize("seed", range(4))
def test_count_nodes_each_counts_every_column_as_count_nodes_does(seed):
    """The vectorised count (the Laguerre path's node check) against the one-column rule, on random
    columns with values over nine decades, all-zero columns and decayed tails (where the tail and
    floor cut-offs decide)."""
    rng = np.random.default_rng(seed)
    for _ in range(300):
        n, m = int(rng.integers(1, 60)), int(rng.integers(1, 6))
        u = rng.standard_normal((n, m)) * 10.0 ** rng.integers(-8, 2, size=(n, m))
        if rng.random() < 0.2:
            u[:, 0] = 0.0
        if rng.random() < 0.3:
            u[int(rng.integers(0, n)):, :] *= 1e-7
        assert list(count_nodes_each(u)) == [count_nodes(u[:, k]) for k in range(m)]
