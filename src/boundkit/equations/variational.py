"""The fixed-energy operator as a symmetric matrix (the quadratic form of T(E)).

Every equation has the factorized form of :mod:`boundkit.equations.base`,

    T(E) u = -(d/dr - kappa/r) p(r, E) (d/dr + kappa/r) u + (q(r, E) - E) u,

whose quadratic form, after one integration by parts, is

    a_E(u, u) = integral of [ p ((d/dr + kappa/r) u)^2 + (q - E) u^2 ] dr.

With u = w(r) f, w = (r / (r + r_c))^gamma and t = ln r this reads

    a_E = integral of [ p w^2 / r (f' + b f)^2 + (q - E) w^2 r f^2 ] dt,
    b = beta + kappa, beta = gamma r_c / (r + r_c), ' = d/dt.

On spectral elements (:mod:`boundkit.discretize.elements`) with the GLL
quadrature of each element this becomes the symmetric matrix

    K(E) = sum over elements of G_e^T diag(w_e p w^2 / r) G_e
           + diag(w (q - E) w^2 r) + sigma(E) e_0 e_0^T,      G_e = D_e + diag(b),

on the nodal values of f, with f(t_max) = 0 imposed by dropping the last
node. The inner end r_min is a natural boundary: the term sigma = p w^2/r (s + b)
at the first node makes the boundary condition f'/f = s of the first Frobenius
correction (f ~ 1 + c r) the natural one, so cutting the mesh at r_min costs
O(r_min^2) relative to the leading behaviour. The mass matrix
M (the same integral of w^2 r f^2) is symmetric and positive definite.

Why symmetric matters: dK/dE = G^T diag(w dp/dE w^2/r) G + diag(w (dq/dE - 1) w^2 r)
is negative definite for every equation here (dp/dE <= 0, dq/dE < 1 in the
bound-state window), so the eigenvalues of the pencil (K(E), M) all fall as E
rises, and the number of negative ones (Sylvester's inertia of K(E)) counts the
levels of the discrete problem below E. See :mod:`boundkit.locator`.
"""
from __future__ import annotations

import numpy as np

from ..discretize.elements import ElementGrid
from .base import RadialEquation, Sample, frobenius_slope

__all__ = ["SymmetricOperator"]


