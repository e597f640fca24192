"""The tuned table: the file the controls' documented defaults come from, and its tuner.

References: the table file itself read with the json module (the loader must agree with
it); the frame checker's own step metric (check.metrics.frame_metrics), which the tuner's
step must equal; the project's earlier measurements of the frames the default windows need
(README, "Frames and mesh": 0.95 edge lengths per frame at 480 frames and 0.99 at 460 for 8
strips; 600 frames for 12 strips with 0.92, 1.15 at 480), taken with that checker on baked
builds before the tuner existed; and the construction's closed form (docs/eversion.md,
sections 3-5), in which the shape depends on the time only through the turn and the wave
amplitude, so the windows cannot change the peak curvature or the smallest ratio.
"""

from __future__ import annotations

import importlib.util
import json
import shutil
import tomllib
import zipfile
from pathlib import Path

import numpy as np
import pytest

from turnabout.cli import main
from turnabout.eversion import (
    MAX_STRIPS,
    MIN_STRIPS,
    STAGE_NAMES,
    Controls,
    default_depth,
    default_frames,
    default_timing,
    mesh_for,
)
from turnabout.eversion import controls as C
from turnabout.eversion.construction import FrameEvaluator, stage_state, turn_at
from turnabout.eversion.regularity import QUICK_GRID, scan
from turnabout.sweeps import pace
from turnabout.sweeps.grid import point_record, scan_spec
from turnabout.sweeps.run import point_figures

REPO = Path(__file__).resolve().parents[1]
TABLE = REPO / "core" / "turnabout" / "eversion" / "tuned_controls.json"
COUNTS = range(MIN_STRIPS, MAX_STRIPS + 1)
# another valid timing (the constraints of sweeps.pace.timing_problem), far from the
# reference one: every window moved by 0.01-0.05
OTHER = {"ripple": (0.0, 0.12), "swap": (0.065, 0.47), "twist": (0.3, 0.72),
         "tuck": (0.55, 0.94), "calm": (0.9, 1.0)}  # fmt: skip


def _raw():
    return json.loads(TABLE.read_text(encoding="utf-8"))


def _with(data: dict) -> str:
    return json.dumps(data)


@pytest.fixture
def patched_table(monkeypatch):
    """A table whose windows differ per strip count (tuck ends earlier with more strips)."""
    data = _raw()
    for n in COUNTS:
        data["strips"][str(n)]["timing"]["tuck"][1] = round(0.97 - 0.002 * (n - 8), 3)
    entries = C.parse_tuned_table(_with(data), "test table")
    monkeypatch.setattr(C, "_TUNED", entries)
    return entries


# --- the file and its loader ----------------------------------------------------------------


def test_every_documented_default_comes_from_the_file():
    rows = _raw()["strips"]
    assert sorted(map(int, rows)) == list(COUNTS)
    for n in COUNTS:
        row = rows[str(n)]
        assert default_depth(n) == row["depth"]
        assert default_frames(n) == row["frames"]
        assert default_timing(n) == {s: tuple(row["timing"][s]) for s in STAGE_NAMES}
        c = Controls(strips=n)
        assert c.wave_depth == row["depth"] and c.timing == default_timing(n)
        assert list(c.timing) == list(STAGE_NAMES)


def test_the_package_data_ships_the_table_in_the_wheel_and_the_extension(tmp_path):
    cfg = tomllib.loads((REPO / "pyproject.toml").read_text())["tool"]["setuptools"]
    assert cfg["package-data"]["turnabout.eversion"] == ["tuned_controls.json"]
    spec = importlib.util.spec_from_file_location("addon_build", REPO / "build.py")
    build = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(build)
    with zipfile.ZipFile(build.build_core_wheel(str(tmp_path))) as zf:
        assert zf.read("turnabout/eversion/tuned_controls.json") == TABLE.read_bytes()


