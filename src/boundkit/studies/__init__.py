"""Studies built on the solver: parameter scans, critical parameters and
side-by-side comparisons of the three equations.

* :func:`scan` - levels over a grid of one or two potential parameters,
  followed by label, in parallel (local processes or a Dask cluster), with
  resumable per-point files;
* :func:`critical` - the parameter value where a level unbinds (E -> 0) or
  dives into the lower continuum (E -> -2 m c^2);
* :func:`compare` - Schrodinger, Klein-Gordon and Dirac levels side by side,
  with relativistic shifts and fine-structure splittings.
"""
from __future__ import annotations

from ._common import NuclearRadius, StudyError
from .compare import CompareResult, compare
from .critical import CriticalResult, critical
from .scan import ScanResult, linspace, logspace, parse_vary, scan

__all__ = ["scan", "critical", "compare", "ScanResult", "CriticalResult", "CompareResult", "linspace",
           "logspace", "parse_vary", "NuclearRadius", "StudyError"]
