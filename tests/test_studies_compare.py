"""Schrodinger, Klein-Gordon and Dirac levels side by side."""
from __future__ import annotations

import re

import pytest

from boundkit.exact import dirac_coulomb, klein_gordon_coulomb, schrodinger_coulomb
from boundkit.studies import CompareResult, compare
from boundkit.units import hartree_to


@pytest.fixture(scope="module")
def hydrogen() -> CompareResult:
    # Z = 1, infinitely heavy point nucleus, electron
    return compare("coulomb", {"Z": 1}, l_max=1, levels=2)


def test_hydrogen_2p_fine_structure_is_the_sommerfeld_dirac_splitting(hydrogen):
    # E(2p3/2) - E(2p1/2) from the Sommerfeld-Dirac formula (Bethe & Salpeter 1957, eq. 14.29;
    # boundkit.exact.dirac_coulomb): about 10.9496 GHz
    expected = hartree_to(dirac_coulomb(1, 2, -2) - dirac_coulomb(1, 2, 1), "GHz")
    assert hydrogen.splitting("2p", "GHz") == pytest.approx(expected, rel=1e-9)
    assert 10.9 < expected < 11.0
    row = hydrogen.to_dict("hartree", "GHz")["rows"]
    twop = next(r for r in row if r["label"] == "2p")
    assert twop["fine_structure"] == pytest.approx(expected, rel=1e-9)
    # the error estimate (sum of the two levels' estimates) bounds the true error and respects tol = 1e-10
    assert abs(twop["fine_structure"] - expected) <= twop["fine_structure_error"]
    assert twop["fine_structure_error"] <= 2e-10 * abs(hartree_to(dirac_coulomb(1, 2, 1), "GHz"))


def test_every_column_matches_its_exact_coulomb_formula(hydrogen):
    # Schrodinger -Z^2/(2n^2) (Bethe & Salpeter 1957); Klein-Gordon spin-0 Coulomb levels (Greiner,
    # Relativistic Quantum Mechanics); Dirac Sommerfeld-Dirac (Bethe & Salpeter 1957)
    assert hydrogen.success
    for r in hydrogen.rows:
        n, l = r["n"], r["l"]
        assert r["schrodinger"] == pytest.approx(schrodinger_coulomb(1, n), rel=1e-12)
        assert r["klein_gordon"] == pytest.approx(klein_gordon_coulomb(1, n, l), rel=1e-12)
        assert r["dirac_plus"] == pytest.approx(dirac_coulomb(1, n, -(l + 1)), rel=1e-12)
        if l > 0:
            assert r["dirac_minus"] == pytest.approx(dirac_coulomb(1, n, l), rel=1e-12)
        else:
            assert r["dirac_minus"] is None and r["fine_structure"] is None
        assert r["shift_klein_gordon"] == pytest.approx(r["klein_gordon"] - r["schrodinger"], rel=1e-12)
        assert r["spin_plus"] == pytest.approx(r["dirac_plus"] - r["klein_gordon"], rel=1e-12)


def test_dirac_centroid_is_close_to_the_klein_gordon_level(hydrogen):
    # The (2j+1)-weighted mean of E(j = l +- 1/2) differs from the spin-0 level only at order (Z alpha)^6
    # for l > 0 (expand both exact formulas); at Z = 1 that is ~1e-5 of the fine structure
    r = hydrogen.row("2p")
    assert abs(r["spin_centroid"]) < 1e-4 * abs(r["fine_structure"])
    assert abs(r["spin_plus"]) > 1e3 * abs(r["spin_centroid"])


def test_tables_and_units(hydrogen):
    text = hydrogen.table("eV", "MHz")
    assert "binding energies in eV" in text and "differences in MHz" in text and "status: ok" in text
    d = hydrogen.to_dict("eV", "MHz")
    assert d["units"] == {"energy": "eV", "differences": "MHz", "length": "bohr"}
    twop = next(r for r in d["rows"] if r["label"] == "2p")
    assert twop["fine_structure"] == pytest.approx(1e3 * hydrogen.splitting("2p", "GHz"), rel=1e-12)
    with pytest.raises(ValueError, match="unknown unit"):
        hydrogen.table("furlongs")
    with pytest.raises(KeyError, match="no fine-structure splitting"):
        hydrogen.splitting("1s")


def test_compare_refuses_bad_input():
    with pytest.raises(ValueError, match="l_max"):
        compare("coulomb", {"Z": 1}, l_max=-1)
    with pytest.raises(ValueError, match="unknown potential"):
        compare("coulomb-ish", {"Z": 1})


