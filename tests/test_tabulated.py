"""Tabulated potentials: reading tables, units, interpolation, ends, refusals, solver use."""
from __future__ import annotations

import logging
import re

import numpy as np
import pytest
import scipy.constants as sc

import boundkit
from boundkit.potentials.tabulated import ENERGY_UNITS, LENGTH_UNITS, TabulatedTerm, read_table
from exact import BOHR_M

HARTREE_EV = sc.physical_constants["Hartree energy in eV"][0]  # CODATA via scipy.constants

R_GRID = np.logspace(-4, np.log10(50.0), 300)


def write_table(path, r, v, header: str = "", sep: str = " ") -> str:
    lines = [header] if header else []
    lines += [f"{float(x)!r}{sep}{float(y)!r}" for x, y in zip(r, v)]
    path.write_text("\n".join(lines) + "\n")
    return str(path)


@pytest.fixture(scope="module")
def coulomb_file(tmp_path_factory):
    path = tmp_path_factory.mktemp("tables") / "coulomb.dat"
    return write_table(path, R_GRID, -1.0 / R_GRID, header="# hydrogen, V = -1/r; r in bohr, V in hartree")


@pytest.fixture(scope="module")
def coulomb_file_fm_ev(tmp_path_factory):
    path = tmp_path_factory.mktemp("tables") / "coulomb_fm_eV.csv"
    r_fm = R_GRID * BOHR_M / sc.femto
    v_ev = -1.0 / R_GRID * HARTREE_EV
    return write_table(path, r_fm, v_ev, header="# units: r=fm V=eV", sep=", ")


def hydrogen(n: int) -> float:
    """E_n = -1/(2 n^2) hartree (H. A. Bethe and E. E. Salpeter, Quantum Mechanics of One- and
    Two-Electron Atoms, 1957)."""
    return -0.5 / n**2


# ---------------------------------------------------------------------------
# through the solver
# ---------------------------------------------------------------------------

@pytest.mark.parametrize("l", [0, 1])
def test_tabulated_coulomb_gives_hydrogen_levels(coulomb_file, l):
    term = TabulatedTerm(coulomb_file, tail="coulomb", origin="coulomb")
    assert term.origin_charge == pytest.approx(1.0, rel=1e-15)
    assert term.tail_charge == pytest.approx(1.0, rel=1e-15)
    res = boundkit.solve("schrodinger", term, l=l, levels=3)
    assert res.success, res.message
    assert [lv.n for lv in res.levels] == [l + 1, l + 2, l + 3]
    for lv in res.levels:
        if lv.n <= 3:
            assert lv.energy == pytest.approx(hydrogen(lv.n), rel=1e-8, abs=0)


def test_table_in_fm_and_ev_gives_the_same_levels(coulomb_file, coulomb_file_fm_ev):
    au = TabulatedTerm(coulomb_file)
    si = TabulatedTerm(coulomb_file_fm_ev)
    np.testing.assert_allclose(si.r, au.r, rtol=1e-14)
    np.testing.assert_allclose(si.V, au.V, rtol=1e-14)
    res = boundkit.solve("schrodinger", si, l=0, levels=3)
    assert res.success, res.message
    for lv in res.levels:
        assert lv.energy == pytest.approx(hydrogen(lv.n), rel=1e-8, abs=0)


def test_smooth_table_matches_the_potential_it_samples():
    # Yukawa potential -Z exp(-r/D)/r sampled at 400 points; the reference is the same
    # potential given as a callable (common practice: the table must not change the levels).
    Z, D = 1.0, 10.0

    def yukawa(r):
        return -Z * np.exp(-r / D) / r

    r = np.logspace(-4, np.log10(400.0), 400)
    term = TabulatedTerm(r, yukawa(r), tail="exponential", origin="coulomb")
    fine = np.logspace(-4, np.log10(40.0), 3001)
    assert np.max(np.abs(term(fine) / yukawa(fine) - 1)) < 1e-8
    table = boundkit.solve("schrodinger", term, l=0, levels=2)
    exact = boundkit.solve("schrodinger", yukawa, l=0, levels=2)
    assert table.success and exact.success
    for a, b in zip(table.levels, exact.levels):
        assert a.energy == pytest.approx(b.energy, rel=1e-10, abs=0)


# ---------------------------------------------------------------------------
# reading
# ---------------------------------------------------------------------------

