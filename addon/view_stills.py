"""Build-up stills: the key moments of a baked eversion as a row of static meshes.

A shape-key bake evaluates per mesh datablock at the scene's time, so objects sharing the
bake cannot each stop at another frame (a per-object time offset would need a second copy
of every shape). Each key moment is taken instead as its own small static mesh:
``bpy.data.meshes.new_from_object`` of the evaluated surface (or of its parts view) at that
frame. K stills cost K meshes, not a second bake.
"""

from __future__ import annotations

import json

import bpy
import numpy as np

from .view_objects import (
    SOURCE_TAG,
    VIEW_TAG,
    ViewError,
    _hide_source,
    _show_source,
    eversion_info,
    view_object_of,
)

STILLS_SUFFIX = " stills"


def still_frames(info: dict, moments) -> list[tuple[str, int]]:
    """Scene frames of the key moments ``[(name, t)]``, t in [0, 1] of the motion."""
    first, frames = int(info["frame_start"]), int(info["frames"])
    return [(name, first + int(round(float(t) * (frames - 1)))) for name, t in moments]


def stills_collection(ob):
    return bpy.data.collections.get(ob.name + STILLS_SUFFIX)


def add_stills(scene, ob, info: dict | None = None, gap: float = 0.3):
    """A row of static stills of ``ob`` (or of its view) at the key moments, left to right
    in time along +x, centred on the eversion; hides the moving surface. Returns the objects.
    """
    from turnabout.eversion import Controls
    from turnabout.views.reveal import key_moments

    info = info or eversion_info(ob)
    c = info["controls"]
    controls = Controls(strips=c["strips"], depth=c["depth"], timing=c["timing"])
    moments = still_frames(info, key_moments(controls))
    if not moments:
        raise ViewError("stills: the core gives no key moments for these controls")
    remove_stills(ob)
    view = view_object_of(ob)
    source = view if view is not None else ob
    keep = scene.frame_current
    depsgraph = bpy.context.evaluated_depsgraph_get()
    meshes = []
    try:
        for name, frame in moments:
            scene.frame_set(frame)
            me = bpy.data.meshes.new_from_object(source.evaluated_get(depsgraph))
            me.name = f"{ob.name} {name}"
            meshes.append((name, frame, me))
    finally:
        scene.frame_set(keep)
    radius = 0.0
    for _, _, me in meshes:
        co = np.empty(len(me.vertices) * 3, np.float32)
        me.vertices.foreach_get("co", co)
        if co.size:
            radius = max(radius, float(np.abs(co.reshape(-1, 3)[:, :2]).max()))
    pitch = 2.0 * max(radius, 1e-3) * (1.0 + gap)
    coll = bpy.data.collections.new(ob.name + STILLS_SUFFIX)
    scene.collection.children.link(coll)
    out = []
    base = ob.matrix_world.translation
    for i, (name, frame, me) in enumerate(meshes):
        still = bpy.data.objects.new(f"{ob.name} {name}", me)
        coll.objects.link(still)
        still.location = (base.x + (i - (len(meshes) - 1) / 2) * pitch, base.y, base.z)
        still[SOURCE_TAG] = ob
        still[VIEW_TAG] = json.dumps(
            {"kind": "still", "source": ob.name, "moment": name, "frame": frame}
        )
        out.append(still)
    _hide_source(ob)
    if view is not None:
        view.hide_render = view.hide_viewport = True
    return out


def remove_stills(ob) -> None:
    coll = stills_collection(ob)
    if coll is None:
        return
    for still in list(coll.objects):
        me = still.data
        bpy.data.objects.remove(still)
        if me is not None and me.users == 0:
            bpy.data.meshes.remove(me)
    bpy.data.collections.remove(coll)
    view = view_object_of(ob)
    if view is not None:
        view.hide_render = view.hide_viewport = False
    else:
        _show_source(ob)


def row_radius(objects, aspect: float) -> float:
    """The radius to give the stage camera (headless.add_camera_and_lights) so a row of objects along x,
    centred on the origin, fits the frame of the given aspect (width / height)."""
    import math

    xs, r = [], 0.0
    for o in objects:
        co = np.empty(len(o.data.vertices) * 3, np.float32)
        o.data.vertices.foreach_get("co", co)
        if co.size:
            p = co.reshape(-1, 3)
            r = max(r, float(np.sqrt((p**2).sum(axis=1)).max()))
        xs.append(abs(o.location.x))
    half_width = (max(xs) if xs else 0.0) + r
    # add_camera_and_lights: 50 mm lens, 36 mm sensor along the longer side (Blender's AUTO fit)
    short = math.atan(18.0 / 50.0 / max(aspect, 1.0 / aspect))
    long_ = math.atan(18.0 / 50.0)
    wide = half_width * math.sin(short) / (1.08 * math.tan(long_ if aspect >= 1 else short))
    return max(r, wide)
