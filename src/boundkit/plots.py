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
from matplotlib.backends.backend_agg import FigureCanvasAgg  # noqa: E402
from matplotlib.mathtext import MathTextParser  # noqa: E402

from . import palette  # noqa: E402
from .wavefunctions import regular_values  # noqa: E402

__all__ = ["convergence_figure", "save_figure", "radial_figure", "density_figure", "level_diagram",
           "level_scheme", "draw_level_scheme", "spread_labels", "shift_figure"]

_FORMATS = (".png", ".svg", ".pdf")
_DPI = 150


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
    """Write ``fig`` atomically (temporary file, then rename) and close it.

    Titles are drawn as plain text: they carry the user's names (a table file called w$x_\\frac$.txt
    made matplotlib's math parser fail and the figure was lost; a tester). Axis labels keep their math.
    """
    titles = [ax.title for ax in fig.axes] + [t for t in (getattr(fig, "_suptitle", None),) if t is not None]
    for t in titles:
        t.set_parse_math(False)
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
        _print(fig, tmp, suffix[1:])
        os.chmod(tmp, 0o644)          # mkstemp makes private files; a figure is for sharing
        os.replace(tmp, path)
    finally:
        plt.close(fig)
        if os.path.exists(tmp):
            os.unlink(tmp)
    return path


class _Canvas(FigureCanvasAgg):
    """An Agg canvas whose renderers share one math text parser, and so its cache of parsed labels.

    Every Agg renderer has a parser of its own and the parser's cache is keyed by it: a figure saved
    with its tight box has two renderers (the box's and the file's), and a run draws many figures with
    the same log-axis labels (10^-2, ...), each parsed again on every renderer (a level diagram: 8
    parses, a fifth of its drawing).
    """

    _parser = None

    def get_renderer(self):
        renderer = super().get_renderer()
        if _Canvas._parser is None:
            _Canvas._parser = MathTextParser("path")      # what RendererAgg makes for itself
        renderer.mathtext_parser = _Canvas._parser
        return renderer

    @classmethod
    def forget_parser(cls) -> None:
        """A forked process starts a parser of its own: the labels parsed before the fork hold the
        fonts of the parent, whose files a child would read at the same file offsets (a figure was
        lost to 'FT_Load_Glyph failed: invalid outline'). matplotlib drops its fonts in a child alike."""
        cls._parser = None


if hasattr(os, "register_at_fork"):
    os.register_at_fork(after_in_child=_Canvas.forget_parser)


def tight_box(fig):
    """The part of ``fig`` that ``savefig(bbox_inches="tight")`` saves (inches), found without drawing.

    The box of every artist (:meth:`~matplotlib.figure.Figure.get_tightbbox`, which lays out the text
    as ``tight_layout`` does) at the saving dpi, padded by ``savefig.pad_inches``. The figure is put
    on a :class:`_Canvas` first (the canvas it is saved from).
    """
    if not isinstance(fig.canvas, _Canvas):
        _Canvas(fig)
    fig.set_dpi(_DPI)
    return fig.get_tightbbox(fig.canvas.get_renderer()).padded(matplotlib.rcParams["savefig.pad_inches"])


def _print(fig, target: str, fmt: str) -> None:
    """Save ``fig`` cropped to its tight box with one draw.

    ``bbox_inches="tight"`` draws a figure twice, once to find where everything is and once to save it.
    A PNG is saved with its :func:`tight_box` given as the box: the same crop, one draw
    (tests/test_figure_saving.py). A vector format measures its text with its own renderer and keeps
    "tight".
    """
    if fmt == "png":
        fig.savefig(target, format=fmt, dpi=_DPI, bbox_inches=tight_box(fig))
    else:
        fig.savefig(target, format=fmt, dpi=_DPI, bbox_inches="tight")


def say_empty(ax, text: str) -> None:
    """Write ``text`` across axes that have no curve to show, in place of a legend (matplotlib warns
    of a legend without labels)."""
    ax.text(0.5, 0.5, text, transform=ax.transAxes, ha="center", va="center", fontsize=9, color="0.4")


