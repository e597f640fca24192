"""Operators driven as a user drives them: load settings, clear a check, point caches in an
unsaved file, and the interactive check (its modal steps fed timer and Esc events, the
object deleted or renamed while it runs)."""

from __future__ import annotations

import json
import os
import threading
import types

import numpy as np
import pytest
from blender_support import (
    blank,  # noqa: F401  (fixture used by name)
    bpy,
    counts,
    evaluated_positions,
    orphans,
    set_small_build,
)

from turnabout.eversion import STAGE_NAMES, Controls, build, default_depth, mesh_for

pytestmark = pytest.mark.blender

PANEL_NAMES = ("strips", "auto_depth", "depth", "frames", "frame_start", "key_step",
               "bake_mode", "mesh_lon", "mesh_lat", "mesh_spacing") + tuple(
    f"{stage}_{end}" for stage in STAGE_NAMES for end in ("start", "end")
)  # fmt: skip


def _panel(s) -> dict:
    return {name: getattr(s, name) for name in PANEL_NAMES}


def _bake_from_panel(**settings):
    s = bpy.context.scene.turnabout
    set_small_build(s, frames=6)
    for name, value in settings.items():
        setattr(s, name, value)
    assert bpy.ops.turnabout.add_eversion() == {"FINISHED"}
    return bpy.context.active_object


def _positions(ob) -> np.ndarray:
    scene = bpy.context.scene
    return evaluated_positions(ob, range(scene.frame_start, scene.frame_end + 1))


# ----------------------------------------------------------------------------- load settings


@pytest.mark.usefixtures("blank")
def test_loading_an_eversions_settings_then_rebuilding_gives_the_same_eversion():
    timing = Controls().timing
    a, b = timing["ripple"]
    built = {"strips": 10, "auto_depth": False, "depth": 0.17, "frames": 7, "frame_start": 4,
             "key_step": 2, "mesh_lon": 80, "mesh_lat": 16, "mesh_spacing": "EVEN",
             "ripple_start": a + 0.01}  # fmt: skip
    ob = _bake_from_panel(**built)
    record, shapes = ob["turnabout"], _positions(ob)
    s = bpy.context.scene.turnabout
    wanted = _panel(s)

    # the panel moves on: other strips, the documented depth, other frames and mesh
    for name, value in {"strips": 8, "auto_depth": True, "frames": 12, "frame_start": 1,
                        "key_step": 1, "mesh_lon": 64, "mesh_lat": 20, "mesh_spacing": "BEND",
                        "ripple_start": a}.items():  # fmt: skip
        setattr(s, name, value)
    assert bpy.ops.turnabout.load_settings() == {"FINISHED"}
    assert _panel(s) == pytest.approx(wanted)

    assert bpy.ops.turnabout.rebuild() == {"FINISHED"}
    assert json.loads(ob["turnabout"]) == json.loads(record)
    np.testing.assert_array_equal(_positions(ob), shapes)


@pytest.mark.usefixtures("blank")
def test_a_record_without_spacing_loads_and_leaves_the_panels_spacing():
    ob = _bake_from_panel(mesh_spacing="EVEN")
    record = json.loads(ob["turnabout"])
    assert record["spacing"] == "even"
    del record["spacing"]  # as baked before the spacing was recorded
    ob["turnabout"] = json.dumps(record)
    s = bpy.context.scene.turnabout
    s.mesh_spacing = "BEND"
    assert bpy.ops.turnabout.load_settings() == {"FINISHED"}
    assert s.mesh_spacing == "BEND" and s.mesh_lon == 64


@pytest.mark.usefixtures("blank")
def test_loading_the_documented_depth_keeps_it_following_the_strips():
    ob = _bake_from_panel(auto_depth=True)
    s = bpy.context.scene.turnabout
    s.auto_depth, s.depth = False, 0.2
    assert bpy.ops.turnabout.load_settings() == {"FINISHED"}
    assert s.auto_depth and s.depth == pytest.approx(default_depth(s.strips))
    assert json.loads(ob["turnabout"])["controls"]["depth"] == pytest.approx(default_depth(8))


def test_load_settings_and_clear_check_are_undoable_steps():
    from turnabout_blender.bake import TURNABOUT_OT_load_settings
    from turnabout_blender.clear_check import TURNABOUT_OT_clear_check

    for op in (TURNABOUT_OT_load_settings, TURNABOUT_OT_clear_check):
        assert {"REGISTER", "UNDO"} <= op.bl_options, op.bl_idname


