"""Outward integration of one channel above threshold, and matching to the tail.

The factorized form of :mod:`boundkit.equations.base`, written as a first-order
system with w = p (u' + kappa u / r):

    u' = -kappa u / r + w / p,        w' = kappa w / r + (q - E) u.

With t = ln r, u = r^gamma U and w = r^(gamma - 1) W it reads

    dU/dt = -(kappa + gamma) U + W / p,
    dW/dt = (kappa - gamma + 1) W + r^2 (q - E) U,

started at r_0 = 1e-7 x (the smallest length of the problem) from the
Frobenius leading term U = 1, W = p (gamma + kappa) and its first correction
(:func:`frobenius_start`). The irregular part that a start leaves fades
relative to the regular one only as r^-(gamma - gamma_irregular), which is
r^-(2 gamma - 1) for Klein-Gordon and r^-2 gamma for Dirac: near a critical
point charge it hardly fades at all, so the start must be right to second
order, and the error estimate's check run starts 10 times further out. A hard core of radius a starts instead at r = a with u = 0,
u' > 0. The system is integrated by scipy's DOP853 piece by piece between the
potential's breakpoints (jumps of V or of p), so no step straddles a jump.

Matching: at a radius R beyond the range of the short-range part
V_sr = V + S + Z_t/r, u = alpha F^ + beta G^ with the tail solutions of
:mod:`.reference`, so u ~ C sin(Theta + theta + delta), tan delta = beta/alpha.

Branch: the Pruefer angle phi(r) = atan2(k u, u') starts in
(0, pi/2) at the origin (u'/u = gamma/r) and passes each multiple of pi
upwards exactly at a node of u, so phi(R) = pi (nodes of u in (0, R)) +
[atan2(k u, u') mod pi]. The same holds for the free regular solution. The
absolute phase shift is the delta with phi_u(R) = phi of cos(delta) F^ +
sin(delta) G^ continued from delta = 0, where it equals phi_F(R); that angle
grows monotonically with delta by pi per period. delta is then continuous in
E and tends to 0 at high energy for a Schrodinger short-range potential. With
a Coulomb tail the node count of F comes from integrating the pure point-Coulomb
equation the same way (the closed-form F fixes the angle mod pi).
"""
from __future__ import annotations

import logging
import math
from dataclasses import dataclass, replace

import numpy as np
from scipy.integrate import solve_ivp
from scipy.special import spherical_jn

from .._rounding import beside
from ..equations import RadialEquation, Sample
from ..potentials import Potential
from ..units import C_AU
from ..equations.schrodinger import inverse_square_order
from .reference import Reference, free_zero_count, inverse_square_shift, reference_at, wave_number

log = logging.getLogger(__name__)

__all__ = ["Channel", "prepare", "matching_radius", "tail_bound", "integrate", "Match", "match"]

_START = 1e-7      # inner start in units of the smallest length of the problem
_RANGE_GRID = 4000
_RTOL_FLOOR = 3e-14   # DOP853 refuses rtol below 100 x machine epsilon
_CHUNK = 2.0          # rescaling interval in ln r
_FAR = 1e4            # the matching radius is sought up to this many natural lengths (or breakpoints)
_SMALL = 0.1          # delta is read from the Wronskian with F when the integral of |Omega'| is below this
                      # fraction of the amplitude (|delta| < 0.1 and no cancellation in that integral)


@dataclass(frozen=True)
class Channel:
    """One channel prepared for continuum integration (atomic units)."""

    eq: RadialEquation
    pot: Potential
    gamma: float
    kappa: int
    tail_charge: float
    hard_core: float | None
    breakpoints: tuple[float, ...]
    length: float
    r_grid: np.ndarray          # radii of the range profile
    v_grid: np.ndarray          # 2 m |V_sr| there (1/bohr^2)
    reference: "Channel | None" = None   # the pure tail as a channel (its node count fixes the branch)
    tail_b: float = 0.0         # B of an inverse-square tail V ~ -Z_t/r + B/r^2 (hartree bohr^2)

    @property
    def long_tail(self) -> bool:
        """A Coulomb or inverse-square tail: matched to Coulomb functions (mpmath), not free waves."""
        return self.tail_charge != 0.0 or self.tail_b != 0.0

    @property
    def free_wronskian(self) -> bool:
        """Whether the integration can carry the Wronskian with the free regular solution (a free tail,
        kappa = -(l + 1) or l, so that p (F' + kappa F / r) is a Riccati-Bessel function too)."""
        return not self.long_tail and self.kappa in (-(self.eq.l + 1), self.eq.l)

    def sample(self, r) -> Sample:
        r = np.atleast_1d(np.asarray(r, dtype=float))
        W = self.pot.spin_orbit(r)
        return Sample(r, np.asarray(self.pot.V(r), dtype=float), np.asarray(self.pot.S(r), dtype=float),
                      None if W is None else np.asarray(W, dtype=float))


