"""Phase shifts and scattering lengths of tabulated potentials: their error estimates take in the table's
interpolation and origin model, to first order (boundkit.scattering.tables), as a solve's do.

Check values: the same potential written as a Python callable (its phases are those of the exact
potential within their own estimates, 1e-10 rad and below here); the tables' points are that function's
values, so the table and the callable differ only by the interpolation between the points and the model
below the first point."""
import math
import re

import numpy as np
import pytest
from scipy.constants import physical_constants

from boundkit.potentials.tabulated import TabulatedTerm
from boundkit.scattering import phase_shifts, scattering_length


def woods_saxon(r):
    """-50 MeV / (1 + exp((r - 5 fm)/0.6 fm)), r in fm (the tester's well)."""
    return -50.0 / (1.0 + np.exp((r - 5.0) / 0.6))


def yukawa(r):
    """-exp(-r/2)/r hartree, r in bohr."""
    return -np.exp(-r / 2.0) / r


def _ws_table(tmp_path, points, origin):
    r = np.linspace(0.01, 20.0, points)
    path = tmp_path / f"ws_{points}.txt"
    path.write_text("# units: r=fm V=MeV\n" + "".join(f"{x:.17g} {v:.17g}\n" for x, v in zip(r, woods_saxon(r))))
    return TabulatedTerm(str(path), tail="zero", origin=origin)


def _yukawa_table(points):
    r = np.geomspace(1e-3, 60.0, points)
    return TabulatedTerm(r, yukawa(r), tail="zero", origin="coulomb")


def re_match(pattern, text):
    return re.search(pattern, text) is not None


def _covered(table_value, table_error, exact_value, exact_error):
    return abs(table_value - exact_value) <= table_error + exact_error


@pytest.mark.filterwarnings("ignore")
@pytest.mark.parametrize("origin", ["coulomb", "finite"])
def test_woods_saxon_table_phase_estimate_covers_the_interpolation(tmp_path, origin):
    # the tester's case: a 600-point table 0.01-20 fm (spread 8e-5), proton, 1 and 10 MeV; before, the
    # estimates were 4.1e-12 rad for a table 3.8e-7 (origin 'finite') and 9.3e-7 ('coulomb') rad off
    E = [1.0, 10.0]
    kw = dict(particle="proton", units="nuclear")
    tab = phase_shifts(E, "schrodinger", _ws_table(tmp_path, 600, origin), **kw)
    ref = phase_shifts(E, "schrodinger", woods_saxon, **kw)
    assert ref.success
    for i in range(len(E)):
        diff = abs(tab.delta[i] - ref.delta[i])
        assert diff > 1e-8                              # the table's error is there to be covered
        assert _covered(tab.delta[i], tab.error_estimate[i], ref.delta[i], ref.error_estimate[i])
        assert tab.error_estimate[i] < 5 * diff         # and not by an estimate of another order
    assert tab.status == "tolerance-not-met"
    assert "tables' interpolation error" in tab.message
    assert len(tab.diagnostics["table_error_rad"]) == len(E)


@pytest.mark.filterwarnings("ignore")
@pytest.mark.parametrize("origin", ["coulomb", "finite"])
def test_woods_saxon_table_scattering_length_estimate_covers_the_interpolation(tmp_path, origin):
    # before: a = 8.788612 +- 2.7e-12 fm from the table against 8.788619 fm from the expression
    kw = dict(particle="proton", units="nuclear")
    tab = scattering_length("schrodinger", _ws_table(tmp_path, 600, origin), **kw)
    ref = scattering_length("schrodinger", woods_saxon, **kw)
    diff = abs(tab.a - ref.a)
    assert diff > 1e-9 * abs(ref.a)
    assert _covered(tab.a, tab.a_error, ref.a, ref.a_error)
    assert tab.a_error < 5 * diff
    assert re_match(r"table's interpolation error, [0-9.e+-]+ fm", tab.message)


