"""boundkit speed benchmarks, as ratios to baselines measured in the same run.

    python benchmarks/run.py            # full run (a few minutes on a busy 2-core machine)
    python benchmarks/run.py --quick    # fewer repeats, smaller scan (under ~60 s)
    python benchmarks/run.py --json out.json

The machine is shared and noisy, so every time is a best of k and every
target is a ratio to a baseline timed in the same run (see baselines.py):
(a) uniform 3-point finite differences for hydrogen (N = 32000), (b) a
26-point regularized Lagrange-Laguerre mesh, (c) one dense 200 x 200
generalized eig. Each row prints the worst relative error beside its time:
against the exact formula where there is one (Coulomb), otherwise the
solver's own estimate and a cross-check with the finite-difference family.
Targets are those of issue 10; PASS/MISS is printed beside each ratio.
Benchmarks are not unit tests: nothing here runs under pytest.

boundkit is called through its public API only (boundkit.solve,
boundkit.scan), so the numbers reflect whichever solver is installed. A
warm-up solve runs first, so the timed rows do not pay for lazy imports.
"""
from __future__ import annotations

import argparse
import json
import math
import subprocess
import sys
import time
from pathlib import Path

import numpy as np

sys.path.insert(0, str(Path(__file__).resolve().parent))
from baselines import (dense_geneig, dense_pencil, dirac_coulomb_exact, fd_hydrogen,  # noqa: E402
                       hulthen_exact, hydrogen_dipole_exact, hydrogen_exact, laguerre_hydrogen,
                       yukawa_1s_critical_length)

import boundkit  # noqa: E402
from boundkit._threads import usable_cores  # noqa: E402
from boundkit.states import parse_label, principal_n  # noqa: E402

FD_N, FD_R = 32000, 100.0          # baseline (a)
LAG_N, LAG_H = 26, 1.5             # baseline (b): reaches ~3e-13 on the 5 lowest s-levels
Z_U = 92
# "Today" for the Fermi row: the five-level Fermi Z=92 solve with the solver of main at 53bf960 (before
# issue 10), measured by this script in units of baseline (c) in three runs on 2026-12-03 on this
# loaded 2-core machine: 70.5, 56.7 and 36.5 units (noise ~ +-30 %); the best, 36.5, is kept (the
# strictest). Issue 10 asks for 10x less. To remeasure, run this script on 53bf960.
FERMI_TODAY_UNITS = 36.5


def best_of(fn, k: int):
    """(best wall time in s, value of the last call)."""
    best, value = math.inf, None
    for _ in range(k):
        t0 = time.perf_counter()
        value = fn()
        best = min(best, time.perf_counter() - t0)
    return best, value


def rel_err(values, exact) -> float:
    values, exact = np.asarray(values, float), np.asarray(exact, float)
    if values.shape != exact.shape:
        return math.inf          # a level missing (or one too many) is a failure, not a number
    return float(np.max(np.abs(values - exact) / np.abs(exact)))


def est_rel(res) -> float:
    return max(lv.error_estimate / abs(lv.energy) for lv in res.levels)


def vs_exact(res, exact) -> tuple[float, int]:
    """(worst relative error of the levels found, matched by their label n; number found)."""
    if not res.levels:
        return math.inf, 0
    return max(abs(lv.energy - exact(lv.n)) / abs(exact(lv.n)) for lv in res.levels), len(res.levels)


def hydrogen(levels: int, tol: float):
    return boundkit.solve("schrodinger", "coulomb", {"Z": 1}, l=0, levels=levels, tol=tol)


def hydrogen_check(res) -> tuple[float, int]:
    return vs_exact(res, lambda n: float(hydrogen_exact(n)))


