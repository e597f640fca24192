"""Bake an eversion from the core into native Blender animation.

Two ways to store it, both playing and rendering with the add-on uninstalled:

* shape keys: absolute keys (``use_relative = False``) with linear key interpolation,
  driven by one LINEAR F-curve on ``Key.eval_time``; a key every ``key_step`` frames,
  the frames between blended linearly;
* point cache: a PC2 file with one sample per frame, read by a Mesh Cache modifier
  (a small .blend for long shots).

Re-building replaces the object's mesh in place and frees the old mesh, its shape
keys and their action, so no orphan data is left behind. The plan (frames, key layout,
memory estimate, cache file name) and the PC2 writer live in ``turnabout.baking``; this
module moves the planned shapes into Blender data.
"""

from __future__ import annotations

import json

import bpy
import numpy as np
from bpy.props import StringProperty

from turnabout.baking.plan import (
    CACHE_CHUNK,
    BakeError,
    BakePlan,
    cache_file_path,
    mesh_from_settings,
    plan_bake,
    refuse_if_too_big,
)

PROP_TAG = "turnabout"  # object custom property holding the build settings (JSON)
ACTION_SUFFIX = " eval time"
MODIFIER_NAME = "Turnabout cache"
GUIDE_ATTRIBUTE = "turnabout_guide"


# ----------------------------------------------------------------------------- mesh


def new_sphere_mesh(name: str, sphere, first_positions: np.ndarray, strips: int):
    """A Blender mesh with the sphere's quads and pole triangles at ``first_positions``.

    first_positions : (V, 3) float32. Adds a UV map and a face attribute ``turnabout_guide``
    (1.0 on every other strip, 0.0 elsewhere) for the strip tint.
    """
    quads, tris = sphere.polygons()
    n_v = sphere.n_vertices
    loops = np.concatenate([quads.ravel(), tris.ravel()]).astype(np.int32)
    sizes = np.concatenate([np.full(len(quads), 4), np.full(len(tris), 3)])
    starts = np.concatenate([[0], np.cumsum(sizes)[:-1]]).astype(np.int32)

    me = bpy.data.meshes.new(name)
    me.vertices.add(n_v)
    me.vertices.foreach_set("co", np.ascontiguousarray(first_positions, np.float32).ravel())
    me.loops.add(len(loops))
    me.loops.foreach_set("vertex_index", loops)
    me.polygons.add(len(sizes))
    me.polygons.foreach_set("loop_start", starts)
    me.update(calc_edges=True)
    me.polygons.foreach_set("use_smooth", np.ones(len(sizes), bool))

    uv = sphere.uv()
    layer = me.uv_layers.new(name="UVMap")
    layer.data.foreach_set("uv", uv[loops].ravel())

    # guide strip or wave strip of each face from the longitude at the middle of its cell
    # (the default mesh spaces longitudes unevenly and need not start at 0): guide strip k
    # is |theta - 2 pi k / strips| < pi / (2 strips), as in turnabout.views.parts.
    # Quads run ring by ring, then the fans.
    n_lon = sphere.n_lon
    cell = np.concatenate([np.arange(len(quads)) % n_lon, np.arange(len(tris)) % n_lon])
    theta = np.append(sphere.theta, sphere.theta[0] + 2 * np.pi)
    middle = 0.5 * (theta[:-1] + theta[1:])
    guide = np.floor(middle[cell] * (strips / np.pi) + 0.5).astype(np.int64) % 2 == 0
    attr = me.attributes.new(GUIDE_ATTRIBUTE, "FLOAT", "FACE")
    attr.data.foreach_set("value", guide.astype(np.float32))
    me.update()
    return me


# Blender 4.4 moved F-curves into a channel bag per action slot; 4.2/4.3 keep them on the
# action itself (the manifest's minimum is 4.2).
SLOTTED_ACTIONS = bpy.app.version >= (4, 4, 0)


def ensure_fcurve(action, datablock, data_path: str, index: int = 0):
    """The F-curve of ``datablock``'s ``data_path[index]`` in ``action``, with no keyframes."""
    if SLOTTED_ACTIONS:
        fc = action.fcurve_ensure_for_datablock(datablock, data_path, index=index)
    else:  # Blender 4.2/4.3
        fc = action.fcurves.find(data_path, index=index)
        if fc is None:
            fc = action.fcurves.new(data_path, index=index)
    fc.keyframe_points.clear()
    return fc


