"""Library of model potential terms: finite nuclei, screened and short-range
wells, confining terms, molecular wells and the Uehling vacuum polarization.

All terms follow the :class:`~boundkit.potentials.base.Term` contract: r in
bohr, V in hartree, parameters checked on construction. Nuclear sizes are
given in fm and converted with the Bohr radius of :mod:`scipy.constants`
(:data:`boundkit.units.FM_PER_BOHR`).

Two special functions are evaluated here without mpmath:

* the complete Fermi-Dirac integrals F_s(y) = -Li_s(-e^y) (integer s >= 1),
  used for the exact moments and the exact potential of the Fermi charge
  density, and
* the Uehling integral K(rho), by a trapezoidal rule in x = cosh u for
  rho = 2 r / lambda_e <= 8, a generalized Gauss-Laguerre rule above and the
  three-term small-rho expansion below rho = 1e-9.
"""
from __future__ import annotations

import math
from fractions import Fraction
from functools import lru_cache

import numpy as np
from scipy.special import expit, roots_genlaguerre, roots_legendre, zeta

from ..units import ALPHA, FM_PER_BOHR
from .base import Parameter, Term

__all__ = [
    "UniformSphere",
    "Fermi",
    "Yukawa",
    "ExpCosine",
    "Hulthen",
    "WoodsSaxon",
    "Linear",
    "Cornell",
    "Morse",
    "Kratzer",
    "Uehling",
    "LIBRARY",
]

_LN3 = math.log(3.0)


def _need_positive(term: Term, *names: str) -> None:
    for n in names:
        v = term.values[n]
        if not v > 0:
            raise ValueError(f"params[{n!r}]: the {term.name} term needs {n} > 0, got {term.quote(n)}")


def _need_nonnegative(term: Term, *names: str) -> None:
    for n in names:
        v = term.values[n]
        if v < 0:
            raise ValueError(f"params[{n!r}]: the {term.name} term needs {n} >= 0, got {term.quote(n)}")


# ---------------------------------------------------------------------------------------------
# Complete Fermi-Dirac integrals F_s(y) = -Li_s(-e^y), integer s >= 1
# ---------------------------------------------------------------------------------------------
_N_SERIES = 40   # terms of the series in e^y for y <= -1 (e^-41 / 41 ~ 1e-19)
_N_TAYLOR = 40   # terms of the Taylor series about y = 0 for |y| <= 1 (radius pi)


_BERNOULLI: list[Fraction] = [Fraction(1)]


def _bernoulli(n: int) -> Fraction:
    """Bernoulli number B_n (B_1 = -1/2) as an exact fraction, from
    sum_(k=0)^(m) C(m+1, k) B_k = 0 (scipy's floating-point table is off by
    up to ~1e-13 relative)."""
    B = _BERNOULLI
    for m in range(len(B), n + 1):
        B.append(-sum(math.comb(m + 1, k) * B[k] for k in range(m)) / (m + 1))
    return B[n]


def _eta(m: int) -> float:
    """Dirichlet eta function eta(m) = (1 - 2^(1-m)) zeta(m) at an integer m."""
    if m == 1:
        return math.log(2.0)
    if m >= 2:
        return float((1.0 - 2.0 ** (1 - m)) * zeta(m))
    n = -m  # zeta(-n) = (-1)^n B_(n+1) / (n+1), with B_1 = -1/2
    return float((1 - 2 ** (1 + n)) * (-1) ** n * _bernoulli(n + 1) / (n + 1))


@lru_cache(maxsize=64)
def _taylor_coefficients(orders: tuple[int, ...]) -> np.ndarray:
    """Coefficients eta(s-k)/k!, k = 0.._N_TAYLOR (rows, lowest power first), one column per order s
    (read-only)."""
    c = np.array([[_eta(s - k) / math.factorial(k) for s in orders] for k in range(_N_TAYLOR + 1)])
    c.flags.writeable = False
    return c


_SERIES_TIERS = ((41.0, 1), (4.0, 11), (0.0, _N_SERIES))   # (smallest -y, terms): e^(-y K) / (K+1)^s < 1e-17


def _powers(x: np.ndarray, n: int) -> np.ndarray:
    """x^1 .. x^n, one row per value (repeated products: n small, |x| < 1 where it matters)."""
    return np.vander(x, n + 1, increasing=True)[:, 1:]


@lru_cache(maxsize=64)
def _series_coefficients(orders: tuple[int, ...], terms: int) -> np.ndarray:
    """(-1)^(k+1) / k^s, k = 1 .. terms (rows), one column per order s (read-only)."""
    k = np.arange(1, terms + 1, dtype=float)[:, None]
    c = np.where(k % 2 == 1, 1.0, -1.0) / k ** np.array(orders, dtype=float)[None, :]
    c.flags.writeable = False
    return c