def dirac_u_all():
    """All 25 Dirac-Coulomb levels n <= 5 of Z = 92, every kappa channel: (worst rel. error, found)."""
    worst, count = 0.0, 0
    for kappa in (-1, 1, -2, 2, -3, 3, -4, 4, -5):
        l = kappa if kappa > 0 else -kappa - 1
        res = boundkit.solve("dirac", "coulomb", {"Z": Z_U}, kappa=kappa, levels=5 - l, tol=1e-12)
        err, found = vs_exact(res, lambda n: dirac_coulomb_exact(n, kappa, Z_U))
        worst, count = max(worst, err), count + found
    return worst, count


def fermi(method: str = "auto"):
    return boundkit.solve("dirac", "fermi", {"Z": Z_U, "rms_fm": 5.86}, kappa=-1, levels=5, tol=1e-12,
                          method=method)


def import_time(statement: str, k: int) -> float:
    """Best in-process time of ``statement`` in fresh interpreters (interpreter start excluded)."""
    code = f"import time; t = time.perf_counter(); {statement}; print(time.perf_counter() - t)"
    return min(float(subprocess.run([sys.executable, "-c", code], check=True, capture_output=True,
                                    text=True).stdout) for _ in range(k))


def help_time(k: int) -> float:
    """Best wall time of `boundkit --help` (interpreter start included)."""
    best = math.inf
    for _ in range(k):
        t0 = time.perf_counter()
        subprocess.run([sys.executable, "-c", "from boundkit.cli import main; main()", "--help"], check=True, capture_output=True)
        best = min(best, time.perf_counter() - t0)
    return best


def yukawa_scan(points: int, workers: int):
    return boundkit.scan("schrodinger", "yukawa", {"Z": 1}, {"screening_length": np.linspace(5.0, 100.0, points)},
                         levels=2, tol=1e-10, workers=workers, progress=False)


def verdict(ok: bool) -> str:
    return "PASS" if ok else "MISS"