@pytest.mark.usefixtures("blank")
def test_undo_puts_the_panel_back_after_loading_settings():
    _bake_from_panel(strips=9, mesh_lon=72)
    s = bpy.context.scene.turnabout
    s.strips, s.mesh_lon = 12, 96
    bpy.ops.ed.undo_push(message="panel changed")
    assert bpy.ops.turnabout.load_settings() == {"FINISHED"}
    assert (s.strips, s.mesh_lon) == (9, 72)
    bpy.ops.ed.undo_push(message="settings loaded")
    bpy.ops.ed.undo()
    s = bpy.context.scene.turnabout  # references from before the undo are stale
    assert (s.strips, s.mesh_lon) == (12, 96)


@pytest.mark.parametrize("selection", ["nothing", "a plain mesh"])
@pytest.mark.usefixtures("blank")
def test_loading_settings_without_an_eversion_selected_says_so_and_changes_nothing(selection):
    _bake_from_panel()
    if selection == "nothing":
        bpy.context.view_layer.objects.active = None
    else:
        bpy.ops.mesh.primitive_uv_sphere_add(segments=16, ring_count=8)
    s = bpy.context.scene.turnabout
    s.strips = 12
    before, panel = counts(), _panel(s)
    with pytest.raises(RuntimeError, match="select a Turnabout eversion"):
        bpy.ops.turnabout.load_settings()
    assert counts() == before and _panel(s) == panel


@pytest.mark.parametrize(
    "record",
    [
        "not json",
        json.dumps({"controls": {"strips": 10}}),
        json.dumps([1, 2]),
        "{}",
        json.dumps({"controls": {"strips": 3, "depth": 0.16, "timing": {}}}),
    ],  # fmt: skip
)
@pytest.mark.usefixtures("blank")
def test_a_damaged_build_record_is_refused_without_touching_the_panel(record):
    ob = _bake_from_panel()
    ob["turnabout"] = record  # as a user editing the custom property could leave it
    s = bpy.context.scene.turnabout
    s.strips, s.frames = 12, 30
    panel = _panel(s)
    with pytest.raises(RuntimeError, match="'turnabout': not a Turnabout build record") as err:
        bpy.ops.turnabout.load_settings()
    assert "Traceback" not in str(err.value)
    assert _panel(s) == panel


# ----------------------------------------------------------------------------- clear check


def _checked_sphere(curve_object=True):
    """A sphere checked over frames 1-6 with every result shown; returns the object."""
    bpy.ops.mesh.primitive_uv_sphere_add(segments=16, ring_count=8)
    ob = bpy.context.active_object
    scene = bpy.context.scene
    scene.frame_start, scene.frame_end = 1, 6
    scene.turnabout.check_curve_object = curve_object
    scene.timeline_markers.new("the user's own", frame=3)
    assert bpy.ops.turnabout.check(write_reports=False) == {"FINISHED"}
    return ob


def _metric_paths(ob) -> list[str]:
    from turnabout_blender.check_objects import METRIC_PREFIX

    ad = ob.animation_data
    if ad is None or ad.action is None:
        return []
    paths = []
    if not hasattr(ad.action, "layers"):  # Blender 4.2/4.3: flat actions
        paths = [fc.data_path for fc in ad.action.fcurves]
    for layer in getattr(ad.action, "layers", ()):
        for strip in layer.strips:
            for bag in strip.channelbags:
                paths += [fc.data_path for fc in bag.fcurves]
    return [p for p in paths if p.startswith(f'["{METRIC_PREFIX}')]


@pytest.mark.usefixtures("blank")
def test_clearing_a_check_removes_everything_it_showed_and_keeps_the_users_markers():
    from turnabout_blender.check_objects import CURVE_SUFFIX, HEAT_ATTRIBUTE, METRIC_PREFIX

    ob = _checked_sphere()
    scene = bpy.context.scene
    assert len(scene.turnabout.results) == 6 and scene.turnabout.last_verdict
    assert [k for k in ob.keys() if k.startswith(METRIC_PREFIX)] and _metric_paths(ob)
    assert HEAT_ATTRIBUTE in ob.data.color_attributes
    assert bpy.data.objects.get(ob.name + CURVE_SUFFIX) is not None

    assert bpy.ops.turnabout.clear_check() == {"FINISHED"}
    assert [(m.name, m.frame) for m in scene.timeline_markers] == [("the user's own", 3)]
    assert len(scene.turnabout.results) == 0 and scene.turnabout.last_verdict == ""
    assert [k for k in ob.keys() if k.startswith(METRIC_PREFIX)] == []
    assert _metric_paths(ob) == []  # no curves left animating properties that are gone
    assert HEAT_ATTRIBUTE not in ob.data.color_attributes
    assert bpy.data.objects.get(ob.name + CURVE_SUFFIX) is None
    assert orphans() == []