@pytest.mark.parametrize(
    ("change", "words"),
    [
        (lambda d: d["strips"].pop("12"), "exactly the counts 8-16"),
        (lambda d: d["strips"].update({"17": d["strips"]["16"]}), "exactly the counts 8-16"),
        (lambda d: d["strips"]["9"].pop("frames"), "strips 9: needs 'depth', 'timing'"),
        (lambda d: d["strips"]["10"].update(frames=1), "strips 10: 'frames' must be"),
        (lambda d: d["strips"]["10"].update(frames=480.0), "strips 10: 'frames' must be"),
        (lambda d: d["strips"]["11"].update(depth=0.2), "strips 11: depth: must be from 0.13"),
        (lambda d: d["strips"]["11"].update(depth="deep"), "strips 11: 'depth' must be"),
        (lambda d: d["strips"]["13"]["timing"].pop("calm"), "strips 13: timing: needs"),
        (lambda d: d["strips"]["14"]["timing"].update(tuck=[0.9, 0.5]), "strips 14: tuck"),
        (lambda d: d["strips"]["15"]["timing"].update(swap="0,1"), "'timing' must map"),
        (lambda d: d.pop("strips"), "needs an object 'strips'"),
    ],
)
def test_a_bad_table_is_refused_naming_the_file_and_the_entry(change, words):
    data = _raw()
    change(data)
    with pytest.raises(C.TunedTableError, match="^the file: ") as err:
        C.parse_tuned_table(_with(data), "the file")
    assert words in str(err.value)
    with pytest.raises(C.TunedTableError, match="not JSON"):
        C.parse_tuned_table("{", "the file")


def test_defaulted_windows_follow_the_strip_count_and_given_ones_stay(patched_table):
    assert default_timing(8) != default_timing(16)
    c = Controls()
    assert c.timing == default_timing(8) and c.timing_is_default
    for n in COUNTS:
        moved = c.with_changes(strips=n)
        assert moved.timing == default_timing(n) and moved.timing_is_default
    given = Controls(timing=default_timing(8))
    assert not given.timing_is_default and given == c  # equal controls, whatever the origin
    assert given.with_changes(strips=16).timing == default_timing(8)
    assert c.with_changes(strips=16, timing=OTHER).timing == OTHER
    assert "timing_is_default" not in c.as_dict()


def test_the_command_line_fills_windows_from_the_chosen_strip_count(patched_table):
    import argparse

    from turnabout.commands.controls_options import add_control_options, read_controls

    p = argparse.ArgumentParser()
    add_control_options(p)
    chosen = read_controls(p.parse_args(["--strips", "14"])).controls
    assert chosen.timing == default_timing(14)
    one = read_controls(p.parse_args(["--strips", "14", "--swap", "0.05,0.5"])).controls
    assert one.timing == {**default_timing(14), "swap": (0.05, 0.5)}
    helps = {a.dest: a.help for a in p._actions}
    a, b = default_timing(8)["tuck"]
    assert f"default {a:g},{b:g} for 8 strips; other counts have their own" in helps["tuck"]


# --- the windows do not change the scan's figures --------------------------------------------


def _time_of_turn(timing: dict, turn: float) -> float:
    c = Controls(timing=timing)
    lo, hi = 0.0, 1.0
    for _ in range(80):
        mid = 0.5 * (lo + hi)
        lo, hi = (mid, hi) if turn_at(c, mid) < turn else (lo, mid)
    return 0.5 * (lo + hi)