@pytest.mark.filterwarnings("ignore")
@pytest.mark.parametrize("l", [0, 1])
def test_yukawa_table_phase_estimate_covers_and_falls_with_refinement(l):
    # tables of -exp(-r/2)/r on 40, 100 and 400 log-spaced points from 1e-3 to 60 bohr, E = 0.3 hartree;
    # the table's part falls as the table is refined (to the origin model's part, the same for all three)
    ref = phase_shifts([0.3], "schrodinger", yukawa, l=l)
    parts = []
    for points in (40, 100, 400):
        tab = phase_shifts([0.3], "schrodinger", _yukawa_table(points), l=l)
        assert _covered(tab.delta[0], tab.error_estimate[0], ref.delta[0], ref.error_estimate[0])
        parts.append(tab.diagnostics["table_error_rad"][0])
    assert abs(tab.delta[0] - ref.delta[0]) < 1e-8 < parts[0] < 1e-5
    assert parts[2] <= parts[1] < 0.01 * parts[0]


@pytest.mark.filterwarnings("ignore")
def test_yukawa_table_scattering_length_estimate_covers_and_falls_with_refinement():
    # a 40-point table is 1.4e-3 bohr off in a (1.385 bohr) and 1.4 bohr in r_e (16.8 bohr, Bethe's
    # integral); before, both estimates were below 1e-8
    ref = scattering_length("schrodinger", yukawa)
    ests = []
    for points in (40, 100, 400):
        tab = scattering_length("schrodinger", _yukawa_table(points))
        assert _covered(tab.a, tab.a_error, ref.a, ref.a_error)
        assert _covered(tab.effective_range, tab.effective_range_error, ref.effective_range,
                        ref.effective_range_error)
        ests.append((tab.a_error, tab.effective_range_error))
    assert abs(tab.a - ref.a) > 1e-10
    for est in zip(*ests):
        assert est[2] < 0.1 * est[1] < 0.01 * est[0]
    assert "r_e's estimate includes it" in tab.message


@pytest.mark.filterwarnings("ignore")
@pytest.mark.parametrize("equation, kappa", [("dirac", -1), ("klein-gordon", None)])
def test_relativistic_table_phase_estimate_covers_the_interpolation(tmp_path, equation, kappa):
    # the first-order change with the equation's own p and q (Dirac: (dV) (P^2 + Q^2)); 40 MeV proton
    kw = dict(particle="proton", units="nuclear", kappa=kappa) if kappa else dict(particle="proton", units="nuclear")
    tab = phase_shifts([40.0], equation, _ws_table(tmp_path, 150, "finite"), **kw)
    ref = phase_shifts([40.0], equation, woods_saxon, **kw)
    diff = abs(tab.delta[0] - ref.delta[0])
    assert diff > 1e-8
    assert _covered(tab.delta[0], tab.error_estimate[0], ref.delta[0], ref.error_estimate[0])
    assert tab.error_estimate[0] < 5 * diff


def test_no_table_no_table_note():
    res = phase_shifts([0.3], "schrodinger", yukawa)
    assert "table" not in res.message and "table_error_rad" not in res.diagnostics
    assert "table" not in scattering_length("schrodinger", yukawa).message


def test_scattering_length_message_quotes_the_radius_in_the_call_length_unit():
    # a square well of 2 fm, 30 MeV, proton: R was quoted in bohr (6.3e-5) under units='nuclear'
    res = scattering_length("schrodinger", lambda r: np.where(r < 2.0, -30.0, 0.0), particle="proton",
                            units="nuclear")
    assert res.success
    assert re_match(r"matched at R = [0-9.]+ fm$", res.message)
    R = float(res.message.split("R = ")[1].split()[0])
    fm_per_bohr = physical_constants["Bohr radius"][0] * 1e15          # scipy.constants (CODATA)
    assert math.isclose(R, res.settings["matching_radius_bohr"] * fm_per_bohr, rel_tol=1e-3)
    strict = scattering_length("schrodinger", lambda r: np.where(r < 2.0, -30.0, 0.0), particle="proton",
                               units="nuclear", tol=1e-16)
    assert strict.status == "tolerance-not-met"
    assert re_match(r"^error estimate [0-9.e+-]+ fm exceeds the tolerance$", strict.message)

