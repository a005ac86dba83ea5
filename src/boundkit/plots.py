"""Figures (matplotlib, no screen needed). Each function writes one file.

The format follows the file suffix: .png (default), .svg or .pdf.
"""
from __future__ import annotations

import math
import os
import tempfile
from pathlib import Path

import matplotlib

matplotlib.use("Agg")
import matplotlib.pyplot as plt  # noqa: E402
import numpy as np  # noqa: E402

__all__ = ["convergence_figure", "save_figure", "radial_figure", "density_figure", "level_diagram"]

_FORMATS = (".png", ".svg", ".pdf")


def _level_figure(levels, length_unit: str):
    """Shared start of the per-level figures: unit and scale, level groups, axes, r range."""
    unit, scale = _length_scale(length_unit)
    groups = _as_groups(levels)
    every = [lv for lvs in groups.values() for lv in lvs]
    if not every:
        raise ValueError("plot: no levels to draw")
    fig, ax = plt.subplots(figsize=(7.0, 4.6))
    return unit, scale, groups, fig, ax, _extent(every) * scale


def save_figure(fig, path) -> Path:
    """Write ``fig`` atomically (temporary file, then rename) and close it."""
    path = Path(path)
    suffix = path.suffix.lower() or ".png"
    if suffix not in _FORMATS:
        plt.close(fig)
        raise ValueError(f"plot: unsupported figure format {path.suffix!r}; use .png, .svg or .pdf")
    if not path.suffix:
        path = path.with_suffix(".png")
    path.parent.mkdir(parents=True, exist_ok=True)
    fd, tmp = tempfile.mkstemp(dir=path.parent, suffix=suffix)
    os.close(fd)
    try:
        fig.savefig(tmp, format=suffix[1:], dpi=150, bbox_inches="tight")
        os.chmod(tmp, 0o644)          # mkstemp makes private files; a figure is for sharing
        os.replace(tmp, path)
    finally:
        plt.close(fig)
        if os.path.exists(tmp):
            os.unlink(tmp)
    return path


def convergence_figure(result, path):
    """Log-log plot of relative error against resolution for each level and family."""
    fig, ax = plt.subplots(figsize=(6.4, 4.4))
    keys = sorted({(r["method"], r["label"]) for r in result.rows})
    for method, label in keys:
        rows = [r for r in result.rows if r["method"] == method and r["label"] == label]
        size = np.array([r["size"] for r in rows], float)
        err = np.array([max(r["error"], 1e-17) for r in rows])
        order = result.orders.get((method, label))
        tag = f"{method}, {label}" + (f" (order {order:.1f})" if order == order and method != "spectral" else "")
        ax.loglog(size, err, "o-" if method == "spectral" else "s--", label=tag, ms=4)
    ax.axhline(2.2e-16, color="0.6", lw=0.8, ls=":")
    ax.set_xlabel("resolution (nodes)")
    ax.set_ylabel("relative error of the binding energy")
    ax.set_title(f"{result.equation}: {result.potential}")
    ax.legend(fontsize=8)
    ax.grid(True, which="both", alpha=0.3)
    return save_figure(fig, path)


# --- wave functions and level diagrams -------------------------------------------------------
# A palette of our own (colour-blind-safe ordering of distinct hues).
_PALETTE = ("#1f3a93", "#c0392b", "#27ae60", "#e67e22", "#8e44ad", "#6e2c00", "#d81b60", "#0097a7",
            "#9a7d0a", "#566573")


def _colour(i: int) -> str:
    return _PALETTE[i % len(_PALETTE)]


def _length_scale(unit: str) -> tuple[str, float]:
    from .observables import LENGTH_UNITS, length_unit

    key = length_unit(unit)
    return key, LENGTH_UNITS[key]


def _energy_scale(unit: str) -> tuple[str, float]:
    from .units import ENERGY_UNITS, energy_unit

    key = energy_unit(unit)
    return key, ENERGY_UNITS[key]


def _as_groups(levels) -> dict:
    """{group name: [Level, ...]} from a mapping, or one unnamed group from a sequence."""
    if isinstance(levels, dict):
        return {str(k): list(v) for k, v in levels.items()}
    return {"": list(levels)}


