"""Sweeps: the grid syntax, the figures per point, the runners and the results folder.

The reference for every figure is the regularity scan itself (eversion.regularity.scan) run
serially in this process on the same grid: a sweep on a process pool or a Dask cluster
must give the same bits. The scans use a reduced grid (8 theta per strip x 31 latitudes, 12
times plus the stage boundaries), which is the real scan at that grid, so a point costs
about 0.2 s instead of the quick scan's seconds.
"""

from __future__ import annotations

import json
import os
import signal
import sys

import numpy as np
import pytest
from references import require

from turnabout.cli import main
from turnabout.eversion import Controls
from turnabout.eversion.regularity import MIN_RATIO, scan
from turnabout.sweeps import (
    grid_points,
    parse_values,
    parse_windows,
    point_figures,
    point_key,
    read_table,
    run_sweep,
    scan_spec,
    table_csv,
    table_json,
)
from turnabout.sweeps.grid import point_record

GRID = (8, 31, 12)
GRID_ARGS = ["--scan-grid", *map(str, GRID)]
SPEC = scan_spec("quick", GRID)
STRIPS, DEPTHS = [8, 10], [0.13, 0.14, 0.15, 0.16]


def _points():
    return grid_points(STRIPS, DEPTHS, {})


def _needs_dask():
    return require("distributed")  # Dask runs need the 'sweep' extra


# --- the grid ------------------------------------------------------------------------------


def test_ranges_are_inclusive_and_evenly_spaced_like_linspace():
    # numpy.linspace(start, stop, num) includes both ends (numpy reference documentation)
    assert parse_values("--depth", "0.13:0.16:4") == np.round(
        np.linspace(0.13, 0.16, 4), 12).tolist()  # fmt: skip
    assert parse_values("--strips", "8,12:16:3,8", integer=True) == [8, 12, 14, 16]
    assert parse_windows("--tuck", "0.586,0.97/0.6,0.95") == [(0.586, 0.97), (0.6, 0.95)]


def test_grid_order_is_strips_then_depth_then_stages():
    pts = grid_points([8, 9], [0.13, 0.15], {"tuck": [(0.586, 0.97), (0.6, 0.95)]})
    assert len(pts) == 8
    assert [(p.strips, p.wave_depth, p.timing["tuck"]) for p in pts[:3]] == [
        (8, 0.13, (0.586, 0.97)), (8, 0.13, (0.6, 0.95)), (8, 0.15, (0.586, 0.97))]  # fmt: skip


def test_the_key_changes_with_every_control_and_with_the_scan():
    c = Controls(strips=8, depth=0.15)
    keys = {
        point_key(c, SPEC),
        point_key(c.with_changes(depth=0.14), SPEC),
        point_key(c.with_changes(strips=9), SPEC),
        point_key(c.with_changes(timing={**c.timing, "tuck": (0.6, 0.95)}), SPEC),
        point_key(c, scan_spec("full", GRID)),
        point_key(c, scan_spec("quick", (8, 31, 13))),
    }
    assert len(keys) == 6
    assert point_key(Controls(strips=8, depth=0.15), SPEC) == point_key(c, SPEC)


def test_a_table_file_gives_the_same_points_as_the_options(tmp_path):
    table = tmp_path / "points.csv"
    table.write_text('strips,depth,tuck\n8,0.13,"0.6,0.95"\n10,0.16,\n', encoding="utf-8")
    pts = read_table(table)
    assert pts == [
        grid_points([8], [0.13], {"tuck": [(0.6, 0.95)]})[0],
        grid_points([10], [0.16], {})[0],
    ]


# --- figures -------------------------------------------------------------------------------


def test_a_points_figures_are_the_scans_figures_at_that_grid():
    c = Controls(strips=8, depth=0.15)
    figs = point_figures(point_record(c, SPEC))
    rep = scan(c, n_theta=GRID[0], n_lat=GRID[1], n_times=GRID[2], one_strip=True)
    assert figs["min_ratio"] == rep.min_ratio
    assert figs["max_curvature"] == rep.max_curvature
    assert figs["min_ratio_t"] == rep.min_ratio_at[0]
    assert figs["max_curvature_lat_deg"] == np.degrees(rep.max_curvature_at[2])
    assert figs["verdict"] == ("regular" if rep.min_ratio >= MIN_RATIO else "fails")
    assert figs["default_frames"] == 480
    assert figs["frames_needed"] is None and figs["frames_needed_step"] is None  # not asked