def animated_fcurves(animation_data):
    """The F-curves animating through ``animation_data`` (its action's, for its slot), or None."""
    action = animation_data.action if animation_data is not None else None
    if action is None:
        return None
    if not SLOTTED_ACTIONS:  # Blender 4.2/4.3
        return action.fcurves
    from bpy_extras import anim_utils

    bag = anim_utils.action_get_channelbag_for_slot(action, animation_data.action_slot)
    return bag.fcurves if bag is not None else None


def _set_fcurve(action, datablock, data_path: str, frames: np.ndarray, values: np.ndarray):
    """One LINEAR F-curve on ``data_path`` through (frames, values), replacing any earlier one."""
    fc = ensure_fcurve(action, datablock, data_path)
    n = len(frames)
    fc.keyframe_points.add(n)
    co = np.stack([np.asarray(frames, np.float32), np.asarray(values, np.float32)], axis=-1)
    fc.keyframe_points.foreach_set("co", co.ravel())
    fc.keyframe_points.foreach_set("interpolation", np.ones(n, np.int32))  # LINEAR
    fc.update()
    return fc


def _write_shape_keys(ob, plan: BakePlan, positions: np.ndarray, progress) -> None:
    """Absolute shape keys, one per stored shape, and the LINEAR eval_time F-curve."""
    total = 2 * plan.n_keys
    basis = ob.shape_key_add(name="Basis", from_mix=False)
    basis.points.foreach_set("co", positions[0].ravel())
    blocks = [basis]
    for k in range(1, plan.n_keys):
        kb = ob.shape_key_add(
            name=f"frame {plan.frame_start + int(plan.key_offsets[k])}", from_mix=False
        )
        kb.points.foreach_set("co", positions[k].ravel())
        blocks.append(kb)
        progress(plan.n_keys + k + 1, total)
    key = ob.data.shape_keys
    key.use_relative = False
    for kb in blocks:
        kb.interpolation = "KEY_LINEAR"
    positions_on_axis = np.array([kb.frame for kb in blocks], np.float64)
    key.animation_data_create()
    action = bpy.data.actions.new(ob.name + ACTION_SUFFIX)
    key.animation_data.action = action
    _set_fcurve(action, key, "eval_time", plan.frame_start + plan.key_offsets, positions_on_axis)
    key.eval_time = float(positions_on_axis[0])


def _free_mesh(me) -> None:
    """Remove a mesh no longer used, with its shape keys' action."""
    key = me.shape_keys
    if key is not None and key.animation_data is not None:
        action = key.animation_data.action
        key.animation_data.action = None
        if action is not None and action.users == 0:
            bpy.data.actions.remove(action)
    if me.users == 0:
        bpy.data.meshes.remove(me)


def is_eversion_object(ob) -> bool:
    return ob is not None and ob.type == "MESH" and PROP_TAG in ob


