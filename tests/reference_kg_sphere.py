"""Klein-Gordon s, p, ... levels of a uniformly charged sphere, in mpmath (an independent reference).

Atomic units (hbar = m_e = e = 1, c = 1/alpha), a particle of mass m, total energy W = E + m c^2
(E the binding energy boundkit reports), vector potential V only. The radial equation
(W - V)^2 u = -c^2 u'' + c^2 l(l+1)/r^2 u + m^2 c^4 u reads

    u'' = [l(l+1)/r^2 + Q(r)] u,    Q(r) = (m^2 c^4 - (W - V(r))^2) / c^2.

Inside the sphere (r <= R), V = -Z (3 - r^2/R^2) / (2R), so W - V = A + B r^2 with A = W + 3Z/(2R),
B = -Z/(2R^3), and Q = q0 + q2 r^2 + q4 r^4 with q0 = (m^2c^4 - A^2)/c^2, q2 = -2AB/c^2, q4 = -B^2/c^2.
The solution regular at the origin is u = sum_j a_j r^(j+l+1), a_0 = 1, odd a_j = 0 and

    a_j j (j + 2l + 1) = q0 a_(j-2) + q2 a_(j-4) + q4 a_(j-6)

(substitute the series: the left side is u'' - l(l+1)/r^2 u term by term). Q is a polynomial, so the
series is entire; it is summed until a term falls below 10^-(dps+5) of the sum.

Outside (r >= R), V = -Z/r and (W + Z/r)^2 = W^2 + 2WZ/r + Z^2/r^2, so

    u'' = [(l(l+1) - (Z/c)^2)/r^2 - 2WZ/(c^2 r) + k^2] u,    k^2 = (m^2c^4 - W^2)/c^2 > 0.

With x = 2 k r (u_rr = 4 k^2 u_xx) this is u_xx = [1/4 - W Z/(c^2 k x) + (l(l+1) - (Z/c)^2)/x^2] u,
Whittaker's equation w'' + (-1/4 + kw/x + (1/4 - mu^2)/x^2) w = 0 with

    kw = W Z / (c^2 k),    mu^2 = (l + 1/2)^2 - (Z/c)^2

(Whittaker & Watson, A Course of Modern Analysis, ch. 16; DLMF 13.14.1). The solution that decays at
infinity is W_{kw,mu}(2kr) (DLMF 13.14.21); for Z/c > l + 1/2, mu is imaginary, and W_{kw,mu} = W_{kw,-mu}
is still real on the positive axis (mpmath returns it with a vanishing imaginary part, which
:func:`whittaker_residual` checks is below 10^-(dps-5)). Its derivative comes from
z W'_{k,mu}(z) = (z/2 - k) W_{k,mu}(z) - W_{k+1,mu}(z) (DLMF 13.15.23), checked against mpmath.diff.

A level is a zero of the Wronskian u_in'(R) w(R) - u_in(R) w'(R), each side scaled by its own
magnitude. For a point charge the regular solution near the origin is the Frobenius series
u = r^s sum b_j r^j, s = 1/2 + mu, b_j [(s+j)(s+j-1) - l(l+1) + (Z/c)^2] = -2WZ/c^2 b_(j-1) + k^2 b_(j-2),
and matching it to W_{kw,mu} at any radius must give the closed-form levels
W = m c^2 [1 + (Z/c)^2 / (n_r + 1/2 + mu)^2]^(-1/2) (kw = n_r + mu + 1/2: from kw = W Z/(c^2 k),
W^2 (Z/c)^2 = kw^2 (m^2 c^4 - W^2)); :func:`point_coulomb_level` does that, the check of the exterior
half and of the root finding.

Inputs are taken as the exact binary values of the floats boundkit uses: c = boundkit.units.C_AU
(1/alpha rounded to a double), R = sqrt(5/3) r_rms / FM_PER_BOHR computed in double as
UniformSphere does (read from the term itself), and m = 1 for the electron (mass_mev / mass_mev).
"""
from __future__ import annotations

