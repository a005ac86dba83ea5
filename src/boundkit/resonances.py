"""Resonances and complex (optical) potentials by exterior complex scaling.

Method
------
1. The radial coordinate is continued to z = R0 + (r - R0) e^{i theta}
   beyond R0 (exterior complex scaling; uniform scaling r e^{i theta} when
   R0 = 0 and an analytic form of the potential is given). R0 is chosen
   beyond the last non-analytic feature of the potential (``breakpoints``:
   a nuclear radius, a table's end) and beyond the radius where the sampled
   potential has reached its analytic tail -Z_inf/z (or 0, or the user's
   analytic function) to 1e-12 of the energy scale; R0 = 0 when it has that
   form at every radius sampled and no breakpoint. Every breakpoint is an element edge; where V jumps, the
   edge node (shared by two elements' Lobatto quadratures) holds the two
   one-sided values weighted by the elements' Jacobians (:func:`_split_jumps`).
   The potential is evaluated only at real r <= R0; on the
   rotated segment its tail (or the user's analytic function of complex z)
   is used. This is the choice the module makes for every potential, since
   the library's terms accept real radii only.
2. The scaled radial operator of the equation is discretized with the
   finite-element DVR of :mod:`boundkit.complex_scaling` (independent of the
   bound-state solver) and solved densely with :func:`numpy.linalg.eigvals`
   in complex arithmetic (the runs of step 3 side by side, one per core, each
   with one BLAS thread; see :func:`_spectra`):

   * Schrodinger: [-1/(2m) d^2/dz^2 + l(l+1)/(2m z^2) + V(z)] u = E u;
   * Klein-Gordon: the same with V + S + (S^2 - (E - V)^2)/(2 m c^2), a
     quadratic eigenproblem in E, linearised as A0 y + E A1 y + E^2 A2 y = 0
     -> [[0, 1], [-A0, -A1]] Y = E [[1, 0], [0, A2]] Y;
   * Dirac: the two-component first-order system in P and Q directly (no
     elimination, so no pole of the eliminated form),

         E P = (V + S) P + c (-d/dz + kappa/z) Q,
         E Q = c (d/dz + kappa/z) P + (V - S - 2 m c^2) Q.

   E is always the binding energy (total minus rest energy).
3. Bound states and resonances do not move with theta; the rotated
   continuum, E ~ e^{-2 i theta} |E| above threshold, does (so one angle
   must lie at least 0.05 rad from the first: ``_MIN_SPREAD``). Every
   eigenvalue in the energy window at the first angle and the finest order is
   matched to the nearest eigenvalue at every other angle (same order) and
   at the first angle with the order lowered by 4; it is kept when all these
   distances stay below ``tol`` times the energy scale, and below 2 % of its
   distance to its nearest neighbour in the same spectrum (in the dense
   continuum the nearest eigenvalue of another run is otherwise a
   neighbour's partner, not its own). An eigenvalue stable in theta but not
   against order - 4 (a broad resonance, whose outgoing wave grows over the
   unscaled segment) is checked once more against order + 4 and with R0
   moved out by 20 % (:func:`_finer_check`), which box states of the
   unscaled segment fail.
   Dirac eigenvalues that pass are dropped when their eigenvector is a spurious
   solution of the equal-order elements, an oscillation from node to node in
   every element (:func:`_spurious`; one such converges onto the lowest
   kappa < 0 level in the kappa > 0 channel of a point charge).
   The largest distance in the real and imaginary parts gives the error
   estimates of the energy and of the width. The runs' values are kept on the
   result (the stability test, reported).
4. A complex potential V = V_R + i W gives complex energies E - i Gamma/2
   for all equations; to first order Gamma = -2 <W>.
5. Bound, quasi-bound and dived levels are labelled by continuity from the
   real limit: the levels of V_R (real ones below threshold and, for Dirac
   and Klein-Gordon, dived ones below -2 m c^2 that are stable in theta and
   order) are counted from the bottom (the k-th is n = k + l: 1s, 2p1/2,
   ...), each is followed along V_R + i lam W, lam = 0 -> 1, by inverse
   iteration, and names the eigenvalue it reaches. Resonances above
   threshold keep a generic label (``resonance 1``, ... in order of energy).

Width sign: above the upper threshold (and for every Schrodinger state)
Gamma = -2 Im E. A Dirac state that has dived into the lower continuum
(binding energy below -2 m c^2) decays by positron emission; complex scaling
turns that continuum into the upper half plane and the resonance appears at
E_R + i Gamma/2, so Gamma = +2 Im E there (Gamma = 2 |Im E| is reported for
every state below -2 m c^2; for Klein-Gordon these are not validated).
"""
from __future__ import annotations

import logging
import math
import time
import warnings
from concurrent.futures import FIRST_COMPLETED, ThreadPoolExecutor, wait
from dataclasses import dataclass, field, replace
from typing import Any, Callable, Sequence

import numpy as np
import scipy.linalg as sla

from ._threads import inside, one_blas_thread, usable_cores
from ._checks import OptionError, check_finite, check_int, check_positive
from ._rounding import beside, rounding_floor
from .complex_scaling import ScaledMesh, build_mesh, element_edges
from .units import (C_AU, ENERGY_UNITS, bohr_to, call_energy_unit, constants_record, hartree_to, system_units,
                    to_atomic)

__all__ = ["Resonance", "ResonanceResult", "resonances"]

log = logging.getLogger(__name__)

_TAIL_TOL = 1e-12       # potential minus its tail, relative to the energy scale, at R0
_DECAY = 27.0           # e-folds of an outgoing wave kept on the rotated segment
_MAX_SIZE = 2400        # largest dense eigenproblem (unknowns) built
_UNITS = {"energy": "hartree", "width": "hartree", "length": "bohr", "angle": "rad"}


@dataclass(frozen=True, slots=True, repr=False)
class Resonance:
    """One stable complex eigenvalue E - i Gamma/2 (binding energy, hartree).

    ``energy`` is Re E and ``width`` Gamma (both hartree); ``energy_error``
    and ``width_error`` are the largest changes over the scaling angles and
    orders of the stability test. ``kind`` is ``bound`` (real, below
    threshold), ``quasi-bound`` (below threshold, width from an absorptive
    potential), ``resonance`` (above threshold) or ``supercritical`` (in the
    lower continuum of a relativistic equation). ``runs`` holds the matched
    complex eigenvalue at each (theta, order) of the test.
    """

    label: str
    kind: str
    energy: float
    width: float
    energy_error: float
    width_error: float
    theta_spread: float
    order_spread: float
    runs: tuple[tuple[float, int, complex], ...]

    @property
    def complex_energy(self) -> complex:
        """The eigenvalue itself, hartree: E - i Gamma/2 (E + i Gamma/2 for a Dirac supercritical
        state), from the reference run of the stability test."""
        return self.runs[0][2]

    def energy_in(self, unit: str) -> float:
        return float(hartree_to(self.energy, unit))

    def width_in(self, unit: str) -> float:
        return float(hartree_to(self.width, unit))

    def to_dict(self, unit: str = "hartree") -> dict[str, Any]:
        return {"label": self.label, "kind": self.kind,
                "energy": self.energy_in(unit), "energy_error": float(hartree_to(self.energy_error, unit)),
                "width": self.width_in(unit), "width_error": float(hartree_to(self.width_error, unit)),
                "theta_spread": float(hartree_to(self.theta_spread, unit)),
                "order_spread": float(hartree_to(self.order_spread, unit)),
                "runs": [{"theta": t, "order": o, "energy": float(hartree_to(e.real, unit)),
                          "imag": float(hartree_to(e.imag, unit))} for t, o, e in self.runs]}

    def __repr__(self) -> str:
        return (f"Resonance({self.label}: E = {self.energy:.12g} +- {self.energy_error:.2g}, "
                f"Gamma = {self.width:.6g} +- {self.width_error:.2g} hartree, {self.kind})")


