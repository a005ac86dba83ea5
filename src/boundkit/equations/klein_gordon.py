"""Radial Klein-Gordon equation for a spin-0 particle, orbital l."""
from __future__ import annotations

import math

from .._checks import check_int, check_positive
from ..units import ALPHA, C_AU
from .base import RadialEquation, Sample, letter

__all__ = ["KleinGordon"]


class KleinGordon(RadialEquation):
    """Spin-0 radial equation with vector V and Lorentz-scalar S potentials.

    Notes
    -----
    From (E + m c^2 - V)^2 = c^2 p^2 + (m c^2 + S)^2, divided by 2 m c^2 and
    written for the binding energy E (never the total energy):

        -u''/(2m) + [l(l+1)/(2 m r^2) + V + S + S^2/(2 m c^2)
                     - (E - V)^2/(2 m c^2)] u = E u.

    The energy enters quadratically, so this is an energy-dependent problem:
    p = 1/(2m), q(E) = V + S + S^2/(2mc^2) - (E - V)^2/(2mc^2),
    dq/dE = -(E - V)/(m c^2). At a Coulomb-like origin (V ~ -Zv/r, S ~ -Zs/r)
    u ~ r^gamma with gamma = 1/2 + sqrt((l + 1/2)^2 - alpha^2 (Zv^2 - Zs^2)).
    Normalisation uses the conserved charge density, weight (E + mc^2 - V)/(mc^2).
    """

    name = "klein-gordon"
    spin = 0.0

    def __init__(self, l: int = 0, mass: float = 1.0) -> None:
        self.l = check_int("l", l, minimum=0)
        self.mass = check_positive("mass", mass)
        self.kappa = None
        self.j = None
        self.kappa_eff = -(self.l + 1)

    def _mc2(self, s):
        c = s.r.dtype.type(C_AU)
        return s.r.dtype.type(self.mass) * c * c

    def p(self, E, s: Sample):
        return 0 * s.r + 1 / (2 * s.r.dtype.type(self.mass))

    def q(self, E, s: Sample):
        mc2 = self._mc2(s)
        return s.V + s.S + (s.S * s.S - (E - s.V) ** 2) / (2 * mc2)

    def dq_dE(self, E, s: Sample):
        return -(E - s.V) / self._mc2(s)

    def gamma(self, potential) -> float:
        self._refuse_relativistic_cores(potential)
        zz = (potential.z_vector**2 - potential.z_scalar**2) * ALPHA**2
        disc = (self.l + 0.5) ** 2 - zz
        if disc <= 0:
            raise ValueError(
                f"Z: for the Klein-Gordon equation a point Coulomb charge needs Z alpha < l + 1/2 "
                f"(here Z alpha = {math.sqrt(max(zz, 0)):.4f}, l = {self.l}); use a finite-size nucleus "
                "or a smaller Z"
            )
        return 0.5 + math.sqrt(disc)

    def energy_window(self, potential):
        mc2 = self.mass * C_AU**2
        return (-2 * mc2, math.inf if potential.confining else 0.0)

    def density_weight(self, E, s: Sample):
        return (E + self._mc2(s) - s.V) / self._mc2(s)

    def label(self, n: int) -> str:
        return f"{n}{letter(self.l)}"
