"""Accuracy studies: convergence with resolution, and two-family cross-checks.

The error estimate attached to every level is described in
:mod:`boundkit.solver` (successive resolutions; Richardson extrapolation for
finite differences). This module lets a user check a method on their own
potential: :func:`converge` tabulates energies against resolution for one or
both families and measures the observed order; a cross-check solves
with both families and reports their per-level agreement (the
``cross_check=True`` option of :func:`boundkit.solve`).
"""
from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np

from ._threads import one_blas_thread
from .discretize import FiniteDifference, get_method
from .solver import check_levels, prepare_channel, setup, solve_channel
from ._checks import MAX_LEVELS, check_int, check_positive

__all__ = ["converge", "ConvergenceResult", "observed_order"]

SPECTRAL_FAMILIES = ("spectral", "laguerre-mesh")   # faster than any power: local slopes, not one order

DEFAULT_SIZES = {
    # the spectral family's sizes are element degrees (the layout fixes the number of elements)
    "spectral": (4, 6, 8, 10, 12, 15, 18, 21, 24, 28, 32),
    "finite-difference": (100, 141, 200, 283, 400, 566, 800, 1131, 1600),
    # the Lagrange-Laguerre path's sizes are its numbers of nodes
    "laguerre-mesh": (8, 12, 16, 20, 26, 32, 40, 50, 62, 78),
}


def observed_order(sizes, errors, floor: float = 1e-13) -> float:
    """Least-squares slope of -log(error) against log(size), ignoring points
    at the rounding floor (relative error below ``floor``). NaN if fewer than
    three points remain."""
    sizes, errors = np.asarray(sizes, float), np.asarray(errors, float)
    ok = errors > floor
    if np.count_nonzero(ok) < 3:
        return math.nan
    slope = np.polyfit(np.log(sizes[ok]), np.log(errors[ok]), 1)[0]
    return float(-slope)


@dataclass(frozen=True)
class ConvergenceResult:
    """Energies of each level against resolution, per discretization family.

    ``rows`` hold dicts with keys method, size, label, energy (hartree),
    error (relative, against ``reference``), difference (relative change from
    the previous size). ``orders`` maps (method, label) to the observed order
    (log-log slope); for the spectral family ``local_orders`` lists the local
    slopes between successive sizes, which grow when convergence is faster
    than any power. ``reference_status`` and ``reference_message`` are those of the
    reference solve (``'tolerance-not-met'`` when ``tol`` lies below what it can reach).
    """

    equation: str
    potential: str
    reference: dict
    rows: list
    orders: dict
    local_orders: dict
    settings: dict = field(default_factory=dict)
    reference_status: str = "ok"
    reference_message: str = ""

    def table(self, energy_unit: str = "hartree") -> str:
        """The rows and observed orders as text, energies in ``energy_unit``."""
        from .units import energy_unit as canonical_unit, hartree_to

        unit = canonical_unit(energy_unit)
        head = f"energy ({unit})"
        lines = [f"{'method':<18} {'size':>6} {'level':<8} {head:>24} {'rel. error':>11} "
                 f"{'rel. change':>11}"]
        for r in self.rows:
            lines.append(f"{r['method']:<18} {r['size']:>6} {r['label']:<8} {hartree_to(r['energy'], unit):>24.16g} "
                         f"{r['error']:>11.2e} {r['difference']:>11.2e}")
        lines.append("")
        for (m, label), order in self.orders.items():
            extra = ""
            if m in SPECTRAL_FAMILIES:
                loc = [f"{x:.1f}" for x in self.local_orders.get((m, label), [])]
                extra = f"  local slopes {', '.join(loc)}"
            lines.append(f"observed order {m:<18} {label:<8} {order:6.2f}{extra}")
        return "\n".join(lines)

    def to_dict(self, energy_unit: str = "hartree") -> dict:
        """JSON-ready record: energies in ``energy_unit``; ``error`` and ``difference`` are relative."""
        from .units import energy_unit as _unit, hartree_to

        eu = _unit(energy_unit)
        rows = [{**r, "energy": float(hartree_to(r["energy"], eu))} for r in self.rows]
        return {"equation": self.equation, "potential": self.potential,
                "units": {"energy": eu, "error": "relative (unitless)", "difference": "relative (unitless)",
                          "size": "nodes"},
                "reference": {k: float(hartree_to(v, eu)) for k, v in self.reference.items()},
                "rows": rows, "orders": {f"{m}:{lab}": v for (m, lab), v in self.orders.items()},
                "settings": self.settings,
                "reference_status": self.reference_status, "reference_message": self.reference_message}