@pytest.mark.usefixtures("blank")
def test_clearing_a_check_does_not_depend_on_what_is_selected():
    from turnabout_blender.check_objects import HEAT_ATTRIBUTE, METRIC_PREFIX

    ob = _checked_sphere(curve_object=False)
    bpy.ops.mesh.primitive_cube_add()  # the user selects something else
    bpy.context.view_layer.objects.active = None
    assert bpy.ops.turnabout.clear_check() == {"FINISHED"}
    assert [k for k in ob.keys() if k.startswith(METRIC_PREFIX)] == []
    assert HEAT_ATTRIBUTE not in ob.data.color_attributes
    assert len(bpy.context.scene.turnabout.results) == 0


@pytest.mark.usefixtures("blank")
def test_clearing_a_check_keeps_the_other_turnabout_records_on_the_checked_object():
    # a curve wall carries its build record under a name that starts like the metrics
    c = bpy.context.scene.turnabout_curves
    c.frames, c.samples, c.show_marks = 4, 32, False
    bpy.ops.curve.primitive_bezier_circle_add(radius=1.0)
    bpy.ops.curve.primitive_bezier_circle_add(radius=0.6, location=(0.2, 0.1, 0.0))
    bpy.data.objects[0].select_set(True)
    assert bpy.ops.turnabout.curve_homotopy() == {"FINISHED"}
    wall = bpy.context.active_object
    record = wall["turnabout_curves"]
    scene = bpy.context.scene
    scene.frame_start, scene.frame_end = 1, 4
    assert bpy.ops.turnabout.check(write_reports=False) == {"FINISHED"}
    assert bpy.ops.turnabout.clear_check() == {"FINISHED"}
    assert wall["turnabout_curves"] == record
    assert [k for k in wall.keys() if k != "turnabout_curves" and k.startswith("turnabout_")] == []


@pytest.mark.usefixtures("blank")
def test_clearing_when_nothing_was_checked_is_cancelled_and_changes_nothing():
    bpy.ops.mesh.primitive_uv_sphere_add(segments=16, ring_count=8)
    bpy.context.scene.timeline_markers.new("the user's own", frame=2)
    before = counts()
    assert bpy.ops.turnabout.clear_check() == {"CANCELLED"}
    assert counts() == before


@pytest.mark.usefixtures("blank")
def test_undo_brings_back_a_cleared_check():
    ob = _checked_sphere(curve_object=False)
    verdict, name = bpy.context.scene.turnabout.last_verdict, ob.name
    bpy.ops.ed.undo_push(message="checked")
    assert bpy.ops.turnabout.clear_check() == {"FINISHED"}
    bpy.ops.ed.undo_push(message="cleared")
    bpy.ops.ed.undo()
    scene = bpy.context.scene
    assert scene.turnabout.last_verdict == verdict and len(scene.turnabout.results) == 6
    assert "turnabout_heat" in bpy.data.objects[name].data.color_attributes


# ----------------------------------------------------------------------------- point caches


@pytest.mark.usefixtures("blank")
def test_a_point_cache_beside_an_unsaved_file_is_refused_before_anything_is_made(
    tmp_path, monkeypatch
):
    monkeypatch.chdir(tmp_path)  # where a '//' folder would wrongly land
    s = bpy.context.scene.turnabout
    set_small_build(s, frames=5)
    s.bake_mode = "POINT_CACHE"
    assert bpy.data.filepath == "" and s.cache_dir.startswith("//")
    before = counts()
    with pytest.raises(RuntimeError, match="cache folder: .*save") as err:
        bpy.ops.turnabout.add_eversion()
    assert "Traceback" not in str(err.value)
    assert counts() == before and orphans() == []
    assert list(tmp_path.iterdir()) == []

    # re-building a shape-key eversion as a point cache is refused the same way, in place
    s.bake_mode = "SHAPE_KEYS"
    assert bpy.ops.turnabout.add_eversion() == {"FINISHED"}
    ob = bpy.context.active_object
    shapes, before = _positions(ob), counts()
    s.bake_mode = "POINT_CACHE"
    with pytest.raises(RuntimeError, match="cache folder: .*save"):
        bpy.ops.turnabout.rebuild()
    assert counts() == before and list(ob.modifiers) == []
    np.testing.assert_array_equal(_positions(ob), shapes)
    assert list(tmp_path.iterdir()) == []


