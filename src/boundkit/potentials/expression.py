"""A small, safe expression language for potentials V(r).

An expression such as ``"-Z*exp(-r/D)/r"`` is read with :func:`ast.parse`
(``mode="eval"``), which only builds a syntax tree; nothing of the user's text
is ever executed. The tree is checked against a whitelist and translated into
a private, minimal tree of tuples, which :meth:`CompiledExpression.evaluate`
walks with numpy, vectorised over an array of radii.

Grammar
-------
- numbers: ``2``, ``0.5``, ``1.5e-3``, and imaginary numbers written as in
  Python, a number with the suffix ``j``: ``1j``, ``0.05j``, ``2.5e-3j``
  (so ``-V0*(1 + 0.1j)*exp(-r)`` is a complex potential). The imaginary unit
  is ``1j``: a bare ``i`` or ``j`` is an ordinary name (a parameter), so
  existing expressions that use ``i`` as a parameter keep their meaning;
  when ``i`` or ``j`` is left without a value the message suggests ``1j``;
- the radius ``r`` (bohr) and named parameters (any other plain name);
- binary ``+ - * / **``, unary ``-`` and ``+``, parentheses;
- the functions ``exp log sqrt sin cos tan sinh cosh tanh erf erfc abs``
  (one argument each) and ``where(condition, a, b)``, whose condition is a
  comparison with ``< <= > >=`` (chains such as ``1 < r <= 2`` are allowed);
  comparisons appear nowhere else;
- the constants ``pi`` and ``e``.

Everything else is refused with a :class:`ValueError` that names the
offending token, its 1-based character position and what is allowed: ``^``
(write ``**``), attribute access, subscripts, strings, lambdas,
comprehensions, keyword arguments, calls of anything but a whitelisted
function name, names starting with ``_``, literal exponents
larger than 1000 in magnitude and power towers of literals such as
``10**10**10``, input longer than 2000 characters and nesting deeper than
100 levels.

The values are the potential in hartree with r in bohr, like every term of
boundkit. An expression with an imaginary number or a complex parameter value
gives complex values V_R + i W: :func:`boundkit.resonances` solves with them;
the real bound-state solver refuses them (pointing to ``resonances``).
Comparisons in ``where`` must compare real values.
"""
from __future__ import annotations

import ast
import functools
import logging
import math
import warnings
from dataclasses import dataclass
from typing import Any, Mapping

import numpy as np
import scipy.special

from .._checks import check_parameter, shorten
from .base import Parameter, ProbedTerm, refuse_complex

__all__ = ["CompiledExpression", "parse_expression", "ExpressionTerm", "FUNCTIONS", "CONSTANTS",
           "MAX_LENGTH", "MAX_DEPTH", "MAX_EXPONENT"]

log = logging.getLogger(__name__)

MAX_LENGTH = 2000
"""Longest accepted expression, in characters."""
MAX_DEPTH = 100
"""Deepest accepted nesting (brackets, or levels of the syntax tree)."""
MAX_EXPONENT = 1000.0
"""Largest accepted magnitude of a literal exponent."""

FUNCTIONS: dict[str, Any] = {
    "exp": np.exp,
    "log": np.log,
    "sqrt": np.sqrt,
    "sin": np.sin,
    "cos": np.cos,
    "tan": np.tan,
    "sinh": np.sinh,
    "cosh": np.cosh,
    "tanh": np.tanh,
    "erf": scipy.special.erf,
    "erfc": scipy.special.erfc,
    "abs": np.abs,
}
"""The one-argument functions an expression may call (besides ``where``)."""

CONSTANTS: dict[str, float] = {"pi": math.pi, "e": math.e}
"""Named constants."""

_ALLOWED = (
    "allowed: numbers (0.5j imaginary), r, names, + - * / ** (not ^), ( ), " + " ".join(FUNCTIONS) + ", where(condition, a, b) with "
    "< <= > >=, pi, e"
)
"""The reminder closing every refusal (kept short: a message stays under 300 characters)."""

_BINOPS = {ast.Add: "+", ast.Sub: "-", ast.Mult: "*", ast.Div: "/", ast.Pow: "**"}
_ADDITIVE = (ast.Add, ast.Sub)
_MULTIPLICATIVE = (ast.Mult, ast.Div)
_CMP = {ast.Lt: "<", ast.LtE: "<=", ast.Gt: ">", ast.GtE: ">="}
_CMP_FUNCS = {"<": np.less, "<=": np.less_equal, ">": np.greater, ">=": np.greater_equal}
_REFUSED_OPS = {ast.BitXor: "^", ast.Mod: "%", ast.FloorDiv: "//", ast.MatMult: "@", ast.BitAnd: "&",
                ast.BitOr: "|", ast.LShift: "<<", ast.RShift: ">>"}