def test_the_shape_depends_on_the_time_only_through_the_turn_and_the_waves():
    # docs/eversion.md, sections 3-5: F(theta, lat, t) = R(theta)[g(lat, p) + W], with p and
    # the wave amplitude the only functions of t. Two timings reach the same turn at
    # different times; with full waves at both, the surfaces must be the same.
    assert pace.timing_problem(OTHER) is None
    a, b = Controls(strips=8, timing=dict(pace.REFERENCE_TIMING)), Controls(timing=OTHER)
    mesh = mesh_for(a, n_lon=64, n_lat=16, spacing="even")
    ea, eb = FrameEvaluator(a, mesh), FrameEvaluator(b, mesh)
    for turn in (0.01, 0.2, 0.45, 0.5, 0.62, 0.9, 0.99):
        ta, tb = _time_of_turn(a.timing, turn), _time_of_turn(b.timing, turn)
        assert abs(ta - tb) > 1e-3  # really different times
        sa, sb = stage_state(a, ta), stage_state(b, tb)
        assert sa.waves == sb.waves == 1.0 and sa.turn == pytest.approx(sb.turn, abs=1e-13)
        assert np.abs(ea(ta) - eb(tb)).max() < 1e-10


def test_two_valid_timings_give_the_same_peak_curvature_and_ratio_to_scan_resolution():
    figs = []
    for timing in (pace.REFERENCE_TIMING, OTHER):
        rep = scan(Controls(strips=8, depth=0.16, timing=dict(timing)), n_theta=8, n_lat=31,
                   n_times=200, one_strip=True)  # fmt: skip
        figs.append((rep.min_ratio, rep.max_curvature, rep.min_ratio_at[2]))
    (ra, ka, la), (rb, kb, lb) = figs
    # 200 times: the peaks are sampled within 0.005 of the motion; measured 4e-6 and 0.04 %
    # apart at 400 times, 0.2 % and 0.8 % at 100
    assert rb == pytest.approx(ra, rel=2e-3) and kb == pytest.approx(ka, rel=1e-2)
    # the same latitude row, up to the half-turn symmetry (theta, lat) -> (pi/n - theta, -lat)
    # of every frame (docs/eversion.md, section 6)
    assert abs(la) == abs(lb)


# --- frames --------------------------------------------------------------------------------


def test_the_step_is_the_checkers_step():
    from turnabout.check.metrics import frame_metrics, reference_frame
    from turnabout.check.topology import MeshTopology

    c = Controls()
    mesh = mesh_for(c, n_lon=96, n_lat=24, spacing="even")
    faces = mesh.triangles()
    ev = FrameEvaluator(c, mesh)
    p0, p1 = ev(0.40), ev(0.41)
    topo = MeshTopology(faces, mesh.n_vertices)
    m = frame_metrics(p1, topo, reference_frame(p0, topo), previous=p0)
    lengths = pace.LocalLengths(faces, mesh.n_vertices)
    mine = np.linalg.norm(p1 - p0, axis=1) / (0.5 * (lengths(p0) + lengths(p1)))
    assert np.abs(mine - m.step).max() < 1e-12
    assert np.abs(lengths(p1) - m.local_length).max() < 1e-14


def test_frames_reproduce_the_earlier_measurements_for_8_and_12_strips():
    c8 = Controls(strips=8, depth=0.16, timing=dict(pace.REFERENCE_TIMING))
    m8 = mesh_for(c8)
    assert round(pace.largest_step(c8, 480, m8).largest, 2) == 0.95
    assert round(pace.largest_step(c8, 460, m8).largest, 2) == 0.99
    c12 = Controls(strips=12, depth=0.15, timing=dict(pace.REFERENCE_TIMING))
    r = pace.frames_needed(c12, mesh_for(c12), guess=600)
    assert r.frames == 600 and round(r.largest, 2) == 0.92


def test_window_tuning_lowers_the_models_largest_rate_within_the_constraints():
    # a turn rate peaked mid-turn, as measured (docs/eversion.md, section 8)
    turns = np.linspace(0.0, 1.0, 101)
    model = pace.PaceModel(turns, 200.0 + 300.0 * np.exp(-(((turns - 0.5) / 0.1) ** 2)), 9.0, 9.0)
    start = dict(pace.REFERENCE_TIMING)
    timing, rate = pace.tune_timing(model, start, restarts=1, iterations=300)
    grid = pace.model_times()
    assert rate == model.rate(timing, grid).max() < model.rate(start, grid).max()
    assert pace.timing_problem(timing) is None
    assert all(round(v, 3) == v for w in timing.values() for v in w)
    # no timing beats the mean: the turn's rate integrates to int s dp over the motion
    mean = float(np.sum(0.5 * (model.turn_rate[1:] + model.turn_rate[:-1]) * np.diff(turns)))
    assert rate > mean


