"""Radiative transitions between bound levels: line strengths, oscillator strengths, rates.

Atomic units throughout (e = hbar = m_e = 1, c = 1/alpha); photon energy
omega = E_upper - E_lower (a difference of binding energies), k = omega / c.

Spinless equations (Schrodinger, Klein-Gordon), electric dipole
-------------------------------------------------------------------
Length form:   R_L = <a| r |b>  (Klein-Gordon: charge-density inner product,
               weight (E_a + E_b + 2mc^2 - 2V)/(2mc^2)),
velocity form: R_V = G / (m omega), with G the radial integral of the gradient
between the level of larger l (P_l) and the other one:

    l' = l - 1:  G = integral P_(l-1) (P_l' + l P_l / r) dr
    l' = l + 1:  G = integral P_(l+1) (P_l' - (l + 1) P_l / r) dr

in the plain L2 product (the Klein-Gordon current is
(psi_a* grad psi_b - psi_b grad psi_a*)/(2m)); [H, r] = -i p / m makes
|R_V| = |R_L| for exact states. Line strength S = l_> R^2
(|<l_a||C_1||l_b>|^2 = l_>, l_> the larger l); P' comes from differentiating
the interpolant (:func:`boundkit.wavefunctions.radial_derivative_state`).

Dirac multipoles (the form of Johnson, Atomic Structure Theory, Springer 2007, ch. 8,
from memory; the relative signs below are those of this solver's convention, P > 0
near the origin and P' + kappa P / r = (E + 2mc^2 - V + S) Q / c, fixed by demanding
that the two gauges agree. Measured: ~1e-11 for E1 at Z = 1..92 and E2 at Z = 92; at
small k the velocity form loses digits to cancellation: E2 at Z = 1 2e-9, lines between
fine-structure partners (omega ~ 1e-6 hartree) up to 4e-7. Independently of this
form, the tests sum |<l| alpha.eps e^(-i k.r) |u>|^2 over photon directions and
polarizations with closed-form Dirac-Coulomb states: the E1 rate of 2p1/2 and the
E1 + M2 rate of 2p3/2 -> 1s1/2 agree to 4e-14 at Z = 1, 50, 92)
-----------------------------------------------------------------------
With C = <kappa_a||C_J||kappa_b> and N = (2J+1)!! / k^J, electric (length gauge):

    Q_EJ = C N integral { j_J(kr) (P_a P_b + Q_a Q_b)
           + j_(J+1)(kr) [ -(kappa_a - kappa_b)/(J+1) (P_a Q_b + Q_a P_b) + (Q_a P_b - P_a Q_b) ] } dr

electric (velocity gauge):

    Q_EJ = C N integral { (kappa_a - kappa_b)/(J+1) [j_J'(kr) + j_J(kr)/(kr)] (P_a Q_b + Q_a P_b)
           + J j_J(kr)/(kr) (Q_a P_b - P_a Q_b) } dr

magnetic (C' = <-kappa_a||C_J||kappa_b>):

    Q_MJ = C' N (kappa_a + kappa_b)/(J+1) integral j_J(kr) (P_a Q_b + Q_a P_b) dr.

The long-wavelength limit replaces j_J(x) by x^J/(2J+1)!! and drops
j_(J+1): Q_E1 -> C integral r (P_a P_b + Q_a Q_b) dr.

Rates for every multipole (u upper, l lower, g = 2j + 1 or 2l + 1)
--------------------------------------------------------------
Line strengths are in atomic units in the Gaussian convention, where an
electric and a magnetic 2^J-pole moment both have the unit e a0^J: S of an EJ
or an MJ line is in e^2 a0^(2J) (:data:`LINE_STRENGTH_UNIT`). The Bohr magneton
is then mu_B = e hbar / (2 m_e c) = (alpha/2) e a0 (c = 1/alpha), so an M1
strength in mu_B^2 (as tables often give it) is S / (alpha/2)^2: the
2p3/2 - 2p1/2 line of hydrogen has S = (4/3)(alpha/2)^2 e^2 a0^2 = 4/3 mu_B^2
(|<2p3/2||L + 2S||2p1/2>|^2 = 4/3), up to (Z alpha)^2 corrections. (Gaussian
atomic units for magnetic moments: common practice; the convention of the
multipole form above.)

    S = |Q|^2,  A_ul = 2 (2J+1)(J+1) / (J [(2J+1)!!]^2) k^(2J+1) S / g_u,
    f_lu = m c^3 g_u A_ul / (2 omega^2 g_l)   (absorption oscillator strength),

which for E1 is A = 4 omega^3 S / (3 c^3 g_u), f = 2 m omega S / (3 g_l). The
lifetime of a level is 1 / sum of its A; the branching ratio of a line is
A / sum A. A in 1/s uses the atomic unit of time from scipy.constants.

Reduced mass and the two-body dipole: when a nucleus mass M is given the levels
are solved with mu = m M / (m + M) and omega is the true transition energy. The
dipole is that of both charges about their centre of mass: with r = r_particle -
r_nucleus, r_particle - R_cm = M r / (M + m) and r_nucleus - R_cm = -m r / (M + m),
so a particle of charge q e and a nucleus of charge Z e have

    d = q e M r / (M + m) - Z e m r / (M + m) = e r (q M - Z m) / (M + m)

(common practice, derived here). For q = -1 this is the single-particle -e r
times (M + Z m)/(M + m), 1 for hydrogen (Z = 1) and 1.055 for muonic calcium, whose
2p -> 1s rate it raises by 11 %. The E1 amplitude (length and velocity form, and
the Dirac E1 with its full k) is multiplied by F = (q M - Z m)/(M + m), S, A and f
by F^2; the factor is that of the long-wavelength limit (with retardation the two
charges' phases differ by k r m/(M + m), which is left out). Without a nucleus mass
F = q, the particle's own dipole (F^2 = 1 for every charged particle named here).
q is the particle's charge (a particle given by its mass alone is taken as q = -1,
and said so in the result's message); Z is read from the potential: -Z_inf / q,
Z_inf the Coulomb tail V ~ -Z_inf / r of its vector terms (the electric part;
a scalar Coulomb tail carries no charge). A potential without a Coulomb tail
(a Woods-Saxon or Yukawa well alone) does not tell the nucleus's charge: Z = 0 is
then used (a neutral core, F = q M / (M + m)) and the message says so. A neutral
particle (q = 0) is refused: its lines come from the nucleus's recoil alone,
whose charge the potential does not carry. M1, E2 and M2 lines keep the
particle's own moments in the relative coordinate; their recoil terms are not
applied (the E2 charge factor would be (q M^2 + Z m^2)/(M + m)^2 in the
long-wavelength limit; the magnetic ones need the nucleus's own currents and
moments, which the solve does not know), and the message says so when a nucleus
mass is given. m in f is the orbiting particle's own mass, the usual definition
(with it, f of hydrogen exceeds the infinite-mass value by m/mu).
"""
from __future__ import annotations

