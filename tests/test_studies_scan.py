"""Parameter scans: levels followed by label, parallel back ends, resumable output."""
from __future__ import annotations

import io
import json
import math

import numpy as np
import pytest

import boundkit

from boundkit.exact import hulthen
from boundkit.studies import NuclearRadius, ScanResult, linspace, logspace, parse_vary, scan
from boundkit.studies._common import ProgressBar, channel_for
from boundkit.studies.figures import scan_figure


# --- grid helpers and channels --------------------------------------------------------------
def test_parse_vary_refuses_underscores_in_numbers():
    """Python's float reads 1_0 as 10; a tester's --vary Z=1_0 scanned Z = 10 without a word."""
    with pytest.raises(ValueError, match=r"vary: 'Z=1_0,2' has an underscore in a number; write the digits"):
        parse_vary("Z=1_0,2")


def test_parse_vary_forms():
    assert parse_vary("D=1:3:3") == ("D", [1.0, 2.0, 3.0])
    name, vals = parse_vary("D=1:100:3:log")
    assert name == "D" and vals == pytest.approx([1.0, 10.0, 100.0], rel=1e-14)
    assert parse_vary(" Z = 1, 2.5 ,4") == ("Z", [1.0, 2.5, 4.0])
    assert logspace(2, 8, 3) == pytest.approx([2.0, 4.0, 8.0], rel=1e-14)
    assert linspace(0, 1, 5) == pytest.approx([0, 0.25, 0.5, 0.75, 1.0])


@pytest.mark.parametrize("text, match", [
    ("D", "malformed"), ("=1,2", "malformed"), ("D=1:2", "cannot read"), ("D=1:2:x", "cannot read"),
    ("D=1:2:3:lin", "cannot read"), ("D=a,b", "cannot read"), ("D=0:1:3:log", "positive ends"),
    ("D=1,inf", "finite"),
])
def test_parse_vary_refuses_bad_text(text, match):
    with pytest.raises(ValueError, match=match):
        parse_vary(text)


def test_channels_map_kappa_to_l_and_refuse_l_for_dirac():
    assert channel_for("schrodinger", {"kappa": -1}) == {"l": 0}
    assert channel_for("klein-gordon", {"kappa": 1}) == {"l": 1}      # p1/2: large component l = 1
    assert channel_for("schrodinger", {"kappa": -2}) == {"l": 1}      # p3/2
    assert channel_for("dirac", {"kappa": 2}) == {"kappa": 2}
    with pytest.raises(ValueError, match="the Dirac equation needs kappa"):
        channel_for("dirac", {"l": 1})
    with pytest.raises(ValueError, match="does not fit kappa"):
        channel_for("schrodinger", {"l": 0, "kappa": 1})
    with pytest.raises(ValueError, match="unknown key"):
        channel_for("schrodinger", {"n": 1})


def test_a_schrodinger_channel_takes_j_for_a_spin_orbit_term():
    """A scan could not follow a spin-orbit split level: the channel refused 'j', and without it every
    point of a spin-orbit Woods-Saxon well was an error ("give j = l +- 1/2")."""
    assert channel_for("schrodinger", {"l": 1, "j": 1.5}) == {"l": 1, "j": 1.5}
    with pytest.raises(ValueError, match=r"j: for l = 1 a spin-1/2 particle has j = l \+- 1/2 \(0.5, 1.5\), got 2.5"):
        channel_for("schrodinger", {"l": 1, "j": 2.5})
    for eq, ch in (("klein-gordon", {"l": 1, "j": 1.5}), ("schrodinger", {"kappa": -2, "j": 1.5})):
        with pytest.raises(ValueError, match=r"'j' goes with 'l' in a Schrodinger channel \(for a spin-orbit term\) "
                                             r"or a Dirac one \(naming its kappa\)"):
            channel_for(eq, ch)
    assert channel_for("dirac", {"l": 1, "j": 1.5}) == {"kappa": -2}     # l with j names a Dirac kappa
    ws = {"depth": 50, "radius": 4, "diffuseness": 0.6}              # demonstration values, neutron, MeV and fm
    res = scan("schrodinger", "woods-saxon", ws, {"spin_orbit": [10.0, 20.0]},
               channels=[{"l": 1, "j": 1.5}, {"l": 1, "j": 0.5}], levels=1, units="nuclear", particle="neutron",
               workers=1)
    assert [r["status"] for r in res.rows] == ["ok"] * 4
    for r in res.rows:      # each row is the direct solve of its channel
        j = {"l=1, j=1.5": 1.5, "l=1, j=0.5": 0.5}[r["channel"]]
        direct = boundkit.solve("schrodinger", "woods-saxon", {**ws, "spin_orbit": r["spin_orbit"]}, l=1, j=j,
                                units="nuclear", particle="neutron")
        assert r["label"] == direct.levels[0].label
        assert r["energy"] == pytest.approx(direct.levels[0].energy, rel=1e-12)