def _natural_length(mass: float, pot: Potential, hard_core: float | None, b_tail: float = 0.0) -> float:
    """First r with 2 m r^2 |V + S - B/r^2| >= 1, else where that strength peaks (when it is flat towards the
    origin, the last r where it is half its peak), else the hard core or 1.

    An inverse-square tail B/r^2 (matched exactly) has no length of its own: its strength 2 m B is the same at
    every r. Left in, the strength of -0.3 r^2/(1 + r^4) rose to its plateau at 1e4 bohr and the matching
    radius asked for 3e6 nodes at E = 1 hartree (a LimitError); taken out, what is left, 0.3/(r^2 (1 + r^4)),
    is flat from the origin to r = 1, where it falls. A pure B/r^2 keeps the smallest radius of the grid."""
    r = np.logspace(-12, 7, 1901)
    with np.errstate(all="ignore"):
        v = np.asarray(pot.V(r), dtype=float) + np.asarray(pot.S(r), dtype=float) - b_tail / r**2
    strength = 2 * mass * r**2 * np.abs(np.nan_to_num(v))
    big = strength >= 1.0
    if np.any(big):
        return float(r[np.argmax(big)])
    if np.max(strength) > 1e-12:
        peak = float(np.max(strength))
        if strength[0] >= 0.5 * peak:         # flat towards the origin: where it falls
            return float(r[np.nonzero(strength >= 0.5 * peak)[0][-1]])
        return float(r[np.argmax(strength)])
    if b_tail:
        return float(r[0])
    return float(hard_core) if hard_core else 1.0


def prepare(eq: RadialEquation, pot: Potential, hard_core: float | None = None,
            with_reference: bool = True) -> Channel:
    """Check a channel for continuum work and build its range profile.

    Raises
    ------
    ValueError
        Confining potential, a scalar Coulomb tail in a relativistic
        equation, a point charge too strong for the equation, a 1/r^2 tail too
        attractive for l (complex order), a bad hard core.
    """
    if pot.confining:
        raise ValueError("potential: it grows without bound far out (confining), so there is no continuum; "
                         "use a potential that tends to 0 or to a Coulomb tail")
    # the ends as the terms declare them (a user's callable or expression: read by its probe, ProbedTerm)
    b0, b_tail, zt = pot.origin_inverse_square, pot.tail_inverse_square, pot.tail_charge
    if eq.name != "schrodinger":
        if any(t.tail_charge != 0.0 for t in pot.scalar):
            raise ValueError("potential: a scalar term with a Coulomb tail has no continuum reference here; "
                             "give Coulomb tails as vector terms")
        if b0 != 0.0 or b_tail != 0.0:
            raise ValueError(f"potential: it has a 1/r^2 part (B = {b_tail or b0:.6g} hartree bohr^2 "
                             f"{'far out' if b_tail else 'at the origin'}), supported in the Schrodinger equation "
                             "only; use equation='schrodinger' or a potential without it")
    elif b_tail and inverse_square_order(eq.l, eq.mass, b_tail) is None:
        raise ValueError(f"potential: its 1/r^2 tail far out, B = {b_tail:g} hartree bohr^2, is too attractive for "
                         f"l = {eq.l}: with l(l+1) + 2 m B < -1/4 the tail's Coulomb functions have a complex order, "
                         f"which is not supported here; use B > {-(eq.l + 0.5) ** 2 / (2 * eq.mass):.6g} or a tail "
                         "that falls faster than 1/r^2")
    if hard_core is not None:        # checked positive by the caller
        if eq.name != "schrodinger":
            eq._refuse_nonrelativistic_terms(pot)
        gamma = float(eq.l + 1)
    else:
        gamma = float(eq.gamma(pot))        # with the 1/r^2 part at the origin, and its fall-to-centre refusal
    L = _natural_length(eq.mass, pot, hard_core, b_tail)
    bps = tuple(b for b in pot.breakpoints if b > 0 and (hard_core is None or b > hard_core))
    far = max([L, *bps, hard_core or 0.0])
    r = np.logspace(math.log10(min(L, far) * 1e-3), math.log10(far * _FAR), _RANGE_GRID)
    with np.errstate(all="ignore"):
        vsr = np.asarray(pot.V(r), dtype=float) + np.asarray(pot.S(r), dtype=float) + zt / r - b_tail / r**2
    v = 2 * eq.mass * np.abs(np.nan_to_num(vsr, nan=np.inf))
    reference = None
    if (zt != 0.0 or b_tail != 0.0) and with_reference:
        from ..potentials.builtin import Coulomb
        from ..potentials.library import Kratzer

        tail = Kratzer(A=zt, B=b_tail) if b_tail else Coulomb(Z=zt)
        try:
            reference = prepare(eq, Potential((tail,)), None, with_reference=False)
        except ValueError as exc:
            raise ValueError(f"potential: its Coulomb tail (charge {zt:g}) has no regular point-Coulomb "
                             f"reference in this channel ({exc})") from None
    return Channel(eq, pot, gamma, int(eq.kappa_eff), float(zt), hard_core, bps, L, r, v, reference, b_tail)