def main(argv=None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--quick", action="store_true", help="fewer repeats and a 20-point scan (< ~60 s)")
    ap.add_argument("--json", metavar="FILE", help="also write every measured figure to FILE")
    args = ap.parse_args(argv)
    quick = args.quick
    k_fast, k_slow = (3, 1) if quick else (7, 3)
    scan_points = 20 if quick else 50
    out: dict = {"quick": quick, "boundkit": boundkit.__version__, "cpus": usable_cores()}
    rows = []

    def row(name, t, base, ratio, target, ok, err, base_err=""):
        rows.append((name, t, base, ratio, target, verdict(ok) if ok is not None else "", err, base_err))
        out[name] = {"time_s": t, "baseline": base, "ratio": ratio, "target": target, "pass": ok,
                     "error": err, "baseline_error": base_err}
        print(f"  .. {name}: {t}", file=sys.stderr, flush=True)

    t_start = time.perf_counter()
    hydrogen(2, 1e-8)                                   # warm-up: lazy imports, caches
    exact5 = hydrogen_exact(np.arange(1, 6))    # baselines return the 5 lowest, n = 1..5 in order

    # baselines
    a_time, a_E = best_of(lambda: fd_hydrogen(FD_N, FD_R, 5), k_fast)
    a_err = rel_err(a_E, exact5)
    b_time, b_E = best_of(lambda: laguerre_hydrogen(LAG_N, LAG_H, 5), 5 * k_fast)
    b_err = rel_err(b_E, exact5)
    A, B = dense_pencil(200, seed=0)
    c_time, _ = best_of(lambda: dense_geneig(A, B), k_fast)
    out["baselines"] = {"a_fd_time_s": a_time, "a_fd_rel_err": a_err, "b_laguerre_time_s": b_time,
                        "b_laguerre_rel_err": b_err, "c_dense_eig_time_s": c_time}

    # 1-2: hydrogen at two tolerances
    t6, r6 = best_of(lambda: hydrogen(5, 1e-6), k_fast)
    e6, n6 = hydrogen_check(r6)
    row("H 5 s-levels, tol 1e-6 vs (a)", f"{t6 * 1e3:.1f} ms", f"{a_time * 1e3:.1f} ms",
        f"{a_time / t6:.2f}x faster", ">= 100x, err <= (a)", a_time / t6 >= 100 and e6 <= a_err and n6 == 5,
        f"{e6:.1e}" + ("" if n6 == 5 else f" ({n6}/5 found)"), f"{a_err:.1e}")
    t12, r12 = best_of(lambda: hydrogen(5, 1e-12), k_fast)
    e12, n12 = hydrogen_check(r12)
    row("H 5 s-levels, tol 1e-12 vs (b)", f"{t12 * 1e3:.1f} ms", f"{b_time * 1e3:.2f} ms",
        f"{t12 / b_time:.0f}x its time", "<= 5x", t12 / b_time <= 5 and n12 == 5,
        f"{e12:.1e}" + ("" if n12 == 5 else f" ({n12}/5 found)"), f"{b_err:.1e}")
    row("tol 1e-6 / tol 1e-12 cost (H, 5 levels)", f"{t6 * 1e3:.1f}/{t12 * 1e3:.1f} ms", "", f"{t6 / t12:.2f}",
        "<= 0.33", t6 / t12 <= 1 / 3, f"{e6:.1e} / {e12:.1e}")

    # 3: Dirac-Coulomb U, all levels n <= 5
    td, (ed, count) = best_of(dirac_u_all, k_slow)
    row("Dirac-Coulomb Z=92, all 25 levels n<=5, tol 1e-12", f"{td:.3f} s", f"{c_time * 1e3:.1f} ms",
        f"{td / c_time:.1f} units of (c)", "<= 2 units", td / c_time <= 2 and count == 25,
        f"{ed:.1e}" + ("" if count == 25 else f" ({count}/25 found)"))

    # 4: Fermi nucleus
    tf, rf = best_of(fermi, k_slow)
    rfd = fermi("finite-difference")
    by_n = {lv.n: lv.energy for lv in rfd.levels}
    cross = max((abs(lv.energy - by_n[lv.n]) / abs(lv.energy) if lv.n in by_n else math.inf) for lv in rf.levels)
    target_units = FERMI_TODAY_UNITS / 10
    row("Dirac Fermi Z=92 (rms 5.86 fm), 5 s-levels, tol 1e-12", f"{tf:.3f} s", f"{c_time * 1e3:.1f} ms",
        f"{tf / c_time:.1f} units of (c)", f"<= {target_units:.1f} (today/10)", tf / c_time <= target_units,
        f"est {est_rel(rf):.1e}, vs FD {cross:.1e}" + ("" if len(rf.levels) == 5 else f" ({len(rf.levels)}/5)"))

    # 5: time per level
    per, found = {}, {}
    worst_levels = 0.0
    for n in (1, 5, 10, 20):
        tn, rn = best_of(lambda: hydrogen(n, 1e-10), k_slow if n >= 10 else k_fast)
        per[n] = tn / n                      # per level requested
        err, found[n] = hydrogen_check(rn)
        worst_levels = max(worst_levels, err)
    spread = max(per.values()) / min(per.values())
    row("time per level, H s-levels 1/5/10/20, tol 1e-10", "/".join(f"{per[n] * 1e3:.2g}" for n in per) + " ms",
        "", f"max/min {spread:.2f}", "<= 2, all found", spread <= 2 and all(found[n] == n for n in found),
        f"{worst_levels:.1e}, found " + "/".join(str(found[n]) for n in found))

    # 5b: many levels (no target; what levels='all' costs): every s level of a pion in a Hulthen well
    tm, rm = best_of(lambda: boundkit.solve("schrodinger", "hulthen", {"Z": 1, "delta": 0.1}, l=0, levels="all",
                                            tol=1e-12, particle="pion"), k_slow)
    mu = rm.settings["mass_atomic_units"]
    dev = [abs(lv.energy - hulthen_exact(lv.n, mu, 1, 0.1)) for lv in rm.levels]
    err = max(d / abs(lv.energy) for d, lv in zip(dev, rm.levels))
    ratio = max(d / lv.error_estimate for d, lv in zip(dev, rm.levels))
    row("Hulthen pion (Z=1, delta=0.1), levels='all', tol 1e-12", f"{tm:.3f} s", f"{c_time * 1e3:.1f} ms",
        f"{tm / c_time:.1f} units of (c)", "", None,
        f"{err:.1e} vs exact, err/est <= {ratio:.2f}, {len(rm.levels)}/{rm.diagnostics['bound_count']} found")

    # 5c: resonances (no target): the lowest shape resonance of V = 7.5 r^2 e^-r; three dense complex eigen
    # solves of the stability test, side by side on the cores. Reference: Moiseyev, Certain and Weinhold,
    # Mol. Phys. 36, 1613 (1978), E - i Gamma/2 = 3.426390 - 0.012774 i (from memory; 7 and 5 digits)
    tr, rr = best_of(lambda: boundkit.resonances("schrodinger", lambda r: 7.5 * r**2 * np.exp(-r), window=(3, 4)),
                     k_slow)
    res = rr.resonances[0] if rr.resonances else None
    row(f"resonance of 7.5 r^2 exp(-r), window 3..4 hartree ({usable_cores()} cores)", f"{tr:.3f} s",
        f"{c_time * 1e3:.1f} ms", f"{tr / c_time:.1f} units of (c)", "", None,
        "not found" if res is None else
        f"E, Gamma/2 within {abs(res.energy - 3.426390):.1e}, {abs(res.width / 2 - 0.012774):.1e} of the published "
        "3.426390, 0.012774 (given to 1e-6)")

    # 5d: radiative lines (no target): every E1 line of hydrogen with n <= 8, against the exact radial integrals
    # (baselines.hydrogen_dipole_exact); S = max(l, l') R^2 for a spinless level pair
    tt, rt = best_of(lambda: boundkit.transitions(max_n=8), k_slow)
    def exact_s(ln):
        (k, l, _), (k2, l2, _) = parse_label(ln.upper), parse_label(ln.lower)      # nodes, l
        return max(l, l2) * hydrogen_dipole_exact(principal_n(k, l), l, principal_n(k2, l2), l2) ** 2
    dev = [abs(ln.line_strength - exact_s(ln)) for ln in rt.lines]
    worst_s = max(d / ln.line_strength for d, ln in zip(dev, rt.lines))
    over = max(d / ln.line_strength_error for d, ln in zip(dev, rt.lines))
    row(f"E1 lines of hydrogen, n <= 8 ({len(rt.lines)} lines, tol 1e-14)", f"{tt:.3f} s", f"{c_time * 1e3:.1f} ms",
        f"{tt / c_time:.1f} units of (c)", "", None, f"S {worst_s:.1e} vs exact, err/est <= {over:.2f}")

    # 5e: the finite-difference family (no target; the cross-check method of cross_check=True and validate)
    tfd, rfd = best_of(lambda: boundkit.solve("dirac", "coulomb", {"Z": Z_U}, kappa=-1, levels=5, tol=1e-9,
                                               method="finite-difference"), k_slow)
    efd, nfd = vs_exact(rfd, lambda n: dirac_coulomb_exact(n, -1, Z_U))
    row("finite differences: Dirac-Coulomb Z=92 s1/2, 5 levels, tol 1e-9", f"{tfd:.3f} s", f"{c_time * 1e3:.1f} ms",
        f"{tfd / c_time:.1f} units of (c)", "", None, f"{efd:.1e} vs exact, est {est_rel(rfd):.1e}, {nfd}/5 found")

    # 5f: a critical-parameter search (no target): where the Yukawa 1s unbinds, against baselines'
    # zero-energy integration
    tc, rc = best_of(lambda: boundkit.critical("schrodinger", "yukawa", {"Z": 1, "screening_length": 2.0},
                                               state="1s", vary="screening_length"), k_slow)
    d_ref = yukawa_1s_critical_length()
    row("critical: Yukawa 1s unbinding screening length (Z=1)", f"{tc:.3f} s", f"{c_time * 1e3:.1f} ms",
        f"{tc / c_time:.1f} units of (c)", "", None,
        f"{abs(rc.value - d_ref) / d_ref:.1e} vs zero-energy integration, est {rc.uncertainty / d_ref:.1e}")

    # 6: import time
    t_floor = import_time("import numpy, scipy.linalg, scipy.sparse.linalg, scipy.special, scipy.constants", k_fast)
    t_imp = import_time("import boundkit", k_fast)
    t_solve_imp = import_time("from boundkit import solve", k_fast)
    t_help = help_time(k_fast)
    floor = f"{t_floor:.3f} s"               # what numpy + the scipy parts a solve needs cost alone
    row("`import boundkit` (fresh process)", f"{t_imp:.3f} s", floor, "", "<= 0.5 s", t_imp <= 0.5, "")
    row("`from boundkit import solve` (fresh process)", f"{t_solve_imp:.3f} s", floor,
        f"+{t_solve_imp - t_floor:.3f} s", "<= 0.5 s", t_solve_imp <= 0.5, "")
    row("`boundkit --help` (wall, with interpreter start)", f"{t_help:.3f} s", "", "", "", None, "")

    # 7: scan throughput
    # both at steady state: a first scan in this process builds the caches a Yukawa point reads (the 2-worker
    # scan's processes are forked from this one and start with them); without it the 1-worker figure depended
    # on which rows had run before (1.73x with this scan first of its kind, 1.40x after the critical row)
    yukawa_scan(scan_points, 1)
    s1_time, s1 = best_of(lambda: yukawa_scan(scan_points, 1), 1)
    s2_time, s2 = best_of(lambda: yukawa_scan(scan_points, 2), 1)
    e1 = np.array([r["energy"] if r["energy"] is not None else np.nan for r in s1.rows], float)
    e2 = np.array([r["energy"] if r["energy"] is not None else np.nan for r in s2.rows], float)
    est = max(r["error_estimate"] / abs(r["energy"]) for r in s1.rows if r["energy"])
    speed = s1_time / s2_time
    row(f"Yukawa scan, {scan_points} points x 2 levels, 2 vs 1 workers",
        f"{scan_points / s1_time:.1f} / {scan_points / s2_time:.1f} pts/s", "", f"{speed:.2f}x", ">= 1.6x (idle)",
        speed >= 1.6, f"est {est:.1e}, 1 vs 2 workers {float(np.nanmax(np.abs(e1 - e2) / np.abs(e1))):.1e}")

    total = time.perf_counter() - t_start
    print()
    print(f"boundkit {boundkit.__version__}, {usable_cores()} cpus, {'quick' if quick else 'full'} run, "
          f"{total:.0f} s; best of {k_fast} (slow rows {k_slow}); errors are worst relative errors")
    print(f"baselines: (a) 3-point FD N={FD_N}, R={FD_R:g}: {a_time * 1e3:.1f} ms, err {a_err:.1e};  "
          f"(b) Lagrange-Laguerre N={LAG_N}, h={LAG_H:g}: {b_time * 1e3:.2f} ms, err {b_err:.1e};  "
          f"(c) dense 200x200 eig(A, B): {c_time * 1e3:.1f} ms")
    head = ("row", "time", "baseline", "ratio", "target", "", "error", "baseline error")
    widths = [max(len(str(r[i])) for r in rows + [head]) for i in range(len(head))]
    for r in [head] + rows:
        print("  ".join(str(v).ljust(w) for v, w in zip(r, widths)).rstrip())
    if args.json:
        Path(args.json).write_text(json.dumps(out, indent=2, default=str))
    return 0


if __name__ == "__main__":
    sys.exit(main())
