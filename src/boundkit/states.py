"""State labelling, node counts, normalisation and the spurious-state filter.

Labelling conventions
---------------------
A level is fixed by its channel (l, and j for spin 1/2) and its number of
radial nodes k (the large component's sign changes, 0 for the lowest level of
the channel). Three conventions name it (common practice in each field):

- ``"atomic"``: n = k + l + 1 and a lower-case letter, ``1s``, ``2p1/2``
  (Bethe & Salpeter, Quantum Mechanics of One- and Two-Electron Atoms, 1957).
- ``"nuclear"``: the radial quantum number n_r = k, counted from 0, and the
  lower-case letter with 2j/2: ``0s1/2``, ``0p3/2``, ``0p1/2``, ``1s1/2``
  (the nodes convention of shell-model work, e.g. Suhonen, From Nucleons to
  Nucleus, Springer 2007, from memory; other texts count from 1, e.g. 1s1/2,
  1p3/2 in Krane, Introductory Nuclear Physics, 1988, from memory; boundkit
  uses the nodes convention and says so in every table).
- ``"quarkonium"``: n = k + 1 and an upper-case letter, ``1S``, ``2S``,
  ``1P``, ``1D`` (the convention of heavy-quarkonium spectroscopy, e.g.
  Eichten et al., Phys. Rev. D 17, 3090 (1978), from memory); a Dirac level
  adds its j, ``1P1/2``.
"""
from __future__ import annotations

import re

import numpy as np

__all__ = ["count_nodes", "count_nodes_each", "principal_n", "normalise", "LABEL_CONVENTIONS", "level_label", "parse_label",
           "check_convention", "label_sort_key", "convert_label", "level_n", "splits_by_j", "missing_j", "level_j"]

LABEL_CONVENTIONS = ("atomic", "nuclear", "quarkonium")
"""Names of the labelling conventions (see the module docstring)."""
_LETTERS = "spdfghiklmnoqrtuv"
_LABEL = re.compile(r"^\s*(\d+)\s*([a-zA-Z])\s*(?:(\d+)\s*/\s*2)?\s*$")
_FIRST_N = {"atomic": "l + 1", "nuclear": "0", "quarkonium": "1"}


def check_convention(labels: str) -> str:
    """The canonical name of a labelling convention, or ValueError naming the choices."""
    key = str(labels).strip().lower()
    if key not in LABEL_CONVENTIONS:
        raise ValueError(f"labels: unknown labelling convention {labels!r}; choose one of "
                         f"{', '.join(LABEL_CONVENTIONS)}")
    return key


def _n_of(nodes: int, l: int, convention: str) -> int:
    return {"atomic": nodes + l + 1, "nuclear": nodes, "quarkonium": nodes + 1}[convention]


def level_n(nodes: int, l: int, labels: str = "atomic") -> int:
    """The number n of a label in convention ``labels`` (atomic nodes + l + 1, nuclear nodes, quarkonium nodes + 1)."""
    return _n_of(nodes, l, check_convention(labels))


def level_label(nodes: int, l: int, j: float | None = None, labels: str = "atomic") -> str:
    """Spectroscopic label of the level with ``nodes`` radial nodes in channel (l, j).

    Parameters
    ----------
    nodes : int
        Radial nodes k of the (large) component, 0 for the lowest level.
    l : int
        Orbital angular momentum.
    j : float, optional
        Total angular momentum (spin 1/2), written as 2j/2.
    labels : {'atomic', 'nuclear', 'quarkonium'}
        The convention (module docstring).

    Notes
    -----
    atomic: n = k + l + 1; nuclear: n_r = k; quarkonium: n = k + 1.

    Examples
    --------
    >>> level_label(0, 1, 1.5, "atomic"), level_label(0, 1, 1.5, "nuclear"), level_label(0, 1, None, "quarkonium")
    ('2p3/2', '0p3/2', '1P')
    """
    convention = check_convention(labels)
    let = _LETTERS[l] if l < len(_LETTERS) else f"[l={l}]"
    if convention == "quarkonium":
        let = let.upper()
    tail = "" if j is None else f"{int(round(2 * j))}/2"
    return f"{_n_of(nodes, l, convention)}{let}{tail}"


def parse_label(label: str, labels: str = "atomic") -> tuple[int, int, float | None]:
    """(nodes, l, j) of a label written in convention ``labels``; the inverse of :func:`level_label`.

    Raises ValueError for a malformed label, an n below the convention's
    first value, or a j other than l +- 1/2.
    """
    convention = check_convention(labels)
    example = {"atomic": "1s, 2p, 2p1/2, 3d5/2", "nuclear": "0s1/2, 0p3/2, 1s1/2",
               "quarkonium": "1S, 2S, 1P, 1D"}[convention]
    m = _LABEL.match(str(label))
    hint = f"write n, the orbital letter and optionally j, e.g. {example} ({convention} labels)"
    if not m:
        raise ValueError(f"state: cannot read {label!r}; {hint}")
    n, let, twoj = int(m.group(1)), m.group(2).lower(), m.group(3)
    if let not in _LETTERS:
        raise ValueError(f"state: unknown orbital letter {let!r} in {label!r}; use one of {', '.join(_LETTERS)}")
    l = _LETTERS.index(let)
    nodes = n - _n_of(0, l, convention)
    if nodes < 0:
        raise ValueError(f"state: {label!r} needs n >= {_n_of(0, l, convention)} for an {let} level "
                         f"({convention} labels: n >= {_FIRST_N[convention]})")
    j = None
    if twoj is not None:
        j = int(twoj) / 2
        if j not in (l + 0.5, l - 0.5) or j < 0.5:
            allowed = " or ".join(f"{int(2 * x)}/2" for x in (l - 0.5, l + 0.5) if x >= 0.5)
            raise ValueError(f"state: j = {twoj}/2 does not fit l = {l} in {label!r}; use j = {allowed}")
    return nodes, l, j


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