@dataclass(frozen=True, repr=False)
class ResonanceResult:
    """Outcome of :func:`resonances`: the stable eigenvalues in the window.

    ``success`` is False only when the discretization could not be built or
    solved; finding nothing stable is ``status = 'none-stable'`` with
    success True. ``diagnostics`` counts the eigenvalues in the window and the
    ones rejected as rotated continuum (or unconverged).
    """

    resonances: tuple[Resonance, ...]
    success: bool
    status: str
    message: str
    equation: str
    potential: str
    settings: dict = field(default_factory=dict)
    constants: dict = field(default_factory=dict)
    units: dict = field(default_factory=dict)
    diagnostics: dict = field(default_factory=dict)

    def to_dict(self, energy_unit: str = "hartree", length_unit: str | None = None) -> dict[str, Any]:
        """JSON-ready record; energies and widths in ``energy_unit``, the contour (``r0``, ``r_max`` and
        the element size ``h``) in ``length_unit`` (default: that of the call's unit system, bohr or fm
        with units='nuclear'); the ``units`` block names both. The settings keep their lengths in bohr,
        as their names say."""
        lu = length_unit or system_units(self.settings.get("units", "atomic"))[1]
        s = self.settings
        contour = {name: float(bohr_to(s[key], lu)) for name, key in
                   (("r0", "r0_bohr"), ("r_max", "r_max_bohr"), ("h", "element_size_bohr")) if key in s}
        return {"equation": self.equation, "potential": self.potential,
                "units": {"energy": energy_unit, "width": energy_unit, "length": lu, "angle": "rad"},
                "contour": contour,
                "constants": self.constants, "settings": self.settings, "status": self.status,
                "success": self.success, "message": self.message, "diagnostics": self.diagnostics,
                "resonances": [r.to_dict(energy_unit) for r in self.resonances]}

    def __repr__(self) -> str:
        lines = [f"ResonanceResult({self.equation}, {self.potential}: {self.status}, "
                 f"{len(self.resonances)} stable)"]
        lines += [f"  {r!r}" for r in self.resonances]
        return "\n".join(lines)


# ---------------------------------------------------------------------------------------------
# the scaled operators
# ---------------------------------------------------------------------------------------------
def _sample(pot, mesh: ScaledMesh, analytic: Callable | None) -> tuple[np.ndarray, np.ndarray]:
    """V and S at the mesh nodes: real segment from the potential, rotated one from its tail."""
    V = np.zeros(mesh.size, dtype=complex)
    S = np.zeros(mesh.size, dtype=complex)
    inner = ~mesh.exterior
    if np.any(inner):
        V[inner] = np.asarray(pot.V(mesh.x[inner]), dtype=complex)
        S[inner] = np.asarray(pot.S(mesh.x[inner]), dtype=complex)
    z = mesh.z[mesh.exterior]
    if analytic is not None:
        V[mesh.exterior] = np.asarray(analytic(z), dtype=complex) * np.ones_like(z)
    else:
        V[mesh.exterior] = -pot.vector_tail_charge / z
    S[mesh.exterior] = -pot.scalar_tail_charge / z
    _split_jumps(pot, mesh, analytic, V, S)
    if not (np.all(np.isfinite(V)) and np.all(np.isfinite(S))):
        raise ValueError("potential: not finite at a node of the scaled mesh; check the expression or analytic=")
    return V, S


_GAP_SHARE = 0.02   # a run's spread must stay below this share of the distance to the nearest neighbour
# the least angle (rad) between the first scaling angle and the farthest other one: the rotated continuum
# moves by about 2 |E| dtheta (measured 1.9 to 2.1 |E| dtheta on barrier, Coulomb and Yukawa spectra),
# and equal angles passed 16 continuum points of (0.5, 6) hartree as resonances; at 0.01 to 0.03 rad a
# point next to threshold still passed (|E| ~ 1e-4 hartree, where the threshold is tol x the window's
# scale), from 0.05 rad on none did in the windows measured (tests/test_resonances.py)
_MIN_SPREAD = 0.05


def check_angles(name: str, angles) -> tuple[float, ...]:
    """The scaling angles as floats: at least two, in (0, pi/2), one at least _MIN_SPREAD from the
    first. ``name`` is the argument named in the message (``angles``, or ``beyond_angles`` for the
    critical study, which checks them before its search)."""
    try:
        angles = tuple(angles)
    except TypeError:
        raise ValueError(f"{name}: give at least two scaling angles in radians, e.g. (0.25, 0.35); got "
                         f"{angles!r}") from None
    angles = tuple(check_finite(name, a) for a in angles)
    if len(angles) < 2 or not all(0 < a < math.pi / 2 for a in angles):
        raise ValueError(f"{name}: give at least two scaling angles in (0, pi/2) radians, got {angles}")
    far = max(angles[1:], key=lambda a: abs(a - angles[0]))
    if not abs(far - angles[0]) >= _MIN_SPREAD - 1e-12:      # 0.35 - 0.3 is 0.04999999999999999
        raise ValueError(f"{name}: the stability test compares every run with the first angle, {angles[0]:.10g} rad, "
                         f"and the farthest other angle, {far:.10g} rad, is only {abs(far - angles[0]):.3g} rad from it: "
                         "the rotated continuum then hardly moves and passes as resonances; give an angle at least "
                         f"{_MIN_SPREAD:g} rad from the first (e.g. 0.25,0.35)")
    return angles


