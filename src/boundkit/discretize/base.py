"""The contract of a discretization family.

A discretization turns an interval [t_min, t_max] of t = ln r into nodes, a
first-derivative matrix and quadrature weights. Equations build their
operators from these three pieces only, so every equation works with every
family.
"""
from __future__ import annotations

from dataclasses import dataclass
from typing import Any, ClassVar

import numpy as np

from ..mesh import LogMap

__all__ = ["Grid", "Discretization"]


@dataclass(frozen=True)
class Grid:
    """Nodes, derivative and quadrature of one discretization on one map.

    Attributes
    ----------
    t, r : ndarray
        Ascending nodes in t and r = exp(t); the first node is r_min, the
        last r_max.
    D : ndarray or sparse matrix
        First derivative in t at the nodes (double precision).
    D_ext, t_ext : ndarray or None
        The same matrix and nodes in extended precision (``numpy.longdouble``) when the
        family refines residuals in extended precision, else None.
    w : ndarray
        Quadrature weights: integral of g dt ~ sum(w * g).
    dense : bool
        Whether D is a dense array (dense eigen solves) or sparse.
    method, size : str, int
        Family name and number of nodes, for the record.
    interfaces, jumps, jumps_ext : tuple, ndarray
        Indices of nodes shared by two elements, and for each the difference
        of the left and right first-derivative rows there (double and
        extended precision); the operator imposes a continuous derivative.
    on_jumps : tuple
        Indices of nodes placed on a jump of the potential (a family with ``aligns_jumps``); the
        solver samples the mean of the two one-sided values there.
    """

    t: np.ndarray
    r: np.ndarray
    D: Any
    D_ext: Any
    w: np.ndarray
    dense: bool
    method: str
    size: int
    mesh: LogMap

    t_ext: Any = None
    interfaces: tuple = ()
    jumps: Any = None
    jumps_ext: Any = None
    on_jumps: tuple = ()

    @property
    def extended(self) -> bool:
        """Whether residuals are refined in extended precision."""
        return self.D_ext is not None


class Discretization:
    """Base class of a discretization family.

    A subclass must:

    1. set ``name`` (registry key) and ``family`` (``"spectral"`` or
       ``"finite-difference"``);
    2. implement ``grid(mesh, size, breaks=()) -> Grid`` with ascending nodes
       whose first and last nodes are the ends of the map; ``breaks`` are radii
       where the potential is not smooth (a family may place element
       boundaries there and report them as ``interfaces``, or ignore them);
    3. implement ``ladder(start)``: the sequence of sizes tried when the
       solver raises the resolution, and ``first``: the size to start from;
    4. set ``order``: the algebraic order of convergence (None for spectral),
       used by the error estimate, and ``floor``: the smallest relative error
       the family claims (its rounding level).
    """

    name: ClassVar[str] = "base"
    family: ClassVar[str] = ""
    order: int | None = None
    floor: float = 1e-12
    first: int = 0
    cap: int = 0
    uses_edges: ClassVar[bool] = False   # whether grid() reads ``edges`` (the caller measures them only then)
    aligns_jumps: ClassVar[bool] = False  # whether grid() takes ``jumps`` (radii where V or S jumps) and
    #                                       puts a node on each (reported in Grid.on_jumps)

    def grid(self, mesh: LogMap, size: int, breaks=(), edges=()) -> Grid:  # pragma: no cover - contract
        """Nodes on ``mesh``; ``breaks`` are radii where the potential is not smooth, ``edges`` the
        (t_k, w_k) of its measured edges (a family with ``uses_edges`` False ignores them)."""
        raise NotImplementedError

    def ladder(self) -> list[int]:  # pragma: no cover - contract
        raise NotImplementedError

    def describe(self) -> dict:
        return {"method": self.name, "family": self.family, "order": self.order}