def _extent(levels, keep: float = 1.0 - 1e-4) -> float:
    """Radius (bohr) inside which every level keeps the fraction ``keep`` of its density."""
    top = 0.0
    for lv in levels:
        st = lv.state
        dens = st.P**2 if st.Q is None else st.P**2 + st.Q**2
        cum = np.cumsum(st.weights * dens)
        if cum[-1] <= 0:
            continue
        i = int(np.searchsorted(cum / cum[-1], keep))
        top = max(top, float(st.r[min(i, len(st.r) - 1)]))
    return top * 1.1 if top > 0 else 1.0


def node_radii(r: np.ndarray, u: np.ndarray, tail: float = 1e-4, floor: float = 1e-6) -> np.ndarray:
    """Radii of the sign changes of ``u`` (linear interpolation), ignoring the decaying tail.

    Uses the same rule as :func:`boundkit.states.count_nodes`: only values up to
    the last point where |u| exceeds ``tail`` max|u| count, and values below
    ``floor`` max|u| are skipped.
    """
    r, u = np.asarray(r, float), np.asarray(u, float)
    top = np.max(np.abs(u)) if u.size else 0.0
    if top == 0:
        return np.empty(0)
    last = np.nonzero(np.abs(u) > tail * top)[0][-1]
    idx = np.nonzero(np.abs(u[: last + 1]) > floor * top)[0]
    out = []
    for a, b in zip(idx[:-1], idx[1:]):
        if np.sign(u[a]) != np.sign(u[b]):
            out.append(r[a] - u[a] * (r[b] - r[a]) / (u[b] - u[a]))
    return np.array(out)


def _smooth(r: np.ndarray, *funcs: np.ndarray, r_top: float, points: int = 800):
    """Functions on the solver's grid resampled on a fine uniform grid up to r_top.

    A cubic spline in t = ln r (the solver's own coordinate) joins the grid
    values; it only serves the drawing, the numbers come from the grid.
    """
    from scipy.interpolate import CubicSpline

    fine = np.linspace(r[0], min(r_top, r[-1]), points)
    t = np.log(r)
    return fine, [CubicSpline(t, f)(np.log(fine)) for f in funcs]


def _curve_label(group: str, lv) -> str:
    return f"{group}: {lv.label}" if group else lv.label


def radial_figure(levels, path, *, length_unit: str = "bohr", title: str | None = None) -> Path:
    """Radial functions P(r) (and the Dirac small component Q(r)) with their nodes marked.

    Parameters
    ----------
    levels : sequence of Level, or mapping of group name to levels
        The levels to draw (for example the levels of one solve, or
        ``{"dirac": [...], "schrodinger": [...]}``).
    path : str or Path
        Output file; the suffix selects the format (.png, .svg, .pdf).
    length_unit : str
        Unit of r on the axis (bohr, fm, pm, angstrom, nm).
    title : str, optional
        Figure title.

    Returns
    -------
    Path
        The file written (atomically, see :func:`save_figure`).

    Notes
    -----
    P = r g and Q = r f are normalised to int (P^2 + Q^2) dr = 1 (Klein-Gordon:
    int (E + mc^2 - V)/(mc^2) P^2 dr = 1, the charge density, said in the
    title); in a length unit L they are drawn as P / sqrt(L) so that the
    normalisation holds on the axis. The large component is a solid line, the
    small one dashed (and drawn only for Dirac levels); circles mark the nodes of P.
    """
    unit, scale, groups, fig, ax, r_top = _level_figure(levels, length_unit)
    norm = 1.0 / math.sqrt(scale)
    i = 0
    have_q = have_nodes = have_kg = False
    for group, lvs in groups.items():
        for lv in lvs:
            st = lv.state
            have_kg = have_kg or st.density_weight is not None
            comps = (st.P,) if st.Q is None else (st.P, st.Q)
            fine, smooth = _smooth(st.r, *comps, r_top=r_top / scale)
            colour = _colour(i)
            ax.plot(fine * scale, smooth[0] * norm, color=colour, lw=1.6, label=f"{_curve_label(group, lv)}  P")
            if st.Q is not None:
                have_q = True
                ax.plot(fine * scale, smooth[1] * norm, color=colour, lw=1.1, ls="--",
                        label=f"{_curve_label(group, lv)}  Q")
            nodes = node_radii(st.r, st.P) * scale
            if nodes.size:
                have_nodes = True
                ax.plot(nodes, np.zeros_like(nodes), "o", ms=5, mfc="white", mec=colour, mew=1.4)
            i += 1
    if have_nodes:
        ax.plot([], [], "o", ms=5, mfc="white", mec="0.3", label="nodes of P")
    ax.axhline(0.0, color="0.55", lw=0.7)
    ax.set_xlim(0.0, r_top)
    ax.set_xlabel(f"r ({unit})")
    comp = "P(r), Q(r)" if have_q else "P(r) = r R(r)"
    ax.set_ylabel(f"radial function {comp} ({unit}$^{{-1/2}}$)")
    ax.set_title((title or "radial functions" + (" (solid: large P, dashed: small Q)" if have_q else ""))
                 + ("\nKlein-Gordon: P normalised with the charge density" if have_kg else ""))
    ax.legend(fontsize=7, ncol=2 if i > 4 else 1)
    ax.grid(True, alpha=0.25)
    return save_figure(fig, path)


