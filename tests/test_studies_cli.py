"""Command line of the studies: scan, critical, compare (parse, call, print; bad input -> exit 2)."""
from __future__ import annotations

import json
import logging
import re

import pytest
from click.testing import CliRunner

from boundkit.cli import main
from boundkit.exact import dirac_coulomb, hulthen
from boundkit.units import hartree_to


def run(*args):
    return CliRunner().invoke(main, list(args))


def test_critical_json_keys_and_value():
    res = run("critical", "-e", "schrodinger", "-p", "hulthen", "--param", "Z=1", "--param", "delta=0.3",
              "--state", "2s", "--vary", "delta", "--json")
    assert res.exit_code == 0, res.output
    data = json.loads(res.output)
    for key in ("parameter", "value", "uncertainty", "state", "equation", "kind", "bracket", "evaluations"):
        assert key in data
    # Hulthen 2s: delta_c = 2Z/n^2 = 0.5 (Flugge 1971, from memory)
    assert data["value"] == pytest.approx(0.5, rel=1e-8)
    assert (data["parameter"], data["state"], data["kind"]) == ("delta", "2s", "unbind")


def test_compare_prints_the_fine_structure_in_ghz():
    res = run("compare", "--param", "Z=1", "--l-max", "1", "--levels", "1", "--splitting-unit", "GHz", "--json")
    assert res.exit_code == 0, res.output
    data = json.loads(res.output)
    twop = next(r for r in data["rows"] if r["label"] == "2p")
    # Sommerfeld-Dirac (Bethe & Salpeter 1957)
    expected = hartree_to(dirac_coulomb(1, 2, -2) - dirac_coulomb(1, 2, 1), "GHz")
    assert twop["fine_structure"] == pytest.approx(expected, rel=1e-9)
    table = run("compare", "--param", "Z=1", "--l-max", "0", "--levels", "1")
    assert table.exit_code == 0 and "Klein-Gordon" in table.output


def test_scan_writes_files_a_figure_and_resumes(tmp_path):
    out, fig = tmp_path / "run", tmp_path / "levels.svg"
    args = ("scan", "-e", "schrodinger", "--expr", "-Z*D*exp(-D*r)/(1-exp(-D*r))", "--param", "Z=1",
            "--vary", "D=0.2,0.6", "--l", "0", "--levels", "2", "--workers", "1", "--out", str(out))
    res = run(*args, "--plot", str(fig), "--energy-unit", "eV")
    assert res.exit_code == 0, res.output
    assert "2 point(s) solved, 0 reused" in res.output
    assert fig.read_text().lstrip().startswith("<?xml")
    data = json.loads((out / "scan.json").read_text())
    assert data["units"]["energy"] == "eV"          # the files follow --energy-unit
    # the expression is the Hulthen potential, rebuilt at each D: E_n = -(Z/n - n D/2)^2/2 (Flugge 1971)
    for r in data["rows"]:
        n = int(r["label"][0])
        if r["D"] < 2 / n**2:
            assert r["energy"] == pytest.approx(hartree_to(hulthen(1, r["D"], n), "eV"), rel=1e-10)
        else:
            assert r["energy"] is None and r["status"] == "absent"
    again = run(*args, "--json")
    assert again.exit_code == 0, again.output
    assert json.loads(again.output)["reused"] == 2


@pytest.mark.parametrize("args, match", [
    (("scan", "-e", "schrodinger", "-p", "yukawa", "--param", "Z=1", "--vary", "screening_length=1:2"),
     "cannot read 'screening_length=1:2'"),
    (("scan", "-e", "dirac", "-p", "yukawa", "--param", "Z=1", "--vary", "screening_length=2", "--l", "1"),
     "needs kappa"),
    (("scan", "-e", "schrodinger", "-p", "yukawa", "--param", "Z=1", "--vary", "screening_length=2",
      "--vary", "Z=1,2", "--vary", "screening_length=3"), "one or two"),
    (("critical", "-e", "dirac", "-p", "uniform-sphere", "--param", "Z=150", "--rms-rule", "1.2,2.5",
      "--state", "2p", "--vary", "Z"), "needs j in '2p'"),
    (("critical", "-p", "yukawa", "--param", "Z=1", "--param", "screening_length=5", "--state", "1j",
      "--vary", "screening_length"), "unknown orbital letter"),
    (("critical", "-p", "yukawa", "--param", "Z=1", "--state", "1s", "--vary", "screening_length",
      "--bracket", "1;2"), "--bracket"),
    (("critical", "-e", "dirac", "-p", "uniform-sphere", "--param", "Z=150", "--param", "rms_fm=7",
      "--rms-rule", "1.2,2.5", "--state", "1s", "--vary", "Z"), "leave out --param rms_fm"),
    (("compare", "--param", "Z=1", "--energy-unit", "furlongs"), "unknown unit"),
])
def test_bad_input_is_one_message_and_exit_2(args, match):
    res = run(*args)
    assert res.exit_code == 2, res.output
    assert isinstance(res.exception, SystemExit)
    assert "Traceback" not in res.output
    assert match in res.output


