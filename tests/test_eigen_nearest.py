"""eigen.nearest_pair: the eigenpair of a sparse pencil nearest a shift, by inverse iteration.

Check values: the n x n second-difference matrix tridiag(-1, 2, -1) has the eigenvalues
2 - 2 cos(k pi / (n + 1)), k = 1..n, and eigenvectors sin(j k pi / (n + 1)) (common practice; any
numerical analysis text, e.g. G. Strang, Linear Algebra and Its Applications).
"""
import math

import numpy as np
import pytest
import scipy.sparse as sp

from boundkit.eigen import nearest_pair


def laplacian(n):
    return sp.diags([-np.ones(n - 1), 2 * np.ones(n), -np.ones(n - 1)], [-1, 0, 1]).tocsr()


def exact(n, k):
    return 2 - 2 * math.cos(k * math.pi / (n + 1))


@pytest.mark.parametrize("k", [1, 5, 40, 199])
@pytest.mark.parametrize("offset", [1e-9, -1e-5, 0.01])
def test_nearest_eigenpair_of_the_second_difference_matrix(k, offset):
    n = 200
    gap = min(abs(exact(n, k) - exact(n, k + s)) for s in (-1, 1) if 1 <= k + s <= n)
    sigma = exact(n, k) + offset * gap
    lam, y = nearest_pair(laplacian(n), sp.identity(n, format="csr"), sigma)
    assert abs(lam - exact(n, k)) <= 1e-11 * exact(n, k) + 1e-14
    j = np.arange(1, n + 1)
    v = np.sin(j * k * math.pi / (n + 1))
    cos = abs(v @ y) / (np.linalg.norm(v) * np.linalg.norm(y))
    assert cos > 1 - 1e-10


def test_generalized_pencil_with_a_diagonal_B():
    """A y = lambda B y with B = diag(b) > 0 and A = B^(1/2) L B^(1/2): the same eigenvalues as L."""
    n = 120
    b = np.linspace(0.5, 2.0, n)
    s = sp.diags(np.sqrt(b))
    A = (s @ laplacian(n) @ s).tocsr()
    # A y = lam B y  <=>  L (s y) = lam (s y) ... with B = diag(b): s L s y = lam s s y  =>  L x = lam x, x = s y
    lam, y = nearest_pair(A, sp.diags(b).tocsr(), exact(n, 7) + 1e-6)
    assert abs(lam - exact(n, 7)) <= 1e-11


def test_a_slowly_contracting_iteration_gives_none():
    """A shift 0.3 of the way to the neighbouring eigenvalue contracts by about 0.43 per step: not settled
    within the steps allowed, so no pair (the caller falls back to the Arnoldi solve)."""
    n = 200
    sigma = exact(n, 10) + 0.3 * (exact(n, 11) - exact(n, 10))
    assert nearest_pair(laplacian(n), sp.identity(n, format="csr"), sigma) is None


def test_two_eigenvalues_equally_near_give_none():
    """A shift midway between two eigenvalues: neither dominates, so no pair is returned (the caller falls
    back to the Arnoldi solve of the six nearest)."""
    n = 200
    sigma = 0.5 * (exact(n, 10) + exact(n, 11))
    assert nearest_pair(laplacian(n), sp.identity(n, format="csr"), sigma) is None


def test_a_complex_pair_nearest_gives_none():
    """The nearest eigenvalues 1 +- 0.5 i (a rotation block) are no real pair: None."""
    n = 50
    A = sp.lil_matrix(laplacian(n) * 10 + sp.identity(n) * 5)
    A[0, 0], A[0, 1], A[1, 0], A[1, 1] = 1.0, 0.5, -0.5, 1.0
    A[0, 2] = A[2, 0] = A[1, 2] = A[2, 1] = 0.0
    assert nearest_pair(A.tocsr(), sp.identity(n, format="csr"), 1.0) is None


def test_a_shift_on_an_eigenvalue_gives_none_or_that_eigenvalue():
    n = 30
    A = sp.diags(np.arange(1.0, n + 1)).tocsr()
    got = nearest_pair(A, sp.identity(n, format="csr"), 3.0)
    assert got is None or abs(got[0] - 3.0) < 1e-12


@pytest.mark.parametrize("k", [1, 30])
def test_dense_pencil_gives_the_same_pair(k):
    """Dense arrays take an LU of their own: the same eigenpair as the sparse pencil."""
    n = 80
    sigma = exact(n, k) + 1e-6
    lam, y = nearest_pair(laplacian(n).toarray(), np.eye(n), sigma)
    lam_s, y_s = nearest_pair(laplacian(n), sp.identity(n, format="csr"), sigma)
    assert abs(lam - exact(n, k)) <= 1e-11 and abs(lam - lam_s) <= 1e-12
    # scaled to a largest entry of 1: a symmetric vector has two, so the sign may differ
    assert min(np.max(np.abs(y - y_s)), np.max(np.abs(y + y_s))) <= 1e-9


def test_dense_complex_pair_gives_none():
    A = np.diag(np.arange(5.0, 25.0))
    A[:2, :2] = [[1.0, 0.5], [-0.5, 1.0]]
    assert nearest_pair(A, np.eye(20), 1.0) is None
