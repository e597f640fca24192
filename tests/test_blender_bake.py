"""Baking eversions into Blender: positions, key layout, saved files, re-builds, undo, refusals."""

from __future__ import annotations

import json
import os

import numpy as np
import pytest
from blender_support import (
    blank,  # noqa: F401  (fixture used by name)
    bpy,
    counts,
    evaluated_positions,
    fcurves_of,
    orphans,
    run_python,
    set_small_build,
    small_mesh,
)

from turnabout.baking.pc2 import read_pc2
from turnabout.baking.plan import plan_bake
from turnabout.eversion import ControlError, Controls, build, evaluate

pytestmark = pytest.mark.blender


def _bake(mode="SHAPE_KEYS", frames=14, key_step=1, frame_start=5, mesh=None, cache_dir=None):
    from turnabout_blender import bake

    mesh = mesh or small_mesh()
    plan = plan_bake(Controls(), frames, frame_start, key_step, mesh, mode)
    kw = {"cache_dir": cache_dir} if cache_dir else {}
    ob = bake.bake_eversion(bpy.context.scene, plan, **kw)
    bake.set_scene_range(bpy.context.scene, plan)
    return ob, plan


@pytest.mark.usefixtures("blank")
def test_baked_frames_equal_the_core_positions_at_every_frame():
    ob, plan = _bake(frames=14, frame_start=5)
    core = build(Controls(), frames=14, mesh=small_mesh())
    got = evaluated_positions(ob, range(5, 5 + 14))
    assert got.shape == core.positions.shape
    assert np.abs(got - core.positions).max() <= 1e-5
    key = ob.data.shape_keys
    assert len(key.key_blocks) == 14 and not key.use_relative
    scene = bpy.context.scene
    assert (scene.frame_start, scene.frame_end) == (5, 18)


@pytest.mark.usefixtures("blank")
def test_keys_every_nth_frame_and_in_between_frames_blend_linearly():
    ob, plan = _bake(frames=15, key_step=4, frame_start=1)
    keyed = [0, 4, 8, 12, 14]  # every 4th frame plus the last one
    key = ob.data.shape_keys
    assert len(key.key_blocks) == len(keyed)
    fc = fcurves_of(key).find("eval_time")
    frames = [kp.co[0] for kp in fc.keyframe_points]
    assert frames == [1 + k for k in keyed]
    assert all(kp.interpolation == "LINEAR" for kp in fc.keyframe_points)

    mesh = small_mesh()
    at_keys = evaluate(Controls(), np.array(keyed) / 14, mesh)
    got = evaluated_positions(ob, range(1, 16))
    for off in range(15):
        j = np.searchsorted(keyed, off, side="right") - 1
        j = min(j, len(keyed) - 2)
        w = (off - keyed[j]) / (keyed[j + 1] - keyed[j])
        want = (1 - w) * at_keys[j] + w * at_keys[j + 1]
        assert np.abs(got[off] - want).max() <= 1e-5, off


@pytest.mark.usefixtures("blank")
def test_point_cache_plays_the_core_positions(tmp_path):
    ob, plan = _bake(mode="POINT_CACHE", frames=10, frame_start=3, cache_dir=str(tmp_path))
    pc2 = os.path.join(str(tmp_path), "Eversion.pc2")
    with open(pc2, "rb") as fh:
        head = fh.read(32)
    # PC2 header: signature, version 1, points, start, rate, samples (common practice)
    assert head[:12] == b"POINTCACHE2\0"
    assert np.frombuffer(head[12:20], "<i4").tolist() == [1, small_mesh().n_vertices]
    assert np.frombuffer(head[28:32], "<i4")[0] == 10
    assert ob.data.shape_keys is None
    core = build(Controls(), frames=10, mesh=small_mesh())
    got = evaluated_positions(ob, range(3, 13))
    assert np.abs(got - core.positions).max() <= 1e-5
    # Blender's Mesh Cache modifier plays what the core's reader reads from the file
    stored, _, _ = read_pc2(pc2)
    assert np.abs(got - stored).max() <= 1e-6


@pytest.mark.usefixtures("blank")
def test_a_cache_folder_whose_parent_is_missing_is_refused_before_any_data(tmp_path):
    from turnabout.output import OutputError
    from turnabout_blender import bake

    plan = plan_bake(Controls(), 4, 1, 1, small_mesh(), "POINT_CACHE")
    before = counts()
    with pytest.raises(OutputError, match="^cache folder .*does not exist; create it first"):
        bake.bake_eversion(bpy.context.scene, plan, cache_dir=str(tmp_path / "no" / "cache"))
    assert counts() == before and not (tmp_path / "no").exists()