def density_figure(levels, path, *, length_unit: str = "bohr", title: str | None = None) -> Path:
    """Radial densities of the given levels (labelled for each equation).

    Parameters
    ----------
    levels : sequence of Level, or mapping of group name to levels
    path : str or Path
        Output file (.png, .svg or .pdf).
    length_unit : str
        Unit of r (bohr, fm, pm, angstrom, nm).
    title : str, optional

    Notes
    -----
    rho(r) is P^2 (Schrodinger), P^2 + Q^2 (Dirac) or the conserved
    Klein-Gordon charge density (E + mc^2 - V) P^2 / mc^2, each with integral 1
    (``RadialState.density``); the axis label says which. On an axis in unit L
    it is rho / L. A vertical tick marks <r> of each level.
    """
    from .observables import mean_radius

    unit, scale, groups, fig, ax, r_top = _level_figure(levels, length_unit)
    i = 0
    kinds: set = set()
    for group, lvs in groups.items():
        for lv in lvs:
            st = lv.state
            kinds.add("kg" if st.density_weight is not None else "dirac" if st.Q is not None else "schrodinger")
            dens = st.density(st.r)
            fine, (smooth,) = _smooth(st.r, dens, r_top=r_top / scale)
            colour = _colour(i)
            mean = mean_radius(lv) * scale
            ax.plot(fine * scale, np.maximum(smooth, 0.0) / scale, color=colour, lw=1.5,
                    label=f"{_curve_label(group, lv)}  (<r> = {mean:.4g} {unit})")
            ax.axvline(mean, color=colour, lw=0.8, ls=":")
            i += 1
    ax.set_xlim(0.0, r_top)
    ax.set_ylim(bottom=0.0)
    ax.set_xlabel(f"r ({unit})")
    what = {"schrodinger": "radial probability density P$^2$", "dirac": "radial probability density P$^2$ + Q$^2$",
            "kg": "Klein-Gordon charge density (E + mc$^2$ - V) P$^2$ / mc$^2$"}
    name = what[kinds.pop()] if len(kinds) == 1 else "radial density (P$^2$; P$^2$ + Q$^2$; Klein-Gordon: charge)"
    ax.set_ylabel(f"{name} ({unit}$^{{-1}}$)")
    ax.set_title(title or "radial densities (dotted: <r>)")
    ax.legend(fontsize=7, ncol=2 if i > 4 else 1)
    ax.grid(True, alpha=0.25)
    return save_figure(fig, path)