def test_a_search_that_does_not_converge_exits_3_and_says_so():
    # four solves cannot pin the Dirac 1s diving charge to 1e-8: the result is printed with its
    # status, a message goes to stderr, exit code 3
    res = run("critical", "-e", "dirac", "-p", "uniform-sphere", "--param", "Z=150", "--rms-rule", "1.2,2.5",
              "--state", "1s1/2", "--vary", "Z", "--max-evaluations", "4")
    assert res.exit_code == 3, res.output
    assert "status: tolerance-not-met" in res.output
    assert "boundkit: tolerance-not-met: the extrapolations did not agree" in res.output


def test_a_search_stopped_by_the_solver_exits_3_with_its_message(monkeypatch):
    import boundkit.studies as studies

    def refuse(*args, **kwargs):
        raise studies.StudyError("the solver refused delta = 1.3: example")

    monkeypatch.setattr(studies, "critical", refuse)
    res = run("critical", "-p", "hulthen", "--param", "Z=1", "--param", "delta=1", "--state", "1s", "--vary", "delta")
    assert res.exit_code == 3, res.output
    assert "boundkit: failed: the solver refused delta = 1.3: example" in res.output
    assert "Traceback" not in res.output


def test_compare_prints_what_it_can_when_one_channel_is_refused():
    """Z = 80 point charge: no Klein-Gordon s levels (Z alpha > 1/2). The table still comes (Dirac 1s from
    the Sommerfeld-Dirac formula, Bethe & Salpeter 1957), the refusal is named on stderr, and the exit
    code is that of an incomplete study (3), as for a scan with a refused point."""
    res = run("compare", "--param", "Z=80", "--l-max", "0", "--levels", "1", "--json")
    assert res.exit_code == 3, res.output
    data = json.loads(res.stdout)
    one = next(r for r in data["rows"] if r["label"] == "1s")
    assert one["dirac_plus"] == pytest.approx(dirac_coulomb(80, 1, -1), rel=1e-10)
    assert one["klein_gordon"] is None
    assert "klein-gordon l=0" in res.stderr and "Z alpha < l + 1/2" in res.stderr


def test_compare_with_its_relativistic_channels_refused_says_it_in_one_short_line(caplog):
    """Z = 200 point charge: every Klein-Gordon and Dirac channel asked for is refused. stderr had a
    WARNING log line and then one of 577 characters with the three refusals in full."""
    res = run("compare", "--param", "Z=200")
    assert res.exit_code == 3, res.output
    assert "-20000" in res.stdout                       # the Schrodinger levels are still there
    lines = res.stderr.strip().splitlines()
    assert len(lines) == 1 and len(lines[0]) < 300, res.stderr
    assert lines[0].startswith("boundkit: not every channel was solved: klein-gordon l=0: error (Z: for the "
                               "Klein-Gordon equation a point Coulomb charge needs Z alpha < l + 1/2"), lines[0]
    assert lines[0].endswith("; dirac kappa=-1: error; dirac kappa=1: error"), lines[0]   # their reasons: --json
    assert not [r.getMessage() for r in caplog.records if r.levelno >= logging.WARNING]   # no second line