def test_frames_needed_is_the_fewest_whole_seconds_within_one_edge_length_per_frame():
    # The checker's step criterion (one local edge length per frame, common practice for
    # motion that reads as continuous): the point's frames F keep the largest step of its own
    # default mesh at or below 1, and one second fewer does not.
    from turnabout.eversion import mesh_for
    from turnabout.sweeps.pace import FPS, largest_step

    c = Controls(strips=8, depth=0.15)
    spec = scan_spec("quick", GRID, frames_needed=True)
    assert point_key(c, spec) != point_key(c, SPEC)  # a different point file
    figs = point_figures(point_record(c, spec))
    f = figs["frames_needed"]
    assert f % FPS == 0
    mesh = mesh_for(c)
    assert figs["frames_needed_step"] == largest_step(c, f, mesh).largest <= 1.0
    assert largest_step(c, f - FPS, mesh).largest > 1.0


# --- runners: local pool, Dask, resume -----------------------------------------------------


@pytest.fixture(scope="module")
def serial(tmp_path_factory):
    """The reference: every point scanned in this process."""
    res = run_sweep(_points(), SPEC, tmp_path_factory.mktemp("serial"), workers=1)
    assert len(res.computed) == 8
    return table_csv(res), table_json(res)


def test_a_process_pool_gives_the_serial_bytes(serial, tmp_path):
    res = run_sweep(_points(), SPEC, tmp_path, workers=2)
    assert (table_csv(res), table_json(res)) == serial


@pytest.fixture(scope="module")
def dask_client():
    """A Dask LocalCluster of 2 single-threaded worker processes, shared by the module."""
    distributed = _needs_dask()
    with distributed.LocalCluster(n_workers=2, threads_per_worker=1, processes=True,
                                  dashboard_address="127.0.0.1:0", silence_logs=40) as cluster, \
            distributed.Client(cluster) as client:  # fmt: skip
        yield client


def test_a_dask_cluster_gives_the_serial_bytes_even_when_a_worker_dies(
    serial, tmp_path, dask_client
):
    client = dask_client
    res = run_sweep(_points(), SPEC, tmp_path / "whole", client=client)
    assert (table_csv(res), table_json(res)) == serial

    pids = client.run(os.getpid)  # worker address -> process id
    killed = []

    def kill_one_worker(key):
        if not killed:  # after the first result, while the other points are running
            victim = sorted(pids)[0]
            os.kill(pids[victim], signal.SIGKILL)
            killed.append(victim)

    res = run_sweep(_points(), SPEC, tmp_path / "killed", client=client, retries=3,
                    on_result=kill_one_worker)  # fmt: skip
    assert killed and len(res.computed) == 8
    assert killed[0] not in client.scheduler_info()["workers"]  # that worker really died
    assert (table_csv(res), table_json(res)) == serial


def test_an_interrupted_sweep_resumes_with_only_the_missing_points(serial, tmp_path):
    seen = []

    def stop_after_three(key):
        seen.append(key)
        if len(seen) == 3:
            raise KeyboardInterrupt

    with pytest.raises(KeyboardInterrupt):
        run_sweep(_points(), SPEC, tmp_path, workers=2, on_result=stop_after_three)
    assert len(list((tmp_path / "points").glob("*.json"))) == 3
    assert not list((tmp_path / "points").glob(".*"))  # no half-written file left
    res = run_sweep(_points(), SPEC, tmp_path, workers=2)
    assert sorted(res.reused) == sorted(seen)
    assert len(res.computed) == 5 and not set(res.computed) & set(seen)
    assert (table_csv(res), table_json(res)) == serial
    # a damaged point file is not trusted: that one point is scanned again
    (tmp_path / "points" / f"{seen[0]}.json").write_text("{", encoding="utf-8")
    res = run_sweep(_points(), SPEC, tmp_path, workers=1)
    assert res.computed == [seen[0]]
    assert (table_csv(res), table_json(res)) == serial


