"""Figures fit for a talk: level-scheme labels never overlap, colours are fixed per equation,
scan axes follow the scanned range. Checked on the matplotlib renderer's text boxes."""
from __future__ import annotations

import itertools

import numpy as np
import pytest

import boundkit
from boundkit import palette, plots


def _boxes(fig, texts):
    fig.canvas.draw()
    renderer = fig.canvas.get_renderer()
    return [t.get_window_extent(renderer) for t in texts]


def _overlaps(boxes):
    return [(i, j) for (i, a), (j, b) in itertools.combinations(enumerate(boxes), 2) if a.overlaps(b)]


@pytest.fixture(scope="module")
def hydrogen_fine_structure():
    """Dirac hydrogen n <= 4: levels 2s1/2 and 2p1/2 are degenerate (Dirac 1928) and the rest
    differ by ~1e-5 of their energy: every label wants the same height."""
    groups = {"dirac": [], "schrodinger": []}
    for kappa in (-1, 1, -2, 2, -3):
        groups["dirac"] += boundkit.solve("dirac", "coulomb", {"Z": 1}, kappa=kappa, levels=3).levels
    for l in (0, 1, 2):
        groups["schrodinger"] += boundkit.solve("schrodinger", "coulomb", {"Z": 1}, l=l, levels=3).levels
    return groups


def test_level_scheme_labels_do_not_overlap(hydrogen_fine_structure):
    fig, ax = plots.plt.subplots(figsize=(6.5, 5.0))
    texts = plots.draw_level_scheme(ax, hydrogen_fine_structure, energy_unit="eV")
    assert len(texts) == sum(len(v) for v in hydrogen_fine_structure.values())
    boxes = _boxes(fig, texts)
    assert _overlaps(boxes) == []
    # every label stays inside the axes
    inside = ax.get_window_extent()
    assert all(inside.y0 <= b.y0 and b.y1 <= inside.y1 for b in boxes)
    # every label names its level and carries the energy with its unit
    assert all(t.get_text().endswith(" eV") for t in texts)
    # columns take the equations' fixed colours
    colours = {t.get_color() for t in texts}
    assert colours == {palette.EQUATION_COLOURS["dirac"], palette.EQUATION_COLOURS["schrodinger"]}
    plots.plt.close(fig)


def test_level_diagram_writes_log_r_panel_without_overlaps(hydrogen_fine_structure, tmp_path, monkeypatch):
    kept = {}
    real_save = plots.save_figure

    def keep(fig, path):
        kept["fig"] = fig
        fig.canvas.draw()
        kept["boxes"] = _boxes(fig, fig._boundkit_labels)
        kept["xscale"] = fig.axes[0].get_xscale()
        kept["xlabel"] = fig.axes[0].get_xlabel()
        return real_save(fig, path)

    monkeypatch.setattr(plots, "save_figure", keep)
    from boundkit.potentials import make_potential
    out = plots.level_diagram(make_potential("coulomb", {"Z": 1}), hydrogen_fine_structure, tmp_path / "l.png",
                              energy_unit="eV", length_unit="angstrom")
    assert out.exists() and out.stat().st_size > 10_000
    assert _overlaps(kept["boxes"]) == []
    assert kept["xscale"] == "log" and kept["xlabel"] == "r (angstrom, logarithmic)"


@pytest.mark.parametrize("wanted, gap", [([0, 0, 0, 0], 1.0), ([0, 0.1, 5, 5.05, 5.1], 0.5),
                                          (list(np.random.default_rng(3).normal(size=40)), 0.2)])
def test_spread_labels_keeps_gaps_and_stays_close(wanted, gap):
    y = plots.spread_labels(wanted, gap)
    order = np.argsort(wanted, kind="stable")
    assert np.all(np.diff(y[order]) >= gap * (1 - 1e-12))
    # optimality of the pooled solution: each pool is centred on its targets (mean shift zero)
    assert abs(np.mean(y) - np.mean(wanted)) < 1e-9
    # labels that do not crowd stay where they are
    far = plots.spread_labels([0.0, 10.0, 20.0], 1.0)
    assert far.tolist() == [0.0, 10.0, 20.0]


