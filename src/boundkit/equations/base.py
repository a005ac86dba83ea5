"""The contract of a radial equation, and the operator every equation shares.

All three equations are written in one factorized Sturm-Liouville form for
the (large-component) radial function u(r) = r R(r):

    T(E) u = -(d/dr - kappa/r) p(r, E) (d/dr + kappa/r) u + (q(r, E) - E) u = 0

with E the binding energy (total minus rest energy). An equation supplies
p, q, their derivatives in E, kappa and the exponent gamma of u ~ r^gamma at
the origin. For fixed E this is a self-adjoint Sturm-Liouville problem with
p > 0, so its k-th eigenfunction has exactly k nodes: there are no spurious
states to begin with, and the node count labels each level.
"""
from __future__ import annotations

from dataclasses import dataclass
from typing import Any, ClassVar

import numpy as np
import scipy.sparse as sp

from ..discretize.base import Grid

__all__ = ["RadialEquation", "Sample", "FactorizedOperator", "decay_steps"]


@dataclass(frozen=True)
class Sample:
    """Potential values on a grid (vector V, scalar S, spin-orbit factor W), in double and, when
    the grid refines in extended precision, in ``numpy.longdouble``."""

    r: np.ndarray
    V: np.ndarray
    S: np.ndarray
    W: np.ndarray | None = None    # spin-orbit radial factor U(r), when the potential has one

    def cast(self, dtype) -> "Sample":
        W = None if self.W is None else self.W.astype(dtype)
        return Sample(self.r.astype(dtype), self.V.astype(dtype), self.S.astype(dtype), W)


def decay_steps(excess: np.ndarray, r: np.ndarray) -> np.ndarray:
    """WKB decay exponent gained between neighbouring radii ``r`` (one value per interval; negative
    where ``r`` descends): the trapezoid rule on sqrt(max(excess, 0)), with ``excess`` a local squared
    decay rate on those radii (:meth:`RadialEquation.excess`, or that without the centrifugal term).
    Zero where the level is classically allowed.

    Notes
    -----
    The exponent of the WKB solution is the integral of sqrt(excess) dr; its cumulative sum from a
    turning point says where a level has decayed by a given number of e-folds.
    """
    k = np.sqrt(np.clip(excess, 0, None))
    return 0.5 * (k[1:] + k[:-1]) * np.diff(r)