import logging
import math
from dataclasses import dataclass, field, replace
from fractions import Fraction
from functools import lru_cache
from typing import Sequence

import scipy.constants as sc
from scipy.special import spherical_jn

from ._checks import MAX_N, check_count, check_int
from .observables import _integral, matrix_element
from .units import C_AU, hartree_to, mass_mev_to_au
from .wavefunctions import radial_derivative_state

__all__ = ["Line", "LevelDecay", "TransitionResult", "transitions", "line", "wigner3j", "reduced_c", "LINE_STRENGTH_UNIT"]

log = logging.getLogger(__name__)

AU_TIME_S: float = sc.physical_constants["atomic unit of time"][0]
NM_HARTREE: float = sc.h * sc.c / sc.physical_constants["Hartree energy"][0] * 1e9
"""Wavelength in nm of a photon of 1 hartree (scipy.constants)."""

MULTIPOLES = ("E1", "M1", "E2", "M2")


# --- angular factors ---------------------------------------------------------------------

def wigner3j(j1, j2, j3, m1, m2, m3) -> float:
    """Wigner 3j symbol (Racah's formula), arguments integers or half-integers."""
    J = [Fraction(x).limit_denominator(2) for x in (j1, j2, j3, m1, m2, m3)]
    j1, j2, j3, m1, m2, m3 = J
    if m1 + m2 + m3 != 0 or any(abs(m) > j for m, j in ((m1, j1), (m2, j2), (m3, j3))):
        return 0.0
    if j3 < abs(j1 - j2) or j3 > j1 + j2:
        return 0.0
    f = math.factorial

    def I(x):  # noqa: E743 - an integer from a Fraction
        if x.denominator != 1:
            raise ValueError("wigner3j: arguments do not add to integers")
        return int(x)

    pre = (f(I(j1 + j2 - j3)) * f(I(j1 - j2 + j3)) * f(I(-j1 + j2 + j3)) / f(I(j1 + j2 + j3 + 1))
           * f(I(j1 + m1)) * f(I(j1 - m1)) * f(I(j2 + m2)) * f(I(j2 - m2)) * f(I(j3 + m3)) * f(I(j3 - m3)))
    total = 0.0
    for t in range(0, I(j1 + j2 + j3) + 2):
        args = [t, I(j3 - j2 + t + m1), I(j3 - j1 + t - m2), I(j1 + j2 - j3 - t), I(j1 - t - m1),
                I(j2 - t + m2)]
        if min(args) < 0:
            continue
        total += (-1) ** t / math.prod(f(a) for a in args)
    return float((-1) ** I(j1 - j2 - m3) * math.sqrt(pre) * total)


