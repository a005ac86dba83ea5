"""Benchmark: all Dirac-Coulomb levels n <= 5 at Z = 92 and tol = 1e-12.

Reported as a ratio to a baseline measured in the same run (one dense
generalized eigen solve of size 200, as the solver does many of them), so
that numbers from a busy shared machine can still be compared. Run:

    python benchmarks/bench_solve.py
"""
from __future__ import annotations

import time

import numpy as np
import scipy.linalg as sla
from threadpoolctl import threadpool_limits

import boundkit


def best_of(fn, repeat: int = 3) -> float:
    times = []
    for _ in range(repeat):
        t0 = time.perf_counter()
        fn()
        times.append(time.perf_counter() - t0)
    return min(times)


def baseline() -> None:
    rng = np.random.default_rng(0)
    a, b = rng.standard_normal((200, 200)), np.diag(rng.random(200) + 1)
    with threadpool_limits(limits=1, user_api="blas"):
        sla.eig(a, b)


def dirac_z92() -> None:
    for kappa in range(-5, 5):
        if kappa == 0:
            continue
        l = kappa if kappa > 0 else -kappa - 1
        boundkit.solve("dirac", "coulomb", {"Z": 92}, kappa=kappa, levels=5 - l, tol=1e-12)


if __name__ == "__main__":
    base = best_of(baseline, 5)
    work = best_of(dirac_z92, 2)
    print(f"baseline (dense 200x200 generalized eig): {base * 1e3:.1f} ms")
    print(f"Dirac-Coulomb Z=92, n<=5, tol 1e-12:       {work:.2f} s  = {work / base:.0f} baselines")