def test_a_channel_one_equation_refuses_leaves_the_others():
    """A point charge Z = 80 (Z alpha = 0.584): the Klein-Gordon s levels need Z alpha < 1/2 and do not
    exist, so that one channel is refused (as a scan refuses such a point); the Schrodinger and Dirac
    columns and the Klein-Gordon p levels are still compared. Before: the whole comparison failed with
    the s channel's message. Exact values: Schrodinger -Z^2/(2n^2), Sommerfeld-Dirac (Bethe & Salpeter
    1957, eq. 14.29), spin-0 Coulomb levels (Greiner, Relativistic Quantum Mechanics; from memory)."""
    res = compare("coulomb", {"Z": 80}, l_max=1, levels=1)
    assert not res.success
    assert res.statuses["klein-gordon l=0"] == "error"
    assert "Z alpha < l + 1/2" in res.messages["klein-gordon l=0"]
    assert all(v == "ok" for k, v in res.statuses.items() if k != "klein-gordon l=0")
    s1 = res.row("1s")
    assert s1["klein_gordon"] is None and s1["shift_klein_gordon"] is None and s1["spin_plus"] is None
    assert s1["schrodinger"] == pytest.approx(schrodinger_coulomb(80, 1), rel=1e-12)
    assert s1["dirac_plus"] == pytest.approx(dirac_coulomb(80, 1, -1), rel=1e-10)
    assert s1["shift_dirac_plus"] == pytest.approx(s1["dirac_plus"] - s1["schrodinger"], rel=1e-12)
    p2 = res.row("2p")
    assert p2["klein_gordon"] == pytest.approx(klein_gordon_coulomb(80, 2, 1), rel=1e-10)
    assert p2["fine_structure"] == pytest.approx(dirac_coulomb(80, 2, -2) - dirac_coulomb(80, 2, 1), rel=1e-9)
    text = res.table()
    assert "klein-gordon l=0: error (Z: for the Klein-Gordon equation" in text
    d = res.to_dict()
    assert d["statuses"]["klein-gordon l=0"] == "error" and "Z alpha" in d["messages"]["klein-gordon l=0"]
    assert d["messages"]["dirac kappa=-1"] == ""


def test_input_every_channel_refuses_is_still_an_error():
    """A parameter the potential does not take is refused by every channel: that is bad input, raised
    once, not a table of refusals."""
    with pytest.raises(ValueError, match="bogus"):
        compare("coulomb", {"Z": 1, "bogus": 2.0})


def test_a_spin_orbit_term_is_refused_with_what_to_do():
    """compare solved the Schrodinger channels without j and failed with "give j ... (e.g. --j 1.5 with
    --l 1)", an option compare does not have."""
    ws = {"depth": 50, "radius": 4, "diffuseness": 0.6, "spin_orbit": 20}
    with pytest.raises(ValueError, match=r"potential: compare sets the three equations side by side, and a spin-orbit "
                                         r"term .* belongs to the Schrodinger equation alone, with j; set spin_orbit = 0"):
        compare("woods-saxon", ws, units="nuclear", particle="neutron")
    res = compare("woods-saxon", {**ws, "spin_orbit": 0}, units="nuclear", particle="neutron", l_max=0, levels=1)
    assert res.success


def test_a_reason_many_channels_share_is_given_once():
    """A linear confining vector potential: every Klein-Gordon and Dirac channel is refused with the same
    Klein's-paradox reason (the equation's name apart). The status repeated it for each channel (2415
    characters for l_max = 2, tens of kilobytes for l_max = 25); it groups the channels and gives the
    reason once, on one line under 300 characters, and the messages keep every channel's own text."""
    res = compare("linear", {"F": 1.0}, l_max=2, levels=1)
    text = res.problems()
    assert len(text) < 300 and "\n" not in text, text
    assert text.count("Klein's paradox") == 1, text
    assert re.match(r"klein-gordon l=0\.\.2, dirac kappa=-3\.\.2: error \(potential: the vector part outgrows",
                    text), text
    assert "the Klein-Gordon/Dirac equation binds nothing" in text
    assert sum("Klein's paradox" in m for m in res.messages.values()) == 8
    assert "the Dirac equation binds nothing" in res.messages["dirac kappa=2"]
    assert all(res.statuses[f"schrodinger l={l}"] == "ok" for l in range(3))
