"""The eversion's mesh: bend-adaptive spacing, and the default build under the frame checker."""

from __future__ import annotations

import json
import math
from pathlib import Path

import numpy as np
import pytest
from references import require

from turnabout.cli import main
from turnabout.eversion import DEFAULT_FRAMES, ControlError, Controls, mesh_for
from turnabout.eversion import spacing as S
from turnabout.eversion.regularity import quick_report


def _gaps(mesh):
    n = mesh.n_lon
    th = np.concatenate([mesh.theta, [mesh.theta[0] + 2 * np.pi]])  # the wrap-around gap
    la = np.concatenate([[-np.pi / 2], mesh.lat, [np.pi / 2]])
    return np.diff(th)[:n], np.diff(la)


@pytest.mark.parametrize("strips", [8, 12])
def test_bend_mesh_repeats_one_strip_exactly_and_grades_gently(strips):
    ctl = Controls(strips=strips)
    m = mesh_for(ctl)
    per = m.n_lon // strips
    assert m.n_lon % strips == 0
    one = m.theta[:per]
    for k in range(strips):
        assert np.array_equal(m.theta[k * per : (k + 1) * per], one + k * (2 * np.pi / strips))
    dth, dla = _gaps(m)
    assert np.all(dth > 0) and np.all(dla > 0)
    # neighbouring edges differ by at most the grading (plus interpolation slack)
    for d in (np.append(dth, dth[0]), dla):
        ratio = np.maximum(d[1:] / d[:-1], d[:-1] / d[1:])
        assert ratio.max() < 1 + S.GRADING + 0.03


@pytest.mark.parametrize("strips", [8, 12])
def test_every_default_edge_meets_the_crease_aim_from_the_bend_profile(strips):
    # rate x edge length is the angle between the normals at its ends (first order)
    ctl = Controls(strips=strips)
    rep = quick_report(ctl)
    m = mesh_for(ctl)
    aim = math.radians(S.CREASE_AIM_DEG)
    per = m.n_lon // strips
    th = np.append(m.theta[:per], m.theta[0] + 2 * np.pi / strips)
    mid = 0.5 * (th[1:] + th[:-1])
    period = 2 * np.pi / strips
    rate_t = np.interp(mid, rep.theta, rep.bend_theta, period=period)
    assert (rate_t * np.diff(th)).max() <= 1.02 * aim
    la = np.concatenate([[-np.pi / 2], m.lat, [np.pi / 2]])
    rate_l = np.interp(0.5 * (la[1:] + la[:-1]), rep.lat, rep.bend_lat)
    assert (rate_l * np.diff(la)).max() <= 1.02 * aim
    # and it is adaptive: the finest edge is several times shorter than the coarsest
    assert np.diff(th).max() / np.diff(th).min() > 2.0
    assert np.diff(la).max() / np.diff(la).min() > 2.0


def test_asked_for_counts_and_even_spacing():
    ctl = Controls()
    m = mesh_for(ctl, n_lon=8 * 40, n_lat=80)
    assert (m.n_lon, m.n_lat) == (320, 80)
    even = mesh_for(ctl, spacing="even")
    assert (even.n_lon, even.n_lat) == (S.EVEN_PER_STRIP * 8, S.EVEN_RINGS)
    assert np.allclose(np.diff(even.theta), 2 * np.pi / even.n_lon)
    with pytest.raises(ControlError, match="spacing"):
        mesh_for(ctl, spacing="dense")
    with pytest.raises(ControlError, match="multiple of strips"):
        mesh_for(ctl, n_lon=321)


