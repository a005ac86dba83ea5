"""Frozen result objects of the continuum layer, with units recorded on them."""
from __future__ import annotations

import math
from dataclasses import dataclass, field
from typing import Any

import numpy as np

from ..units import FM_PER_BOHR, bohr_to, hartree_to, system_units
from ..units import energy_unit as _energy
from ..units import length_unit as _length

__all__ = ["PhaseShifts", "ScatteringLength", "LevinsonCheck", "ContinuumState"]


def _floats(a) -> list:
    return [None if (x is None or not math.isfinite(x)) else float(x) for x in np.asarray(a, dtype=float)]


def _system_length(settings: dict, length_unit: str | None) -> str:
    """``length_unit``, else that of the call's unit system (bohr; fm with units='nuclear')."""
    return _length(length_unit or system_units(settings.get("units", "atomic"))[1])


@dataclass(frozen=True, repr=False)
class PhaseShifts:
    """Phase shifts of one channel on an energy grid.

    Attributes
    ----------
    energies : ndarray
        Kinetic energies E (total minus rest energy), hartree.
    wave_numbers : ndarray
        k in 1/bohr.
    delta : ndarray
        Phase shifts in radians, on the absolute branch (continuous in E,
        integer part from node counts). Short-range potential: tends to 0 at
        high energy in the Schrodinger equation. Coulomb tail: relative to
        the Coulomb phase.
    error_estimate : ndarray
        Absolute error estimate of delta, radians (the change under a second
        matching radius plus the first-order bound of the potential beyond it,
        added to the change under a looser integration tolerance and a start
        further out; at least the integration tolerance and 4 ulp of delta).
        Zero when none was computed (``estimate_error=False``, as on the
        Levinson grid): the table then reads ``none`` and the JSON null.
    coulomb_phase : ndarray
        Reference phase theta (radians, in (-pi, pi]; 0 for a free tail): the
        wave goes like sin(k r - eta ln 2kr - l pi/2 + theta + delta), l the
        orbital of the (large) component. Schrodinger: sigma_l = arg Gamma(l +
        1 + i eta); Klein-Gordon: sigma_L + (l - L) pi/2; Dirac: the phase of
        the Mott-problem solution on the branch that tends to sigma_l as
        c -> infinity, for every kappa (see :mod:`boundkit.scattering.reference`).
    eta : ndarray
        Sommerfeld parameter (0 for a free tail; < 0 for attraction).
    matching_radius : ndarray
        Radius (bohr) where each delta was read.
    status, message, success
        ``"ok"``, ``"tolerance-not-met"`` or ``"range-not-reached"``.
    """

    energies: np.ndarray
    wave_numbers: np.ndarray
    delta: np.ndarray
    error_estimate: np.ndarray
    coulomb_phase: np.ndarray
    eta: np.ndarray
    matching_radius: np.ndarray
    equation: str
    channel: dict
    potential: str
    reference: str
    branch: str
    success: bool
    status: str
    message: str
    settings: dict = field(default_factory=dict)
    constants: dict = field(default_factory=dict)
    units: dict = field(default_factory=lambda: {"energy": "hartree", "length": "bohr", "phase": "rad",
                                                  "wave_number": "1/bohr"})
    diagnostics: dict = field(default_factory=dict)

    def energies_in(self, unit: str) -> np.ndarray:
        return np.asarray(hartree_to(self.energies, unit), dtype=float)

    def to_dict(self, energy_unit: str | None = None, length_unit: str | None = None) -> dict[str, Any]:
        """A JSON-ready record: energies in ``energy_unit``, wave numbers and matching radii in
        ``length_unit`` (default: those of the call's unit system, hartree and bohr or MeV and fm),
        phases in radians; the ``units`` block names each."""
        energy_unit = _energy(energy_unit or system_units(self.settings.get("units", "atomic"))[0])
        lu = _system_length(self.settings, length_unit)
        per = float(bohr_to(1.0, lu))
        return {
            "equation": self.equation, "channel": self.channel, "potential": self.potential,
            "reference": self.reference, "branch": self.branch,
            "units": {**self.units, "energy": energy_unit, "length": lu, "wave_number": f"1/{lu}"},
            "constants": self.constants, "settings": self.settings,
            "status": self.status, "success": self.success, "message": self.message,
            "points": [
                {"energy": e, "wave_number": k, "delta": d, "error_estimate": er,
                 "coulomb_phase": c, "eta": et, "matching_radius": R}
                for e, k, d, er, c, et, R in zip(
                    _floats(self.energies_in(energy_unit)), _floats(self.wave_numbers / per), _floats(self.delta),
                    self._errors(), _floats(self.coulomb_phase),
                    _floats(self.eta), _floats(self.matching_radius * per))
            ],
            "diagnostics": self.diagnostics,
        }

    def table(self, energy_unit: str = "hartree", length_unit: str = "bohr") -> str:
        """Readable table; ``length_unit`` (bohr or fm) is that of k."""
        if length_unit not in ("bohr", "fm"):
            raise ValueError(f"length_unit: unknown value {length_unit!r}; choose bohr or fm")
        per = FM_PER_BOHR if length_unit == "fm" else 1.0
        head = [f"{self.equation} equation, {self._channel_text()}, potential {self.potential}",
                f"reference: {self.reference}; branch: {self.branch}",
                f"energies (kinetic, total minus rest) in {energy_unit}; k in 1/{length_unit}; phases in rad", "",
                f"{'energy':>16} {'k':>14} {'delta':>20} {'delta/pi':>12} {'error':>9} {'coulomb phase':>14}"]
        rows = [f"{e:>16.9g} {k:>14.8g} {d:>20.14g} {d / math.pi:>12.6f} "
                f"{'none' if er is None else format(er, '.2g'):>9} {c:>14.8g}"
                for e, k, d, er, c in zip(self.energies_in(energy_unit), self.wave_numbers / per, self.delta,
                                          self._errors(), self.coulomb_phase)]
        return "\n".join(head + rows + ["", f"status: {self.status} - {self.message}"])

    def _errors(self) -> list:
        """The error estimates, None where none was computed (``estimate_error=False``: the array holds 0
        there, which is no estimate)."""
        if not self._estimated:
            return [None] * len(self.delta)
        return _floats(self.error_estimate)

    def _channel_text(self) -> str:
        if self.channel.get("kappa") is not None:
            return f"kappa = {self.channel['kappa']}"
        return f"l = {self.channel.get('l')}"

    def __repr__(self) -> str:
        n = len(self.energies)
        span = f"E in [{self.energies[0]:.4g}, {self.energies[-1]:.4g}] hartree" if n else "no energies"
        return (f"PhaseShifts({self.equation}, {self._channel_text()}, {self.potential}: {n} points, {span}, "
                f"{self._max_error_text()}, status={self.status!r})")

    @property
    def _estimated(self) -> bool:
        """Whether errors were estimated (``estimate_error=False`` leaves 0 in the array, which is no estimate)."""
        return self.settings.get("estimate_error", True) is not False

    def _max_error_text(self) -> str:
        if not self._estimated:
            return "no error estimate"
        return f"max error {np.max(self.error_estimate) if len(self.energies) else 0:.2g} rad"