def _l_of(kappa: int) -> int:
    return kappa if kappa > 0 else -kappa - 1


@lru_cache(maxsize=4096)
def reduced_c(kappa_a: int, kappa_b: int, J: int) -> float:
    """<kappa_a||C_J||kappa_b> = (-1)^(j_a + 1/2) sqrt((2j_a+1)(2j_b+1)) (j_a J j_b; -1/2 0 1/2)
    when l_a + l_b + J is even, else 0."""
    if (_l_of(kappa_a) + _l_of(kappa_b) + J) % 2:
        return 0.0
    ja, jb = abs(kappa_a) - 0.5, abs(kappa_b) - 0.5
    sign = -1.0 if round(ja + 0.5) % 2 else 1.0
    return sign * math.sqrt((2 * ja + 1) * (2 * jb + 1)) * wigner3j(ja, J, jb, -0.5, 0, 0.5)


def _double_factorial(n: int) -> int:
    return math.prod(range(n, 0, -2)) if n > 0 else 1


def _rate_factor(J: int) -> float:
    return 2 * (2 * J + 1) * (J + 1) / (J * _double_factorial(2 * J + 1) ** 2)


# --- results ---------------------------------------------------------------------------
LINE_STRENGTH_UNIT = ("atomic units: e^2 bohr^(2J) for EJ and for MJ (Gaussian convention, magnetic 2^J-pole "
                      "moments in e bohr^J: mu_B = e hbar/(2 m_e c) = (alpha/2) e bohr; an M1 strength in mu_B^2 "
                      "is S/(alpha/2)^2)")
"""Unit of the line strengths S (the ``units`` of :meth:`TransitionResult.to_dict`)."""