def _split_jumps(pot, mesh: ScaledMesh, analytic: Callable | None, V: np.ndarray, S: np.ndarray) -> None:
    """At each element edge on a breakpoint of the potential: V and S (in place) as the one-sided
    values weighted by the two elements' Jacobians, (J_L V(x-) + J_R V(x+)) / (J_L + J_R).

    Notes
    -----
    The Lobatto quadrature of each element puts a node on its ends, shared by two elements; the
    diagonal entry there is w (J_L V_L + J_R V_R), which the overlap B = w (J_L + J_R) divides.
    Sampling V at the node itself gave one side's value to both elements: a square barrier's
    resonance converged only like 1/order^2 (3.219 and 3.238 at orders 12 and 8 for 3.2035) and was
    missed. V(x+) at R0 is the exterior form there. The Klein-Gordon V^2 term is built from the
    weighted V (its own weighting would differ by O((V_L - V_R)^2 / m c^2) at such a node).
    """
    from .complex_scaling import _contour

    breaks = {float(b) for b in pot.breakpoints}
    edges = np.asarray(mesh.edges)
    if not breaks or len(edges) < 3:
        return
    J = np.diff(_contour(edges, mesh.r0, mesh.theta)) / 2.0
    for e in range(1, len(edges) - 1):
        x = float(edges[e])
        if x not in breaks or x > mesh.r0:
            continue
        below, above = (np.array([y]) for y in beside(x))
        VL, SL = complex(np.asarray(pot.V(below))[0]), complex(np.asarray(pot.S(below))[0])
        if x < mesh.r0:
            VR, SR = complex(np.asarray(pot.V(above))[0]), complex(np.asarray(pot.S(above))[0])
        else:
            VR = complex(np.asarray(analytic(np.array([x + 0j])))[0]) if analytic is not None \
                else -pot.vector_tail_charge / x
            SR = -pot.scalar_tail_charge / x
        i = e * mesh.order - 1                     # the first node (r = 0) is dropped
        V[i] = (J[e - 1] * VL + J[e] * VR) / (J[e - 1] + J[e])
        S[i] = (J[e - 1] * SL + J[e] * SR) / (J[e - 1] + J[e])


def _operator(eq, mesh: ScaledMesh, V: np.ndarray, S: np.ndarray) -> np.ndarray:
    """Matrix M with eigenvalues E (binding energies) for one channel on one mesh."""
    B, z, m = mesh.B, mesh.z, eq.mass
    n = mesh.size
    if eq.name == "dirac":
        c = C_AU
        kz = eq.kappa * B / z
        M = np.zeros((2 * n, 2 * n), dtype=complex)
        M[:n, :n] = np.diag(B * (V + S))
        M[:n, n:] = c * (-mesh.D + np.diag(kz))
        M[n:, :n] = c * (mesh.D + np.diag(kz))
        M[n:, n:] = np.diag(B * (V - S - 2 * m * c * c))
        return M / np.concatenate([B, B])[:, None]
    cent = eq.l * (eq.l + 1) / (2 * m * z**2)
    if eq.name == "schrodinger":
        return (mesh.K / (2 * m) + np.diag(B * (cent + V + S))) / B[:, None]
    # Klein-Gordon: A0 + E A1 + E^2 A2 = 0 on u, linearised on (u, E u); all divided by B
    mc2 = m * C_AU**2
    A0 = (mesh.K / (2 * m) + np.diag(B * (cent + V + S + (S * S - V * V) / (2 * mc2)))) / B[:, None]
    a1 = V / mc2 - 1.0
    a2 = -1.0 / (2 * mc2)
    M = np.zeros((2 * n, 2 * n), dtype=complex)
    M[:n, n:] = np.eye(n)
    M[n:, :n] = -A0 / a2
    M[n:, n:] = -np.diag(a1) / a2
    return M


_COUNT_SHARE = 0.01  # a level below threshold that moves with theta by less than this share of |E| is counted
_TOP_SHARE = 0.01   # share of an eigenvector's norm in the top Legendre mode of its elements beyond which
# it is not a solution of the equation (measured: 0.47 to 0.48 for the spurious Dirac states, at most 1e-8
# for the true levels of point charges Z = 1 to 92 and finite nuclei, 1e-18 for most)


@dataclass(repr=False)
class _Run:
    """What a run's later readers take from it instead of rebuilding it: the samples V and S, its mesh, and
    for Dirac (whose spurious test reads it) the matrix, with the spurious verdicts of its eigenvalues as
    they are computed (:meth:`spurious`)."""

    V: np.ndarray
    S: np.ndarray
    mesh: ScaledMesh
    M: np.ndarray | None = None
    verdicts: dict = field(default_factory=dict)

    def spurious(self, eq, energies) -> np.ndarray:
        """:func:`_spurious` of the eigenvalues ``energies`` of this run's matrix, each computed once (the
        stable eigenvalues are tested in :func:`resonances`, the bound ones again in the labels)."""
        energies = [complex(e) for e in energies]
        todo = [e for e in dict.fromkeys(energies) if e not in self.verdicts]
        if todo:
            self.verdicts.update(zip(todo, _spurious(eq, self.mesh, self.M, todo).tolist()))
        return np.array([self.verdicts[e] for e in energies], dtype=bool)


def _spurious(eq, mesh: ScaledMesh, M: np.ndarray, energies) -> np.ndarray:
    """For each eigenvalue of M in ``energies``: True when its eigenvector is a spurious solution of
    the Dirac discretization (an element-by-element oscillation, not a state of the equation).

    Notes
    -----
    P and Q share one Lobatto basis of degree n (equal order, no kinetic balance), and the first-order
    system then has solutions that the equation does not: in every element P is the Legendre
    polynomial P_n(xi) (alternating in sign from node to node) times a smooth envelope, a mode the
    lumped Lobatto overlap weighs as 2/n instead of 2/(2n + 1). For kappa > 0 at a point charge its
    envelope follows the kappa < 0 equation, and it converges with the order onto the lowest
    kappa < 0 level (1s1/2 for kappa = 1, 2p1/2 ... 2p3/2 for kappa = 2): stable in theta and order,
    it passed the stability test as '2p1/2' at the 1s1/2 energy and pushed every true level's n up by
    one. Elsewhere (a Yukawa well, kappa = 1) it wanders with the order and fails the test. A true
    level is resolved by the polynomials, so its share in P_n is tiny; the share measured here is
    sum_e |c_n|^2 (2/(2n + 1)) |J_e| over sum_e sum_i w_i |f_i|^2 |J_e|, P and Q together, with c_n
    the discrete Legendre coefficient of degree n of each element (eigenvector by inverse iteration).
    Only Dirac states are tested; the other equations are second order in one function.
    """
    energies = np.asarray(energies, dtype=complex)
    if eq.name != "dirac" or energies.size == 0:
        return np.zeros(energies.shape, dtype=bool)
    from numpy.polynomial import legendre as npleg

    from .complex_scaling import lobatto

    o, n = mesh.order, mesh.size
    xi, w, _ = lobatto(o)
    top = npleg.legval(xi, [0.0] * o + [1.0])
    J = np.abs(np.diff(np.asarray(mesh.edges))) / 2.0
    idx = np.arange(len(J))[:, None] * o + np.arange(o + 1)[None, :]    # element nodes, ends included
    out = []
    eye = np.eye(M.shape[0])
    for e in energies:
        x = np.ones(M.shape[0], dtype=complex)
        with warnings.catch_warnings():
            warnings.simplefilter("ignore", sla.LinAlgWarning)   # M - e is singular to rounding: the point
            lu = sla.lu_factor(M - e * eye, check_finite=False)
            for _ in range(3):
                x = sla.lu_solve(lu, x, check_finite=False)
                x /= np.linalg.norm(x)
        high = total = 0.0
        for f in (x[:n], x[n:]):
            g = np.concatenate(([0.0], f, [0.0]))[idx]                  # u = 0 at both ends
            c = (g * (w * top)).sum(axis=1) / (2.0 / o)                 # discrete norm of P_n: 2/n
            high += float(np.sum(np.abs(c) ** 2 * (2.0 / (2 * o + 1)) * J))
            total += float(np.sum((np.abs(g) ** 2 * w).sum(axis=1) * J))
        out.append(high > _TOP_SHARE * total)
    return np.array(out, dtype=bool)


