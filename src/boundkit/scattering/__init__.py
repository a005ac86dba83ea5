"""Continuum states above threshold: phase shifts, scattering length, Levinson's theorem.

Equations. Every equation of :mod:`boundkit.equations` is used in its
factorized form at a kinetic energy E > 0 (total minus rest energy):

    -(d/dr - kappa/r) p(r, E) (d/dr + kappa/r) u + (q(r, E) - E) u = 0,

Schrodinger (p = 1/2m, q = V + S), Klein-Gordon (q = V + S + (S^2 -
(E - V)^2)/(2 m c^2)) and Dirac for the large component P (p = c^2 / (E +
2 m c^2 - V + S), q = V + S, kappa the Dirac kappa). The wave number comes
from E_total^2 = (p c)^2 + (m c^2)^2 written with E:

    k^2 = 2 m E (Schrodinger),   k^2 c^2 = E (E + 2 m c^2) (Klein-Gordon, Dirac).

Far out, V -> 0 or V -> -Z_t/r, and

    u(r) ~ C sin(k r - eta ln(2 k r) - l pi/2 + theta + delta),

with eta the Sommerfeld parameter and theta the Coulomb phase of the tail
(eta = theta = 0 for a short-range potential; for Schrodinger
theta = sigma_l = arg Gamma(l + 1 + i eta), for Klein-Gordon and Dirac the
relativistic phase that tends to it as c -> infinity); delta is the phase
shift, relative to the Coulomb one when there is a Coulomb tail.

Method.

1. The regular solution is integrated outward in t = ln r from the Frobenius
   behaviour u ~ r^gamma (1 + c r^m) at a small radius (or from u = 0 at a hard core), as
   a first-order system for (u, p (u' + kappa u / r)) with scipy's DOP853 at
   tight tolerance, piece by piece between the potential's breakpoints
   (:mod:`.radial`).
2. It is matched at a radius R beyond the range of the short-range part
   (where a first-order bound on the phase change from the rest is below
   tol/100) to the regular and irregular solutions of the tail: Riccati-Bessel
   functions (scipy), Coulomb functions F_L, G_L (mpmath; non-integer L for
   Klein-Gordon) or the closed-form Dirac-Coulomb functions of the Mott
   problem (mpmath 1F1) (:mod:`.reference`).
3. The integer part of delta comes from the node count of u (a Pruefer
   angle) compared with that of the tail's regular solution (counted exactly
   for Riccati-Bessel functions, by integrating the point-Coulomb equation the
   same way for a Coulomb tail), so delta is absolute: continuous in E. For a
   short-range potential it tends to 0 at high energy (Schrodinger) and
   delta(0) = n pi with n bound levels (Levinson's theorem, checked by
   :func:`levinson`).
   A small phase with a free tail (delta_l ~ k^(2l+1) at low energy) is not read from u(R) and
   u'(R): there u differs from the free regular solution F only by ~ delta / (k R)^(2l+1), and the
   digits cancelled (a hard sphere's l = 20 phase at 1e-8 hartree was 1e11 times too large). The
   integration carries the Wronskian Omega = F w - u w_F, whose derivative
   w w_F (1/p_F - 1/p) + F u (q - q_F) vanishes where V does, so beta = -Omega / (k p_F) is
   accumulated where the potential acts (or is F(a) w(a) at a hard core), with F kept as a
   logarithm (no underflow); it is used where the integral of |Omega'| is below 0.1 of the
   amplitude. Such a delta has relative accuracy: the matching radius also makes the first-order
   bound of partial wave l beyond it (weight min((k r)^(2l+2) / ((2l+1)!!)^2, ...)) below tol/100
   of its own total, and the estimate's bound beyond 1.25 R and its floor are relative to delta.
   Below about 1e-290 rad delta leaves the double range; a delta whose estimate is as large as
   itself is named in the message ("no relative accuracy") and in
   ``diagnostics['no_relative_accuracy_hartree']``.
4. The error estimate adds the cut of the potential at R (the change of
   delta read at 1.25 R in the same run, plus the first-order bound on the
   rest beyond 1.25 R) and the integration's error (the change when the
   tolerance actually used, never below DOP853's floor of 3e-14, is loosened
   30 times and the start moved 10 times further out); never below that
   tolerance itself. Each piece between
   breakpoints samples the potential 64 ulp inside its ends, so that it
   sees its own side of a jump. A tabulated potential adds its interpolation
   and origin-model error, to first order (d delta = -(1/(p k)) integral
   [dp (D u)^2 + dq u^2] dr; :mod:`.tables`), to the phase shifts, the
   scattering length and the Schrodinger effective range, as a solve does to
   its levels.
5. The s-wave scattering length comes from the zero-energy solution,
   u = C (r - a) beyond the range, with k cot delta_0 = -1/a + r_e k^2/2;
   the effective range from Bethe's integral
   r_e = 2 integral [(1 - r/a)^2 - u^2] dr.

Results are frozen objects (:mod:`.results`) carrying their units.
"""
from __future__ import annotations

from .phases import continuum_state, levinson, phase_shifts, scattering_length
from .reference import sommerfeld, wave_number
from .results import ContinuumState, LevinsonCheck, PhaseShifts, ScatteringLength

__all__ = ["phase_shifts", "scattering_length", "levinson", "continuum_state", "wave_number", "sommerfeld",
           "PhaseShifts", "ScatteringLength", "LevinsonCheck", "ContinuumState"]