def test_critical_range_of_an_expression_is_searched_without_warnings():
    """--vary D of an --expr used to step D linearly below 0, where the solver refused it: exit 3. The
    1s of -exp(-r/D)/r unbinds at D = 0.8399038867 bohr (built-in yukawa term; the independent
    integration in test_studies_critical.py), also from the bracket 5,0.5, whose sign probe at D = -5
    warned 'not finite ... taken as V -> 0'."""
    for extra in ((), ("--bracket", "5,0.5")):
        res = run("critical", "--expr", "-Z*exp(-r/D)/r", "--param", "Z=1", "--param", "D=5", "--state", "1s",
                  "--vary", "D", "--json", *extra)
        assert res.exit_code == 0, res.output
        assert "not finite" not in res.output
        data = json.loads(res.stdout)
        assert data["value"] == pytest.approx(0.83990388669824, abs=1e-10)
        assert all(p["value"] > 0 for p in data["points"])


# --- one-line messages for input with no critical value -------------------------------------
def _one_line_error(res, pattern):
    import re

    assert res.exit_code == 2, res.output
    assert "Traceback" not in res.output
    assert res.exception is None or isinstance(res.exception, SystemExit)
    lines = res.output.strip().splitlines()
    assert len(lines) == 1, res.output
    assert re.search(pattern, lines[0]), lines[0]


def test_critical_names_the_parameters_when_no_term_takes_the_varied_one():
    res = run("critical", "-p", "yukawa", "--param", "Z=1", "--param", "screening_length=5", "--state", "1s",
              "--vary", "Q")
    _one_line_error(res, r"^boundkit: error: --vary: no term of the potential takes 'Q'; its terms take Z, "
                         r"screening_length$")


def test_critical_of_a_schrodinger_coulomb_level_says_it_never_unbinds():
    res = run("critical", "--param", "Z=1", "--state", "1s", "--vary", "Z")
    _one_line_error(res, r"stays bound for any charge > 0, down to 0\+: 1s never unbinds, there is no critical Z")
    assert "diving" not in res.output


@pytest.mark.parametrize("args", [
    ("critical", "-e", "dirac", "-p", "uniform-sphere", "--param", "Z=150", "--state", "1s", "--vary", "rms_fm",
     "--bracket", "1,5"),
    ("critical", "-e", "dirac", "-p", "uniform-sphere", "--param", "Z=150", "--state", "1s", "--vary", "rms_fm"),
    ("scan", "-e", "dirac", "-p", "uniform-sphere", "--param", "Z=150", "--vary", "rms_fm=1,2", "-n", "1",
     "--workers", "1"),
])
def test_varying_rms_fm_under_an_rms_rule_names_the_real_conflict(args):
    res = run(*args, "--rms-rule", "1.2,2.5")
    _one_line_error(res, r"^boundkit: error: --vary rms_fm: --rms-rule computes rms_fm from Z at every point, so "
                         r"rms_fm cannot be varied; drop --rms-rule, or vary Z$")
    assert "--param" not in res.output


def test_scan_pairs_each_j_with_its_l_for_a_spin_orbit_term():
    """scan had no --j, and every point of a spin-orbit Woods-Saxon well was an error row asking for one."""
    import boundkit

    ws = ["-p", "woods-saxon", "--param", "depth=50", "--param", "radius=4", "--param", "diffuseness=0.6",
          "--units", "nuclear", "--particle", "neutron", "--levels", "1", "--workers", "1"]     # demonstration values
    res = run("scan", *ws, "--vary", "spin_orbit=20", "--l", "1", "--j", "1.5", "--l", "1", "--j", "0.5", "--json")
    assert res.exit_code == 0, res.output
    data = json.loads(res.stdout)
    # the record's units are those of --units nuclear (it said length bohr)
    assert data["units"]["energy"] == "MeV" and data["units"]["length"] == "fm"
    rows = {r["label"]: r for r in data["rows"]}
    assert set(rows) == {"2p3/2", "2p1/2"} and all(r["status"] == "ok" for r in rows.values())
    for label, j in (("2p3/2", 1.5), ("2p1/2", 0.5)):
        direct = boundkit.solve("schrodinger", "woods-saxon", {"depth": 50, "radius": 4, "diffuseness": 0.6,
                                                               "spin_orbit": 20}, l=1, j=j, units="nuclear",
                                particle="neutron")
        assert rows[label]["energy"] == pytest.approx(direct.levels[0].energy_in("MeV"), rel=1e-12)
    bad = run("scan", *ws, "--vary", "spin_orbit=20", "--l", "1", "--j", "1.5", "--l", "1")
    assert bad.exit_code == 2 and "Traceback" not in bad.output
    assert bad.stderr.strip() == "boundkit: error: --j: give one --j per --l, in the same order (got 1 --j for 2 --l)"