_NODE_WORDS = {
    ast.Subscript: "subscript",
    ast.Slice: "slice",
    ast.Lambda: "lambda",
    ast.ListComp: "comprehension",
    ast.SetComp: "comprehension",
    ast.DictComp: "comprehension",
    ast.GeneratorExp: "comprehension",
    ast.JoinedStr: "string",
    ast.FormattedValue: "string",
    ast.List: "list",
    ast.Tuple: "tuple",
    ast.Set: "set",
    ast.Dict: "dict",
    ast.IfExp: "if-expression (use where(condition, a, b))",
    ast.BoolOp: "and/or (use nested where(...))",
    ast.NamedExpr: "assignment",
    ast.Starred: "starred argument",
    ast.Await: "await",
    ast.Yield: "yield",
    ast.YieldFrom: "yield",
}


class _Source:
    """Maps syntax-tree positions (line, UTF-8 byte column) to 1-based characters."""

    def __init__(self, text: str, lead: int) -> None:
        self.text = text
        self.lead = lead
        self.lines = text.split("\n")
        self.starts = []
        pos = 0
        for line in self.lines:
            self.starts.append(pos)
            pos += len(line) + 1

    def char(self, lineno: int, col_byte: int) -> int:
        """0-based character index in the stripped text."""
        line = self.lines[lineno - 1]
        col = len(line.encode("utf-8")[:col_byte].decode("utf-8", errors="ignore"))
        return self.starts[lineno - 1] + col

    def start(self, node: ast.AST) -> int:
        return self.char(node.lineno, node.col_offset)

    def end(self, node: ast.AST) -> int:
        return self.char(node.end_lineno, node.end_col_offset)

    def position(self, index: int) -> int:
        """1-based position in the user's original text."""
        return index + self.lead + 1

    def segment(self, node: ast.AST) -> str:
        return self.text[self.start(node):self.end(node)]

    def find(self, symbol: str, after: ast.AST, before: ast.AST) -> int:
        """Index of ``symbol`` between two nodes (an operator's place)."""
        lo, hi = self.end(after), self.start(before)
        i = self.text.find(symbol, lo, hi)
        return i if i >= 0 else lo


_ALLOWED_SHORT = "allowed: r, numbers (1j), names, + - * / ** ( ), functions, where(c, a, b), pi, e"


def _error(text: str) -> ValueError:
    """A ValueError whose one line stays under 295 characters: when too long, the list of what is
    allowed goes short first, then goes (the specific part before it names the problem and the
    fix), and only then is the specific part cut in the middle."""
    text = " ".join(text.split())
    if len(text) <= 295:
        return ValueError(text)
    cut = text.find("; " + _ALLOWED)
    if cut > 0:
        rest = text[cut + 2 + len(_ALLOWED):]
        text = text[:cut] + "; " + _ALLOWED_SHORT + rest
        if len(text) > 295:
            text = text[:cut] + rest
    if len(text) > 295:
        text = text[:200] + "..." + text[-92:]
    return ValueError(text)


def _short(token: str, limit: int = 40) -> str:
    token = " ".join(token.split())
    return token if len(token) <= limit else token[: limit - 3] + "..."


def _refuse(what: str, token: str, position: int, hint: str = "") -> ValueError:
    hint = f"; {hint}" if hint else ""
    return _error(f"expression: {what} {_short(token)!r} at position {position} is not allowed{hint}; "
                      f"{_ALLOWED}")