def test_read_table_comments_csv_and_units(tmp_path):
    text = "\n".join([
        "# a comment before the units line",
        "# units: V=MeV, r=angstrom",
        "",
        "0.1, -2.0   # trailing comment",
        "# a comment between points",
    ] + [f"{0.1 * (k + 2)}, {-2.0 / (k + 2)}" for k in range(7)]) + "\n"
    path = tmp_path / "t.csv"
    path.write_text(text)
    r, v = read_table(path)
    assert r.size == 8
    # conversions: CODATA via scipy.constants
    assert r[0] == pytest.approx(0.1 * sc.angstrom / BOHR_M, rel=1e-15)
    assert v[0] == pytest.approx(-2.0e6 / HARTREE_EV, rel=1e-15)
    assert LENGTH_UNITS["fm"] == pytest.approx(1e-15 / BOHR_M, rel=1e-15)
    assert ENERGY_UNITS["keV"] == pytest.approx(1e3 / HARTREE_EV, rel=1e-15)


def test_unit_arguments_and_conflicts(tmp_path):
    plain = write_table(tmp_path / "plain.dat", np.arange(1.0, 9.0), -1.0 / np.arange(1.0, 9.0))
    r, v = read_table(plain, r_unit="nm", v_unit="keV")
    assert r[0] == pytest.approx(sc.nano / BOHR_M, rel=1e-15)
    assert v[0] == pytest.approx(-1e3 / HARTREE_EV, rel=1e-15)
    with_units = write_table(tmp_path / "u.dat", np.arange(1.0, 9.0), np.zeros(8), header="# units: r=fm V=MeV")
    with pytest.raises(ValueError, match=r"u\.dat', line 1: the file says r is in fm but r_unit='nm'"):
        read_table(with_units, r_unit="nm")
    with pytest.raises(ValueError, match=r"r_unit: unknown length unit 'mile'"):
        read_table(plain, r_unit="mile")
    with pytest.raises(ValueError, match=r"v_unit: unknown energy unit 'mev'.*case matters"):
        read_table(plain, v_unit="mev")


POINTS = [f"{k + 1} {-1.0 / (k + 1)}" for k in range(8)]


def _lines(*replace: tuple[int, str], extra: tuple[str, ...] = (), drop: int = 0) -> str:
    lines = ["# r V"] + list(POINTS)
    for i, text in replace:
        lines[i] = text
    lines += list(extra)
    if drop:
        lines = lines[:-drop]
    return "\n".join(lines) + "\n"


BAD_TABLES = [
    ("one column", _lines((3, "3.0")), r"line 4: expected 2 columns \(r and V\), found 1"),
    ("three columns", _lines((2, "2 -0.5 7")), r"line 3: expected 2 columns \(r and V\), found 3"),
    ("non-numeric", _lines((5, "5 abc")), r"line 6: V 'abc' is not a number.*start text lines with #"),
    ("fortran exponent", _lines((5, "5 1.0D-03")), r"line 6: V '1.0D-03' is not a number \(write exponents with E"),
    ("text header", "r V\n" + "\n".join(POINTS), r"line 1: r 'r' is not a number"),
    ("nan", _lines((4, "4 nan")), r"line 5: V is 'nan'; values must be finite"),
    ("infinite r", _lines((8, "inf -0.1")), r"line 9: r is 'inf'; values must be finite"),
    ("not increasing", _lines((4, "2.5 -0.4")), r"line 5: r = 2.5 is not larger than r on line 4.*strictly increasing"),
    ("repeated r", _lines((4, "3 -0.3")), r"line 5: r = 3 is not larger than r on line 4"),
    ("negative r", _lines((1, "-1 -1")), r"line 2: r = -1 but r must be > 0"),
    ("zero r", _lines((1, "0 -1")), r"line 2: r = 0 but r must be > 0"),
    ("seven points", _lines(drop=1), r"line 8: only 7 data point\(s\); at least 8"),
    ("empty", "# nothing here\n", r"line 1: only 0 data point\(s\)"),
    ("unknown length unit", "# units: r=parsec V=eV\n" + "\n".join(POINTS),
     r"line 1: unknown length unit 'parsec'; choose one of bohr, angstrom, nm, fm"),
    ("unknown energy unit", "# units: r=fm V=Ry\n" + "\n".join(POINTS), r"line 1: unknown energy unit 'Ry'"),
    ("bad units syntax", "# units: fm MeV\n" + "\n".join(POINTS), r"line 1: cannot read 'fm' in the units line"),
    ("units after data", _lines(extra=("# units: r=fm V=MeV",)), r"line 10: the units line must come before"),
    ("two units lines", "# units: r=fm\n# units: V=eV\n" + "\n".join(POINTS), r"line 2: a second units line"),
]


