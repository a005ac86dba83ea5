"""The safe expression language for potentials: values, parameters, refusals, solver use."""
from __future__ import annotations

import ast
import logging
import re
import warnings
from pathlib import Path

import numpy as np
import pytest
from scipy.special import erf, erfc

import boundkit
from boundkit.potentials import expression as expression_module
from boundkit.potentials.expression import ExpressionTerm, parse_expression

R = np.logspace(-3, 2, 257)


# ---------------------------------------------------------------------------
# values
# ---------------------------------------------------------------------------

# Each expected value is the same formula written directly in numpy (common practice).
CASES = [
    ("-Z*exp(-r/D)/r", {"Z": 2.0, "D": 3.0}, lambda r: -2.0 * np.exp(-r / 3.0) / r),
    # field of a uniformly charged sphere of radius R0 (J. D. Jackson, Classical Electrodynamics, 1999)
    ("where(r < R0, -Z/(2*R0)*(3 - (r/R0)**2), -Z/r)", {"Z": 3.0, "R0": 0.7},
     lambda r: np.where(r < 0.7, -3.0 / (2 * 0.7) * (3 - (r / 0.7) ** 2), -3.0 / r)),
    # field of a Gaussian charge distribution (common practice)
    ("-Z*erf(r/a)/r", {"Z": 1.0, "a": 0.05}, lambda r: -erf(r / 0.05) / r),
    ("sqrt(abs(sin(r)) + cosh(r/10)) - log(1 + tanh(r)**2) + erfc(r)*e**(-r) + pi", {},
     lambda r: np.sqrt(np.abs(np.sin(r)) + np.cosh(r / 10)) - np.log(1 + np.tanh(r) ** 2)
     + erfc(r) * np.e ** (-r) + np.pi),
    ("1.5e-3*r**2 - 2E+1/r + .5 + 3 - cos(tan(r/100))", {},
     lambda r: 1.5e-3 * r**2 - 2e1 / r + 0.5 + 3 - np.cos(np.tan(r / 100))),
    ("-(+r) - -r + sinh(-r/50)", {}, lambda r: -r + r + np.sinh(-r / 50)),
    ("where(1 < r <= 2, 1, where(r >= 50, -1, 0))", {},
     lambda r: np.where((r > 1) & (r <= 2), 1.0, np.where(r >= 50, -1.0, 0.0))),
    ("(2**3)**0.5 * r**-2 * Z**r", {"Z": 1.1}, lambda r: (2**3) ** 0.5 * r**-2.0 * 1.1**r),
]


@pytest.mark.parametrize("text, params, func", CASES, ids=[c[0] for c in CASES])
def test_values_equal_the_numpy_formula(text, params, func):
    got = parse_expression(text).evaluate(R, params)
    assert got.shape == R.shape and got.dtype == float
    np.testing.assert_allclose(got, func(R), rtol=1e-14, atol=0)


def test_term_call_matches_evaluate_and_keeps_shape():
    term = ExpressionTerm("-Z*exp(-r/D)/r", {"Z": 2, "D": 3})
    r2 = R[:256].reshape(16, 16)
    np.testing.assert_array_equal(term(r2), -2.0 * np.exp(-r2 / 3.0) / r2)
    # a constant expression still gives one value per radius
    assert np.array_equal(parse_expression("-2").evaluate(R), np.full(R.shape, -2.0))
    assert parse_expression("-Z/r").evaluate(2.0, {"Z": 1}).shape == ()


def test_parameter_discovery():
    c = parse_expression("-Z*exp(-r/D)/r + a*r**2 + Z*pi*e + sqrt(r)")
    assert c.parameter_names == ("Z", "D", "a")
    assert c.positions == {"Z": 2, "D": 11, "a": 18}
    assert parse_expression("exp(-r) + pi").parameter_names == ()


def test_term_keeps_used_parameters_and_exposes_names():
    term = ExpressionTerm("-Z/r", {"Z": 1, "unused": 5})
    assert term.parameter_names == ("Z",)
    assert term.values == {"Z": 1.0}
    assert term.label == term.formula == "-Z/r"
    assert term.name == "expr" and term.source == "user expression"
    assert [p.name for p in term.parameters] == ["Z"]


def test_missing_parameter_is_named_with_position_and_fix():
    with pytest.raises(ValueError, match=r"'D' at position 11.*--param D=VALUE"):
        ExpressionTerm("-Z*exp(-r/D)/r", {"Z": 1})
    with pytest.raises(ValueError, match=r"unknown name 'os' at position 1.*--param os=VALUE"):
        ExpressionTerm("os", {})
    with pytest.raises(ValueError, match=r"params\['Z'\]: expected a finite number"):
        ExpressionTerm("-Z/r", {"Z": float("nan")})