def _fd_series(orders: tuple[int, ...], y: np.ndarray) -> np.ndarray:
    """F_s(y) = sum_k (-1)^(k+1) e^(k y) / k^s for y <= -1, one column per order s (one row of powers
    of z = e^y per value, shared by the orders).

    The terms kept depend on how small z is: the first left out, z^K / (K+1)^s relative to the
    first, stays below 1e-17 with K = 1 for y <= -41, K = 11 for y <= -4 and K = _N_SERIES
    otherwise. Far outside a nucleus (y of -1e8 on an atomic mesh) one term is the whole series.
    A Fermi nucleus's solve spent 45 % of its time here when every value took 40 Horner steps
    (two array operations each, on a few values at a time) for each order."""
    z = np.exp(y)
    out = np.empty((z.size, len(orders)))
    rest = np.ones(z.shape, dtype=bool)
    for least, terms in _SERIES_TIERS:
        here = rest & (y <= -least)
        if np.any(here):
            zh = z[here]
            out[here] = zh[:, None] if terms == 1 else _powers(zh, terms) @ _series_coefficients(orders, terms)
            rest &= ~here
    return out


def fermi_dirac(s: int, y) -> np.ndarray:
    """Complete Fermi-Dirac integral F_s(y) = -Li_s(-e^y), vectorised, s >= 1 integer.

    Parameters
    ----------
    s : int
        Order (>= 1). F_s(y) = (1/Gamma(s)) int_0^inf t^(s-1) / (1 + e^(t-y)) dt.
    y : array_like
        Real argument.

    Notes
    -----
    Three branches, each accurate to a few ulps:

    * y < -1: the series sum_k (-1)^(k+1) e^(k y) / k^s (up to 40 terms, fewer where e^y is small);
    * |y| <= 1: the Taylor series sum_k eta(s-k) y^k / k! (dF_s/dy = F_(s-1),
      F_s(0) = eta(s); radius of convergence pi, 40 terms);
    * y > 1: the inversion formula of the polylogarithm,
      F_s(y) = y^s/s! + 2 sum_(k=1)^(s//2) eta(2k) y^(s-2k)/(s-2k)! - (-1)^s F_s(-y).
    """
    return fermi_dirac_orders((s,), y)[0]