def test_compare_names_a_shared_refusal_once_on_short_lines():
    """compare -p linear: every relativistic channel refuses the confining vector potential (Klein's
    paradox); the status line repeated the reason per channel (2423 characters at --l-max 2) and the
    stderr line cut it off. Both are one line under 300 characters, the reason given once; --json keeps
    each channel's message."""
    res = CliRunner().invoke(main, ["compare", "-p", "linear", "--param", "F=1", "--l-max", "6", "-n", "1"])
    assert res.exit_code == 3, res.output
    status = [x for x in res.stdout.splitlines() if x.startswith("status:")]
    assert len(status) == 1 and len(status[0]) < 300, status
    assert re.match(r"status: klein-gordon l=0\.\.6, dirac kappa=-7\.\.6: error \(potential: the vector part",
                    status[0]), status
    assert status[0].count("Klein's paradox") == 1
    err = res.stderr.splitlines()
    assert len(err) == 1 and len(err[0]) < 300, err
    assert re.match(r"boundkit: not every channel was solved: klein-gordon l=0\.\.6, dirac kappa=-7\.\.6: error "
                    r"\(potential: ", err[0]), err
    data = json.loads(CliRunner().invoke(main, ["compare", "-p", "linear", "--param", "F=1", "--l-max", "1",
                                                "-n", "1", "--json"]).stdout)
    assert all("Klein's paradox" in data["messages"][k] for k in ("klein-gordon l=1", "dirac kappa=1"))


def test_scan_stderr_line_stays_under_300_characters():
    """scan printed the first bad row's whole message on stderr (368 characters for a Klein-Gordon channel
    of a linear potential)."""
    res = CliRunner().invoke(main, ["scan", "-e", "klein-gordon", "-p", "linear", "--vary", "F=1:2:2", "-n", "1"])
    assert res.exit_code == 3, res.output
    err = res.stderr.splitlines()
    assert len(err) == 1 and len(err[0]) < 300, err
    assert re.match(r"boundkit: 2 row\(s\) with status error, tolerance-not-met or missing; first: 1s \(error: "
                    r"potential: the vector part", err[0]), err


# --- a varied name no term takes is named as --vary ---------------------------------------------
def test_scan_names_vary_for_a_parameter_no_term_takes():
    """A tester: `scan --vary Q=1:2:3` said '--param: no potential term takes parameter 'Q'', naming an option
    the user did not give."""
    res = run("scan", "--param", "Z=1", "--vary", "Q=1:2:3", "--workers", "1")
    assert res.exit_code == 2
    assert re.fullmatch(r"boundkit: error: --vary: no term of the potential takes 'Q'; its terms take Z\n",
                        res.output)



# --- critical follows --units and --energy-unit ------------------------------------------------
@pytest.mark.parametrize("extra, eunit, lunit", [(("--units", "nuclear"), "MeV", "fm"),
                                                 (("--energy-unit", "eV"), "eV", "bohr")])
def test_critical_json_reports_energies_and_lengths_in_the_units_asked(extra, eunit, lunit):
    """A tester: with --units nuclear the points' energies and mesh ends stayed in hartree and bohr."""
    from boundkit.studies import critical
    from boundkit.units import bohr_to

    units = "nuclear" if "nuclear" in extra else "atomic"
    ref = critical("klein-gordon", "coulomb", {"Z": 20}, state="1s", vary="Z", kind="merge", units=units)
    res = run("critical", "-e", "klein-gordon", "--param", "Z=20", "--vary", "Z", "--state", "1s",
              "--kind", "merge", "--json", *extra)
    assert res.exit_code == 0, res.output
    data = json.loads(res.output)
    assert (data["units"]["energy"], data["units"]["length"]) == (eunit, lunit)
    for got, want in zip(data["points"], ref.points):
        assert got["energy"] == pytest.approx(hartree_to(want["energy"], eunit), rel=1e-12)
        assert got["error_estimate"] == pytest.approx(hartree_to(want["error_estimate"], eunit), rel=1e-12)
        assert got["r_max"] == pytest.approx(bohr_to(want["r_max"], lunit), rel=1e-12)