@pytest.mark.parametrize("label, content, pattern", BAD_TABLES, ids=[b[0] for b in BAD_TABLES])
def test_bad_tables_are_refused_with_file_and_line(tmp_path, label, content, pattern):
    path = tmp_path / "bad_table.dat"
    path.write_text(content)
    with pytest.raises(ValueError, match=r"potential file '[^']*bad_table\.dat', " + pattern):
        TabulatedTerm(path)


def test_missing_file_is_a_value_error(tmp_path):
    with pytest.raises(ValueError, match=r"potential file '[^']*nope\.dat': cannot read it"):
        read_table(tmp_path / "nope.dat")


# ---------------------------------------------------------------------------
# options and the behaviour beyond the table
# ---------------------------------------------------------------------------

def test_option_values_are_checked(coulomb_file):
    with pytest.raises(ValueError, match=r"tail: unknown value 'linear'; choose one of coulomb, zero, exponential"):
        TabulatedTerm(coulomb_file, tail="linear")
    with pytest.raises(ValueError, match=r"origin: unknown value 'zero'; choose one of coulomb, finite"):
        TabulatedTerm(coulomb_file, origin="zero")
    with pytest.raises(ValueError, match=r"tail_charge: only used with tail='coulomb'"):
        TabulatedTerm(coulomb_file, tail="zero", tail_charge=1.0)
    with pytest.raises(ValueError, match=r"degree: the spline degree must be one of 3, 5, 7, got 4"):
        TabulatedTerm(coulomb_file, degree=4)
    with pytest.raises(ValueError, match=r"table: r must be strictly increasing, but point 3"):
        TabulatedTerm([1, 2, 2, 3, 4, 5, 6, 7], np.zeros(8))
    with pytest.raises(ValueError, match=r"table: only 7 points"):
        TabulatedTerm(np.arange(1.0, 8.0), np.zeros(7))


def test_exact_reproduction_of_coulomb_between_and_beyond_points(coulomb_file):
    term = TabulatedTerm(coulomb_file)
    r = np.logspace(-8, 4, 1001)  # below, inside and beyond the table
    np.testing.assert_allclose(term(r), -1.0 / r, rtol=1e-14)
    assert term(0.5).shape == ()


def test_origin_and_tail_options():
    r = np.logspace(-2, 1, 40)
    v = -2.0 / r + 0.3  # y = r V = -2 + 0.3 r
    finite = TabulatedTerm(r, v, origin="finite", tail="coulomb", tail_charge=1.5)
    assert finite.origin_charge == 0.0 and finite.tail_charge == 1.5
    assert finite(np.array([1e-3, 1e-6])) == pytest.approx([v[0], v[0]], rel=1e-15)
    assert finite(20.0) == pytest.approx(-1.5 / 20.0, rel=1e-15)
    coul = TabulatedTerm(r, v, origin="coulomb", tail="coulomb")
    y0, y_last = r[0] * v[0], r[-1] * v[-1]
    assert coul.origin_charge == pytest.approx(-y0, rel=1e-15)
    assert coul(1e-5) == pytest.approx(y0 / 1e-5, rel=1e-14)
    assert coul.tail_charge == pytest.approx(-y_last, rel=1e-15)
    # between the points (spacing 0.18 in ln r) the quintic spline of y is far closer than a
    # cubic one: interpolation error ~ h^(k+1) (C. de Boor, A Practical Guide to Splines, 1978)
    mid = np.sqrt(r[1:] * r[:-1])
    y_exact = -2.0 + 0.3 * mid
    err5 = np.max(np.abs(coul(mid) * mid - y_exact))
    err3 = np.max(np.abs(TabulatedTerm(r, v, degree=3)(mid) * mid - y_exact))
    assert err5 < 2e-6 and err3 > 10 * err5


def test_zero_tail_warns_when_the_table_does_not_end_near_zero(caplog):
    r = np.logspace(-2, 1, 40)
    with caplog.at_level(logging.WARNING, logger="boundkit.potentials.tabulated"):
        term = TabulatedTerm(r, -1.0 / r, tail="zero", origin="coulomb")
    assert any("far from 0" in rec.getMessage() for rec in caplog.records)
    assert term(11.0) == 0.0 and term.tail_charge == 0.0
    caplog.clear()
    with caplog.at_level(logging.WARNING, logger="boundkit.potentials.tabulated"):
        TabulatedTerm(r, -np.exp(-r * 5), tail="zero", origin="finite")
    assert not any("far from 0" in rec.getMessage() for rec in caplog.records)


