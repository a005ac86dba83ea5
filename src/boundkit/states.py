"""State labelling, node counts, normalisation and the spurious-state filter."""
from __future__ import annotations

import numpy as np

__all__ = ["count_nodes", "principal_n", "normalise"]


def count_nodes(u: np.ndarray, tail: float = 1e-4, floor: float = 1e-6) -> int:
    """Sign changes of ``u`` on its nodes (ascending r).

    Only the part up to the last node where |u| exceeds ``tail`` max|u| is
    looked at: beyond it lies the decaying tail, where rounding noise can
    flip signs without a real node. Inside, values below ``floor`` max|u|
    are skipped.
    """
    u = np.asarray(u, dtype=float)
    top = np.max(np.abs(u))
    if top == 0:
        return 0
    last = np.nonzero(np.abs(u) > tail * top)[0][-1]
    head = u[: last + 1]
    s = np.sign(head[np.abs(head) > floor * top])
    return int(np.count_nonzero(s[1:] != s[:-1]))


def principal_n(nodes: int, l: int) -> int:
    """Principal quantum number n = nodes + l + 1 of the (large) component."""
    return nodes + l + 1


def normalise(w_dr: np.ndarray, *components: np.ndarray, weight=None):
    """Scale components so that the integral of the density is 1.

    ``w_dr`` are quadrature weights for dr; the density is
    weight * P^2 (+ Q^2). The sign is fixed so that P > 0 near the origin.
    Returns the scaled components and the norm before scaling.
    """
    P = components[0]
    dens = P**2 if weight is None else weight * P**2
    for c in components[1:]:
        dens = dens + c**2
    norm = float(np.sum(w_dr * dens))
    scale = 1.0 / np.sqrt(norm)
    big = np.nonzero(np.abs(P) > 1e-6 * np.max(np.abs(P)))[0]
    if big.size and P[big[0]] < 0:
        scale = -scale
    return tuple(c * scale for c in components), norm