def count_nodes_each(u: np.ndarray, tail: float = 1e-4, floor: float = 1e-6) -> np.ndarray:
    """:func:`count_nodes` of every column of ``u`` (one state per column, ascending r), at once.

    The same rule per column: values beyond the last one above ``tail`` max|u| are left out, and
    values below ``floor`` max|u| are skipped, so a sign change is counted between neighbouring
    kept values.
    """
    u = np.asarray(u, dtype=float)
    a = np.abs(u)
    top = np.max(a, axis=0)
    rows = np.arange(u.shape[0])[:, None]
    last = u.shape[0] - 1 - np.argmax((a > tail * top)[::-1], axis=0)
    keep = (a > floor * top) & (rows <= last)
    # index of the last kept value at or before each row (-1 before the first), carried down
    prev = np.maximum.accumulate(np.where(keep, rows, -1), axis=0)[:-1]
    cols = np.arange(u.shape[1])[None, :]
    flips = keep[1:] & (prev >= 0) & (np.sign(u[1:]) != np.sign(u[np.maximum(prev, 0), cols]))
    return np.count_nonzero(flips, axis=0)


def principal_n(nodes: int, l: int) -> int:
    """Principal quantum number n = nodes + l + 1 of the (large) component."""
    return nodes + l + 1


def normalise(w_dr: np.ndarray, *components: np.ndarray, weight=None):
    """Scale components so that the integral of the density is 1.

    ``w_dr`` are quadrature weights for dr; the density is
    weight * P^2 (+ Q^2). The sign is fixed so that P > 0 near the origin.
    Returns the scaled components and the norm before scaling. Components given as 2-D arrays
    hold one state per row (norms then per row).
    """
    P = components[0]
    dens = P**2 if weight is None else weight * P**2
    for c in components[1:]:
        dens = dens + c**2
    if P.ndim == 2:
        return _normalise_rows(w_dr, components, dens)
    norm = float(np.sum(w_dr * dens))
    scale = 1.0 / np.sqrt(norm)
    big = np.nonzero(np.abs(P) > 1e-6 * np.max(np.abs(P)))[0]
    if big.size and P[big[0]] < 0:
        scale = -scale
    return tuple(c * scale for c in components), norm


def _normalise_rows(w_dr, components, dens):
    """:func:`normalise` of many states at once, one per row (the same norm and sign rule)."""
    P = components[0]
    norm = dens @ w_dr
    scale = 1.0 / np.sqrt(norm)
    big = np.abs(P) > 1e-6 * np.max(np.abs(P), axis=1, keepdims=True)
    first = P[np.arange(P.shape[0]), np.argmax(big, axis=1)]      # P[k, 0] where a row is all zero
    scale = np.where(first < 0, -scale, scale)[:, None]
    return tuple(c * scale for c in components), norm


def splits_by_j(equation: str, spin_orbit: bool = False) -> bool:
    """Whether j splits the levels of a channel of ``equation`` (a canonical name: ``'schrodinger'``,
    ``'klein-gordon'``, ``'dirac'``): the Dirac equation, and the Schrodinger equation of a potential
    with a spin-orbit term (``spin_orbit``). There a level's label names its j (an s level's is 1/2);
    elsewhere a j in a label does not change the level."""
    return equation == "dirac" or (equation == "schrodinger" and bool(spin_orbit))


def missing_j(equation: str, label: str, l: int) -> str:
    """Why ``label`` (l > 0, no j) names no single level where j splits them (:func:`splits_by_j`), and the
    fix: the label with each of its two j."""
    stem = "".join(str(label).split())
    why = (f"the Dirac equation needs j in {label!r}" if equation == "dirac" else
           f"a potential with a spin-orbit term splits {label!r} by j")
    return f"{why}; write {stem}{2 * l - 1}/2 or {stem}{2 * l + 1}/2"


def level_j(equation: str, label: str, l: int, j: float | None, split: bool) -> float | None:
    """The j that names the level of ``label`` (its l and j as read) where j splits levels (``split``,
    :func:`splits_by_j`): j as written, 1/2 for an s level; elsewhere None. A label with l > 0 and no j
    names no single level there: ValueError ('state: ...', :func:`missing_j`)."""
    if not split:
        return None
    if j is None:
        if l > 0:
            raise ValueError(f"state: {missing_j(equation, label, l)}")
        return 0.5
    return j


def label_sort_key(label: str, labels: str = "atomic") -> tuple:
    """Sort key of a label: n, then l, then j (``2s`` < ``2p1/2`` < ``2p3/2`` < ``3s``).

    A label that cannot be read sorts after all the others, by its text.
    An optional equation prefix (``dirac:2p1/2``) is ignored.
    """
    text = str(label).rpartition(":")[2]
    try:
        nodes, l, j = parse_label(text, labels)
    except ValueError:
        return (1, 0, 0, 0.0, str(label))
    return (0, _n_of(nodes, l, check_convention(labels)), l, 0.0 if j is None else j, str(label))


def convert_label(label: str, to: str, frm: str = "atomic") -> str:
    """A label written in convention ``frm`` rewritten in convention ``to`` (``2p1/2`` -> ``0p1/2``)."""
    if check_convention(to) == check_convention(frm):
        return str(label)
    return level_label(*parse_label(label, frm), labels=to)

