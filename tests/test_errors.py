"""Bad input: every ValueError names the argument and says what is wrong.

Each case calls :func:`boundkit.solve` with one bad argument (everything else
valid) and checks the message with ``pytest.raises(..., match=...)``. The
limits on a point Coulomb charge are Z alpha < |kappa| (Dirac) and
Z alpha < l + 1/2 (Klein-Gordon), where gamma = sqrt(kappa^2 - (Z alpha)^2)
and sqrt((l + 1/2)^2 - (Z alpha)^2) turn imaginary (the exponents of the
exact spectra in exact.py: Bethe & Salpeter 1957, eq. 14.29; Greiner,
Relativistic Quantum Mechanics: Wave Equations, ch. 1).
"""
from __future__ import annotations

import math

import pytest

import boundkit
from exact import ALPHA, dirac_coulomb, klein_gordon_coulomb

COULOMB = dict(potential="coulomb", params={"Z": 1})

BAD = [
    ("unknown-equation", dict(equation="pauli", **COULOMB), r"^equation: unknown value 'pauli'"),
    ("unknown-potential", dict(equation="schrodinger", potential="no-such-well", params={"Z": 1}),
     r"^potential: unknown potential 'no-such-well'"),
    ("unknown-parameter", dict(equation="schrodinger", potential="coulomb", params={"Z": 1, "Zeta": 2}),
     r"^params: no potential term takes parameter 'Zeta'"),
    ("missing-Z", dict(equation="schrodinger", potential="coulomb", params={}),
     r"^params: term 'coulomb' needs parameter 'Z' \(nuclear charge number, e\); give it, e.g. params=\{'Z': 1\} "
     r"\(--param Z=1 on the command line\)$"),
    ("kappa-zero", dict(equation="dirac", kappa=0, **COULOMB), r"^kappa: must be a non-zero integer"),
    ("l-negative-schrodinger", dict(equation="schrodinger", l=-1, **COULOMB), r"^l: must be >= 0, got -1"),
    ("l-negative-kg", dict(equation="klein-gordon", l=-2, **COULOMB), r"^l: must be >= 0, got -2"),
    ("levels-zero", dict(equation="schrodinger", levels=0, **COULOMB), r"^levels: must be >= 1, got 0"),
    ("levels-negative", dict(equation="dirac", levels=-3, **COULOMB), r"^levels: must be >= 1, got -3"),
    ("dirac-supercritical", dict(equation="dirac", potential="coulomb", params={"Z": 140}, kappa=-1),
     r"^Z: for the Dirac equation a point Coulomb charge needs Z alpha < \|kappa\|"),
    ("dirac-supercritical-p1/2", dict(equation="dirac", potential="coulomb", params={"Z": 138}, kappa=1),
     r"^Z: for the Dirac equation a point Coulomb charge needs Z alpha < \|kappa\|"),
    ("kg-supercritical", dict(equation="klein-gordon", potential="coulomb", params={"Z": 70}, l=0),
     r"^Z: for the Klein-Gordon equation a point Coulomb charge needs Z alpha < l \+ 1/2"),
    ("dirac-given-l", dict(equation="dirac", l=1, **COULOMB),
     r"^kappa: the Dirac equation needs kappa, not l; for l = 1 use kappa = -2 .* or kappa = 1"),
    ("schrodinger-given-kappa", dict(equation="schrodinger", kappa=-1, **COULOMB),
     r"^kappa: only the Dirac equation takes kappa"),
    ("kg-given-kappa", dict(equation="klein-gordon", kappa=-1, **COULOMB),
     r"^kappa: only the Dirac equation takes kappa"),
    ("bad-method", dict(equation="schrodinger", method="monte-carlo", **COULOMB),
     r"^method: unknown discretization 'monte-carlo'"),
    ("bad-particle", dict(equation="schrodinger", particle="tauon", **COULOMB),
     r"^particle: unknown value 'tauon'"),
    ("negative-mass", dict(equation="schrodinger", mass_mev=-0.511, **COULOMB), r"^mass_mev: must be positive"),
    ("zero-mass", dict(equation="schrodinger", mass_mev=0.0, **COULOMB), r"^mass_mev: must be positive"),
    ("tol-zero", dict(equation="schrodinger", tol=0.0, **COULOMB), r"^tol: must be positive"),
    ("tol-negative", dict(equation="schrodinger", tol=-1e-10, **COULOMB), r"^tol: must be positive"),
    ("tol-nan", dict(equation="schrodinger", tol=float("nan"), **COULOMB), r"^tol: expected a finite number"),
    # a vector potential that grows without bound (V - S -> +inf) binds no normalisable level of the
    # Klein-Gordon or Dirac equation (Klein's paradox); this used to end in a MemoryError in the layout
    ("kg-confining-vector", dict(equation="klein-gordon", potential="linear", params={"F": 1.0}, levels=3),
     r"^potential: the vector part outgrows the scalar part"),
    ("dirac-confining-vector", dict(equation="dirac", potential="cornell", params={"kappa_c": 0.5, "sigma": 0.2},
                                    levels=3), r"^potential: the vector part outgrows the scalar part"),
    ("dirac-oscillator-vector", dict(equation="dirac", potential="oscillator", params={"k": 1.0}, levels=2),
     r"^potential: the vector part outgrows the scalar part"),
    # a molecular Morse core (V(0) = D e^(2 a r_e) ~ 1e6-1e28 hartree) in the relativistic equations:
    # Klein-Gordon ran for minutes on spurious levels near -2mc^2, Dirac (levels="all") ran out of
    # memory laying out its far box before the pole check it now meets first
    ("kg-morse-core", dict(equation="klein-gordon", potential="morse", params={"D": 0.63, "a": 4.07, "r_e": 1.87},
                           l=1, levels=1), r"^potential: V - S = .* exceeds 2 m c\^2"),
    ("dirac-morse-core", dict(equation="dirac", potential="morse", params={"D": 0.95, "a": 7.6, "r_e": 4.26},
                              kappa=1, levels="all"), r"^potential: E \+ 2mc\^2 - V \+ S changes sign"),
]