import mpmath as mp

__all__ = ["sphere_level", "point_coulomb_level", "interior_residual", "whittaker_residual"]

DPS = 40


def _consts(E, Z, c, mass):
    c = mp.mpf(c)
    mc2 = mp.mpf(mass) * c * c
    W = mc2 + mp.mpf(E)
    k = mp.sqrt(-mp.mpf(E) * (2 * mc2 + mp.mpf(E))) / c        # m^2c^4 - W^2 = -E (2 m c^2 + E)
    return c, mc2, W, k


def _exterior(E, Z, c, mass, l, r):
    """(w, dw/dr) of the decaying exterior solution W_{kw,mu}(2kr), real parts."""
    c, mc2, W, k = _consts(E, Z, c, mass)
    Z = mp.mpf(Z)
    kw = W * Z / (c * c * k)
    mu = mp.sqrt(mp.mpf(l) ** 2 + l + mp.mpf(1) / 4 - (Z / c) ** 2 + 0j)
    x = 2 * k * mp.mpf(r)
    w = mp.whitw(kw, mu, x)
    dw = ((x / 2 - kw) * w - mp.whitw(kw + 1, mu, x)) / x * 2 * k
    return mp.re(w), mp.re(dw)


def _sphere_interior(E, Z, R, c, mass, l, r):
    """(u, du/dr) of the regular interior series at r <= R."""
    c, mc2, W, _ = _consts(E, Z, c, mass)
    Z, R, r = mp.mpf(Z), mp.mpf(R), mp.mpf(r)
    A = W + 3 * Z / (2 * R)
    B = -Z / (2 * R**3)
    q = {0: (mc2 * mc2 - A * A) / (c * c), 2: -2 * A * B / (c * c), 4: -B * B / (c * c)}
    a = {0: mp.mpf(1)}
    u = mp.mpf(0)
    du = mp.mpf(0)
    j = 0
    tiny = mp.mpf(10) ** (-(mp.mp.dps + 5))
    small = 0
    while True:
        if j > 0:
            a[j] = sum(q[s] * a.get(j - 2 - s, 0) for s in (0, 2, 4)) / (j * (j + 2 * l + 1))
        term = a[j] * r ** (j + l + 1)
        u += term
        du += (j + l + 1) * a[j] * r ** (j + l)
        small = small + 1 if abs(term) < tiny * abs(u) else 0
        if small >= 3 or j > 4000:
            return u, du
        j += 2


def _coulomb_interior(E, Z, c, mass, l, r, terms=400):
    """(u, du/dr) of the regular Frobenius solution of the point-Coulomb equation (mu real)."""
    c, mc2, W, k = _consts(E, Z, c, mass)
    Z, r = mp.mpf(Z), mp.mpf(r)
    mu = mp.sqrt((l + mp.mpf(1) / 2) ** 2 - (Z / c) ** 2)
    s = mp.mpf(1) / 2 + mu
    b = [mp.mpf(1)]
    for j in range(1, terms):
        prev2 = b[j - 2] if j >= 2 else 0
        b.append((-2 * W * Z / (c * c) * b[j - 1] + k * k * prev2) / ((s + j) * (s + j - 1) - l * (l + 1) + (Z / c) ** 2))
    u = sum(bj * r ** (s + j) for j, bj in enumerate(b))
    du = sum((s + j) * bj * r ** (s + j - 1) for j, bj in enumerate(b))
    return u, du


def _mismatch(inner, outer):
    (u, du), (w, dw) = inner, outer
    return (du * w - u * dw) / (abs(u * dw) + abs(du * w))


def _root(f, E0, rel):
    """The zero of f in E0 (1 +- rel), after checking the sign change that brackets it."""
    lo, hi = mp.mpf(E0) * (1 + rel), mp.mpf(E0) * (1 - rel)      # E0 < 0: lo < hi
    flo, fhi = f(lo), f(hi)
    if flo * fhi > 0:
        raise ValueError(f"no sign change of the matching in [{mp.nstr(lo, 20)}, {mp.nstr(hi, 20)}]")
    return mp.findroot(f, (lo, hi), solver="anderson", tol=mp.mpf(10) ** (-2 * mp.mp.dps + 10))


