"""Checking animated meshes inside Blender: results against the core checker, refusals."""

from __future__ import annotations

import json
import os

import numpy as np
import pytest
from blender_support import (
    REPO,
    blank,  # noqa: F401  (fixture)
    bpy,
    counts,
    evaluated_positions,
    fcurves_of,
    needs_5_0_files,
)

pytestmark = pytest.mark.blender

BROKEN = os.path.join(REPO, "blend_samples", "broken_pinch.blend")


def _has_checker() -> bool:
    try:
        from turnabout.check import check_animation  # noqa: F401
    except ImportError:
        return False
    return True


needs_checker = pytest.mark.skipif(not _has_checker(), reason="the core checker is not available")


def _open(path, tmp_path=None):
    """Open a sample; with tmp_path, re-save it there so reports land in a scratch folder."""
    from turnabout_blender import headless

    bpy.ops.wm.open_mainfile(filepath=path, load_ui=False)
    headless.ensure_registered()
    if tmp_path is not None:
        bpy.ops.wm.save_as_mainfile(filepath=str(tmp_path / os.path.basename(path)))
    return bpy.context.active_object


# ----------------------------------------------------------------------------- with the checker


@needs_checker
@needs_5_0_files
def test_markers_sit_exactly_at_the_frames_the_core_checker_fails(tmp_path):
    from turnabout.check import Thresholds, check_animation
    from turnabout_blender.check_objects import MARKER_FAIL, MARKER_WORST

    ob = _open(BROKEN, tmp_path)
    scene = bpy.context.scene
    frames = range(scene.frame_start, scene.frame_end + 1)
    positions = evaluated_positions(ob, frames)
    me = ob.data
    me.calc_loop_triangles()
    tri = np.empty(len(me.loop_triangles) * 3, np.int32)
    me.loop_triangles.foreach_get("vertices", tri)
    core = check_animation(positions, tri.reshape(-1, 3), thresholds=Thresholds())
    want = sorted(scene.frame_start + int(i) for i in core.failing_frames())
    assert want, "the broken sample must fail somewhere"

    assert bpy.ops.turnabout.check() == {"FINISHED"}
    got = sorted(m.frame for m in scene.timeline_markers if m.name == MARKER_FAIL)
    assert got == want
    worst = [m.frame for m in scene.timeline_markers if m.name == MARKER_WORST]
    assert worst == [scene.frame_start + int(core.worst_frame)]

    # the metric curves carry the core's per-frame numbers
    table = core.metrics_table()
    checked = 0
    for name, values in table.items():
        values = np.asarray(values)
        if values.dtype.kind not in "fiub" or values.shape != (len(frames),):
            continue
        fc = fcurves_of(ob).find(f'["turnabout_{name}"]')
        got_vals = np.array([fc.evaluate(f) for f in frames])
        want_vals = np.nan_to_num(values.astype(np.float64), nan=0.0, posinf=1e30, neginf=-1e30)
        want_vals = np.clip(want_vals, -1e30, 1e30)  # what an F-curve can hold
        np.testing.assert_allclose(got_vals, want_vals.astype(np.float32), rtol=1e-6, atol=1e-6)
        checked += 1
    assert checked >= 1

    # per-frame list, heat attribute, report files beside the .blend
    rows = scene.turnabout.results
    assert [r.frame for r in rows] == list(frames)
    assert [r.verdict for r in rows] == [str(f.verdict) for f in core.frames]
    heat = ob.data.color_attributes["turnabout_heat"]
    assert len(heat.data) == len(ob.data.vertices)
    stem = os.path.join(
        str(tmp_path), "broken_pinch_" + ob.name.replace(" ", "_").replace("-", "-")
    )
    with open(stem + "_check.json", encoding="utf-8") as fh:
        report = json.load(fh)  # written by the core's own writer: the core's verdicts
    assert report["schema"] == "turnabout.check/1" and report["n_frames"] == len(frames)
    assert report["verdict"] == core.verdict
    assert report["failing_frames"] == core.failing_frames()
    assert [f["verdict"] for f in report["frames"]] == [f.verdict for f in core.frames]
    assert [f["triple_point_count"] for f in report["frames"]] == [
        f.triple_point_count for f in core.frames
    ]
    assert scene.frame_current == scene.frame_start  # the check puts the frame back


@needs_checker
@needs_5_0_files
def test_double_curves_become_a_curve_object_when_asked(tmp_path):
    ob = _open(BROKEN, tmp_path)
    s = bpy.context.scene.turnabout
    s.check_curve_object = True
    bpy.ops.turnabout.check(write_reports=False)
    assert bpy.data.objects.get(ob.name + " double curves") is not None
    bpy.ops.turnabout.check(write_reports=False)  # again: updated, not duplicated
    assert sum(o.name.startswith(ob.name + " double curves") for o in bpy.data.objects) == 1


# ----------------------------------------------------------------------------- refusals


def _refused(op_kwargs=None, match=""):
    before = counts()
    with pytest.raises(RuntimeError, match=match):
        bpy.ops.turnabout.check(**(op_kwargs or {}))
    assert counts() == before
    assert len(bpy.context.scene.turnabout.results) == 0


@pytest.mark.usefixtures("blank")
def test_a_camera_is_refused_as_not_a_mesh():
    cam = bpy.data.objects.new("Cam", bpy.data.cameras.new("Cam"))
    bpy.context.scene.collection.objects.link(cam)
    bpy.context.view_layer.objects.active = cam
    _refused({"write_reports": False}, match="not a mesh")