def fermi_dirac_orders(orders, y) -> np.ndarray:
    """:func:`fermi_dirac` of several orders at the same arguments, one row per order (the powers of
    e^y and of y are shared)."""
    for s in orders:
        if int(s) != s or s < 1:
            raise ValueError(f"fermi_dirac: order s must be an integer >= 1, got {s!r}")
    orders = tuple(int(s) for s in orders)
    y = np.asarray(y, dtype=float)
    flat = y.reshape(-1)
    out = np.empty((flat.size, len(orders)))
    neg, pos = flat < -1.0, flat > 1.0
    mid = ~(neg | pos)
    if np.any(neg):
        out[neg] = _fd_series(orders, flat[neg])
    if np.any(mid):
        c = _taylor_coefficients(orders)
        out[mid] = c[0] + _powers(flat[mid], _N_TAYLOR) @ c[1:]
    if np.any(pos):
        yp = flat[pos]
        series = _fd_series(orders, -yp)
        for j, s in enumerate(orders):
            poly = yp**s / math.factorial(s)
            for k in range(1, s // 2 + 1):
                poly = poly + 2.0 * _eta(2 * k) * yp ** (s - 2 * k) / math.factorial(s - 2 * k)
            out[pos, j] = poly - (-1) ** s * series[:, j]
    return out.T.reshape((len(orders),) + y.shape)


# ---------------------------------------------------------------------------------------------
# Finite nuclei
# ---------------------------------------------------------------------------------------------
MAX_RMS_FM = FM_PER_BOHR
"""Largest rms radius of a finite-nucleus term: the Bohr radius, 52917.7 fm (the largest nuclei
have about 6 fm). A radius of 1e20 fm made a well 1e15 bohr wide whose solve never finished."""


def _need_nuclear_size(term: Term) -> None:
    rms = term.values["rms_fm"]
    if rms > MAX_RMS_FM:
        raise ValueError(
            f"params['rms_fm']: an rms radius of {rms:g} fm is larger than the Bohr radius ({MAX_RMS_FM:.6g} fm), "
            f"the limit of the {term.name} term: no nucleus is that large (the largest have about 6 fm); for a "
            "larger charged sphere write its potential as an expression (--expr, lengths in bohr)")


class UniformSphere(Term):
    """Potential of a uniformly charged sphere of charge Z.

    Parameters
    ----------
    Z : float
        Nuclear charge number.
    rms_fm : float
        Root-mean-square charge radius in fm (> 0).

    Notes
    -----
    The sphere radius is R = sqrt(5/3) r_rms (r_rms converted from fm to bohr
    with the CODATA Bohr radius). With r in bohr,

        V(r) = -Z (3 - r^2/R^2) / (2 R)   for r <= R,
        V(r) = -Z / r                      for r >= R.

    V and dV/dr are continuous at R; V is finite at the origin,
    V(0) = -3 Z / (2 R), and quadratic there (origin_charge 0). Far out it is
    the point Coulomb field, tail_charge Z.
    """

    name = "uniform-sphere"
    parameters = (
        Parameter("Z", None, "e", "nuclear charge number"),
        Parameter("rms_fm", None, "fm", "rms charge radius"),
    )
    formula = "V = -Z(3 - r^2/R^2)/(2R) (r < R), -Z/r (r > R); R = sqrt(5/3) r_rms"
    source = "electrostatics of a uniformly charged sphere (textbook)"

    def _validate(self) -> None:
        if not self.values["rms_fm"] > 0:
            raise ValueError(
                f"params['rms_fm']: the uniform-sphere term needs an rms radius > 0 fm, "
                f"got {self.values['rms_fm']:g}"
            )
        _need_nuclear_size(self)
        self.radius = math.sqrt(5.0 / 3.0) * self.values["rms_fm"] / FM_PER_BOHR
        """Sphere radius R in bohr."""

    def _evaluate(self, r):
        r = np.asarray(r, dtype=float)
        Z, R = self.values["Z"], self.radius
        inside = r < R
        out = np.empty_like(r)
        ri = r[inside]
        out[inside] = -Z * (3.0 - (ri / R) ** 2) / (2.0 * R)
        out[~inside] = -Z / r[~inside]
        return out

    @property
    def tail_charge(self) -> float:
        return self.values["Z"]

    @property
    def breakpoints(self) -> tuple[float, ...]:
        return (self.radius,)   # V'' jumps at the surface


class Fermi(Term):
    """Potential of the two-parameter Fermi charge density.

    Parameters
    ----------
    Z : float
        Nuclear charge number.
    rms_fm : float
        Root-mean-square charge radius in fm.
    t_fm : float, default 2.3
        Skin thickness (10%-90% fall of the density) in fm.

    Notes
    -----
    rho(r) = rho0 / (1 + exp((r - c)/a)), a = t / (4 ln 3), normalised so that
    int 4 pi r^2 rho dr = Z. With F_s(y) = -Li_s(-e^y) the moments are exact:

        int_0^inf r^n / (1 + e^((r-c)/a)) dr = n! a^(n+1) F_(n+1)(c/a),
        <r^2> = 12 a^2 F_5(c/a) / F_3(c/a),

    and the half-density radius c >= 0 is the root of <r^2>^(1/2) = r_rms
    (brentq). The rms radius of the shape is smallest at c = 0,
    a sqrt(12 eta(5)/eta(3)) ~ 3.6 a; a smaller r_rms is rejected.

    The potential V(r) = -4 pi [ (1/r) int_0^r rho r'^2 dr' + int_r^inf rho r' dr' ]
    is evaluated from the closed antiderivatives (phi_k = -F_k((c - r)/a))

        int r^n/(1+e^((r-c)/a)) dr = sum_(k=0)^n a^(k+1) n!/(n-k)! r^(n-k) phi_(k+1)(r),

    except for r <= 4a, where the enclosed charge is integrated by a 24-point
    Gauss-Legendre rule on [0, r] (this avoids the cancellation of the closed
    form at small r). Both pieces are accurate to ~1e-15 relative.

    Ends: V is finite and flat at the origin, V(0) = -4 pi rho0 a^2 F_2(c/a)
    (origin_charge 0); far out V = -Z/r up to terms ~ exp(-(r-c)/a)
    (tail_charge Z).

    Breakpoints: none for a usual skin (t = 2.3 fm gives a/c > 0.07). V'' follows the density, which
    falls over a few a at c; for a < 0.05 c (a skin under about 1.5 fm on a lead-sized nucleus) the
    layout's sampling does not see that fall, and the levels stalled at estimates of 1e-9 (electron)
    to 3e-7 (muon). Then c and graded radii around it are declared, as for a sharp Woods-Saxon edge.
    """

    name = "fermi"
    parameters = (
        Parameter("Z", None, "e", "nuclear charge number"),
        Parameter("rms_fm", None, "fm", "rms charge radius"),
        Parameter("t_fm", 2.3, "fm", "skin thickness (10%-90%)"),
    )
    formula = "rho = rho0/(1 + exp((r-c)/a)), a = t/(4 ln 3), c from the rms radius"
    source = ("two-parameter Fermi charge distribution (Hahn, Ravenhall & Hofstadter, "
              "Phys. Rev. 101, 1131 (1956)); potential from the exact Fermi-Dirac moments")

    _GL_NODES = 24
    _SPLIT = 4.0  # r <= _SPLIT * a: enclosed charge by Gauss-Legendre on [0, r]
    _SHARP = 0.05  # a < _SHARP c: the surface gets graded element ends (breakpoints)

    def _validate(self) -> None:
        rms, t = self.values["rms_fm"], self.values["t_fm"]
        if not rms > 0:
            raise ValueError(f"params['rms_fm']: the fermi term needs an rms radius > 0 fm, got {rms:g}")
        if not t > 0:
            raise ValueError(f"params['t_fm']: the fermi term needs a skin thickness t_fm > 0 fm, got {t:g}")
        _need_nuclear_size(self)
        a_fm = t / (4.0 * _LN3)
        rms_min = self.rms_of(0.0, a_fm)
        if rms < rms_min:
            raise ValueError(
                f"params['rms_fm']: an rms radius of {rms:g} fm is too small for a Fermi shape with "
                f"t_fm = {t:g} fm; its smallest rms radius (half-density radius c = 0) is "
                f"{rms_min:.6g} fm. Use a smaller t_fm or the uniform-sphere term"
            )
        if rms == rms_min:
            c_fm = 0.0
        else:
            hi = math.sqrt(5.0 / 3.0) * rms + a_fm
            while self.rms_of(hi, a_fm) < rms:
                hi *= 2.0
            from scipy.optimize import brentq  # lazy: scipy.optimize costs ~0.2 s to import
            c_fm = brentq(lambda c: self.rms_of(c, a_fm) - rms, 0.0, hi, xtol=1e-15 * rms, rtol=1e-15,
                          maxiter=200)
        self.a_fm, self.c_fm = a_fm, c_fm
        self.a = a_fm / FM_PER_BOHR
        """Diffuseness a in bohr."""
        self.c = c_fm / FM_PER_BOHR
        """Half-density radius c in bohr."""
        y0 = self.c / self.a
        volume = 4.0 * math.pi * 2.0 * self.a**3 * float(fermi_dirac(3, y0))
        self.rho0 = self.values["Z"] / volume
        """Central density parameter in e/bohr^3."""
        x, w = roots_legendre(self._GL_NODES)
        self._gl_x = 0.5 * (x + 1.0)
        self._gl_w = 0.5 * w * self._gl_x**2

    @property
    def breakpoints(self) -> tuple[float, ...]:
        """c and the graded radii around it when the surface is sharp (a < _SHARP c; see Notes); else none."""
        from .switches import graded_edge

        return graded_edge(self.c, self.a) if self.a < self._SHARP * self.c else ()

    @staticmethod
    def rms_of(c: float, a: float) -> float:
        """Rms radius of the Fermi shape with half-density radius c and diffuseness a (same units)."""
        f3, f5 = fermi_dirac_orders((3, 5), c / a)
        return a * math.sqrt(12.0 * float(f5) / float(f3))

    def density(self, r):
        """Charge density rho(r) in e/bohr^3 (normalised to Z)."""
        r = np.asarray(r, dtype=float)
        return self.rho0 * expit((self.c - r) / self.a)

    def _antiderivatives(self, r):
        """A_1(r), A_2(r): antiderivatives of r^n/(1+e^((r-c)/a)) that vanish at infinity."""
        a = self.a
        y = (self.c - r) / a
        p1, p2, p3 = -fermi_dirac_orders((1, 2, 3), y)
        A1 = a * r * p1 + a**2 * p2
        A2 = a * r**2 * p1 + 2.0 * a**2 * r * p2 + 2.0 * a**3 * p3
        return A1, A2

    def _evaluate(self, r):
        r = np.asarray(r, dtype=float)
        out = np.empty_like(r)
        k = 4.0 * math.pi * self.rho0
        small = r <= self._SPLIT * self.a
        if np.any(small):
            rs = r[small]
            g = expit((self.c - rs[:, None] * self._gl_x[None, :]) / self.a)
            inner = rs**2 * (g @ self._gl_w)     # (1/r) int_0^r r'^2 g dr'
            A1, _ = self._antiderivatives(rs)
            out[small] = -k * (inner - A1)
        big = ~small
        if np.any(big):
            rb = r[big]
            A1, A2 = self._antiderivatives(rb)
            out[big] = -self.values["Z"] / rb - k * (A2 / rb - A1)
        return out

    @property
    def tail_charge(self) -> float:
        return self.values["Z"]


# ---------------------------------------------------------------------------------------------
# Screened and short-range terms
# ---------------------------------------------------------------------------------------------
class _Screened(Term):
    """Shared parts of the screened Coulomb terms: parameters Z and D, Z0 = Z."""

    parameters = (
        Parameter("Z", None, "e", "charge number"),
        Parameter("screening_length", None, "bohr", "screening length D"),
    )

    def _validate(self) -> None:
        _need_positive(self, "screening_length")

    @property
    def origin_charge(self) -> float:
        return self.values["Z"]


class Yukawa(_Screened):
    """Yukawa (screened Coulomb, Debye-Hueckel) attraction.

    Parameters
    ----------
    Z : float
        Charge number.
    screening_length : float
        Screening length D in bohr (> 0).

    Notes
    -----
    V(r) = -Z exp(-r/D) / r. At the origin V = -Z/r + Z/D + O(r)
    (origin_charge Z); far out it falls off exponentially (tail_charge 0).
    """

    name = "yukawa"
    formula = "V(r) = -Z exp(-r/D)/r"
    source = "Yukawa, Proc. Phys.-Math. Soc. Japan 17, 48 (1935); Debye & Hueckel, Phys. Z. 24, 185 (1923)"

    def _evaluate(self, r):
        r = np.asarray(r, dtype=float)
        return -self.values["Z"] * np.exp(-r / self.values["screening_length"]) / r


class ExpCosine(_Screened):
    """Exponential-cosine screened Coulomb potential.

    Parameters
    ----------
    Z : float
        Charge number.
    screening_length : float
        Screening length D in bohr (> 0).

    Notes
    -----
    V(r) = -Z exp(-r/D) cos(r/D) / r. At the origin V = -Z/r + Z/D + O(r^2)
    (origin_charge Z); far out it decays exponentially with sign changes
    (tail_charge 0). Since exp(-x) cos x <= 1, V >= -Z/r everywhere.
    """

    name = "exp-cosine"
    formula = "V(r) = -Z exp(-r/D) cos(r/D)/r"
    source = "exponential-cosine screened Coulomb potential (Lam & Varshni, Phys. Rev. A 6, 1391 (1972))"

    def _evaluate(self, r):
        r = np.asarray(r, dtype=float)
        x = r / self.values["screening_length"]
        return -self.values["Z"] * np.exp(-x) * np.cos(x) / r


class Hulthen(Term):
    """Hulthén potential.

    Parameters
    ----------
    Z : float
        Strength (charge number of the Coulomb limit).
    delta : float
        Inverse range in 1/bohr (> 0).

    Notes
    -----
    V(r) = -Z delta e^(-delta r) / (1 - e^(-delta r)) = -Z delta / expm1(delta r).
    At the origin V = -Z/r + Z delta/2 + O(r) (origin_charge Z); far out
    V ~ -Z delta e^(-delta r) (tail_charge 0). Its s levels are known in
    closed form, E_n = -(Z/n - n delta/2)^2 / (2 m) for m = 1 and
    n < sqrt(2 Z / delta).
    """

    name = "hulthen"
    parameters = (
        Parameter("Z", None, "e", "strength (Coulomb limit charge)"),
        Parameter("delta", None, "1/bohr", "inverse range"),
    )
    formula = "V(r) = -Z delta e^(-delta r)/(1 - e^(-delta r))"
    source = "Hulthén, Ark. Mat. Astron. Fys. 28A, 5 (1942)"

    def _validate(self) -> None:
        _need_positive(self, "delta")

    def _evaluate(self, r):
        r = np.asarray(r, dtype=float)
        d = self.values["delta"]
        with np.errstate(over="ignore"):
            return -self.values["Z"] * d / np.expm1(d * r)

    @property
    def origin_charge(self) -> float:
        return self.values["Z"]


class WoodsSaxon(Term):
    """Woods-Saxon well (central part).

    Parameters
    ----------
    depth : float
        Depth V0 in hartree.
    radius : float
        Half-depth radius R in bohr (>= 0).
    diffuseness : float
        Surface diffuseness a in bohr (> 0).
    spin_orbit : float, default 0
        Strength lambda of the spin-orbit term in hartree bohr^2 (MeV fm^2
        with nuclear units); only the Schrodinger equation with a given j
        applies it (the Dirac equation makes its own spin-orbit force).

    Notes
    -----
    V(r) = -V0 / (1 + exp((r - R)/a)). Finite at the origin,
    V(0) = -V0 / (1 + exp(-R/a)) (origin_charge 0); far out
    V ~ -V0 exp(-(r - R)/a) (tail_charge 0).

    Spin-orbit part (Thomas form): V_ls(r) = lambda (1/r) (df/dr) <l.s> with
    f = 1/(1 + exp((r - R)/a)) and <l.s> = [j(j+1) - l(l+1) - 3/4]/2; for
    lambda > 0 the j = l + 1/2 level lies lower. For nucleon problems give
    the parameters in MeV and fm with ``units="nuclear"``.
    """

    name = "woods-saxon"
    parameters = (
        Parameter("depth", None, "hartree", "well depth V0"),
        Parameter("radius", None, "bohr", "half-depth radius R"),
        Parameter("diffuseness", None, "bohr", "surface diffuseness a"),
        Parameter("spin_orbit", 0.0, "hartree*bohr^2", "spin-orbit strength lambda (Thomas form)"),
    )
    formula = "V(r) = -V0/(1 + exp((r - R)/a))"
    source = "Woods & Saxon, Phys. Rev. 95, 577 (1954)"

    def _validate(self) -> None:
        _need_nonnegative(self, "radius")
        _need_positive(self, "diffuseness")

    @property
    def breakpoints(self) -> tuple[float, ...]:
        """R, where the well's edge is (smooth, but it changes over a few diffuseness lengths there).

        A surface sharper than a hundredth of R is narrower than the layout's sampling of the
        potential can see (4001 points over many decades of r), and the levels stalled at 1e-8 to
        1e-5 (a/R = 1e-3 to 1e-4). Then the edge also gets boundaries at R -+ 2a, 8a, 32a, ...
        (up to 0.05 R): elements graded geometrically from the surface, each spanning a stretch
        where the shape is analytic on a scale of its own length.
        """
        from .switches import graded_edge

        R, a = self.values["radius"], self.values["diffuseness"]
        return graded_edge(R, a) if a < 0.01 * R else (R,) if R > 0 else ()

    def _evaluate(self, r):
        r = np.asarray(r, dtype=float)
        v = self.values
        return -v["depth"] * expit((v["radius"] - r) / v["diffuseness"])

    def spin_orbit(self, r):
        """Radial factor U(r) = lambda (1/r) df/dr of the spin-orbit term (None when lambda = 0)."""
        lam = self.values["spin_orbit"]
        if lam == 0.0:
            return None
        r = np.asarray(r, dtype=float)
        f = expit((self.values["radius"] - r) / self.values["diffuseness"])
        return lam * (-f * (1 - f) / self.values["diffuseness"]) / r


# ---------------------------------------------------------------------------------------------
# Confining terms
# ---------------------------------------------------------------------------------------------
class Linear(Term):
    """Linear confining potential.

    Parameters
    ----------
    F : float
        Slope (force) in hartree/bohr (> 0).

    Notes
    -----
    V(r) = F r: zero at the origin (origin_charge 0) and growing without
    bound (far = 'confining'). For m = 1 the s levels are
    E_k = (F^2/2)^(1/3) (-a_k), a_k the zeros of the Airy function Ai.
    """

    name = "linear"
    parameters = (Parameter("F", None, "hartree/bohr", "slope"),)
    formula = "V(r) = F r"
    source = "standard (Airy-function spectrum)"
    far = "confining"

    def _validate(self) -> None:
        _need_positive(self, "F")

    def _evaluate(self, r):
        return self.values["F"] * np.asarray(r, dtype=float)


class Cornell(Term):
    """Cornell (Coulomb plus linear) potential.

    Parameters
    ----------
    kappa_c : float
        Coulomb strength in hartree*bohr.
    sigma : float
        String tension in hartree/bohr (> 0).

    Notes
    -----
    V(r) = -kappa_c / r + sigma r. At the origin V ~ -kappa_c/r
    (origin_charge kappa_c); far out it grows linearly (far = 'confining',
    tail_charge 0).
    """

    name = "cornell"
    parameters = (
        Parameter("kappa_c", None, "hartree*bohr", "Coulomb strength"),
        Parameter("sigma", None, "hartree/bohr", "string tension"),
    )
    formula = "V(r) = -kappa_c/r + sigma r"
    source = "Eichten, Gottfried, Kinoshita, Kogut, Lane & Yan, Phys. Rev. Lett. 34, 369 (1975)"
    far = "confining"

    def _validate(self) -> None:
        _need_positive(self, "sigma")

    def _evaluate(self, r):
        r = np.asarray(r, dtype=float)
        return -self.values["kappa_c"] / r + self.values["sigma"] * r

    @property
    def origin_charge(self) -> float:
        return self.values["kappa_c"]


# ---------------------------------------------------------------------------------------------
# Molecular wells
# ---------------------------------------------------------------------------------------------
class Morse(Term):
    """Morse potential.

    Parameters
    ----------
    D : float
        Well depth in hartree (> 0).
    a : float
        Inverse width in 1/bohr (> 0).
    r_e : float
        Position of the minimum in bohr (>= 0).

    Notes
    -----
    V(r) = D (e^(-2a(r - r_e)) - 2 e^(-a(r - r_e))), minimum -D at r_e.
    Finite at the origin, V(0) = D (e^(2 a r_e) - 2 e^(a r_e)) (origin_charge 0);
    far out V ~ -2 D e^(-a(r - r_e)) (tail_charge 0). When a r_e is large the
    l = 0 levels approach those of the full-line problem,
    E_v = -(a^2/2m)(lambda - v - 1/2)^2, lambda = sqrt(2 m D)/a.
    """

    name = "morse"
    parameters = (
        Parameter("D", None, "hartree", "well depth"),
        Parameter("a", None, "1/bohr", "inverse width"),
        Parameter("r_e", None, "bohr", "equilibrium distance"),
    )
    formula = "V(r) = D (exp(-2a(r-r_e)) - 2 exp(-a(r-r_e)))"
    source = "Morse, Phys. Rev. 34, 57 (1929)"

    def _validate(self) -> None:
        _need_positive(self, "D", "a")
        _need_nonnegative(self, "r_e")

    def _evaluate(self, r):
        r = np.asarray(r, dtype=float)
        v = self.values
        with np.errstate(over="ignore"):
            e = np.exp(-v["a"] * (r - v["r_e"]))
            return v["D"] * e * (e - 2.0)


class Kratzer(Term):
    """Kratzer molecular potential.

    Parameters
    ----------
    A : float
        Coulomb-like strength in hartree*bohr.
    B : float
        Inverse-square strength in hartree*bohr^2.

    Notes
    -----
    V(r) = -A/r + B/r^2. The 1/r^2 part dominates at the origin: it adds
    2 m B to l(l+1), so u ~ r^(l'+1) with l'(l'+1) = l(l+1) + 2 m B
    (``origin_inverse_square`` = B; ``origin_charge`` = A for the next
    order). A level exists only when l(l+1) + 2 m B > -1/4 (otherwise the
    particle falls to the centre). Far out V ~ -A/r + B/r^2: tail_charge A, tail_inverse_square B.
    For m = 1, E = -A^2 / (2 (n_r + l' + 1)^2).
    """

    name = "kratzer"
    parameters = (
        Parameter("A", None, "hartree*bohr", "Coulomb-like strength"),
        Parameter("B", None, "hartree*bohr^2", "inverse-square strength"),
    )
    formula = "V(r) = -A/r + B/r^2"
    source = "Kratzer, Z. Phys. 3, 289 (1920)"

    def _evaluate(self, r):
        r = np.asarray(r, dtype=float)
        return -self.values["A"] / r + self.values["B"] / r**2

    @property
    def origin_charge(self) -> float:
        return self.values["A"]

    @property
    def tail_charge(self) -> float:
        return self.values["A"]

    @property
    def origin_inverse_square(self) -> float:
        return self.values["B"]

    @property
    def tail_inverse_square(self) -> float:
        return self.values["B"]


# ---------------------------------------------------------------------------------------------
# Vacuum polarization
# ---------------------------------------------------------------------------------------------
_EULER_GAMMA = 0.57721566490153286061
_UEHLING_SMALL = 1e-9    # rho below this: three-term small-rho expansion (error ~ rho^2 ln rho)
_UEHLING_LARGE = 8.0     # rho above this: generalized Gauss-Laguerre rule
_TRAP_STEP = 0.15        # trapezoidal step in u (x = cosh u)
_TRAP_UMAX = 27.0        # exp(-1e-9 cosh 27) ~ exp(-2.7e2): the rule is complete
_LAGUERRE_NODES = 60


def _trap_rule():
    u = _TRAP_STEP * np.arange(1, int(_TRAP_UMAX / _TRAP_STEP) + 1)
    ch = np.cosh(u)
    th2 = np.tanh(u) ** 2
    return ch, _TRAP_STEP * (1.0 + 0.5 / ch**2) * th2


def _laguerre_rule():
    s, w = roots_genlaguerre(_LAGUERRE_NODES, 0.5)
    return s, w


_TRAP = _trap_rule()
_LAG = _laguerre_rule()


def uehling_integral(rho) -> np.ndarray:
    """K(rho) = int_1^inf e^(-rho x) (1 + 1/(2x^2)) sqrt(x^2 - 1)/x^2 dx, vectorised, rho > 0.

    Notes
    -----
    * rho < 1e-9: K = ln(2/rho) - gamma_E - 5/6 + (3 pi/8) rho (error
      O(rho^2 ln rho), below 1e-16 relative there);
    * 1e-9 <= rho <= 8: x = cosh u turns the integrand into
      e^(-rho cosh u) (1 + 1/(2 cosh^2 u)) tanh^2 u, even and analytic in
      |Im u| < pi/2, so the trapezoidal rule (step 0.15) converges
      geometrically (error ~ 1e-16);
    * rho > 8: x = 1 + s/rho gives
      K = e^(-rho) rho^(-3/2) int_0^inf s^(1/2) e^(-s) G(s) ds with G smooth,
      done by 60-point generalized Gauss-Laguerre quadrature. It underflows to
      0 (correctly) for rho > ~740.
    """
    rho = np.asarray(rho, dtype=float)
    out = np.empty_like(rho)
    tiny = rho < _UEHLING_SMALL
    big = rho > _UEHLING_LARGE
    mid = ~(tiny | big)
    if np.any(tiny):
        rt = rho[tiny]
        with np.errstate(divide="ignore"):
            out[tiny] = np.log(2.0 / rt) - _EULER_GAMMA - 5.0 / 6.0 + 0.375 * math.pi * rt
    if np.any(mid):
        ch, w = _TRAP
        out[mid] = np.exp(-np.outer(rho[mid], ch)) @ w
    if np.any(big):
        s, w = _LAG
        rb = rho[big][:, None]
        x = 1.0 + s / rb
        G = (1.0 + 0.5 / x**2) * np.sqrt(2.0 + s / rb) / x**2
        rb = rb[:, 0]
        out[big] = np.exp(-rb) * rb**-1.5 * (G @ w)
    return out


class Uehling(Term):
    """One-loop vacuum-polarization (Uehling) correction to the field of a point charge Z.

    Parameters
    ----------
    Z : float
        Charge number of the point nucleus.

    Notes
    -----
    This term is only the correction: add it to the Coulomb term
    (``--potential coulomb --potential uehling``). With lambda_e = hbar/(m_e c)
    = alpha bohr (the reduced electron Compton wavelength in atomic units)
    and rho = 2 r / lambda_e,

        V(r) = -(Z/r) (2 alpha / (3 pi)) K(rho),
        K(rho) = int_1^inf e^(-rho x) (1 + 1/(2x^2)) sqrt(x^2 - 1)/x^2 dx,

    evaluated by :func:`uehling_integral` to ~1e-15 relative.

    Ends:

    * r << lambda_e: K = ln(lambda_e/r) - gamma_E - 5/6 + (3 pi/4)(r/lambda_e) + ...,
      so V ~ -(2 alpha Z/(3 pi)) ln(1/r)/r diverges slightly faster than
      1/r. ``origin_charge`` is nevertheless returned as 0: the logarithm
      does not fit the r^gamma form, and how the solver treats it is left
      to the solver. The correction stays small: relative to -Z/r it is
      (2 alpha/(3 pi)) K, about 3% at r = 1e-9 lambda_e.
    * r >> lambda_e: V ~ -(Z/r) (alpha/(4 sqrt(pi))) e^(-2r/lambda_e)
      (r/lambda_e)^(-3/2) (1 - 29 lambda_e/(16 r) + ...), short range
      (tail_charge 0); it underflows to 0 beyond about 370 lambda_e.
    """

    name = "uehling"
    parameters = (Parameter("Z", None, "e", "nuclear charge number"),)
    formula = "V = -(Z/r)(2 alpha/3 pi) int_1^inf e^(-2xr/lambda_e)(1 + 1/2x^2) sqrt(x^2-1)/x^2 dx"
    source = "Uehling, Phys. Rev. 48, 55 (1935)"

    def _evaluate(self, r):
        r = np.asarray(r, dtype=float)
        lam = ALPHA  # hbar/(m_e c) in bohr
        with np.errstate(divide="ignore", invalid="ignore"):
            return -(self.values["Z"] / r) * (2.0 * ALPHA / (3.0 * math.pi)) * uehling_integral(2.0 * r / lam)


LIBRARY: tuple[type[Term], ...] = (
    UniformSphere, Fermi, Yukawa, ExpCosine, Hulthen, WoodsSaxon, Linear, Cornell, Morse, Kratzer, Uehling,
)
"""All terms of this module, in registry order."""