# ---------------------------------------------------------------------------
# refusals: every message names the token and its 1-based position
# ---------------------------------------------------------------------------

REFUSALS = [
    ("r^2", r"operator '\^' at position 2 .*write \*\* for powers"),
    ("r.__class__", r"attribute access '\.__class__' at position 2"),
    ("os.system('ls')", r"attribute access '\.system' at position 3"),
    ("__import__('os')", r"name '__import__' at position 1 .*a name may not start with '_'"),
    ("r + __builtins__", r"name '__builtins__' at position 5"),
    ("r[0]", r"subscript 'r\[0\]' at position 1"),
    ("exp(r)[1:2]", r"subscript 'exp\(r\)\[1:2\]' at position 1"),
    ("getattr(r, 'x')", r"function 'getattr' at position 1 .*whitelist"),
    ("(r)(1)", r"function 'r' at position 2 .*whitelist"),
    ("exp(r)(1)", r"call of 'exp\(r\)' at position 1"),
    ("(lambda: 0)()", r"call of 'lambda: 0' at position 2 .*plain name"),
    ("exp(x=r)", r"keyword argument 'x=' at position 5"),
    ("where(r < 1, 1, b=2)", r"keyword argument 'b=' at position 17"),
    ("lambda x: x", r"lambda 'lambda x: x' at position 1"),
    ("[x for x in r]", r"comprehension '\[x for x in r\]' at position 1"),
    ("sum(x for x in r)", r"function 'sum' at position 1"),
    ("1 + sum", r"unknown name"),  # a free name is a parameter: refused below when it has no value
    ("'abc'", r"string \"'abc'\" at position 1"),
    ("r + f'{r}'", r"string \"f'\{r\}'\" at position 5"),
    ("10**10**10", r"power tower of literals '10\*\*10' at position 5"),
    ("r**1001", r"exponent '1001' at position 4 .*<= 1000"),
    ("r**-1001", r"exponent '-1001' at position 4"),
    ("exp(r)**(500*3)", r"exponent '500\*3' at position 10"),
    ("", r"empty input"),
    ("   ", r"empty input"),
    ("exp(r, 2)", r"call 'exp' at position 1 .*takes 1 argument, got 2"),
    ("where(r < 1, 2)", r"call 'where' at position 1 .*takes 3 arguments, got 2"),
    ("sqrt()", r"call 'sqrt' at position 1 .*got 0"),
    ("r +* 2", r"syntax error at position 4 \(near '\*'\)"),
    ("-Z/(r", r"syntax error at position 4"),
    ("r < 1", r"comparison '<' at position 3 .*only allowed as the condition of where"),
    ("where(r == 1, 1, 2)", r"comparison '==' at position 9"),
    ("where(r, 1, 2)", r"condition 'r' at position 7"),
    ("r if r > 1 else 2", r"if-expression .* at position 1"),
    ("r and 1", r"and/or .* at position 1"),
    ("r % 2", r"operator '%' at position 3"),
    ("r // 2", r"operator '//' at position 3"),
    ("exp(*r)", r"starred argument '\*r' at position 5"),
    ("True", r"constant 'True' at position 1"),
    ("None*r", r"constant 'None' at position 1"),   # (1j is an imaginary number: allowed)
    ("1e400", r"number '1e400' at position 1"),
    ("(r, r)", r"tuple '\(r, r\)' at position 1"),
    ("(x := 1)", r"assignment 'x := 1' at position 2"),
    ("r\x00", r"control character '\\\\x00' at position 2"),
    ("exp", r"function name 'exp' at position 1 .*call it"),
    ("  \u03b1 + r.x", r"attribute access '\.x' at position 8"),  # positions count characters, not bytes
]


@pytest.mark.parametrize("text, pattern", REFUSALS, ids=[t for t, _ in REFUSALS])
def test_refusals_name_token_and_position(text, pattern):
    with pytest.raises(ValueError, match=pattern):
        ExpressionTerm(text, {})


def test_refusal_message_says_what_is_allowed():
    with pytest.raises(ValueError) as info:
        parse_expression("r^2")
    msg = str(info.value)
    for word in ("exp", "erfc", "where(condition, a, b)", "pi", "**"):
        assert word in msg


def test_length_limit():
    ok = "+".join(["r"] * 1000)  # 1999 characters, a flat sum: long but not deep
    assert len(ok) == 1999
    np.testing.assert_allclose(parse_expression(ok).evaluate(R), 1000 * R, rtol=1e-13)
    with pytest.raises(ValueError, match=r"2001 characters is too long \(at most 2000\)"):
        parse_expression("r" * 2001)


