"""Run specs: a whole study described in one TOML file, and the engine that runs it.

A run spec names a physical model (the particle, one or more potential
*models*), the equations and channels to solve, and the studies to do. The
engine (:func:`run`) solves everything, then writes into one output folder
``results.json`` (all numbers, with units, constants, settings and the
boundkit version), CSV tables, figures and a short ``report.md``.

Format
------
Top-level keys (all optional unless marked)::

    title = "..."                      # required, one line
    description = "..."                # required, what the study is about
    units = "atomic"                   # parameters in hartree and bohr ("atomic")
                                       # or in MeV and fm ("nuclear")
    energy_unit = "keV"                # unit of reported energies (default hartree;
                                       # MeV for units = "nuclear")
    length_unit = "fm"                 # unit of reported lengths: bohr, fm, pm,
                                       # angstrom, nm (default bohr; fm for nuclear)
    figure_format = "png"              # png, svg or pdf
    equations = ["schrodinger"]        # schrodinger, klein-gordon, dirac
    channels = ["s1/2", "p"]           # see Channels below; default ["s"]
    levels = 1                         # lowest levels per channel (default: that of
                                       # each study's function: solve 1, scan 3, compare 2)
    tol = 1e-10                        # relative tolerance on binding energies
    method = "auto"                    # auto, spectral, finite-difference
    order = 8                          # finite-difference order (finite-difference only)

    [particle]                         # default: an electron
    name = "muon"                      # electron, muon, pion, kaon, proton, antiproton, neutron, deuteron (`boundkit particles`)
    mass_mev = 1500.0                  # or a mass in MeV/c^2 (name is then a label)
    nucleus_mass_mev = 938.272         # optional: use the reduced mass

    [models.NAME]                      # required: one or more potential models
    label = "point nucleus"            # optional, for reports
    terms = ["coulomb", "uehling"]     # built-in vector terms (they add)
    scalar_terms = []                  # built-in Lorentz-scalar terms
    expressions = ["-Z*exp(-r/D)/r"]   # vector terms as expressions in r
    files = ["well.toml", "v.txt"]     # the user's model files (.toml) and tables of r, V;
                                       # paths relative to the spec's folder
    scalar_expressions = []
    params = { Z = 92 }                # parameters shared by the terms above,
                                       # in the unit system of `units`

    [[models.NAME.term]]               # a term with parameters of its own (e.g.
    name = "woods-saxon"               # the same built-in as vector and scalar)
    # expression = "...", table = "v.txt" (with tail, origin, r_unit, v_unit, degree)
    # or model_file = "my.toml"        # instead of name
    role = "scalar"                    # vector (default) or scalar
    params = { depth = 420.0, radius = 6.0, diffuseness = 0.6 }

Studies (at least one). ``[solve]`` once; the others as ``[x]`` or as an
array ``[[x]]`` of several::

    [solve]                            # levels of every model x equation x channel
    models = ["point", "fermi"]        # default: every model
    equations = [...]                  # default: the top-level ones; likewise
    channels = [...]                   # channels, levels, tol, method
    figures = ["radial", "density", "levels"]   # default: all three
    radii = true                       # <r> and rms radius of every level
    differences = [["2p1/2", "2s1/2"]] # E(a) - E(b) in every model and equation
    reference = "point"                # E(model) - E(reference) for every level

    [converge]                         # energies against resolution (boundkit.accuracy)
    model = "point"                    # required
    equation = "dirac"                 # default: the first equation
    channel = "s1/2"                   # default: the first channel
    levels = 1
    methods = ["spectral", "finite-difference"]
    tol = 1e-13                        # of the reference solve

    [scan]                             # levels against one parameter (boundkit.studies)
    model = "screened"                 # required
    parameter = "screening_length"     # required, a shared parameter of a built-in term
    values = [100.0, 30.0, 10.0]       # or: range = { start = 1, stop = 100, num = 12,
                                       #               spacing = "log" }
    equation, channels, levels, tol, method as above
    workers = 2                        # worker processes (default: all cores)
    differences = [["2p1/2", "2s1/2"]] # per parameter value, with the slope d/dparameter
    [scan.second]                      # optional: a second parameter, a grid of both
    parameter = "Z"
    values = [1.0, 2.0]                # or range = {...}

    [critical]                         # where a level stops being bound (boundkit.studies)
    model = "screened"                 # required
    states = ["1s", "2s", "2p"]        # required
    parameter = "screening_length"     # default screening_length
    equation = "schrodinger"           # default: the first equation
    bracket = [0.5, 20.0]              # optional: bound at one end, unbound at the other
    tol = 1e-8                         # relative tolerance of the critical value
    energy_tol = 1e-10                 # relative tolerance of each energy on the way
    kind = "unbind"                    # optional: unbind, dive or merge (default from the potential)
    workers = 2                        # states searched in parallel (default: all cores)

    [compare]                          # Schrodinger, Klein-Gordon and Dirac side by side
    model = "point"                    # required (boundkit.studies)
    l_max = 1
    levels = 2
    tol = 1e-10

``differences`` entries may name the equation of each level, ``"dirac:1s1/2"``,
to compare equations within one model.

Channels
--------
A channel is a string ``"s"``, ``"p"``, ``"d"``, ... (orbital l) with an
optional total j, ``"p1/2"``, ``"p3/2"``; or a table ``{ l = 1 }`` or
``{ kappa = -2 }``, which may carry its own ``levels = 2``. For the
Schrodinger and Klein-Gordon equations a channel is its l (j is ignored); for
the Dirac equation ``"p1/2"`` is kappa = 1, ``"p3/2"`` kappa = -2, and a
channel without j means both kappas of that l.

Checks
------
:func:`load_spec` refuses an unknown key, a value of the wrong type, a missing
field or a value it cannot use with one :class:`ValueError` naming the file,
the key and the line where it stands (or the table it is missing from). It
also builds every potential model once, so that a bad parameter is caught
before anything is solved.

Output
------
:func:`run` refuses an existing output folder unless ``force=True`` (and even
then only one that holds a previous run's ``results.json``, or is empty). It
builds everything in a temporary sibling folder, writing each file through a
temporary name and :func:`os.replace`, and renames the folder into place at
the end: a run that fails leaves no partial output and leaves existing output
as it was.
"""
from __future__ import annotations

from .engine import RunReport, _Engine, run
from .plan import RunPlan, plan
from .keylines import _KeyLines  # noqa: F401 (tests use it)
from .spec import STUDY_SECTIONS, ChannelSpec, ModelDef, RunSpec, SpecErrors, load_spec

__all__ = ["load_spec", "run", "plan", "RunSpec", "RunReport", "RunPlan", "SpecErrors", "ChannelSpec", "ModelDef",
           "STUDY_SECTIONS"]