@dataclass(frozen=True, slots=True, repr=False)
class Line:
    """One radiative line upper -> lower.

    ``energy`` in ``energy_unit``; ``line_strength`` in atomic units,
    e^2 a0^(2J) for EJ and for MJ (Gaussian convention: mu_B = (alpha/2) e a0,
    so an M1 strength in mu_B^2 is S / (alpha/2)^2; :data:`LINE_STRENGTH_UNIT`);
    ``einstein_a`` in 1/s; ``oscillator_strength`` the
    absorption f of lower -> upper. ``line_strength_velocity`` holds the line
    strength in the second gauge (velocity form) and ``long_wavelength_a`` the
    rate in the long-wavelength limit (Dirac), both for comparison;
    ``line_strength_error`` the error of S: for the spinless equations that of
    the radial integral R (:func:`boundkit.observables.matrix_element`: its
    change one resolution lower, never below the rounding of the integral of
    |r P_a P_b|) carried to S = l_> R^2; for Dirac the change of S when both
    levels are taken one resolution lower (inf when a level has no previous
    state). ``energy_error`` (in ``energy_unit``) is the sum of the two levels' estimates: omega is their
    difference, so between close levels (fine-structure partners) it carries far more relative error than
    either. ``einstein_a_error`` (1/s) and ``oscillator_strength_error`` add it to S's:
    dA/A = dS/S + (1 + domega/omega)^(2J+1) - 1, df/f = dS/S + (1 + domega/omega)^(2J-1) - 1
    (A ~ omega^(2J+1) S, f ~ omega^(2J-1) S).
    """

    upper: str
    lower: str
    multipole: str
    energy: float
    energy_unit: str
    energy_hartree: float
    wavelength_nm: float
    line_strength: float
    oscillator_strength: float
    einstein_a: float
    line_strength_velocity: float | None = None
    long_wavelength_a: float | None = None
    line_strength_error: float = math.inf
    energy_error: float = math.inf
    einstein_a_error: float = math.inf
    oscillator_strength_error: float = math.inf

    @property
    def gauge_agreement(self) -> float | None:
        """|S_length / S_velocity - 1|, or None."""
        if self.line_strength_velocity is None or self.line_strength == 0:
            return None
        return abs(self.line_strength_velocity / self.line_strength - 1.0)

    def to_dict(self) -> dict:
        return {"upper": self.upper, "lower": self.lower, "multipole": self.multipole,
                "energy": self.energy, "wavelength_nm": self.wavelength_nm,
                "line_strength": self.line_strength, "oscillator_strength": self.oscillator_strength,
                "einstein_a": self.einstein_a, "line_strength_velocity": self.line_strength_velocity,
                "gauge_agreement": self.gauge_agreement, "long_wavelength_a": self.long_wavelength_a,
                "line_strength_error": self.line_strength_error, "energy_error": self.energy_error,
                "einstein_a_error": self.einstein_a_error, "oscillator_strength_error": self.oscillator_strength_error}

    def __repr__(self) -> str:
        return (f"Line({self.upper} -> {self.lower} {self.multipole}: {self.energy:.10g} {self.energy_unit}, "
                f"{self.wavelength_nm:.8g} nm, S = {self.line_strength:.8g}, f = {self.oscillator_strength:.6g}, "
                f"A = {self.einstein_a:.6g} /s)")


@dataclass(frozen=True, slots=True, repr=False)
class LevelDecay:
    """Radiative lifetime (s) of a level and the branching ratio of each line down from it."""

    label: str
    energy: float
    lifetime_s: float
    total_rate: float
    branching: dict = field(default_factory=dict)
    lower_levels: int = 0
    """Number of bound levels below it with n <= max_n, degenerate ones left out (those its lifetime could
    decay to)."""

    def to_dict(self) -> dict:
        """JSON-ready; a stable level's lifetime is None (null: JSON has no infinity)."""
        return {"label": self.label, "energy": self.energy,
                "lifetime_s": self.lifetime_s if math.isfinite(self.lifetime_s) else None,
                "total_rate_per_s": self.total_rate, "branching": dict(self.branching),
                "lower_levels": self.lower_levels}

    def __repr__(self) -> str:
        return f"LevelDecay({self.label}: lifetime {self.lifetime_s:.6g} s)"


@dataclass(frozen=True, repr=False)
class TransitionResult:
    """Outcome of :func:`transitions`: lines, level lifetimes, and what produced them."""

    lines: tuple[Line, ...]
    levels: tuple[LevelDecay, ...]
    equation: str
    potential: str
    energy_unit: str
    settings: dict = field(default_factory=dict)
    constants: dict = field(default_factory=dict)
    status: str = "ok"
    message: str = ""

    def line(self, upper: str, lower: str, multipole: str = "E1") -> Line:
        for ln in self.lines:
            if (ln.upper, ln.lower, ln.multipole) == (upper, lower, multipole):
                return ln
        raise KeyError(f"no {multipole} line {upper} -> {lower}")

    def level(self, label: str) -> LevelDecay:
        for lv in self.levels:
            if lv.label == label:
                return lv
        raise KeyError(f"no level {label!r}")

    def to_dict(self) -> dict:
        return {"equation": self.equation, "potential": self.potential,
                "units": {"energy": self.energy_unit, "wavelength": "nm", "einstein_a": "1/s",
                          "line_strength": LINE_STRENGTH_UNIT,
                          "lifetime": "s (null: no line down, stable here)"},
                "status": self.status, "message": self.message, "constants": self.constants,
                "settings": self.settings, "lines": [ln.to_dict() for ln in self.lines],
                "levels": [lv.to_dict() for lv in self.levels]}

    def __repr__(self) -> str:
        head = f"TransitionResult({self.equation}, {self.potential}: {len(self.lines)} lines; {self.message})"
        return "\n".join([head] + [f"  {ln!r}" for ln in self.lines])