@dataclass(frozen=True)
class CompiledExpression:
    """A checked expression, ready to evaluate.

    Attributes
    ----------
    text : str
        The expression as given.
    parameter_names : tuple of str
        Free names other than ``r``, ``pi``, ``e`` and function names, in
        order of first appearance.
    positions : dict
        1-based character position of the first appearance of each parameter.
    """

    text: str
    parameter_names: tuple[str, ...]
    positions: Mapping[str, int]
    _tree: tuple

    def check_params(self, params: Mapping[str, float] | None) -> dict[str, float | complex]:
        """Return the finite values of this expression's parameters (complex ones allowed).

        Extra entries of ``params`` are ignored (the caller decides whether
        that is an error; compare with :attr:`parameter_names`).

        Raises
        ------
        ValueError
            A parameter without a value (the message names it, its position
            and suggests ``--param NAME=VALUE``), or a non-finite value.
        """
        params = dict(params or {})
        missing = [n for n in self.parameter_names if n not in params]
        if missing:
            where = ", ".join(f"{n!r} at position {self.positions[n]}" for n in missing)
            example = " ".join(f"--param {n}=VALUE" for n in missing)
            unit = ("; for the imaginary unit write 1j (e.g. 0.1j)"
                    if any(n in ("i", "j", "I", "J") for n in missing) else "")
            raise _error(
                f"expression: unknown name {where}: not r, pi, e or a function, so it is read as a "
                f"parameter, and no value was given; give it with {example} "
                f"(or params={{{', '.join(repr(n) + ': ...' for n in missing)}}}){unit}; {_ALLOWED}"
            )
        return {n: check_parameter(f"params[{n!r}]", params[n], allow_complex=True) for n in self.parameter_names}

    def evaluate(self, r, params: Mapping[str, float] | None = None) -> np.ndarray:
        """Values of the expression at radii ``r`` (vectorised).

        Parameters
        ----------
        r : array_like
            Radii in bohr.
        params : mapping
            Values of :attr:`parameter_names` (extra entries are ignored).

        Returns
        -------
        numpy.ndarray
            Array of the shape of ``r``: float, or complex when the expression
            has an imaginary number or a complex parameter. Division by zero,
            overflow and invalid operations give inf or nan without warnings;
            a solver checks the values it samples.

        Raises
        ------
        ValueError
            A condition of ``where`` that compares complex values.
        """
        values = self.check_params(params)
        r = np.asarray(r, dtype=float)
        with np.errstate(divide="ignore", over="ignore", under="ignore", invalid="ignore"):
            out = np.asarray(_eval(self._tree, r, values))
            kind = complex if np.iscomplexobj(out) else float
            return np.array(np.broadcast_to(out.astype(kind), r.shape), dtype=kind)

    def __call__(self, r, params: Mapping[str, float] | None = None) -> np.ndarray:
        return self.evaluate(r, params)

    def not_analytic(self) -> str | None:
        """What keeps the expression from being an analytic function of r (``where(...)``, a
        comparison, ``abs(...)``), or None when nothing does."""
        return self._not_analytic

    @functools.cached_property
    def _not_analytic(self) -> str | None:
        """:meth:`not_analytic`, found once (a walk of the tree; the expression never changes)."""
        def find(node):
            if node[0] in ("where", "cmp"):
                return "where() (a switch)"
            if node[0] == "call" and node[1] == "abs":
                return "abs()"
            for child in _children(node):
                got = find(child)
                if got:
                    return got
            return None
        return find(self._tree)

    def continued(self, z, params: Mapping[str, float] | None = None) -> np.ndarray:
        """The expression at complex radii ``z`` (bohr): its analytic continuation off the real axis.

        Raises
        ------
        ValueError
            When the expression has a part that is not analytic (:meth:`not_analytic`).
        """
        bad = self.not_analytic()
        if bad:
            raise ValueError(f"analytic: the expression {shorten(self.text)!r} uses {bad}, which has no analytic "
                             "continuation to complex r (analytic=True, --analytic); write it without, or give "
                             "analytic= a function of complex r")
        values = self.check_params(params)
        z = np.asarray(z, dtype=complex)
        with np.errstate(divide="ignore", over="ignore", under="ignore", invalid="ignore"):
            out = np.asarray(_eval(self._tree, z, values), dtype=complex)
        return np.array(np.broadcast_to(out, z.shape))

    def switching_radii(self, params: Mapping[str, float] | None = None) -> tuple[float, ...]:
        """Radii (bohr, or the term's length unit) where the expression may jump or have a kink:
        where the condition of a ``where`` changes its truth value, and where the argument of an
        ``abs`` changes sign (see :mod:`boundkit.potentials.switches`); and the graded radii around
        a smooth edge narrower than the search grid (:func:`boundkit.potentials.switches.steep_edges`).

        A comparison of ``r`` itself with a side free of ``r`` gives that side's value; any other
        is located numerically on 1e-9 < r < 1e8. Complex sides are skipped (a condition must
        compare real values).
        """
        from .switches import reported, sign_changes, steep_edges

        values = self.check_params(params)

        def real_values(r):
            out = np.asarray(self.evaluate(r, values))
            return np.real(out) if np.iscomplexobj(out) else out

        found: list[float] = list(steep_edges(real_values))
        for lhs, rhs in _switches(self._tree):
            if lhs is None or rhs is None:         # abs(x): x against 0
                x = lhs if rhs is None else rhs
                lhs, rhs = x, ("num", 0.0)
            fixed = [side for side in (lhs, rhs) if not _uses_r(side)]
            if len(fixed) == 1 and (lhs == ("r",) or rhs == ("r",)):
                with np.errstate(all="ignore"):
                    value = complex(np.asarray(_eval(fixed[0], np.zeros(1), values)).reshape(-1)[0])
                if value.imag == 0:
                    found.append(value.real)
                continue
            if len(fixed) < 2:              # both sides free of r: the condition never switches

                def diff(r, lhs=lhs, rhs=rhs):
                    out = np.asarray(_eval(lhs, r, values)) - np.asarray(_eval(rhs, r, values))
                    return np.where(np.imag(out) == 0, np.real(out), np.nan) if np.iscomplexobj(out) else out
                got = sign_changes(diff)
                if got is None:
                    return reported(None, f"expression {self.text!r}")
                found += got
        return reported(found, f"expression {self.text!r}")


