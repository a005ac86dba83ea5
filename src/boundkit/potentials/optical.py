"""Complex potential terms: absorptive parts and the hadronic-atom optical potential.

A complex term returns complex values V_R + i W (hartree) at real radii
(bohr). Only :func:`boundkit.resonances` solves with them (its dense complex
eigen solve gives E - i Gamma/2); the real bound-state solver needs real
potentials.

* :class:`ComplexCallableTerm` keeps the complex values of a user's callable;
  its ends (origin and tail charge) are probed on the real part.
* :class:`ImaginaryPart` turns a real term W(r) into i W(r), so any built-in
  term or expression can serve as an absorptive part.
* :class:`OpticalTRho` is the lowest-order ("t rho") optical potential of a
  hadronic atom,

      2 mu V_opt(r) = -4 pi (1 + mu/M) b0 rho(r)        (hbar = c = 1),

  with b0 a complex effective hadron-nucleon scattering length (Im b0 > 0
  absorbs), M the nucleon mass, mu the hadron-nucleus reduced mass and rho
  the nucleon density, here a two-parameter Fermi shape normalised to A
  nucleons. Form as used in the kaonic- and pionic-atom fits reviewed by
  Batty, Friedman and Gal, Phys. Rep. 287, 385 (1997) (citation from memory).
"""
from __future__ import annotations

import math

import numpy as np
import scipy.constants as sc

from ..units import FM_PER_BOHR, HBARC_MEV_FM, MEV_IN_HARTREE
from .base import CallableTerm, Parameter, Term
from .library import fermi_dirac

__all__ = ["ComplexCallableTerm", "ImaginaryPart", "OpticalTRho", "OPTICAL"]

_NUCLEON_MEV = sc.physical_constants["proton mass energy equivalent in MeV"][0]


class ComplexCallableTerm(CallableTerm):
    """A user's callable V(r) that may return complex values (r in bohr, V in hartree)."""

    name = "complex-callable"
    formula = "user function V(r), complex"

    def __init__(self, func, label: str | None = None) -> None:
        self._real_only = True            # the probes of the ends look at Re V
        super().__init__(func, label)
        self._real_only = False

    def _evaluate(self, r: np.ndarray) -> np.ndarray:
        out = np.asarray(self.func(r))
        out = np.broadcast_to(out, np.shape(r)).astype(complex if np.iscomplexobj(out) else float)
        return out.real.copy() if self._real_only else out

    def __repr__(self) -> str:
        return f"ComplexCallableTerm({self.label})"


class ImaginaryPart(Term):
    """i W(r) for a real term W: an absorptive (W < 0) or emissive part of a potential."""

    name = "imaginary-part"
    formula = "i W(r)"
    source = "user"

    def __init__(self, inner: Term) -> None:
        self.inner = inner
        self.values = dict(getattr(inner, "values", {}))
        self.label = f"i*{getattr(inner, 'label', inner.name)}"
        if inner.tail_charge != 0.0 or inner.origin_charge != 0.0:
            raise ValueError("absorptive: an imaginary part with a Coulomb 1/r end is not supported; "
                             "use a term that is finite at r = 0 and short-ranged")

    def _evaluate(self, r: np.ndarray) -> np.ndarray:
        w = np.asarray(self.inner(r))
        if np.iscomplexobj(w):
            if np.any(w.imag != 0):
                raise ValueError("absorptive: W(r) must be real (it is the imaginary part, V = V_R + i W); "
                                 "write a complex term in the potential itself instead")
            w = w.real
        return 1j * w.astype(float)

    def continued(self, z):
        w = self.inner.continued(z)
        return None if w is None else 1j * w

    @property
    def breakpoints(self) -> tuple[float, ...]:
        return self.inner.breakpoints

    def __repr__(self) -> str:
        return f"i*{self.inner!r}"