@pytest.mark.usefixtures("blank")
def test_an_empty_mesh_is_refused():
    ob = bpy.data.objects.new("Empty mesh", bpy.data.meshes.new("nothing"))
    bpy.context.scene.collection.objects.link(ob)
    bpy.context.view_layer.objects.active = ob
    _refused({"write_reports": False}, match="no faces")


@pytest.mark.usefixtures("blank")
def test_topology_changing_between_frames_is_refused():
    bpy.ops.mesh.primitive_uv_sphere_add(segments=16, ring_count=8)
    ob = bpy.context.active_object
    mod = ob.modifiers.new("grow", "BUILD")  # removes faces over time
    mod.frame_start, mod.frame_duration = -5, 30  # part-built at frame 1, growing after
    bpy.context.scene.frame_start, bpy.context.scene.frame_end = 1, 12
    bpy.context.scene.frame_set(6)
    _refused({"write_reports": False}, match="topology")


@pytest.mark.usefixtures("blank")
def test_an_empty_frame_range_is_refused():
    bpy.ops.mesh.primitive_uv_sphere_add(segments=16, ring_count=8)
    _refused({"use_range": True, "first": 20, "last": 10, "write_reports": False}, match="empty")


@pytest.mark.usefixtures("blank")
def test_an_unwritable_report_folder_is_refused_before_anything_changes(tmp_path):
    bpy.ops.mesh.primitive_uv_sphere_add(segments=16, ring_count=8)
    blocker = tmp_path / "a_file"
    blocker.write_text("not a folder")
    _refused({"report_dir": str(blocker / "reports")}, match="report folder")
    assert not (blocker.parent / "reports").exists()


@pytest.mark.usefixtures("blank")
def test_an_unsaved_file_needs_a_report_folder():
    bpy.ops.mesh.primitive_uv_sphere_add(segments=16, ring_count=8)
    _refused({}, match="not saved")


@pytest.mark.usefixtures("blank")
def test_closing_the_check_midway_restores_the_frame_and_changes_nothing():
    from turnabout_blender import check_objects

    bpy.ops.mesh.primitive_uv_sphere_add(segments=16, ring_count=8)
    scene = bpy.context.scene
    scene.frame_start, scene.frame_end = 1, 30
    scene.frame_set(7)
    before = counts()
    steps = check_objects.check_steps(bpy.context, bpy.context.active_object, 1, 30, None)
    for _ in range(5):
        next(steps)
    steps.close()  # what ESC does in the interface
    assert counts() == before and scene.frame_current == 7


# ----------------------------------------------------------------------------- times, notes


@needs_checker
@pytest.mark.usefixtures("blank")
def test_the_check_reports_the_bakes_frame_times(tmp_path):
    # a bake shows time (f - frame_start) / (frames - 1) at frame f; frames past the bake
    # have no time (null)
    from blender_support import small_mesh

    from turnabout.baking.plan import plan_bake
    from turnabout.eversion import Controls
    from turnabout_blender import bake

    plan = plan_bake(Controls(), 6, 3, 1, small_mesh(), "SHAPE_KEYS")
    ob = bake.bake_eversion(bpy.context.scene, plan)
    bpy.context.view_layer.objects.active = ob
    out = tmp_path / "reports"
    assert bpy.ops.turnabout.check(use_range=True, first=3, last=9, report_dir=str(out)) == {
        "FINISHED"
    }
    (path,) = out.glob("*_check.json")
    data = json.loads(path.read_text())
    times = [f["time"] for f in data["frames"]]
    assert times[:6] == pytest.approx([0.0, 0.2, 0.4, 0.6, 0.8, 1.0])
    assert times[6] is None
    # the level points' signed count is the Gauss-map degree, 1 in every frame of a sphere
    # eversion (H. Hopf, "Über die Curvatura integra geschlossener Hyperflächen", 1926)
    assert data["level_up"] == [0.0, 0.0, 1.0]
    assert [f["level_signed_count"] for f in data["frames"]] == [1] * 7


@needs_checker
@pytest.mark.usefixtures("blank")
def test_notes_are_shown_beside_the_verdict():
    # four spheres meeting in two points of four sheets (see test_check_intersections): a
    # note on every frame, no warning, so the verdict stays ok and the notes show
    import surfaces

    p, f = surfaces.round_sphere(24)
    a, b = 0.4, 0.9  # a generic turn of each sphere: no face meets another one edge-on
    rz = np.array([[np.cos(a), -np.sin(a), 0], [np.sin(a), np.cos(a), 0], [0, 0, 1]])
    rx = np.array([[1, 0, 0], [0, np.cos(b), -np.sin(b)], [0, np.sin(b), np.cos(b)]])
    p = p @ (rx @ rz).T
    quarter = np.array([[0.0, -1.0, 0.0], [1.0, 0.0, 0.0], [0.0, 0.0, 1.0]])
    parts = [p + np.array([0.8, 0.0, 0.6])]
    for _ in range(3):
        parts.append(parts[-1] @ quarter.T)
    me = bpy.data.meshes.new("four")
    me.from_pydata(np.vstack(parts).tolist(), [], np.vstack([f + k * len(p) for k in range(4)])
                   .tolist())  # fmt: skip
    ob = bpy.data.objects.new("four", me)
    bpy.context.scene.collection.objects.link(ob)
    bpy.context.view_layer.objects.active = ob
    scene = bpy.context.scene
    scene.frame_start, scene.frame_end = 1, 2
    assert bpy.ops.turnabout.check(write_reports=False) == {"FINISHED"}
    s = scene.turnabout
    assert s.last_verdict == "ok, 2 noted frames", [r.reasons for r in s.results]
    assert all(r.verdict == "ok" and "note: multiple points" in r.reasons for r in s.results)