def convergence_figure(result, path):
    """Log-log plot of relative error against resolution for each level and family."""
    fig, ax = plt.subplots(figsize=(6.4, 4.4))
    keys = sorted({(r["method"], r["label"]) for r in result.rows})
    for method, label in keys:
        rows = [r for r in result.rows if r["method"] == method and r["label"] == label]
        size = np.array([r["size"] for r in rows], float)
        err = np.array([max(r["error"], 1e-17) for r in rows])
        order = result.orders.get((method, label))
        spectral = method in ("spectral", "laguerre-mesh")
        tag = f"{method}, {label}" + (f" (order {order:.1f})" if order == order and not spectral else "")
        ax.loglog(size, err, "o-" if spectral else "s--", label=tag, ms=4)
    ax.axhline(2.2e-16, color="0.6", lw=0.8, ls=":")
    ax.set_xlabel("resolution (nodes)")
    ax.set_ylabel("relative error of the binding energy")
    ax.set_title(f"{result.equation}: {result.potential}")
    if keys:
        ax.legend(fontsize=8)
    else:
        say_empty(ax, "no level at any resolution (see the table's status)")
    ax.grid(True, which="both", alpha=0.3)
    return save_figure(fig, path)


# --- wave functions and level diagrams -------------------------------------------------------
def _colour(i: int) -> str:
    return palette.colour(i)


def _equation_of(lv) -> str:
    """The equation a level came from, read off its state: Dirac has Q, Klein-Gordon a density weight."""
    st = lv.state
    return "dirac" if st.Q is not None else "klein-gordon" if st.density_weight is not None else "schrodinger"


def _level_colours(groups: dict) -> list[str]:
    """One colour per level in drawing order: shades of its equation's colour (palette), darkest lowest."""
    every = [lv for lvs in groups.values() for lv in lvs]
    eqs = [_equation_of(lv) for lv in every]
    count = {e: eqs.count(e) for e in set(eqs)}
    seen: dict[str, int] = {}
    out = []
    for e in eqs:
        out.append(palette.shades(palette.EQUATION_COLOURS[e], count[e])[seen.get(e, 0)])
        seen[e] = seen.get(e, 0) + 1
    return out


def _length_scale(unit: str) -> tuple[str, float]:
    from .units import LENGTH_UNITS, length_unit

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
    colours = _level_colours(groups)
    norm = 1.0 / math.sqrt(scale)
    i = 0
    have_q = have_nodes = have_kg = False
    for group, lvs in groups.items():
        for lv in lvs:
            st = lv.state
            have_kg = have_kg or st.density_weight is not None
            P, Q = regular_values(st)
            comps = (P,) if Q is None else (P, Q)
            fine, smooth = _smooth(st.r, *comps, r_top=r_top / scale)
            colour = colours[i]
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
    colours = _level_colours(groups)
    i = 0
    kinds: set = set()
    for group, lvs in groups.items():
        for lv in lvs:
            st = lv.state
            kinds.add("kg" if st.density_weight is not None else "dirac" if st.Q is not None else "schrodinger")
            dens = st.density(st.r)
            fine, (smooth,) = _smooth(st.r, dens, r_top=r_top / scale)
            colour = colours[i]
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


def spread_labels(wanted, gap: float) -> np.ndarray:
    """Label positions as close as possible to ``wanted`` with neighbours at least ``gap`` apart.

    Notes
    -----
    Minimises sum (y_i - wanted_i)^2 subject to y_(i+1) - y_i >= gap for the
    labels in ascending order: with z_i = y_i - i gap this is an isotonic
    regression of wanted_i - i gap, solved by pooling adjacent violators
    (each pool sits at the mean of its members' targets). Returns the
    positions in the order of ``wanted``.
    """
    wanted = np.asarray(wanted, float)
    order = np.argsort(wanted, kind="stable")
    target = wanted[order] - gap * np.arange(wanted.size)
    pools: list[list[float]] = []           # [sum, count]
    for t in target:
        pools.append([t, 1.0])
        while len(pools) > 1 and pools[-2][0] / pools[-2][1] > pools[-1][0] / pools[-1][1]:
            s_, c_ = pools.pop()
            pools[-1][0] += s_
            pools[-1][1] += c_
    z = np.concatenate([np.full(int(c), s_ / c) for s_, c in pools]) if pools else np.zeros(0)
    out = np.empty_like(wanted)
    out[order] = z + gap * np.arange(wanted.size)
    return out


def _same_energy(a, b) -> bool:
    """Two levels equal within their error estimates (and 1e-12 relative): degenerate on any plot."""
    return abs(a.energy - b.energy) <= a.error_estimate + b.error_estimate + 1e-12 * abs(a.energy)


