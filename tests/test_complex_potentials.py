"""Complex potentials written as expressions, parameters, model files and callables (issue 14, item 1).

An imaginary number is written ``0.5j`` (a bare ``i`` or ``j`` stays a parameter name). Complex
values reach boundkit.resonances; the real solver refuses them with a message that points there.
Check values: first-order perturbation theory with an exact integral (Gamma = -2 <W>), hydrogen's
exact 1s energy, and results of the same problem given another way (absorptive=, a callable).
"""
from __future__ import annotations

import json

import numpy as np
import pytest
from click.testing import CliRunner

import boundkit
from boundkit.cli import main
from boundkit.potentials.base import complex_values
from boundkit.potentials.catalog import read_model_file
from boundkit.potentials.expression import ExpressionTerm, parse_expression
from boundkit.units import HARTREE_EV

LAM = 1e-3
# W = -lam exp(-r) on the hydrogen 1s: <W> = -lam int 4 r^2 e^{-3r} dr = -8 lam/27 (exact integral),
# so Gamma = 16 lam/27 to first order, with a relative correction O(lam^2)
FIRST_ORDER = 16 * LAM / 27


def hydrogen_1s(res):
    (r,) = res.resonances
    assert r.kind == "quasi-bound" and r.label == "1s"       # named by continuity from the real limit
    assert abs(r.width / FIRST_ORDER - 1) < 1e-6
    assert 0 < r.energy + 0.5 < 0.2 * LAM**2                  # exact real limit -1/2 hartree, 2nd-order shift
    return r


# --- the expression language ---------------------------------------------------------------------
def test_imaginary_literals_give_complex_values():
    c = parse_expression("-V0*(1 + 0.1j)*exp(-r) + 2.5e-3j")
    v = c.evaluate(np.array([0.0, 1.0]), {"V0": 2.0})
    assert v.dtype == complex
    assert v == pytest.approx([-2 - 0.2j + 2.5e-3j, (-2 - 0.2j) * np.exp(-1) + 2.5e-3j])
    assert parse_expression("-1/r").evaluate([1.0]).dtype == float      # real stays real
    # a real power of a negative number stays real (nan), as before complex numbers were allowed
    assert np.isnan(parse_expression("(0 - r)**0.5").evaluate([1.0])[0])
    assert parse_expression("r**(1j)").evaluate([np.e])[0] == pytest.approx(np.exp(1j))


def test_complex_parameter_values():
    t = ExpressionTerm("-Z/r + W*exp(-r)", {"Z": 1, "W": -0.5j})
    with complex_values():                      # the context boundkit.resonances evaluates in
        assert t(np.array([1.0]))[0] == pytest.approx(-1 - 0.5j * np.exp(-1))
    with pytest.raises(ValueError, match="returned complex values .* use boundkit.resonances"):
        t(np.array([1.0]))                      # outside it, complex values are refused, never dropped
    assert t.origin_charge == pytest.approx(1.0) and t.tail_charge == pytest.approx(1.0)   # from Re V
    with pytest.raises(ValueError, match=r"params\['W'\]: expected a finite number"):
        ExpressionTerm("W*exp(-r)", {"W": complex(np.inf, 1)})


def test_bare_i_is_a_parameter_and_the_message_suggests_1j():
    with pytest.raises(ValueError, match=r"unknown name 'i' at position 11.*for the imaginary unit write 1j"):
        ExpressionTerm("-(1 + 0.1*i)/r")
    # with a value, i is an ordinary parameter
    assert ExpressionTerm("-i/r", {"i": 2.0})(np.array([1.0]))[0] == pytest.approx(-2.0)


def test_where_refuses_a_complex_condition():
    with pytest.raises(ValueError, match=r"expression: the condition of where\(\) compares complex values"):
        parse_expression("where(r*1j < 1, 1, 2)").evaluate([1.0])
    # a complex value in a branch is fine
    assert parse_expression("where(r < 1, 1j, 2)").evaluate([0.5, 2.0]) == pytest.approx([1j, 2])