def converge(equation: str = "schrodinger", potential=None, params: dict | None = None, *,
             l: int | None = None, kappa: int | None = None, levels: int = 1,
             methods=("spectral", "finite-difference"), order: int | None = None, sizes: dict | None = None,
             tol: float = 1e-13, max_levels: int = MAX_LEVELS, **kwargs) -> ConvergenceResult:
    """Convergence study of one channel.

    The spectral family is studied on spectral elements on a fixed layout
    (``sizes["spectral"]`` are element degrees and the rows give the number of
    nodes); when :func:`boundkit.solve` takes the channel (a Schrodinger one)
    to one Lagrange-Laguerre matrix (:mod:`boundkit.laguerre_solver`, its
    ``diagnostics["mesh"]``), that mesh is studied too, as method
    ``laguerre-mesh`` with ``sizes["laguerre-mesh"]`` nodes on one scale;
    finite differences solve each level on
    its own fixed mesh at every size;
    the reference is a spectral solve at relative tolerance ``tol`` (default
    1e-13, near the rounding floor, so that the errors measured against it are
    the discretization's; a tol the reference cannot reach is reported in
    ``reference_status``, as :func:`boundkit.solve` reports it; with a table in the potential the errors
    are those of solving its interpolant, and the reference's estimate, status and message hold the
    table's own interpolation error). Equation, potential, params, l, kappa and levels
    mean what they mean for :func:`boundkit.solve`; ``kwargs`` are passed to
    the argument setup (particle, mass_mev, nucleus_mass_mev, scalar, units).
    ``levels`` is at most ``max_levels`` (:data:`boundkit._checks.MAX_LEVELS`, as for
    :func:`boundkit.solve`). ``order`` is that of the finite differences (default 8), refused when
    ``methods`` has no finite-difference family. Returns a :class:`ConvergenceResult`.
    """
    check_levels(check_int("levels", levels, minimum=1), max_levels)     # a number: no 'all' here
    if order is not None and "finite-difference" not in tuple(methods):
        raise ValueError("order: only the finite-difference method takes an order; drop it, or add "
                         "'finite-difference' to methods")
    if order is None:
        from .discretize.finite_difference import DEFAULT_ORDER

        order = DEFAULT_ORDER
    with one_blas_thread():
        return _converge(equation, potential, params, l, kappa, levels, methods, order, sizes, tol, kwargs)


def _element_rows(eq, pot, levels, tol, degrees, reference, rows, orders, local) -> None:
    """The spectral-element family on its own layout at each degree: rows keyed by the number of
    nodes, orders from the log-log slope in that number."""
    from .solver import _solve_elements

    _, _, per_level, _, _ = _solve_elements(eq, pot, levels, tol, degrees=sorted(set(int(d) for d in degrees)))
    _add_rows("spectral", per_level, reference, rows, orders, local)


def _add_rows(method: str, per_level, reference, rows, orders, local) -> None:
    """Rows, observed orders and local slopes of a spectral family's per-level histories."""
    for rec in per_level:
        label = rec["label"]
        if label not in reference:
            continue
        Eref = reference[label]
        got_sizes, errs, prev = [], [], None
        for size, E in zip(rec["sizes"], rec["energies"]):
            err = abs(E - Eref) / abs(Eref)
            diff = math.nan if prev is None else abs(E - prev) / abs(Eref)
            rows.append({"method": method, "size": size, "label": label, "energy": E, "error": err,
                         "difference": diff})
            got_sizes.append(size)
            errs.append(err)
            prev = E
        orders[(method, label)] = observed_order(got_sizes, errs)
        s, e = np.log(got_sizes), np.log(np.maximum(errs, 1e-300))
        local[(method, label)] = [float(-(e[i + 1] - e[i]) / (s[i + 1] - s[i]))
                                  for i in range(len(s) - 1) if errs[i + 1] > 1e-13]