def test_equation_colours_are_fixed():
    assert palette.equation_colour("Dirac") == palette.equation_colour("dirac: 1s1/2") == "#6b2d6b"
    assert palette.equation_colour("model A", 3) == palette.SEQUENCE[3]
    assert len(set(palette.EQUATION_COLOURS.values()) | set(palette.SEQUENCE)) == 13


@pytest.mark.parametrize("values, want", [
    (np.geomspace(2, 8, 5), True),          # START:STOP:N:log spacing over a factor 4
    (np.linspace(2, 8, 5), False),
    (np.linspace(1, 100, 5), True),         # over a factor 20
    ([-1.0, 1.0, 10.0], False),
    ([3.0], False),
])
def test_log_axis_follows_the_spacing(values, want):
    from boundkit.studies.figures import log_spaced
    assert log_spaced(values) is want


def _grab(monkeypatch, module):
    kept = {}

    def keep(fig, path):
        ax = fig.axes[0]
        kept.update(xscale=ax.get_xscale(), title=ax.get_title(), xlabel=ax.get_xlabel(), ylabel=ax.get_ylabel(),
                    ylim=ax.get_ylim(), colours=[ln.get_color() for ln in ax.lines if ln.get_label()[:1] != "_"])
        plots.plt.close(fig)
        return path
    monkeypatch.setattr(module, "save_figure", keep)
    return kept


def _synthetic_scan():
    from boundkit.studies.scan import ScanResult
    xs = tuple(np.geomspace(1, 16, 5))
    rows = []
    for eq, shift in (("schrodinger", 0.0), ("dirac", -1e-5)):
        for x in xs:
            rows.append({"D": x, "equation": eq, "channel": "l=0" if eq == "schrodinger" else "kappa=-1",
                         "label": "1s" if eq == "schrodinger" else "1s1/2", "energy": -0.5 + 0.1 / x + shift,
                         "error_estimate": 1e-14, "status": "ok", "message": ""})
    return ScanResult(parameters=("D",), values={"D": xs}, rows=tuple(rows),
                      settings={"equations": ["schrodinger", "dirac"], "potential": "yukawa"},
                      parameter_units={"D": "bohr"})


def test_scan_figure_axes_title_and_equation_colours(monkeypatch):
    from boundkit.studies import figures
    kept = _grab(monkeypatch, figures)
    figures.scan_figure(_synthetic_scan(), "x.png", unit="eV")
    assert kept["xscale"] == "log"
    assert kept["xlabel"] == "D (bohr)" and kept["ylabel"] == "binding energy (eV)"
    assert kept["title"] == "bound levels against D: yukawa (Schrodinger, Dirac equations)"
    assert kept["colours"] == [palette.EQUATION_COLOURS["schrodinger"], palette.EQUATION_COLOURS["dirac"]]


def test_difference_figure_spans_the_difference(monkeypatch):
    """A 5 meV effect on -2.5 keV levels fills the axis (the issue's invisible shift)."""
    from boundkit.studies import figures
    kept = _grab(monkeypatch, figures)
    x = np.linspace(0.5, 1.5, 6)
    d = 5.0 + 0.1 * x                                    # meV
    figures.difference_figure(x, d, "d.png", name="E(2p1/2) - E(2s1/2)", unit="meV", parameter="rms_fm",
                              parameter_unit="fm")
    lo, hi = kept["ylim"]
    assert lo > 4.5 and hi < 5.7
    assert kept["ylabel"] == "E(2p1/2) - E(2s1/2) (meV)" and kept["xlabel"] == "rms_fm (fm)"
    assert kept["xscale"] == "linear"


