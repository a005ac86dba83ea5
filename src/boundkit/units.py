"""Physical constants, particles and energy units.

Everything inside boundkit is in atomic units (hbar = e = m_e = 4 pi eps0 = 1,
so c = 1/alpha, lengths in bohr, energies in hartree). This module is the one
place where numbers from outside enter: every constant comes from
:mod:`scipy.constants` (CODATA), except the meson masses, which CODATA does not
list (they come from the Particle Data Group review and are marked so).
"""
from __future__ import annotations

from dataclasses import dataclass
from typing import Mapping

import scipy
import scipy.constants as sc

from ._checks import MAX_MAGNITUDE, check_choice, check_positive

__all__ = [
    "ALPHA",
    "C_AU",
    "HARTREE_EV",
    "BOHR_M",
    "HBARC_MEV_FM",
    "ELECTRON_MASS_MEV",
    "MASS_UNIT_MEV",
    "Particle",
    "PARTICLES",
    "ENERGY_UNITS",
    "LENGTH_UNITS",
    "get_particle",
    "mass_mev_to_au",
    "particle_table",
    "hartree_to",
    "bohr_to",
    "energy_unit",
    "length_unit",
    "system_units",
    "column",
    "constants_record",
]

ALPHA: float = sc.fine_structure
"""Fine-structure constant (CODATA, via scipy.constants)."""
C_AU: float = 1.0 / ALPHA
"""Speed of light in atomic units."""
HARTREE_EV: float = sc.physical_constants["Hartree energy in eV"][0]
HARTREE_J: float = sc.physical_constants["Hartree energy"][0]
BOHR_M: float = ALPHA * sc.hbar * sc.c / (sc.e * HARTREE_EV)
"""Bohr radius in metres, derived as a0 = alpha hbar c / E_h (scipy.constants; hbar, c and e are exact in the SI)
with the very E_h that converts energies, so that E_h a0 = alpha hbar c holds to rounding and a problem posed
in MeV and fm sees hbar c itself. CODATA's tabulated a0 differs by 5.6e-12 relative (the rounding of its tables,
well inside the 1.5e-10 uncertainty of a0); converting with it put every level of such a problem 5.6e-12 off."""
ELECTRON_MASS_MEV: float = sc.physical_constants["electron mass energy equivalent in MeV"][0]
"""CODATA's tabulated m_e c^2 in MeV, for the record (:func:`constants_record`); masses are converted with
:data:`MASS_UNIT_MEV`."""
MASS_UNIT_MEV: float = HARTREE_EV * 1e-6 / ALPHA**2
"""The atomic unit of mass as a rest energy in MeV: m_e c^2 = E_h / alpha^2, with the very E_h in MeV
that converts energies (``hartree_to(1, 'MeV')``). Every mass in MeV is divided by it, so a level's
E / (m c^2) in MeV is its value in atomic units, exact to rounding. CODATA's tabulated m_e c^2 in MeV
(:data:`ELECTRON_MASS_MEV`) differs from it by 1.4e-11 relative (rounding of the tables, inside the
3.1e-10 uncertainty of m_e c^2); dividing by that put levels of a mass in MeV 1.4e-11 off."""
FM_PER_BOHR: float = BOHR_M * 1e15
HBARC_MEV_FM: float = sc.hbar * sc.c / sc.e * 1e9
"""hbar c in MeV fm (exact in the SI): E_h a0 / alpha, the one constant of a problem posed in MeV and fm."""