@pytest.mark.usefixtures("blank")
def test_a_point_cache_in_a_chosen_folder_works_unsaved_and_turns_relative_on_save(tmp_path):
    s = bpy.context.scene.turnabout
    set_small_build(s, frames=5)
    s.bake_mode = "POINT_CACHE"
    s.cache_dir = str(tmp_path / "caches")
    assert bpy.ops.turnabout.add_eversion() == {"FINISHED"}
    ob = bpy.context.active_object
    pc2 = tmp_path / "caches" / "Eversion.pc2"
    mod = ob.modifiers["Turnabout cache"]
    assert os.path.isabs(mod.filepath) and os.path.samefile(mod.filepath, pc2)
    mesh = mesh_for(Controls(), n_lon=64, n_lat=16)  # the panel's mesh (set_small_build)
    core = build(Controls(), frames=5, mesh=mesh)
    np.testing.assert_allclose(_positions(ob), core.positions, atol=1e-5)

    (tmp_path / "project").mkdir()
    blend = tmp_path / "project" / "shot.blend"
    bpy.ops.wm.save_as_mainfile(filepath=str(blend))
    mod = bpy.data.objects["Eversion"].modifiers["Turnabout cache"]
    assert mod.filepath == "//../caches/Eversion.pc2"  # the file can move with its caches
    bpy.ops.wm.open_mainfile(filepath=str(blend), load_ui=False)
    ob = bpy.data.objects["Eversion"]
    np.testing.assert_allclose(_positions(ob), core.positions, atol=1e-5)


# ----------------------------------------------------------------------------- cancelling


class _Recorder:
    """Passes calls through to a Blender object and notes their names."""

    def __init__(self, real, names):
        self._real, self._names, self.log = real, names, []

    def __getattr__(self, name):
        attr = getattr(self._real, name)
        if name not in self._names:
            return attr

        def call(*args, **kwargs):
            self.log.append((name, args))
            return None if name == "modal_handler_add" else attr(*args, **kwargs)

        return call


def _interactive_check():
    """The check operator's own methods on a plain object, with the window manager and the
    workspace noting their calls (Blender makes operator instances only when it runs one,
    and never runs the modal part in background mode)."""
    from turnabout_blender.check_objects import TURNABOUT_OT_check

    wm = _Recorder(
        bpy.context.window_manager,
        ("progress_begin", "progress_update", "progress_end", "event_timer_add",
         "event_timer_remove", "modal_handler_add"),
    )  # fmt: skip
    ws = _Recorder(bpy.context.workspace, ("status_text_set",))

    class Context:
        window_manager, workspace = wm, ws

        def __getattr__(self, name):
            return getattr(bpy.context, name)

    op = types.SimpleNamespace(
        first=0, last=0, use_range=False, report_dir="", write_reports=False, reports=[]
    )
    op.report = lambda kind, text: op.reports.append((set(kind), text))
    for name in ("_prepare", "_finish", "_stop", "_begin_modal", "modal"):
        method = TURNABOUT_OT_check.__dict__[name]
        setattr(op, name, method.__get__(op))
    return op, Context(), wm, ws


TIMER, ESC, MOUSE = (types.SimpleNamespace(type=t) for t in ("TIMER", "ESC", "MOUSEMOVE"))


def _snapshot(ob):
    scene = bpy.context.scene
    s = scene.turnabout
    return {
        "counts": counts(),
        "markers": sorted((m.name, m.frame) for m in scene.timeline_markers),
        "rows": [(r.frame, r.verdict, r.reasons) for r in s.results],
        "verdict": s.last_verdict,
        "metrics": {k: ob[k] for k in ob.keys() if k.startswith("turnabout_")},
        "curves": _metric_paths(ob),
        "heat": "turnabout_heat" in ob.data.color_attributes,
    }


@pytest.mark.usefixtures("blank")
def test_esc_during_the_check_cancels_it_and_leaves_the_previous_results_alone():
    bpy.ops.mesh.primitive_uv_sphere_add(segments=48, ring_count=24)
    ob = bpy.context.active_object
    scene = bpy.context.scene
    scene.frame_start, scene.frame_end = 1, 4
    scene.turnabout.check_curve_object = True
    assert bpy.ops.turnabout.check(write_reports=False) == {"FINISHED"}
    scene.frame_end = 80  # a longer second check, cancelled while the checker runs
    scene.frame_set(9)
    before = _snapshot(ob)
    threads = threading.active_count()

    op, context, wm, workspace = _interactive_check()
    assert op._begin_modal(context) == {"RUNNING_MODAL"}
    assert op.modal(context, MOUSE) == {"PASS_THROUGH"}
    stages = []
    while not stages or not stages[-1].startswith("Turnabout: checking"):
        assert op.modal(context, TIMER) == {"RUNNING_MODAL"}
        stages.append(workspace.log[-1][1][0])
    assert op.modal(context, ESC) == {"CANCELLED"}

    assert op.reports == [({"WARNING"}, "check cancelled")]
    assert _snapshot(ob) == before and scene.frame_current == 9
    assert threading.active_count() == threads  # the checker thread is gone
    calls = [name for name, _ in wm.log]
    assert calls.count("progress_begin") == calls.count("progress_end") == 1
    assert calls.index("progress_end") > calls.index("progress_begin")
    assert [name for name, _ in wm.log if "timer" in name] == [
        "event_timer_add", "event_timer_remove"]  # fmt: skip
    assert workspace.log[-1][1] == (None,)  # the status bar is given back