def _eval(node: tuple, r: np.ndarray, p: Mapping[str, float]):
    kind = node[0]
    if kind == "num":
        return node[1]
    if kind == "r":
        return r
    if kind == "par":
        return p[node[1]]
    if kind == "neg":
        return -_eval(node[1], r, p)
    if kind == "chain":
        acc = _eval(node[1], r, p)
        for op, operand in node[2]:
            x = _eval(operand, r, p)
            if op == "+":
                acc = acc + x
            elif op == "-":
                acc = acc - x
            elif op == "*":
                acc = acc * x
            else:
                acc = np.divide(acc, x)
        return acc
    if kind == "pow":
        base, exponent = np.asarray(_eval(node[1], r, p)), _eval(node[2], r, p)
        if not (np.iscomplexobj(base) or np.iscomplexobj(exponent)):
            base = base.astype(float)        # real powers stay real: (-1)**0.5 is nan, not 1j
        return np.power(base, exponent)
    if kind == "call":
        return FUNCTIONS[node[1]](_eval(node[2], r, p))
    if kind == "where":
        return np.where(_eval(node[1], r, p), _eval(node[2], r, p), _eval(node[3], r, p))
    if kind == "cmp":
        operands = [_eval(x, r, p) for x in node[1]]
        for x in operands:
            if np.iscomplexobj(x) and np.any(np.imag(x) != 0):
                raise ValueError("expression: the condition of where() compares complex values; compare real "
                                 "quantities (r, real parameters) and put the imaginary part in a or b")
        operands = [np.real(x) for x in operands]
        result = True
        for i, op in enumerate(node[2]):
            result = np.logical_and(result, _CMP_FUNCS[op](operands[i], operands[i + 1]))
        return result
    raise AssertionError(f"unknown node {kind!r}")  # pragma: no cover - internal