@dataclass(frozen=True, slots=True)
class Particle:
    """An orbiting particle.

    Parameters
    ----------
    name : str
        Name used in reports.
    mass_mev : float
        Rest energy in MeV.
    source : str
        Where the mass comes from.
    charge : float, optional
        Electric charge in units of the elementary charge e (None: not stated).
    spin : float, optional
        Spin in units of hbar (None: not stated).
    mass_ratio : float, optional
        Mass in electron masses when that is what the source gives (CODATA's mass ratios); it is then
        the mass used, and ``mass_mev`` must be ``mass_ratio * MASS_UNIT_MEV`` (:meth:`from_ratio`).
    """

    name: str
    mass_mev: float
    source: str
    charge: float | None = None
    spin: float | None = None
    mass_ratio: float | None = None

    def __post_init__(self) -> None:
        check_mass("mass_mev", self.mass_mev)
        if self.mass_ratio is not None and abs(self.mass_ratio * MASS_UNIT_MEV - self.mass_mev) > 4e-16 * self.mass_mev:
            raise ValueError(f"mass_ratio: {self.mass_ratio!r} electron masses is not mass_mev = {self.mass_mev!r} MeV "
                             "(m_e c^2 = E_h / alpha^2); build the particle with Particle.from_ratio")

    @classmethod
    def from_ratio(cls, name: str, mass_ratio: float, source: str, charge: float | None = None,
                   spin: float | None = None) -> "Particle":
        """A particle whose mass is given in electron masses (its rest energy in MeV follows from
        m_e c^2 = E_h / alpha^2, :data:`MASS_UNIT_MEV`)."""
        return cls(name, mass_ratio * MASS_UNIT_MEV, source, charge, spin, float(mass_ratio))

    @property
    def mass_au(self) -> float:
        """Mass in units of the electron mass (the atomic unit of mass): the mass ratio when the
        particle was given by one, else ``mass_mev / MASS_UNIT_MEV``."""
        return self.mass_ratio if self.mass_ratio is not None else mass_mev_to_au(self.mass_mev)


def mass_mev_to_au(mass_mev: float) -> float:
    """A rest energy in MeV as a mass in electron masses, through m_e c^2 = E_h / alpha^2
    (:data:`MASS_UNIT_MEV`), the factor that converts energies: E / (m c^2) is then the same in MeV as in
    atomic units."""
    return mass_mev / MASS_UNIT_MEV


def check_mass(name: str, mass_mev) -> float:
    """A positive mass in MeV/c^2 of at most MAX_MAGNITUDE electron masses (the bound of every
    parameter in atomic units): 2 m r^2 V and (m c^2)^2 then stay inside the floating-point range,
    where a mass of 1e300 MeV made infinities and a bare 'array must not contain infs or NaNs'."""
    m = check_positive(name, mass_mev)
    top = MAX_MAGNITUDE * MASS_UNIT_MEV
    if m > top:
        raise ValueError(f"{name}: {m:.3g} MeV is beyond {top:.3g} MeV ({MAX_MAGNITUDE:g} electron masses), the "
                         "largest mass boundkit accepts (no particle or nucleus is near it); give a smaller mass")
    return m


def _codata(name: str, key: str | None, charge: float, spin: float, note: str = "") -> Particle:
    """A particle of CODATA's mass ratio ``key`` (None: the electron, 1): exact in electron masses."""
    ratio = 1.0 if key is None else sc.physical_constants[key][0]
    what = "the unit of mass" if key is None else f"the {key}"
    return Particle.from_ratio(name, ratio, f"CODATA via scipy.constants: {what}{note}; in MeV times "
                               "m_e c^2 = E_h / alpha^2", charge, spin)


_PDG = "Particle Data Group, Review of Particle Physics (value from memory; not in CODATA)"
# charges in e and spins in hbar are common knowledge; the negative mesons are the ones that form atoms
PARTICLES: Mapping[str, Particle] = {
    "electron": _codata("electron", None, -1.0, 0.5),
    "muon": _codata("muon", "muon-electron mass ratio", -1.0, 0.5),
    "pion": Particle("pion", 139.57039, _PDG + "; the negative pion", -1.0, 0.0),
    "kaon": Particle("kaon", 493.677, _PDG + "; the negative kaon", -1.0, 0.0),
    "proton": _codata("proton", "proton-electron mass ratio", 1.0, 0.5),
    "antiproton": _codata("antiproton", "proton-electron mass ratio", -1.0, 0.5, " (equal to the proton mass)"),
    "neutron": _codata("neutron", "neutron-electron mass ratio", 0.0, 0.5),
    "deuteron": _codata("deuteron", "deuteron-electron mass ratio", 1.0, 1.0),
}


def particle_table() -> list[dict]:
    """Every named particle as a record: name, mass (MeV/c^2), charge (e), spin (hbar), source."""
    return [{"name": p.name, "mass": p.mass_mev, "mass_unit": "MeV/c^2", "charge": p.charge, "charge_unit": "e",
             "spin": p.spin, "spin_unit": "hbar", "source": p.source} for p in PARTICLES.values()]


def get_particle(particle: str | Particle | None = None, mass_mev: float | None = None) -> Particle:
    """Return the particle named ``particle`` or one of mass ``mass_mev`` (MeV/c^2)."""
    if mass_mev is not None:
        check_mass("mass_mev", mass_mev)
        name = particle if isinstance(particle, str) else "custom"
        return Particle(name, float(mass_mev), "given by the user")
    if particle is None:
        return PARTICLES["electron"]
    if isinstance(particle, Particle):
        return particle
    key = check_choice("particle", str(particle).lower(), PARTICLES)
    return PARTICLES[key]


