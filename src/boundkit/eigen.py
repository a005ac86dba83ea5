"""Eigen backend: fixed-energy pencils and the energy-dependent refinement.

Three solvers, one loop each:

* :func:`dense_pencil` - all eigenpairs of a small dense pencil A y = lambda B y
  (QZ, scipy.linalg.eig);
* :func:`shift_invert` - the few eigenpairs of a large sparse pencil nearest a
  target energy (ARPACK in shift-invert mode), and :func:`nearest_pair`, the
  one nearest it by inverse iteration (a sparse LU and a few solves), which
  the caller tries first when the target is a good seed;
* :func:`refine` - Newton's method on the energy-dependent problem
  T(E) y = 0 with the normalisation y[j] = 1, seeded by one of the above.
  Residuals are computed in extended precision when the operator provides
  them, so the refined energy is limited by double precision, not by the
  conditioning of the matrices.
"""
from __future__ import annotations

import math
import warnings
from dataclasses import dataclass
from functools import partial

import numpy as np
import scipy.linalg as sla
import scipy.sparse as sp
import scipy.sparse.linalg as spla

__all__ = ["dense_pencil", "shift_invert", "nearest_pair", "refine", "Refined"]


def dense_pencil(A, B):
    """Real finite eigenpairs of a dense pencil, sorted by eigenvalue.

    Eigenvalues with an imaginary part above 1e-8 of their size, and infinite
    ones, are discarded (they are not bound states).
    """
    lam, vec = sla.eig(A, B)
    ok = np.isfinite(lam) & (np.abs(lam.imag) <= 1e-8 * np.maximum(1.0, np.abs(lam.real)))
    lam, vec = lam[ok].real, vec[:, ok].real
    order = np.argsort(lam)
    return lam[order], vec[:, order]


def shift_invert(A, B, sigma: float, k: int = 4):
    """The ``k`` eigenpairs of a sparse pencil nearest ``sigma``."""
    n = A.shape[0]
    k = min(k, n - 2)
    lam, vec = spla.eigs(A.tocsc(), k=k, M=sp.csc_matrix(B), sigma=sigma, which="LM")
    lam, vec = lam.real, vec.real
    order = np.argsort(np.abs(lam - sigma))
    return lam[order], vec[:, order]


def nearest_pair(A, B, sigma: float, max_iter: int = 12, vtol: float = 1e-10):
    """The eigenpair of the pencil A y = lambda B y (sparse or dense) nearest ``sigma``, by inverse iteration,
    or None when it does not settle (two eigenvalues about as near, a complex pair, a singular shift).

    Notes
    -----
    With the LU of A - sigma B, each step solves (A - sigma B) z = B y and scales z to its largest
    entry: the component of y along the eigenvector of lambda grows by 1 / (lambda - sigma), so y
    turns towards the eigenvector of the eigenvalue nearest sigma by the factor
    rho = |lambda_1 - sigma| / |lambda_2 - sigma| per step. The pair is returned once y changes by at
    most ``vtol`` (entries scaled to a largest of 1) in a step that is at most 0.2 of the step before
    (the contraction of a clearly nearest eigenvalue), and (A - lambda B) y is that small, with
    lambda = sigma + y_j / z_j. A complex pair turns y round without settling, so it never passes.
    Seeded by a level's certified energy on a finite-difference grid, rho is the grid's error over the
    level spacing (1e-4 and below) and three or four solves suffice, against about a hundred in
    ARPACK's restarted Arnoldi for the six nearest eigenpairs. The caller refines the pair by Newton's
    method. A start vector with no component along the nearest eigenvector could not reach it: the
    start is fixed pseudo-random.
    """
    n = A.shape[0]
    if sp.issparse(A) or sp.issparse(B):
        A, B = sp.csc_matrix(A), sp.csr_matrix(B)
        try:
            with np.errstate(all="ignore"):
                solve = spla.splu(A - sigma * B).solve
        except RuntimeError:            # exactly singular: sigma is an eigenvalue of the grid
            return None
    else:
        A, B = np.asarray(A, dtype=float), np.asarray(B, dtype=float)
        with np.errstate(all="ignore"), warnings.catch_warnings():
            warnings.simplefilter("ignore", sla.LinAlgWarning)      # an exactly singular shift: z is not finite
            lu = sla.lu_factor(A - sigma * B, check_finite=False)
        solve = partial(sla.lu_solve, lu, check_finite=False)
    y = np.random.default_rng(20261205).standard_normal(n)
    y /= y[np.argmax(np.abs(y))]
    change = math.inf
    for _ in range(max_iter):
        with np.errstate(all="ignore"):
            z = solve(B @ y)
        j = int(np.argmax(np.abs(z)))
        if not np.all(np.isfinite(z)) or z[j] == 0.0:
            return None
        y_new = z / z[j]
        step = float(np.max(np.abs(y_new - y)))
        if step <= vtol and step <= 0.2 * change:
            lam = sigma + 1.0 / float(z[j])     # y_j = 1: z_j = 1 / (lambda - sigma)
            with np.errstate(all="ignore"):
                Ay, By = A @ y_new, B @ y_new
                res = float(np.max(np.abs(Ay - lam * By)))
                size = float(np.max(np.abs(Ay)) + abs(lam) * np.max(np.abs(By)))
            return (lam, y_new) if res <= 1e-8 * size else None
        y, change = y_new, step
    return None


