"""The command line package: its modules import one way (no cycle), each loads on its own,
and every command is registered on the ``boundkit`` group."""
from __future__ import annotations

import ast
import subprocess
import sys
from pathlib import Path

import pytest

import boundkit.cli

CLI_DIR = Path(boundkit.cli.__file__).parent
MODULES = sorted(p.stem for p in CLI_DIR.glob("*.py"))


def _cli_imports(name: str) -> set[str]:
    """Modules of the cli package that module ``name`` imports (``__init__`` for ``from . import x``)."""
    tree = ast.parse((CLI_DIR / f"{name}.py").read_text())
    found = set()
    for node in ast.walk(tree):
        if isinstance(node, ast.ImportFrom) and node.level == 1:
            if node.module:
                found.add(node.module.split(".")[0])
            else:   # from . import x: the package itself, then the submodule x
                found.add("__init__")
                found.update(a.name for a in node.names if a.name in MODULES)
        elif isinstance(node, ast.ImportFrom) and node.level == 0 and (node.module or "").startswith("boundkit.cli"):
            rest = node.module.split(".")[2:]
            found.add(rest[0] if rest else "__init__")
        elif isinstance(node, ast.Import):
            for a in node.names:
                if a.name.startswith("boundkit.cli"):
                    rest = a.name.split(".")[2:]
                    found.add(rest[0] if rest else "__init__")
    found.discard(name)
    return found


def test_cli_import_graph_has_no_cycle():
    graph = {m: _cli_imports(m) for m in MODULES}
    assert graph["common"] == set(), graph["common"]   # the leaf every command uses
    for m in MODULES:
        if m not in ("__init__", "__main__"):
            assert "__init__" not in graph[m], f"cli/{m}.py imports the package itself"
    state: dict[str, int] = {}

    def visit(m, path):
        if state.get(m) == 1:
            pytest.fail("import cycle: " + " -> ".join(path + [m]))
        if state.get(m) == 2:
            return
        state[m] = 1
        for n in sorted(graph[m]):
            visit(n, path + [m])
        state[m] = 2

    for m in MODULES:
        visit(m, [])


@pytest.mark.parametrize("name", [m for m in MODULES if m != "__main__"])
def test_each_cli_module_imports_in_a_fresh_interpreter(name):
    target = "boundkit.cli" if name == "__init__" else f"boundkit.cli.{name}"
    subprocess.run([sys.executable, "-c", f"import {target}"], check=True, capture_output=True)


def test_every_command_is_registered():
    assert set(boundkit.cli.main.commands) >= {"solve", "converge", "potentials", "validate", "run", "scan",
                                                "critical", "compare", "transitions", "hyperfine", "phases",
                                                "resonances"}


def test_python_dash_m_runs_the_group():
    out = subprocess.run([sys.executable, "-m", "boundkit.cli", "--help"], check=True, capture_output=True,
                         text=True).stdout
    assert "Commands:" in out and "solve" in out