def test_scan_refuses_bad_input_before_solving():
    with pytest.raises(ValueError, match=r"^vary: no term of the potential takes 'screening'; its terms take Z, "
                                         r"screening_length$"):
        scan("schrodinger", "yukawa", {"Z": 1, "screening_length": 2.0}, {"screening": [1.0, 2.0]}, workers=1)
    with pytest.raises(ValueError, match="needs screening_length > 0.*at screening_length = -1"):
        scan("schrodinger", "yukawa", {"Z": 1}, {"screening_length": [2.0, -1.0]}, workers=1)
    with pytest.raises(ValueError, match="one or two parameter"):
        scan("schrodinger", "yukawa", {"Z": 1}, {}, workers=1)
    with pytest.raises(ValueError, match="unknown option"):
        scan("schrodinger", "yukawa", {"Z": 1}, {"screening_length": [2.0]}, workers=1, colour="red")


def test_progress_bar_draws_only_when_asked():
    stream = io.StringIO()
    bar = ProgressBar(4, True, delay=0.0, stream=stream)
    bar.update(2)
    bar.close()
    assert "2/4" in stream.getvalue() and stream.getvalue().endswith("\n")
    quiet = io.StringIO()
    bar = ProgressBar(4, None, delay=0.0, stream=quiet)      # StringIO is not a terminal
    bar.update(4)
    bar.close()
    assert quiet.getvalue() == ""
    early = io.StringIO()
    bar = ProgressBar(4, True, delay=60.0, stream=early)     # a quick study prints nothing
    bar.update(3)
    bar.close()
    assert early.getvalue() == ""
    calls = []
    bar = ProgressBar(4, lambda d, t: calls.append((d, t)), stream=early)   # a hook, not drawn
    bar.update(1)
    assert calls == [(1, 4)] and early.getvalue() == ""


# --- physics: a screened potential ----------------------------------------------------------
def test_yukawa_levels_vanish_from_the_top_without_label_jumps():
    # V = -exp(-r/D)/r: as D shrinks the levels rise to 0 and unbind, higher n first (critical
    # D ~ 8.9 (3p), 7.2 (3s), 4.5 (2p), 3.2 (2s), 0.84 (1s); Rogers, Graboske & Harwood,
    # Phys. Rev. A 1, 1577 (1970), from memory). The test checks the ordering, not these values.
    D = logspace(50.0, 1.4, 7)
    res = scan("schrodinger", "yukawa", {"Z": 1}, {"screening_length": D}, channels=[{"l": 0}, {"l": 1}],
               levels=3, workers=2)
    assert isinstance(res, ScanResult)
    assert {r["status"] for r in res.rows} <= {"ok", "absent"}
    last_bound = {}
    for eq, ch, label in res.series_keys:
        x, E = res.series(label, equation=eq, channel=ch)
        order = np.argsort(x)[::-1]                       # from large D (weak screening) to small
        x, E = x[order], E[order]
        present = ~np.isnan(E)
        assert present[0], f"{label} must be bound at D = 50"
        k = int(np.argmin(present)) if not present.all() else len(present)
        assert present[:k].all() and not present[k:].any(), f"{label} reappears after vanishing"
        assert np.all(np.diff(E[:k]) > 0), f"{label}: energy must rise monotonically toward 0"
        assert np.all(E[:k] < 0)
        last_bound[label] = x[k - 1]
    assert not np.isnan(res.series("1s", channel="l=0")[1]).any()          # 1s survives at D = 1.4
    # higher n vanishes first (at larger D); 2s outlives 2p, 3s outlives 3p
    n_of = {lab: int(lab[0]) for lab in last_bound}
    for a in last_bound:
        for b in last_bound:
            if n_of[a] > n_of[b]:      # a higher level is never bound at a smaller D than a lower one
                assert last_bound[a] >= last_bound[b], (a, b, last_bound)
    assert last_bound["3s"] < last_bound["2p"] or last_bound["3p"] > last_bound["2s"]
    assert last_bound["2s"] <= last_bound["2p"] and last_bound["3s"] <= last_bound["3p"]
    # at every D the levels of a channel are ordered by n (labels never swap)
    for d in D:
        for ch in ("l=0", "l=1"):
            e = [r["energy"] for r in res.rows if r["screening_length"] == d and r["channel"] == ch
                 and r["energy"] is not None]
            assert e == sorted(e)


