"""Frozen result objects with readable reprs.

Units: a result stores binding energies in hartree and lengths in bohr (its
``units`` record says so); every way out converts in one call:
``Level.energy_in(unit)``, ``RadialState.r_in(unit)``,
``SolveResult.energies(unit)`` and ``SolveResult.to_dict(energy_unit,
length_unit)``, which convert every value of the record (diagnostics
included) and state the units in its ``units`` block. Called with
``units="nuclear"``, a result's defaults are MeV and fm.

Labels: a level is named in the atomic convention (``2p1/2``) unless another
convention is asked for (``labels="nuclear"`` gives ``0p1/2``,
``"quarkonium"`` gives ``1P``; :mod:`boundkit.states`).
"""
from __future__ import annotations

from dataclasses import dataclass, field, replace
from typing import Any

import numpy as np

from .states import check_convention, level_label, level_n
from .units import bohr_to, energy_unit, hartree_to, length_unit, system_units

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
    ``weight_sides`` holds, for each element end on a jump of the potential,
    ``(node index, weight inside, weight outside)``: the weight jumps there,
    and each element interpolates its own side's value; ``density_weight``
    holds at that node the mean of the two by the elements' quadrature
    weights, so that sums over the nodes integrate each element with its own.
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
    weight_sides: tuple = ()
    memo: dict = field(default_factory=dict, init=False, repr=False, compare=False)
    """What :mod:`boundkit.wavefunctions` derives from the nodal values once per state (the values over
    their origin factor, ...): every matrix element and line involving the state reads them again.
    Not an argument: ``dataclasses.replace`` gives the new state an empty one."""

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

    def r_in(self, unit: str) -> np.ndarray:
        """The radial nodes in ``unit`` (bohr, fm, pm, angstrom, nm)."""
        return bohr_to(self.r, unit)

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

    def label_in(self, labels: str = "atomic") -> str:
        """The level's label in a labelling convention (``atomic``, ``nuclear``, ``quarkonium``)."""
        return level_label(self.nodes, self.l, self.j, labels)

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

    @property
    def system(self) -> str:
        """The unit system the result was asked in (``settings['units']``, default atomic)."""
        return str(self.settings.get("units", "atomic"))

    def default_units(self) -> tuple[str, str]:
        """(energy unit, length unit) of the system it was called with: hartree and bohr, or MeV and fm."""
        return system_units(self.system)

    def energies(self, unit: str | None = None) -> np.ndarray:
        """Binding energies in ``unit`` (default: the unit system of the call, hartree or MeV)."""
        unit = self.default_units()[0] if unit is None else unit
        return np.array([lv.energy_in(unit) for lv in self.levels])

    def level(self, label: str) -> Level:
        for lv in self.levels:
            if lv.label == label:
                return lv
        raise KeyError(f"no level {label!r}; have {', '.join(lv.label for lv in self.levels)}")

    def with_labels(self, labels: str) -> "SolveResult":
        """The same result with its levels named in convention ``labels`` (recorded in ``settings``)."""
        labels = check_convention(labels)
        levels = tuple(replace(lv, label=lv.label_in(labels)) for lv in self.levels)
        renamed = {old.label: new.label for old, new in zip(self.levels, levels)}
        diag = dict(self.diagnostics)
        for key in ("levels", "cross_check"):
            if isinstance(diag.get(key), list):
                diag[key] = [{**rec, "label": renamed.get(rec.get("label"), rec.get("label"))} for rec in diag[key]]
        return replace(self, levels=levels, settings={**self.settings, "labels": labels}, diagnostics=diag)

    def to_dict(self, energy_unit: str | None = None, length_unit: str | None = None) -> dict[str, Any]:
        """A JSON-ready record; every energy in ``energy_unit``, every length in ``length_unit``.

        Defaults: the unit system of the call (hartree and bohr, or MeV and
        fm). The ``units`` block names the unit of every kind of value,
        diagnostics included (energies, lengths, times in s). A level's ``n``
        is that of its label's convention (``settings['labels']``; the
        principal n for atomic labels), as the printed table shows it.
        """
        e_def, l_def = self.default_units()
        eu = _energy(energy_unit or e_def)
        lu = _length(length_unit or l_def)
        return {
            "equation": self.equation,
            "potential": self.potential,
            "units": units_block(eu, lu, parameters=_SYSTEMS.get(self.system, self.system)),
            "constants": self.constants,
            "settings": self.settings,
            "status": self.status,
            "success": self.success,
            "message": self.message,
            "levels": [
                {
                    "n": level_n(lv.nodes, lv.l, self.settings.get("labels", "atomic")), "l": lv.l, "j": lv.j,
                    "kappa": lv.kappa, "label": lv.label,
                    "energy": lv.energy_in(eu),
                    "error_estimate": lv.error_in(eu),
                    "nodes": lv.nodes, "resolution": lv.resolution,
                }
                for lv in self.levels
            ],
            "diagnostics": diagnostics_in(self.diagnostics, eu, lu),
        }

    def __repr__(self) -> str:
        lines = [f"SolveResult({self.equation}, {self.potential}, status={self.status!r}: {self.message})"]
        lines += [f"  {lv!r}" for lv in self.levels]
        if self.system != "atomic":
            eu, lu = self.default_units()
            lines.append(f"  (stored in hartree and bohr; parameters were read in {self.system} units: "
                         f"res.energies() and res.to_dict() give {eu} and {lu})")
        return "\n".join(lines)