# ---------------------------------------------------------------------------------------------
# choice of the contour and the elements
# ---------------------------------------------------------------------------------------------
def _wavenumber(eq, T: float) -> float:
    """|k| of a free particle of kinetic (binding) energy T (relativistic for Dirac, KG)."""
    if eq.name == "schrodinger":
        return math.sqrt(2 * eq.mass * abs(T))
    mc2 = eq.mass * C_AU**2
    return math.sqrt(abs((T + mc2) ** 2 - mc2**2)) / C_AU


def _auto_r0(pot, analytic, scale: float) -> float:
    """Smallest radius beyond every breakpoint where V has reached its exterior form (0 when it has
    that form at every radius sampled, from 1e-8 bohr on, and no breakpoint)."""
    r = np.geomspace(1e-8, 1e5, 3000)
    with np.errstate(all="ignore"):
        V = np.asarray(pot.V(r), dtype=complex)
        S = np.asarray(pot.S(r), dtype=complex)
        tailV = np.asarray(analytic(r + 0j), dtype=complex) if analytic is not None else -pot.vector_tail_charge / r
        dev = np.abs(V - tailV) + np.abs(S + pot.scalar_tail_charge / r)
    bad = ~(dev <= _TAIL_TOL * scale)
    if np.any(bad[r >= 1e4]):
        raise ValueError("potential: does not reach a Coulomb tail -Z/r or zero by r = 1e5 bohr (to 1e-12 of the "
                         "energy scale) from r = 1e4 bohr on; give r0 and analytic=, a function of complex r for the exterior")
    bps = pot.breakpoints
    if not np.any(bad):
        # V is its exterior form at every radius sampled: scale from the origin (uniform scaling)
        # unless a breakpoint says where it is not analytic
        return float(max(bps, default=0.0))
    k = int(np.nonzero(bad)[0][-1]) + 1
    r0 = float(r[k])
    if bps and max(bps) >= r[k - 1]:
        r0 = float(max(bps))
    return r0


def _natural_length(eq, pot) -> float:
    r = np.geomspace(1e-10, 1e5, 1500)
    with np.errstate(all="ignore"):
        v = np.abs(np.asarray(pot.V(r), dtype=complex)) + np.abs(np.asarray(pot.S(r), dtype=complex))
    big = 2 * eq.mass * r**2 * v >= 1.0
    return float(r[np.argmax(big)]) if np.any(big) else 1.0


def _mesh_plan(eq, pot, window, angles, analytic, r0, r_max, h) -> dict:
    emin, emax = window
    scale = max(abs(emin), abs(emax))
    if r0 is None:
        r0 = _auto_r0(pot, analytic, scale)
    L = _natural_length(eq, pot)
    ends = (emin, emax)
    # kinetic energy where the potential is deepest (beyond the origin's grading)
    rr = np.linspace(min(L, r0) * 0.5, max(r0, L), 400) if r0 > 0 else np.array([L])
    with np.errstate(all="ignore"):
        vmin = float(np.nanmin(np.real(pot.V(rr) + pot.S(rr))))
    k_in = max(_wavenumber(eq, e - min(vmin, 0.0)) for e in ends)
    k_out = max(_wavenumber(eq, e) for e in ends)
    k_in = max(k_in, k_out, 1e-6)
    if h is None:
        h = min(2 * math.pi / k_in, max(r0, L))
    h_out = 2 * math.pi / max(k_out, 1e-12)
    if r_max is None:
        # waves of the lowest energy of interest must fall by e^-_DECAY on the rotated segment:
        # outgoing ones (E above threshold) as exp(-k sin(theta) x), bound ones as exp(-kappa x)
        mc2 = eq.mass * C_AU**2
        lower_side = eq.name != "schrodinger" and emax < -mc2
        if lower_side:
            e_low = max(min(abs(emin + 2 * mc2), abs(emax + 2 * mc2)), 0.05 * scale) if emax < -2 * mc2 \
                else 0.05 * scale
            rate = _wavenumber(eq, -2 * mc2 - e_low) * math.sin(min(angles))
        elif emax < 0:
            rate = _wavenumber(eq, emax)
        else:
            e_low = emin if emin > 0 else 0.05 * scale
            rate = _wavenumber(eq, e_low) * math.sin(min(angles))
        r_max = r0 + max(_DECAY / max(rate, 1e-12), 6 * L)
    inner = min(h, L) / 64 if r0 > 0 else None
    return {"r0": float(r0), "r_max": float(r_max), "h": float(h), "h_out": float(h_out),
            "inner": inner, "natural_length": L}


def _check_size(plan: dict, per_element: int, r_max_given: bool, length_unit: str = "bohr") -> None:
    """Refuse, before any edge is laid, a mesh that cannot stay within _MAX_SIZE unknowns: the real
    segment needs at least R0 / h - 1 elements and the rotated one (r_max - R0) / h_out, which
    :func:`_edges` would lay one by one (4e11 of them for r_max = 1e12 bohr; an energy of 1e300
    hartree made h 1e-150 bohr and numpy's linspace gave up with 'Maximum allowed size exceeded'). A given r_max is quoted in
    ``length_unit``, the unit it was given in."""
    r0, r_max = plan["r0"], plan["r_max"]
    inner = r0 / plan["h"] - 1 if r0 > 0 else 0.0
    outer = (r_max - r0) / plan["h_out"]
    least = (max(inner, 0.0) + outer) * per_element
    if not least > _MAX_SIZE:
        return
    count = f"at least {least:.3g}" if math.isfinite(least) else "more than 1e308"
    if r_max_given and outer * per_element > _MAX_SIZE:
        head = (f"r_max: the scaled mesh out to r_max = {bohr_to(r_max, length_unit):.4g} {length_unit} needs "
                f"{count} unknowns, more than the limit of {_MAX_SIZE} of a dense eigenproblem; give a smaller ")
        raise OptionError(head + "r_max (or none: it is then set by the window)",
                          head + "--r-max (or none: it is then set by the window)")
    raise _window_too_big(count)


def _window_too_big(count) -> OptionError:
    """The refusal of a window whose mesh is too large; the command line names its options (it has --r0 and
    --r-max, and no element size)."""
    head = (f"window: the mesh for this window needs {count} unknowns, more than the limit of {_MAX_SIZE} of a "
            "dense eigenproblem; narrow the window, raise its lower end, or give ")
    return OptionError(head + "h, r0 and r_max", head + "--r0 and --r-max")


def _edges(plan: dict, pot) -> np.ndarray:
    r0, r_max = plan["r0"], plan["r_max"]
    h, h_out = plan["h"], plan["h_out"]
    if r0 > 0:
        edges = element_edges(r0, plan["inner"], h, pot.breakpoints)
    else:
        edges = np.array([0.0])
    # rotated part: sizes double from about R0 (the scale of a Coulomb field there) up to h_out
    size = min(h, h_out, r0) if r0 > 0 else min(h, h_out) / 64
    x, out = float(edges[-1]), [*edges]
    while x < r_max - 1e-12:
        x = min(x + size, r_max)
        if r_max - x < 0.3 * size:
            x = r_max
        out.append(x)
        size = min(2 * size, h_out)
    return np.asarray(out)


