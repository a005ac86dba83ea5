"""Shared fixtures."""
from __future__ import annotations

import numpy as np
import pytest


def _clear_mesh_caches() -> None:
    from boundkit import laguerre_solver
    from boundkit.discretize import laguerre

    laguerre.laguerre_mesh.cache_clear()
    laguerre_solver._state_grid.cache_clear()


@pytest.fixture(params=["extended", "double-double"])
def laguerre_builder(request, monkeypatch):
    """Each way the Lagrange-Laguerre mesh can be built: in np.longdouble (x86 Linux, Intel macOS;
    skipped where long double is plain double) and in double-double arithmetic (the other
    platforms' path, forced here)."""
    from boundkit.discretize import laguerre

    if request.param == "extended":
        if np.finfo(np.longdouble).eps >= 1e-18:
            pytest.skip("np.longdouble is plain double on this platform")
        monkeypatch.setattr(laguerre, "_EXTENDED", True)
    else:
        monkeypatch.setattr(laguerre, "_EXTENDED", False)
    _clear_mesh_caches()
    yield request.param
    monkeypatch.undo()
    _clear_mesh_caches()