class OpticalTRho(Term):
    """Lowest-order (t rho) optical potential of a hadronic atom, complex strength b0.

    Parameters
    ----------
    A : float
        Mass number (the density integrates to A nucleons).
    c_fm, a_fm : float
        Half-density radius and diffuseness of the Fermi density (fm); the
        default a = 0.523 fm is t/(4 ln 3) with the skin thickness t = 2.3 fm
        of the ``fermi`` term (common practice).
    b0_re_fm, b0_im_fm : float
        Real and imaginary parts of the effective scattering length b0 (fm);
        Im b0 > 0 absorbs.
    mu_mev : float
        Reduced mass of the hadron-nucleus pair (MeV/c^2).

    Notes
    -----
    V(r) = -(2 pi (hbar c)^2 / (mu c^2)) (1 + mu/M) b0 rho(r),
    rho(r) = rho0 / (1 + exp((r - c)/a)), 4 pi int rho r^2 dr = A, so
    rho0 = A / (8 pi a^3 F_3(c/a)) with the complete Fermi-Dirac integral F_3;
    M is the CODATA proton mass.
    Converted to hartree and bohr with scipy.constants. Form: Batty, Friedman
    and Gal, Phys. Rep. 287, 385 (1997) (from memory); the b0 values are the
    user's (the fitted values depend on the atom and the data set).
    """

    name = "optical-trho"
    parameters = (
        Parameter("A", None, "1", "mass number (nucleons)"),
        Parameter("c_fm", None, "fm", "half-density radius of the nucleon density"),
        Parameter("a_fm", 0.523, "fm", "diffuseness of the nucleon density"),
        Parameter("b0_re_fm", None, "fm", "real part of the effective scattering length b0"),
        Parameter("b0_im_fm", None, "fm", "imaginary part of b0 (> 0 absorbs)"),
        Parameter("mu_mev", None, "MeV", "hadron-nucleus reduced mass"),
    )
    formula = "V = -(2 pi/mu)(1 + mu/M) b0 rho(r), rho Fermi with A nucleons, b0 complex"
    source = "t-rho optical potential (Batty, Friedman & Gal, Phys. Rep. 287, 385 (1997); from memory)"

    def _validate(self) -> None:
        for key in ("A", "c_fm", "a_fm", "mu_mev"):
            if not self.values[key] > 0:
                raise ValueError(f"params[{key!r}]: the optical-trho term needs {key} > 0, got {self.quote(key)}")
        v = self.values
        a, c = v["a_fm"], v["c_fm"]
        rho0 = v["A"] / (8 * math.pi * a**3 * float(fermi_dirac(3, c / a)))       # fm^-3
        b0 = complex(v["b0_re_fm"], v["b0_im_fm"])
        mu = v["mu_mev"]
        self._depth = -2 * math.pi * HBARC_MEV_FM**2 / mu * (1 + mu / _NUCLEON_MEV) * b0 * rho0  # MeV
        self._c, self._a = c / FM_PER_BOHR, a / FM_PER_BOHR

    def _evaluate(self, r: np.ndarray) -> np.ndarray:
        r = np.asarray(r, dtype=float)
        with np.errstate(over="ignore"):
            shape = 1.0 / (1.0 + np.exp((r - self._c) / self._a))
        return self._depth * MEV_IN_HARTREE * shape

    @property
    def breakpoints(self) -> tuple[float, ...]:
        """c and graded radii around it for a surface sharper than a hundredth of c, as the
        Woods-Saxon term declares for the same shape (:class:`boundkit.potentials.library.WoodsSaxon`);
        none for a usual surface (a = 0.523 fm)."""
        from .switches import graded_edge

        return graded_edge(self._c, self._a) if self._a < 0.01 * self._c else ()

    @property
    def depth_mev(self) -> complex:
        """V_opt at the centre of a flat density, rho = rho0 (MeV)."""
        return complex(self._depth)


OPTICAL = (OpticalTRho,)