# ---------------------------------------------------------------------------------------------
# the public API
# ---------------------------------------------------------------------------------------------
def _complex_values():
    """The context in which user callables and expressions may return complex values."""
    from .potentials.base import complex_values

    return complex_values()


@inside(_complex_values)
def resonances(equation: str = "schrodinger", potential="coulomb", params: dict | None = None, *,
               window: tuple[float, float], l: int | None = None, kappa: int | None = None,
               angles: Sequence[float] = (0.25, 0.35), order: int = 12, r0: float | None = None,
               r_max: float | None = None, h: float | None = None, analytic: Callable | None = None,
               absorptive=None, absorptive_params: dict | None = None, tol: float = 1e-6,
               particle: str | None = None, mass_mev: float | None = None,
               nucleus_mass_mev: float | None = None, scalar=None, units: str = "atomic",
               energy_unit: str | None = None) -> ResonanceResult:
    """Resonances, bound and quasi-bound levels with Re E in ``window`` by complex scaling.

    Parameters
    ----------
    equation, potential, params, l, kappa, particle, mass_mev, nucleus_mass_mev, scalar, units
        As in :func:`boundkit.solve`. Callables may return complex values
        (a complex potential).
    window : (float, float)
        Range of the real part of the binding energy, in ``energy_unit``.
    angles : sequence of float
        Scaling angles theta in radians, 0 < theta < pi/2, at least two
        (default 0.25 and 0.35), one of them at least 0.05 rad from the
        first (the rotated continuum moves by about 2 |E| dtheta; closer
        angles let it pass the stability test).
    order : int
        Lobatto order of the elements (>= 6); the stability test also runs
        at ``order - 4`` (first angle only).
    r0, r_max, h : float, optional
        Start of the rotated segment, end of the mesh and element size (bohr, or fm with
        ``units='nuclear'``; the settings keep them in bohr);
        chosen from the potential and the window when omitted.
    analytic : callable or True, optional
        V(z) for complex z (bohr -> hartree) used on the rotated segment
        instead of the tail -Z_inf/z; with ``r0=0`` this is uniform scaling.
        ``True`` continues the potential itself, when every term is an
        expression free of ``abs`` and ``where`` or a Coulomb term (r0 then
        defaults to the last breakpoint, or 0: uniform scaling). Broad
        resonances (Gamma/2 of the order of E) need it: their outgoing wave
        grows like e^(|Im k| r) over an unscaled segment, which then has to
        reach as far as the potential does. The rotation sweeps the sector
        between the real axis and the rotated ray: V must have no poles or
        branch cuts there (a Woods-Saxon form has poles at R +- i pi a).
    absorptive, absorptive_params : optional
        Imaginary part W(r) of the vector potential, V = V_R + i W, given like
        ``potential`` (names, callables, terms) with its own parameters.
    tol : float
        Relative stability required of an eigenvalue over angles and orders.
    energy_unit : str, optional
        Unit of ``window``: by default that of the call's system, hartree (MeV with ``units='nuclear'``,
        as for :func:`boundkit.phase_shifts` and the command line). The settings keep the window in hartree.

    Returns
    -------
    ResonanceResult
        Frozen; energies and widths in hartree.

    Raises
    ------
    ValueError
        Bad window, angles, order or potential.

    Notes
    -----
    The eigenvalue is E - i Gamma/2 with E the binding energy; see the
    module docstring for the contour, the operators and the stability test.

    Examples
    --------
    >>> import numpy as np, boundkit
    >>> res = boundkit.resonances("schrodinger", lambda r: 7.5 * r**2 * np.exp(-r), window=(3, 4))
    >>> round(res.resonances[0].energy, 6), round(res.resonances[0].width, 6)
    (3.42639, 0.025549)
    """
    from .potentials import make_potential
    from .potentials.base import Term
    from .potentials.optical import ComplexCallableTerm, ImaginaryPart
    from .solver import setup

    e_unit = call_energy_unit(energy_unit, units)
    emin, emax = (check_finite("window", w) for w in _pair(window, e_unit))
    if not emin < emax:
        raise ValueError(f"window: need lower < upper, got ({emin:g}, {emax:g}) {e_unit}")
    emin, emax = emin / ENERGY_UNITS[e_unit], emax / ENERGY_UNITS[e_unit]      # hartree from here on
    angles = check_angles("angles", angles)
    order = check_int("order", order, minimum=6)
    tol = check_positive("tol", tol)
    lu = system_units(units)[1]          # r0, r_max and h are read in the call's length unit
    for name, v in (("r0", r0), ("r_max", r_max), ("h", h)):
        if v is not None:
            (check_finite if name == "r0" else check_positive)(name, v)
    if r0 is not None and r0 < 0:
        raise ValueError(f"r0: must be >= 0 {lu}, got {r0:g}")
    r0, r_max, h = (None if v is None else to_atomic(v, "bohr", units) for v in (r0, r_max, h))
    if r0 == 0 and analytic is None:
        raise OptionError("r0: r0 = 0 (uniform scaling) needs analytic=, the potential as a function of complex r",
                          "--r0: 0 (uniform scaling) needs --analytic, the potential continued to complex r")
    if analytic is not None and analytic is not True and not callable(analytic):
        raise ValueError("analytic: expected a callable V(z) of complex z, or True (continue the potential itself)")

    def wrap(spec):
        items = spec if isinstance(spec, (list, tuple)) else [spec]
        out = [ComplexCallableTerm(s) if callable(s) and not isinstance(s, (Term, type)) else s for s in items]
        return out if isinstance(spec, (list, tuple)) else out[0]

    eq, pot, settings = setup(equation, wrap(potential), params, l=l, kappa=kappa, particle=particle,
                              mass_mev=mass_mev, nucleus_mass_mev=nucleus_mass_mev,
                              scalar=None if scalar is None else wrap(scalar), units=units)
    if pot.has_spin_orbit:
        raise ValueError("potential: spin-orbit terms are not supported by resonances; set spin_orbit = 0")
    if absorptive is not None:
        imag = make_potential(absorptive, absorptive_params, units=units)
        pot = type(pot)(tuple(pot.vector) + tuple(ImaginaryPart(t) for t in imag.vector), pot.scalar)
        settings["absorptive"] = repr(imag)
    if analytic is True:
        pot.continued(np.array([1.0 + 1.0j]))      # refuses a term without a continuation, with its name
        analytic = pot.continued
        if r0 is None:
            r0 = max(pot.breakpoints, default=0.0)
    plan = _mesh_plan(eq, pot, (emin, emax), angles, analytic, r0, r_max, h)
    if plan["r_max"] <= plan["r0"]:
        raise ValueError(f"r_max: must exceed r0 = {bohr_to(plan['r0'], lu):.4g} {lu}")
    per_node = 1 if eq.name == "schrodinger" else 2
    _check_size(plan, order * per_node, r_max is not None, lu)
    edges = _edges(plan, pot)
    orders = (order - 4, order)
    size = (len(edges) - 1) * order * per_node
    if size > _MAX_SIZE:
        raise _window_too_big(size)
    t0 = time.perf_counter()

    ref: _Run | None = None

    def run(th, o, edges=edges, r0=plan["r0"], keep=False):
        nonlocal ref
        mesh = build_mesh(edges, o, r0, th)
        V, S = _sample(pot, mesh, analytic)
        M = _operator(eq, mesh, V, S)
        if keep:
            # the reference run, which the spurious test and the labels read again (its matrix only for Dirac,
            # whose spurious test reads it: the other equations' labels need the samples and the mesh alone)
            ref = _Run(V, S, mesh, M if eq.name == "dirac" else None)
        return M

    runs = [(th, order) for th in angles] + [(angles[0], orders[0])]
    spectra, failed = _spectra(runs, lambda key: run(*key, keep=key == runs[0]))
    if failed is not None:
        (th, o), exc = failed
        log.warning("complex eigen solve failed at theta = %g, order %d: %s", th, o, exc)
        return ResonanceResult((), False, "eig-failed", f"the dense complex eigen solve failed at theta = "
                               f"{th:g} rad, order {o} ({exc}); try other angles, r0 or r_max",
                               eq.name, pot.name, settings, constants_record(), _UNITS, {"unknowns": size})
    found, rejected, in_window, order_only = _stable(spectra, angles, orders, (emin, emax), tol, eq)
    spurious = 0
    if eq.name == "dirac" and found:
        with one_blas_thread():
            bad = ref.spurious(eq, [r.complex_energy for r in found])
        spurious = int(np.sum(bad))
        if spurious:
            log.info("dropped %d spurious Dirac solution(s) of the equal-order elements", spurious)
            found = _numbered([r for r, b in zip(found, bad) if not b])
    broad: list[Resonance] = []
    if order_only:
        scale = max(abs(emin), abs(emax))
        finer = _finer_check(eq, pot, analytic, plan, edges, angles, order, (emin, emax), tol, spectra, run)
        broad = [r for r in finer
                 if all(abs(r.complex_energy - f.complex_energy) > tol * max(abs(f.complex_energy), scale)
                        for f in found)]
        if broad:
            rejected -= len(broad)
            found = _numbered(sorted(found + broad, key=lambda r: r.energy))
    if any(r.kind in ("bound", "quasi-bound", "supercritical") for r in found):
        with one_blas_thread():
            found = _label_by_continuity(found, eq, edges, plan["r0"], angles, order, pot, analytic,
                                         (emin, emax), tol, spectra, ref)
    settings.update({"window_hartree": [emin, emax], "angles_rad": list(angles), "orders": list(orders),
                     "tol": tol, "r0_bohr": plan["r0"], "r_max_bohr": plan["r_max"], "elements": len(edges) - 1,
                     "element_size_bohr": plan["h"], "scaling": "uniform" if plan["r0"] == 0 else "exterior",
                     "exterior_potential": "analytic" if analytic is not None else "tail -Z_inf/z",
                     "unknowns": size})
    diagnostics = {"in_window": in_window, "stable": len(found), "rejected_as_continuum": rejected,
                   "checked_finer": len(broad), "spurious": spurious, "seconds": round(time.perf_counter() - t0, 3)}
    if eq.name == "klein-gordon" and any(r.kind == "supercritical" for r in found):
        log.warning("Klein-Gordon eigenvalues below -2 m c^2 are reported but not validated")
        diagnostics["note"] = ("Klein-Gordon states below -2 m c^2 (boson pair states) are not validated; "
                               "width = 2 |Im E| there")
    if found:
        status, message = "ok", (f"{len(found)} eigenvalue(s) stable to {tol:g} over theta = "
                                 f"{', '.join(f'{a:g}' for a in angles)} rad and orders {orders[0]}, {orders[1]}"
                                 + (f" ({len(broad)} broad: orders {order}, {order + 4} and R0 moved out by 20 %)"
                                    if broad else ""))
    else:
        status, message = "none-stable", (f"no eigenvalue with Re E in [{hartree_to(emin, e_unit):g}, "
                                          f"{hartree_to(emax, e_unit):g}] {e_unit} is stable to "
                                          f"{tol:g} over the angles and orders ({in_window} moved: rotated "
                                          "continuum); try larger angles or a wider window") + _slow_origin(eq, pot)
    if analytic is None and plan["r0"] * _wavenumber(eq, max(emax, 0.0)) > 20:
        # an unscaled segment of several wavelengths: on 7.5 r^2 exp(-r) (R0 = 35 bohr, k R0 = 130) the
        # resonances with Gamma/2 = 1.1 (l = 0), 1.05 (l = 2) and 2.0 hartree (l = 3) were missed
        message += (f"; broad resonances, whose outgoing wave grows over the unscaled segment (to R0 = "
                    f"{bohr_to(plan['r0'], lu):.3g} {lu}), can be missed: for an analytic potential use analytic=True (--analytic)")
    return ResonanceResult(tuple(found), True, status, message, eq.name, pot.name, settings, constants_record(),
                           _UNITS, diagnostics)