def test_check_on_a_dask_cluster_gives_the_local_report(tmp_path, dask_client):
    from turnabout.check import check_animation
    from turnabout.eversion import evaluate
    from turnabout.mesh import uniform_sphere_mesh

    c = Controls(strips=8)
    mesh = uniform_sphere_mesh(64, 16)
    P = evaluate(c, np.linspace(0.0, 1.0, 12), mesh)
    local = check_animation(P, mesh.triangles())
    remote = check_animation(P, mesh.triangles(), client=dask_client)
    local.write_json(tmp_path / "local.json")
    remote.write_json(tmp_path / "remote.json")
    assert (tmp_path / "local.json").read_bytes() == (tmp_path / "remote.json").read_bytes()


# --- the command ---------------------------------------------------------------------------


def _sweep(tmp_path, name, *extra):
    out = tmp_path / name
    args = ["sweep", "--strips", "8,10", "--depth", "0.13:0.16:4", *GRID_ARGS,
            "--out", str(out), "--quiet", *extra]  # fmt: skip
    assert main(args) == 0
    return out


def test_the_command_writes_the_same_tables_on_every_runner(serial, tmp_path):
    outs = [_sweep(tmp_path, "one", "--workers", "1"), _sweep(tmp_path, "two", "--workers", "2")]
    try:
        import distributed  # noqa: F401

        outs.append(_sweep(tmp_path, "dask", "--scheduler", "local:2"))
    except ImportError:
        pass  # the Dask runner is covered where the 'sweep' extra is installed
    for out in outs:
        assert (out / "sweep.csv").read_bytes() == serial[0]
        assert (out / "sweep.json").read_bytes() == serial[1]
    data = json.loads(serial[1])
    assert [(p["strips"], p["depth"]) for p in data["points"]] == [
        (s, d) for s in STRIPS for d in DEPTHS]  # fmt: skip


def test_the_command_reports_what_it_computed_and_reused(tmp_path, capsys):
    out = tmp_path / "r"
    base = ["sweep", "--strips", "8", "--depth", "0.13,0.16", *GRID_ARGS, "--out", str(out),
            "--workers", "1"]  # fmt: skip
    assert main(base) == 0
    assert main([*base[:4], "0.13:0.16:3", *base[5:]]) == 0
    lines = capsys.readouterr().out.splitlines()
    assert lines[0].startswith("2 points (2 computed, 0 reused)")
    assert lines[1].startswith("3 points (1 computed, 2 reused)")


def test_the_plots_are_pngs_of_the_grid(tmp_path):
    mpimg = require("matplotlib.image")
    colormaps = require("matplotlib").colormaps
    out = _sweep(tmp_path, "p", "--workers", "2", "--plot")
    for name, cmap in (("regular.png", "viridis"), ("curvature.png", "magma")):
        img = mpimg.imread(out / name)
        # (1.2 + 0.9 x 4 depths) x (1.2 + 0.5 x 2 strips) inches at 100 dpi (sweeps.plot)
        assert img.shape == (220, 480, 4)
        # the cells span the colour map: its two ends (the grid's least and greatest value)
        # are both painted, each over at least part of a cell
        for end in (0.0, 1.0):
            colour = np.array(colormaps[cmap](end)[:3])
            assert np.sum(np.all(np.abs(img[..., :3] - colour) < 0.02, axis=-1)) > 200, name


@pytest.mark.parametrize(
    ("args", "option"),
    [
        (["--strips", "7,8"], "--strips"),
        (["--strips", "8.5"], "--strips"),
        (["--depth", "0.13:0.2:3"], "--depth"),
        (["--depth", "0.13:0.16:x"], "--depth"),
        (["--tuck", "0.9,0.5"], "--tuck"),
        (["--tuck", "0.6"], "--tuck"),
        (["--scan-grid", "2", "31", "12"], "--scan-grid"),
        (["--workers", "0"], "--workers"),
        (["--scheduler", "no such place"], "--scheduler"),
        (["--scheduler", "local:0"], "--scheduler"),
        (["--retries", "11"], "--retries"),
        (["--out", "missing/folder"], "--out"),
        (["--table", "absent.csv"], "--table"),
    ],
)
def test_bad_input_exits_2_naming_the_option_before_any_work(
    tmp_path, capsys, monkeypatch, args, option
):
    monkeypatch.chdir(tmp_path)
    argv = ["sweep", *GRID_ARGS, "--out", "r", "--quiet"]
    assert main([*argv, *args]) == 2
    err = capsys.readouterr().err
    assert option in err and "Traceback" not in err
    assert not (tmp_path / "r").exists()  # nothing was started


