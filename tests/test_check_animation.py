"""check_animation on whole animations: verdicts, eversion test, reports."""

from __future__ import annotations

import csv
import json

import numpy as np
import pytest
from references import require

from turnabout.check import (
    AnimationReport,
    CheckInputError,
    ThresholdError,
    Thresholds,
    check_animation,
)
from turnabout.mesh import round_sphere_positions, uniform_sphere_mesh
from turnabout.progress import Cancelled


@pytest.fixture(scope="module")
def sphere():
    mesh = uniform_sphere_mesh(32, 16)
    return mesh, round_sphere_positions(mesh), mesh.triangles()


@pytest.fixture(scope="module")
def push_through(sphere):
    """The naive push-through: z scaled from 1 to -1 through 0."""
    _, p0, faces = sphere
    scale = np.linspace(1.0, -1.0, 21)
    positions = np.stack([p0 * np.array([1.0, 1.0, s]) for s in scale])
    return scale, positions, faces, check_animation(positions, faces)


def test_naive_push_through_fails_in_its_middle_frames_at_the_equator(push_through):
    # classical argument: pushing the caps through each other must pinch or crease the
    # equator (the normal along a meridian cannot turn its way around otherwise)
    scale, positions, _, rep = push_through
    failing = rep.failing_frames()
    assert failing, "the push-through must fail somewhere"
    assert 0 not in failing and len(scale) - 1 not in failing
    assert np.all(np.abs(scale[failing]) <= 0.25)  # only near the flat middle
    assert int(np.argmin(np.abs(scale))) in failing
    for k in failing:
        x, y, z = rep.frames[k].worst_position
        assert abs(z) < 0.05 and np.hypot(x, y) > 0.9  # at the equator


def test_push_through_fails_as_a_whole_though_its_last_frame_is_everted(push_through):
    _, _, _, rep = push_through
    assert rep.everted  # the mirrored sphere: on the sphere, orientation reversed
    assert rep.eversion.volume_ratio == pytest.approx(-1.0)
    assert rep.verdict == "fail"


def test_breathing_sphere_passes_every_frame_but_is_not_an_eversion(sphere):
    _, p0, faces = sphere
    scale = 1.0 + 0.15 * np.sin(np.linspace(0.0, 2 * np.pi, 24))
    positions = (p0[None] * scale[:, None, None]).astype(np.float32)
    rep = check_animation(positions, faces)
    assert rep.failing_frames() == []
    assert all(f.verdict != "fail" for f in rep.frames)
    assert not rep.everted and not rep.eversion.orientation_reversed
    assert all(f.degree == pytest.approx(1.0) for f in rep.frames)


def test_jump_to_the_everted_sphere_fails_the_jump_check(sphere):
    _, p0, faces = sphere
    positions = np.stack([p0] * 5 + [-p0] * 3)  # frame 5 jumps to the antipodal sphere
    rep = check_animation(positions, faces)
    assert rep.everted  # the end is right...
    assert rep.failing_frames() == [5]  # ...but the motion is not gradual
    fr = rep.frames[5]
    assert fr.worst_element["metric"] == "step" and fr.max_step > 4.0
    assert any(r.startswith("jump") for r in fr.reasons)
    assert rep.verdict == "fail"


def test_polygon_faces_and_float32_positions_are_accepted(sphere):
    mesh, p0, _ = sphere
    quads, tris = mesh.polygons()
    rep = check_animation(p0.astype(np.float32)[None], list(quads) + list(tris))
    assert rep.topology.n_faces == 2 * len(quads) + len(tris)
    assert rep.frames[0].degree == pytest.approx(1.0)


def test_inconsistently_oriented_faces_are_reoriented(sphere):
    _, p0, faces = sphere
    f = faces.copy()
    f[::5] = f[::5, ::-1]
    rep = check_animation(p0, f)
    assert any("reoriented" in r for r in rep.reasons)
    assert rep.frames[0].degree == pytest.approx(1.0)
    assert abs(rep.frames[0].signed_volume) == pytest.approx(4.0, rel=0.05)


def test_progress_is_called_per_frame_and_may_cancel(sphere):
    _, p0, faces = sphere
    positions = np.stack([p0 * (1 + 0.01 * k) for k in range(6)])
    calls = []
    check_animation(positions, faces, progress=lambda d, t: calls.append((d, t)))
    assert calls == [(k, 6) for k in range(1, 7)]

    def stop(done, total):
        if done == 2:
            raise Cancelled

    with pytest.raises(Cancelled):
        check_animation(positions, faces, progress=stop)


def test_vertex_heat_reaches_one_where_a_frame_fails(push_through):
    _, positions, _, rep = push_through
    k = rep.failing_frames()[0]
    heat = rep.vertex_heat(k)
    assert heat.shape == (positions.shape[1],) and heat.dtype == np.float64
    hot = heat >= 1.0
    assert hot.any()
    assert np.all(np.abs(positions[k][hot, 2]) < 0.1)  # only near the equator
    assert rep.vertex_heat(0).max() < 1.0


def test_bad_positions_are_refused_with_a_clear_message(sphere):
    _, p0, faces = sphere
    bad = np.stack([p0, p0])
    bad[1, 7, 2] = np.nan
    with pytest.raises(CheckInputError, match="NaN"):
        check_animation(bad, faces)
    with pytest.raises(CheckInputError, match="vertex index"):
        check_animation(p0, faces + 1)
    with pytest.raises(CheckInputError, match="shape"):
        check_animation(p0[:, :2], faces)


def test_thresholds_are_validated():
    with pytest.raises(ThresholdError, match="crease_warn_deg"):
        Thresholds(crease_warn_deg=70.0, crease_fail_deg=60.0)
    with pytest.raises(ThresholdError, match="step_fail"):
        Thresholds(step_fail=-1.0)


