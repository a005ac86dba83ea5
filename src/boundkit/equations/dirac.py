"""Radial Dirac equation for a spin-1/2 particle, quantum number kappa."""
from __future__ import annotations

import math

from .._checks import check_int, check_positive
from ..units import ALPHA, C_AU
from .base import RadialEquation, Sample, letter

__all__ = ["Dirac", "kappa_to_lj"]


def kappa_to_lj(kappa: int) -> tuple[int, float]:
    """Orbital l of the large component and total j for a Dirac kappa."""
    if kappa == 0:
        raise ValueError("kappa: must be a non-zero integer (kappa = -1 is s1/2, +1 is p1/2, -2 is p3/2, ...)")
    l = kappa if kappa > 0 else -kappa - 1
    return l, abs(kappa) - 0.5


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