def test_scan_figure_shows_changes_when_levels_barely_move(monkeypatch):
    """Levels of -0.5 hartree moving by 1e-5 (the issue's 5 meV on a -2.5e6 meV axis): plot E - E(first)."""
    from boundkit.studies import figures
    from boundkit.studies.scan import ScanResult
    xs = (0.8, 0.84, 0.88)
    rows = tuple({"rms_fm": x, "equation": "dirac", "channel": "kappa=-1", "label": "2s1/2",
                  "energy": -0.5 + 1e-5 * (x - 0.8), "error_estimate": 1e-15, "status": "ok", "message": ""}
                 for x in xs)
    res = ScanResult(parameters=("rms_fm",), values={"rms_fm": xs}, rows=rows,
                     settings={"equations": ["dirac"], "potential": "uniform-sphere"},
                     parameter_units={"rms_fm": "fm"})
    kept = _grab(monkeypatch, figures)
    figures.scan_figure(res, "s.png", unit="hartree", subject="finite proton")
    assert kept["ylabel"] == "change of binding energy from rms_fm = 0.8 fm (hartree)"
    assert kept["title"] == "change of the bound levels against rms_fm: finite proton"
    lo, hi = kept["ylim"]
    assert hi - lo < 1e-5


def test_radial_figures_use_shades_of_the_equation_colour(hydrogen_fine_structure, monkeypatch):
    kept = _grab(monkeypatch, plots)
    plots.radial_figure(hydrogen_fine_structure["dirac"][:3], "r.png")
    want = palette.shades(palette.EQUATION_COLOURS["dirac"], 3)
    assert want[0] == palette.EQUATION_COLOURS["dirac"]
    solid = kept["colours"][0::2][:3]          # P solid, Q dashed, per level
    assert solid == want


def test_shift_figure_uses_a_log_axis_for_shifts_over_many_decades(monkeypatch):
    kept = _grab(monkeypatch, plots)
    rows = [{"model": "sphere", "equation": eq, "label": lab, "shift": v, "error_estimate": 1e-12}
            for eq, lab, v in (("dirac", "1s1/2", 0.199), ("dirac", "2p1/2", 4.4e-3), ("schrodinger", "2p", 6e-9))]
    plots.shift_figure(rows, "s.png", unit="keV", reference="point")
    assert kept["xscale"] == "log" and kept["xlabel"] == "E(model) - E(point) (keV)"
    lo, hi = kept["ylim"]
    assert hi - lo > 2          # three bars


def test_a_scan_where_every_point_failed_draws_no_empty_legend(tmp_path):
    """Every point of the scan failed (a point Dirac charge beyond Z alpha = 1): the figure says so, and
    matplotlib's 'no artists with labels' warning does not reach the user (found by a tester)."""
    import warnings

    from boundkit.studies import figures
    from boundkit.studies.scan import ScanResult
    rows = tuple({"Z": z, "equation": "dirac", "channel": "kappa=-1", "label": "1s1/2", "energy": float("nan"),
                  "error_estimate": float("nan"), "status": "error", "message": "Z: ..."} for z in (140.0, 150.0))
    res = ScanResult(parameters=("Z",), values={"Z": (140.0, 150.0)}, rows=rows,
                     settings={"equations": ["dirac"], "potential": "coulomb"}, parameter_units={"Z": ""})
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        path = figures.scan_figure(res, tmp_path / "all_failed.png", unit="hartree")
    assert path.exists()


def test_a_convergence_study_without_rows_draws_no_empty_legend(tmp_path):
    """A convergence study whose every solve found nothing (seen in a run spec's [converge] that failed):
    no matplotlib 'no artists with labels' warning."""
    import types
    import warnings

    result = types.SimpleNamespace(rows=(), orders={}, equation="schrodinger", potential="hulthen")
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        path = plots.convergence_figure(result, tmp_path / "conv.png")
    assert path.exists()


def test_a_title_with_dollar_signs_is_drawn_as_text(tmp_path):
    """A table file named w$x_\\frac$.txt put its name in the title and matplotlib's math parser failed:
    the figure was lost (a tester). Titles are plain text now."""
    import types

    result = types.SimpleNamespace(rows=(), orders={}, equation="schrodinger", potential="table w$x_\\frac$.txt")
    assert plots.convergence_figure(result, tmp_path / "conv.png").exists()