# energy unit -> multiply a hartree value by this factor
ENERGY_UNITS: Mapping[str, float] = {
    "hartree": 1.0,
    "eV": HARTREE_EV,
    "meV": HARTREE_EV * 1e3,
    "keV": HARTREE_EV * 1e-3,
    "MeV": HARTREE_EV * 1e-6,
    "cm^-1": HARTREE_J / (sc.h * sc.c) / 100.0,
    "MHz": HARTREE_J / sc.h / 1e6,
    "GHz": HARTREE_J / sc.h / 1e9,
    "THz": HARTREE_J / sc.h / 1e12,
}
_UNIT_ALIASES = {u.lower(): u for u in ENERGY_UNITS} | {"ha": "hartree", "hartrees": "hartree", "cm-1": "cm^-1", "1/cm": "cm^-1"}
_AMBIGUOUS = {low: tuple(u for u in ENERGY_UNITS if u.lower() == low) for low in _UNIT_ALIASES
              if sum(u.lower() == low for u in ENERGY_UNITS) > 1}
"""Spellings that only the case tells apart (mev: meV or MeV, a factor 1e9): refused unless exact."""


def energy_unit(name: str) -> str:
    """Return the canonical spelling of an energy unit, or raise ValueError."""
    # exact spelling first: "meV" and "MeV" differ only in case
    if str(name) in ENERGY_UNITS:
        return str(name)
    both = _AMBIGUOUS.get(str(name).lower())
    if both:
        raise ValueError(f"energy_unit: {name!r} could be {' or '.join(both)} (a factor "
                         f"{ENERGY_UNITS[both[0]] / ENERGY_UNITS[both[1]]:.0e} apart); write it with its exact case")
    key = _UNIT_ALIASES.get(str(name).lower())
    if key is None:
        raise ValueError(
            f"energy_unit: unknown unit {name!r}; choose one of {', '.join(ENERGY_UNITS)}"
        )
    return key


def hartree_to(value, unit: str):
    """Convert an energy (or array) from hartree to ``unit``."""
    return value * ENERGY_UNITS[energy_unit(unit)]


LENGTH_UNITS: Mapping[str, float] = {
    "bohr": 1.0,
    "fm": BOHR_M * 1e15,
    "pm": BOHR_M * 1e12,
    "angstrom": BOHR_M * 1e10,
    "nm": BOHR_M * 1e9,
}
"""Length unit -> multiply a value in bohr by this factor (:data:`BOHR_M`, alpha hbar c / E_h)."""
_LENGTH_ALIASES = {u.lower(): u for u in LENGTH_UNITS} | {"a0": "bohr", "a.u.": "bohr", "å": "angstrom",
                                                          "ang": "angstrom"}


def length_unit(name: str) -> str:
    """Canonical spelling of a length unit, or ValueError naming the allowed ones."""
    key = _LENGTH_ALIASES.get(str(name).strip().lower())
    if key is None:
        raise ValueError(f"length_unit: unknown unit {name!r}; choose one of {', '.join(LENGTH_UNITS)}")
    return key


def bohr_to(value, unit: str):
    """Convert a length (or array) from bohr to ``unit``."""
    return value * LENGTH_UNITS[length_unit(unit)]


def column(name: str, unit: str) -> str:
    """CSV column name carrying its unit: ``energy_MeV``, ``delta_per_bohr``; ``name`` alone when unitless."""
    unit = str(unit or "").strip()
    if unit in ("", "1", "e"):
        return name
    unit = unit.replace(" ", "")
    unit = ("per_" + unit[2:]) if unit.startswith("1/") else unit
    suffix = f"_{unit.replace('/', '_per_')}"
    return name if name.endswith(suffix) else name + suffix     # rms_fm stays rms_fm


def system_units(system: str = "atomic") -> tuple[str, str]:
    """(energy unit, length unit) of a unit system: hartree and bohr, or MeV and fm."""
    return ("MeV", "fm") if system == "nuclear" else ("hartree", "bohr")


def call_energy_unit(asked: str | None, system: str = "atomic") -> str:
    """Canonical name of a call's energy unit: the ``energy_unit`` it ``asked`` for, else that of its unit
    ``system`` (hartree, or MeV with ``'nuclear'``)."""
    return energy_unit(asked or system_units(system)[0])


