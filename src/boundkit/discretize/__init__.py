"""Discretization layer: the spectral and finite-difference families."""
from __future__ import annotations

from .base import Discretization, Grid
from .finite_difference import FiniteDifference
from .spectral import Chebyshev

__all__ = ["Discretization", "Grid", "Chebyshev", "FiniteDifference", "METHODS", "get_method"]

METHODS: dict[str, type[Discretization]] = {
    "spectral": Chebyshev,
    "finite-difference": FiniteDifference,
}
"""Registry of discretization families; a user's own subclass may be passed directly."""


def get_method(method: str | Discretization | None = "auto", order: int | None = None) -> Discretization:
    """Return a discretization from a name (``auto``, ``spectral``,
    ``finite-difference``, ``fd``), a class or an instance."""
    if isinstance(method, Discretization):
        return method
    if isinstance(method, type) and issubclass(method, Discretization):
        return method() if order is None else method(order=order)
    key = "auto" if method is None else str(method).lower()
    key = {"fd": "finite-difference", "cheb": "spectral", "chebyshev": "spectral"}.get(key, key)
    if key == "auto":
        key = "spectral"
    if key not in METHODS:
        raise ValueError(
            f"method: unknown discretization {method!r}; choose auto, spectral or finite-difference"
        )
    if key == "finite-difference":
        return FiniteDifference() if order is None else FiniteDifference(order=order)
    if order is not None:
        raise ValueError("order: only the finite-difference method takes an order")
    return Chebyshev()