class SymmetricOperator:
    """K(E) of an equation on a spectral-element grid; see the module docstring.

    Integrals are done on each element's Gauss-Legendre points (``grid.quad``),
    where ``sample_q`` holds the potential; ``sample`` holds it at the nodes
    (for the boundary term and the radial functions). The mass matrix ``M`` is
    then a dense symmetric positive-definite matrix.

    Provides what :func:`boundkit.eigen.refine` needs (``matrix``, ``residual``
    in extended precision, ``dT_y``, ``grid.extended``) with rows scaled by
    ``row_scale`` (1 / |K_ii| at the reference energy: the raw rows differ by many
    orders of magnitude near the origin), plus the unscaled symmetric pieces
    for counting and seeding (``symmetric``, ``M``).
    """

    def __init__(self, eq: RadialEquation, grid: ElementGrid, sample: Sample, sample_q: Sample,
                 gamma: float, r_core: float, E_ref: float = 0.0) -> None:
        self.eq, self.grid, self.sample, self.gamma, self.r_core = eq, grid, sample, gamma, r_core
        self.n = n = grid.size
        self.keep = np.arange(n - 1)
        self._q = {np.float64: sample_q, np.longdouble: sample_q.cast(np.longdouble)}
        sizes = [len(q.t) for q in grid.quad]
        self._slices = [slice(a, a + m) for a, m in zip(np.cumsum([0] + sizes[:-1]), sizes)]
        rc = r_core
        r = sample.r
        beta = gamma * rc / (r + rc)
        self.b = beta + eq.kappa_eff
        self.log_w = gamma * (np.log(r) - np.log(r + rc))
        self._pieces = {}
        for dtype in (np.float64, np.longdouble):
            sq = self._q[dtype]
            rq = sq.r
            bq = dtype(gamma) * dtype(rc) / (rq + dtype(rc)) + eq.kappa_eff
            w2 = np.exp(2 * dtype(gamma) * (np.log(rq) - np.log(rq + dtype(rc))))
            G, B, wq = [], [], []
            for sl, q in zip(self._slices, grid.quad):
                Bd = q.B.astype(dtype)
                G.append(q.Bt.astype(dtype) + bq[sl, None] * Bd)
                B.append(Bd)
                wq.append(q.w.astype(dtype))
            self._pieces[dtype] = dict(Pf=w2 / rq, Rf=w2 * rq, G=G, B=B, wq=wq)
        self.M = self._assemble(np.ones(0), mass=True)
        K = self.symmetric(E_ref)
        self.row_scale = 1.0 / np.maximum(np.abs(np.diag(K)), 1e-300)
        self._scale_ext = self.row_scale.astype(np.longdouble)

    # -- pieces -------------------------------------------------------------------
    def _sigma(self, E, derivative=False) -> float:
        """Natural-boundary term at the first node (see the module docstring)."""
        s = self.sample
        s0 = Sample(s.r[:1], s.V[:1], s.S[:1], None if s.W is None else s.W[:1])
        p = (self.eq.dp_dE if derivative else self.eq.p)(float(E), s0)[0]
        w2r = np.exp(2 * self.log_w[0]) / s.r[0]
        return float(p * w2r * (self._slope(E) + self.b[0]))

    def _slope(self, E) -> float:
        """f'/f at the first node from f ~ 1 + c r (c from the operator itself)."""
        s = self.sample
        i0, i1 = self.grid.elements[0]
        sl = slice(i0, i1 + 1)
        se = Sample(s.r[sl], s.V[sl], s.S[sl], None if s.W is None else s.W[sl])
        return frobenius_slope(self.eq, se, self.grid.D[0][0].astype(float), self.gamma, self.r_core,
                               self.b[0], E)

    def _coefficients(self, E, dtype, derivative=False):
        """(p w^2/r, (q - E) w^2 r) at the quadrature points, or their E-derivatives."""
        eq, pc, s = self.eq, self._pieces[dtype], self._q[dtype]
        E = dtype(E)
        if derivative:
            return eq.dp_dE(E, s) * pc["Pf"], (eq.dq_dE(E, s) - 1) * pc["Rf"]
        return eq.p(E, s) * pc["Pf"], (eq.q(E, s) - E) * pc["Rf"]

    def _assemble(self, E, derivative=False, mass=False) -> np.ndarray:
        pc = self._pieces[np.float64]
        if mass:
            kin, pot = None, pc["Rf"]
        else:
            kin, pot = self._coefficients(E, np.float64, derivative)
        K = np.zeros((self.n, self.n))
        for (i0, i1), sl, G, B, wq in zip(self.grid.elements, self._slices, pc["G"], pc["B"], pc["wq"]):
            blk = B.T @ ((wq * pot[sl])[:, None] * B)
            if kin is not None:
                blk += G.T @ ((wq * kin[sl])[:, None] * G)
            K[i0:i1 + 1, i0:i1 + 1] += blk
        return K[:-1, :-1]

    def _apply(self, E, f, dtype, derivative=False):
        """K(E) f (or dK/dE f) on all nodes, in ``dtype``."""
        pc = self._pieces[dtype]
        kin, pot = self._coefficients(E, dtype, derivative)
        out = np.zeros(self.n, dtype=dtype)
        for (i0, i1), sl, G, B, wq in zip(self.grid.elements, self._slices, pc["G"], pc["B"], pc["wq"]):
            fe = f[i0:i1 + 1]
            out[i0:i1 + 1] += G.T @ (wq * kin[sl] * (G @ fe)) + B.T @ (wq * pot[sl] * (B @ fe))
        out[0] += dtype(self._sigma(E, derivative)) * f[0]
        return out

    def symmetric(self, E, derivative=False) -> np.ndarray:
        """K(E) (or dK/dE) on the kept nodes, unscaled and symmetric (double precision)."""
        K = self._assemble(E, derivative)
        K[0, 0] += self._sigma(E, derivative)
        return K

    # -- what eigen.refine needs ----------------------------------------------------
    def expand(self, y, elim=None):
        f = np.zeros(self.n, dtype=np.result_type(y, np.float64))
        f[:-1] = y
        return f

    def weight(self):
        return np.exp(self.log_w)

    def matrix(self, E):
        return self.row_scale[:, None] * self.symmetric(E)

    def residual(self, E, y):
        f = self.expand(np.asarray(y, dtype=np.longdouble)).astype(np.longdouble)
        return self._scale_ext * self._apply(E, f, np.longdouble)[:-1]

    def dT_y(self, E, y):
        f = self.expand(np.asarray(y, dtype=float))
        return self.row_scale * self._apply(E, f, np.float64, derivative=True)[:-1]

    def derivative_in_t(self, f):
        """df/dt at every node (the two one-sided values averaged at shared nodes)."""
        out = np.zeros(self.n)
        hits = np.zeros(self.n)
        for (i0, i1), De in zip(self.grid.elements, self.grid.D):
            out[i0:i1 + 1] += De.astype(float) @ f[i0:i1 + 1]
            hits[i0:i1 + 1] += 1
        return out / hits
