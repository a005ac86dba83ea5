"""Exact Klein-Gordon and Dirac levels and states of a relativistic square well, in mpmath.

V(r) = V0, S(r) = S0 for r < R, both 0 beyond (atomic units, mass m, c = 1 / alpha from
scipy.constants). Common practice: inside, the solutions regular at the origin are spherical Bessel
functions; outside, the decaying spherical Hankel functions of imaginary argument; the two are matched
at r = R (P and Q continuous for Dirac, u and u' for Klein-Gordon, where u'' jumps with V). Levels by
bisection on the sign of the matching determinant; integrals by mpmath quadrature on [0, R] and
[R, inf) separately. Nothing of boundkit enters.

Dirac, P = r g, Q = r f, binding energy E, W = E + 2 m c^2 - V + S, U = E - V - S,
k^2 = W U / c^2:  P = r j_l(k r),  Q = sgn(kappa) (c k / W) r j_lbar(k r)  (l, lbar the orbital numbers
of the large and small components), the same with h_l^(1) outside (Im k > 0).
Klein-Gordon, orbital l (passed as ``kappa``, l <= 2): u = r j_l(k r), c^2 k^2 = (E + m c^2 - V)^2 -
(m c^2 + S)^2, u = r h_l(k r) outside; charge density (E + m c^2 - V) / (m c^2) u^2.
"""
from __future__ import annotations

import mpmath as mp
from scipy.constants import alpha

DPS = 40


def _c():
    return mp.mpf(1) / mp.mpf(alpha)


def _sph_j(l, z):
    """Spherical Bessel function j_l(z) = sqrt(pi / (2 z)) J_(l + 1/2)(z) (mpmath's Bessel function: the
    closed forms in sin and cos lose every digit to cancellation near z = 0, where mp.quad samples)."""
    return mp.sqrt(mp.pi / (2 * z)) * mp.besselj(l + mp.mpf(1) / 2, z)


def _sph_h(l, z):
    """Spherical Hankel function of the first kind h_l^(1)(z)."""
    e = mp.exp(1j * z)
    if l == 0:
        return -1j * e / z
    if l == 1:
        return -e * (z + 1j) / z**2
    if l == 2:
        return 1j * e * (z**2 + 3j * z - 3) / z**3
    raise ValueError("l <= 2 only")


def _ls(kappa):
    return (-kappa - 1, -kappa, -1) if kappa < 0 else (kappa, kappa - 1, 1)


def _dirac(E, V, S, kappa, r, m, outside):
    C = _c()
    l, lb, sg = _ls(kappa)
    W = E + 2 * m * C**2 - V + S
    U = E - V - S
    k = mp.sqrt(mp.mpc(W * U) / C**2)
    if mp.im(k) < 0:
        k = -k
    f = _sph_h if outside else _sph_j
    z = k * r
    return r * f(l, z), sg * C * k / W * r * f(lb, z)


def _kg(E, V, S, r, m, outside, l):
    """(u, u') with u = r j_l(k r) (or r h_l(k r)); (z f_l)' = z f_(l-1) - l f_l for both kinds."""
    C = _c()
    k = mp.sqrt(mp.mpc((E + m * C**2 - V) ** 2 - (m * C**2 + S) ** 2) / C**2)
    if mp.im(k) < 0:
        k = -k
    z = k * r
    if l == 0:      # r j_0 = sin z / k, r h_0 = -i exp(i z) / k
        return (-1j * mp.exp(1j * z) / k, mp.exp(1j * z)) if outside else (mp.sin(z) / k, mp.cos(z))
    f = _sph_h if outside else _sph_j
    return r * f(l, z), z * f(l - 1, z) - l * f(l, z)


def _pair(eq, E, V, S, kappa, r, m, outside):
    """(P, Q) for Dirac, (u, u') for Klein-Gordon (``kappa`` is then l)."""
    if eq == "dirac":
        return _dirac(E, V, S, kappa, r, m, outside)
    if kappa < 0:
        raise ValueError("Klein-Gordon: pass l >= 0 as kappa")
    return _kg(E, V, S, r, m, outside, kappa)