class _Translator:
    """Checks a Python syntax tree and translates it into the private tree."""

    def __init__(self, src: _Source) -> None:
        self.src = src
        self.params: dict[str, int] = {}

    def pos(self, node: ast.AST) -> int:
        return self.src.position(self.src.start(node))

    def refuse(self, what: str, node: ast.AST, hint: str = "") -> ValueError:
        return _refuse(what, self.src.segment(node), self.pos(node), hint)

    def visit(self, node: ast.AST, depth: int, in_condition: bool = False) -> tuple:
        if depth > MAX_DEPTH:
            raise _error(f"expression: nesting deeper than {MAX_DEPTH} levels at "
                             f"{_short(self.src.segment(node))!r}, position {self.pos(node)}, is not allowed; "
                             f"simplify the expression; {_ALLOWED}")
        if isinstance(node, ast.Constant):
            return self.constant(node)
        if isinstance(node, ast.Name):
            return self.name(node)
        if isinstance(node, ast.UnaryOp):
            if isinstance(node.op, ast.USub):
                return ("neg", self.visit(node.operand, depth + 1))
            if isinstance(node.op, ast.UAdd):
                return self.visit(node.operand, depth + 1)
            symbol = "not" if isinstance(node.op, ast.Not) else "~"
            raise _refuse("operator", symbol, self.pos(node))
        if isinstance(node, ast.BinOp):
            return self.binop(node, depth)
        if isinstance(node, ast.Call):
            return self.call(node, depth)
        if isinstance(node, ast.Compare):
            if not in_condition:
                op = _CMP.get(type(node.ops[0]), "comparison")
                i = self.src.find(op, node.left, node.comparators[0]) if op != "comparison" else self.src.start(node)
                raise _refuse("comparison", op, self.src.position(i),
                              "comparisons are only allowed as the condition of where(condition, a, b)")
            return self.compare(node, depth)
        if isinstance(node, ast.Attribute):
            start = self.src.end(node) - len(node.attr)
            dot = self.src.text.rfind(".", 0, start)
            raise _refuse("attribute access", "." + node.attr, self.src.position(dot if dot >= 0 else start),
                          "names have no attributes here")
        for cls, word in _NODE_WORDS.items():
            if isinstance(node, cls):
                raise self.refuse(word, node)
        raise self.refuse(f"construct ({type(node).__name__})", node)

    def constant(self, node: ast.Constant) -> tuple:
        value = node.value
        if isinstance(value, complex):          # 0.5j: an imaginary literal (the real part is always 0)
            if not math.isfinite(value.imag):
                raise self.refuse("number", node, "numbers must be finite double-precision values (|x| < 1.8e308)")
            return ("num", value)
        if isinstance(value, bool) or not isinstance(value, (int, float)):
            word = "string" if isinstance(value, (str, bytes)) else "constant"
            raise self.refuse(word, node, "only plain numbers are constants")
        try:
            x = float(value)
        except OverflowError:
            x = math.inf
        if not math.isfinite(x):
            raise self.refuse("number", node, "numbers must be finite double-precision values (|x| < 1.8e308)")
        return ("num", x)

    def name(self, node: ast.Name) -> tuple:
        name = node.id
        if name.startswith("_"):
            raise self.refuse("name", node, "a name may not start with '_'")
        if name == "r":
            return ("r",)
        if name in CONSTANTS:
            return ("num", CONSTANTS[name])
        if name in FUNCTIONS or name == "where":
            raise self.refuse("function name", node, f"call it, e.g. {name}(r)" if name != "where"
                              else "call it as where(condition, a, b)")
        self.params.setdefault(name, self.pos(node))
        return ("par", name)

    def binop(self, node: ast.BinOp, depth: int) -> tuple:
        op = type(node.op)
        if op in _REFUSED_OPS:
            symbol = _REFUSED_OPS[op]
            i = self.src.find(symbol, node.left, node.right)
            hint = "write ** for powers, e.g. r**2" if symbol == "^" else ""
            raise _refuse("operator", symbol, self.src.position(i), hint)
        if op is ast.Pow:
            base = self.visit(node.left, depth + 1)
            exponent = self.visit(node.right, depth + 1)
            self.check_exponent(node.right, exponent)
            return ("pow", base, exponent)
        # a left-associative chain of one precedence level counts as one level
        family = _ADDITIVE if op in _ADDITIVE else _MULTIPLICATIVE
        rest = []
        cur: ast.AST = node
        while isinstance(cur, ast.BinOp) and isinstance(cur.op, family):
            rest.append((_BINOPS[type(cur.op)], cur.right))
            cur = cur.left
        first = self.visit(cur, depth + 1)
        ops = [(symbol, self.visit(right, depth + 1)) for symbol, right in reversed(rest)]
        return ("chain", first, ops)

    def check_exponent(self, node: ast.AST, tree: tuple) -> None:
        """Refuse power towers of literals and literal exponents beyond MAX_EXPONENT."""
        if not _literal_only(tree):
            return
        if _has_pow(tree):
            raise self.refuse("power tower of literals", node,
                              "a literal exponent may not itself contain **")
        with np.errstate(all="ignore"):
            x = abs(complex(_eval(tree, np.zeros(()), {})))
        if not (math.isfinite(x) and x <= MAX_EXPONENT):
            raise self.refuse("exponent", node, f"literal exponents must satisfy |exponent| <= {MAX_EXPONENT:g}")

    def call(self, node: ast.Call, depth: int) -> tuple:
        func = node.func
        if not isinstance(func, ast.Name):
            if isinstance(func, ast.Attribute):
                self.visit(func, depth + 1)  # raises: attribute access
            raise self.refuse("call of", func, "only the listed functions can be called, by their plain name")
        fname = func.id
        if fname.startswith("_"):
            raise self.refuse("name", func, "a name may not start with '_'")
        if fname not in FUNCTIONS and fname != "where":
            raise self.refuse("function", func, "it is not in the whitelist")
        if node.keywords:
            kw = node.keywords[0]
            token = f"{kw.arg}=" if kw.arg else "**"
            raise _refuse("keyword argument", token, self.pos(kw), f"{fname}() takes positional arguments only")
        for a in node.args:
            if isinstance(a, ast.Starred):
                raise self.refuse("starred argument", a)
        want = 3 if fname == "where" else 1
        if len(node.args) != want:
            raise _refuse("call", fname, self.pos(func),
                          f"{fname}() takes {want} argument{'s' if want > 1 else ''}, got {len(node.args)}")
        if fname == "where":
            cond = node.args[0]
            if not isinstance(cond, ast.Compare):
                raise self.refuse("condition", cond,
                                  "the first argument of where() must be a comparison such as r < 1")
            return ("where", self.visit(cond, depth + 1, in_condition=True),
                    self.visit(node.args[1], depth + 1), self.visit(node.args[2], depth + 1))
        return ("call", fname, self.visit(node.args[0], depth + 1))

    def compare(self, node: ast.Compare, depth: int) -> tuple:
        operands = [node.left, *node.comparators]
        ops = []
        for i, op in enumerate(node.ops):
            symbol = _CMP.get(type(op))
            if symbol is None:
                bad = {ast.Eq: "==", ast.NotEq: "!=", ast.Is: "is", ast.IsNot: "is not", ast.In: "in",
                       ast.NotIn: "not in"}.get(type(op), "?")
                j = self.src.find(bad, operands[i], operands[i + 1])
                raise _refuse("comparison", bad, self.src.position(j), "use < <= > >= in where()")
            ops.append(symbol)
        return ("cmp", [self.visit(x, depth + 1) for x in operands], ops)


