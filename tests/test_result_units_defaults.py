"""A result's to_dict()/table() default to the unit system of the call, for every result type.

A tester found solve's to_dict() in MeV and fm under units="nuclear", compare's in hartree with a
length unit 'bohr', and scan's in hartree with lengths in fm. The check values are the same results
converted by hand with CODATA's hartree in eV (scipy.constants).
"""
from __future__ import annotations

import pytest
import scipy.constants as sc

import boundkit

MEV_PER_HARTREE = sc.physical_constants["Hartree energy in eV"][0] * 1e-6


def test_compare_defaults_to_the_call_units():
    c = boundkit.compare("coulomb", {"Z": 20}, units="nuclear", particle="pion", l_max=0, levels=1)
    d = c.to_dict()
    assert d["units"] == {"energy": "MeV", "differences": "MeV", "length": "fm"}
    assert d["rows"][0]["schrodinger"] == pytest.approx(c.rows[0]["schrodinger"] * MEV_PER_HARTREE, rel=1e-15)
    assert c.table().startswith("binding energies in MeV")
    atomic = boundkit.compare("coulomb", {"Z": 20}, particle="pion", l_max=0, levels=1).to_dict()
    assert atomic["units"] == {"energy": "hartree", "differences": "hartree", "length": "bohr"}


def test_scan_defaults_to_the_call_units():
    s = boundkit.scan("schrodinger", "coulomb", {"Z": 20}, vary={"Z": [20.0, 21.0]}, units="nuclear",
                      particle="pion", levels=1, workers=1)
    d = s.to_dict()
    assert d["units"]["energy"] == "MeV" and d["units"]["length"] == "fm"
    assert d["rows"][0]["energy"] == pytest.approx(s.rows[0]["energy"] * MEV_PER_HARTREE, rel=1e-15)
    assert s.to_csv().splitlines()[0].split(",")[4] == "energy_MeV"
    assert "MeV" in s.table().splitlines()[0]


def test_critical_defaults_to_the_call_units():
    """critical()'s record defaulted to hartree and bohr under units='nuclear' (a review)."""
    r = boundkit.critical("schrodinger", "woods-saxon", {"depth": 50.0, "radius": 2.0, "diffuseness": 0.5},
                          state="1s", vary="depth", units="nuclear", particle="proton")
    d = r.to_dict()
    assert d["units"]["energy"] == "MeV" and d["units"]["length"] == "fm"
    i = next(i for i, p in enumerate(r.points) if p["found"])
    assert d["points"][i]["energy"] == pytest.approx(r.points[i]["energy"] * MEV_PER_HARTREE, rel=1e-15)