def _tail_profile(ch: Channel, E: float, relative: bool = False) -> tuple[np.ndarray, np.ndarray]:
    """(r, B(r)) on the range profile: B(r) = integral_r^inf 2 m_E |V_sr| min(k s^2, 1/k) ds, the
    first-order bound on the phase change from the short-range part beyond r (see
    :func:`matching_radius`). ``relative``: the bound of partial wave l instead (a free tail,
    :func:`_free_weight`), which falls like (k r)^(2l+2) towards the origin, so that B(r) / B(0)
    bounds the relative change of a small delta_l."""
    eq = ch.eq
    k = float(wave_number(eq.name, E, eq.mass)) if E > 0 else 0.0
    r, v = ch.r_grid, ch.v_grid
    if eq.name != "schrodinger":
        v = v * (1 + E / (eq.mass * C_AU**2))
    if relative and k > 0:
        weight = _free_weight(eq.l, k * r) / k
    else:
        weight = np.minimum(k * r**2, 1 / k) if k > 0 else r**2
    f = v * weight * r                      # integrand in ln r
    dlnr = math.log(r[1] / r[0])
    seg = 0.5 * (f[1:] + f[:-1]) * dlnr
    return r, np.concatenate((np.cumsum(seg[::-1])[::-1], [0.0]))


def _free_weight(l: int, x: np.ndarray) -> np.ndarray:
    """A bound on (x j_l(x))^2: min(x^(2l+2) / ((2l+1)!!)^2, (1 + 0.2 l^(1/3))^2).

    |j_l(x)| <= x^l / (2l+1)!! is |J_nu(x)| <= (x/2)^nu / Gamma(nu + 1) (DLMF 10.14.4) with nu = l + 1/2;
    the maximum of |x j_l(x)| grows slowly with l (measured here with scipy on x in (0, 400]: 1 at l = 0,
    1.06 at l = 1, 1.44 at l = 20, 1.78 at l = 79), below 1 + 0.2 l^(1/3) at each of them. For l = 0 this is
    min(x^2, 1), the weight the s-wave bound always had."""
    with np.errstate(under="ignore"):
        return np.exp(2 * _ln_envelope(l, x))


def _ln_envelope(l: int, x) -> np.ndarray:
    """ln of the bound on |x j_l(x)| of :func:`_free_weight` (no underflow: x > 0)."""
    with np.errstate(divide="ignore"):
        return np.minimum((l + 1) * np.log(x) - _ln_double_factorial(l), math.log(1 + 0.2 * l ** (1 / 3)))


def _ln_double_factorial(l: int) -> float:
    """ln (2l+1)!! = ln (2l+1)! - l ln 2 - ln l!."""
    return math.lgamma(2 * l + 2) - l * math.log(2) - math.lgamma(l + 1)


def tail_bound(ch: Channel, E: float, R: float, relative: bool = False) -> float:
    """First-order bound (rad) on the phase change from the short-range part beyond R (bohr): the
    profile's B at the first profile radius not above R (so never below the bound at R). ``relative``:
    with the weight of partial wave l (:func:`_tail_profile`), a bound on a small delta_l's change."""
    r, tail = _tail_profile(ch, E, relative)
    i = int(np.searchsorted(r, R, side="right")) - 1
    return float(tail[max(i, 0)])


def matching_radius(ch: Channel, E: float, tol: float, relative: bool = False) -> tuple[float, bool]:
    """(R, reached): a radius beyond which the short-range part changes delta by < tol/100; with
    ``relative`` (a free tail, E > 0) also by less than tol/100 of the first-order bound on delta_l
    itself (when that is below 1), so that a small delta_l keeps its relative accuracy.

    Notes
    -----
    The phase change from V_sr beyond R is bounded (first order) by
    integral_R^inf 2 m_E |V_sr| min(k r^2, 1/k) dr, with k r^2 -> r^2 at
    E = 0 (a change of the scattering length) and m_E = m (1 + E/(m c^2)) in
    the relativistic equations. ``reached`` is False when V_sr never falls
    that low on the profile (a long-range tail other than Coulomb).
    """
    r, tail = _tail_profile(ch, E)
    ok = np.nonzero(~(tail < 1e-2 * tol))[0]
    reached = bool(ok.size == 0 or ok[-1] < len(r) - 2)
    R = float(r[ok[-1] + 1]) if ok.size and reached else (float(r[-1]) if ok.size else float(r[0]))
    if relative and E > 0 and ch.free_wronskian:
        # a delta_l of 1e-200 needs the cut below 1e-202, not below 1e-10: read the bound of partial wave l
        # relative to its own total (the first-order size of delta_l); the far end of the profile at most
        _, tail_l = _tail_profile(ch, E, True)
        far = np.nonzero(tail_l > 1e-2 * tol * min(1.0, float(tail_l[0])))[0]
        if far.size:
            R = max(R, float(r[min(far[-1] + 1, len(r) - 1)]))
    floor = max([*ch.breakpoints, ch.hard_core or 0.0, 0.0])
    R = max(R, floor * 1.0001, 1.5 * (ch.hard_core or 0.0), 4 * ch.length)
    return R, reached