def _slow_origin(eq, pot) -> str:
    """A note for the none-stable message when a point charge makes the solution's origin law hard for the
    elements: u ~ r^s with the other Frobenius root less than one power away (2 s - 1 < 1, Klein-Gordon;
    2 gamma < 1, Dirac), '' otherwise.

    Notes
    -----
    The energy error of the elements then falls only like (r_1)^(2 s - 1) with the first element's size
    r_1: Klein-Gordon l = 0 at Z = 60 (s = 0.741) gave the 2s and 3s 1e-4 apart between runs and nothing
    stable; at Z = 20 (s = 0.978) they pass, with estimates that cover the error.
    """
    if eq.name == "schrodinger" or not (pot.z_vector or pot.z_scalar):
        return ""
    from .solver import _origin_gap

    s = float(eq.gamma(pot))
    if _origin_gap(s, eq.name == "dirac") >= 1:
        return ""
    return (f"; the solution goes like r^{s:.3g} at the point charge, which the elements resolve slowly (bound "
            "levels move between runs by more than tol): for bound levels use boundkit.solve (boundkit solve), or "
            "a finite nucleus (e.g. uniform-sphere)")


def _finer_check(eq, pot, analytic, plan, edges, angles, order, window, tol, spectra, run):
    """The stability test one step finer, for eigenvalues that are stable in theta but not against
    order - 4: the resonances it finds (none when the mesh would be too large, or a solve fails).

    Notes
    -----
    A broad resonance's outgoing wave grows over the whole unscaled segment up to R0, which order - 4
    resolves too coarsely: the barrier 7.5 r^2 exp(-r) has its l = 1 resonance at 4.6466 - 0.3253 i
    (order 12 right to 1e-8, order 8 off by 2e-4), and it was missed. Here order + 4 is solved at both
    angles and compared with this order. Raising the order alone let through eigenvalues of the
    unscaled segment [0, R0] ('box' states, stable in theta and order to 2e-3, twenty of them at tol
    1e-3), so a candidate must also be reproduced, at this order, with R0 and r_max moved out by
    0.2 R0: a box state's energy moves with its box, a resonance's does not; that change enters the
    estimates. Only resonances (above threshold) are taken from this check.
    """
    per_node = 1 if eq.name == "schrodinger" else 2
    moved = dict(plan, r0=1.2 * plan["r0"], r_max=plan["r_max"] + 0.2 * plan["r0"])
    edges_moved = _edges(moved, pot)
    if plan["r0"] == 0.0 or per_node * max((len(edges) - 1) * (order + 4), (len(edges_moved) - 1) * order) > _MAX_SIZE:
        return []
    keys = [(th, order + 4) for th in angles] + ["moved"]
    more, failed = _spectra(keys, lambda key: run(angles[0], order, edges_moved, moved["r0"]) if key == "moved"
                            else run(*key))
    if failed is not None:
        return []
    finer = {key: more[key] for key in keys[:-1]}
    finer[(angles[0], order)] = spectra[(angles[0], order)]
    found = _stable(finer, angles, (order, order + 4), window, tol, eq)[0]
    scale = max(abs(window[0]), abs(window[1]))
    kept = []
    for r in found:
        e = r.complex_energy
        m = complex(more["moved"][np.argmin(np.abs(more["moved"] - e))])
        if abs(m - e) > _threshold(finer[(angles[0], order + 4)], e, tol, scale) or r.kind != "resonance":
            continue
        # a broad resonance's energy moves with R0 (by 3.7e-10 for the l = 1 barrier resonance, beyond
        # its spreads over theta and order, 5e-11): the change enters its estimates (the value stays
        # the reference run's, as complex_energy and the runs say)
        kept.append(replace(r, energy_error=max(r.energy_error, abs(m.real - e.real)),
                            width_error=max(r.width_error, 2 * abs(m.imag - e.imag))))
    return kept


