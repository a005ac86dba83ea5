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

from functools import lru_cache

import numpy as np

from ..discretize.elements import ElementGrid, _reference_quadrature
from .base import RadialEquation, Sample, frobenius_slope

__all__ = ["SymmetricOperator"]


def _add_nodal(out: np.ndarray, idx: np.ndarray, values: np.ndarray) -> None:
    """out[idx] += values for the elements of one batch: neighbouring elements share their end
    node, so even and odd positions are added separately (no index repeats within one addition)."""
    for par in (0, 1):
        out[idx[par::2]] += values[par::2]


@lru_cache(maxsize=1024)
def _padded_reference(d: int, me: int, m: int):
    """(B, Bt, w) of the degree-d reference element with me Gauss points, padded to m rows with
    zeros (extended precision; w in double). Cached: shared, read-only."""
    _, wy, B, Bt = _reference_quadrature(d, me)
    Bp = np.zeros((m, d + 1), dtype=np.longdouble)
    Btp = np.zeros((m, d + 1), dtype=np.longdouble)
    wp = np.zeros(m)
    Bp[:me], Btp[:me], wp[:me] = B, Bt, wy
    for a in (Bp, Btp, wp):
        a.flags.writeable = False
    return Bp, Btp, wp


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
        rc = r_core
        r = sample.r
        beta = gamma * rc / (r + rc)
        self.b = beta + eq.kappa_eff
        self.log_w = gamma * (np.log(r) - np.log(r + rc))
        self._pieces = {}
        self._sigma_cache = {}
        self._first = None
        self._build_batches(grid)
        self._M = None
        self._mass_blocks = None
        diag = np.zeros(self.n)          # the diagonal of K(E_ref) alone (no dense assembly)
        for bt, blk in zip(self._batches, self._blocks(E_ref, np.float64)):
            _add_nodal(diag, bt["idx"], np.diagonal(blk, axis1=1, axis2=2))
        diag[0] += self._sigma(E_ref)
        self.row_scale = 1.0 / np.maximum(np.abs(diag[:-1]), 1e-300)
        self._scale_ext = self.row_scale.astype(np.longdouble)
        self._band_scale = None
        self._band_index = None
        self._factor_cache = None
        self._derivative = None
        self._band_parts = None
        self.noise_stalls: dict[float, float] = {}     # energy -> bound: Newton stopped at the residual's rounding

    def _build_batches(self, grid: ElementGrid) -> None:
        """Stack the elements of each degree so one batched product assembles them all.

        Quadrature points are padded to the largest count of the batch with zero
        rows of B and G (padding points repeat a real point, so the potential there
        is finite); elements of one batch at even and at odd positions share no node,
        so each parity scatters with one fancy-indexed addition. The reference
        matrices come padded from a cache; only the element lengths differ.
        """
        sizes = [len(q.t) for q in grid.quad]
        starts = np.cumsum([0] + sizes[:-1])
        degs = [i1 - i0 for (i0, i1) in grid.elements]
        sizes_a = np.array(sizes)
        first = np.array([i0 for (i0, _) in grid.elements])
        self.band = max(degs)
        self._batches = []
        bq_ext = self._b_at(np.longdouble)
        for d in sorted(set(degs)):
            els = [e for e, x in enumerate(degs) if x == d]
            m = max(sizes[e] for e in els)
            ev = np.array(els)
            qidx = starts[ev][:, None] + np.minimum(np.arange(m)[None, :], sizes_a[ev][:, None] - 1)
            idx = first[ev][:, None] + np.arange(d + 1)[None, :]
            refs = [_padded_reference(d, sizes[e], m) for e in els]
            half = np.array([(grid.t_ext[grid.elements[e][1]] - grid.t_ext[grid.elements[e][0]]) / 2 for e in els],
                            dtype=np.longdouble)
            Bs = np.stack([r[0] for r in refs])
            Bt = np.stack([r[1] for r in refs]) / half[:, None, None]
            W = np.stack([r[2] for r in refs]) * half.astype(float)[:, None]
            G = Bt + bq_ext[qidx][:, :, None] * Bs        # pad rows of B and Bt are zero
            per = {np.longdouble: (Bs, G, W.astype(np.longdouble)),
                   np.float64: (Bs.astype(float), G.astype(float), W)}
            self._batches.append(dict(idx=idx, qidx=qidx, per=per, degree=d, elements=ev))
        for dtype in (np.float64, np.longdouble):
            sq = self._q[dtype]
            rq = sq.r
            w2 = np.exp(2 * dtype(self.gamma) * (np.log(rq) - np.log(rq + dtype(self.r_core))))
            self._pieces[dtype] = dict(Pf=w2 / rq, Rf=w2 * rq)

    def _b_at(self, dtype):
        """b = beta + kappa at the quadrature points."""
        rq = self._q[dtype].r
        return dtype(self.gamma) * dtype(self.r_core) / (rq + dtype(self.r_core)) + self.eq.kappa_eff

    # -- pieces -------------------------------------------------------------------
    def _sigma(self, E, derivative=False) -> float:
        """Natural-boundary term at the first node (see the module docstring); remembered per energy
        (Newton asks for it at the same energy for the residual, the matrix and dK/dE)."""
        key = (float(E), derivative)
        got = self._sigma_cache.get(key)
        if got is None:
            if len(self._sigma_cache) > 64:
                self._sigma_cache.clear()
            got = self._sigma_cache[key] = self._sigma_at(E, derivative)
        return got

    def _first_element(self):
        """(the potential at the first node, on the first element's nodes, and that element's first
        derivative row in double precision): what the boundary term reads, built once."""
        if self._first is None:
            s = self.sample
            s0 = Sample(s.r[:1], s.V[:1], s.S[:1], None if s.W is None else s.W[:1])
            i0, i1 = self.grid.elements[0]
            sl = slice(i0, i1 + 1)
            se = Sample(s.r[sl], s.V[sl], s.S[sl], None if s.W is None else s.W[sl])
            self._first = (s0, se, self.grid.D[0][0].astype(float))
        return self._first

    def _sigma_at(self, E, derivative=False) -> float:
        s = self.sample
        s0 = self._first_element()[0]
        p = (self.eq.dp_dE if derivative else self.eq.p)(float(E), s0)[0]
        w2r = np.exp(2 * self.log_w[0]) / s.r[0]
        return float(p * w2r * (self._slope(E) + self.b[0]))

    def _slope(self, E) -> float:
        """f'/f at the first node from f ~ 1 + c r (c from the operator itself)."""
        _, se, d0 = self._first_element()
        return frobenius_slope(self.eq, se, d0, self.gamma, self.r_core, self.b[0], E)

    def _coefficients(self, E, dtype, derivative=False):
        """(p w^2/r, (q - E) w^2 r) at the quadrature points, or their E-derivatives."""
        eq, pc, s = self.eq, self._pieces[dtype], self._q[dtype]
        E = dtype(E)
        if derivative:
            return eq.dp_dE(E, s) * pc["Pf"], (eq.dq_dE(E, s) - 1) * pc["Rf"]
        return eq.p(E, s) * pc["Pf"], (eq.q(E, s) - E) * pc["Rf"]

    @property
    def M(self) -> np.ndarray:
        """The mass matrix on the kept nodes (dense; built on first use)."""
        if self._M is None:
            self._M = self._dense(self._mass_element_blocks())
        return self._M

    def mass_apply(self, v) -> np.ndarray:
        """M v on the kept nodes, from the element blocks (no dense M)."""
        f = np.zeros(self.n)
        f[:-1] = v
        out = np.zeros(self.n)
        for bt, blk in zip(self._batches, self._mass_element_blocks()):
            idx = bt["idx"]
            _add_nodal(out, idx, np.matmul(blk, f[idx][:, :, None])[:, :, 0])
        return out[:-1]

    def _blocks(self, E, dtype, derivative=False, mass=False) -> list:
        """Element matrices of K(E) (or dK/dE, or M), one stacked array per batch."""
        if mass:
            kin, pot = None, self._pieces[dtype]["Rf"]
        else:
            kin, pot = self._coefficients(E, dtype, derivative)
        out = []
        for bt in self._batches:
            Bs, Gs, W = bt["per"][dtype]
            cp = W * pot[bt["qidx"]]
            blk = np.matmul(Bs.transpose(0, 2, 1), cp[:, :, None] * Bs)
            if kin is not None:
                ck = W * kin[bt["qidx"]]
                blk += np.matmul(Gs.transpose(0, 2, 1), ck[:, :, None] * Gs)
            out.append(blk)
        return out

    def _dense(self, blocks, last: bool = False) -> np.ndarray:
        """Dense matrix on the kept nodes from element blocks (with ``last``, on every node)."""
        K = np.zeros((self.n, self.n), dtype=blocks[0].dtype)
        for bt, blk in zip(self._batches, blocks):
            idx = bt["idx"]
            for par in (0, 1):
                ii = idx[par::2]
                K[ii[:, :, None], ii[:, None, :]] += blk[par::2]
        return K if last else K[:-1, :-1]

    def _apply(self, E, f, dtype, derivative=False):
        """K(E) f (or dK/dE f) on all nodes, in ``dtype``."""
        kin, pot = self._coefficients(E, dtype, derivative)
        out = np.zeros(self.n, dtype=dtype)
        for bt in self._batches:
            Bs, Gs, W = bt["per"][dtype]
            idx, qidx = bt["idx"], bt["qidx"]
            fe = f[idx][:, :, None]
            gk = (W * kin[qidx])[:, :, None] * np.matmul(Gs, fe)
            gp = (W * pot[qidx])[:, :, None] * np.matmul(Bs, fe)
            c = np.matmul(Gs.transpose(0, 2, 1), gk) + np.matmul(Bs.transpose(0, 2, 1), gp)
            _add_nodal(out, idx, c[:, :, 0])
        out[0] += dtype(self._sigma(E, derivative)) * f[0]
        return out

    def symmetric(self, E, derivative=False, last: bool = False) -> np.ndarray:
        """K(E) (or dK/dE) on the kept nodes (with ``last``, the last node too), unscaled and symmetric
        (double precision)."""
        K = self._dense(self._blocks(E, np.float64, derivative), last=last)
        K[0, 0] += self._sigma(E, derivative)
        return K

    def count_negative(self, E, open_end: float | None = None) -> int:
        """Number of negative eigenvalues of K(E) on the kept nodes (its inertia), by static
        condensation of the element interiors. With ``open_end`` (a number c >= 0) the last node is
        kept too, with the term c f(t_max)^2 added there: the natural boundary condition of
        :meth:`open_end_term` instead of f(t_max) = 0.

        Notes
        -----
        Order the nodes as element interiors I and element ends J. Then

            K = [[A, B], [B^T, C]],  A = diag(A_1, ..., A_m) (one block per element),

        and by the Haynsworth inertia additivity formula (E. V. Haynsworth, Linear Algebra Appl. 1,
        73 (1968)) the inertia of K is that of A plus that of the Schur complement
        S = C - B^T A^-1 B. Each A_e is small: its eigenvalues (no vectors) give its inertia, and an
        LU solve gives A_e^-1 B_e (eigenvectors only when A_e is exactly singular); S
        couples only the ends of one element, so it is tridiagonal, and its negative pivots in
        LDL^T without pivoting (the Sturm count, with tiny pivots replaced by -pivmin as LAPACK's
        bisection does) give the rest. Rows and columns are first scaled by sqrt(row_scale), a
        congruence that leaves the inertia unchanged. The cost is about m small eigenvalue problems
        instead of one dense Bunch-Kaufman factorization of the whole matrix.
        An interior block with an exactly zero eigenvalue (E a level of that element alone, with
        both ends fixed) is treated as slightly positive: the count of a matrix within rounding.
        """
        n = self.n
        scale = np.ones(n)
        scale[:-1] = np.sqrt(self.row_scale)
        m = len(self.grid.elements)
        diag = np.zeros(m + 1)
        off = np.zeros(m)
        neg = 0
        tiny = np.finfo(float).tiny
        for bt, blk in zip(self._batches, self._blocks(E, np.float64)):
            idx = bt["idx"]
            sc = scale[idx]
            blk = blk * sc[:, :, None] * sc[:, None, :]
            d = bt["degree"]                             # >= 2: every element has an interior
            A, Bc = blk[:, 1:-1, 1:-1], blk[:, 1:-1, ::d]
            w = np.linalg.eigvalsh(A)                    # the interiors' inertia; no vectors needed
            neg += int(np.count_nonzero(w < 0))
            try:
                # B^T A^-1 B by LU (with the eigenvectors, as before, the count cost 1.6 times as much)
                coupling = np.matmul(Bc.transpose(0, 2, 1), np.linalg.solve(A, Bc))
            except np.linalg.LinAlgError:               # an interior exactly singular: E is its level
                w, V = np.linalg.eigh(A)
                w = np.where(w == 0, tiny, w)
                P = np.matmul(V.transpose(0, 2, 1), Bc)
                coupling = np.matmul(P.transpose(0, 2, 1), P / w[:, :, None])
            ends = blk[:, ::d][:, :, ::d] - coupling     # (elements, 2, 2)
            pos = bt["elements"]                         # element e joins ends e and e + 1
            diag[pos] += ends[:, 0, 0]
            diag[pos + 1] += ends[:, 1, 1]
            off[pos] = ends[:, 0, 1]
        diag[0] += scale[0] ** 2 * self._sigma(E)
        if open_end is None:
            diag, off = diag[:-1], off[:-1]      # the last node is dropped (f = 0 there)
        else:
            diag[-1] += open_end
        pivmin = tiny * max(1.0, float(np.max(off**2, initial=0.0)))
        q = 1.0
        for k in range(len(diag)):
            q = diag[k] - (off[k - 1] ** 2 / q if k else 0.0)
            if abs(q) <= pivmin:
                q = -pivmin
            neg += q < 0
        return int(neg)

    def end_sample(self) -> Sample:
        """The potential at the box's outer end R (the last node), as a one-point sample."""
        s = self.sample
        return Sample(s.r[-1:], s.V[-1:], s.S[-1:], None if s.W is None else s.W[-1:])

    def open_end_term(self, E) -> float:
        """c of the term c f(t_max)^2 that makes the outer end of the box open to a potential-free
        exterior at the threshold (E = 0): the natural boundary condition of the form with it is
        u'/u = -l'/R at R = r_max, the log-derivative of the zero-energy solution r^(-l') that
        vanishes far out, with l'(l' + 1) = kappa (kappa + 1) + R^2 (q - E) / p at R (l' = l when the
        potential has died out by R; an inverse-square tail B/r^2 is kept exactly).

        Notes
        -----
        Outside R the zero-energy solution is A r^(l'+1) + B r^(-l'), and it has one more node beyond R
        exactly when u'/u at R lies below -l'/R. So the number of negative eigenvalues of K(0) with this
        end is the number of nodes of the zero-energy solution on (0, inf): the number of bound levels
        (the oscillation theorem; e.g. F. Calogero, Variable Phase Approach to Potential Scattering,
        Academic Press 1967, for the zero-energy node count; common practice). With f(t_max) = 0
        instead, a level bound by less than about 1/(2 m R^2) is not counted. Integrating p (u' +
        kappa u / r)^2 by parts leaves p (u' + kappa u / r) v at R, so c = p (l' - kappa) / R w(R)^2.
        """
        end = self.end_sample()
        R = float(end.r[0])
        p = float(self.eq.p(float(E), end)[0])
        qe = float(self.eq.q(float(E), end)[0]) - float(E)
        k = float(self.eq.kappa_eff)
        lp = -0.5 + float(np.sqrt(max(0.25 + k * (k + 1) + R * R * qe / p, 0.0)))
        return p * (lp - k) / R * float(np.exp(2 * self.log_w[-1]))

    def open_pencil(self, E, open_end: float) -> tuple[np.ndarray, np.ndarray]:
        """(K(E), M) on every node, the last one kept with the term ``open_end`` f(t_max)^2
        (:meth:`open_end_term`); dense, for the few eigenvalues near the threshold of a far box."""
        K = self.symmetric(E, last=True)
        K[-1, -1] += open_end
        return K, self._dense(self._mass_element_blocks(), last=True)

    def energy_noise(self, y) -> float:
        """sum |K_ii| y_i^2 / y^T M y (hartree) for a vector y on the kept nodes: a relative rounding u
        of K's entries moves the level of y by about u times this (the row scale holds 1 / |K_ii| at the
        reference energy).

        Notes
        -----
        It is the energy resolution of a count in double precision (u = 1.1e-16) and of Newton's
        method with extended-precision residuals (u = 5.4e-20). Where the level is a small part of its
        well's energies (a level 1e-8 of the depth below the threshold) that resolution is coarser than
        the level: a square well's 2p 3.3e-8 hartree below the threshold had this scale 2e4 hartree, the
        count placed it 1.7e-12 hartree off and Newton's steps stalled at 1e-15 hartree.
        """
        y = np.asarray(y, dtype=float)
        return float(np.sum(y * y / self.row_scale) / (y @ self.mass_apply(y)))

    # -- what eigen.refine needs ----------------------------------------------------
    def expand(self, y, elim=None):
        f = np.zeros(self.n, dtype=np.result_type(y, np.float64))
        f[:-1] = y
        return f

    def weight(self):
        return np.exp(self.log_w)

    def matrix(self, E):
        return self.row_scale[:, None] * self.symmetric(E)

    # -- banded solves (Newton, inverse iteration) ------------------------------------
    def _banded(self, E) -> np.ndarray:
        """Row-scaled K(E) in LAPACK general-band storage (kl = ku = the largest degree),
        with the dropped last node kept as an identity row so the band stays regular."""
        kl = self.band
        n = self.n
        scale = self._row_band_scale()
        if self.eq.energy_linear:
            # K(E) = K(0) - E M apart from the boundary term: two scaled bands built once (the element
            # blocks of K(E) at every energy were a sixth of a 328-level solve)
            if self._band_parts is None:
                self._band_parts = (self._band_of(self._blocks(0.0, np.float64)) * scale,
                                    self._band_of(self._mass_element_blocks()) * scale)
            K0, Mb = self._band_parts
            ab = Mb * -float(E)
            ab += K0
            ab[2 * kl, 0] += self._sigma(E) * scale[2 * kl, 0]
        else:
            ab = self._band_of_K(E)
            ab *= scale
        ab[2 * kl, n - 1] = 1.0
        return ab

    def lumped_pencil_band(self, E0) -> np.ndarray | None:
        """The pencil (K(E0) + E0 M, D) as one banded symmetric matrix D^-1/2 (K(E0) + E0 M) D^-1/2 on the
        kept nodes, in LAPACK's lower band storage; D is the nodal mass (the GLL quadrature of M:
        w_t w(r)^2 r at each node). None when D is not positive and finite (w^2 underflows near the
        origin for a large gamma).

        Notes
        -----
        Its eigenvalues are guesses of the levels, as those of the consistent pencil (K(E0) + E0 M, M)
        are; lumping M moves them by the quadrature error of the mass on the nodes, measured below
        2e-6 of the level spacing for all but the top levels of a 328-level well (where both pencils
        are 1.4 % of a spacing off, the box-fitting rung's own resolution). The band costs
        O(n band^2) to reduce, where the dense generalized pencil costs O(n^3).
        """
        kl, m = self.band, self.n - 1
        with np.errstate(all="ignore"):
            d = (self.grid.w * np.exp(2 * self.log_w) * self.sample.r)[:m]
        if not np.all(np.isfinite(d) & (d > 0)):
            return None
        ab = self._band_of_K(E0)
        ab += E0 * self._band_of(self._mass_element_blocks())
        low = ab[2 * kl:, :m].copy()          # A[j + k, j] sits at row k of column j
        s = 1.0 / np.sqrt(d)
        with np.errstate(all="ignore"):
            for k in range(kl + 1):
                low[k, m - k:] = 0.0
                low[k, :m - k] *= s[k:] * s[:m - k]
        return low if np.all(np.isfinite(low)) else None        # a mass so tiny the scaling overflows

    def _row_band_scale(self) -> np.ndarray:
        """row_scale laid out as the band storage of :meth:`_banded` (built once)."""
        if self._band_scale is None:
            kl, n = self.band, self.n
            # row i of K sits at band row 2 kl + i - j of column j: scale[k, j] = row_scale[j + k - 2 kl]
            # (0 outside the matrix and in the dropped last column), a strided view of one padded copy
            rs = np.zeros(n + 3 * kl + 1)
            rs[2 * kl:2 * kl + n - 1] = self.row_scale
            scale = np.lib.stride_tricks.sliding_window_view(rs, n)[: 3 * kl + 1].copy()
            scale[:, n - 1] = 0.0
            self._band_scale = scale
        return self._band_scale

    def _mass_element_blocks(self) -> list:
        """Element blocks of M (double precision; built once, shared by M, mass_apply and the bands)."""
        if self._mass_blocks is None:
            self._mass_blocks = self._blocks(None, np.float64, mass=True)
        return self._mass_blocks

    def _band_of_K(self, E) -> np.ndarray:
        """K(E) with its boundary term in general-band storage (unscaled)."""
        ab = self._band_of(self._blocks(E, np.float64))
        ab[2 * self.band, 0] += self._sigma(E)
        return ab

    def _band_of(self, blocks) -> np.ndarray:
        """Element blocks scattered into LAPACK general-band storage (unscaled)."""
        ab = np.zeros((3 * self.band + 1, self.n))
        flat = ab.reshape(-1)
        for places, blk in zip(self._band_places(), blocks):
            for par in (0, 1):        # no two elements of one parity share a node: no repeated places
                flat[places[par]] += blk[par::2].reshape(-1)
        return ab

    def _band_places(self) -> list:
        """Per batch, for even and odd elements: the flat positions in the band storage of
        :meth:`_banded` of every element-matrix entry (row 2 kl + a - b, column node b), built once."""
        if self._band_index is None:
            kl, n = self.band, self.n
            self._band_index = []
            for bt in self._batches:
                a = np.arange(bt["degree"] + 1)
                rows = (2 * kl + a[:, None] - a[None, :])[None]
                self._band_index.append(tuple((rows * n + bt["idx"][par::2][:, None, :]).reshape(-1)
                                              for par in (0, 1)))
        return self._band_index

    def factor(self, E):
        """Banded LU of the row-scaled K(E) (the last one is kept: inverse iteration and the
        first Newton step at the same energy share it)."""
        from scipy.linalg.lapack import dgbtrf

        E = float(E)
        if self._factor_cache is not None and self._factor_cache[0] == E:
            return self._factor_cache[1]
        kl = self.band
        lu, piv, info = dgbtrf(self._banded(E), kl, kl, overwrite_ab=1)
        if info > 0:        # an exactly zero pivot: E is a level of the discrete problem to the last bit
            lu[2 * kl, info - 1] = 1e-300
        self._factor_cache = (E, (lu, piv))
        return lu, piv

    def solve(self, E, rhs) -> np.ndarray:
        """x with (row-scaled K(E)) x = rhs on the kept nodes."""
        from scipy.linalg.lapack import dgbtrs

        lu, piv = self.factor(E)
        b = np.zeros(self.n)
        b[:-1] = rhs
        x, _ = dgbtrs(lu, self.band, self.band, b, piv)
        return x[:-1]

    def bordered_solver(self, E, y, j: int):
        """Solver of the bordered Newton system of :func:`boundkit.eigen.refine` by block
        elimination with the banded K(E): T dy + dE T'y = rhs, dy_j = 0, returned as dy with dE
        in slot j."""
        b = self.solve(E, self.dT_y(E, y))

        def solve(rhs):
            a = self.solve(E, rhs)
            dE = a[j] / b[j]
            out = a - dE * b
            out[j] = dE
            return out
        return solve

    def residual(self, E, y):
        f = self.expand(np.asarray(y, dtype=np.longdouble)).astype(np.longdouble)
        return self._scale_ext * self._apply(E, f, np.longdouble)[:-1]

    def residual_double(self, E, y):
        """The residual in double precision (for loose Newton stops)."""
        f = self.expand(np.asarray(y, dtype=float))
        return self.row_scale * self._apply(float(E), f, np.float64)[:-1]

    def dT_y(self, E, y):
        if self.eq.energy_linear:           # dK/dE = -M
            return -self.row_scale * self.mass_apply(np.asarray(y, dtype=float))
        return self.row_scale * self._dK_y(E, y)[1]

    def _dK_y(self, E, y) -> tuple[np.ndarray, np.ndarray]:
        """(y on every node, (dK/dE) y on the kept nodes), element by element (no matrix)."""
        f = self.expand(np.asarray(y, dtype=float))
        return f, self._apply(E, f, np.float64, derivative=True)[:-1]

    def slope_form(self, E, y) -> float:
        """y^T (dK/dE) y on the kept nodes (element by element, no matrix)."""
        f, dk = self._dK_y(E, y)
        return float(f[:-1] @ dk)

    def charge_ratio(self, E, y) -> float:
        """-y^T (dK/dE) y / y^T M y: the slope with which the root's eigenvalue of (K(E), M) falls, on the
        quadrature points of K itself. For Klein-Gordon it is int (E + m c^2 - V) P^2 dr / (m c^2 int P^2)
        (the charge over the norm; plus the boundary term's share): positive for a particle level, and
        near 0 where it is about to merge with an antiparticle level (the root is then ill-conditioned:
        rounding in K moves it by that much more). 1 for the Schrodinger equation."""
        y = np.asarray(y, dtype=float)
        return -self.slope_form(E, y) / float(y @ self.mass_apply(y))

    def lowest(self, E) -> tuple[float, np.ndarray]:
        """(the lowest eigenvalue of D K(E) D, D = diag(sqrt(row_scale)) (a congruence: the inertia is
        K's), and D times its unit eigenvector): one dense eigen-solve of that one pair (LAPACK's
        banded selection was three times slower at 500 unknowns, and its dsyevr a third slower than
        dsyevx at 400)."""
        import scipy.linalg as sla

        K = self.scaled_symmetric(E)
        w, u = sla.eigh(K, subset_by_index=[0, 0], driver="evx", overwrite_a=True, check_finite=False)
        return float(w[0]), np.sqrt(self.row_scale) * u[:, 0]

    def scaled_symmetric(self, E) -> np.ndarray:
        """D K(E) D, D = diag(sqrt(row_scale)): the dense matrix :meth:`lowest` solves (a new array)."""
        d = np.sqrt(self.row_scale)
        K = self.symmetric(E)
        K *= d[:, None]
        K *= d
        return K

    def derivative_in_t(self, f):
        """df/dt at every node (the two one-sided values averaged at shared nodes)."""
        if self._derivative is None:        # the blocks in double, stacked per batch, and how many
            hits = np.zeros(self.n)         # elements share each node
            for i0, i1 in self.grid.elements:
                hits[i0:i1 + 1] += 1
            stacks = [np.stack([self.grid.D[e].astype(float) for e in bt["elements"]]) for bt in self._batches]
            self._derivative = (stacks, hits)
        stacks, hits = self._derivative
        out = np.zeros(self.n)
        for bt, Ds in zip(self._batches, stacks):
            idx = bt["idx"]
            _add_nodal(out, idx, np.matmul(Ds, f[idx][:, :, None])[:, :, 0])
        return out / hits
