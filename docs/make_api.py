"""Write docs/api.md, the short API reference, from the docstrings of the public functions.

    python docs/make_api.py            # rewrite docs/api.md
    python docs/make_api.py --check    # exit 1 if docs/api.md is not up to date

For each public function: its signature and the first paragraph of its docstring. The full docstrings stay the reference (``help(boundkit.solve)``).
"""
from __future__ import annotations

import importlib
import inspect
import sys
from pathlib import Path

OUT = Path(__file__).with_name("api.md")

SECTIONS = [
    ("Levels", ["boundkit.solve", "boundkit.solve_channel"]),
    ("Studies", ["boundkit.scan", "boundkit.critical", "boundkit.compare", "boundkit.accuracy.converge",
                 "boundkit.validate.run_validation"]),
    ("What the levels mean", ["boundkit.observables", "boundkit.matrix_element", "boundkit.transitions",
                              "boundkit.first_order_shift", "boundkit.compare_shift"]),
    ("Continuum and resonances", ["boundkit.phase_shifts", "boundkit.scattering_length", "boundkit.levinson",
                                  "boundkit.continuum_state", "boundkit.resonances"]),
    ("Potentials and run specs", ["boundkit.make_potential", "boundkit.make_equation",
                                  "boundkit.runspec.load_spec", "boundkit.runspec.run"]),
]

HEAD = """# Python API reference

Generated from the docstrings by `python docs/make_api.py` (a test checks it is current); the
full docstrings, with every parameter, are in `help(boundkit.NAME)`. `import boundkit` is cheap:
the names below load their modules on first use.

Conventions shared with the command line and run specs: energies are binding energies (total
minus rest energy) in hartree unless a unit is asked for; `units="nuclear"` reads potential
parameters in MeV and fm; `tol` is a relative tolerance (`--tol`, `tol` in run specs);
`levels` the number of lowest levels per channel; `method` one of `auto`, `spectral`,
`finite-difference`; `equation` defaults to `"schrodinger"`. The command line takes the defaults
of the function it calls.
"""


def _resolve(path: str):
    module, _, name = path.rpartition(".")
    return getattr(importlib.import_module(module), name)


def _summary(doc: str) -> str:
    paragraphs = inspect.cleandoc(doc or "").split("\n\n")
    return " ".join(paragraphs[0].split()) if paragraphs and paragraphs[0] else "(no docstring)"


class _Raw(str):
    """An annotation written as text (``from __future__ import annotations``), shown without quotes."""

    def __repr__(self) -> str:
        return str(self)


def _signature(name: str, func) -> str:
    sig = inspect.signature(func)
    params = [p.replace(annotation=_Raw(p.annotation)) if isinstance(p.annotation, str) else p
              for p in sig.parameters.values()]
    ret = sig.return_annotation
    sig = sig.replace(parameters=params,
                      return_annotation=_Raw(ret) if isinstance(ret, str) else ret)
    text = f"{name}{sig}"
    if len(text) <= 100:
        return text
    parts = [str(p) for p in sig.parameters.values()]
    kinds = [p.kind for p in sig.parameters.values()]
    if inspect.Parameter.KEYWORD_ONLY in kinds and inspect.Parameter.VAR_POSITIONAL not in kinds:
        parts.insert(kinds.index(inspect.Parameter.KEYWORD_ONLY), "*")
    tail = "" if sig.return_annotation is inspect.Signature.empty else f" -> {sig.return_annotation}"
    indent = " " * (len(name) + 1)
    lines, line = [], f"{name}("
    for i, part in enumerate(parts):
        piece = part + (", " if i < len(parts) - 1 else ")" + tail)
        if len(line) + len(piece.rstrip()) > 100 and line.strip():
            lines.append(line.rstrip())
            line = indent
        line += piece
    lines.append(line.rstrip())
    return "\n".join(lines)


def render() -> str:
    lines = [HEAD]
    for title, paths in SECTIONS:
        lines += [f"## {title}", ""]
        for path in paths:
            func = _resolve(path)
            lines += [f"### `{path}`", "", "```python", _signature(path.rpartition(".")[2], func), "```", "",
                      _summary(func.__doc__), ""]
    return "\n".join(lines).rstrip() + "\n"


def main(argv: list[str]) -> int:
    text = render()
    if "--check" in argv:
        if not OUT.exists() or OUT.read_text() != text:
            print(f"{OUT} is not up to date: run python docs/make_api.py", file=sys.stderr)
            return 1
        return 0
    OUT.write_text(text)
    print(f"wrote {OUT}")
    return 0


if __name__ == "__main__":
    sys.exit(main(sys.argv[1:]))
