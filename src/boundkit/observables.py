"""Expectation values of a bound level, and length units for reporting them.

A :class:`~boundkit.results.Level` carries its normalised radial functions
(``state.P``, ``state.Q`` for the Dirac small component) on the solver's grid
with quadrature weights for dr, so a radial expectation value is one weighted
sum. Everything is in atomic units (r in bohr); :func:`bohr_to` converts
lengths for reports.
"""
from __future__ import annotations

import math
from typing import Callable, Mapping

import numpy as np

from .units import BOHR_M

__all__ = ["expectation", "mean_radius", "rms_radius", "LENGTH_UNITS", "length_unit", "bohr_to"]

LENGTH_UNITS: Mapping[str, float] = {
    "bohr": 1.0,
    "fm": BOHR_M * 1e15,
    "pm": BOHR_M * 1e12,
    "angstrom": BOHR_M * 1e10,
    "nm": BOHR_M * 1e9,
}
"""Length unit -> multiply a value in bohr by this factor (Bohr radius from scipy.constants)."""

_ALIASES = {u.lower(): u for u in LENGTH_UNITS} | {"a0": "bohr", "a.u.": "bohr", "å": "angstrom",
                                                     "ang": "angstrom"}


def length_unit(name: str) -> str:
    """Canonical spelling of a length unit, or ValueError naming the allowed ones."""
    key = _ALIASES.get(str(name).strip().lower())
    if key is None:
        raise ValueError(f"length_unit: unknown unit {name!r}; choose one of {', '.join(LENGTH_UNITS)}")
    return key


def bohr_to(value, unit: str):
    """Convert a length (or array) from bohr to ``unit``."""
    return value * LENGTH_UNITS[length_unit(unit)]


def _density(level) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    st = level.state
    dens = st.P**2 if st.Q is None else st.P**2 + st.Q**2
    return st.r, st.weights, dens


def expectation(level, f: Callable[[np.ndarray], np.ndarray]) -> float:
    """Expectation value of a radial function ``f(r)`` (r in bohr) in ``level``.

    Parameters
    ----------
    level : Level
        A level from :func:`boundkit.solve`.
    f : callable
        Vectorised function of r in bohr, e.g. ``lambda r: r`` for <r>.

    Returns
    -------
    float
        <f> in the units of f (atomic units).

    Notes
    -----
    With P = r g and Q = r f the radial functions of the state and w_i the
    quadrature weights for dr on its grid,

        <f> = sum_i w_i f(r_i) (P_i^2 + Q_i^2) / sum_i w_i (P_i^2 + Q_i^2)

    (Q = 0 outside the Dirac equation). The denominator is 1 for Schrodinger
    and Dirac states; for Klein-Gordon states it makes the plain density
    P^2 a probability density (the conserved Klein-Gordon density carries an
    extra energy-dependent weight, which is not used here).
    """
    r, w, dens = _density(level)
    values = np.asarray(f(r), dtype=float)
    norm = float(np.sum(w * dens))
    if not norm > 0:
        raise ValueError(f"level {level.label}: its density integrates to {norm:g}; cannot take an expectation")
    return float(np.sum(w * values * dens) / norm)


def mean_radius(level) -> float:
    """<r> of ``level`` in bohr."""
    return expectation(level, lambda r: r)


def rms_radius(level) -> float:
    """sqrt(<r^2>) of ``level`` in bohr."""
    return math.sqrt(expectation(level, lambda r: r * r))
