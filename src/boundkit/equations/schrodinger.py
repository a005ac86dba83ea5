"""Radial Schrodinger equation for one orbital l."""
from __future__ import annotations

import math

from .._checks import check_int, check_positive
from .base import RadialEquation, Sample, letter

__all__ = ["Schrodinger"]



def inverse_square_disc(l: int, mass: float, B: float) -> float:
    """(l + 1/2)^2 + 2 m B: the order of a channel with a B / r^2 part is real above 0, complex below."""
    return (l + 0.5) ** 2 + 2 * mass * B


def inverse_square_order(l: int, mass: float, B: float) -> float | None:
    """The order L of a channel whose potential has a B / r^2 part: L (L + 1) = l (l + 1) + 2 m B, the
    root L > -1/2 (common practice); None when (l + 1/2)^2 + 2 m B <= 0 (the order is complex: the particle
    falls to the centre, or the tail's Coulomb functions have no real order)."""
    disc = inverse_square_disc(l, mass, B)
    return None if disc <= 0 else -0.5 + math.sqrt(disc)

class Schrodinger(RadialEquation):
    """Non-relativistic radial equation for orbital ``l`` and (reduced) mass ``mass``.

    Notes
    -----
    -u''/(2 mu) + [l(l+1)/(2 mu r^2) + V + S + <l.s> U(r)] u = E u, u(0) = u(inf) = 0,
    the spin-orbit term present only when the potential has one and j is given
    (<l.s> = [j(j+1) - l(l+1) - 3/4]/2 for a spin-1/2 particle).
    In the factorized form: p = 1/(2 mu), q = V + S, kappa_eff = -(l+1)
    (so that kappa(kappa+1) = l(l+1)); u ~ r^(l+1) at the origin, or
    u ~ r^(l'+1) with l'(l'+1) = l(l+1) + 2 mu B0 when V ~ B0/r^2 there. The
    pencil is linear in E.
    """

    name = "schrodinger"
    spin = 0.0
    energy_linear = True

    def __init__(self, l: int = 0, mass: float = 1.0, j: float | None = None) -> None:
        self.l = check_int("l", l, minimum=0)
        self.mass = check_positive("mass", mass)
        self.kappa = None
        self.j = None
        self.ls = 0.0
        if j is not None:
            j = float(j)
            if j not in (self.l + 0.5, self.l - 0.5) or j < 0:
                raise ValueError(f"j: for l = {self.l} a spin-1/2 particle has j = l +- 1/2 "
                                 f"({', '.join(f'{x:g}' for x in (self.l - 0.5, self.l + 0.5) if x > 0)}), got {j:g}")
            self.j = j
            self.ls = (j * (j + 1) - self.l * (self.l + 1) - 0.75) / 2
        self.kappa_eff = -(self.l + 1)

    def p(self, E, s: Sample):
        return 0 * s.r + 1 / (2 * s.r.dtype.type(self.mass))

    def q(self, E, s: Sample):
        if s.W is None:
            return s.V + s.S
        return s.V + s.S + s.r.dtype.type(self.ls) * s.W

    def gamma(self, potential) -> float:
        if self.j is None and potential.has_spin_orbit:
            raise ValueError("j: the potential has a spin-orbit term; give j = l +- 1/2 (e.g. --j 1.5 with --l 1)")
        self._refuse_fall_to_centre(potential)
        return self._gamma(potential)

    def _gamma(self, potential) -> float:
        """l' + 1 with l'(l'+1) = l(l+1) + 2 mu B0, B0 the 1/r^2 coefficient of V at 0."""
        b0 = getattr(potential, "origin_inverse_square", 0.0)
        if b0 == 0.0:
            return float(self.l + 1)
        order = inverse_square_order(self.l, self.mass, b0)
        if order is None:
            raise ValueError(
                f"potential: its 1/r^2 part at the origin (kratzer B, or B/r^2 in a user's V), B = {b0:g} hartree "
                f"bohr^2, is too attractive for l = {self.l}: l(l+1) + 2 m B < -1/4 makes the particle fall to the "
                f"centre; use B > {-(self.l + 0.5) ** 2 / (2 * self.mass):.6g}"
            )
        return order + 1.0

    def label(self, n: int) -> str:
        if self.j is not None:
            return f"{n}{letter(self.l)}{int(2 * self.j)}/2"
        return f"{n}{letter(self.l)}"