@dataclass(frozen=True, repr=False)
class ScatteringLength:
    """s-wave scattering length and effective range.

    Convention: k cot delta_0(k) = -1/a + r_e k^2 / 2 + O(k^4), so a hard
    sphere of radius R has a = +R and a weak attraction gives a < 0. Lengths
    in bohr. ``a_error`` is the larger change under a second matching radius and a looser
    integration, and at least 4 ulp of the matching radius (a = R1 - u/u' is a subtraction).
    """

    a: float
    a_error: float
    effective_range: float | None
    effective_range_error: float | None
    equation: str
    potential: str
    method: str
    success: bool
    status: str
    message: str
    convention: str = "k cot delta_0 = -1/a + r_e k^2/2 + O(k^4)"
    settings: dict = field(default_factory=dict)
    constants: dict = field(default_factory=dict)
    units: dict = field(default_factory=lambda: {"length": "bohr"})

    def to_dict(self, length_unit: str | None = None) -> dict[str, Any]:
        """A JSON-ready record, lengths in ``length_unit`` (default that of the call's unit system: bohr,
        or fm with units='nuclear'), named in its ``units`` block."""
        lu = _system_length(self.settings, length_unit)

        def conv(x):
            return None if x is None else float(bohr_to(x, lu))

        return {"scattering_length": conv(self.a), "scattering_length_error": conv(self.a_error),
                "effective_range": conv(self.effective_range), "effective_range_error": conv(self.effective_range_error),
                "convention": self.convention, "units": {**self.units, "length": lu}, "equation": self.equation,
                "potential": self.potential, "method": self.method, "status": self.status,
                "success": self.success, "message": self.message, "settings": self.settings,
                "constants": self.constants}

    def __repr__(self) -> str:
        re_ = "" if self.effective_range is None else f", r_e = {self.effective_range:.12g} bohr"
        return f"ScatteringLength(a = {self.a:.12g} +- {self.a_error:.2g} bohr{re_}, status={self.status!r})"