def _children(node: tuple) -> list:
    kind = node[0]
    if kind in ("neg", "call"):
        return [node[-1]]
    if kind == "chain":
        return [node[1]] + [x for _, x in node[2]]
    if kind == "pow":
        return [node[1], node[2]]
    if kind == "where":
        return [node[1], node[2], node[3]]
    if kind == "cmp":
        return list(node[1])
    return []


def _uses_r(node: tuple) -> bool:
    return node[0] == "r" or any(_uses_r(x) for x in _children(node))


def _switches(node: tuple) -> list:
    """(left, right) side pairs of every comparison, and (argument, None) of every abs call, in the tree."""
    out = []
    if node[0] == "cmp":
        out += list(zip(node[1][:-1], node[1][1:]))
    elif node[0] == "call" and node[1] == "abs":
        out.append((node[2], None))
    for x in _children(node):
        out += _switches(x)
    return out


def _literal_only(tree: tuple) -> bool:
    kind = tree[0]
    if kind == "num":
        return True
    if kind in ("r", "par", "call", "where", "cmp"):
        return False
    if kind == "neg":
        return _literal_only(tree[1])
    if kind == "pow":
        return _literal_only(tree[1]) and _literal_only(tree[2])
    if kind == "chain":
        return _literal_only(tree[1]) and all(_literal_only(x) for _, x in tree[2])
    return False  # pragma: no cover - internal


def _has_pow(tree: tuple) -> bool:
    kind = tree[0]
    if kind == "pow":
        return True
    if kind == "neg":
        return _has_pow(tree[1])
    if kind == "chain":
        return _has_pow(tree[1]) or any(_has_pow(x) for _, x in tree[2])
    return False


def _bracket_depth(text: str, lead: int) -> None:
    depth = 0
    for i, ch in enumerate(text):
        if ch in "([{":
            depth += 1
            if depth > MAX_DEPTH:
                raise _error(f"expression: nesting deeper than {MAX_DEPTH} brackets at {ch!r}, "
                                 f"position {i + lead + 1}, is not allowed; simplify the expression; {_ALLOWED}")
        elif ch in ")]}":
            depth -= 1