def _laguerre_rows(eq, pot, levels, sizes, reference, rows, orders, local) -> None:
    """The Lagrange-Laguerre mesh (the one :func:`boundkit.solve` took for this Schrodinger channel) at
    each number of nodes, on one scale: rows keyed by that number, as for the elements."""
    from .laguerre_solver import study
    from .solver import laguerre_scale, sampler
    from .states import principal_n

    _, a, r_lo = laguerre_scale(eq, pot, eq.gamma(pot))
    used, hist, _ = study(eq, sampler(pot), levels, a, r_lo, sizes)
    per_level = [{"label": eq.label(principal_n(k, eq.l)), "sizes": used, "energies": h}
                 for k, h in enumerate(hist)]
    _add_rows("laguerre-mesh", per_level, reference, rows, orders, local)


def _converge(equation, potential, params, l, kappa, levels, methods, order, sizes, tol, kwargs):
    levels = check_int("levels", levels, minimum=1)
    tol = check_positive("tol", tol)
    if tol >= 1:
        raise ValueError(f"tol: a relative error below 1 (e.g. 1e-13), got {tol:g}")
    eq, pot, settings = setup(equation, potential, params, l=l, kappa=kappa, **kwargs)
    ref = solve_channel(eq, pot, get_method("spectral"), levels, tol)
    reference = {lv.label: lv.energy for lv in ref.levels}
    ch = prepare_channel(eq, pot, levels)
    rows, orders, local = [], {}, {}
    for mname in methods:
        if mname == "spectral":
            _element_rows(eq, pot, levels, tol, (sizes or DEFAULT_SIZES)["spectral"], reference, rows, orders,
                          local)
            if ref.diagnostics.get("mesh") == "lagrange-laguerre":
                _laguerre_rows(eq, pot, len(ref.levels), (sizes or DEFAULT_SIZES).get(
                    "laguerre-mesh", DEFAULT_SIZES["laguerre-mesh"]), reference, rows, orders, local)
            continue
        disc = FiniteDifference(order) if mname == "finite-difference" else get_method(mname)
        for k, E0 in enumerate(ch.seeds[:levels]):
            label = ch.label(k)
            if label not in reference:
                continue
            Eref = reference[label]
            mesh, r_core = ch.mesh(Eref)
            got_sizes, errs, prev = [], [], None
            for size in (sizes or DEFAULT_SIZES)[disc.name]:
                got = ch.level(k, disc, size, Eref * (1 + 1e-6), mesh, r_core)
                if got is None:
                    continue
                E = got[1].energy
                err = abs(E - Eref) / abs(Eref)
                diff = math.nan if prev is None else abs(E - prev) / abs(Eref)
                rows.append({"method": disc.name, "size": size, "label": label, "energy": E,
                             "error": err, "difference": diff})
                got_sizes.append(size)
                errs.append(err)
                prev = E
            orders[(disc.name, label)] = observed_order(got_sizes, errs)
            s, e = np.log(got_sizes), np.log(np.maximum(errs, 1e-300))
            local[(disc.name, label)] = [float(-(e[i + 1] - e[i]) / (s[i + 1] - s[i]))
                                         for i in range(len(s) - 1) if errs[i + 1] > 1e-13]
    settings.update({"levels": levels, "methods": list(methods), "fd_order": order, "reference_tol": tol,
                     "spectral_sizes": "element degrees; rows give the number of nodes"})
    return ConvergenceResult(eq.name, pot.name, reference, rows, orders, local, settings, ref.status, ref.message)
