"""`import boundkit` and the command line load only what they use.

Checked in fresh interpreters through sys.modules (which heavy packages are
loaded), not by timing: the timing is a benchmark (benchmarks/run.py).
"""
from __future__ import annotations

import json
import subprocess
import sys
import textwrap

import pytest

HEAVY = ("sympy", "findiff", "matplotlib", "dask", "distributed", "mpmath", "tqdm")


def _loaded_after(code: str) -> list[str]:
    script = textwrap.dedent(code) + textwrap.dedent(f"""
        import json, sys
        print(json.dumps([m for m in {HEAVY!r} if m in sys.modules]))
    """)
    out = subprocess.run([sys.executable, "-c", script], check=True, capture_output=True, text=True).stdout
    return json.loads(out.strip().splitlines()[-1])


def test_import_boundkit_loads_no_heavy_package():
    assert _loaded_after("import boundkit") == []


def test_solver_entry_points_and_cli_load_no_heavy_package():
    assert _loaded_after("""
        from boundkit import solve, scan, observables, resonances, phase_shifts
        import boundkit.cli
        from click.testing import CliRunner
        assert CliRunner().invoke(boundkit.cli.main, ["--help"]).exit_code == 0
    """) == []


@pytest.mark.parametrize("args", [
    ["solve", "--param", "Z=1"],
    ["scan", "-p", "yukawa", "--param", "Z=1", "--vary", "screening_length=5:50:3", "--workers", "1"],
])
def test_a_command_line_solve_loads_no_interpolation_or_optimisation(args):
    # a table potential needs scipy.interpolate (which loads scipy.optimize): ~0.1 s that every
    # `boundkit solve` paid while the option parser imported it up front (0.44 -> 0.33 s measured),
    # and every scan while its resume key checked for a table term
    script = textwrap.dedent(f"""
        import json, sys
        from click.testing import CliRunner
        import boundkit.cli
        res = CliRunner().invoke(boundkit.cli.main, {args!r})
        assert res.exit_code == 0, res.output
        print(json.dumps([m for m in ("scipy.interpolate", "scipy.optimize") if m in sys.modules]))
    """)
    out = subprocess.run([sys.executable, "-c", script], check=True, capture_output=True, text=True).stdout
    assert json.loads(out.strip().splitlines()[-1]) == []


def test_lazy_exports_and_submodules():
    import boundkit

    for name in boundkit.__all__:
        assert getattr(boundkit, name) is not None
    for sub in ("accuracy", "validate", "runspec", "exact", "units"):
        assert getattr(boundkit, sub).__name__ == f"boundkit.{sub}"
    assert callable(boundkit.solve) and boundkit.scan.__module__ == "boundkit.studies.scan"
    assert isinstance(boundkit.__version__, str)
    assert {"solve", "scan", "accuracy", "validate", "runspec"} <= set(dir(boundkit))


def test_function_named_like_its_module_stays_the_function():
    out = subprocess.run([sys.executable, "-c", textwrap.dedent("""
        import boundkit.observables, boundkit.transitions, boundkit.resonances, boundkit
        print(all(callable(f) and not hasattr(f, '__path__') and f.__name__ == n for n, f in
                  [('observables', boundkit.observables), ('transitions', boundkit.transitions),
                   ('resonances', boundkit.resonances)]))
    """)], check=True, capture_output=True, text=True).stdout
    assert out.strip() == "True"


def test_unknown_attribute_raises_attribute_error():
    import boundkit
    import pytest

    with pytest.raises(AttributeError, match="module 'boundkit' has no attribute 'no_such_thing'"):
        boundkit.no_such_thing


def test_cli_help_loads_neither_numpy_nor_scipy():
    """`boundkit --help` and `boundkit solve --help` list the commands and options without the numerics."""
    out = subprocess.run([sys.executable, "-c", textwrap.dedent("""
        import sys
        from click.testing import CliRunner
        import boundkit.cli
        for args in (["--help"], ["solve", "--help"], ["scan", "--help"]):
            assert CliRunner().invoke(boundkit.cli.main, args).exit_code == 0
        print([m for m in ("numpy", "scipy") if m in sys.modules])
    """)], check=True, capture_output=True, text=True).stdout
    assert out.strip() == "[]"


def test_a_run_without_figures_loads_no_matplotlib(tmp_path):
    """A run spec whose [solve] asks for no figure (and no shifts) does not import matplotlib: 0.45 s of
    pyplot that every such run paid while [solve] imported the plot functions up front."""
    spec = tmp_path / "h.toml"
    spec.write_text('title = "H"\ndescription = "hydrogen"\nequations = ["schrodinger"]\n'
                    '[models.h]\nterms = ["coulomb"]\nparams = { Z = 1 }\n[solve]\nfigures = []\n')
    loaded = _loaded_after(f"""
        from boundkit.runspec import run
        assert run({str(spec)!r}, {str(tmp_path / "out")!r}, progress=False).success
    """)
    assert "matplotlib" not in loaded