class RadialEquation:
    """Base class of a radial equation for one channel.

    A subclass must:

    1. set ``name`` and ``spin`` (0 or 1/2) and store the channel (``l``,
       ``kappa``, ``j``) and the mass ``mass`` (atomic units) in ``__init__``;
    2. implement ``p(E, s)``, ``dp_dE(E, s)``, ``q(E, s)``, ``dq_dE(E, s)``
       for a :class:`Sample` ``s``; they must work for float and
       ``numpy.longdouble`` arrays alike;
    3. set ``kappa_eff`` (the kappa of the factorized form) and implement
       ``gamma(potential)``, the exponent of u ~ r^gamma at the origin;
    4. implement ``energy_window(potential)``: (lower, upper) bounds for a
       binding energy of a bound level;
    5. implement ``label(n)`` and, for two-component equations,
       ``small_component``.
    """

    name: ClassVar[str] = ""
    spin: ClassVar[float] = 0.0
    # p and q do not depend on E, so K(E) = K(0) - E M (the Schrodinger equation)
    energy_linear: ClassVar[bool] = False
    l: int
    kappa: int | None
    j: float | None
    mass: float
    kappa_eff: int

    def p(self, E, s: Sample):  # pragma: no cover - contract
        raise NotImplementedError

    def dp_dE(self, E, s: Sample):
        return 0 * s.r

    def q(self, E, s: Sample):  # pragma: no cover - contract
        raise NotImplementedError

    def dq_dE(self, E, s: Sample):
        return 0 * s.r

    def gamma(self, potential) -> float:  # pragma: no cover - contract
        raise NotImplementedError

    @staticmethod
    def _refuse_core(potential, probe: str, message, *args) -> None:
        """Raise ValueError(message(r, y)) when the potential's origin probe ``probe`` (a method returning
        (radii, values) or None) finds a core the equation does not take; a potential without it passes."""
        method = getattr(potential, probe, None)
        found = method(*args) if method is not None else None
        if found is not None:
            raise ValueError(message(*found))

    @classmethod
    def _refuse_fall_to_centre(cls, potential, scalar: bool = True) -> None:
        """Refuse V (+ S with ``scalar``) falling faster than -1/r^2 at the origin: no lowest level."""
        cls._refuse_core(potential, "origin_fall", lambda r, y: (
            f"potential: V falls faster than -1/r^2 at the origin (r^2 V = {y[0]:.3g} hartree bohr^2 at r = "
            f"{r[0]:.3g} bohr, {y[-1]:.3g} at r = {r[-1]:.3g} bohr): the particle falls to the centre and there is no "
            "lowest level; regularise the core, e.g. a finite-size cut-off"), scalar)

    @classmethod
    def _refuse_steep_scalar(cls, potential) -> None:
        """Refuse a Lorentz scalar falling faster than -1/r at the origin (Klein-Gordon, Dirac)."""
        cls._refuse_core(potential, "scalar_origin_fall", lambda r, y: (
            f"scalar: S falls faster than -1/r at the origin (r S = {y[0]:.3g} hartree bohr at r = {r[0]:.3g} bohr, "
            f"{y[-1]:.3g} at r = {r[-1]:.3g} bohr): it enters as (m c^2 + S)^2, so m c^2 + S changes sign near the "
            "origin and, squared, makes a core steeper than 1/r^2 that the relativistic solvers do not take (they "
            "take a scalar at most as singular as a Coulomb -Zs/r there); regularise the scalar's core, e.g. a "
            "finite-size cut-off"))

    @classmethod
    def _refuse_relativistic_cores(cls, potential) -> None:
        """The Klein-Gordon and Dirac refusals at the origin, in the order their messages are wanted: a steep
        scalar (S = -B/r^2 is also a 1/r^2 term), the Schrodinger-only terms, V falling faster than -1/r^2
        (a scalar enters squared, as (m c^2 + S)^2), V steeper than 1/r of either sign (V enters squared too,
        as (E - V)^2)."""
        cls._refuse_steep_scalar(potential)
        cls._refuse_nonrelativistic_terms(potential)
        cls._refuse_fall_to_centre(potential, scalar=False)
        cls._refuse_steep_vector(potential)

    @classmethod
    def _refuse_steep_vector(cls, potential) -> None:
        """Refuse V growing faster than 1/r at the origin, of either sign (Klein-Gordon, Dirac): the
        relativistic equations take it squared (:meth:`Potential.vector_origin_steep`)."""
        cls._refuse_core(potential, "vector_origin_steep", lambda r, y: (
            f"potential: V grows faster than 1/r at the origin (r |V| = {y[0]:.3g} hartree bohr at r = {r[0]:.3g} "
            f"bohr, {y[-1]:.3g} at r = {r[-1]:.3g} bohr): the relativistic equations take V squared, as (E - V)^2, "
            "which makes a core steeper than 1/r^2 there whatever V's sign, and the particle falls to the centre (a "
            "Coulomb -Z/r is the most singular V they take); regularise the core, e.g. a finite-size cut-off, or "
            "use the Schrodinger equation"))

    @staticmethod
    def _refuse_nonrelativistic_terms(potential) -> None:
        """Relativistic equations refuse terms that only the Schrodinger equation takes."""
        if potential.has_spin_orbit:
            raise ValueError("potential: a spin-orbit term (woods-saxon spin_orbit) is for the Schrodinger "
                             "equation with j; the Dirac equation makes its own spin-orbit force and a spin-0 "
                             "particle has none; set spin_orbit = 0")
        if getattr(potential, "origin_inverse_square", 0.0) != 0.0:
            raise ValueError("potential: a 1/r^2 term at the origin (kratzer B) is supported in the "
                             "Schrodinger equation only; use --equation schrodinger or set B = 0")

    def energy_window(self, potential) -> tuple[float, float]:
        return (-np.inf, np.inf if potential.confining else 0.0)

    def excess(self, E, s: Sample):
        """Local squared decay rate of the factorized form at energy E on the sample ``s``:
        (q - E) / p + kappa_eff (kappa_eff + 1) / r^2. Negative where a level of energy E is
        classically allowed; its square root integrates to the WKB decay exponent where positive."""
        k = self.kappa_eff
        return (self.q(E, s) - E) / self.p(E, s) + k * (k + 1) / s.r**2

    def label(self, n: int) -> str:  # pragma: no cover - contract
        raise NotImplementedError

    def small_component(self, E, s: Sample, g):
        """Small component from g = (d/dr + kappa/r) u, or None."""
        return None

    def density_weight(self, E, s: Sample):
        """Weight of u^2 in the normalisation integral (1 unless overridden)."""
        return None

    def channel(self) -> dict:
        return {"l": self.l, "kappa": self.kappa, "j": self.j}