REOPEN = """
import sys, json, numpy as np, bpy, addon_utils
bpy.ops.wm.open_mainfile(filepath=sys.argv[1])
enabled = [m.__name__ for m in addon_utils.modules() if addon_utils.check(m.__name__)[1]]
assert not any("turnabout" in name for name in enabled)
assert "turnabout_blender" not in sys.modules
out = {}
for ob in bpy.data.objects:
    if ob.type != "MESH":
        continue
    scene = bpy.context.scene
    frames = []
    for f in range(scene.frame_start, scene.frame_end + 1):
        scene.frame_set(f)
        me = ob.evaluated_get(bpy.context.evaluated_depsgraph_get()).data
        buf = np.empty(len(me.vertices) * 3, np.float32)
        me.vertices.foreach_get("co", buf)
        frames.append(buf.reshape(-1, 3))
    np.save(sys.argv[2], np.stack(frames))
print("ok")
"""


@pytest.mark.parametrize("mode", ["SHAPE_KEYS", "POINT_CACHE"])
@pytest.mark.usefixtures("blank")
def test_saved_file_animates_the_same_in_a_fresh_process_without_the_addon(tmp_path, mode):
    from turnabout_blender import headless

    blend = str(tmp_path / "ev.blend")
    ob, plan = _bake(mode=mode, frames=9, frame_start=1, cache_dir=str(tmp_path / "cache"))
    headless.point_cache_relative(ob, blend)
    headless.save_blend(blend)
    out = str(tmp_path / "frames.npy")
    run_python(REOPEN, blend, out, user_dir=tmp_path / "user")
    core = build(Controls(), frames=9, mesh=small_mesh())
    assert np.abs(np.load(out) - core.positions).max() <= 1e-5


@pytest.mark.usefixtures("blank")
def test_rebuild_updates_the_object_in_place_without_orphan_data(tmp_path):
    s = bpy.context.scene.turnabout
    set_small_build(s, frames=10)
    assert bpy.ops.turnabout.add_eversion() == {"FINISHED"}
    ob = bpy.context.active_object
    name, mesh_name = ob.name, ob.data.name
    before = counts()
    s.strips = 10
    s.mesh_lon = 80  # the construction wants a multiple of the strips
    s.frames = 17
    s.key_step = 3
    assert bpy.ops.turnabout.rebuild() == {"FINISHED"}
    after = counts()
    for kind in ("objects", "meshes", "materials", "shape_keys", "actions"):
        assert after[kind] == before[kind], kind
    assert orphans() == []
    ob = bpy.data.objects[name]
    assert ob.data.name == mesh_name
    assert json.loads(ob["turnabout"])["controls"]["strips"] == 10
    assert (
        len(ob.data.shape_keys.key_blocks) == len(range(0, 16, 3)) + 1
    )  # 0, 3, ..., 15 and the last, 16
    # and switching to a point cache and back leaves nothing behind either
    s.bake_mode = "POINT_CACHE"
    s.cache_dir = str(tmp_path / "cache")
    assert bpy.ops.turnabout.rebuild() == {"FINISHED"}
    s.bake_mode = "SHAPE_KEYS"
    assert bpy.ops.turnabout.rebuild() == {"FINISHED"}
    assert orphans() == []
    assert [m.type for m in bpy.data.objects[name].modifiers] == []


@pytest.mark.usefixtures("blank")
def test_undo_restores_the_state_before_a_rebuild():
    s = bpy.context.scene.turnabout
    set_small_build(s, frames=8)
    bpy.ops.turnabout.add_eversion()
    name = bpy.context.active_object.name
    bpy.ops.ed.undo_push(message="baked 8 frames")
    s.frames = 13
    bpy.ops.turnabout.rebuild()
    assert len(bpy.data.objects[name].data.shape_keys.key_blocks) == 13
    bpy.ops.ed.undo_push(message="re-built with 13 frames")
    bpy.ops.ed.undo()
    ob = bpy.data.objects[name]  # references from before the undo are stale
    assert len(ob.data.shape_keys.key_blocks) == 8
    assert json.loads(ob["turnabout"])["frames"] == 8
    assert orphans() == []


