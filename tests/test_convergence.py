"""Observed orders of convergence of the two discretization families.

The solver's error estimates assume that finite differences of order p
converge like h^p (Richardson) and that the Chebyshev family converges
faster than any power of the number of nodes. These tests measure both on a
fixed mesh with the internal pieces the solver combines in
``solver._level_on_grid``: a grid from the discretization, the
:class:`~boundkit.equations.FactorizedOperator` of the equation on it, a
fixed-energy eigen solve for a seed and Newton refinement of the
energy-dependent problem. References are the exact Dirac-Coulomb energies
(:func:`exact.dirac_coulomb`, Bethe & Salpeter 1957, eq. 14.29).
"""
from __future__ import annotations

import numpy as np
import pytest

from boundkit.discretize import Chebyshev, FiniteDifference
from boundkit.eigen import dense_pencil, refine, shift_invert
from boundkit.equations import FactorizedOperator, Sample
from boundkit.equations.dirac import Dirac
from boundkit.mesh import LogMap
from boundkit.potentials import make_potential
from exact import dirac_coulomb

# hydrogen, Dirac: (kappa, n, outer radius of the fixed mesh in bohr, seed energy)
LEVELS = {"1s1/2": (-1, 1, 60.0, -0.5), "2p1/2": (1, 2, 120.0, -0.125)}
R_MIN = 1e-8          # bohr, inner end of the fixed mesh
R_CORE = 1.0          # bohr, core radius of the r^gamma weight


def _energy(level: str, disc, size: int) -> float:
    """Refined energy of a hydrogen Dirac level on one grid of ``disc``."""
    kappa, _, r_max, seed = LEVELS[level]
    eq = Dirac(kappa=kappa)
    pot = make_potential("coulomb", {"Z": 1})
    grid = disc.grid(LogMap(R_MIN, r_max), size)
    op = FactorizedOperator(eq, grid, Sample(grid.r, pot.V(grid.r), pot.S(grid.r)), eq.gamma(pot), R_CORE)
    A, B = op.pencil(seed)
    lam, vec = dense_pencil(A, B) if grid.dense else shift_invert(A, B, seed, k=6)
    # The seed lies within 1 % of the level, so the eigenvalue nearest to it
    # is the level. (The finite-difference pencil also has spurious, rapidly
    # oscillating modes, which the solver drops by their node count; none
    # comes near the seeds at these sizes for orders >= 4. A wrong pick would
    # show up as a wrong error below, not pass unnoticed.)
    i = int(np.argmin(np.abs(lam - seed)))
    ref = refine(op, lam[i], vec[:, i])
    assert ref.converged
    return ref.energy


def _rel_error(level: str, E: float) -> float:
    kappa, n, _, _ = LEVELS[level]
    exact = dirac_coulomb(1, n, kappa)
    return abs(E - exact) / abs(exact)


# sizes keep every error between ~1e-3 and ~1e-11, well above the rounding
# floor (~1e-13) of double-precision refinement on these grids. Order 2 is
# left out: its centred first-difference stencil applied twice decouples odd
# and even nodes, and on coarse grids the pencil has a spurious near-copy of
# each level that stalls the Newton refinement.
FD_SIZES = {4: (100, 141, 200, 283, 400, 566, 800),
            6: (100, 141, 200, 283, 400, 566, 800), 8: (100, 141, 200, 283, 400),
            10: (100, 141, 200, 283)}


@pytest.mark.parametrize("level", sorted(LEVELS))
@pytest.mark.parametrize("order", sorted(FD_SIZES))
def test_finite_difference_order(order, level):
    """The slope of log(error) against log(h) is the nominal order p within
    0.5 (common practice: a consistent stencil of accuracy p converges like h^p
    for a smooth solution; here the solution is smooth in t = ln r)."""
    sizes = FD_SIZES[order]
    mesh = LogMap(R_MIN, LEVELS[level][2])
    h = np.array([(mesh.t_max - mesh.t_min) / (n - 1) for n in sizes])
    err = np.array([_rel_error(level, _energy(level, FiniteDifference(order=order), n)) for n in sizes])
    assert np.all(err > 1e-12), err          # the fit must not reach the rounding floor
    assert np.all(np.diff(err) < 0), err     # monotone decrease with refinement
    slope = np.polyfit(np.log(h), np.log(err), 1)[0]
    assert abs(slope - order) <= 0.5, (slope, err)