# --- radial integrals ------------------------------------------------------------------

def _spinless_e1(a, b, mass: float, omega: float) -> tuple[float, float, float]:
    """(R_length, R_velocity, error of R_length) of the E1 radial integral between spinless levels
    a (upper), b; the error is that of :func:`boundkit.observables.matrix_element`."""
    q = matrix_element(a, b, lambda r: r)
    RL = q.value
    hi, lo = (a, b) if a.l > b.l else (b, a)
    d = radial_derivative_state(hi.state)
    # integral P_lo (P_hi' + c P_hi / r) dr with c = l_hi (l_lo = l_hi - 1)
    G = (_integral(lo.state, d, lambda r: 1.0 / r, "plain")
         + hi.l * _integral(lo.state, hi.state, lambda r: 1.0 / r, "plain"))
    return RL, G / (mass * omega), q.error


def _dirac_q(a, b, J: int, k: float, kind: str) -> float:
    """Reduced multipole amplitude Q_J (kind 'E-length', 'E-velocity', 'M', or 'E-long')."""
    ka, kb = a.kappa, b.kappa
    norm = _double_factorial(2 * J + 1) / k**J
    sa, sb = a.state, b.state

    def I(f, which):  # noqa: E743
        return _integral(sa, sb, f, which)

    jJ = lambda r: spherical_jn(J, k * r)  # noqa: E731
    if kind == "M":
        C = reduced_c(-ka, kb, J)
        if C == 0:
            return 0.0
        return C * norm * (ka + kb) / (J + 1) * 2 * I(jJ, "PQ")
    C = reduced_c(ka, kb, J)
    if C == 0:
        return 0.0
    if kind == "E-long":
        return C * I(lambda r: r**J, "density")
    jJ1 = lambda r: spherical_jn(J + 1, k * r)  # noqa: E731
    if kind == "E-length":
        return C * norm * (I(jJ, "density") - (ka - kb) / (J + 1) * 2 * I(jJ1, "PQ") + I(jJ1, "QP-PQ"))
    # velocity gauge
    def dj(r):
        x = k * r
        return spherical_jn(J, x, derivative=True) + spherical_jn(J, x) / x
    return C * norm * ((ka - kb) / (J + 1) * 2 * I(dj, "PQ")
                       + J * I(lambda r: spherical_jn(J, k * r) / (k * r), "QP-PQ"))


def _previous(level):
    """The level as it was one resolution lower (None when not recorded)."""
    if level.previous_state is None:
        return None
    return replace(level, state=level.previous_state, previous_state=None)