@pytest.mark.parametrize("kwargs, pattern", [pytest.param(k, p, id=i) for i, k, p in BAD])
def test_bad_input_raises_value_error(kwargs, pattern):
    with pytest.raises(ValueError, match=pattern):
        boundkit.solve(**kwargs)


def _assert_kept_promise(res, exact):
    """status 'ok' and the true error within twice the error estimate."""
    assert res.status == "ok", res.message
    lv = res.levels[0]
    assert abs(lv.energy - exact) <= 2.0 * lv.error_estimate, (lv.label, lv.energy, exact, lv.error_estimate)


def test_critical_charges_sit_where_the_formulas_turn_imaginary():
    """The refusals above are not over-eager: the limit is Z = |kappa|/alpha
    (Dirac) and Z = (l + 1/2)/alpha (Klein-Gordon). Z = 137 (Dirac, kappa = -1)
    and Z = 68 (KG, l = 0) are accepted while Z = 138 and Z = 69 are refused;
    below the limits the levels agree with exact.py within their error
    estimates. (How well Z = 132..137 are solved is checked in
    test_exact_catalogue.py::test_near_critical_dirac_coulomb.)"""
    z_dirac = math.floor(1 / ALPHA)             # 137: Z alpha = 0.9997 < 1
    res = boundkit.solve("dirac", "coulomb", {"Z": z_dirac}, kappa=-1, levels=1)
    assert isinstance(res, boundkit.SolveResult)    # accepted: no ValueError
    with pytest.raises(ValueError, match=r"^Z: for the Dirac"):
        boundkit.solve("dirac", "coulomb", {"Z": z_dirac + 1}, kappa=-1)
    res = boundkit.solve("dirac", "coulomb", {"Z": 130}, kappa=-1, levels=1)  # Z alpha = 0.949
    _assert_kept_promise(res, dirac_coulomb(130, 1, -1))

    z_kg = math.floor(0.5 / ALPHA)              # 68: Z alpha = 0.496 < 1/2
    res = boundkit.solve("klein-gordon", "coulomb", {"Z": z_kg}, l=0, levels=1)
    _assert_kept_promise(res, klein_gordon_coulomb(z_kg, 1, 0))
    with pytest.raises(ValueError, match=r"^Z: for the Klein-Gordon"):
        boundkit.solve("klein-gordon", "coulomb", {"Z": z_kg + 1}, l=0)
    # a higher channel takes the same charge (Z alpha < l + 1/2 = 3/2)
    res = boundkit.solve("klein-gordon", "coulomb", {"Z": 70}, l=1, levels=1)
    _assert_kept_promise(res, klein_gordon_coulomb(70, 2, 1))