def test_exponential_tail_recovers_the_decay_length():
    A, b = 2.0, 1.5
    r = np.linspace(0.01, 30.0, 200)
    term = TabulatedTerm(r, -A * np.exp(-r / b), tail="exponential", origin="finite")
    assert term.decay_length == pytest.approx(b, rel=1e-12)
    far = np.array([31.0, 45.0, 60.0])
    np.testing.assert_allclose(term(far), -A * np.exp(-far / b), rtol=1e-11)
    with pytest.raises(ValueError, match=r"tail='exponential': \|V\| does not decrease"):
        TabulatedTerm(r, -A * np.exp(r / 30), tail="exponential")
    with pytest.raises(ValueError, match=r"tail='exponential': the last 5 values of V must be non-zero"):
        TabulatedTerm(r, np.where(r < r[-3], -1.0, 0.0), tail="exponential")


def test_repr_and_label(coulomb_file):
    term = TabulatedTerm(coulomb_file)
    assert term.label == "coulomb.dat" and term.name == "table"
    assert re.search(r"300 points", repr(term))


def _hulthen(r, Z=1.0, d=0.2):
    return -Z * d * np.exp(-d * r) / (-np.expm1(-d * r))


@pytest.mark.parametrize("n", [12, 30])
def test_a_coarse_table_says_its_interpolation_spread_and_the_levels_stay_within_it(n, caplog):
    """A Hulthen table (Z = 1, delta = 0.2) on n log-spaced points from 1e-5 to 150 bohr: the solve is of
    the interpolant, whose estimate does not see the table's own error (12 points: the 3s 2e-3 off with an
    estimate of 7e-14, status ok; found by a tester). The spread between splines of degree 5 and 7 is said
    in a warning, and spread x max |r V| <1/r> (max |r V| = Z = 1 here) bounds the error of the 1s-3s against
    the exact E_n = -(1/n - n delta/2)^2 / 2 (Flugge, Practical Quantum Mechanics, 1971; from memory, and the
    library's exact Hulthen term agrees)."""
    import importlib

    observables = importlib.import_module("boundkit.observables")
    r = np.geomspace(1e-5, 150, n)
    with caplog.at_level(logging.WARNING, logger="boundkit.potentials.tabulated"):
        term = TabulatedTerm(r, _hulthen(r), tail="exponential")
    assert term.interpolation_spread > 1e-8
    assert any(re.search(r"uncertain by .* give the table more points", m) for m in caplog.messages)
    res = boundkit.solve("schrodinger", term, None, l=0, levels=3, tol=1e-10)
    for k, lv in enumerate(res.levels, start=1):
        exact = -(1 / k - k * 0.2 / 2) ** 2 / 2
        inverse_r = observables.expectation_value(lv, lambda x: 1.0 / x).value
        assert abs(lv.energy - exact) <= term.interpolation_spread * 1.0 * inverse_r
        if n == 30:     # the estimate takes the interpolation error in (12 points: beyond first order)
            assert abs(lv.energy - exact) <= lv.error_estimate
    assert res.status == "tolerance-not-met"
    assert re.search(r"the table's interpolation error lies above it .* give the table more points", res.message)


@pytest.mark.parametrize("n, tol, status", [(400, 1e-12, "tolerance-not-met"), (1600, 1e-12, "ok")])
def test_a_resolved_table_s_estimate_covers_its_interpolation_error(n, tol, status):
    """A neutron in a Woods-Saxon well (50 MeV, 5 fm, 0.6 fm) tabulated on n log-spaced points from 1e-3
    to 30 fm: 400 points put the 1s 1.4e-11 (relative) off the built-in term's (solved at tol 1e-13; a
    tester's DOP853 shooting agreed with the built-in term to 1e-12 on this well), above tol 1e-12, and
    the old estimate said ok; the estimate now holds the interpolation error (twice the signed first-order
    shift between splines of degree 5 and 7, the table being within the spread limit) and says so."""
    r = np.geomspace(1e-3, 30.0, n)
    term = TabulatedTerm(r, -50.0 / (1 + np.exp((r - 5.0) / 0.6)), tail="zero", origin="finite", r_unit="fm",
                         v_unit="MeV")
    assert term.interpolation_spread <= 1e-8
    res = boundkit.solve("schrodinger", term, None, l=0, levels=1, tol=tol, particle="neutron")
    ref = boundkit.solve("schrodinger", "woods-saxon", {"depth": 50, "radius": 5, "diffuseness": 0.6},
                         units="nuclear", l=0, levels=1, tol=1e-13, particle="neutron")
    (lv,), (exact,) = res.levels, ref.levels
    assert abs(lv.energy - exact.energy) <= lv.error_estimate
    assert res.status == status
    assert "interpolation error" in res.diagnostics["notes"][-1]