@pytest.mark.usefixtures("blank")
def test_the_interactive_check_finishes_with_what_the_background_check_gives():
    bpy.ops.mesh.primitive_uv_sphere_add(segments=16, ring_count=8)
    ob = bpy.context.active_object
    scene = bpy.context.scene
    scene.frame_start, scene.frame_end = 1, 5
    assert bpy.ops.turnabout.check(write_reports=False) == {"FINISHED"}
    want = _snapshot(ob)
    assert bpy.ops.turnabout.clear_check() == {"FINISHED"}

    op, context, wm, workspace = _interactive_check()
    assert op._begin_modal(context) == {"RUNNING_MODAL"}
    for _ in range(10000):
        result = op.modal(context, TIMER)
        if result != {"RUNNING_MODAL"}:
            break
    assert result == {"FINISHED"}
    assert _snapshot(ob) == want
    calls = [name for name, _ in wm.log]
    assert calls.count("progress_begin") == calls.count("progress_end") == 1


@pytest.mark.parametrize("stage", ["reading frames", "checking"])
@pytest.mark.usefixtures("blank")
def test_deleting_the_object_during_the_check_ends_it_with_a_message(stage):
    bpy.ops.mesh.primitive_uv_sphere_add(segments=48, ring_count=24)
    ob = bpy.context.active_object
    scene = bpy.context.scene
    scene.frame_start, scene.frame_end = 1, 400 if stage == "reading frames" else 80
    threads = threading.active_count()
    op, context, wm, workspace = _interactive_check()
    assert op._begin_modal(context) == {"RUNNING_MODAL"}
    assert op.modal(context, TIMER) == {"RUNNING_MODAL"}
    while not workspace.log[-1][1][0].startswith(f"Turnabout: {stage}"):
        assert op.modal(context, TIMER) == {"RUNNING_MODAL"}
    bpy.data.objects.remove(ob)  # the user deletes it while the check runs
    for _ in range(10000):
        result = op.modal(context, TIMER)
        if result != {"RUNNING_MODAL"}:
            break
    assert result == {"CANCELLED"}
    assert op.reports == [({"ERROR"}, "object: 'Sphere' was removed during the check")]
    calls = [name for name, _ in wm.log]
    assert calls.count("progress_begin") == calls.count("progress_end") == 1
    assert "event_timer_remove" in calls and workspace.log[-1][1] == (None,)
    assert len(scene.turnabout.results) == 0 and len(scene.timeline_markers) == 0
    assert threading.active_count() == threads


@pytest.mark.usefixtures("blank")
def test_checking_with_nothing_selected_says_what_to_select():
    before = counts()
    with pytest.raises(RuntimeError, match="select a mesh object to check"):
        bpy.ops.turnabout.check(write_reports=False)
    assert counts() == before


@pytest.mark.usefixtures("blank")
def test_renaming_the_object_during_the_check_still_shows_the_results_on_it():
    bpy.ops.mesh.primitive_uv_sphere_add(segments=48, ring_count=24)
    ob = bpy.context.active_object
    scene = bpy.context.scene
    scene.frame_start, scene.frame_end = 1, 40
    op, context, wm, workspace = _interactive_check()
    assert op._begin_modal(context) == {"RUNNING_MODAL"}
    assert op.modal(context, TIMER) == {"RUNNING_MODAL"}
    while not workspace.log[-1][1][0].startswith("Turnabout: checking"):
        assert op.modal(context, TIMER) == {"RUNNING_MODAL"}
    ob.name = "Renamed sphere"  # while the checker runs
    for _ in range(10000):
        result = op.modal(context, TIMER)
        if result != {"RUNNING_MODAL"}:
            break
    assert result == {"FINISHED"}
    assert "turnabout_heat" in bpy.data.objects["Renamed sphere"].data.color_attributes
    assert len(scene.turnabout.results) == 40