def test_default_build_passes_the_frame_check_at_default_resolution(tmp_path, capsys):
    # The acceptance criteria of the default build, through the CLI as a pipeline runs it:
    # closed oriented sphere mesh in every frame, no face below 0.1 % of its first area,
    # neighbouring faces under 30 degrees, no vertex moving more than one local edge length
    # per frame, the last frame the unit sphere with the first frame's volume negated.
    out = tmp_path / "ev.npz"
    assert main(["build", "--out", str(out), "--quiet"]) == 0
    with np.load(out, allow_pickle=False) as z:
        assert z["positions"].shape[0] == DEFAULT_FRAMES
    report = tmp_path / "report.json"
    args = ["check", str(out), "--no-intersections", "--quiet", "--json", str(report)]
    args += ["--area-warn", "0.01", "--area-fail", "0.001"]
    args += ["--crease-warn", "25", "--crease-fail", "30"]
    args += ["--jump-warn", "0.9", "--jump-fail", "1.0"]
    assert main(args) == 0
    rep = json.loads(report.read_text())
    assert rep["verdict"] != "fail" and rep["everted"]
    frames = rep["frames"]
    assert len(frames) == DEFAULT_FRAMES
    assert max(f["max_crease_deg"] for f in frames) < 30.0
    assert max(f["max_step"] for f in frames) <= 1.0
    assert min(f["min_area_ratio"] for f in frames) > 0.001
    # Hopf: the Gauss map of an immersed closed oriented surface has degree chi / 2 = 1
    # (H. Hopf, "Uber die Curvatura integra geschlossener Hyperflachen", 1926)
    assert all(abs(f["degree"] - 1.0) < 0.01 for f in frames)
    assert rep["eversion"]["volume_ratio"] == pytest.approx(-1.0, abs=1e-6)
    assert rep["eversion"]["last_deviation"] < 1e-6
    assert rep["eversion"]["orientation_reversed"] and rep["eversion"]["same_volume"]
    # frame times come from the build: frame k of n at time k / (n - 1)
    assert [f["time"] for f in frames] == pytest.approx(np.linspace(0, 1, DEFAULT_FRAMES))

    # Default thresholds: the smooth, resolved bends of mid-motion (about 25 degrees on the
    # coarse side of the grid, the same on the next rows) are no crease. The one warning
    # left is the stretching of the corrugations' flanks (faces at 7-10 % of their first
    # area): a real property of the motion, which a texture shows.
    report = tmp_path / "default.json"
    capsys.readouterr()
    assert main(["check", str(out), "--no-intersections", "--json", str(report)]) == 0
    printed = capsys.readouterr().out
    rep = json.loads(report.read_text())
    assert rep["failing_frames"] == []
    causes = {r.split(":")[0] for f in rep["frames"] for r in f["reasons"]}
    assert causes <= {"pinch (area)"}, causes
    warned = rep["warning_frames"]
    assert 0 < len(warned) < DEFAULT_FRAMES // 4
    assert all(0.05 < rep["frames"][k]["min_area_ratio"] < 0.1 for k in warned)
    assert rep["verdict"] == "warn"
    assert f"warning frames: {len(warned)} of {DEFAULT_FRAMES} (pinch (area) {len(warned)})" in (
        printed
    )
    assert "orientation: first frame outward" in printed and "inward" in printed


def test_more_strips_get_enough_frames_for_gradual_motion():
    # 12 strips: a finer default mesh, with its own tuned depth, windows and frames (the
    # table core/turnabout/eversion/tuned_controls.json); the same criteria hold, and the
    # checker's largest step is the one the tuner recorded
    from turnabout.check import Thresholds, check_animation
    from turnabout.eversion import build, default_frames, default_timing

    ctl = Controls(strips=12)
    assert ctl.timing == default_timing(12)
    ev = build(ctl)
    assert ev.positions.shape[0] == default_frames(12)
    th = Thresholds(area_ratio_warn=0.01, area_ratio_fail=0.001, crease_warn_deg=25.0,
                    crease_fail_deg=30.0, step_warn=0.9, step_fail=1.0)  # fmt: skip
    rep = check_animation(ev.positions, ev.faces, th, intersections=False)
    assert rep.everted and not rep.failing_frames()
    assert max(f.max_step for f in rep.frames) <= 1.0
    assert max(f.max_crease_deg for f in rep.frames) < 30.0
    table = Path(__file__).resolve().parents[1] / "core/turnabout/eversion/tuned_controls.json"
    recorded = json.loads(table.read_text(encoding="utf-8"))["strips"]["12"]["largest_step"]
    assert max(f.max_step for f in rep.frames) == pytest.approx(recorded, abs=1e-9)