def _log_riccati(n: int, x: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """(sign, ln |x j_n(x)|) elementwise, without underflow at small x (x > 0, n >= 0).

    For x^2 <= 2n + 3 the power series x j_n(x) = x^(n+1) / (2n+1)!! sum_m (-x^2/2)^m (2n+1)!! /
    (m! (2n+2m+1)!!) (DLMF 10.53.1), whose terms fall at least 2-fold from the first, so that it
    cancels by at most a factor e; scipy's j_n beyond (x^(n+1) / (2n+1)!! underflows for n = 50 at
    x = 1e-7, where the phase of a hard sphere is still representable)."""
    x = np.asarray(x, dtype=float)
    small = x * x <= 2 * n + 3
    sign, out = np.ones_like(x), np.empty_like(x)
    if np.any(small):
        xs = x[small]
        h = -0.5 * xs * xs
        term, total = np.ones_like(xs), np.ones_like(xs)
        for m in range(1, 40):
            term = term * h / (m * (2 * n + 2 * m + 1))
            total = total + term
            if np.all(np.abs(term) < 1e-17 * np.abs(total)):
                break
        out[small] = (n + 1) * np.log(xs) - _ln_double_factorial(n) + np.log(total)   # total in (1/e, 1]
    if not np.all(small):
        xl = x[~small]
        v = xl * spherical_jn(n, xl)
        sign[~small] = np.sign(v)
        with np.errstate(divide="ignore"):
            out[~small] = np.log(np.abs(v))
    return sign, out


def _free_pair(l: int, kappa: int, x: np.ndarray) -> tuple[tuple, tuple]:
    """(sign, ln |.|) of F = x j_l(x) and of (F' + kappa F / r) / k, the free regular solution and its
    kappa-derivative in x: -x j_(l+1)(x) for kappa = -(l + 1), x j_(l-1)(x) for kappa = l (from
    x j_l' = l j_l - x j_(l+1) = x j_(l-1) - (l + 1) j_l, DLMF 10.51.2), so neither is a difference."""
    F = _log_riccati(l, x)
    if kappa == -(l + 1):
        s, g = _log_riccati(l + 1, x)
        return F, (-s, g)
    return F, _log_riccati(l - 1, x)


def _start(ch: Channel, k: float) -> float:
    if ch.hard_core:
        return float(ch.hard_core)
    scales = [ch.length, *ch.breakpoints[:1]] + ([1.0 / k] if k > 0 else [])
    return _START * min(scales)


def _coefficients(ch: Channel, Es: np.ndarray, r: float) -> tuple[np.ndarray, np.ndarray]:
    """(a21, a22) of the system for (U, X = W / p) at radius r, per energy:
    dU/dt = -(kappa + gamma) U + X, dX/dt = a21 U + a22 X with a21 = r^2 (q - E) / p and
    a22 = kappa - gamma + 1 - d ln p / dt (five-point differences in t, step 0.01: p varies on the
    scale r only where V does, and exactly p is constant for Schrodinger and Klein-Gordon)."""
    eq = ch.eq
    h = 0.01
    samples = [ch.sample(r * math.exp(h * i)) for i in (-2, -1, 0, 1, 2)]
    lnp = np.log(np.abs([np.broadcast_to(eq.p(Es, smp), Es.shape) for smp in samples]))
    dlnp = (lnp[0] - 8 * lnp[1] + 8 * lnp[3] - lnp[4]) / (12 * h)
    qE = np.broadcast_to(eq.q(Es, samples[2]), Es.shape) - Es
    p = np.broadcast_to(eq.p(Es, samples[2]), Es.shape)
    return r * r * qE / p, (ch.kappa - ch.gamma + 1) - dlnp


def frobenius_start(ch: Channel, Es: np.ndarray, r0: float) -> tuple[np.ndarray, np.ndarray]:
    """(U, W) at the start r0: the Frobenius leading term and its first correction.

    Notes
    -----
    With X = W / p the system reads dY/dt = A(r) Y, Y = (U, X), and the leading term
    Y0 = (1, kappa + gamma) solves A(0) Y0 = 0 (the indicial equation that fixes gamma). Where
    A(r) = A(0) + r^m A1 + ..., the next term r^m Y1 solves (m - A(0)) Y1 = A1 Y0, so the start is
    Y0 + (m - A(r0))^(-1) A(r0) Y0 up to order r0^(2m). The defect A(r) Y0 = (0, d(r)) is measured at
    r0 and r0 / e, which gives m (1 for a Coulomb charge at the origin, 2 for a potential finite there).
    The leading term alone leaves an irregular part of relative size ~ r0^m, which fades only as
    (r0 / r)^(gamma - gamma_irregular): 2 gamma - 1 for Klein-Gordon and 2 gamma for Dirac, both -> 0
    near the critical charge, where a start from r^gamma alone left delta 2e-8 off (Klein-Gordon,
    Z = 68) and 3e-9 off (Dirac kappa = -1, Z = 135) with estimates 1e-5 of that. The correction is
    skipped (leading term only) where the measured defect is not a clean power (zero, changing sign,
    or m outside [0.1, 8]).
    """
    kg = ch.kappa + ch.gamma
    a21, a22 = _coefficients(ch, Es, r0)
    d = a21 + a22 * kg
    b21, b22 = _coefficients(ch, Es, r0 / math.e)
    d_in = b21 + b22 * kg
    with np.errstate(all="ignore"):
        m = np.log(d / d_in)
    U, X = np.ones_like(Es), np.full_like(Es, kg)
    ok = np.isfinite(m) & (m >= 0.1) & (m <= 8.0) & np.isfinite(d)
    if np.any(ok):
        # (m I - A) (dU, dX) = (0, d), A = [[-kg, 1], [a21, a22]]
        det = (m + kg) * (m - a22) - a21
        dU = np.where(ok, d / det, 0.0)
        dX = np.where(ok, (m + kg) * d / det, 0.0)
        good = ok & np.isfinite(dU) & np.isfinite(dX) & (np.abs(dU) < 0.5)
        U = np.where(good, U + dU, U)
        X = np.where(good, X + dX, X)
    p0 = np.broadcast_to(ch.eq.p(Es, ch.sample(r0)), Es.shape)
    return U, X * p0


def _log_sum(m: np.ndarray, e: np.ndarray, add: np.ndarray, e_add: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """m exp(e) + add exp(e_add) as (mantissa, exponent), elementwise, without overflow or underflow of
    the exponentials (the larger exponent is kept)."""
    top = np.where(m == 0, e_add, np.where(add == 0, e, np.maximum(e, e_add)))
    with np.errstate(under="ignore"):
        return m * np.exp(np.minimum(e - top, 0.0)) + add * np.exp(np.minimum(e_add - top, 0.0)), top


@dataclass(frozen=True)
class Raw:
    """The solution at one radius: u and du/dr (true scale / exp(log_scale), with the r^gamma factor
    dropped), nodes in (start, R), p(E) there."""

    R: float
    u: float
    du: float
    nodes: int
    p: float
    integral: float | None = None   # integral of u^2 dr from the start (true scale), when asked
    log_scale: float = 0.0          # u, du are on the true scale divided by exp(log_scale)
    beta: float | None = None       # coefficient of the irregular free solution, from the Wronskian (on the
    beta_mass: float | None = None  # scale of u), and the same integral of its integrand's |.|, when asked


def loosened(rtol: float, factor: float) -> float:
    """The integration tolerance of an error estimate's check run: ``factor`` times the tolerance
    :func:`integrate` actually uses (never below its floor). Loosening a tolerance below the floor
    changed nothing: both runs sat on the floor and agreed to the last bits, and the estimate fell to
    rounding while the phase was 1e-12 to 2e-11 off."""
    return max(float(rtol), _RTOL_FLOOR) * factor


def integrate(ch: Channel, E, radii, rtol: float, dense: bool = False, integral: bool = False,
              start_scale: float = 1.0, wronskian: bool = False):
    """Integrate outward at one energy or a batch of energies sharing the steps.

    Parameters
    ----------
    E : float or array
        Energies (hartree, >= 0).
    radii : sequence of float, or one sequence per energy
        Radii (bohr) where the solution is recorded.
    integral : bool
        Also accumulate the integral of u^2 dr (true scale).
    start_scale : float
        Multiplies the start radius (an error estimate's check run starts further out, so that the
        start's own error shows in the difference).
    wronskian : bool
        Also accumulate, for a free tail (``ch.free_wronskian``), the Wronskian of u with the free
        regular solution F, Omega = F w - u w_F, whose derivative vanishes beyond the range:
        Omega' = w w_F (1/p_F - 1/p) + F u (q - q_F) (p_F, q_F those of V = S = 0). It gives the
        coefficient beta of the irregular free solution in u = alpha F^ + beta G^ as -Omega / (k p_F),
        accumulated where the potential acts and never read off as a difference of two nearly equal
        terms at R (``Raw.beta``, ``Raw.beta_mass``: the same integral of |Omega'|).

    Returns
    -------
    (raws, evaluate)
        ``raws[i]`` lists a :class:`Raw` per radius of energy i (ascending;
        a plain list for a scalar E). With ``dense``, ``evaluate(r)`` gives
        (u, w) on the true scale of the start values, columns per energy.
    """
    scalar = np.ndim(E) == 0
    Es = np.atleast_1d(np.asarray(E, dtype=float))
    n = Es.size
    if scalar or np.ndim(radii[0]) == 0:
        radii = [list(radii)] * n
    wanted = [sorted(float(x) for x in rr) for rr in radii]
    eq, kap, gam = ch.eq, ch.kappa, ch.gamma
    k_max = float(np.max(wave_number(eq.name, Es, eq.mass)))
    r0 = _start(ch, k_max) * (1.0 if ch.hard_core else start_scale)
    rmax = max(rr[-1] for rr in wanted)
    edges = {r0, *[b for b in ch.breakpoints if r0 < b < rmax], *[x for rr in wanted for x in rr]}
    # extra edges every factor e^2 in r: the state is rescaled to norm 1 at each edge, so the
    # absolute tolerance stays far below it however strongly u grows or decays
    edges |= {math.exp(t) for t in np.arange(math.log(r0) + _CHUNK, math.log(rmax), _CHUNK)}
    edges = sorted(edges)
    if ch.hard_core:
        U, Wt = np.zeros(n), np.ones(n)
    else:
        U, Wt = frobenius_start(ch, Es, r0)
    y = np.concatenate((U, Wt, np.zeros(n))) if integral else np.concatenate((U, Wt))
    wronskian = wronskian and ch.free_wronskian
    if wronskian:
        ks = np.asarray(wave_number(eq.name, Es, eq.mass), dtype=float)
        free = Sample(np.ones(1), np.zeros(1), np.zeros(1), None)
        pF = np.broadcast_to(eq.p(Es, free), (n,)).astype(float)
        qF = np.broadcast_to(eq.q(Es, free), (n,)).astype(float)
        # Omega at the start, F w - u w_F = r0^(gamma-1) F [W - r0 U p_F k (DF/k) / F]; kept as m exp(e)
        (sF, lF), (sD, lD) = _free_pair(eq.l, kap, ks * r0)
        om_e = (gam - 1) * math.log(r0) + lF
        om_m = sF * (Wt - r0 * U * pF * ks * sD * np.exp(lD - lF))
        mass_m, mass_e = np.abs(om_m), om_e.copy()
        w0 = y.size
        y = np.concatenate((y, np.zeros(2 * n)))
    piece = {}                   # the present piece's ln of the Wronskian's scale, per energy

    inside = [0.0, math.inf]     # the present piece's radii, just inside its ends (_rounding.beside; per piece)

    def rhs(t, yy):
        # each piece sees the potential of its own side of a jump at its ends: exp(log(b)) can land on
        # either side of b, and V(b) itself belongs to one side only (a well written r <= R was 2e-11
        # off at tol 1e-12, 15 times the r < R one); a callable written with r < a and r > a is 0 at a
        # itself, and its jump search may report the float next to a: hence 64 ulp, not 1
        r = min(max(math.exp(t), inside[0]), inside[1])
        smp = ch.sample(r)
        p = eq.p(Es, smp)
        qE = eq.q(Es, smp) - Es
        u, w = yy[:n], yy[n:2 * n]
        du = -(kap + gam) * u + w / p
        dw = (kap - gam + 1) * w + r * r * qE * u
        parts = [du, dw]
        if integral:
            parts.append(r ** (2 * gam + 1) * u * u)
        if wronskian:
            # dOmega/dt on the scale exp(log_scale) b^gamma nu(b) of the piece [a, b] (nu: F's envelope at b)
            (s1, l1), (s2, l2) = _free_pair(eq.l, kap, ks * r)
            fr = (r / piece["b"]) ** gam
            dom = fr * (w * ks * s2 * np.exp(l2 - piece["nu"]) * (1 - pF / p)
                        + r * u * (qE + Es - qF) * s1 * np.exp(l1 - piece["nu"]))
            parts += [dom, np.abs(dom)]
        return np.concatenate(parts)

    rtol = max(float(rtol), _RTOL_FLOOR)
    out = [[] for _ in range(n)]
    pieces = []
    nodes, last = np.zeros(n, dtype=int), np.zeros(n)
    log_scale, integ = np.zeros(n), np.zeros(n)
    for a, b in zip(edges[:-1], edges[1:]):
        lo, hi = beside(a)[1], beside(b)[0]
        inside[:] = (lo, hi) if lo < hi else (0.5 * (a + b),) * 2
        atol = 1e-30
        if wronskian:
            piece["b"] = b
            piece["nu"] = _ln_envelope(eq.l, ks * b)
            # the Wronskian rides on the steps of u and w (its integrand is their product with F): under the
            # step control, its zeros (an oscillating integrand) asked for steps of 1e-30 and a Yukawa s wave
            # took minutes
            atol = np.full(y.size, 1e-30)
            atol[w0:] = 1e300
        sol = solve_ivp(rhs, (math.log(a), math.log(b)), y, method="DOP853", rtol=rtol, atol=atol,
                        dense_output=dense)
        if not sol.success:
            raise RuntimeError(f"integration failed between r = {a:.4g} and {b:.4g} bohr: {sol.message}")
        for i in range(n):
            sg = np.sign(sol.y[i])
            sg = sg[sg != 0]
            if sg.size:
                nodes[i] += int(np.count_nonzero(sg[1:] != sg[:-1])) + int(last[i] != 0 and sg[0] != last[i])
                last[i] = sg[-1]
        y = sol.y[:, -1].copy()
        if dense:
            pieces.append((a, b, sol.sol, log_scale.copy()))
        if integral:
            integ += y[2 * n:3 * n] * np.exp(2 * log_scale)
            y[2 * n:3 * n] = 0.0
        if wronskian:
            scale = log_scale + gam * math.log(b) + piece["nu"]
            om_m, om_e = _log_sum(om_m, om_e, y[w0:w0 + n], scale)
            mass_m, mass_e = _log_sum(mass_m, mass_e, y[w0 + n:], scale)
            y[w0:] = 0.0
        p_b = np.broadcast_to(eq.p(Es, ch.sample(b)), (n,))
        for i in range(n):
            if b in wanted[i]:
                du = (y[n + i] / p_b[i] - kap * y[i]) / b
                extra = {}
                if wronskian:     # beta = -Omega / (k p_F), on the scale of u here: b^gamma exp(log_scale)
                    to_u = math.exp(min(om_e[i] - gam * math.log(b) - log_scale[i], 700.0)) / (ks[i] * pF[i])
                    to_m = math.exp(min(mass_e[i] - gam * math.log(b) - log_scale[i], 700.0)) / (ks[i] * pF[i])
                    extra = {"beta": float(-om_m[i] * to_u), "beta_mass": float(mass_m[i] * to_m)}
                out[i].append(Raw(b, float(y[i]), float(du), int(nodes[i]), float(p_b[i]),
                                  float(integ[i]) if integral else None, float(log_scale[i]), **extra))
        norm = np.hypot(y[:n], y[n:2 * n])
        norm[norm == 0] = 1.0
        y[:n] /= norm
        y[n:2 * n] /= norm
        log_scale += np.log(norm)

    evaluate = None
    if dense:
        def _evaluate(r):
            r = np.asarray(r, dtype=float)
            Uv = np.full((n, r.size), np.nan)
            Wv = np.full((n, r.size), np.nan)
            for a, b, f, ls in pieces:
                sel = (r >= a) & (r <= b)
                if np.any(sel):
                    vals = f(np.log(r[sel]))
                    Uv[:, sel] = vals[:n] * np.exp(ls)[:, None]
                    Wv[:, sel] = vals[n:2 * n] * np.exp(ls)[:, None]
            u, w = r**gam * Uv, r ** (gam - 1) * Wv
            return (u[0], w[0]) if scalar else (u, w)
        evaluate = _evaluate
    return (out[0] if scalar else out), evaluate


@dataclass(frozen=True)
class Match:
    """Phase shift read at one radius: delta (absolute branch, or in (-pi/2, pi/2] for a Coulomb
    tail read without its reference solution), the signed amplitude C of
    u ~ C sin(Theta + theta + delta) on the scale of ``Raw``, the reference and the branch
    residual (distance of the branch count from an integer; nan when not computed)."""

    delta: float
    amplitude: float
    ref: Reference
    residual: float
    scale: float = 1.0    # the size an integration error is relative to (rad per unit rtol): 1, or for a small
                          # delta read from the Wronskian the integral of |Omega'| in delta's units (~ |delta|)


def _turn(k, F0, F1, G0, G1, delta: float, lib) -> float:
    """Pruefer angle of cos(delta) F + sin(delta) G at R minus that of F, delta in (-pi/2, pi/2]: the
    angle from the vector (F', k F) to (cos(delta) F' + sin(delta) G', k (cos(delta) F + sin(delta) G)),
    in [0, pi) for delta >= 0 and (-pi, 0] for delta < 0, 0 at delta = 0.

    Taken as atan2 of the two vectors' cross and dot products, so that it is small with delta: the
    difference of the two angles reduced mod pi put a delta of 1e-16 at pi - 1e-15 when one angle
    was rounded the other way, and the phase came back as -pi or +pi. ``lib`` is math, or mpmath for
    values outside the double range (a Coulomb tail).
    """
    c, s = lib.cos(delta), lib.sin(delta)
    du, u = c * F1 + s * G1, c * F0 + s * G0
    return float(lib.atan2(k * (F1 * u - F0 * du), F1 * du + k * k * F0 * u))


def _wrap(x: float) -> float:
    """x into (-pi/2, pi/2]."""
    x = math.fmod(x, math.pi)
    if x > math.pi / 2:
        x -= math.pi
    elif x <= -math.pi / 2:
        x += math.pi
    return x


def match(ch: Channel, E: float, raw: Raw, ref_raw: Raw | None = None) -> Match:
    """Phase shift from the solution at radius ``raw.R``.

    For a Coulomb tail, ``ref_raw`` (the pure-Coulomb regular solution integrated to the same
    radius) fixes the integer part of delta; without it delta is left in (-pi/2, pi/2].
    """
    ref = reference_at(ch.eq, E, raw.R, ch.tail_charge, raw.p, ch.tail_b)
    (F0, F1), (G0, G1) = ref.F, ref.G
    k, pi = ref.k, math.pi
    scale = 1.0
    if ch.long_tail:       # in mpmath: F and G may be far outside the double range
        import mpmath  # lazy: only a Coulomb tail needs it
        with mpmath.workdps(30):
            det = F0 * G1 - G0 * F1
            alpha, beta = (raw.u * G1 - G0 * raw.du) / det, (F0 * raw.du - raw.u * F1) / det
            delta = _wrap(float(mpmath.atan2(beta, alpha)))
            amp = alpha / mpmath.cos(delta) if abs(math.cos(delta)) >= abs(math.sin(delta)) else beta / mpmath.sin(delta)
            if ref_raw is None:
                return Match(delta, float(amp), ref, float("nan"))
            # Pruefer angle of F^ at R: the numerical reference's node count, plus the closed form's
            # angle (equal mod pi up to rounding; the small difference is added, not wrapped)
            phi_num = math.atan2(k * ref_raw.u, ref_raw.du) % pi
            phi_F = float(mpmath.atan2(k * F0, F1)) % pi
            theta_F = ref_raw.nodes * pi + phi_num + math.remainder(phi_F - phi_num, pi)
            inc = _turn(k, F0, F1, G0, G1, delta, mpmath)
    else:
        alpha, beta = np.linalg.solve([[F0, G0], [F1, G1]], [raw.u, raw.du])
        delta = _wrap(math.atan2(beta, alpha))
        if raw.beta is not None and raw.beta_mass < _SMALL * math.hypot(alpha, beta):
            # a small delta: beta from the Wronskian with F, accumulated where the potential acts; read from
            # u(R) and u'(R) it is the difference of two values that agree to ~ delta / (k R)^(2l+1), and a hard
            # sphere's l = 20 phase at 1e-8 hartree came out 1e11 times too large (its sign was wrong at l = 50)
            beta = raw.beta
            delta = math.atan(beta / alpha)
            scale = raw.beta_mass / abs(alpha)
        amp = alpha / math.cos(delta) if abs(math.cos(delta)) >= abs(math.sin(delta)) else beta / math.sin(delta)
        theta_F = free_zero_count(ch.eq.l, k * raw.R) * pi + math.atan2(k * F0, F1) % pi
        inc = _turn(k, F0, F1, G0, G1, delta, math)
    theta_u = raw.nodes * pi + math.atan2(k * raw.u, raw.du) % pi
    m = (theta_u - theta_F - inc) / pi
    mi = round(m)
    # C sin(x + delta) = (-1)^mi C sin(x + delta + mi pi): the amplitude found for the folded delta
    # changes sign with each pi added (the state came out as minus sin(... + delta) for odd mi)
    amp, delta = float(-amp if mi % 2 else amp), delta + mi * pi
    if ch.tail_b:
        # the tail's B/r^2 phase belongs to delta: delta is relative to the Coulomb phase sigma_l (or to free
        # waves), as for a Coulomb tail alone, and the reference phase given is sigma_l
        shift = inverse_square_shift(ch.eq, E, ch.tail_charge, ch.tail_b)
        ref = replace(ref, theta=math.remainder(ref.theta - shift, 2 * pi) if ch.tail_charge else 0.0)
        delta += shift
    return Match(delta, amp, ref, float(abs(m - mi)), scale)
