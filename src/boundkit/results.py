"""Frozen result objects with readable reprs."""
from __future__ import annotations

from dataclasses import dataclass, field
from typing import Any

import numpy as np

from .units import hartree_to

__all__ = ["RadialState", "Level", "SolveResult"]


@dataclass(frozen=True, slots=True, repr=False)
class RadialState:
    """Normalised radial functions on their grid (atomic units).

    ``P`` is r times the (large) radial component, ``Q`` r times the small
    component (Dirac only, else None). ``weights`` integrate over r:
    integral of g(r) dr ~ sum(weights * g).

    How the functions were represented (for interpolation between nodes):
    P = w(r) f(t), t = ln r, w = (r / (r + r_core))^gamma, with f a polynomial
    in t on each element; ``elements`` holds the (first, last) node index of
    every element (neighbouring elements share their end node), ``family`` the
    discretization family (``"spectral"`` or ``"finite-difference"``).
    ``density_weight`` is the weight of P^2 in the normalised density (the
    Klein-Gordon charge density (E + mc^2 - V)/(mc^2)), None when it is 1.
    """

    r: np.ndarray
    P: np.ndarray
    Q: np.ndarray | None
    weights: np.ndarray
    gamma: float
    r_core: float = 0.0
    elements: tuple = ()
    family: str = ""
    density_weight: np.ndarray | None = None

    def __call__(self, r) -> np.ndarray:
        """Normalised radial function(s) at radii ``r`` (bohr).

        Returns P(r) (same shape as ``r``) for a one-component state, and the
        stacked array [P(r), Q(r)] (so ``P, Q = state(r)``) for a Dirac state.
        Between nodes f = P / w(r) is interpolated as a polynomial in ln r on
        each element (see :mod:`boundkit.wavefunctions`).
        """
        from .wavefunctions import evaluate

        shape = np.shape(r)
        P = evaluate(self, r, "P").reshape(shape)
        if self.Q is None:
            return P
        return np.stack([P, evaluate(self, r, "Q").reshape(shape)])

    def density(self, r) -> np.ndarray:
        """Normalised radial density at ``r`` (bohr), integrating to 1 over dr.

        Schrodinger: P^2; Dirac: P^2 + Q^2; Klein-Gordon: the conserved charge
        density (E + mc^2 - V)/(mc^2) P^2 (``density_weight`` interpolated).
        """
        from .wavefunctions import evaluate

        shape = np.shape(r)
        P = evaluate(self, r, "P")
        dens = evaluate(self, r, "weight") * P**2
        if self.Q is not None:
            dens = dens + evaluate(self, r, "Q") ** 2
        return dens.reshape(shape)

    def __repr__(self) -> str:
        comp = "P, Q" if self.Q is not None else "P"
        return (f"RadialState({comp} on {len(self.r)} nodes, r in "
                f"[{self.r[0]:.3g}, {self.r[-1]:.3g}] bohr, u ~ r^{self.gamma:.6g} at 0)")


@dataclass(frozen=True, slots=True, repr=False)
class Level:
    """One bound level of one channel.

    ``energy`` is the binding energy (total minus rest energy) in hartree;
    ``error_estimate`` is absolute, in hartree. Use :meth:`energy_in` for
    other units.
    """

    n: int
    l: int
    j: float | None
    kappa: int | None
    label: str
    energy: float
    error_estimate: float
    nodes: int
    state: RadialState
    resolution: int
    iterations: int
    previous_state: RadialState | None = None    # the same level one resolution lower (error estimates)

    def energy_in(self, unit: str) -> float:
        return float(hartree_to(self.energy, unit))

    def error_in(self, unit: str) -> float:
        return float(hartree_to(self.error_estimate, unit))

    def __repr__(self) -> str:
        return (f"Level({self.label}: E = {self.energy:.15g} hartree "
                f"+- {self.error_estimate:.2g}, nodes={self.nodes})")


@dataclass(frozen=True, repr=False)
class SolveResult:
    """Outcome of :func:`boundkit.solve`.

    Attributes
    ----------
    levels : tuple of Level
        The reported levels, lowest first.
    success : bool
        True when every requested level was found and meets ``tol``.
    status : str
        ``"ok"``, ``"partial"`` (fewer levels than requested) or
        ``"tolerance-not-met"``.
    message : str
        One line saying what happened.
    equation, potential : str
        What was solved.
    settings, constants, units, diagnostics : dict
        Everything that produced the numbers.
    """

    levels: tuple[Level, ...]
    success: bool
    status: str
    message: str
    equation: str
    potential: str
    settings: dict = field(default_factory=dict)
    constants: dict = field(default_factory=dict)
    units: dict = field(default_factory=dict)
    diagnostics: dict = field(default_factory=dict)

    def energies(self, unit: str = "hartree") -> np.ndarray:
        return np.array([lv.energy_in(unit) for lv in self.levels])

    def level(self, label: str) -> Level:
        for lv in self.levels:
            if lv.label == label:
                return lv
        raise KeyError(f"no level {label!r}; have {', '.join(lv.label for lv in self.levels)}")

    def to_dict(self, energy_unit: str = "hartree") -> dict[str, Any]:
        """A JSON-ready record (energies in ``energy_unit``)."""
        return {
            "equation": self.equation,
            "potential": self.potential,
            "units": {"energy": energy_unit, "length": "bohr"},
            "constants": self.constants,
            "settings": self.settings,
            "status": self.status,
            "success": self.success,
            "message": self.message,
            "levels": [
                {
                    "n": lv.n, "l": lv.l, "j": lv.j, "kappa": lv.kappa, "label": lv.label,
                    "energy": lv.energy_in(energy_unit),
                    "error_estimate": lv.error_in(energy_unit),
                    "nodes": lv.nodes, "resolution": lv.resolution,
                }
                for lv in self.levels
            ],
            "diagnostics": self.diagnostics,
        }

    def __repr__(self) -> str:
        lines = [f"SolveResult({self.equation}, {self.potential}, status={self.status!r}: {self.message})"]
        lines += [f"  {lv!r}" for lv in self.levels]
        return "\n".join(lines)
