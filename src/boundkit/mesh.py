"""Radial maps from a reference coordinate to r.

boundkit discretizes in t = ln r. Exponents r^gamma at the origin become
exponentials in t, the Coulomb scale near the nucleus and the long tail of a
loosely bound level fit in one interval, and a first derivative in r is
d/dr = exp(-t) d/dt (the stretch factor of the map).
"""
from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from ._checks import check_positive

__all__ = ["LogMap"]


@dataclass(frozen=True, slots=True)
class LogMap:
    """The map r = exp(t) on [r_min, r_max].

    Parameters
    ----------
    r_min, r_max : float
        Ends of the radial interval in bohr, 0 < r_min < r_max.
    """

    r_min: float
    r_max: float

    def __post_init__(self) -> None:
        check_positive("r_min", self.r_min)
        check_positive("r_max", self.r_max)
        if not self.r_max > self.r_min:
            raise ValueError(f"r_max: must exceed r_min ({self.r_min:g}), got {self.r_max:g}")

    @property
    def t_min(self) -> float:
        return float(np.log(self.r_min))

    @property
    def t_max(self) -> float:
        return float(np.log(self.r_max))

    def to_t(self, x):
        """Reference coordinate x in [-1, 1] -> t."""
        return self.t_min + (np.asarray(x) + 1) * (self.t_max - self.t_min) / 2

    @property
    def dt_dx(self) -> float:
        """Stretch factor dt/dx of the affine part of the map."""
        return (self.t_max - self.t_min) / 2

    @staticmethod
    def r(t):
        return np.exp(t)