def sphere_level(Z, R, c, E0, l=0, mass=1.0, rel=1e-9, dps=DPS):
    """Binding energy (hartree, mpf) of the level of the uniform sphere (charge Z, radius R bohr) nearest E0,
    the zero of the matching bracketed in E0 (1 +- rel)."""
    with mp.workdps(dps):
        def f(E):
            return _mismatch(_sphere_interior(E, Z, R, c, mass, l, R), _exterior(E, Z, c, mass, l, R))
        return _root(f, E0, rel)


def point_coulomb_level(Z, c, E0, r0, l=0, mass=1.0, rel=1e-3, dps=DPS):
    """Point-Coulomb level nearest E0 by the same matching (Frobenius series inside r0, Whittaker outside)."""
    with mp.workdps(dps):
        def f(E):
            return _mismatch(_coulomb_interior(E, Z, c, mass, l, r0), _exterior(E, Z, c, mass, l, r0))
        return _root(f, E0, rel)


def interior_residual(E, Z, R, c, l=0, mass=1.0, dps=DPS):
    """max |u'' - (l(l+1)/r^2 + Q) u| / |Q u| of the interior series at r = R/3, 2R/3, R (mpmath.diff)."""
    with mp.workdps(dps):
        c_, mc2, W, _ = _consts(E, Z, c, mass)
        worst = mp.mpf(0)
        for r in (mp.mpf(R) / 3, 2 * mp.mpf(R) / 3, mp.mpf(R)):
            V = -mp.mpf(Z) * (3 - (r / R) ** 2) / (2 * mp.mpf(R))
            Q = l * (l + 1) / r**2 + (mc2 * mc2 - (W - V) ** 2) / (c_ * c_)
            u = _sphere_interior(E, Z, R, c, mass, l, r)[0]
            d2 = mp.diff(lambda x: _sphere_interior(E, Z, R, c, mass, l, x)[0], r, 2)
            du_series = _sphere_interior(E, Z, R, c, mass, l, r)[1]
            du_num = mp.diff(lambda x: _sphere_interior(E, Z, R, c, mass, l, x)[0], r, 1)
            worst = max(worst, abs(d2 - Q * u) / abs(Q * u), abs(du_series - du_num) / abs(du_num))
        return worst


def whittaker_residual(E, Z, c, r, l=0, mass=1.0, dps=DPS):
    """Checks of the exterior solution at r: max of |w'' - (exterior coefficient) w| / |coefficient w|,
    |w' (DLMF 13.15.23) - w' (mpmath.diff)| / |w'| and |Im w| / |w|."""
    with mp.workdps(dps):
        c_, mc2, W, k = _consts(E, Z, c, mass)
        Zm = mp.mpf(Z)
        coef = (l * (l + 1) - (Zm / c_) ** 2) / mp.mpf(r) ** 2 - 2 * W * Zm / (c_ * c_ * r) + k * k
        w, dw = _exterior(E, Z, c, mass, l, r)
        kw = W * Zm / (c_ * c_ * k)
        mu = mp.sqrt(mp.mpf(l) ** 2 + l + mp.mpf(1) / 4 - (Zm / c_) ** 2 + 0j)
        raw = mp.whitw(kw, mu, 2 * k * mp.mpf(r))
        d1 = mp.diff(lambda x: mp.re(mp.whitw(kw, mu, 2 * k * x)), mp.mpf(r), 1)
        d2 = mp.diff(lambda x: mp.re(mp.whitw(kw, mu, 2 * k * x)), mp.mpf(r), 2)
        return max(abs(d2 - coef * w) / abs(coef * w), abs(dw - d1) / abs(d1), abs(mp.im(raw)) / abs(raw))