# --- the tuner and the shipped entries -------------------------------------------------------


def test_the_8_strip_entry_reproduces_its_recorded_quick_scan():
    data = _raw()
    assert data["scan"] == {"kind": "quick", "grid": list(QUICK_GRID)}
    row = data["strips"]["8"]
    c = Controls(strips=8, depth=row["depth"], timing={k: tuple(v) for k, v in
                                                       row["timing"].items()})  # fmt: skip
    figs = point_figures(point_record(c, scan_spec("quick")))
    mine = {k: figs[k] for k in row["quick_scan"]}
    if np.__version__.startswith("1."):  # the table was written under numpy 1.26: same bits
        assert mine == row["quick_scan"]
    else:
        # numpy 2 rounds some elementary functions differently in the last bit; the
        # curvature's second differences (step 1e-5) magnify that to about 3e-10 relative
        assert mine == pytest.approx(row["quick_scan"], rel=1e-8)
        for k in ("min_ratio_t", "min_ratio_lat_deg", "max_curvature_t", "max_curvature_lat_deg"):
            assert mine[k] == row["quick_scan"][k]  # the same sample, exactly


def test_the_table_records_the_command_that_writes_it():
    data = _raw()
    assert data["command"].startswith("turnabout tune --strips 8:16:9")
    assert "--tuned core/turnabout/eversion/tuned_controls.json" in data["command"]
    for n in COUNTS:
        row = data["strips"][str(n)]
        assert row["largest_step"] <= data["step_limit"] or row["kept"]
        assert row["frames"] % data["fps"] == 0
        assert row["quick_scan"]["min_ratio"] >= data["min_ratio_floor"]


def test_tune_writes_the_table_format_and_the_same_bytes_twice(tmp_path):
    shipped = _raw()
    tables = []
    out = tmp_path / "o"
    for _ in range(2):  # each time from an empty results folder (the command names it)
        shutil.rmtree(out, ignore_errors=True)
        argv = ["tune", "--strips", "8", "--coarse", "3", "--rounds", "0", "--scan-grid", "8",
                "31", "12", "--tuck", "0.586,0.97", "--out", str(out), "--workers", "2",
                "--quiet"]  # fmt: skip
        assert main(argv) == 0
        tables.append((out / "tuned.json").read_bytes())
    assert tables[0] == tables[1]
    data = json.loads(tables[0])
    assert set(data) == set(shipped)
    row, ref = data["strips"]["8"], shipped["strips"]["8"]
    assert set(row) == set(ref) and set(row["tuner"]) == set(ref["tuner"])
    assert row["tuner"]["tuned_windows"] is None  # windows given: not tuned
    assert row["frames"] == 504  # 480 has a largest step of 0.9527 > 0.95 (the test above)


def test_tune_refuses_bad_options_before_any_work(tmp_path, capsys):
    out = tmp_path / "o"
    assert main(["tune", "--strips", "8", "--keep", "9", "--tuned", str(tmp_path / "t.json"),
                 "--out", str(out)]) == 2  # fmt: skip
    assert "--keep: 9 not among --strips" in capsys.readouterr().err
    assert main(["tune", "--strips", "8", "--keep", "8", "--out", str(out)]) == 2
    assert "give --tuned" in capsys.readouterr().err
    assert main(["tune", "--strips", "8", "--keep", "8", "--tuned", str(tmp_path / "t.json"),
                 "--out", str(out)]) == 2  # fmt: skip
    assert "needs the existing table" in capsys.readouterr().err
    assert not out.exists()