@pytest.mark.parametrize("method", [pytest.param("spectral", marks=pytest.mark.slow), "finite-difference"])
@pytest.mark.parametrize("n", [30, 400])
def test_a_seeded_level_of_a_table_carries_the_table_s_error(method, n):
    """The studies refine one level from a seed energy (:func:`boundkit.studies._common.seeded_level`, the
    critical search's continuation) through ``Channel.level``, beside the solve that adds the tables'
    error: on the Hulthen table above (Z = 1, delta = 0.2, 30 points) the seeded 1s-3s came back 5e-7 to
    4e-6 hartree off the exact E_n = -(1/n - n delta/2)^2 / 2 (Flugge, Practical Quantum Mechanics, 1971;
    from memory, and boundkit.exact.hulthen) with estimates of 4e-14 to 4e-11, the finite differences all
    'ok' at tol 1e-10. The estimate now holds the table's error as a solve's does (400 points, resolved:
    the 1s still ok at tol 1e-10, as the solve says)."""
    from boundkit.discretize import get_method
    from boundkit.exact import hulthen
    from boundkit.solver import setup
    from boundkit.studies._common import seeded_level

    r = np.geomspace(1e-5, 150, n)
    term = TabulatedTerm(r, _hulthen(r), tail="exponential")
    eq, pot, _ = setup("schrodinger", term, None, l=0)
    for k in range(3):
        exact = hulthen(1.0, 0.2, k + 1)
        got = seeded_level(eq, pot, get_method(method), k, exact * 1.01, 1e-10)
        assert abs(got["energy"] - exact) <= got["error_estimate"]
        assert got["table_error"] <= got["error_estimate"]
        if n == 30:
            assert got["table_error"] > 1e-10 * abs(exact) and got["status"] == "tolerance-not-met"
        elif k == 0:
            assert got["status"] == "ok" and 0 < got["table_error"] < 1e-12


@pytest.mark.parametrize("r0", [1e-2, 1e-3])
def test_a_table_s_estimate_covers_what_lies_below_its_first_point(r0):
    """A table of the Yukawa potential -exp(-r/2)/r on 400 log-spaced points from r0 to 40 bohr, tail
    'zero', default origin 'coulomb' (r V held at its first value below r0): from r0 = 0.01 the 1s was
    2.5e-7 hartree above the built-in Yukawa term's (Z = 1, screening length 2 bohr, solved at tol 1e-13;
    the same closed form) with an estimate of 8.6e-15 and status ok (a tester); from 1e-3, 2.5e-10 with
    1.9e-14 (the error goes as r0^3: r V is linear at the origin, the 1s density as r^2). The estimate now
    holds the origin's model: twice the first-order shift by r V continued linearly from the first two
    points instead of held, and it stays within ten times the error."""
    r = np.geomspace(r0, 40.0, 400)
    term = TabulatedTerm(r, -np.exp(-r / 2) / r, tail="zero")
    res = boundkit.solve("schrodinger", term, None, l=0, levels=1, tol=1e-10)
    ref = boundkit.solve("schrodinger", "yukawa", {"Z": 1, "screening_length": 2}, l=0, levels=1, tol=1e-13)
    (lv,), (exact,) = res.levels, ref.levels
    error = abs(lv.energy - exact.energy)
    assert error > 1e-10 * abs(exact.energy)           # the origin's model costs more than tol
    assert error <= lv.error_estimate <= 10 * error
    assert res.status == "tolerance-not-met"
    assert "continued linearly below its first point" in res.diagnostics["notes"][-1]
    assert "or start it nearer r = 0 (below its first point the potential is modelled)" in res.message


def test_a_fine_table_is_not_called_coarse(caplog):
    r = np.geomspace(1e-5, 150, 400)
    with caplog.at_level(logging.WARNING, logger="boundkit.potentials.tabulated"):
        term = TabulatedTerm(r, _hulthen(r), tail="exponential")
    assert term.interpolation_spread < 1e-10
    assert not any("uncertain by" in m for m in caplog.messages)