def test_mid_motion_frames_keep_banchoff_parity_with_their_axis_points():
    # Points on the symmetry axis lie on all n rotated copies of a sheet: n-fold points.
    # Counted as C(n, 3) triple points each, every frame has a count congruent to
    # chi = 2 mod 2 (T. Banchoff, "Triple points and surgery of immersed surfaces", 1974).
    from turnabout.check import check_animation
    from turnabout.eversion import evaluate

    # These points (and triple points the sampling puts on mesh edges) are facts of the
    # symmetric surface, not faults of the motion: notes, which leave the verdict alone.
    ctl = Controls()
    mesh = mesh_for(ctl)
    times = np.array([250, 296, 330]) / (DEFAULT_FRAMES - 1)
    rep = check_animation(evaluate(ctl, times, mesh), mesh.triangles(), times=times)
    cKDTree = require("scipy.spatial").cKDTree
    n = ctl.strips
    turn = 2 * np.pi / n  # docs/eversion.md section 6: every frame has the dihedral symmetry
    a = np.pi / (2 * n)  # of order 2n, the turn by 2 pi / n and the half-turn about the
    rz = np.array([[np.cos(turn), -np.sin(turn), 0], [np.sin(turn), np.cos(turn), 0], [0, 0, 1]])
    u = np.array([np.cos(a), np.sin(a), 0.0])  # horizontal axis at angle pi / (2n)
    half = 2 * np.outer(u, u) - np.eye(3)
    for fr in rep.frames:
        # so the triple points found are a union of orbits: mapped by either symmetry, each
        # lands on another triple point found (an independent check of the detection, not a
        # count taken from today's output)
        pts = np.asarray(fr.triple_points)
        assert len(pts) >= 2 * n
        tree = cKDTree(pts)
        for g in (rz, half):
            dist, _ = tree.query(pts @ g.T)
            assert dist.max() < 1e-6, dist.max()
        assert not any("Banchoff" in r for r in fr.reasons), fr.reasons
        # (the sampled frames are far apart: their jumps are not the motion's)
        causes = {r.split(":")[0] for r in fr.reasons} - {"jump"}
        assert causes <= {"pinch (area)"}, fr.reasons
    assert any("more than three sheets meet (up to 8)" in n for fr in rep.frames for n in fr.notes)
    assert rep.noted_frames() == [k for k, fr in enumerate(rep.frames) if fr.notes]
    assert rep.to_dict()["noted_frames"] == rep.noted_frames() and 1 in rep.noted_frames()


def test_default_build_mid_motion_frame_is_ok_with_notes_on_the_command_line(tmp_path, capsys):
    # frame 296 of the default build, alone, through the command with intersections on
    from turnabout.eversion import evaluate
    from turnabout.meshfiles.npz import write_npz

    ctl = Controls()
    mesh = mesh_for(ctl)
    t = np.array([296 / (DEFAULT_FRAMES - 1)])
    path = write_npz(tmp_path / "mid.npz", evaluate(ctl, t, mesh), mesh.triangles())
    assert main(["check", str(path), "--json", str(tmp_path / "mid.json")]) == 0
    printed = capsys.readouterr().out
    assert "noted frames: 1 of 1 (multiple points 1" in printed
    assert printed.rstrip().splitlines()[-1].startswith("verdict: ok")
    rep = json.loads((tmp_path / "mid.json").read_text())
    assert rep["verdict"] == "ok" and rep["noted_frames"] == [0]
    assert rep["frames"][0]["reasons"] == [] and rep["frames"][0]["notes"]