_SPECTROSCOPIC = "spdfghiklmnoqrtuv"


def letter(l: int) -> str:
    """Spectroscopic letter of orbital l (s, p, d, f, g, h, i, k, ...)."""
    return _SPECTROSCOPIC[l] if l < len(_SPECTROSCOPIC) else f"[l={l}]"


class FactorizedOperator:
    """T(E) of an equation on a grid, with u = w(r) f and f the unknown.

    Notes
    -----
    The weight w = (r / (r + r_c))^gamma carries the r^gamma behaviour at the
    origin and tends to 1 beyond the core radius r_c, so f is smooth, tends
    to a constant at the origin and keeps the size of u where the level
    lives. With t = ln r and beta = d ln w / dt = gamma r_c / (r + r_c),
    (d/dr + kappa/r) u = (w / r) (f' + b f), b = beta + kappa, ' = d/dt.
    Multiplying T(E) u = 0 by r^2 / w:

        -(d/dt + a) [p (d/dt + b) f] + r^2 (q - E) f = 0,   a = beta - 1 - kappa.

    Boundary conditions: f'(t_min) = c r_min f(t_min), with c the first
    Frobenius correction f ~ 1 + c r computed from the operator itself, and
    f(t_max) = 0. Both boundary
    unknowns are eliminated before the eigen solve; the unknown vector y holds
    f at the inner nodes. At fixed E_ref the problem is the pencil
    A y = lambda B y with B = diag(r^2); a bound level is the fixed point
    lambda(E) = E.
    """

    def __init__(self, eq: RadialEquation, grid: Grid, sample: Sample, gamma: float,
                 r_core: float, E_ref: float = 0.0) -> None:
        self.eq, self.grid, self.sample, self.gamma, self.r_core = eq, grid, sample, gamma, r_core
        r = sample.r
        beta = gamma * r_core / (r + r_core)
        self.a = beta - 1 - eq.kappa_eff
        self.b = beta + eq.kappa_eff
        self.log_w = gamma * (np.log(r) - np.log(r + r_core))
        self.n = n = len(grid.t)
        D = grid.D
        d0 = D[0].toarray().ravel() if sp.issparse(D) else np.asarray(D[0])
        # eliminated unknowns: f at the first node (inner condition f' = s f) and at element
        # interfaces (continuous f'); f at the last node is 0; y holds f at the other nodes
        self.inner_slope = self._inner_slope(E_ref, d0)
        self.elim = [0, *grid.interfaces]
        self.keep = np.setdiff1d(np.arange(1, n - 1), np.asarray(grid.interfaces, dtype=int))
        self._E = self._elimination(d0, grid.jumps, np.float64)
        # rows are scaled by 1/p(E_ref): near a Coulomb origin the Dirac p goes like r, and
        # unscaled rows there would be tiny next to the others (bad for QZ and LU)
        self.row_scale = 1.0 / eq.p(E_ref, sample)[self.keep]
        self.B = sample.r[self.keep] ** 2 * self.row_scale
        if grid.extended:
            self._ext = sample.cast(np.longdouble)
            rl = self._ext.r
            beta_l = np.longdouble(gamma) * np.longdouble(r_core) / (rl + np.longdouble(r_core))
            self._a_ext = beta_l - 1 - eq.kappa_eff
            self._b_ext = beta_l + eq.kappa_eff
            self._E_ext = self._elimination(grid.D_ext[0], grid.jumps_ext, np.longdouble)
            self._scale_ext = 1 / eq.p(np.longdouble(E_ref), self._ext)[self.keep]

    def _elimination(self, d0, jumps, dtype):
        """Matrix giving the eliminated values of f from y (constraint rows solved)."""
        rows = [np.asarray(d0, dtype=dtype).copy()]
        rows[0][0] -= dtype(self.inner_slope)
        if jumps is not None and len(jumps):
            rows += [np.asarray(j, dtype=dtype) for j in jumps]
        C = np.array(rows, dtype=dtype)
        CE, CY = C[:, self.elim], C[:, self.keep]
        if dtype is np.float64:
            return -np.linalg.solve(CE, CY)
        return -_solve_small(CE, CY)

    def _inner_slope(self, E: float, d0) -> float:
        """df/dt at t_min for f = 1 + c r near the origin.

        Plugging f = 1 and f = r into the operator at the first node gives
        T(1) + c T(r) = 0, so f'/f = c r there (the first Frobenius
        correction). This makes the error of cutting the mesh at r_min
        quadratic in r_min instead of linear.
        """
        return frobenius_slope(self.eq, self.sample, d0, self.gamma, self.r_core, self.b[0], E)

    # -- expansion of the reduced unknowns to all nodes -------------------------
    def expand(self, y, elim=None):
        """f at every node from the reduced unknowns y."""
        elim = self._E if elim is None else elim
        f = np.zeros(self.n, dtype=np.result_type(y, elim))
        f[self.keep] = y
        f[self.elim] = elim @ y
        return f

    def weight(self):
        """w(r) at the nodes: u = w f."""
        return np.exp(self.log_w)

    def _T_full(self, f, E, D, s, a, b, derivative=False):
        eq = self.eq
        g = D @ f + b * f
        p = eq.dp_dE(E, s) if derivative else eq.p(E, s)
        w = p * g
        out = -(D @ w + a * w)
        if derivative:
            out = out + s.r**2 * (eq.dq_dE(E, s) - 1) * f
        else:
            out = out + s.r**2 * (eq.q(E, s) - E) * f
        return out[self.keep]

    def residual(self, E, y):
        """T(E) y, in extended precision when the grid refines that way."""
        if self.grid.extended:
            El = np.longdouble(E)
            yl = np.asarray(y, dtype=np.longdouble)
            return self._scale_ext * self._T_full(self.expand(yl, self._E_ext), El, self.grid.D_ext,
                                                  self._ext, self._a_ext, self._b_ext)
        return self.row_scale * self._T_full(self.expand(y), E, self.grid.D, self.sample, self.a, self.b)

    def dT_y(self, E, y):
        """dT/dE applied to y (double precision)."""
        return self.row_scale * self._T_full(self.expand(y), E, self.grid.D, self.sample, self.a, self.b,
                                             derivative=True)

    def matrix(self, E) -> Any:
        """T(E) on the reduced unknowns: dense array or sparse CSR."""
        eq, s, D = self.eq, self.sample, self.grid.D
        p = eq.p(E, s)
        diag = s.r**2 * (eq.q(E, s) - E)
        keep, elim = self.keep, self.elim
        if self.grid.dense:
            full = -(D + np.diag(self.a)) @ (p[:, None] * (D + np.diag(self.b))) + np.diag(diag)
            Tb = full[np.ix_(keep, keep)] + full[np.ix_(keep, elim)] @ self._E
            return self.row_scale[:, None] * Tb
        La, Pb = self._sparse_factors()
        Pp = Pb.copy()
        Pp.data *= np.repeat(np.broadcast_to(np.asarray(p, dtype=float), (self.n,)), np.diff(Pb.indptr))
        return (sp.diags(self.row_scale * diag[keep]) - La @ Pp).tocsr()

    def _sparse_factors(self):
        """(L (D + a), (D + b) P), the factors of :meth:`matrix` that do not depend on E (sparse grids;
        built once per operator).

        Notes
        -----
        With P the n x m matrix that expands the reduced unknowns to every node (:meth:`expand`: the
        identity on the kept nodes, the elimination rows on the others) and L = diag(row scale) times the
        kept rows, the reduced operator is T(E) = L [-(D + a) diag(p) (D + b) + diag(r^2 (q - E))] P
        = diag(row scale r^2 (q - E))_kept - [L (D + a)] diag(p) [(D + b) P]: one sparse product per
        energy instead of five (a finite-difference level needs it twice per grid).
        """
        if getattr(self, "_factors", None) is None:
            D, keep, elim = self.grid.D, self.keep, self.elim
            m = len(keep)
            rows = np.concatenate((keep, np.repeat(elim, m)))
            cols = np.concatenate((np.arange(m), np.tile(np.arange(m), len(elim))))
            data = np.concatenate((np.ones(m), np.asarray(self._E, dtype=float).ravel()))
            P = sp.csr_matrix((data, (rows, cols)), shape=(self.n, m))
            P.eliminate_zeros()
            La = (sp.diags(self.row_scale) @ (D + sp.diags(self.a)).tocsr()[keep]).tocsr()
            Pb = ((D + sp.diags(self.b)) @ P).tocsr()
            Pb.sort_indices()
            self._factors = (La, Pb)
        return self._factors

    def pencil(self, E_ref):
        """(A, B) with A y = lambda B y the fixed-E problem at E_ref."""
        T = self.matrix(E_ref)
        if self.grid.dense:
            return T + E_ref * np.diag(self.B), np.diag(self.B)
        return T + E_ref * sp.diags(self.B), sp.diags(self.B).tocsr()