def bake_eversion(
    scene,
    plan: BakePlan,
    ob=None,
    name: str = "Eversion",
    memory_limit_mb: float = 4096.0,
    cache_dir: str = "//turnabout_cache/",
    progress=None,
    positions=None,
    spacing: str | None = None,
):
    """Bake ``plan`` into ``ob`` (re-built in place) or into a new object linked to ``scene``.

    ``spacing`` ("bend" or "even"), when given, is kept in the build record so that Load
    Settings can put it back in the panel.

    ``positions`` (n_keys, V, 3) float32, when given, are the shapes already evaluated by
    the core for ``plan.times`` (the bake then only moves them into Blender).

    Everything that can be refused (memory, cache folder) is checked before any Blender
    data is made; on an error the file is left as it was. Returns the object.
    """
    from turnabout.baking.pc2 import write_pc2
    from turnabout.eversion import evaluate
    from turnabout.output import make_output_folder, resolve_blend_relative
    from turnabout.progress import no_progress

    progress = progress or no_progress
    refuse_if_too_big(plan, memory_limit_mb)
    ob_name = ob.name if ob is not None else name
    pc2 = None
    if plan.mode == "POINT_CACHE":
        folder = resolve_blend_relative(cache_dir, bpy.data.filepath, "cache folder")
        make_output_folder(folder, "cache folder")
        # the folder as given (links unresolved), so its path relative to the .blend reads so
        pc2 = cache_file_path(folder, ob_name)

    total = 2 * plan.n_keys
    if positions is not None:
        if plan.mode != "SHAPE_KEYS":
            raise BakeError("positions: given positions are baked as shape keys only")
        positions = np.asarray(positions, np.float32)
        if positions.shape != (plan.n_keys, plan.n_vertices, 3):
            raise BakeError(
                f"positions: expected ({plan.n_keys}, {plan.n_vertices}, 3) for this plan, "
                f"got {positions.shape}"
            )
        first = positions[0]
    elif plan.mode == "SHAPE_KEYS":
        positions = evaluate(
            plan.controls,
            plan.times,
            plan.mesh,
            progress=lambda d, t: progress(d, total),
        ).astype(np.float32)
        first = positions[0]
    else:
        first = evaluate(plan.controls, plan.times[:1], plan.mesh)[0].astype(np.float32)

        def chunks():
            for a in range(0, plan.n_keys, CACHE_CHUNK):
                block = evaluate(plan.controls, plan.times[a : a + CACHE_CHUNK], plan.mesh)
                progress(min(a + CACHE_CHUNK, plan.n_keys) * 2, total)
                yield block.astype(np.float32)

        write_pc2(pc2, chunks(), plan.n_vertices, plan.n_keys)

    # --- from here on Blender data is created
    me = new_sphere_mesh(ob_name, plan.mesh, first, plan.controls.strips)
    if ob is None:
        ob = bpy.data.objects.new(ob_name, me)
        scene.collection.objects.link(ob)
    else:
        old = ob.data
        for mat in old.materials:
            me.materials.append(mat)
        for mod in [m for m in ob.modifiers if m.type == "MESH_CACHE" and m.name == MODIFIER_NAME]:
            ob.modifiers.remove(mod)
        ob.data = me
        old_name = old.name
        _free_mesh(old)
        me.name = old_name
    if plan.mode == "SHAPE_KEYS":
        _write_shape_keys(ob, plan, positions, progress)
    else:
        mod = ob.modifiers.new(MODIFIER_NAME, "MESH_CACHE")
        mod.cache_format = "PC2"
        mod.filepath = bpy.path.relpath(pc2) if bpy.data.filepath else pc2
        mod.time_mode = "FRAME"
        mod.play_mode = "SCENE"
        mod.frame_start = float(plan.frame_start)
        mod.frame_scale = 1.0
        mod.interpolation = "LINEAR"
        progress(total, total)
    record = {
        "controls": plan.controls.as_dict(),
        "frames": plan.frames,
        "frame_start": plan.frame_start,
        "key_step": plan.key_step,
        "mode": plan.mode,
        "mesh": [plan.mesh.n_lon, plan.mesh.n_lat],
    }
    if spacing is not None:
        record["spacing"] = spacing
    ob[PROP_TAG] = json.dumps(record)
    return ob


def set_scene_range(scene, plan: BakePlan) -> None:
    scene.frame_start = plan.frame_start
    scene.frame_end = plan.frame_start + plan.frames - 1


# ----------------------------------------------------------------------------- operators


def _plan_from_scene(scene):
    from .props import controls_from_settings

    s = scene.turnabout
    controls = controls_from_settings(s)
    mesh = mesh_from_settings(controls, s.mesh_lon, s.mesh_lat, s.mesh_spacing.lower())
    return plan_bake(controls, s.frames, s.frame_start, s.key_step, mesh, s.bake_mode)


def _run_bake(op, context, target):
    from turnabout.progress import Cancelled

    from . import look

    scene = context.scene
    s = scene.turnabout
    wm = context.window_manager
    try:
        plan = _plan_from_scene(scene)
        wm.progress_begin(0, 2 * plan.n_keys)
        try:
            ob = bake_eversion(
                scene,
                plan,
                ob=target,
                name="Eversion",
                memory_limit_mb=s.memory_limit_mb,
                cache_dir=s.cache_dir,
                progress=lambda d, t: wm.progress_update(d),
                spacing=s.mesh_spacing.lower(),
            )
        finally:
            wm.progress_end()
    except (ValueError, OSError, Cancelled) as exc:  # ControlError and BakeError are ValueErrors
        op.report({"ERROR"}, str(exc))
        return {"CANCELLED"}
    look.apply_look(ob, s)
    set_scene_range(scene, plan)
    if target is None:
        ob.location = scene.cursor.location
        for other in context.selected_objects:
            other.select_set(False)
        context.view_layer.objects.active = ob
        ob.select_set(True)
    op.report(
        {"INFO"}, f"Baked {plan.frames} frames ({plan.n_keys} shapes, {plan.n_vertices} vertices)"
    )
    return {"FINISHED"}