def mismatch(eq, E, V0, S0, R, kappa=-1, m=1):
    """The matching determinant at R, made real and scaled (its sign changes at each level)."""
    E, R = mp.mpf(E), mp.mpf(R)
    a, b = _pair(eq, E, V0, S0, kappa, R, m, False)
    h, hd = _pair(eq, E, 0, 0, kappa, R, m, True)
    det = a * hd - b * h
    return mp.re(det / h * abs(h) / max(abs(a), abs(b)))


def levels(eq, V0, S0, R, kappa=-1, m=1, grid=400):
    """All level energies (binding, hartree) between the well's bottom and 0, lowest first."""
    with mp.workdps(DPS):
        lo, hi = mp.mpf(min(V0 + S0, 0)) + mp.mpf("1e-6"), mp.mpf("-1e-6")
        Es = [lo + (hi - lo) * i / grid for i in range(grid + 1)]
        Fs = [mismatch(eq, E, V0, S0, R, kappa, m) for E in Es]
        out = []
        for i in range(grid):
            if Fs[i] * Fs[i + 1] < 0:
                a, b, fa = Es[i], Es[i + 1], Fs[i]
                while b - a > mp.mpf(10) ** (5 - DPS) * abs(a):
                    mid = (a + b) / 2
                    fm = mismatch(eq, mid, V0, S0, R, kappa, m)
                    if fm * fa < 0:
                        b = mid
                    else:
                        a, fa = mid, fm
                out.append((a + b) / 2)
        return out


class State:
    """The normalised state of level energy ``E``: P (u for Klein-Gordon) and Q (Dirac) at r, the
    density, and integrals of f(r) times the density (or an overlap with another state)."""

    def __init__(self, eq, E, V0, S0, R, kappa=-1, m=1):
        self.eq, self.E, self.V0, self.S0, self.R, self.kappa, self.m = eq, mp.mpf(E), V0, S0, mp.mpf(R), kappa, m
        with mp.workdps(DPS):
            inner = _pair(eq, self.E, V0, S0, kappa, self.R, m, False)[0]
            outer = _pair(eq, self.E, 0, 0, kappa, self.R, m, True)[0]
            self._out = inner / outer
            self._norm = mp.mpf(1)
            self._norm = 1 / mp.sqrt(self.integral(lambda r: 1))
            # sign: P > 0 near the origin
            if self.PQ(self.R / 1000)[0] < 0:
                self._norm = -self._norm

    def PQ(self, r):
        """(P, Q) at r (Dirac) or (u, 0) (Klein-Gordon), normalised."""
        r = mp.mpf(r)
        inside = r < self.R
        V, S = (self.V0, self.S0) if inside else (0, 0)
        p, q = _pair(self.eq, self.E, V, S, self.kappa, r, self.m, not inside)
        if not inside:
            p, q = p * self._out, q * self._out
        p, q = mp.re(p) * self._norm, mp.re(q) * self._norm
        return (p, q) if self.eq == "dirac" else (p, mp.mpf(0))

    def weight(self, r):
        """The density weight of P^2: 1 (Dirac), (E + m c^2 - V) / (m c^2) (Klein-Gordon)."""
        if self.eq == "dirac":
            return mp.mpf(1)
        C = _c()
        V = self.V0 if mp.mpf(r) < self.R else 0
        return (self.E + self.m * C**2 - V) / (self.m * C**2)

    def integral(self, f, other=None):
        """integral_0^inf f(r) rho(r) dr; with ``other``, the overlap density of the two states (for
        Klein-Gordon with the mean of the two weights)."""
        b = self if other is None else other

        def g(r):
            pa, qa = self.PQ(r)
            pb, qb = (pa, qa) if b is self else b.PQ(r)      # a state with itself: computed once
            w = self.weight(r) if b is self else (self.weight(r) + b.weight(r)) / 2
            return f(r) * (w * pa * pb + qa * qb)

        with mp.workdps(DPS):
            return mp.quad(g, [0, self.R]) + mp.quad(g, [self.R, 4 * self.R, 40 * self.R, mp.inf])