def test_a_table_with_a_bad_row_is_refused_naming_the_row(tmp_path, capsys):
    table = tmp_path / "t.csv"
    table.write_text("strips,depth\n8,0.15\n9,0.5\n", encoding="utf-8")
    assert main(["sweep", "--table", str(table), "--out", str(tmp_path / "r")]) == 2
    err = capsys.readouterr().err
    assert "row 3" in err and "--depth" in err
    assert not (tmp_path / "r").exists()


def test_without_dask_a_cluster_run_is_refused_with_the_extra_to_install(
    tmp_path, capsys, monkeypatch
):
    monkeypatch.setitem(sys.modules, "distributed", None)  # as if dask were not installed
    assert main(["sweep", *GRID_ARGS, "--out", str(tmp_path / "r"), "--scheduler",
                 "local:2"]) == 2  # fmt: skip
    err = capsys.readouterr().err
    assert "--scheduler" in err and "sweep" in err
    assert not (tmp_path / "r").exists()


# --- tune ----------------------------------------------------------------------------------


def test_tune_keeps_the_regular_depth_of_least_curvature_and_reuses_its_points(tmp_path, capsys):
    # the windows are given (the reference ones), so only the depth is searched; the
    # frames and the table file: tests/test_tuned_controls.py
    out = tmp_path / "t"
    argv = ["tune", "--strips", "8", "--coarse", "3", "--rounds", "1", *GRID_ARGS,
            "--tuck", "0.586,0.97", "--out", str(out), "--workers", "2"]  # fmt: skip
    assert main(argv) == 0
    first = (out / "tuned.json").read_bytes()
    best = json.loads(first)["strips"]["8"]
    rows = [json.loads(p.read_text(encoding="utf-8")) for p in (out / "points").glob("*.json")]
    regular = [r for r in rows if r["figures"]["min_ratio"] >= MIN_RATIO]
    assert best["tuner"]["depth"] == min(regular, key=lambda r: r["figures"]["max_curvature"])[
        "point"]["depth"]  # fmt: skip
    assert best["tuner"]["depths_tried"] == len(rows)
    capsys.readouterr()
    assert main(argv) == 0  # again: every point is on disk
    assert "0 computed" in capsys.readouterr().out
    assert (out / "tuned.json").read_bytes() == first


def test_check_refuses_a_bad_scheduler_before_reading_the_animation(tmp_path, capsys):
    assert main(["check", str(tmp_path / "absent.npz"), "--scheduler", "no such place"]) == 2
    err = capsys.readouterr().err
    assert "--scheduler" in err and "absent.npz" not in err


def test_the_command_runs_on_a_running_scheduler_by_its_address(serial, tmp_path, dask_client):
    address = dask_client.scheduler.address  # tcp://127.0.0.1:PORT
    out = _sweep(tmp_path, "remote", "--scheduler", address)
    assert (out / "sweep.csv").read_bytes() == serial[0]


def test_tune_over_stage_windows_keeps_the_combination_of_least_curvature(tmp_path):
    out = tmp_path / "w"
    argv = ["tune", "--strips", "8", "--coarse", "3", "--rounds", "0", *GRID_ARGS, "--tuck",
            "0.586,0.97/0.6,0.95", "--out", str(out), "--workers", "1", "--quiet"]  # fmt: skip
    assert main(argv) == 0
    best = json.loads((out / "tuned.json").read_text(encoding="utf-8"))["strips"]["8"]
    rows = [json.loads(p.read_text(encoding="utf-8")) for p in (out / "points").glob("*.json")]
    assert {tuple(r["point"]["timing"]["tuck"]) for r in rows} == {(0.586, 0.97), (0.6, 0.95)}
    regular = [r for r in rows if r["figures"]["min_ratio"] >= MIN_RATIO]
    winner = min(regular, key=lambda r: r["figures"]["max_curvature"])
    assert (best["depth"], best["timing"]["tuck"]) == (
        winner["point"]["depth"], winner["point"]["timing"]["tuck"])  # fmt: skip
    assert best["quick_scan"]["max_curvature"] == winner["figures"]["max_curvature"]
    assert best["tuner"]["tuned_windows"] is None  # windows given: they are not tuned