# --- resonances takes them; the real solver refuses them -----------------------------------------
def test_resonances_with_a_complex_expression_parameter_and_callable():
    window = (-0.6, -0.4)
    a = hydrogen_1s(boundkit.resonances("schrodinger", ExpressionTerm(f"-1/r - {LAM}j*exp(-r)"), window=window))
    b = hydrogen_1s(boundkit.resonances("schrodinger", ExpressionTerm("-1/r + W*exp(-r)", {"W": -1j * LAM}),
                                        window=window))
    c = hydrogen_1s(boundkit.resonances("schrodinger", lambda r: -1 / r - 1j * LAM * np.exp(-r), window=window))
    d = hydrogen_1s(boundkit.resonances("schrodinger", "coulomb", {"Z": 1}, window=window,
                                        absorptive=lambda r: -LAM * np.exp(-r)))
    for x in (b, c, d):
        assert x.complex_energy == pytest.approx(a.complex_energy, abs=1e-12)


def test_dirac_complex_expression_term_first_order_width():
    # a complex term in the list of Dirac terms: Gamma = -2 <W> to first order, <W> over the real
    # solver's normalised state (density P^2 + Q^2; its own discretization)
    p = {"Z": 50, "rms_fm": 4.6}
    lam, a = 1e-3, 0.02
    level = boundkit.solve("dirac", "uniform-sphere", p, kappa=-1).levels[0]
    s = level.state
    dens = s.P**2 + s.Q**2
    W_mean = float(np.sum(s.weights * dens * -lam * np.exp(-s.r / a)) / np.sum(s.weights * dens))
    term = ExpressionTerm("W*exp(-r/a)", {"W": -1j * lam, "a": a})
    res = boundkit.resonances("dirac", ["uniform-sphere", term], p, kappa=-1, window=(-1300.0, -1290.0))
    (r,) = res.resonances
    assert r.label == level.label == "1s1/2" and r.kind == "quasi-bound"
    assert r.width == pytest.approx(-2 * W_mean, rel=1e-5)
    assert r.energy == pytest.approx(level.energy, rel=1e-9)


def test_the_real_solver_refuses_complex_terms_and_points_to_resonances():
    msg = "takes real potentials only; use boundkit.resonances"
    with pytest.raises(ValueError, match=msg):
        boundkit.solve("schrodinger", ExpressionTerm("-1/r - 0.01j*exp(-r)"))
    with pytest.raises(ValueError, match=msg):
        boundkit.solve("schrodinger", ExpressionTerm("-1/r + W*exp(-r)", {"W": -0.01j}))
    with pytest.raises(ValueError, match=msg):
        boundkit.solve("schrodinger", lambda r: -1 / r - 0.01j * np.exp(-r))
    # the real part of a complex value with zero imaginary part is a real parameter
    res = boundkit.solve("schrodinger", ExpressionTerm("-Z/r", {"Z": 1 + 0j}))
    assert res.levels[0].energy == pytest.approx(-0.5, rel=1e-9)        # exact hydrogen 1s


def test_a_built_in_term_refuses_a_complex_parameter():
    with pytest.raises(ValueError, match=r"params\['depth'\]: complex value \(1\+0.1j\) is taken by expression "
                                         r"terms .* absorptive="):
        boundkit.solve("schrodinger", "woods-saxon", {"depth": 1 + 0.1j, "radius": 2.0, "diffuseness": 0.5})


# --- model files ---------------------------------------------------------------------------------
MODEL = """name = "absorbing-hydrogen"
description = "hydrogen with a weak absorptive core"
source = "test model"
expression = "-1/r + W*exp(-r)"

[parameters.W]
default = "0 - {lam}j"
unit = "hartree"
description = "complex strength of the core term"
"""


def test_model_file_with_a_complex_default(tmp_path):
    path = tmp_path / "absorbing.toml"
    path.write_text(MODEL.format(lam=LAM), encoding="utf-8")
    spec = read_model_file(path)
    assert spec.defaults == {"W": pytest.approx(-1j * LAM)}
    term, used = spec.build({})
    hydrogen_1s(boundkit.resonances("schrodinger", term, window=(-0.6, -0.4)))
    # through the command line: JSON with separate energy and width fields and their units
    out = CliRunner().invoke(main, ["resonances", "--potential-file", str(path), "--window", "-14,-13",
                                    "--energy-unit", "eV", "--json"])
    assert out.exit_code == 0, out.output
    data = json.loads(out.output)
    assert data["units"]["energy"] == "eV" and data["units"]["width"] == "eV"
    (r,) = data["resonances"]
    assert r["label"] == "1s" and r["width"] == pytest.approx(FIRST_ORDER * HARTREE_EV, rel=1e-6)
    # the real solver refuses it, one line, exit 2
    out = CliRunner().invoke(main, ["solve", "--potential-file", str(path)])
    assert out.exit_code == 2 and "Traceback" not in out.output
    assert out.output.startswith("boundkit: error: ") and "use boundkit.resonances" in out.output