def test_scan_matches_the_exact_hulthen_levels_and_marks_unbound_ones_absent():
    # E_n = -(Z/n - n delta/2)^2/2, bound while delta < 2Z/n^2 (Flugge 1971, from memory)
    deltas = [0.1, 0.3, 0.6]
    res = scan("schrodinger", "hulthen", {"Z": 1}, {"delta": deltas}, channels=[{"l": 0}], levels=2, workers=1)
    assert [r["status"] for r in res.rows] == ["ok", "ok", "ok", "ok", "ok", "absent"]
    for r in res.rows:
        n = int(r["label"][0])
        if r["delta"] < 2 / n**2 and hulthen(1, r["delta"], n) < -1e-4:
            assert r["status"] == "ok"
            assert r["energy"] == pytest.approx(hulthen(1, r["delta"], n), rel=1e-10)
        elif r["delta"] >= 2 / n**2:
            assert r["status"] == "absent" and r["energy"] is None


# --- files and resuming ---------------------------------------------------------------------
class _Stop(Exception):
    pass


def test_interrupted_scan_resumes_from_its_point_files(tmp_path):
    vary = {"delta": [0.2, 0.25, 0.3, 0.35]}
    args = ("schrodinger", "hulthen", {"Z": 1}, vary)
    kw = dict(channels=[{"l": 0}], levels=2, workers=1, out=tmp_path)

    def stop_after_two(done, total):
        assert total == 4
        if done == 2:
            raise _Stop

    with pytest.raises(_Stop):
        scan(*args, progress=stop_after_two, **kw)
    files = sorted((tmp_path / "points").glob("*.json"))
    assert len(files) == 2
    for f in files:
        rec = json.loads(f.read_text())
        assert rec["key"] == f.stem and rec["result"]["status"] == "ok"
    assert not (tmp_path / "scan.csv").exists()
    res = scan(*args, **kw)
    assert (res.solved, res.reused) == (2, 2)
    again = scan(*args, **kw)
    assert (again.solved, again.reused) == (0, 4)
    assert again.rows == res.rows
    # a changed setting is a different point: nothing reused
    other = scan(*args, **{**kw, "tol": 1e-9})
    assert (other.solved, other.reused) == (4, 0)
    # combined outputs, written at the end
    data = json.loads((tmp_path / "scan.json").read_text())
    assert data["parameters"] == ["delta"] and len(data["rows"]) == 8
    csv = (tmp_path / "scan.csv").read_text().splitlines()
    assert csv[0].startswith("delta_per_bohr,equation,channel,label,energy_hartree")   # Hulthen delta: 1/bohr
    assert len(csv) == 9
    # every energy in the files is the exact Hulthen level (Flugge 1971, from memory)
    for r in data["rows"]:
        assert r["energy"] == pytest.approx(hulthen(1, r["delta"], int(r["label"][0])), rel=1e-10)
    assert not list(tmp_path.glob(".tmp-*")) and not list((tmp_path / "points").glob(".tmp-*"))