def test_a_table_of_zeros_is_named_in_the_refusal():
    """V = 0 at every point: the refusal said 'check the parameters', which a table has none of (a tester)."""
    r = np.geomspace(1e-3, 10, 50)
    with pytest.raises(ValueError, match=r"too weak to bind anything .* V = 0 everywhere binds nothing\); check the "
                                         r"parameters or the table's values"):
        boundkit.solve("schrodinger", TabulatedTerm(r, np.zeros_like(r), tail="zero"), None, l=0)


def test_the_unsteady_tail_warning_gives_its_unit(caplog):
    r = np.geomspace(1e-3, 10, 50)
    with caplog.at_level(logging.WARNING, logger="boundkit.potentials.tabulated"):
        TabulatedTerm(r, -np.exp(-r) / r)          # tail 'coulomb' on a screened tail: r V falls off there
    assert any(re.search(r"r V is not steady over the last three points \(.* hartree bohr\)", m) for m in caplog.messages)


def test_a_binary_file_is_called_binary_not_one_column(tmp_path):
    """A binary file read as a table was told 'expected 2 columns, found 1' (a tester)."""
    f = tmp_path / "data.bin"
    f.write_bytes(bytes(range(256)) * 4)
    with pytest.raises(ValueError, match=r"line 1: not UTF-8 text \(a binary file, or another encoding: save it as "
                                         r"UTF-8\); a table is plain"):
        read_table(f)


def _number_list(text: str) -> list[float]:
    return [float(x) for x in text.split(",")]


def test_table_warnings_speak_the_table_units(tmp_path, caplog):
    """A tester found an fm/MeV table's warnings under --units nuclear in bohr and 'hartree bohr': they give
    radii, V and r V in the units the table was written in (the file's units line, or r_unit/v_unit)."""
    r = np.linspace(0.01, 20.0, 100)                  # fm; a 50 MeV well that ends at -0.1 MeV
    v = -50.0 / (1 + np.exp((r - 5.0) / 0.6)) - 0.1
    path = write_table(tmp_path / "ws.txt", r, v, header="# units: r=fm V=MeV")
    with caplog.at_level(logging.WARNING, logger="boundkit.potentials.tabulated"):
        TabulatedTerm(path, tail="zero", origin="coulomb")
    text = "\n".join(caplog.messages)
    assert "bohr" not in text and "hartree" not in text
    # the user's own numbers: r V at the first three points in MeV fm, V and r at the last point
    got = _number_list(re.search(r"first three points \((.*) MeV fm\)", text).group(1))
    np.testing.assert_allclose(got, r[:3] * v[:3], rtol=1e-5)
    m = re.search(r"V = (\S+) MeV at the last point \(r = (\S+) fm\) is far from 0", text)
    assert float(m.group(1)) == pytest.approx(v[-1], rel=1e-5) and float(m.group(2)) == pytest.approx(20.0, rel=1e-5)
    at = float(re.search(r"differ by that at r = (\S+) fm\)", text).group(1))
    assert r[0] <= at <= r[-1]                        # a radius of the table, in fm
    caplog.clear()
    with caplog.at_level(logging.WARNING, logger="boundkit.potentials.tabulated"):
        TabulatedTerm(r, v, tail="coulomb", tail_charge=3.0, r_unit="fm", v_unit="MeV")
    assert re.search(r"differs from -r V = \S+ \(in hartree bohr\) at the last point \(r = 20 fm\)", caplog.text)
    # -r V at the last point in hartree bohr, by hand from CODATA via scipy.constants
    mev_fm_in_hartree_bohr = 1e6 / HARTREE_EV * 1e-15 / sc.physical_constants["Bohr radius"][0]
    minus_rv = float(re.search(r"differs from -r V = (\S+) \(in", caplog.text).group(1))
    assert minus_rv == pytest.approx(-r[-1] * v[-1] * mev_fm_in_hartree_bohr, rel=1e-5)


def test_a_growing_exponential_tail_is_refused_in_the_table_units():
    r = np.linspace(1.0, 10.0, 20)                    # angstrom; |V| grows as exp(+r / 2 angstrom)
    with pytest.raises(ValueError, match=r"\(fitted slope of ln\|V\| = 0\.5 per angstrom\); use tail='zero'"):
        TabulatedTerm(r, -np.exp(r / 2.0), tail="exponential", r_unit="angstrom", v_unit="eV")
