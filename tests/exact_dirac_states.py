"""Exact bound states of the Dirac equation with a point Coulomb charge, in mpmath.

Used by the observable tests as an independent reference for <r^k>.

P = r g and Q = r f in the solver's convention (P' = -kappa P/r + (E + 2mc^2 - V) Q/c,
Q' = kappa Q/r - (E - V) P/c, atomic units, m = 1). With n_r = n - |kappa|,
gamma = sqrt(kappa^2 - (Z alpha)^2), eps = [1 + (Z alpha)^2/(n_r + gamma)^2]^(-1/2),
lambda = c sqrt(1 - eps^2), N = sqrt(n^2 - 2 n_r (|kappa| - gamma)), rho = 2 lambda r:

    P ~  sqrt(1 + eps) rho^gamma e^(-rho/2) [ -n_r M(1 - n_r, 2 gamma + 1, rho) + (N - kappa) M(-n_r, 2 gamma + 1, rho) ]
    Q ~ -sqrt(1 - eps) rho^gamma e^(-rho/2) [  n_r M(1 - n_r, 2 gamma + 1, rho) + (N - kappa) M(-n_r, 2 gamma + 1, rho) ]

(M = Kummer's confluent hypergeometric function, a polynomial here). The form is
the standard one found in relativistic quantum mechanics texts (e.g. Berestetskii,
Lifshitz and Pitaevskii, Quantum Electrodynamics, section 36), written from memory;
:func:`residual` checks in 40-digit arithmetic that it solves the radial equations
above, so the test does not rest on the recollection. <r^k> is then exact:
a sum of Gamma functions, integral rho^(2 gamma + s + k) e^(-rho) drho = Gamma(2 gamma + s + k + 1).
"""
from __future__ import annotations

import mpmath as mp

__all__ = ["coefficients", "radial", "residual", "moment"]

DPS = 40


def _precision():
    """At least DPS digits, never fewer than the caller's (mpmath.diff works above it)."""
    return mp.workdps(max(DPS, mp.mp.dps))


def coefficients(n: int, kappa: int, Z: float, alpha: float):
    """(P polynomial coefficients, Q polynomial coefficients, gamma, lambda, eps) in powers of rho."""
    with _precision():
        k = abs(kappa)
        nr = n - k
        c = 1 / mp.mpf(alpha)
        g = mp.sqrt(k * k - (Z / c) ** 2)
        eps = 1 / mp.sqrt(1 + (Z / c) ** 2 / (nr + g) ** 2)
        lam = c * mp.sqrt(1 - eps**2)
        N = mp.sqrt(n * n - 2 * nr * (k - g))
        b = 2 * g + 1

        def kummer(a, deg):
            return [mp.rf(a, s) / (mp.rf(b, s) * mp.factorial(s)) for s in range(deg + 1)]

        m0 = kummer(-nr, nr)
        m1 = (kummer(1 - nr, nr - 1) if nr > 0 else []) + [mp.mpf(0)]
        m1 = m1[: nr + 1] + [mp.mpf(0)] * (nr + 1 - len(m1))
        pc = [mp.sqrt(1 + eps) * (-nr * m1[s] + (N - kappa) * m0[s]) for s in range(nr + 1)]
        qc = [-mp.sqrt(1 - eps) * (nr * m1[s] + (N - kappa) * m0[s]) for s in range(nr + 1)]
        return pc, qc, g, lam, eps


def radial(n, kappa, Z, alpha, r):
    """Unnormalised (P, Q) at r (bohr)."""
    with _precision():
        pc, qc, g, lam, _ = coefficients(n, kappa, Z, alpha)
        rho = 2 * lam * mp.mpf(r)
        f = rho**g * mp.exp(-rho / 2)
        return f * mp.polyval(pc[::-1], rho), f * mp.polyval(qc[::-1], rho)


def residual(n, kappa, Z, alpha, r) -> float:
    """Largest relative residual of the two radial equations at r."""
    with _precision():
        c = 1 / mp.mpf(alpha)
        *_, eps = coefficients(n, kappa, Z, alpha)
        E, V = c * c * (eps - 1), -Z / mp.mpf(r)
        P, Q = radial(n, kappa, Z, alpha, r)
        dP = mp.diff(lambda x: radial(n, kappa, Z, alpha, x)[0], r)
        dQ = mp.diff(lambda x: radial(n, kappa, Z, alpha, x)[1], r)
        e1 = (dP - (-kappa * P / r + (E + 2 * c * c - V) * Q / c)) / abs(dP)
        e2 = (dQ - (kappa * Q / r - (E - V) * P / c)) / abs(dQ)
        return float(max(abs(e1), abs(e2)))


def moment(n, kappa, Z, alpha, k) -> float:
    """Exact <r^k> = integral r^k (P^2 + Q^2) dr / integral (P^2 + Q^2) dr."""
    with _precision():
        pc, qc, g, lam, _ = coefficients(n, kappa, Z, alpha)

        def square(cf):
            out = [mp.mpf(0)] * (2 * len(cf) - 1)
            for i, a in enumerate(cf):
                for j, b in enumerate(cf):
                    out[i + j] += a * b
            return out

        d = [a + b for a, b in zip(square(pc), square(qc))]

        def integral(kk):
            return sum(ds * mp.gamma(2 * g + s + kk + 1) for s, ds in enumerate(d)) / (2 * lam) ** kk

        return float(integral(k) / integral(0))