def test_scan_figure_is_written(tmp_path):
    res = scan(["schrodinger", "klein-gordon"], "hulthen", {"Z": 1}, {"delta": [0.1, 0.3]},
               channels=[{"l": 0}], levels=2, workers=1)
    path = scan_figure(res, tmp_path / "levels.png", unit="eV")
    assert path.read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"
    with pytest.raises(ValueError, match="unsupported figure format"):
        scan_figure(res, tmp_path / "levels.gif")


def test_two_parameter_scan_and_a_radius_that_follows_the_charge():
    rule = NuclearRadius(1.2, 2.5)
    res = scan("dirac", "uniform-sphere", {"rms_fm": rule}, {"Z": [20.0, 40.0]}, channels=[{"kappa": -1}],
               levels=1, workers=1)
    # rms_fm = sqrt(3/5) 1.2 (2.5 Z)^(1/3) fm at each point (uniform sphere of radius 1.2 A^(1/3) fm)
    assert res.rows[0]["energy"] > res.rows[1]["energy"]          # deeper binding at larger Z
    assert rule({"Z": 40.0}) == pytest.approx(math.sqrt(0.6) * 1.2 * 100.0 ** (1 / 3), rel=1e-14)
    two = scan("schrodinger", "yukawa", {}, {"Z": [1.0, 2.0], "screening_length": [10.0, 20.0]},
               channels=[{"l": 0}], levels=1, workers=1)
    assert two.parameters == ("Z", "screening_length") and len(two.rows) == 4
    x, E = two.series("1s", where={"screening_length": 20.0})
    assert list(x) == [1.0, 2.0] and E[1] < E[0]


# --- parallel back ends ---------------------------------------------------------------------
def test_dask_cluster_gives_the_same_numbers_as_local_processes():
    distributed = pytest.importorskip("distributed")
    vary = {"screening_length": [20.0, 3.0]}
    args = ("schrodinger", "yukawa", {"Z": 1}, vary)
    local = scan(*args, channels=[{"l": 0}, {"l": 1}], levels=2, workers=2)
    with distributed.LocalCluster(n_workers=2, threads_per_worker=1, processes=False, protocol="tcp://",
                                  host="127.0.0.1", dashboard_address=None) as cluster:
        assert cluster.scheduler_address.startswith("tcp://127.0.0.1:")
        remote = scan(*args, channels=[{"l": 0}, {"l": 1}], levels=2, scheduler=cluster.scheduler_address)
    assert remote.settings["backend"] == "dask" and local.settings["backend"] == "local"
    assert len(remote.rows) == len(local.rows) == 8
    for a, b in zip(remote.rows, local.rows):
        assert (a["label"], a["status"], a["screening_length"]) == (b["label"], b["status"], b["screening_length"])
        if a["energy"] is None:
            assert b["energy"] is None
        else:
            assert a["energy"] == pytest.approx(b["energy"], rel=1e-13, abs=0)
    assert any(r["energy"] is None for r in local.rows)          # 2p is unbound at D = 3


def test_unreachable_dask_scheduler_is_a_clear_error():
    dask = pytest.importorskip("dask")
    pytest.importorskip("distributed")
    with dask.config.set({"distributed.comm.timeouts.connect": "1s"}):
        with pytest.raises(ValueError, match="cannot reach the Dask scheduler"):
            scan("schrodinger", "yukawa", {"Z": 1}, {"screening_length": [5.0]}, scheduler="tcp://127.0.0.1:9",
                 scheduler_timeout=1)