def _eigvals(M: np.ndarray) -> np.ndarray:
    """All eigenvalues of the dense matrix M (:func:`numpy.linalg.eigvals`: LAPACK's geev, run
    without the interpreter lock)."""
    return np.linalg.eigvals(M)


def _spectra(keys, build):
    """Eigenvalues of the matrices ``build(key)`` for each key: ``({key: eigenvalues}, None)``, or
    ``(partial, (key, exception))`` for the first key (in order) whose eigen solve failed (errors
    raised by ``build``, such as a potential that is not finite, propagate).

    Each solve is a dense complex ``zgeev`` (:func:`numpy.linalg.eigvals`, which releases the
    interpreter lock) with one BLAS thread; up to one solve per core runs at once, in threads. The
    matrices are built here, in the calling thread (user callables run in its context, which lets
    them return complex values), only as a thread becomes free, so no more than one matrix per
    thread is held at a time. Each eigenvalue set is that of a single-threaded solve of its matrix:
    the same whatever the number of threads.
    """
    workers = max(1, min(len(keys), usable_cores()))
    out, errors = {}, {}
    # one BLAS thread per solve: on a shared 2-core machine a threaded dense eig ran 6x slower
    # (measured); the parallelism is across solves instead
    with one_blas_thread(), ThreadPoolExecutor(max_workers=workers) as pool:
        pending, todo = {}, list(keys)
        while todo or pending:
            while todo and len(pending) < workers:
                key = todo.pop(0)
                pending[pool.submit(_eigvals, build(key))] = key      # build's own errors propagate
            done, _ = wait(pending, return_when=FIRST_COMPLETED)
            for fut in done:
                key = pending.pop(fut)
                try:
                    out[key] = fut.result()
                except (np.linalg.LinAlgError, ValueError) as exc:
                    errors[key] = exc
    out = {key: out[key] for key in keys if key in out}          # in the order of keys, not of completion
    for key in keys:
        if key in errors:
            return out, (key, errors[key])
    return out, None


def _pair(window, unit: str = "hartree") -> tuple:
    try:
        a, b = window
    except (TypeError, ValueError):
        raise ValueError(f"window: expected (lower, upper) in {unit}, got {window!r}") from None
    return a, b


def _label_by_continuity(found, eq, edges, r0, angles, order, pot, analytic, window, tol, spectra, ref):
    """Name bound, quasi-bound and dived levels after the real-limit level they continue.

    The real limit keeps Re V (and Re S) on the real segment. Its levels are the eigenvalues that
    do not move between the first two angles: real ones below threshold and, for the relativistic
    equations, dived ones below -2 m c^2 (complex, deepest of all). Counted from the bottom, the
    k-th is n = k + l (1s, 2p1/2, ...). Each is followed to the full potential V_R + i lam W,
    lam = 0 -> 1 in 8 steps, by Rayleigh-quotient inverse iteration, and names the stable
    eigenvalue it arrives at. A level whose path arrives nowhere keeps its generic label; a level
    the mesh cannot resolve (far below the window) is missed by the count, which shifts n. Spurious
    Dirac solutions (:func:`_spurious`) are not counted.

    ``ref`` is the reference run of ``spectra`` (first angle, this order), :class:`_Run`. Without an
    absorptive part the real limit is that run, whose eigenvalues and spurious verdicts are read as
    they are; with one, the real limit's three runs are solved here.
    """
    V, S, ext = ref.V, ref.S, ref.mesh.exterior
    # the physical imaginary part lives on the real segment (R0 lies beyond it); on the rotated
    # segment the tail is complex only through z and stays as it is
    WV = np.where(ext, 0.0, V.imag)
    WS = np.where(ext, 0.0, S.imag)
    absorbing = bool(np.any(WV) or np.any(WS))
    V, S = V - 1j * WV, S - 1j * WS       # the real limit (_real_limit), from the parts just taken
    limit = ref
    if absorbing:
        mesh0 = ref.mesh
        limit = _Run(V, S, mesh0)

        def build(k):
            if k == 0:
                M = _operator(eq, mesh0, V, S)
                if eq.name == "dirac":
                    limit.M = M                # read again by the spurious test
                return M
            th, o = (angles[1], order) if k == 1 else (angles[0], order - 4)
            m = build_mesh(edges, o, r0, th)
            return _operator(eq, m, *_real_limit(*_sample(pot, m, analytic), m.exterior))

        got, failed = _spectra([0, 1, 2], build)
        if failed is not None:
            raise failed[1]
        E1, E2, E3 = (got[k] for k in range(3))
    else:
        E1, E2, E3 = spectra[(angles[0], order)], spectra[(angles[1], order)], spectra[(angles[0], order - 4)]
    scale = max(abs(window[0]), abs(window[1]))
    mc2 = eq.mass * C_AU**2
    lower = -2 * mc2 if eq.name != "schrodinger" else -np.inf
    thr = tol * np.maximum(np.abs(E1), scale)
    moved = np.array([np.min(np.abs(E2 - e)) for e in E1])
    steady = moved <= thr
    # a level is counted when it moves far less with theta than the rotated continuum does (about
    # 2 |E| dtheta >= 0.1 |E|), even where it misses tol: a Klein-Gordon 1s at a point charge Z = 20
    # (u ~ r^0.978, resolved to 1e-4 by the elements) moved by 2.6e-4 |E|, was not counted, and the 2s
    # was named '1s' (status ok)
    loose = np.maximum(thr, _COUNT_SHARE * np.abs(E1))
    bound = (moved <= loose) & (E1.real < 0) & (E1.real > lower) & (np.abs(E1.imag) <= loose)
    # dived levels must also survive the change of order (states of very large kinetic energy held
    # in the small unscaled elements near the origin do not move with theta either) and lie above
    # the bottom of the well; a point Coulomb charge (finite gamma needs Z alpha < |kappa|) dives none
    finite = pot.z_vector == 0.0 and pot.z_scalar == 0.0
    floor = float(np.min((V + S).real[~ext])) if np.any(~ext) else -np.inf
    dived = steady & (E1.real < lower) & (E1.real > floor) & finite
    dived[dived] = np.array([np.min(np.abs(E3 - e)) for e in E1[dived]]) <= thr[dived]
    levels = E1[bound | dived]
    levels = levels[np.argsort(levels.real)]
    levels = levels[levels.real <= window[1] + 0.5 * (window[1] - window[0])]
    if eq.name == "dirac" and levels.size:
        # a spurious solution of the elements (see _spurious) is no level: counted, it raised every n by one
        levels = levels[~limit.spurious(eq, levels)]
    targets = {i: r for i, r in enumerate(found) if r.kind in ("bound", "quasi-bound", "supercritical")}
    labels: dict[int, str] = {}
    arrived = [complex(e) for e in levels]
    for lam in np.linspace(0.0, 1.0, 9)[1:] if absorbing else ():
        # one matrix per step, for every level (held no longer: the next step's is built without it)
        M = _operator(eq, limit.mesh, V + 1j * lam * WV, S + 1j * lam * WS)
        arrived = [_follow_one(M, e) for e in arrived]
        del M
    for k, e in enumerate(arrived):
        for i, r in targets.items():
            if i not in labels and abs(e - r.complex_energy) <= tol * max(abs(e), scale):
                labels[i] = eq.label(k + 1 + eq.l)
    return [replace(r, label=labels[i]) if i in labels else r for i, r in enumerate(found)]