@dataclass(frozen=True, repr=False)
class LevinsonCheck:
    """Levinson's theorem on one channel: delta(0) - delta(inf) = n pi.

    ``count_from_phase`` is n from the absolute phase shift at the lowest
    energy; ``count_unwrapped`` the same after following delta continuously
    down from the highest energy on the grid; ``n_bound`` the bound-level
    count compared with (None when not given); ``residual`` the distance of
    delta(E_min)/pi from the nearest integer.
    """

    count_from_phase: int
    count_unwrapped: int
    n_bound: int | None
    agrees: bool | None
    residual: float
    delta_low: float
    delta_high: float
    max_step: float
    phases: PhaseShifts
    success: bool
    status: str
    message: str

    def to_dict(self, energy_unit: str | None = None, length_unit: str | None = None) -> dict[str, Any]:
        return {"count_from_phase": self.count_from_phase, "count_unwrapped": self.count_unwrapped,
                "n_bound": self.n_bound, "agrees": self.agrees, "residual": self.residual,
                "delta_low": self.delta_low, "delta_high": self.delta_high, "max_step": self.max_step,
                "status": self.status, "success": self.success, "message": self.message,
                "units": {"phase": "rad"}, "phases": self.phases.to_dict(energy_unit, length_unit)}

    def __repr__(self) -> str:
        nb = "" if self.n_bound is None else f", bound levels {self.n_bound}"
        return (f"LevinsonCheck(delta(0) - delta(inf) = {self.count_from_phase} pi (unwrapped "
                f"{self.count_unwrapped}){nb}, status={self.status!r})")


@dataclass(frozen=True, repr=False)
class ContinuumState:
    """Regular solution at one energy above threshold (atomic units).

    ``P`` is r times the (large) radial component, ``Q`` r times the small
    component (Dirac; None otherwise), normalised as ``normalisation`` says:
    ``"unit-amplitude"`` (P ~ sin(k r - eta ln 2kr - l pi/2 + theta + delta)
    far out) or ``"energy"`` (delta(E - E') normalisation, 1/sqrt(hartree)).
    """

    energy: float
    wave_number: float
    delta: float
    r: np.ndarray
    P: np.ndarray
    Q: np.ndarray | None
    normalisation: str
    equation: str
    channel: dict
    units: dict = field(default_factory=lambda: {"energy": "hartree", "length": "bohr"})

    def r_in(self, unit: str) -> np.ndarray:
        """The radii in ``unit`` (bohr, fm, pm, angstrom, nm)."""
        return bohr_to(self.r, unit)

    def __repr__(self) -> str:
        comp = "P, Q" if self.Q is not None else "P"
        return (f"ContinuumState(E = {self.energy:.8g} hartree, k = {self.wave_number:.8g}/bohr, "
                f"delta = {self.delta:.10g} rad, {comp} on {len(self.r)} radii, {self.normalisation})")