@pytest.mark.parametrize("default, match", [
    ('"50 + x j"', r"line 7, key 'default': '50 \+ x j' is not a number"),
    ('"nan+1j"', r"line 7, key 'default': 'nan\+1j' is not finite"),
])
def test_model_file_bad_complex_default(tmp_path, default, match):
    path = tmp_path / "bad.toml"
    path.write_text(MODEL.replace('"0 - {lam}j"', default), encoding="utf-8")
    with pytest.raises(ValueError, match=match):
        read_model_file(path)


def test_model_file_complex_default_needs_an_expression(tmp_path):
    path = tmp_path / "ws.toml"
    path.write_text('name = "c"\ndescription = "d"\nsource = "s"\nterm = "woods-saxon"\n\n[parameters.depth]\n'
                    'default = "1+1j"\nunit = "hartree"\ndescription = "depth"\n', encoding="utf-8")
    with pytest.raises(ValueError, match="line 7, key 'default': a complex default .* needs a model with an "
                                         "expression"):
        read_model_file(path)


# --- command line --------------------------------------------------------------------------------
def test_cli_complex_param_and_literal():
    runner = CliRunner()
    for args in (["--expr", "-1/r + W*exp(-r)", "--param", f"W=-{LAM}j"],
                 ["--expr", f"-1/r - {LAM}j*exp(-r)"]):
        out = runner.invoke(main, ["resonances", *args, "--window", "-0.6,-0.4", "--json"])
        assert out.exit_code == 0, out.output
        (r,) = json.loads(out.output)["resonances"]
        assert r["label"] == "1s" and r["width"] == pytest.approx(FIRST_ORDER, rel=1e-6)
    out = runner.invoke(main, ["solve", "--expr", "-1/r + W*exp(-r)", "--param", "W=-0.01j"])
    assert out.exit_code == 2 and "use boundkit.resonances" in out.output and "Traceback" not in out.output
    out = runner.invoke(main, ["solve", "--expr", "-Z/r", "--param", "Z=1+zj"])
    assert out.exit_code == 2 and "boundkit: error: --param 'Z=1+zj': '1+zj' is not a number" in out.output


# --- labels by continuity from the real limit ------------------------------------------------------
def test_labels_count_from_the_bottom_of_the_real_limit_not_from_the_window():
    # strong absorption W = -0.3 exp(-r/0.3) on hydrogen: in a window holding only the third s level,
    # and in an l = 1 window, the names follow the real limit's ladder (n = k + l, the k-th level of
    # -1/r from the bottom; exact hydrogen E_n = -1/(2 n^2)), not the order inside the window
    W = lambda r: -0.3 * np.exp(-r / 0.3)        # noqa: E731
    (s3,) = boundkit.resonances("schrodinger", "coulomb", {"Z": 1}, window=(-0.07, -0.04), absorptive=W).resonances
    assert s3.label == "3s" and s3.kind == "quasi-bound" and abs(s3.energy + 1 / 18) < 1e-3
    p = boundkit.resonances("schrodinger", "coulomb", {"Z": 1}, l=1, window=(-0.2, -0.04), absorptive=W).resonances
    assert [r.label for r in p] == ["2p", "3p"]
    assert [r.energy for r in p] == pytest.approx([-1 / 8, -1 / 18], abs=1e-3)
    assert p[0].width > p[1].width > 0                  # the 2p sits closer to the absorbing core


def test_absorptive_part_must_be_real():
    # a complex W would lose its imaginary part in i W: refused, not dropped
    with pytest.raises(ValueError, match=r"absorptive: W\(r\) must be real"):
        boundkit.resonances("schrodinger", "coulomb", {"Z": 1}, window=(-0.6, -0.4),
                            absorptive=ExpressionTerm("-0.001j*exp(-r)"))