def test_a_level_the_solve_could_not_certify_is_missing_not_absent():
    """A point whose solve came back partial (found 0 of 2: its count certificate failed) says nothing
    about whether the levels are bound; its rows were 'absent', as for a level that is not bound (a
    helper). Now 'missing', with the solve's message; absent stays for a certified count."""
    from boundkit.studies.scan import _rows_for

    task = {"labels": ["1s", "2s"], "point": {"Z": 1.0}, "vary_order": ["Z"], "equation": "schrodinger",
            "channel": {"l": 0}, "tol": 1e-10}
    partial = {"status": "partial", "message": "found 0 of 2 requested bound levels: the count certificate failed",
               "levels": []}
    rows = _rows_for(task, partial)
    assert [r["status"] for r in rows] == ["missing", "missing"]
    assert all(r["message"].startswith("found 0 of 2") and r["energy"] is None for r in rows)
    certified = {"status": "ok", "message": "all 1 bound level(s) of this channel (2 requested)",
                 "levels": [{"label": "1s", "energy": -0.5, "error_estimate": 1e-15}]}
    assert [r["status"] for r in _rows_for(task, certified)] == ["ok", "absent"]


def test_point_files_are_in_the_scan_units_and_name_them(tmp_path):
    """A tester found points/*.json in hartree and bohr, with no units, beside parameters in MeV and fm
    (scan.csv in keV): each point file now names its units and follows the scan's energy unit and the
    length unit of its system; a rerun in another energy unit reads them back."""
    import scipy.constants as sc

    ws = {"radius": 5.0, "diffuseness": 0.6}
    kw = dict(l=0, levels=1, workers=1, out=tmp_path, units="nuclear", particle="proton")
    res = scan("schrodinger", "woods-saxon", ws, {"depth": [40.0, 50.0]}, energy_unit="keV", **kw)
    kev_per_hartree = sc.physical_constants["Hartree energy in eV"][0] * 1e-3      # CODATA via scipy
    fm_per_bohr = sc.physical_constants["Bohr radius"][0] / sc.femto
    files = sorted((tmp_path / "points").glob("*.json"))
    assert len(files) == 2
    by_depth = {r["depth"]: r for r in res.rows}
    for f in files:
        rec = json.loads(f.read_text())
        assert rec["units"]["energy"] == "keV" and rec["units"]["length"] == "fm"
        assert rec["units"]["parameters"] == {"depth": "MeV", "diffuseness": "fm", "radius": "fm"}
        lv = rec["result"]["levels"][0]
        row = by_depth[rec["point"]["depth"]]
        assert lv["energy"] == pytest.approx(row["energy"] * kev_per_hartree, rel=1e-12)
        assert lv["error_estimate"] == pytest.approx(row["error_estimate"] * kev_per_hartree, rel=1e-12)
        assert 5.0 < lv["r_max"] < 100.0        # a few radii of a 5 fm well, in fm (it was 5e-4: bohr)
    # the 1s at 40 MeV in keV, as in scan.csv
    assert by_depth[40.0]["energy"] * kev_per_hartree == pytest.approx(
        float((tmp_path / "scan.csv").read_text().splitlines()[1].split(",")[4]), rel=1e-15)
    again = scan("schrodinger", "woods-saxon", ws, {"depth": [40.0, 50.0]}, energy_unit="eV", **kw)
    assert (again.solved, again.reused) == (0, 2)
    for a, b in zip(again.rows, res.rows):
        assert a["energy"] == pytest.approx(b["energy"], rel=4e-16)
    # a point file that does not name its units is solved again
    rec = json.loads(files[0].read_text())
    del rec["units"]
    files[0].write_text(json.dumps(rec))
    third = scan("schrodinger", "woods-saxon", ws, {"depth": [40.0, 50.0]}, energy_unit="eV", **kw)
    assert (third.solved, third.reused) == (1, 1)
    assert fm_per_bohr == pytest.approx(boundkit.units.bohr_to(1.0, "fm"), rel=1e-10)


def test_a_value_listed_twice_is_refused():
    """scan(vary={'Z': [1, 1, 2]}) solved Z = 1 twice (the command line and run specs refuse it)."""
    with pytest.raises(ValueError, match=r"^vary\['Z'\]: the value 1 is listed twice \(it would be solved twice\); "
                                         r"list each value once$"):
        boundkit.scan("schrodinger", "coulomb", {"Z": 1.0}, vary={"Z": [1, 1.0, 2]}, workers=1)