@pytest.mark.parametrize("equation, kw", [("dirac", dict(kappa=-1)), ("klein-gordon", dict(l=0))])
def test_confinement_in_the_scalar_part_is_not_refused(equation, kw):
    """Equal vector and scalar linear parts (the spin-symmetric quark-model case), and a scalar part
    alone, keep V - S bounded: those bind, and are solved."""
    from boundkit.potentials.library import Linear

    for vector in (Linear(F=0.5), None):
        res = boundkit.solve(equation, [vector] if vector else [], scalar=Linear(F=0.5), levels=2, **kw)
        assert res.status == "ok", res.message
        assert len(res.levels) == 2 and res.levels[0].energy < res.levels[1].energy


@pytest.mark.parametrize("kappa_c, sigma, l, particle", [(5.636, 0.00266, 1, "electron"),
                                                          (1.306, 0.00222, 1, "kaon")])
def test_cornell_with_a_weak_string_is_solved(kappa_c, sigma, l, particle):
    """A Cornell well -kappa_c/r + sigma r with a strong Coulomb core and a weak string: its low levels
    are hydrogen-like. The first box was sized for an oscillator-like energy guess far above them
    (1.6e5 hartree for the kaon), and the layout asked for 1e7-1e10 elements (a MemoryError, or
    minutes). Check: each level within 1e-4 of hydrogen-like plus first-order sigma <r>, with
    <r> = [3 n^2 - l(l+1)] / (2 m kappa_c) (Bethe & Salpeter 1957, eq. 3.25, scaled to mass m); the
    second order, about (sigma r)^2 / level spacing, is below 3e-5 relative for the 4p here (measured
    1e-7, 3e-6, 3e-5 for 2p, 3p, 4p of the first case, 1e-13 for the kaon); and meshes of hundreds of
    nodes, not millions."""
    res = boundkit.solve("schrodinger", "cornell", {"kappa_c": kappa_c, "sigma": sigma}, l=l, levels=3,
                         particle=particle, tol=1e-10)
    assert res.status == "ok", res.message
    m = res.settings["mass_atomic_units"]
    for lv in res.levels:
        n = lv.n
        r_mean = (3 * n * n - l * (l + 1)) / (2 * m * kappa_c)
        approx = -m * kappa_c**2 / (2 * n * n) + sigma * r_mean
        assert abs(lv.energy - approx) < 1e-4 * abs(approx), (lv.label, lv.energy, approx)
        assert lv.resolution < 2000


def test_a_missing_parameter_carries_the_command_line_wording_too():
    """The API names the fix both ways; the command line took its own wording out with a regular expression
    over the message. The error now carries it (OptionError, as LimitError carries its keyword), through
    scan's '(at ...)' and through pickling (worker processes)."""
    import pickle

    from boundkit._checks import OptionError
    from boundkit.studies import scan

    api = (r"^params: term 'yukawa' needs parameter 'screening_length' \(screening length D, bohr\); give it, "
           r"e.g. params=\{'screening_length': 1\} \(--param screening_length=1 on the command line\)")
    cli = "params: term 'yukawa' needs parameter 'screening_length' (screening length D, bohr); give it, " \
          "e.g. --param screening_length=1"
    with pytest.raises(OptionError, match=api + "$") as info:
        boundkit.solve("schrodinger", "yukawa", {"Z": 1})
    assert info.value.command_line == cli
    back = pickle.loads(pickle.dumps(info.value))
    assert str(back) == str(info.value) and back.command_line == cli
    with pytest.raises(OptionError, match=api + r" \(at Z = 1\)$") as info:
        scan("schrodinger", "yukawa", {"Z": 1}, {"Z": [1.0, 2.0]}, workers=1)
    assert info.value.command_line == cli + " (at Z = 1)"
