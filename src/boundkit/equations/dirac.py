"""Radial Dirac equation for a spin-1/2 particle, quantum number kappa."""
from __future__ import annotations

import math

from .._checks import check_int, check_positive
from ..units import ALPHA, C_AU
from .base import RadialEquation, Sample, letter

__all__ = ["Dirac", "kappa_to_lj", "dirac_kappa"]


def kappa_to_lj(kappa: int) -> tuple[int, float]:
    """Orbital l of the large component and total j for a Dirac kappa."""
    if kappa == 0:
        raise ValueError("kappa: must be a non-zero integer (kappa = -1 is s1/2, +1 is p1/2, -2 is p3/2, ...)")
    l = kappa if kappa > 0 else -kappa - 1
    return l, abs(kappa) - 0.5


def _name(kappa: int) -> str:
    """``kappa = -2 (p3/2)``."""
    l, j = kappa_to_lj(kappa)
    return f"kappa = {kappa} ({letter(l)}{int(2 * j)}/2)"


def _kappas_of_l(l: int) -> tuple[int, ...]:
    """The kappas of orbital l: -(l + 1) (j = l + 1/2) and l (j = l - 1/2, for l > 0)."""
    return (-(l + 1), l) if l > 0 else (-1,)


def _kappas_of_j(j: float) -> tuple[int, int]:
    """The kappas of total j: -(j + 1/2) (l = j - 1/2) and j + 1/2 (l = j + 1/2)."""
    k = int(j + 0.5)
    return -k, k


def dirac_kappa(kappa: int | None = None, l: int | None = None, j: float | None = None) -> int:
    """The kappa of a Dirac channel named by ``kappa``, or by ``l`` with ``j`` (default -1, s1/2).

    kappa = -(l + 1) has j = l + 1/2 and kappa = l has j = l - 1/2. An ``l`` or ``j``
    given beside ``kappa`` must be the kappa's own; ``l`` alone (two kappas) and
    ``j`` alone (two kappas) are refused. Raises ValueError naming the argument
    and the kappas that would fit.
    """
    if j is not None:
        j = float(j)
        if not (math.isfinite(j) and j > 0 and (2 * j) % 2 == 1):
            raise ValueError(f"j: must be a positive half-integer (0.5, 1.5, 2.5, ...), got {j:g}")
    if l is not None:
        l = check_int("l", l, minimum=0)
    if kappa is not None:
        kl, kj = kappa_to_lj(check_int("kappa", kappa))
        label = f"{letter(kl)}{int(2 * kj)}/2"
        if l is not None and l != kl:
            fits = " or ".join(_name(k) for k in _kappas_of_l(l))
            raise ValueError(f"l: l = {l} does not fit kappa = {kappa} ({label}, l = {kl}); give kappa alone, or the "
                             f"kappa of l = {l}: {fits}")
        if j is not None and j != kj:
            raise ValueError(f"j: j = {j:g} does not fit kappa = {kappa} ({label}, j = {int(2 * kj)}/2); give kappa "
                             f"alone, or the kappa of j = {j:g}: " + " or ".join(map(_name, _kappas_of_j(j))))
        return int(kappa)
    if l is None and j is None:
        return -1
    if j is None:
        raise ValueError(f"kappa: the Dirac equation needs kappa, not l; for l = {l} use kappa = {-(l + 1)} "
                         f"(j = l + 1/2)" + (f" or kappa = {l} (j = l - 1/2)" if l > 0 else "")
                         + "; or give j with l")
    if l is None:
        raise ValueError("j: j alone does not name a Dirac channel; give " + " or ".join(map(_name, _kappas_of_j(j)))
                         + ", or l with j")
    fits = {kappa_to_lj(k)[1]: k for k in _kappas_of_l(l)}
    if j not in fits:
        names = " or ".join(f"{x:g} (kappa = {k})" for x, k in sorted(fits.items()))
        raise ValueError(f"j: for l = {l} a Dirac channel has j = {names}, got {j:g}; give kappa instead, or l with "
                         "one of these j")
    return fits[j]


class Dirac(RadialEquation):
    """Spin-1/2 radial Dirac equation with vector V and Lorentz-scalar S.

    Notes
    -----
    With P = r g (large) and Q = r f (small) and E the binding energy,

        P' = -kappa P / r + (E + 2 m c^2 - V + S) Q / c,
        Q' =  kappa Q / r - (E - V - S) P / c.

    Eliminating Q = c (P' + kappa P / r) / M(E), M = E + 2mc^2 - V + S, gives
    the large-component equation

        -(d/dr - kappa/r) [c^2 / M(E)] (d/dr + kappa/r) P + (V + S) P = E P,

    the factorized form with p = c^2/M(E), dp/dE = -p^2/c^2, q = V + S. It is
    a Sturm-Liouville problem at every E (no spurious kappa > 0 states, no
    2 m c^2 gap in the matrices). It needs M > 0, true for attractive V down to
    the lower continuum. At a Coulomb-like origin P, Q ~ r^gamma with
    gamma = sqrt(kappa^2 - alpha^2 (Zv^2 - Zs^2)).
    """

    name = "dirac"
    spin = 0.5

    def __init__(self, kappa: int = -1, mass: float = 1.0) -> None:
        self.kappa = check_int("kappa", kappa)
        self.l, self.j = kappa_to_lj(self.kappa)
        self.mass = check_positive("mass", mass)
        self.kappa_eff = self.kappa

    def _c(self, s):
        return s.r.dtype.type(C_AU)

    def _M(self, E, s):
        # S - V first: with S = V (spin symmetry) it is exactly 0, where (E + 2mc^2 - V) + S lost E + 2mc^2
        # in the rounding of |V| near a Coulomb origin (1e14 hartree at Z = 160) and left a zero divisor
        c = self._c(s)
        return E + 2 * s.r.dtype.type(self.mass) * c * c + (s.S - s.V)

    def p(self, E, s: Sample):
        c = self._c(s)
        return c * c / self._M(E, s)

    def dp_dE(self, E, s: Sample):
        c = self._c(s)
        return -c * c / self._M(E, s) ** 2

    def q(self, E, s: Sample):
        return s.V + s.S

    def gamma(self, potential) -> float:
        self._refuse_relativistic_cores(potential)
        zv, zs = potential.z_vector, potential.z_scalar
        if abs(zv - zs) < 1e-14 * max(1.0, abs(zv)):
            return float(abs(self.kappa) if self.kappa < 0 else self.kappa + 1)
        zz = (zv**2 - zs**2) * ALPHA**2
        disc = self.kappa**2 - zz
        if disc <= 0:
            raise ValueError(
                f"Z: for the Dirac equation a point Coulomb charge needs Z alpha < |kappa| "
                f"(here Z alpha = {math.sqrt(max(zz, 0)):.4f}, kappa = {self.kappa}); use a finite-size "
                "nucleus or a smaller Z"
            )
        return math.sqrt(disc)

    def energy_window(self, potential):
        mc2 = self.mass * C_AU**2
        return (-2 * mc2, math.inf if potential.confining else 0.0)

    def small_component(self, E, s: Sample, g):
        return self.p(E, s) / self._c(s) * g

    def label(self, n: int) -> str:
        return f"{n}{letter(self.l)}{int(2 * self.j)}/2"