def _bordered_solver(op, E: float, y, j: int):
    """Factorize [[T(E) with column j replaced by T'(E) y]] once; return a solver.

    Replacing column j (where y is pinned to 1) by T'(E) y gives the bordered
    Newton matrix without growing it. The factorization is reused for a few
    steps (a chord iteration); with the residual in extended precision the
    iteration still converges to full accuracy.
    """
    own = getattr(op, "bordered_solver", None)
    if own is not None:           # the operator knows its structure (banded spectral elements)
        return own(E, y, j)
    col = op.dT_y(E, y)
    T = op.matrix(E)
    if sp.issparse(T):
        return spla.factorized(_with_column(T, j, col))
    T = np.array(T)
    T[:, j] = col
    lu = sla.lu_factor(T, check_finite=False)
    return lambda rhs: sla.lu_solve(lu, rhs, check_finite=False)


def _with_column(T, j: int, col) -> sp.csc_matrix:
    """T (sparse) with column j replaced by the nonzeros of ``col``, in CSC with sorted indices: the
    arrays a LIL assignment gives (which cost 12 ms at n = 9600, as much as the factorization)."""
    A = T.tocsc()
    if not A.has_sorted_indices:
        A = A.sorted_indices()
    start, end = A.indptr[j], A.indptr[j + 1]
    nz = np.nonzero(col)[0]
    data = np.concatenate((A.data[:start], np.asarray(col, dtype=A.dtype)[nz], A.data[end:]))
    indices = np.concatenate((A.indices[:start], nz.astype(A.indices.dtype), A.indices[end:]))
    indptr = A.indptr.copy()
    indptr[j + 1:] += len(nz) - (end - start)
    return sp.csc_matrix((data, indices, indptr), shape=A.shape)


@dataclass(frozen=True)
class Refined:
    """Outcome of :func:`refine`: energy, eigenvector, iterations, status."""

    energy: float
    vector: np.ndarray
    iterations: int
    converged: bool
    step: float


NOISE_ULPS = 8      # the rounding of an energy on an operator: this many ulp times op.energy_noise(y)


def _stalled_at_noise(op, y, step: float, ext: bool) -> bool:
    """Whether a Newton step is within the rounding of the residual: NOISE_ULPS u op.energy_noise(y)
    (u = 2^-64 with extended-precision residuals, 2^-53 without; False for operators without it, or
    without ``noise_stalls``, where :func:`refine` records that bound for each energy it returns so).
    Measured on square-well p and d levels 1e-8 to 3e-9 of the depth below the threshold: Newton's steps
    stalled at about u times that scale, and counts in double precision placed the level within 1.9
    times 2^-53 times it (45 rungs)."""
    if not hasattr(op, "noise_stalls"):
        return False
    bound = energy_rounding(op, y, ext)
    return bound is not None and step <= bound


def energy_rounding(op, y, ext: bool = False) -> float | None:
    """The rounding of the level of y on ``op``: NOISE_ULPS u op.energy_noise(y) (u as in
    :func:`_stalled_at_noise`), or None for an operator without ``energy_noise``."""
    noise = getattr(op, "energy_noise", None)
    return None if noise is None else NOISE_ULPS * _unit(ext) * noise(np.asarray(y, dtype=float))


def _unit(ext: bool) -> float:
    """Unit rounding of the residual: of long double with extended precision (2^-64 on x87), else 2^-53."""
    return float(np.finfo(np.longdouble).eps) / 2 if ext else 2.0**-53


