"""Figures are saved with one draw and cropped as matplotlib's bbox_inches="tight" crops them.

`plots.save_figure` finds the tight box without drawing (`plots.tight_box`) and hands it to savefig,
instead of bbox_inches="tight", which draws every figure twice. Checked for every kind of figure a run
draws: the box equals the one matplotlib finds after drawing the figure, the PNG has the box's size,
and every text of the figure lies inside the saved canvas (nothing clipped).
"""
from __future__ import annotations

import os
import types

import matplotlib
import numpy as np
import pytest
from matplotlib.text import Text
from PIL import Image

import boundkit
from boundkit import plots

PX = 1.0 / plots._DPI       # one pixel of the saved figure, in inches


@pytest.fixture(scope="module")
def levels():
    dirac = []
    for kappa in (-1, 1, -2):
        dirac += boundkit.solve("dirac", "coulomb", {"Z": 1}, kappa=kappa, levels=2).levels
    schrodinger = []
    for l in (0, 1):
        schrodinger += boundkit.solve("schrodinger", "coulomb", {"Z": 1}, l=l, levels=2).levels
    return {"dirac": dirac, "schrodinger": schrodinger}


@pytest.fixture
def saved(monkeypatch):
    """Each figure saved through plots._print, with its box, matplotlib's tight box after a draw, and
    every text drawn into the file: its window extent and the size of the canvas it was drawn on."""
    kept = []
    real_print, real_draw = plots._print, Text.draw
    drawn = None

    def draw(text, renderer):
        if drawn is not None and text.get_visible() and text.get_text().strip():
            drawn.append((text.get_text(), text.get_window_extent(renderer), renderer.width, renderer.height))
        return real_draw(text, renderer)

    def keep(fig, target, fmt):
        nonlocal drawn
        box = plots.tight_box(fig)
        drawn = []
        real_print(fig, target, fmt)
        texts, drawn = drawn, None
        fig.draw_without_rendering()        # what bbox_inches="tight" does before it measures
        reference = fig.get_tightbbox(fig.canvas.get_renderer()).padded(matplotlib.rcParams["savefig.pad_inches"])
        kept.append({"box": box, "reference": reference, "dpi": fig.dpi, "texts": texts})

    monkeypatch.setattr(plots, "_print", keep)
    monkeypatch.setattr(Text, "draw", draw)
    return kept


def _scan_result():
    from boundkit.studies.scan import ScanResult
    xs = tuple(np.geomspace(1, 16, 5))
    rows = tuple({"D": x, "equation": "schrodinger", "channel": "l=0", "label": "1s", "energy": -0.5 + 0.1 / x,
                  "error_estimate": 1e-14, "status": "ok", "message": ""} for x in xs)
    return ScanResult(parameters=("D",), values={"D": xs}, rows=rows,
                      settings={"equations": ["schrodinger"], "potential": "yukawa"}, parameter_units={"D": "bohr"})


def _shifts(values):
    return [{"model": "sphere", "equation": eq, "label": lab, "shift": v, "error_estimate": 1e-12}
            for (eq, lab), v in zip((("dirac", "1s1/2"), ("dirac", "2p1/2"), ("schrodinger", "2p")), values)]


FIGURES = {
    "radial": lambda lv, p: plots.radial_figure(lv["dirac"], p, length_unit="fm", title="H: dirac radial functions"),
    "density": lambda lv, p: plots.density_figure(lv, p, length_unit="pm"),
    "levels": lambda lv, p: plots.level_diagram(boundkit.potentials.make_potential("coulomb", {"Z": 1}), lv, p,
                                                energy_unit="eV", length_unit="angstrom", title="hydrogen"),
    "scheme": lambda lv, p: plots.level_scheme({"a": lv["dirac"], "b": lv["schrodinger"]}, p, energy_unit="keV"),
    "shifts-linear": lambda lv, p: plots.shift_figure(_shifts([0.2, -0.1, 0.05]), p, unit="keV", reference="point"),
    "shifts-log": lambda lv, p: plots.shift_figure(_shifts([0.199, 4.4e-3, 6e-9]), p, unit="keV", reference="point"),
    "shifts-symlog": lambda lv, p: plots.shift_figure(_shifts([0.199, -4.4e-3, 6e-9]), p, unit="keV",
                                                      reference="point"),
    "convergence": lambda lv, p: plots.convergence_figure(types.SimpleNamespace(
        rows=[{"method": "spectral", "label": "1s", "size": n, "error": 10.0 ** -n} for n in (4, 8, 12)],
        orders={}, equation="schrodinger", potential="coulomb"), p),
    "scan": lambda lv, p: __import__("boundkit.studies.figures", fromlist=["x"]).scan_figure(_scan_result(), p),
}


@pytest.mark.parametrize("kind", list(FIGURES))
def test_one_draw_saves_the_tight_box_and_clips_no_text(kind, levels, saved, tmp_path):
    path = FIGURES[kind](levels, tmp_path / f"{kind}.png")
    assert path.exists() and len(saved) == 1
    got = saved[0]
    box, ref = got["box"], got["reference"]
    # the box found without drawing is the one matplotlib finds after a draw (within a tenth of a pixel)
    assert np.allclose(box.get_points(), ref.get_points(), atol=0.1 * PX), (box, ref)
    # the file is the box at 150 dpi
    with Image.open(path) as im:
        size = im.size
    assert abs(size[0] - box.width * plots._DPI) <= 1 and abs(size[1] - box.height * plots._DPI) <= 1
    # every text drawn into the file lies inside its canvas (pixels)
    assert got["dpi"] == plots._DPI
    assert len(got["texts"]) >= 4          # title, axis labels, tick labels at least
    for text, ext, width, height in got["texts"]:
        assert (width, height) == size
        assert 0 <= ext.x0 and ext.x1 <= width and 0 <= ext.y0 and ext.y1 <= height, (text, ext, size)


@pytest.mark.parametrize("suffix", [".svg", ".pdf"])
def test_vector_figures_keep_matplotlib_s_tight_crop(suffix, levels, tmp_path):
    path = plots.radial_figure(levels["dirac"], tmp_path / f"r{suffix}")
    assert path.exists() and path.stat().st_size > 1000


def test_a_forked_process_parses_math_text_with_its_own_fonts(levels, tmp_path):
    """Labels parsed before a fork hold the parent's fonts, whose files the child would read at the
    shared file offsets: a run's figure was lost to 'FT_Load_Glyph failed: invalid outline' while the
    helper process drew beside the run. A child starts a parser of its own."""
    plots.radial_figure(levels["dirac"], tmp_path / "before.png")       # parses the axis label's math
    parent = plots._Canvas._parser
    assert parent is not None
    pid = os.fork()
    if pid == 0:    # pragma: no cover - the child reports through its exit code
        code = 1
        try:
            fresh = plots._Canvas._parser is None
            plots.radial_figure(levels["dirac"], tmp_path / "child.png")
            code = 0 if fresh and plots._Canvas._parser is not parent else 2
        finally:
            os._exit(code)
    assert os.waitpid(pid, 0)[1] == 0
    assert plots._Canvas._parser is parent
    assert (tmp_path / "child.png").read_bytes() == (tmp_path / "before.png").read_bytes()