def parse_expression(text: str) -> CompiledExpression:
    """Check and compile an expression for a potential V(r).

    Parameters
    ----------
    text : str
        The expression, e.g. ``"-Z*exp(-r/D)/r"`` (r in bohr, V in hartree).

    Returns
    -------
    CompiledExpression
        With ``parameter_names`` and ``evaluate(r, params)``.

    Raises
    ------
    ValueError
        For anything outside the grammar of this module (see its docstring);
        the message names the offending token, its 1-based character
        position and what is allowed.

    Notes
    -----
    The text is parsed by :func:`ast.parse`, which builds a syntax tree and
    runs nothing; no ``eval``, ``exec`` or code object is ever involved.
    """
    if not isinstance(text, str):
        raise ValueError(f"expression: expected a string, got {type(text).__name__}")
    if len(text) > MAX_LENGTH:
        raise ValueError(f"expression: {len(text)} characters is too long (at most {MAX_LENGTH}); "
                         f"the text from position {MAX_LENGTH + 1} on is over the limit")
    stripped = text.lstrip()
    lead = len(text) - len(stripped)
    stripped = stripped.rstrip()
    if not stripped:
        raise _error(f"expression: empty input; write a formula in r, e.g. -Z/r; {_ALLOWED}")
    for i, ch in enumerate(stripped):
        if not (ch.isprintable() or ch in "\n\t"):
            raise _refuse("control character", repr(ch)[1:-1], i + lead + 1)
    _bracket_depth(stripped, lead)
    try:
        with warnings.catch_warnings():
            warnings.simplefilter("ignore")  # e.g. escape sequences in (refused) strings
            tree = ast.parse(stripped, mode="eval")
    except SyntaxError as exc:
        src = _Source(stripped, lead)
        if exc.lineno and exc.offset:
            line = max(1, min(exc.lineno, len(src.lines)))
            position = src.starts[line - 1] + exc.offset - 1 + lead + 1
            near = stripped[position - lead - 1: position - lead] or "end of input"
            where = f"at position {position} (near {near!r})"
        else:
            where = "(no position reported)"
        raise _error(f"expression: syntax error {where}: {_short(exc.msg, 60)}; {_ALLOWED}") from None
    except (RecursionError, MemoryError):
        raise ValueError(f"expression: too deeply nested to parse; at most {MAX_DEPTH} levels") from None
    src = _Source(stripped, lead)
    tr = _Translator(src)
    compiled = tr.visit(tree.body, 1)
    return CompiledExpression(text=text, parameter_names=tuple(tr.params), positions=dict(tr.params),
                              _tree=compiled)


class ExpressionTerm(ProbedTerm):
    """A potential term given by an expression in r and named parameters.

    Parameters
    ----------
    text : str
        The expression (see :mod:`boundkit.potentials.expression`), e.g.
        ``"-Z*exp(-r/D)/r"``; r in bohr, the value in hartree.
    params : mapping, optional
        Values of the expression's parameters. Every parameter needs one;
        entries the expression does not use are ignored here (compare with
        :attr:`parameter_names` to refuse them).

    Notes
    -----
    The ends are probed numerically, as for a Python callable (see
    :class:`boundkit.potentials.base.ProbedTerm`). Non-finite values on the
    solver's grid are refused by the solver.
    """

    name = "expr"
    formula = "V(r) given by a user expression"
    source = "user expression"

    def __init__(self, text: str, params: Mapping[str, float] | None = None) -> None:
        self.compiled = parse_expression(text)
        self.label = text.strip()
        self.formula = text.strip()  # type: ignore[misc]
        self.values = self.compiled.check_params(params)
        self.parameters = tuple(  # type: ignore[misc]
            Parameter(n, None, "", f"parameter of the expression {self.label!r}")
            for n in self.compiled.parameter_names
        )
        self._probe()

    @property
    def parameter_names(self) -> tuple[str, ...]:
        """The expression's parameter names, in order of first appearance."""
        return self.compiled.parameter_names

    def _find_breakpoints(self) -> tuple[float, ...]:
        """Where the expression switches (``where``) or has a kink (``abs``)
        (:meth:`CompiledExpression.switching_radii`)."""
        return self.compiled.switching_radii(self.values)

    def _evaluate(self, r: np.ndarray) -> np.ndarray:
        return refuse_complex(self.compiled.evaluate(r, self.values), f"expression {self.label!r}", r)

    def continued(self, z: np.ndarray) -> np.ndarray:
        return self.compiled.continued(z, self.values)

    def __repr__(self) -> str:
        args = "".join(f", {k}={v:g}" for k, v in self.values.items())
        return f"ExpressionTerm({self.label!r}{args})"