def refine(op, E0: float, y0, max_iter: int = 30, rtol: float | None = None) -> Refined:
    """Newton's method for T(E) y = 0, y[j] = 1, from a seed (E0, y0).

    Notes
    -----
    The bordered system [[T(E), T'(E) y], [e_j^T, 0]] [dy, dE] = -[T(E) y, 0]
    is solved in double precision (dense LU or sparse LU, refactorized every
    fourth step); the residual
    T(E) y comes from ``op.residual`` (extended precision on spectral grids;
    ``op.residual_double`` when rtol >= 1e-12 asks for no more than double gives,
    and for the steps above 1e-10 |E| in any case).
    Iteration stops when |dE| <= rtol |E| twice in a row, or once right after a
    step below 1e-8 |E|, or after a first step below 1e-2 sqrt(rtol) |E| (the
    seed was so close that the next step, smaller by a factor of at most about
    |E| / gap, would fall below rtol) (rtol defaults to
    1e-17 with extended-precision residuals, 1e-15 without), or after
    ``max_iter`` steps (then ``converged`` is False). A residual that is not finite (the iteration ran
    off) also ends it, not converged.
    """
    y = np.asarray(y0, dtype=float)
    j = int(np.argmax(np.abs(y)))
    y = y / y[j]
    ext = bool(getattr(op.grid, "extended", False))
    residual = op.residual
    coarse = None
    if ext and hasattr(op, "residual_double"):
        if rtol is not None and rtol >= 1e-12:
            ext, residual = False, op.residual_double   # a loose stop needs no extended precision
        else:
            coarse = op.residual_double     # the first, large steps: double is as good and cheaper
    if rtol is None:
        rtol = 1e-17 if ext else 1e-15
    E = np.longdouble(E0) if ext else float(E0)
    yw = y.astype(np.longdouble) if ext else y.copy()
    small = 0
    step = np.inf
    solve_bordered = None
    noisy = False       # a step counted small only because it stalled at the residual's rounding
    for it in range(1, max_iter + 1):
        Ef = float(E)
        if coarse is not None and step <= 1e-10 * abs(float(E)):
            coarse = None                    # close: extended precision from here on
        with np.errstate(over="ignore", invalid="ignore"):
            res = np.asarray((coarse or residual)(E, yw), dtype=float)
        if not np.all(np.isfinite(res)):
            # run off to energies (or vectors) whose residual overflows: a seed between two nearly equal
            # roots of a Klein-Gordon pair at its merge did that; the caller tries its other means
            return Refined(Ef, np.asarray(yw, dtype=float), it, False, math.inf)
        if solve_bordered is None or it % 4 == 0:
            solve_bordered = _bordered_solver(op, Ef, np.asarray(yw, dtype=float), j)
        sol = solve_bordered(-res)
        dE = sol[j]
        dy = sol.copy()
        dy[j] = 0.0
        yw = yw + dy.astype(yw.dtype)
        E = E + type(E)(dE)
        prev, step = step, abs(float(dE))
        # converged: a step at the rounding level, or steps that stopped shrinking while already
        # tiny (a level very near threshold, |E| ~ 1e-7, may never meet a relative 1e-17), or at the
        # rounding of the residual itself (_stalled_at_noise: a level 1e-8 of its well's depth below
        # the threshold, whose steps stalled at 3e-8 relative and never converged)
        small_step = step <= rtol * abs(float(E)) or step == 0.0
        stalled = step > 0.5 * prev and step <= 1e-14 * abs(float(E))
        at_noise = not (small_step or stalled) and step > 0.5 * prev and _stalled_at_noise(op, yw, step, ext)
        if small_step or stalled or at_noise:
            small += 1
            noisy |= at_noise
            # two small steps in a row; or one, after a step so small that the iteration contracts
            # by 1e-6 or better (its factor is about the size of the previous step over the gap)
            if small >= 2 or prev <= 1e-8 * abs(float(E)):
                if noisy:           # the caller's estimate must cover that rounding (op.noise_stalls)
                    op.noise_stalls[float(E)] = energy_rounding(op, yw, ext)
                return Refined(float(E), np.asarray(yw, dtype=float), it, True, step)
        elif it == 1 and step <= 1e-2 * math.sqrt(rtol) * abs(float(E)):
            # a first step so small that the next one, quadratically smaller by a factor up to
            # |E| / gap (1e4 allowed here), would fall below rtol: the seed was already that close
            return Refined(float(E), np.asarray(yw, dtype=float), it, True, step)
        else:
            small = 0
    return Refined(float(E), np.asarray(yw, dtype=float), max_iter, False, step)