def test_nesting_limit():
    assert parse_expression("(" * 100 + "r" + ")" * 100).evaluate(2.0) == 2.0
    with pytest.raises(ValueError, match=r"nesting deeper than 100 brackets at '\(', position 101"):
        parse_expression("(" * 101 + "r" + ")" * 101)
    with pytest.raises(ValueError, match=r"nesting deeper than 100 levels at '-+\.\.\.', position 101"):
        parse_expression("-" * 150 + "r")
    with pytest.raises(ValueError, match=r"nesting deeper than 100 levels"):
        parse_expression("exp(" * 100 + "r" + ")" * 100)


def test_hostile_input_executes_nothing(tmp_path, monkeypatch):
    monkeypatch.chdir(tmp_path)
    target = tmp_path / "pwned.txt"
    hostile = [
        f"__import__('os').system('touch {target}')",
        f"open('{target}', 'w').write('x')",
        f"(lambda: open('{target}', 'w'))()",
        f"[open('{target}', 'w') for _ in (1,)]",
        f"r.__class__.__init__.__globals__['os'].system('touch {target}')",
        f"exp(open('{target}', 'w'))",
    ]
    for text in hostile:
        with pytest.raises(ValueError, match="at position"):
            ExpressionTerm(text, {})
    assert not target.exists()
    assert list(tmp_path.iterdir()) == []


def test_module_calls_no_eval_exec_or_compile():
    tree = ast.parse(Path(expression_module.__file__).read_text())
    called = {n.func.id for n in ast.walk(tree) if isinstance(n, ast.Call) and isinstance(n.func, ast.Name)}
    called |= {n.func.attr for n in ast.walk(tree) if isinstance(n, ast.Call) and isinstance(n.func, ast.Attribute)}
    assert not called & {"eval", "exec", "compile", "__import__"}


# ---------------------------------------------------------------------------
# behaviour at the ends
# ---------------------------------------------------------------------------

def test_end_behaviour_probed():
    coul = ExpressionTerm("-Z/r", {"Z": 3})
    assert (coul.origin_charge, coul.tail_charge, coul.far) == (3.0, 3.0, "zero")
    yuk = ExpressionTerm("-Z*exp(-r/D)/r", {"Z": 2, "D": 1})
    assert yuk.origin_charge == pytest.approx(2.0, rel=1e-9) and yuk.tail_charge == 0.0
    osc = ExpressionTerm("k*r**2/2", {"k": 1})
    assert (osc.origin_charge, osc.far) == (0.0, "confining")
    gauss = ExpressionTerm("-Z*erf(r/a)/r", {"Z": 1, "a": 0.1})
    assert gauss.origin_charge == 0.0 and gauss.tail_charge == pytest.approx(1.0, rel=1e-12)


def test_probe_points_on_a_pole_do_not_crash_or_warn(caplog):
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        pole = ExpressionTerm("1/(r - 1000) + r**2")   # infinite at the probe r = 1000
        assert pole.far == "confining"
        nan_far = ExpressionTerm("log(100 - r)")         # nan at every far probe
        with caplog.at_level(logging.WARNING):
            assert nan_far.far == "zero" and nan_far.tail_charge == 0.0
        values = nan_far(np.array([50.0, 200.0]))
    assert np.isnan(values[1])


def test_solver_refuses_non_finite_values():
    with pytest.raises(ValueError, match="not finite"):
        boundkit.solve("schrodinger", ExpressionTerm("-1/r + log(2 - r)"), l=0)


# ---------------------------------------------------------------------------
# through the solver
# ---------------------------------------------------------------------------

def test_hydrogen_from_an_expression():
    res = boundkit.solve("schrodinger", ExpressionTerm("-Z/r", {"Z": 1}), l=0, levels=3)
    assert res.success, res.message
    for lv in res.levels:
        # E_n = -1/(2 n^2) hartree (H. A. Bethe and E. E. Salpeter, Quantum Mechanics of
        # One- and Two-Electron Atoms, 1957)
        assert lv.energy == pytest.approx(-0.5 / lv.n**2, rel=1e-12, abs=0)
    assert [lv.n for lv in res.levels] == [1, 2, 3]


def test_yukawa_expression_equals_callable():
    Z, D = 2.0, 5.0
    expr = boundkit.solve("schrodinger", ExpressionTerm("-Z*exp(-r/D)/r", {"Z": Z, "D": D}), l=0, levels=2)
    func = boundkit.solve("schrodinger", lambda r: -2.0 * np.exp(-r / 5.0) / r, l=0, levels=2)
    assert expr.success and func.success
    assert len(expr.levels) == len(func.levels) == 2
    for a, b in zip(expr.levels, func.levels):
        # the same potential through two front ends: identical levels (common practice)
        assert a.energy == pytest.approx(b.energy, rel=1e-13, abs=0)
    assert re.search("exp", expr.potential)
