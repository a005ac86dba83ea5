"""The validator: the exact-case catalogue run with each discretization family.

Each case names its exact formula and where it comes from (see
:mod:`boundkit.exact`). A case passes when the worst relative error of its
levels is within the family's tolerance: 1e-12 for the spectral family and
1e-9 for finite differences (order 8), at the default solver settings.
"""
from __future__ import annotations

import math
import time
from dataclasses import dataclass
from typing import Callable

from . import exact
from .solver import solve

__all__ = ["Case", "catalogue", "run_validation"]

TOLERANCE = {"spectral": 1e-12, "finite-difference": 1e-9}


@dataclass(frozen=True)
class Case:
    """One exactly solvable problem: equation, potential, channels, formula, source."""

    name: str
    equation: str
    potential: object
    params: dict
    channels: tuple          # of (channel keyword dict, number of levels)
    exact: Callable          # exact(level) -> binding energy in hartree
    source: str
    scalar: object = None
    quick: bool = False


def _dirac_channels(nmax: int, kappas):
    out = []
    for k in kappas:
        l = k if k > 0 else -k - 1
        if nmax - l >= 1:
            out.append(({"kappa": k}, nmax - l))
    return tuple(out)


def catalogue(quick: bool = False) -> list[Case]:
    """The exact cases; ``quick`` keeps a small subset that runs in seconds."""
    cases = []
    zs = (1, 92) if quick else (1, 10, 50, 92)
    kappas = (-1, 1, -2) if quick else tuple(k for k in range(-5, 5) if k)
    for Z in zs:
        cases.append(Case(f"Dirac Coulomb Z={Z}", "dirac", "coulomb", {"Z": Z},
                          _dirac_channels(3 if quick else 5, kappas),
                          lambda lv, Z=Z: exact.dirac_coulomb(Z, lv.n, lv.kappa),
                          exact.SOURCES["dirac_coulomb"], quick=True))
    for Z in ((1,) if quick else (1, 40)):
        cases.append(Case(f"Klein-Gordon Coulomb Z={Z}", "klein-gordon", "coulomb", {"Z": Z},
                          tuple(({"l": l}, (3 if quick else 5) - l) for l in range(2 if quick else 4)),
                          lambda lv, Z=Z: exact.klein_gordon_coulomb(Z, lv.n, lv.l),
                          exact.SOURCES["klein_gordon_coulomb"]))
    cases.append(Case("Schrodinger Coulomb Z=1", "schrodinger", "coulomb", {"Z": 1},
                      tuple(({"l": l}, (3 if quick else 6) - l) for l in range(3 if quick else 6)),
                      lambda lv: exact.schrodinger_coulomb(1, lv.n), exact.SOURCES["schrodinger_coulomb"]))
    cases.append(Case("isotropic oscillator k=1", "schrodinger", "oscillator", {"k": 1.0},
                      tuple(({"l": l}, 2 if quick else 4) for l in range(2 if quick else 4)),
                      lambda lv: exact.oscillator(1.0, lv.nodes, lv.l), exact.SOURCES["oscillator"]))
    k_sv = 2e6   # omega = 2000 hartree: large relativistic effects
    cases.append(Case("Dirac S=V oscillator", "dirac", "oscillator", {"k": k_sv},
                      tuple(({"kappa": k}, 2 if quick else 3) for k in ((-1, 1) if quick else (-1, 1, -2, 2, -3))),
                      lambda lv: exact.dirac_spin_symmetric_oscillator(k_sv, lv.nodes, lv.l),
                      exact.SOURCES["dirac_spin_symmetric_oscillator"], scalar="oscillator"))
    if not quick:
        cases = [c for c in cases]
    return cases


def _fd_order(history_sizes, history) -> float:
    if len(history) < 3:
        return math.nan
    d1, d2 = abs(history[-2] - history[-3]), abs(history[-1] - history[-2])
    if d1 <= 0 or d2 <= 0:
        return math.nan
    return math.log(d1 / d2) / math.log(history_sizes[-1] / history_sizes[-2])


def run_validation(quick: bool = False, methods=("spectral", "finite-difference")) -> list[dict]:
    """Run the catalogue; one row per case and family."""
    rows = []
    for case in catalogue(quick):
        for method in methods:
            t0 = time.perf_counter()
            worst, resolution, orders, count, missing = 0.0, 0, [], 0, 0
            for channel, levels in case.channels:
                res = solve(case.equation, case.potential, case.params, levels=levels, method=method,
                            scalar=case.scalar, **channel)
                missing += levels - len(res.levels)
                for lv, rec in zip(res.levels, res.diagnostics["levels"]):
                    ex = case.exact(lv)
                    worst = max(worst, abs(lv.energy - ex) / abs(ex))
                    resolution = max(resolution, lv.resolution)
                    count += 1
                    if method == "finite-difference":
                        orders.append(_fd_order(rec["sizes"], rec["energies"]))
            tol = TOLERANCE[method]
            good = [o for o in orders if o == o]
            rows.append({
                "case": case.name, "method": method, "levels": count, "missing": missing,
                "resolution": resolution, "worst_relative_error": worst,
                "observed_order": (sum(good) / len(good)) if good else ("spectral" if method == "spectral" else None),
                "tolerance": tol, "passed": bool(worst <= tol and missing == 0),
                "source": case.source, "seconds": round(time.perf_counter() - t0, 2),
            })
    return rows


def format_table(rows: list[dict]) -> str:
    head = (f"{'case':<28} {'method':<18} {'levels':>6} {'max N':>6} {'worst rel. err':>14} "
            f"{'order':>8} {'tol':>7} {'result':>6}")
    lines = [head]
    for r in rows:
        order = r["observed_order"]
        order = f"{order:.1f}" if isinstance(order, float) else ("exp." if order == "spectral" else "-")
        lines.append(f"{r['case']:<28} {r['method']:<18} {r['levels']:>6} {r['resolution']:>6} "
                     f"{r['worst_relative_error']:>14.2e} {order:>8} {r['tolerance']:>7.0e} "
                     f"{'pass' if r['passed'] else 'FAIL':>6}")
    lines.append("")
    lines.append("sources:")
    for src in dict.fromkeys(r["source"] for r in rows):
        lines.append(f"  {src}")
    return "\n".join(lines)