def test_tighter_thresholds_fail_more_frames(push_through):
    _, positions, faces, rep = push_through
    strict = check_animation(positions, faces, Thresholds(crease_fail_deg=35.0),
                             intersections=False)  # fmt: skip
    assert set(rep.failing_frames()) < set(strict.failing_frames())


def test_json_report_has_the_documented_fields(tmp_path, push_through):
    _, _, _, rep = push_through
    path = rep.write_json(tmp_path / "r.json")
    data = json.loads(path.read_text())
    assert data["schema"] == "turnabout.check/1"
    assert data["verdict"] == "fail" and data["everted"] is True
    assert data["failing_frames"] == rep.failing_frames()
    required = {
        "frame", "verdict", "reasons", "degree", "signed_volume", "triple_point_count",
        "double_curve_count", "singular_point_count", "max_crease_deg", "min_area_ratio",
        "max_step",
    }  # fmt: skip
    for fr in data["frames"]:
        assert required <= set(fr)
    table = rep.metrics_table()
    assert set(table) - {"verdict", "time"} <= set(data["frames"][0])
    assert np.array_equal(table["max_step"], [f["max_step"] for f in data["frames"]])


def test_csv_report_has_one_row_per_frame(tmp_path, push_through):
    _, positions, _, rep = push_through
    path = rep.write_csv(tmp_path / "r.csv")
    rows = list(csv.DictReader(path.open()))
    assert len(rows) == positions.shape[0]
    assert [r["verdict"] for r in rows] == [f.verdict for f in rep.frames]
    assert float(rows[3]["max_crease_deg"]) == pytest.approx(rep.frames[3].max_crease_deg)


def test_plot_is_a_png_with_the_failing_frames_shaded(tmp_path, push_through):
    mpimg = require("matplotlib.image")
    _, _, _, rep = push_through
    img = mpimg.imread(rep.write_plot(tmp_path / "r.png"))
    assert img.shape == (1232, 880, 4)  # 8 x 11.2 inches at 110 dpi (report.write_plot)
    # failing frames are shaded tab:red (214, 39, 40) at alpha 0.25 over white, from the
    # top panel to the bottom one
    tint = 0.75 + 0.25 * np.array([214, 39, 40]) / 255
    hit = np.all(np.abs(img[..., :3] - tint) < 0.02, axis=-1)
    assert rep.failing_frames() and np.sum(hit.sum(axis=0) >= 300) > 5


def test_report_type_and_worst_frame(push_through):
    scale, _, _, rep = push_through
    assert isinstance(rep, AnimationReport)
    assert rep.worst_frame in rep.failing_frames()
    assert abs(scale[rep.worst_frame]) <= 0.1


def test_forked_workers_give_the_same_report(push_through):
    _, positions, faces, rep = push_through
    par = check_animation(positions, faces, workers=2)
    assert par.failing_frames() == rep.failing_frames()
    assert [f.reasons for f in par.frames] == [f.reasons for f in rep.frames]
    assert np.allclose(par.metrics_table()["max_step"], rep.metrics_table()["max_step"])


def test_mirrored_larger_sphere_is_reversed_but_not_the_same_size(sphere):
    # x -> -1.02 x reverses the orientation (a point reflection in 3D has determinant -1)
    # and multiplies volumes by 1.02^3 = 1.061: the orientation is right, the size is not,
    # and the report says which
    _, p0, faces = sphere
    rep = check_animation(np.stack([p0, -1.02 * p0]), faces, intersections=False)
    ev = rep.eversion
    assert ev.volume_ratio == pytest.approx(-(1.02**3))
    assert ev.orientation_reversed and not ev.same_volume and not ev.everted
    assert "orientation is not reversed" not in ev.reason
    assert "enclosed volume changed" in ev.reason and "orientation is reversed" in ev.reason
    same = check_animation(np.stack([p0, 1.0 * p0]), faces, intersections=False).eversion
    assert not same.orientation_reversed and same.same_volume
    assert "orientation is not reversed" in same.reason
    assert "volume changed" not in same.reason
    assert rep.to_dict()["eversion"]["same_volume"] is False


def test_times_are_reported_per_frame_and_unknown_ones_as_null(sphere):
    _, p0, faces = sphere
    positions = np.stack([p0 * (1 + 0.01 * k) for k in range(4)])
    times = np.array([0.0, 0.25, np.nan, 0.75])
    rep = check_animation(positions, faces, times=times, intersections=False)
    assert [f["time"] for f in rep.to_dict()["frames"]] == [0.0, 0.25, None, 0.75]
    with pytest.raises(CheckInputError, match="times"):
        check_animation(positions, faces, times=[0.0, 1.0])
    with pytest.raises(CheckInputError, match="times"):
        check_animation(positions, faces, times=[0.0, 0.1, np.inf, 0.3])


def test_summary_counts_frames_and_causes_per_level_and_names_the_orientation(push_through):
    scale, _, _, rep = push_through
    lines = rep.summary_lines()
    failing = rep.failing_frames()
    (fail_line,) = [x for x in lines if "failing frames:" in x]
    assert f"failing frames: {len(failing)} of {len(scale)} (" in fail_line
    for cause, n in rep.causes("fail").items():
        assert f"{cause} {n}" in fail_line
        fails = [rep.frames[k].reasons[: rep.frames[k].fail_count] for k in failing]
        assert n == sum(any(r.startswith(cause + ":") for r in rs) for rs in fails)
    # the naive push-through mirrors the sphere: outward first, inward last
    (orient,) = [x for x in lines if "orientation:" in x]
    assert "first frame outward" in orient and "last frame inward" in orient
    assert orient.endswith("reversed") and "not reversed" not in orient