class TURNABOUT_OT_add_eversion(bpy.types.Operator):
    """Add a sphere that turns inside out, baked as native animation"""

    bl_idname = "turnabout.add_eversion"
    bl_label = "Everting Sphere"
    bl_options = {"REGISTER", "UNDO"}

    def execute(self, context):
        return _run_bake(self, context, None)


class TURNABOUT_OT_rebuild(bpy.types.Operator):
    """Re-bake the active eversion with the current settings, in place"""

    bl_idname = "turnabout.rebuild"
    bl_label = "Re-build Eversion"
    bl_options = {"REGISTER", "UNDO"}

    target: StringProperty(name="Object", description="Object to re-build (default: active)")

    @classmethod
    def poll(cls, context):
        return is_eversion_object(context.active_object)

    def execute(self, context):
        ob = bpy.data.objects.get(self.target) if self.target else context.active_object
        if not is_eversion_object(ob):
            self.report({"ERROR"}, "re-build: the active object is not a Turnabout eversion")
            return {"CANCELLED"}
        return _run_bake(self, context, ob)


def _panel_values(record) -> dict:
    """Panel settings (name -> value) from an object's build record (the "turnabout" JSON),
    all read and validated before any is set; BakeError when the record is not one we wrote."""
    from turnabout.eversion import STAGE_NAMES, Controls, default_depth

    try:
        data = json.loads(record)
        c = data["controls"]
        timing = {k: (float(c["timing"][k][0]), float(c["timing"][k][1])) for k in STAGE_NAMES}
        controls = Controls(strips=int(c["strips"]), depth=float(c["depth"]), timing=timing)
        n_lon, n_lat = (int(v) for v in data["mesh"])
        if data["mode"] not in ("SHAPE_KEYS", "POINT_CACHE"):
            raise ValueError(f"store as {data['mode']!r}")
        out = {
            "strips": controls.strips,
            # the record holds the depth used; the documented one keeps following the strips
            "auto_depth": controls.wave_depth == default_depth(controls.strips),
            "depth": controls.wave_depth,
            "frames": int(data["frames"]),
            "frame_start": int(data["frame_start"]),
            "key_step": int(data["key_step"]),
            "bake_mode": data["mode"],
            "mesh_lon": n_lon,
            "mesh_lat": n_lat,
        }
        if "spacing" in data:  # records written before it was kept leave the panel's
            if data["spacing"] not in ("bend", "even"):
                raise ValueError(f"spacing {data['spacing']!r}")
            out["mesh_spacing"] = data["spacing"].upper()
    except (TypeError, ValueError, KeyError, AttributeError) as exc:  # ControlError too
        raise BakeError(
            f"object property {PROP_TAG!r}: not a Turnabout build record ({exc}); "
            "re-build the object from the panel or add a new eversion"
        ) from None
    for stage, (a, b) in timing.items():
        out[f"{stage}_start"], out[f"{stage}_end"] = a, b
    return out


class TURNABOUT_OT_load_settings(bpy.types.Operator):
    """Copy the active eversion's build settings into the panel"""

    bl_idname = "turnabout.load_settings"
    bl_label = "Load Settings From Object"
    bl_options = {"REGISTER", "UNDO"}

    @classmethod
    def poll(cls, context):
        if is_eversion_object(context.active_object):
            return True
        cls.poll_message_set("select a Turnabout eversion to load its settings")
        return False

    def execute(self, context):
        try:
            values = _panel_values(context.active_object[PROP_TAG])
        except BakeError as exc:
            self.report({"ERROR"}, str(exc))
            return {"CANCELLED"}
        s = context.scene.turnabout
        for name, value in values.items():
            setattr(s, name, value)
        return {"FINISHED"}


CLASSES = (TURNABOUT_OT_add_eversion, TURNABOUT_OT_rebuild, TURNABOUT_OT_load_settings)