_SYSTEMS = {"atomic": "atomic (each parameter in hartree and bohr as its unit says)",
            "nuclear": "nuclear (each parameter in MeV and fm as its unit says)"}


def _energy(unit: str) -> str:
    return energy_unit(unit)


def _length(unit: str) -> str:
    return length_unit(unit)


def units_block(energy: str, length: str, **more: str) -> dict[str, str]:
    """The ``units`` block of a JSON record: the unit of every kind of value in it."""
    return {"energy": energy, "length": length, "time": "s", **more}


# diagnostics keys: old name -> (new name, kind); the new name carries no unit, the units block does
_DIAG_KEYS = {"threshold_hartree": ("threshold", "energy"), "natural_length_bohr": ("natural_length", "length"),
              "breakpoints_bohr": ("breakpoints", "length"), "count_box_bohr": ("count_box", "length"),
              "threshold_state_hartree": ("threshold_state", "energy"),
              "dive_state_hartree": ("dive_state", "energy")}
_PER_LEVEL = {"energies": "energy", "r_min": "length", "r_max": "length"}
_CROSS = {"energy": "energy", "error_estimate": "energy", "other_energy": "energy",
          "other_error_estimate": "energy", "difference": "energy"}


def _convert(value, kind: str, eu: str, lu: str):
    if value is None:
        return None
    conv = (lambda x: float(hartree_to(x, eu))) if kind == "energy" else (lambda x: float(bohr_to(x, lu)))
    if isinstance(value, (list, tuple)):
        return [None if x is None else conv(x) for x in value]
    return conv(value)


def diagnostics_in(diag: dict, eu: str, lu: str) -> dict:
    """A solve's diagnostics with energies in ``eu`` and lengths in ``lu`` (keys without unit suffixes)."""
    out = {}
    for key, value in diag.items():
        if key in _DIAG_KEYS:
            new, kind = _DIAG_KEYS[key]
            out[new] = _convert(value, kind, eu, lu)
        elif key == "levels" and isinstance(value, list):
            out[key] = [{k: (_convert(v, _PER_LEVEL[k], eu, lu) if k in _PER_LEVEL else v)
                         for k, v in rec.items()} for rec in value]
        elif key == "cross_check" and isinstance(value, list):
            out[key] = [{k: (_convert(v, _CROSS[k], eu, lu) if k in _CROSS else v)
                         for k, v in rec.items()} for rec in value]
        else:
            out[key] = value
    return out
