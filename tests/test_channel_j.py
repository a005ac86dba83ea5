"""j of a Dirac channel: kappa names it; l with j names kappa; a j (or l) that does not fit kappa is refused.

Tester B (2026-12-05) found `boundkit solve -e dirac --j 1.5` printing the 1s1/2 level, exit 0, and the JSON
settings recording j = 0.5 over the user's 1.5: the Dirac branch of the channel setup ignored j (and an l given
beside kappa). kappa = -(l + 1) is j = l + 1/2 and kappa = l is j = l - 1/2 (common practice; e.g. Bethe &
Salpeter 1957, sec. 14).
"""
from __future__ import annotations

import json

import pytest
from click.testing import CliRunner

import boundkit
from boundkit.cli import main
from boundkit.solver import make_equation
from boundkit.studies._common import channel_for


@pytest.mark.parametrize("l, j, kappa", [(0, 0.5, -1), (1, 0.5, 1), (1, 1.5, -2), (2, 1.5, 2), (2, 2.5, -3)])
def test_l_with_j_names_the_dirac_kappa(l, j, kappa):
    eq = make_equation("dirac", l=l, j=j)
    assert (eq.kappa, eq.l, eq.j) == (kappa, l, j)
    assert make_equation("dirac", kappa=kappa, l=l, j=j).kappa == kappa      # all three, consistent
    assert channel_for("dirac", {"l": l, "j": j}) == {"kappa": kappa}


@pytest.mark.parametrize("kw, match", [
    (dict(kappa=-1, j=1.5), r"^j: j = 1.5 does not fit kappa = -1 \(s1/2, j = 1/2\); give kappa alone, or the kappa "
                            r"of j = 1.5: kappa = -2 \(p3/2\) or kappa = 2 \(d3/2\)$"),
    (dict(kappa=-2, j=0.5), r"^j: j = 0.5 does not fit kappa = -2 \(p3/2, j = 3/2\);"),
    (dict(kappa=-2, l=0), r"^l: l = 0 does not fit kappa = -2 \(p3/2, l = 1\); give kappa alone, or the kappa of "
                          r"l = 0: kappa = -1 \(s1/2\)$"),
    (dict(l=0, j=1.5), r"^j: for l = 0 a Dirac channel has j = 0.5 \(kappa = -1\), got 1.5; give kappa instead"),
    (dict(l=2, j=0.5), r"^j: for l = 2 a Dirac channel has j = 1.5 \(kappa = 2\) or 2.5 \(kappa = -3\), got 0.5"),
    (dict(j=1.5), r"^j: j alone does not name a Dirac channel; give kappa = -2 \(p3/2\) or kappa = 2 \(d3/2\), "
                  r"or l with j$"),
    (dict(j=1.2), r"^j: must be a positive half-integer \(0.5, 1.5, 2.5, ...\), got 1.2$"),
    (dict(j=float("nan"), l=1), r"^j: must be a positive half-integer"),
])
def test_a_j_or_l_that_does_not_fit_the_dirac_channel_is_refused(kw, match):
    with pytest.raises(ValueError, match=match):
        make_equation("dirac", **kw)
    with pytest.raises(ValueError, match=match):     # the public API: the same message
        boundkit.solve("dirac", **kw)


def test_klein_gordon_refuses_j_naming_the_fix():
    with pytest.raises(ValueError, match=r"^j: the Klein-Gordon equation \(spin 0\) takes no j; drop it \(a spin-0 "
                                         r"particle has j = l\), or use the Dirac equation"):
        boundkit.solve("klein-gordon", j=0.5)


def run(*args):
    return CliRunner().invoke(main, list(args))


def test_solve_dirac_with_l_and_j_solves_that_kappa_and_keeps_j():
    res = run("solve", "-e", "dirac", "--l", "1", "--j", "1.5", "--json")
    assert res.exit_code == 0, res.output
    doc = json.loads(res.stdout)
    assert (doc["settings"]["kappa"], doc["settings"]["j"]) == (-2, 1.5)
    assert doc["levels"][0]["label"] == "2p3/2"


@pytest.mark.parametrize("args, match", [
    (("solve", "-e", "dirac", "--j", "1.5"), r"^boundkit: error: --j: j alone does not name a Dirac channel; give "
                                             r"kappa = -2 \(p3/2\) or kappa = 2 \(d3/2\), or l with j$"),
    (("solve", "-e", "dirac", "--kappa", "-2", "--j", "0.5"), r"^boundkit: error: --j: j = 0.5 does not fit kappa"),
    (("phases", "-e", "dirac", "--kappa", "-1", "--j", "1.5", "--energies", "0.1"),
     r"^boundkit: error: --j: j = 1.5 does not fit kappa = -1"),
    (("solve", "-e", "klein-gordon", "--j", "0.5"), r"^boundkit: error: --j: the Klein-Gordon equation"),
    (("scan", "-e", "dirac", "--l", "0", "--j", "1.5", "--vary", "Z=1,2"),
     r"^boundkit: error: --j: for l = 0"),
])
def test_cli_refuses_a_j_that_does_not_fit_in_one_line(args, match):
    res = run(*args)
    assert res.exit_code == 2, res.output
    assert len(res.stderr.strip().splitlines()) == 1 and "Traceback" not in res.output
    assert res.stderr.strip().splitlines()[0] and __import__("re").match(match, res.stderr.strip())


def test_scan_dirac_takes_l_with_j():
    res = run("scan", "-e", "dirac", "-e", "schrodinger", "--l", "1", "--j", "1.5", "--vary", "Z=1,2",
              "--levels", "1", "--json")
    assert res.exit_code == 0, res.output
    rows = json.loads(res.stdout)["rows"]
    assert {r["channel"] for r in rows} == {"kappa=-2", "l=1, j=1.5"}
    assert {r["label"] for r in rows if r["equation"] == "dirac"} == {"2p3/2"}


@pytest.mark.parametrize("extra, option", [(("--j", "0.5"), "--j"), (("--kappa", "-1"), "--kappa")])
def test_phases_levinson_refuses_a_channel_option_it_would_ignore(extra, option):
    """levinson() takes l alone (Schrodinger): --j and --kappa were dropped silently (exit 0)."""
    res = run("phases", "--levinson", "-p", "yukawa", "--param", "Z=1", "--param", "screening_length=2", *extra)
    assert res.exit_code == 2, res.output
    assert __import__("re").match(rf"^boundkit: error: {option}: --levinson checks a Schrodinger channel given by "
                                  rf"--l alone; leave out {option}$", res.stderr.strip()), res.stderr


def test_resonances_and_converge_name_the_channel_options():
    """The channel keywords were named as options by solve, scan and phases only (a review): resonances and
    converge printed 'kappa: ...' for the same refusal."""
    for args in (["resonances", "-e", "dirac", "--l", "1", "--window=-1,0"], ["converge", "-e", "dirac", "--l", "1"]):
        r = run(*args)
        assert r.exit_code != 0 and r.output.startswith("boundkit: error: --kappa: the Dirac equation needs kappa"), \
            r.output