def _display_order(levels) -> list:
    """Levels by energy, lowest first; degenerate ones (equal within their estimates) so that they read
    2s1/2, 2p1/2 from the top down (the order of the tables)."""
    ordered = sorted(levels, key=lambda lv: lv.energy)
    out, run = [], []

    def top_down(run):
        return sorted(run, key=lambda x: (-x.l, -(x.j or 0.0)))

    for lv in ordered:
        if run and not _same_energy(run[-1], lv):
            out += top_down(run)
            run = []
        run.append(lv)
    return out + top_down(run)


def _label_targets(ordered) -> np.ndarray:
    """Wanted label heights (hartree): degenerate runs share their mean, so their order stays."""
    y = np.array([lv.energy for lv in ordered], float)
    i = 0
    while i < len(ordered):
        j = i + 1
        while j < len(ordered) and _same_energy(ordered[j - 1], ordered[j]):
            j += 1
        y[i:j] = y[i:j].mean()
        i = j
    return y


def _energy_text(E: float, unit: str, digits: int = 7) -> str:
    return f"{E:.{digits}g} {unit}"


def draw_level_scheme(ax, levels, *, energy_unit: str = "hartree", fontsize: float = 8.0,
                      digits: int = 7) -> list:
    """Draw levels as bars in one column per group, each labelled with its name and energy.

    Parameters
    ----------
    ax : matplotlib Axes
    levels : sequence of Level, or mapping of group name (equation or model) to levels
    energy_unit : str
        Unit of the energy axis and of the printed energies.
    fontsize : float
        Size of the labels in points.
    digits : int
        Significant digits of the printed energies.

    Returns
    -------
    list of matplotlib.text.Text
        The label artists (for layout checks).

    Notes
    -----
    A group named after an equation takes that equation's colour
    (:mod:`boundkit.palette`). Labels keep at least one text height apart
    (:func:`spread_labels` on the axis as drawn); a label moved away from its
    bar is joined to it by a thin leader line.
    """
    e_unit, e_scale = _energy_scale(energy_unit)
    groups = {k: _display_order(v) for k, v in _as_groups(levels).items()}
    energies = np.array([lv.energy * e_scale for lvs in groups.values() for lv in lvs])
    if not energies.size:
        raise ValueError("plot: no levels to draw")
    lo, hi = float(energies.min()), float(energies.max())
    span = max(hi - lo, 0.1 * abs(lo), 1e-300)
    ax.set_ylim(lo - 0.08 * span, max(hi + 0.08 * span, 0.0) if hi < 0 else hi + 0.08 * span)
    ax.set_xlim(-0.15, len(groups) - 0.05)
    fig = ax.figure
    texts = []
    for _round in range(3):          # the gap in data units depends on the limits, which the labels may widen
        y0, y1 = ax.get_ylim()
        height_px = ax.get_window_extent().height or 1.0
        gap = 1.35 * fontsize * fig.dpi / 72.0 / height_px * (y1 - y0)
        placed = {g: spread_labels(_label_targets(lvs) * e_scale, gap) for g, lvs in groups.items()}
        top = max(float(p.max()) for p in placed.values() if p.size)
        bottom = min(float(p.min()) for p in placed.values() if p.size)
        if top + 0.6 * gap <= y1 and bottom - 0.6 * gap >= y0:
            break
        ax.set_ylim(min(y0, bottom - 0.8 * gap), max(y1, top + 0.8 * gap))
    for gi, (group, lvs) in enumerate(groups.items()):
        c = palette.equation_colour(group, gi)
        x0, x1, xt = gi, gi + 0.38, gi + 0.46
        for lv, yl in zip(lvs, placed[group]):
            E = lv.energy * e_scale
            ax.hlines(E, x0, x1, colors=c, lw=2.2)
            ax.plot([x1, xt - 0.02], [E, yl], color=c, lw=0.6, alpha=0.8)
            texts.append(ax.text(xt, yl, f"{lv.label}  {_energy_text(E, e_unit, digits)}", fontsize=fontsize,
                                 color=c, va="center", ha="left"))
    # room on the right for the last column's labels (measured on the renderer)
    renderer = fig.canvas.get_renderer()
    right = max((ax.transData.inverted().transform(t.get_window_extent(renderer))[1][0] for t in texts),
                default=len(groups))
    ax.set_xlim(-0.15, max(len(groups) - 0.05, right + 0.05))
    ax.set_xticks([gi + 0.19 for gi in range(len(groups))])
    ax.set_xticklabels([g or "levels" for g in groups], fontsize=9)
    for tick, g in zip(ax.get_xticklabels(), groups):
        tick.set_color(palette.equation_colour(g, list(groups).index(g)))
    ax.tick_params(axis="x", length=0)
    ax.set_ylabel(f"binding energy ({e_unit})")
    ax.grid(True, axis="y", alpha=0.25)
    if lo < 0 < ax.get_ylim()[1]:
        ax.axhline(0.0, color="0.6", lw=0.7, ls=":")
    return texts