@pytest.mark.parametrize("level", sorted(LEVELS))
def test_spectral_convergence_is_faster_than_algebraic(level):
    """Chebyshev collocation: the error falls by more than a factor 100 for
    every 24 added nodes until the ~1e-13 rounding floor, and the local
    algebraic slope -d log(err)/d log(N) exceeds 20 before the floor, more than
    any finite-difference order boundkit offers (<= 12); this is the
    geometric (exponential) convergence expected of Chebyshev methods for
    analytic solutions (common practice; e.g. L. N. Trefethen, Spectral
    Methods in MATLAB, SIAM 2000, from memory)."""
    sizes = list(range(32, 129, 8))
    err = {n: _rel_error(level, _energy(level, Chebyshev(), n)) for n in sizes}
    floor = 1e-13
    pairs = [(n, n + 24) for n in sizes if n + 24 in err and err[n] > 1e-11]
    assert len(pairs) >= 5, err
    for a, b in pairs:
        assert err[b] <= max(err[a] / 100.0, floor), (a, b, err[a], err[b])
    assert min(err.values()) <= floor, err
    above = [n for n in sizes if err[n] > 1e-11]
    a, b = above[-2], above[-1]
    local = -np.log(err[b] / err[a]) / np.log(b / a)
    assert local > 20.0, (a, b, err[a], err[b], local)


# --- sparse pieces of the finite-difference family ------------------------------------------------

@pytest.mark.parametrize("order", [2, 4, 8, 12])
@pytest.mark.parametrize("n", [13, 14, 57])
def test_derivative_matrix_is_exact_on_polynomials(order, n):
    """Every row, one-sided near the ends, differentiates polynomials up to degree ``order`` exactly
    (the definition of a stencil's accuracy order; common practice)."""
    from boundkit.discretize.finite_difference import derivative_matrix

    D = derivative_matrix(n, order)
    x = np.arange(n, dtype=float) / n
    for p in range(order + 1):
        want = p * x ** (p - 1) if p else np.zeros(n)
        got = (D @ x**p) * n
        assert np.max(np.abs(got - want)) <= 1e-7 * max(1.0, p * p), (order, n, p)


def test_bordered_column_matches_a_lil_assignment():
    """eigen._with_column gives the CSC arrays of a LIL column assignment (which it replaced for speed),
    zeros in the new column dropped, for CSR input with unsorted or sorted indices."""
    import scipy.sparse as sp

    from boundkit.eigen import _with_column

    rng = np.random.default_rng(5)
    for trial in range(20):
        n = int(rng.integers(3, 40))
        T = sp.random(n, n, density=0.3, random_state=rng, format="csr")
        if trial % 2:
            T = T[:, rng.permutation(n)][:, np.argsort(rng.permutation(n))]     # unsorted indices, same matrix
        col = rng.standard_normal(n)
        col[rng.random(n) < 0.3] = 0.0
        j = int(rng.integers(0, n))
        L = T.tolil()
        L[:, j] = col.reshape(-1, 1)
        want = L.tocsc()
        got = _with_column(T, j, col)
        assert np.array_equal(got.toarray(), want.toarray())
        assert np.array_equal(got.indptr, want.indptr) and np.array_equal(got.indices, want.indices)
        assert np.array_equal(got.data, want.data)


def test_an_order_without_the_finite_differences_is_refused():
    """converge(methods=('spectral',), order=12) ignored the order silently (the command line refused it)."""
    from boundkit.accuracy import converge

    with pytest.raises(ValueError, match=r"^order: only the finite-difference method takes an order; drop it, or "
                                         r"add 'finite-difference' to methods$"):
        converge("schrodinger", "coulomb", {"Z": 1}, methods=("spectral",), order=12)