_SLOPE_MAX = 0.5     # largest |df/dt| at the first node that frobenius_slope accepts as an expansion


def frobenius_slope(eq: RadialEquation, s: Sample, d0, gamma: float, r_core: float, b0: float, E) -> float:
    """df/dt at the first node of ``s`` for f = 1 + c r near the origin (see
    :meth:`FactorizedOperator._inner_slope`); ``d0`` is the first row of a
    derivative matrix in t on the nodes of ``s``, b0 = beta + kappa there."""
    r0 = s.r[0]
    E = float(E)
    p = eq.p(E, s)
    p_t = float(d0 @ p)
    a = b0 - 1 - 2 * eq.kappa_eff          # a = beta - 1 - kappa
    b_t = -gamma * r_core * r0 / (r0 + r_core) ** 2   # d(beta)/dt
    qE = eq.q(E, s)[0] - E
    T1 = -(b0 * (p_t + a * p[0]) + p[0] * b_t) + r0**2 * qE
    Tr = -((1 + b0) * (p_t + (1 + a) * p[0]) + p[0] * b_t) * r0 + r0**3 * qE
    with np.errstate(all="ignore"):
        ratio = T1 / Tr
    if not np.isfinite(ratio) or abs(Tr) < 1e-300:
        return 0.0
    slope = float(-ratio * r0)
    # f = 1 + c r is an expansion only while |c r0| << 1. A larger value means the first node is not
    # in the Frobenius region at all: an inner end pushed out by the WKB decay (a repulsive 1/r^2 core),
    # where w ~ r^gamma fails too. Tr then passes through zero as parameters change (a muon in a
    # Kratzer well, l = 1: slope -80 at B = 0.205, +12 at B = 0.2), and a large negative slope made
    # the boundary term a spurious negative direction of K(E) (no level found). The level has decayed
    # by e^-27 there, so f' = 0 serves.
    return slope if abs(slope) <= _SLOPE_MAX else 0.0


def _solve_small(A, B):
    """Solve A X = B for a small square A by Gaussian elimination with partial
    pivoting, in the precision of the arrays (numpy.linalg has no longdouble)."""
    A = A.copy()
    X = B.copy()
    m = A.shape[0]
    for k in range(m):
        piv = k + int(np.argmax(np.abs(A[k:, k])))
        if piv != k:
            A[[k, piv]] = A[[piv, k]]
            X[[k, piv]] = X[[piv, k]]
        for i in range(k + 1, m):
            factor = A[i, k] / A[k, k]
            A[i, k:] -= factor * A[k, k:]
            X[i] -= factor * X[k]
    for k in range(m - 1, -1, -1):
        X[k] = (X[k] - A[k, k + 1:] @ X[k + 1:]) / A[k, k]
    return X