def line(upper, lower, multipole: str = "E1", *, equation: str, mass: float = 1.0,
         particle_mass: float | None = None, energy_unit: str = "eV", dipole_factor: float = 1.0) -> Line | None:
    """The line upper -> lower of one multipole, or None when the selection rules forbid it.

    ``mass`` is the mass used in the solve, ``particle_mass`` the particle's
    own mass (for f), both in electron masses. ``dipole_factor`` F multiplies
    the E1 amplitude (S, A and f by F^2; other multipoles are left as they
    are): the two-body dipole (q M - Z m)/(M + m) in units of e that
    :func:`transitions` passes (1: the dipole of a unit charge in the
    relative coordinate). See the module docstring.
    """
    omega = upper.energy - lower.energy
    if not omega > 0:
        raise ValueError(f"upper: {upper.label} does not lie above {lower.label}; swap them")
    m_f = mass if particle_mass is None else particle_mass
    k = omega / C_AU
    SV = long_a = None
    if equation in ("schrodinger", "klein-gordon"):
        if multipole != "E1":
            raise ValueError(f"multipole: only E1 is computed for the {equation} equation")
        if abs(upper.l - lower.l) != 1:
            return None
        RL, RV, dR = _spinless_e1(upper, lower, mass, omega)
        lmax = max(upper.l, lower.l)
        S, SV = lmax * RL**2, lmax * RV**2
        # the error of R (previous resolution, and the rounding floor taken on the integral of |r P P|,
        # not on R: the dipole integral of two distant levels cancels to 1 % of it) carried to R^2
        S_err = lmax * (2 * abs(RL) + dR) * dR
        gu, gl = 2 * upper.l + 1, 2 * lower.l + 1
        J = 1
    elif equation == "dirac":
        J = int(multipole[1])
        kind = "E-length" if multipole[0] == "E" else "M"
        q = _dirac_q(upper, lower, J, k, kind)
        if q == 0.0:
            return None
        S = q * q
        lower_res = _previous(upper), _previous(lower)
        S_prev = None if None in lower_res else _dirac_q(*lower_res, J, k, kind) ** 2
        S_err = math.inf if S_prev is None else max(abs(S - S_prev), 2e-14 * S)
        if kind == "E-length":
            SV = _dirac_q(upper, lower, J, k, "E-velocity") ** 2
            long_a = _rate_factor(J) * k ** (2 * J + 1) * _dirac_q(upper, lower, J, k, "E-long") ** 2
        else:
            long_a = _rate_factor(J) * k ** (2 * J + 1) * _dirac_q(upper, lower, J, k * 1e-6, "M") ** 2
        gu, gl = 2 * abs(upper.kappa), 2 * abs(lower.kappa)
        long_a = long_a / gu / AU_TIME_S
    else:
        raise ValueError(f"equation: {equation!r} is not one of schrodinger, klein-gordon, dirac")
    if multipole == "E1" and dipole_factor != 1.0:
        F2 = float(dipole_factor) ** 2
        S, S_err = S * F2, S_err * F2
        SV = None if SV is None else SV * F2
        long_a = None if long_a is None else long_a * F2
    A_au = _rate_factor(J) * k ** (2 * J + 1) * S / gu
    f = m_f * C_AU**3 * gu * A_au / (2 * omega**2 * gl)
    # omega is the difference of two levels: its error is theirs, carried to A ~ omega^(2J+1) S, f ~ omega^(2J-1) S
    d_omega = upper.error_estimate + lower.error_estimate
    r_omega, r_S = d_omega / omega, S_err / S
    return Line(upper=upper.label, lower=lower.label, multipole=multipole,
                energy=float(hartree_to(omega, energy_unit)), energy_unit=energy_unit, energy_hartree=omega,
                wavelength_nm=NM_HARTREE / omega, line_strength=S, oscillator_strength=f,
                einstein_a=A_au / AU_TIME_S, line_strength_velocity=SV, long_wavelength_a=long_a,
                line_strength_error=S_err, energy_error=float(hartree_to(d_omega, energy_unit)),
                einstein_a_error=A_au / AU_TIME_S * (r_S + (1 + r_omega) ** (2 * J + 1) - 1),
                oscillator_strength_error=f * (r_S + (1 + r_omega) ** (2 * J - 1) - 1))


def _dipole_factor(potential, params, particle, mass_mev, nucleus_mass_mev, scalar, units) -> tuple[float, str]:
    """(F, note): the E1 charge factor F = (q M - Z m)/(M + m) of the module docstring (q without a nucleus
    mass) and what the result's message says about it ('' when there is nothing to say)."""
    from .potentials import make_potential
    from .units import get_particle

    part = get_particle(particle, mass_mev)
    notes = []
    q = part.charge
    if q is None:
        q = -1.0
        notes.append(f"particle {part.name} given by its mass: its charge is taken as -e for the E1 dipole")
    if q == 0:
        raise ValueError(f"particle: {part.name} has no charge, so its E1 lines come from the nucleus's recoil alone "
                         "(dipole -Z e m r/(M + m)), whose charge Z the potential does not carry; use a charged "
                         "particle")
    if nucleus_mass_mev is None:
        return float(q), "; ".join(notes)
    if potential is None:
        potential = "coulomb" if scalar is None else ()
        if scalar is None:
            params = {"Z": 1.0, **(params or {})}
    z_tail = make_potential(potential, params, scalar=scalar, units=units).vector_tail_charge
    Z = -z_tail / q
    M, m = float(nucleus_mass_mev), part.mass_mev
    F = (q * M - Z * m) / (M + m)
    if z_tail == 0:
        notes.append("the potential has no Coulomb tail, so the nucleus's charge is not known: Z = 0 is used in "
                     f"the E1 dipole (q M - Z m)/(M + m) = {F:.12g} e")
    else:
        notes.append(f"E1 dipole of particle and nucleus about their centre of mass: (q M - Z m)/(M + m) = {F:.12g} e "
                     f"(q = {q:g}, Z = {Z:.12g}; for q = -1 the particle's -e r times (M + Z m)/(M + m))")
    notes.append("M1, E2 and M2 lines without the nucleus's share (recoil terms not applied)")
    return F, "; ".join(notes)


