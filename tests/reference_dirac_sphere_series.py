"""Dirac levels of a uniformly charged sphere near their dive, in mpmath (an independent reference).

Natural units hbar = c = m = 1 (W the total energy over m c^2, lengths in Compton lengths), kappa as in
boundkit, G = r g (large) and F = r f (small):

    G' = -kappa G / r + (W + 1 - V) F,    F' = kappa F / r - (W - 1 - V) G.

Inside the sphere (r <= R), V = -Z alpha (3 - r^2 / R^2) / (2 R) = v0 + v2 r^2 is a polynomial, so the
solution regular at the origin is an entire power series G = sum g_n r^(n + s), F = sum f_n r^(n + s),
s = |kappa|, g_0 = 1 (kappa < 0) or f_0 = 1 (kappa > 0); substituting it gives

    g_n (n + s + kappa) = (W + 1 - v0) f_(n-1) - v2 f_(n-3),
    f_n (n + s - kappa) = -(W - 1 - v0) g_(n-1) + v2 g_(n-3).

Outside, V = -Z alpha / r: with lam = sqrt(1 - W^2), x = 2 lam r, nu = Z alpha W / lam and
gam = sqrt(kappa^2 - (Z alpha)^2), the decaying solution is G = sqrt(1 + W) (A + B),
F = -sqrt(1 - W) (A - B) with A = x^(-1/2) W_(nu + 1/2, gam)(x) (Whittaker's function, DLMF 13.14.21)
and B from dA/dx = -A/2 + nu A / x + (Z alpha / lam - kappa) B / x (decoupling the pair: common practice
for the Dirac-Coulomb equation).
A level is a zero of the normalised Wronskian G_in F_out - F_in G_out at R.

Source: tester G's matching (s32, dirac_exact.py: the same series and Whittaker solution, checked by him
against the ODE and against DOP853 shooting to 5e-10 hartree), copied here without boundkit. Units follow
boundkit's conventions from scipy.constants alone: m c^2 = E_h / alpha^2 and the Compton length
alpha a0 (a0 = alpha hbar c / E_h), R = sqrt(5/3) rms.
"""
from __future__ import annotations

import mpmath as mp
from scipy import constants as C

ALPHA = C.fine_structure
_A0_FM = ALPHA * C.hbar * C.c / (C.e * C.physical_constants["Hartree energy in eV"][0]) * 1e15
LC_FM = ALPHA * _A0_FM          # Compton length in fm


def _interior(W, kappa: int, za, R):
    v0, v2 = -3 * za / (2 * R), za / (2 * R**3)
    s = abs(kappa)
    g, f = ({0: mp.mpf(1)}, {0: mp.mpf(0)}) if kappa < 0 else ({0: mp.mpf(0)}, {0: mp.mpf(1)})
    G, F = g[0] * R**s, f[0] * R**s
    n = 0
    while True:
        n += 1
        g[n] = ((W + 1 - v0) * f.get(n - 1, 0) - v2 * f.get(n - 3, 0)) / (n + s + kappa)
        f[n] = (-(W - 1 - v0) * g.get(n - 1, 0) + v2 * g.get(n - 3, 0)) / (n + s - kappa)
        tG, tF = g[n] * R ** (n + s), f[n] * R ** (n + s)
        G, F = G + tG, F + tF
        if n > 40 and abs(tG) + abs(tF) < mp.mpf(10) ** (-mp.mp.dps - 5) * (abs(G) + abs(F)):
            return G, F


def _exterior(W, kappa: int, za, r):
    lam = mp.sqrt(1 - W**2)
    gam = mp.sqrt(mp.mpf(kappa) ** 2 - za**2 + 0j)
    nu = za * W / lam
    x = 2 * lam * r

    def A(xx):
        return mp.re(mp.whitw(nu + mp.mpf(1) / 2, gam, xx)) / mp.sqrt(xx)

    a = A(x)
    b = (x * mp.diff(A, x) + x * a / 2 - nu * a) / (za / lam - kappa)
    return mp.sqrt(1 + W) * (a + b), -mp.sqrt(1 - W) * (a - b)


def sphere_level_hartree(Z: float, rms_fm: float, kappa: int, w_plus_1: str) -> float:
    """Binding energy (hartree) of the level of the sphere with W + 1 near ``w_plus_1`` (a string)."""
    mp.mp.dps = 30
    za = Z * mp.mpf(ALPHA)
    R = mp.sqrt(mp.mpf(5) / 3) * mp.mpf(rms_fm) / mp.mpf(LC_FM)

    def det(W):
        Gi, Fi = _interior(W, kappa, za, R)
        Go, Fo = _exterior(W, kappa, za, R)
        return (Gi * Fo - Fi * Go) / (mp.sqrt(Gi**2 + Fi**2) * mp.sqrt(Go**2 + Fo**2))

    W = mp.findroot(det, mp.mpf(-1) + mp.mpf(w_plus_1), tol=mp.mpf(10) ** -22, verify=False)
    return float((W - 1) / mp.mpf(ALPHA) ** 2)