def _real_limit(V, S, exterior):
    """V and S without their imaginary part on the real segment (the tail keeps its complex z)."""
    return V - 1j * np.where(exterior, 0.0, V.imag), S - 1j * np.where(exterior, 0.0, S.imag)


def _follow_one(M: np.ndarray, e: complex, steps: int = 6) -> complex:
    """The eigenvalue of M nearest to e, by Rayleigh-quotient inverse iteration."""
    n = M.shape[0]
    x = np.ones(n, dtype=complex) / math.sqrt(n)
    for it in range(steps):
        with warnings.catch_warnings():
            warnings.simplefilter("ignore", sla.LinAlgWarning)   # near-singular is the point here
            try:
                y = sla.solve(M - e * np.eye(n), x, check_finite=False)
            except (sla.LinAlgError, ValueError):
                break
        x = y / np.linalg.norm(y)
        e_new = complex(np.vdot(x, M @ x))
        if abs(e_new - e) <= 1e-14 * max(1.0, abs(e)) and it > 0:
            return e_new
        e = e_new
    return e


def _numbered(found: list[Resonance]) -> list[Resonance]:
    """The levels labelled by kind and count in the given order (``resonance 1``, ``bound 2``, ...)."""
    count: dict[str, int] = {}
    out = []
    for r in found:
        count[r.kind] = count.get(r.kind, 0) + 1
        out.append(replace(r, label=f"{r.kind} {count[r.kind]}"))
    return out


def _threshold(ref: np.ndarray, e: complex, tol: float, scale: float) -> float:
    """How far another run's eigenvalue may lie from the eigenvalue e of the spectrum ``ref`` for
    e to count as stable: tol max(|e|, window scale), and at most _GAP_SHARE of e's distance to its
    nearest neighbour in ``ref``.

    The nearest eigenvalue of another run is e's own partner only while it is far closer than e's
    neighbours are: in the dense rotated continuum a loose tol otherwise matched each point with a
    neighbour of its turned partner, and let every continuum point of small |E| through (at a
    quarter of the distance, a few still passed by chance; a resonance's spreads are orders of
    magnitude below its distance to the continuum whatever tol is)."""
    near = np.abs(ref - e)
    near = near[near > 0]
    return min(tol * max(abs(e), scale), _GAP_SHARE * float(near.min()) if near.size else math.inf)


def _stable(spectra, angles, orders, window, tol, eq):
    """Eigenvalues of the reference run that every other run reproduces (step 3 of the module):
    ``(found, rejected, candidates in the window, rejected by the lower order alone)``."""
    emin, emax = window
    ref_key = (angles[0], orders[-1])
    ref = spectra[ref_key]
    scale = max(abs(emin), abs(emax))
    mc2 = eq.mass * C_AU**2
    cand = ref[(ref.real >= emin) & (ref.real <= emax) & np.isfinite(ref)]
    found, rejected, order_only = [], 0, 0
    # the relativistic matrices carry -2 m c^2 on their diagonal (37558 hartree for an electron) beside
    # binding energies of ~1: each run's eigenvalues round at a few ulp of 2 m c^2, and the spread between
    # runs samples the reference run's own share only in part (hydrogen 1s1/2, orders 10 to 16: the
    # reference off by up to 4 ulp of 2 m c^2 while the spread showed 1 to 3; 1.4e-11 off, estimate 9.4e-12)
    floor = float(rounding_floor(2 * mc2)) if eq.name != "schrodinger" else 0.0
    for e in sorted(cand, key=lambda v: v.real):
        runs = [(angles[0], orders[-1], complex(e))]
        dist_theta, dist_order, dre, dim = 0.0, 0.0, 0.0, 0.0
        for key, spec in spectra.items():
            if key == ref_key:
                continue
            other = spec[np.argmin(np.abs(spec - e))]
            runs.append((key[0], key[1], complex(other)))
            d = abs(other - e)
            if key[1] == orders[-1]:
                dist_theta = max(dist_theta, d)
            else:
                dist_order = max(dist_order, d)
            dre, dim = max(dre, abs(other.real - e.real)), max(dim, abs(other.imag - e.imag))
        thr = _threshold(ref, e, tol, scale)
        if max(dist_theta, dist_order) > thr:
            rejected += 1
            order_only += dist_theta <= thr
            continue
        supercritical = eq.name != "schrodinger" and e.real < -2 * mc2
        width = 2 * abs(e.imag) if supercritical else -2 * e.imag
        if supercritical:
            kind = "supercritical"
        elif e.real >= 0:
            kind = "resonance"
        elif abs(e.imag) <= max(4 * dim, 1e-12 * max(abs(e), scale)):
            kind, width = "bound", 0.0
        else:
            kind = "quasi-bound"
        found.append(Resonance(label=kind, kind=kind,
                               energy=float(e.real), width=float(width), energy_error=float(dre + floor),
                               width_error=float(2 * (dim + floor)), theta_spread=float(dist_theta),
                               order_spread=float(dist_order), runs=tuple(runs)))
    return _numbered(found), rejected, int(len(cand)), order_only