def level_diagram(potential, levels, path, *, energy_unit: str = "hartree", length_unit: str = "bohr",
                  title: str | None = None, r_max: float | None = None) -> Path:
    """The potential with its bound levels drawn as horizontal lines.

    Parameters
    ----------
    potential : Potential or callable
        A :class:`~boundkit.potentials.Potential` (its vector part V, its
        scalar part S and, when S is not zero, V + S are drawn) or a callable
        V(r) (r in bohr, V in hartree).
    levels : sequence of Level, or mapping of group name to levels
        Levels to draw; groups (for example equations) get their own colour
        and are set side by side.
    path : str or Path
        Output file (.png, .svg or .pdf).
    energy_unit, length_unit : str
        Units of the axes.
    title : str, optional
    r_max : float, optional
        Right end of the r axis in bohr (default: beyond the outermost
        classical turning point).

    Notes
    -----
    Each level is a horizontal line at its binding energy, drawn where the
    level is classically allowed, E > V + S (the potential the large
    component feels at low energy), and across the plot when that region is
    not found on the axis.
    """
    e_unit, e_scale = _energy_scale(energy_unit)
    l_unit, l_scale = _length_scale(length_unit)
    groups = _as_groups(levels)
    every = [lv for lvs in groups.values() for lv in lvs]
    if hasattr(potential, "V") and hasattr(potential, "S"):
        V, S = potential.V, potential.S
    elif callable(potential):
        V, S = potential, (lambda r: np.zeros_like(np.asarray(r, dtype=float)))
    else:
        raise ValueError("plot: potential must be a Potential or a callable V(r)")
    if r_max is None:
        r_max = _extent(every) if every else 10.0
    r = np.linspace(r_max * 1e-4, r_max, 1500)
    v = np.asarray(V(r), float)
    s = np.asarray(S(r), float)
    total = v + s
    has_scalar = bool(np.any(s != 0))
    energies = np.array([lv.energy for lv in every]) if every else np.zeros(0)
    fig, ax = plt.subplots(figsize=(7.0, 4.8))
    x = r * l_scale
    if has_scalar:
        ax.plot(x, v * e_scale, color="0.45", lw=1.0, ls="--", label="vector V(r)")
        ax.plot(x, s * e_scale, color="0.45", lw=1.0, ls=":", label="scalar S(r)")
        ax.plot(x, total * e_scale, color="black", lw=1.8, label="V(r) + S(r)")
    else:
        ax.plot(x, v * e_scale, color="black", lw=1.8, label="V(r)")
    # vertical range: the levels, with room; the well bottom if it is finite and not far below
    if energies.size:
        lo, hi = float(energies.min()), float(energies.max())
        span = max(hi - lo, 0.25 * abs(lo), 1e-300)
        y_lo = lo - 0.35 * span
        bottom = float(np.min(total))
        if np.isfinite(bottom) and bottom > lo - 3 * span:
            y_lo = min(y_lo, bottom - 0.05 * span)
        y_hi = max(hi + 0.35 * span, 0.0 + 0.05 * span) if hi < 0 else hi + 0.35 * span
    else:
        y_lo, y_hi = float(np.min(total)), float(np.max(total))
    ngroups = max(len(groups), 1)
    gap = 0.03 * (y_hi - y_lo)          # smallest vertical distance between two labels
    for gi, (group, lvs) in enumerate(groups.items()):
        colour = _colour(gi)
        first = True
        text_y = -math.inf
        for lv in sorted(lvs, key=lambda lv: lv.energy):
            inside = np.nonzero(total < lv.energy)[0]
            if inside.size:
                a, b = x[inside[0]], x[inside[-1]]
            else:
                a, b = x[0], x[-1]
            # groups side by side inside the allowed region, so close levels stay readable
            width = (b - a) / ngroups
            a, b = a + gi * width, a + (gi + 1) * width
            ax.hlines(lv.energy * e_scale, a, b, colors=colour, lw=1.6,
                      label=(group or "levels") if first else None)
            text_y = max(lv.energy, text_y + gap)
            ax.annotate(lv.label, (b, lv.energy * e_scale), xytext=(b + 0.008 * x[-1], text_y * e_scale),
                        textcoords="data",
                        fontsize=7, color=colour, va="center", ha="left")
            first = False
    ax.axhline(0.0, color="0.6", lw=0.7)
    ax.set_ylim(y_lo * e_scale, y_hi * e_scale)
    ax.set_xlim(0.0, x[-1])
    ax.set_xlabel(f"r ({l_unit})")
    ax.set_ylabel(f"energy, binding convention ({e_unit})")
    ax.set_title(title or "potential and bound levels")
    ax.legend(fontsize=7, loc="lower right")
    ax.grid(True, alpha=0.25)
    return save_figure(fig, path)