def _channels(equation: str, max_n: int):
    """(l or kappa keyword, number of levels with n <= max_n) for every channel."""
    out = []
    for l in range(max_n):
        count = max_n - l
        if equation == "dirac":
            out.append(({"kappa": -(l + 1)}, count))
            if l > 0:
                out.append(({"kappa": l}, count))
        else:
            out.append(({"l": l}, count))
    return out


def transitions(equation: str = "schrodinger", potential=None, params: dict | None = None, *,
                max_n: int = 2, levels: Sequence[str] | None = None, multipoles: Sequence[str] = ("E1",),
                energy_unit: str = "eV", tol: float = 1e-14, method: str = "auto",
                particle: str | None = None, mass_mev: float | None = None,
                nucleus_mass_mev: float | None = None, scalar=None, units: str = "atomic",
                labels: str = "atomic", max_n_limit: int = MAX_N) -> TransitionResult:
    """All radiative lines among the bound levels with n <= ``max_n``.

    Parameters
    ----------
    equation, potential, params, particle, mass_mev, nucleus_mass_mev, scalar, units, method, tol
        As for :func:`boundkit.solve` (every channel with l < max_n is solved).
    max_n : int
        Highest principal quantum number included (>= 2), at most ``max_n_limit``.
    levels : sequence of str, optional
        Keep only these level labels (e.g. ``["1s", "2p"]``).
    multipoles : sequence of {'E1', 'M1', 'E2', 'M2'}
        Multipoles computed (M1, E2 and M2 for the Dirac equation only; M2 is
        0.7 % of the 2p3/2 -> 1s1/2 rate at Z = 92).
    energy_unit : str
        Unit of line energies (any energy unit, e.g. eV, cm^-1, MHz).
    labels : {'atomic', 'nuclear', 'quarkonium'}
        Labelling convention of the levels, of ``levels`` and of the result
        (:mod:`boundkit.states`); ``max_n`` stays the atomic n = nodes + l + 1.
    max_n_limit : int
        Limit on ``max_n`` (default 20, :data:`boundkit._checks.MAX_N`): every
        channel l < max_n is solved and the lines grow as max_n^4.

    Returns
    -------
    TransitionResult
        Lines (upper, lower, multipole, energy, wavelength, S, f, A) and, per
        level, lifetime and branching ratios.

    Notes
    -----
    See the module docstring for the radial integrals and the rate formulas.
    With ``nucleus_mass_mev`` M the E1 amplitude is the two-body dipole about the
    centre of mass, e r (q M - Z m)/(M + m) (q the particle's charge, m its mass,
    r = r_particle - r_nucleus): for q = -1 the particle's own dipole times
    (M + Z m)/(M + m), which raises the muonic calcium 2p -> 1s rate by 11 %.
    Z = -Z_inf / q from the Coulomb tail V ~ -Z_inf / r of the vector terms; a
    potential without one gives Z = 0 (said in ``message``). M1, E2 and M2 lines
    carry no recoil terms (said in ``message``). ``settings["dipole_factor"]``
    holds the factor (q without a nucleus mass). A neutral particle is refused.
    """
    from .solver import solve  # the public entry point
    from .units import energy_unit as canonical_energy_unit
    max_n = check_int("max_n", max_n, minimum=1)
    if max_n < 2:
        raise ValueError("max_n: needs at least 2 (no lines among n = 1 levels alone)")
    check_count("max_n", max_n, check_int("max_n_limit", max_n_limit, minimum=2), "max_n_limit= (API)", "",
                keyword="max_n_limit")
    unit = canonical_energy_unit(energy_unit)
    key = str(equation).lower().replace("_", "-")
    key = {"kg": "klein-gordon"}.get(key, key)
    mults = [str(m).upper() for m in multipoles]
    for m in mults:
        if m not in MULTIPOLES:
            raise ValueError(f"multipoles: {m!r} is not one of {', '.join(MULTIPOLES)}")
        if m != "E1" and key != "dirac":
            raise ValueError(f"multipoles: {m} is computed for the Dirac equation only; use E1")
    dipole, dipole_note = _dipole_factor(potential, params, particle, mass_mev, nucleus_mass_mev, scalar, units)
    found, messages, settings, potential_name = [], [], {}, str("coulomb" if potential is None else potential)
    status = "ok"
    for channel, count in _channels(key, max_n):
        res = solve(key, potential, params, levels=count, tol=tol, method=method, particle=particle,
                    mass_mev=mass_mev, nucleus_mass_mev=nucleus_mass_mev, scalar=scalar, units=units,
                    **channel).with_labels(labels)
        settings = {k: v for k, v in res.settings.items() if k not in ("l", "kappa", "j", "levels")}
        potential_name = res.potential
        if res.status == "partial":
            status = "partial"
            messages.append(f"{channel}: {res.message}")
        found.extend(lv for lv in res.levels if lv.n <= max_n)
    kept = {lv.label for lv in found}
    if levels is not None:
        wanted = [str(x) for x in levels]
        missing = [x for x in wanted if x not in kept]
        if missing:
            raise ValueError(f"levels: {', '.join(missing)} not found; bound levels with n <= {max_n}: "
                             f"{', '.join(sorted(kept))}")
        kept = set(wanted)
    mass = float(settings.get("mass_atomic_units", 1.0))
    pm = settings.get("particle_mass_MeV")
    particle_mass = mass if pm is None else mass_mev_to_au(float(pm))
    found.sort(key=lambda lv: lv.energy)
    # every line down from a kept level (its lifetime counts them all), reported among kept levels only
    down_from: dict[str, list] = {}
    below: dict[str, int] = {}
    for i, up in enumerate(found):
        if up.label not in kept:
            continue
        down_from[up.label] = []
        below[up.label] = 0
        for low in found[:i]:
            # degenerate within the error estimates (2s and 2p of hydrogen): no line
            if up.energy - low.energy <= 10 * (up.error_estimate + low.error_estimate) + 1e-14 * abs(up.energy):
                continue
            below[up.label] += 1
            for m in mults:
                ln = line(up, low, m, equation=key, mass=mass, particle_mass=particle_mass, energy_unit=unit,
                          dipole_factor=dipole)
                if ln is not None:
                    down_from[up.label].append(ln)
    lines = [ln for down in down_from.values() for ln in down if ln.lower in kept]
    decays = []
    for lv in found:
        if lv.label not in kept:
            continue
        down = down_from[lv.label]
        total = sum(ln.einstein_a for ln in down)
        decays.append(LevelDecay(lv.label, float(hartree_to(lv.energy, unit)),
                                 math.inf if total == 0 else 1.0 / total, total,
                                 {f"{ln.lower} {ln.multipole}": ln.einstein_a / total for ln in down}
                                 if total > 0 else {}, lower_levels=below[lv.label]))
    message = f"{len(lines)} line(s) among {len(kept)} level(s) with n <= {max_n}"
    if levels is not None:
        message += (f"; lifetimes count the decays to every lower level with n <= {max_n} (of {len(found)} bound "
                    "there), listed or not")
    if dipole_note:
        message += "; " + dipole_note
    if messages:
        message += "; " + "; ".join(messages)
    from .units import constants_record
    return TransitionResult(tuple(lines), tuple(decays), key, potential_name, unit,
                            settings={**settings, "max_n": max_n, "multipoles": mults, "tol": tol, "labels": labels,
                                      "dipole_factor": dipole},
                            constants=constants_record(), status=status, message=message)