def level_scheme(levels, path, *, energy_unit: str = "hartree", title: str | None = None) -> Path:
    """A level scheme: one column per group (equation or model), labelled bars, written to ``path``.

    See :func:`draw_level_scheme` for the layout; the format follows the suffix.
    """
    groups = _as_groups(levels)
    fig, ax = plt.subplots(figsize=(max(4.2, 2.9 * len(groups) + 1.0), 5.2))
    draw_level_scheme(ax, groups, energy_unit=energy_unit)
    ax.set_title(title or "bound levels")
    return save_figure(fig, path)


def _inner_extent(levels, lose: float = 1e-7) -> float:
    """Smallest radius (bohr) below which some level holds the fraction ``lose`` of its density."""
    low = math.inf
    for lv in levels:
        st = lv.state
        dens = st.P**2 if st.Q is None else st.P**2 + st.Q**2
        cum = np.cumsum(st.weights * dens)
        if cum[-1] > 0:
            low = min(low, float(st.r[min(int(np.searchsorted(cum / cum[-1], lose)), len(st.r) - 1)]))
    return low if math.isfinite(low) else 1e-3


def level_diagram(potential, levels, path, *, energy_unit: str = "hartree", length_unit: str = "bohr",
                  title: str | None = None, r_max: float | None = None, log_r: bool = True) -> Path:
    """The potential with its bound levels (left, against log r) beside their level scheme (right).

    Parameters
    ----------
    potential : Potential or callable
        A :class:`~boundkit.potentials.Potential` (its vector part V, its
        scalar part S and, when S is not zero, V + S are drawn) or a callable
        V(r) (r in bohr, V in hartree).
    levels : sequence of Level, or mapping of group name to levels
        Levels to draw; each group (an equation or a model) has one colour
        in both panels and one column in the scheme.
    path : str or Path
        Output file (.png, .svg or .pdf).
    energy_unit, length_unit : str
        Units of the axes.
    title : str, optional
    r_max : float, optional
        Right end of the r axis in bohr (default: beyond the outermost
        classical turning point).
    log_r : bool
        Logarithmic r axis (default), from where the innermost level starts
        to where the outermost has decayed: a finite nucleus and the levels
        that feel it show on the same axis as the outer levels.

    Notes
    -----
    Left: each level is a horizontal line at its binding energy where it is
    classically allowed, E > V + S (the potential the large component feels
    at low energy). Right: :func:`draw_level_scheme` with the spectroscopic
    label and the energy of every level, labels kept apart.
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
    r_min = min(_inner_extent(every), r_max * 1e-3) if (every and log_r) else r_max * 1e-4
    r = np.geomspace(r_min, r_max, 1500) if log_r else np.linspace(r_min, r_max, 1500)
    with np.errstate(all="ignore"):
        v = np.asarray(V(r), float)
        s = np.asarray(S(r), float)
    total = v + s
    has_scalar = bool(np.any(s != 0))
    energies = np.array([lv.energy for lv in every]) if every else np.zeros(0)
    fig, (ax, axs) = plt.subplots(1, 2, figsize=(7.2 + 2.6 * len(groups), 5.0),
                                  gridspec_kw={"width_ratios": [1.35, 0.9 * max(len(groups), 1)]})
    x = r * l_scale
    if has_scalar:
        ax.plot(x, v * e_scale, color="0.45", lw=1.0, ls="--", label="vector V(r)")
        ax.plot(x, s * e_scale, color="0.45", lw=1.0, ls=":", label="scalar S(r)")
        ax.plot(x, total * e_scale, color="black", lw=1.8, label="V(r) + S(r)")
    else:
        ax.plot(x, v * e_scale, color="black", lw=1.8, label="V(r)")
    for gi, (group, lvs) in enumerate(groups.items()):
        c = palette.equation_colour(group, gi)
        for k, lv in enumerate(sorted(lvs, key=lambda lv: lv.energy)):
            inside = np.nonzero(total < lv.energy)[0]
            a, b = (x[inside[0]], x[inside[-1]]) if inside.size else (x[0], x[-1])
            ax.hlines(lv.energy * e_scale, a, b, colors=c, lw=1.3, alpha=0.9,
                      label=(group or "levels") if k == 0 else None)
    if log_r:
        ax.set_xscale("log")
    ax.set_xlim(x[0], x[-1])
    texts = draw_level_scheme(axs, groups, energy_unit=e_unit) if every else []
    if energies.size:
        ax.set_ylim(*axs.get_ylim())
    ax.axhline(0.0, color="0.6", lw=0.7)
    ax.set_xlabel(f"r ({l_unit}, logarithmic)" if log_r else f"r ({l_unit})")
    ax.set_ylabel(f"binding energy ({e_unit})")
    ax.legend(fontsize=7, loc="lower right")
    ax.grid(True, alpha=0.25, which="both" if not log_r else "major")
    axs.set_ylabel("")
    axs.set_title("levels", fontsize=10)
    fig.suptitle(title or "potential and bound levels")
    fig._boundkit_labels = texts  # for layout checks (tests)
    return save_figure(fig, path)


def shift_figure(rows, path, *, unit: str, reference: str, title: str | None = None) -> Path:
    """Shifts of levels against a reference model, one horizontal bar per level and model.

    Parameters
    ----------
    rows : sequence of dict
        ``label``, ``model``, ``equation``, ``shift`` and ``error_estimate``
        (already in ``unit``), in the order to draw (top to bottom).
    path : str or Path
        Output file (.png, .svg or .pdf).
    unit : str
        Energy unit of the shifts (printed on the axis).
    reference : str
        Name of the reference model (the axis says what is subtracted).
    title : str, optional

    Notes
    -----
    Shift = E(model) - E(reference) of the same level; a bar's colour is its
    equation's (:mod:`boundkit.palette`), and the value is printed beside it
    with the digits its error estimate supports (:mod:`boundkit.reporting`).
    Shifts of very different size share a symmetric-log axis, so a 1e-6 shift
    stays visible beside a large one.
    """
    from .reporting import format_difference

    rows = list(rows)
    if not rows:
        raise ValueError("plot: no shifts to draw")
    fig, ax = plt.subplots(figsize=(7.0, 0.9 + 0.34 * len(rows)))
    y = np.arange(len(rows))[::-1]
    vals = np.array([r["shift"] for r in rows], float)
    for yi, r, v in zip(y, rows, vals):
        c = palette.equation_colour(r["equation"])
        ax.barh(yi, v, color=c, alpha=0.85, height=0.62)
        ax.text(v, yi, "  " + format_difference(v, r["error_estimate"], 6) + "  ", va="center",
                ha="left" if v >= 0 else "right", fontsize=7.5, color=c)
    ax.set_yticks(y)
    ax.set_yticklabels([f"{r['model']}, {r['equation']}: {r['label']}" for r in rows], fontsize=8)
    nonzero = np.abs(vals[vals != 0])
    big, small = (float(nonzero.max()), float(nonzero.min())) if nonzero.size else (0.0, 0.0)
    name = f"E(model) - E({reference})"
    if small and big / small > 1e3 and (np.all(vals >= 0) or np.all(vals <= 0)):
        # one sign, many decades: a log axis of the magnitude, bars from below the smallest
        ax.cla()
        floor = small / 3
        sign = "" if np.all(vals >= 0) else "-"
        for yi, r, v in zip(y, rows, vals):
            c = palette.equation_colour(r["equation"])
            ax.barh(yi, max(abs(v), floor) - floor, left=floor, color=c, alpha=0.85, height=0.62)
            ax.text(max(abs(v), floor), yi, "  " + format_difference(v, r["error_estimate"], 6), va="center",
                    ha="left", fontsize=7.5, color=c)
        ax.set_xscale("log")
        ax.set_yticks(y)
        ax.set_yticklabels([f"{r['model']}, {r['equation']}: {r['label']}" for r in rows], fontsize=8)
        ax.set_xlim(floor, big * 30)
        name = f"{sign}[{name}]" if sign else name
    elif small and big / small > 1e3:
        ax.set_xscale("symlog", linthresh=small)
    else:
        lo, hi = ax.get_xlim()
        pad = 0.25 * (hi - lo)
        ax.set_xlim(lo - (pad if lo < 0 else 0), hi + pad)
    if ax.get_xscale() != "log":
        ax.axvline(0.0, color="0.4", lw=0.8)
    ax.set_xlabel(f"{name} ({unit})")
    ax.set_title(title or f"level shifts against {reference}", fontsize=10)
    ax.grid(True, axis="x", alpha=0.25)
    return save_figure(fig, path)