@pytest.mark.parametrize(
    "change, controls",
    [
        (
            {"ripple_start": 0.5},
            {"timing": {**Controls().timing, "ripple": (0.5, Controls().timing["ripple"][1])}},
        ),
        (
            {"swap_end": 0.04},
            {"timing": {**Controls().timing, "swap": (Controls().timing["swap"][0], 0.04)}},
        ),
    ],
)
@pytest.mark.usefixtures("blank")
def test_invalid_controls_are_refused_with_the_core_message(change, controls):
    s = bpy.context.scene.turnabout
    set_small_build(s, frames=6)
    bpy.ops.turnabout.add_eversion()
    for k, v in change.items():
        setattr(s, k, v)
    with pytest.raises(ControlError) as core_error:
        Controls(**controls)
    before = counts()
    with pytest.raises(RuntimeError) as err:
        bpy.ops.turnabout.rebuild()
    assert str(core_error.value) in str(err.value)
    assert counts() == before
    with pytest.raises(RuntimeError):
        bpy.ops.turnabout.add_eversion()
    assert counts() == before


@pytest.mark.usefixtures("blank")
def test_bake_over_the_memory_limit_is_refused_with_the_estimate():
    s = bpy.context.scene.turnabout
    set_small_build(s, frames=200, n_lon=256, n_lat=127)
    s.memory_limit_mb = 50.0
    before = counts()
    with pytest.raises(RuntimeError) as err:
        bpy.ops.turnabout.add_eversion()
    # 200 shapes x 32,514 vertices x 3 coordinates x (8 + 4 + 4) bytes
    need_mb = 200 * (256 * 127 + 2) * 3 * 16 / 1e6
    assert f"about {need_mb:.0f} MB" in str(err.value) and "50 MB" in str(err.value)
    assert counts() == before


@pytest.mark.usefixtures("blank")
def test_panel_mesh_spacing_gives_the_core_meshes():
    from turnabout.eversion import mesh_for

    s = bpy.context.scene.turnabout
    set_small_build(s, frames=2, n_lon=0, n_lat=0)
    for spacing in ("EVEN", "BEND"):
        s.mesh_spacing = spacing
        bpy.ops.turnabout.add_eversion()
        ob = bpy.context.active_object
        core = mesh_for(Controls(), spacing=spacing.lower())
        assert len(ob.data.vertices) == core.n_vertices
        co = np.empty(len(ob.data.vertices) * 3, np.float32)
        ob.data.vertices.foreach_get("co", co)
        first_ring = co.reshape(-1, 3)[1 : 1 + core.n_lon]  # the basis is the round sphere
        theta = np.mod(np.arctan2(first_ring[:, 1], first_ring[:, 0]), 2 * np.pi)
        assert np.allclose(theta, core.theta, atol=1e-5)


@pytest.mark.usefixtures("blank")
def test_the_panel_speaks_the_options_words_and_keeps_depth_in_range():
    from turnabout.commands.controls_options import PANEL_LABELS
    from turnabout.eversion import STAGE_NAMES, default_depth, depth_range
    from turnabout_blender.props import TURNABOUT_PG_settings

    props = TURNABOUT_PG_settings.bl_rna.properties
    for prop, control in (("strips", "strips"), ("depth", "depth"), ("frames", "frames"),
                          ("mesh_spacing", "spacing"), ("mesh_lon", "lon"),
                          ("mesh_lat", "lat")):  # fmt: skip
        assert props[prop].name == PANEL_LABELS[control]
    for stage in STAGE_NAMES:
        assert props[f"{stage}_start"].name == f"{PANEL_LABELS[stage]} start"
    assert [i.name for i in props["mesh_spacing"].enum_items] == ["bend", "even"]
    lo, hi = depth_range()
    assert props["depth"].default == pytest.approx(default_depth(8))
    assert (props["depth"].hard_min, props["depth"].hard_max) == pytest.approx((lo, hi))
    s = bpy.context.scene.turnabout
    s.depth = 0.9  # the old default 0.1 and this lay outside what the core accepts
    assert s.depth == pytest.approx(hi)


@pytest.mark.parametrize("folder", ["//", "//cache", "//cache/", "//../up/c", "//a//b"])
def test_double_slash_folders_resolve_as_blender_resolves_them(tmp_path, folder):
    from turnabout.output import resolve_blend_relative

    blend = str(tmp_path / "shots" / "a.blend")
    blenders = os.path.abspath(bpy.path.abspath(folder, start=os.path.dirname(blend)))
    assert resolve_blend_relative(folder, blend, "cache folder") == blenders
