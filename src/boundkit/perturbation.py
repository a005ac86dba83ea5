"""First-order energy shifts of an added term, beside the exact solve with it.

For a level of the base potential and an added vector term dV (or scalar
term dS), first-order perturbation theory gives

* Schrodinger:  dE1 = integral dV P^2 dr,
* Dirac:        dE1 = integral dV (P^2 + Q^2) dr   (scalar: integral dS (P^2 - Q^2) dr),
* Klein-Gordon: dE1 = integral dV (E + mc^2 - V)/(mc^2) P^2 dr, the charge density
  (Hellmann-Feynman for the energy-dependent operator: dq/dV and 1 - dq/dE both
  equal this weight).

:func:`compare_shift` solves the base and the perturbed potential exactly
(:func:`boundkit.solve`), takes dV = V_perturbed - V_base on the fly, and reports
per level the exact shift E_perturbed - E_base, the first-order shift, and their
difference (the size of the higher orders). Errors: the first-order shift carries
the error estimate of the expectation value; the exact shift the sum of the two
energies' estimates.
"""
from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Callable

import numpy as np

from .observables import Quantity, _real_function, expectation_value
from .units import hartree_to

__all__ = ["first_order_shift", "ShiftComparison", "compare_shift"]


def first_order_shift(level, delta: Callable[[np.ndarray], np.ndarray], *, scalar: bool = False,
                      energy_unit: str = "hartree", breaks=()) -> Quantity:
    """First-order shift of ``level`` by an added term ``delta(r)`` (hartree, r in bohr).

    ``scalar=True`` treats the term as a Lorentz scalar (Dirac: weight P^2 - Q^2).
    ``breaks``: radii (bohr) where the term has a kink (a nuclear surface), so that
    the integral is split there (the level's own nodes do not know of them).
    See the module docstring for the densities.
    """
    delta = _real_function(delta, "delta", "pass the real part for the shift; the expectation value of an "
                                           "absorptive part -W(r) is minus half the width (a second call)")
    kind = "P2-Q2" if scalar and level.state.Q is not None else "density"
    if scalar and level.state.density_weight is not None:
        raise ValueError("scalar: the first-order shift of a scalar term is not implemented for Klein-Gordon; "
                         "compare exact solves instead")
    q = expectation_value(level, lambda r: np.asarray(delta(r), dtype=float), kind=kind, breaks=breaks)
    s = float(hartree_to(1.0, energy_unit))
    return Quantity("dE first order", q.value * s, q.error * s, energy_unit, q.note)


@dataclass(frozen=True, slots=True, repr=False)
class ShiftComparison:
    """Exact and first-order shift of one level (``energy_unit``)."""

    label: str
    energy_unit: str
    base_energy: float
    exact_shift: float
    exact_error: float
    first_order: float
    first_order_error: float

    @property
    def difference(self) -> float:
        """exact - first order (the higher orders)."""
        return self.exact_shift - self.first_order

    @property
    def relative_difference(self) -> float:
        return self.difference / self.exact_shift if self.exact_shift else math.inf

    def to_dict(self) -> dict:
        return {"label": self.label, "energy_unit": self.energy_unit, "base_energy": self.base_energy,
                "exact_shift": self.exact_shift, "exact_error": self.exact_error,
                "first_order": self.first_order, "first_order_error": self.first_order_error,
                "difference": self.difference}

    def __repr__(self) -> str:
        return (f"ShiftComparison({self.label}: exact {self.exact_shift:.10g} +- {self.exact_error:.1g}, "
                f"first order {self.first_order:.10g} +- {self.first_order_error:.1g} {self.energy_unit}; "
                f"difference {self.relative_difference:.3g} relative)")


def compare_shift(equation: str, base, perturbed, params: dict | None = None, *,
                  perturbed_params: dict | None = None, levels: int = 1,
                  energy_unit: str = "hartree", tol: float = 1e-12, **solve_kwargs) -> tuple[ShiftComparison, ...]:
    """Exact shift (two solves) beside the first-order shift, level by level.

    Parameters
    ----------
    equation : str
    base, perturbed : potential specifications
        Anything :func:`boundkit.solve` takes as ``potential`` (e.g. ``"coulomb"``
        and ``"uniform-sphere"``, or ``["coulomb", "uehling"]``).
    params, perturbed_params : dict
        Parameters of the base and of the perturbed potential (the latter defaults to ``params``).
    levels, tol, solve_kwargs
        Passed to :func:`boundkit.solve` (channel, particle, units, ...).

    Returns
    -------
    tuple of ShiftComparison
        One per level found in both solves.
    """
    from .potentials import make_potential
    from .solver import solve

    units = solve_kwargs.get("units", "atomic")
    a = solve(equation, base, params, levels=levels, tol=tol, **solve_kwargs)
    pparams = params if perturbed_params is None else perturbed_params
    b = solve(equation, perturbed, pparams, levels=levels, tol=tol, **solve_kwargs)
    pa, pb = make_potential(base, params, units=units), make_potential(perturbed, pparams, units=units)

    def delta(r):
        return np.asarray(pb.V(r), float) - np.asarray(pa.V(r), float)

    def delta_s(r):
        return np.asarray(pb.S(r), float) - np.asarray(pa.S(r), float)

    breaks = tuple(sorted(set(pa.breakpoints) | set(pb.breakpoints)))
    s = float(hartree_to(1.0, energy_unit))
    out = []
    by_label = {lv.label: lv for lv in b.levels}
    for lv in a.levels:
        other = by_label.get(lv.label)
        if other is None:
            continue
        first = first_order_shift(lv, delta, breaks=breaks)
        if equation == "dirac":
            extra = first_order_shift(lv, delta_s, scalar=True, breaks=breaks)
            first = Quantity(first.name, first.value + extra.value, first.error + extra.error, first.unit)
        out.append(ShiftComparison(lv.label, energy_unit, lv.energy * s, (other.energy - lv.energy) * s,
                                   (other.error_estimate + lv.error_estimate) * s, first.value * s,
                                   first.error * s))
    return tuple(out)