def constants_record() -> dict:
    """The constants a result was computed with, for reports and JSON."""
    return {
        "alpha": ALPHA,
        "c_atomic_units": C_AU,
        "hartree_eV": HARTREE_EV,
        "bohr_m": BOHR_M,
        "hbar_c_MeV_fm": HBARC_MEV_FM,
        "electron_mass_MeV": ELECTRON_MASS_MEV,
        "mass_unit_MeV": MASS_UNIT_MEV,
        "source": f"CODATA via scipy.constants (scipy {scipy.__version__})",
    }


# --- unit systems for parameters ---------------------------------------------------------
MEV_IN_HARTREE: float = 1e6 / HARTREE_EV
"""One MeV expressed in hartree."""
FM_IN_BOHR: float = 1e-15 / BOHR_M
"""One femtometre expressed in bohr."""

UNIT_SYSTEMS = ("atomic", "nuclear")
"""``atomic``: hartree and bohr. ``nuclear``: MeV and fm (hbar c from scipy.constants)."""


def _dimension(unit: str) -> tuple[int, int] | None:
    """(energy power, length power) of an atomic-unit string such as
    ``hartree/bohr^2``; None when the unit is fixed (``fm``, ``e``, ...)."""
    unit = unit.strip()
    if unit in ("", "1", "e"):
        return (0, 0)
    num, _, den = unit.partition("/")
    powers = [0, 0]
    for part, sign in ((num, 1), (den, -1)):
        for factor in filter(None, part.replace(" ", "").split("*")):
            base, _, exp = factor.partition("^")
            p = int(exp) if exp else 1
            if base == "hartree":
                powers[0] += sign * p
            elif base == "bohr":
                powers[1] += sign * p
            elif base == "1" and sign == 1:
                continue
            else:
                return None
    return powers[0], powers[1]


def unit_in_atomic(unit: str) -> tuple[int, int, float] | None:
    """(energy power, length power, value of one ``unit`` in hartree^p bohr^q) of a unit written from the
    energy units (:data:`ENERGY_UNITS`, exact spelling) and length units (:data:`LENGTH_UNITS`) with
    integer powers, ``*`` (or a space) between factors and at most one ``/``: ``MeV``, ``1/fm``,
    ``eV/angstrom^2``, ``hartree*bohr``. A number is ``1``, ``e`` (a charge in units of e) or empty.
    None when a factor is not one of these units.
    """
    unit = str(unit).strip()
    if unit in ("", "1", "e"):
        return (0, 0, 1.0)
    if unit.count("/") > 1:
        return None
    num, slash, den = unit.partition("/")
    energy = length = 0
    value = 1.0
    for part, sign in ((num, 1), (den, -1)):
        factors = part.replace("*", " ").split()
        if not factors and (sign == 1 or slash):
            return None                                         # "MeV/" has no denominator
        for factor in factors:
            base, hat, exp = factor.rpartition("^")
            if factor in ENERGY_UNITS or not hat:               # cm^-1 is an energy unit of its own
                base, exp = factor, "1"
            try:
                p = sign * int(exp)
            except ValueError:
                return None
            if base == "1" and sign == 1:
                continue
            if base in ENERGY_UNITS:
                energy += p
                value /= ENERGY_UNITS[base] ** p
            elif base in LENGTH_UNITS:
                length += p
                value /= LENGTH_UNITS[base] ** p
            else:
                return None
    return energy, length, value


def to_atomic(value: float, unit: str, system: str = "atomic") -> float:
    """Convert a parameter given in ``system`` to atomic units.

    ``unit`` is the parameter's atomic-unit string (``hartree``, ``bohr``,
    ``hartree/bohr^2``, ``1/bohr``, ...). In the nuclear system the same
    parameter is read in MeV and fm. Units that are not built from hartree and
    bohr (``fm``, ``e``) are never converted.
    """
    system = check_choice("units", system, UNIT_SYSTEMS)
    if system == "atomic":
        return value
    dim = _dimension(unit)
    if dim is None:
        return value
    return value * MEV_IN_HARTREE ** dim[0] * FM_IN_BOHR ** dim[1]


def unit_label(unit: str, system: str = "atomic") -> str:
    """The unit a parameter is read in, in ``system``."""
    if system == "atomic" or _dimension(unit) is None:
        return unit
    return unit.replace("hartree", "MeV").replace("bohr", "fm")
