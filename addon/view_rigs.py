"""View rigs in Blender: a camera that rides one latitude band, and glyphs on the level points.

Band rig: a camera parented to the eversion that looks down on the chosen band every frame
from the distance that keeps the band's image the same size (keyframed location and
rotation), a fixed side camera that frames the whole surface, and a highlight: a small
object holding only the band's triangles whose vertices follow the eversion through a
geometry-nodes modifier (Object Info + Sample Index), drawn in a colour of its own.

Level markers: every frame's level points stored once in a point mesh with integer
attributes (scene frame, kind); a geometry-nodes modifier keeps the points of the scene's
current frame and puts a glyph of each kind on them (Instance on Points, picked by kind),
realised with one emitting material per kind. The signed count becomes an animated custom
property of the eversion object (constant between frames) and, optionally, text in the
corner of a camera (Value to String, String to Curves, Fill Curve).

Everything is native data (cameras, keyframes, meshes, node groups, materials): the saved
.blend plays and renders with the add-on uninstalled. The numbers come from
``turnabout.views.rig_math``; this module only moves them into Blender.
"""

from __future__ import annotations

import json
import math
import os

import bpy
import numpy as np

from turnabout.views import rig_math
from turnabout.views.rig_math import RigError

ROLE = "turnabout_view_rig"  # custom property on everything a rig makes: its role
OWNER = "turnabout_view_owner"  # ... and the eversion object it belongs to (an ID pointer)
BAND_ROLES = ("band top", "band side", "band highlight")
LEVEL_ROLES = ("level markers", "level text", "level count")
SOURCE_ATTRIBUTE = "turnabout_source_vertex"
FRAME_ATTRIBUTE = "turnabout_frame"
KIND_ATTRIBUTE = "turnabout_kind"
POINT_ATTRIBUTE = "turnabout_level_point"
COUNT_PROP = "turnabout_signed_count"

# our own annotation colours (linear RGB), chosen away from the default side colours
BAND_COLOUR = (1.0, 0.9, 0.02, 1.0)  # lemon
DOME_COLOUR = (1.0, 0.02, 0.4, 1.0)  # hot pink, upward cone
BOWL_COLOUR = (0.04, 0.16, 1.0, 1.0)  # electric blue, downward cone
SADDLE_COLOUR = (0.3, 1.0, 0.02, 1.0)  # lime, an upright cross
TEXT_COLOUR = (1.0, 1.0, 1.0, 1.0)
MARKER_COLOURS = (DOME_COLOUR, BOWL_COLOUR, SADDLE_COLOUR)


# ----------------------------------------------------------------------------- shared


def _check_object(ob) -> None:
    if ob is None or getattr(ob, "type", None) != "MESH":
        what = "nothing" if ob is None else f"{getattr(ob, 'name', ob)!r} ({ob.type.lower()})"
        raise RigError(f"object: must be a mesh object such as a baked eversion, got {what}")


def _check_frame(name: str, value) -> int:
    if isinstance(value, bool) or int(value) != value:
        raise RigError(f"{name}: must be a whole frame number, got {value!r}")
    return int(value)


def _tag(idblock, role: str, owner) -> None:
    idblock[ROLE] = role
    idblock[OWNER] = owner


def _made_for(owner, roles) -> list:
    """Every data-block a rig of ``roles`` made for ``owner``, objects first."""
    found = []
    for kind in ("objects", "cameras", "meshes", "node_groups", "materials", "actions"):
        for idb in getattr(bpy.data, kind):
            if idb.get(ROLE) in roles and idb.get(OWNER) == owner:
                found.append((kind, idb))
    return found


def _remove_made(owner, roles) -> int:
    made = _made_for(owner, roles)
    for kind, idb in made:  # objects come first, so their data is free when reached
        getattr(bpy.data, kind).remove(idb)
    return len(made)


def _key(action, idblock, path: str, index: int, frames, values, interpolation: int):
    """One F-curve through (frames, values): LINEAR (1) or CONSTANT (0), in bulk."""
    fc = action.fcurve_ensure_for_datablock(idblock, path, index=index)
    fc.keyframe_points.clear()
    n = len(frames)
    fc.keyframe_points.add(n)
    co = np.stack([np.asarray(frames, np.float32), np.asarray(values, np.float32)], axis=-1)
    fc.keyframe_points.foreach_set("co", co.ravel())
    fc.keyframe_points.foreach_set("interpolation", np.full(n, interpolation, np.int32))
    fc.update()
    return fc


def _new_action(idblock, name: str, role: str, owner):
    idblock.animation_data_create()
    action = bpy.data.actions.new(name)
    _tag(action, role, owner)
    idblock.animation_data.action = action
    return action


def _emission_material(name: str, colour, role: str, owner):
    """A flat material that shows ``colour`` whatever the lighting (an annotation)."""
    mat = bpy.data.materials.new(name)
    _tag(mat, role, owner)
    if getattr(mat, "node_tree", None) is None:  # Blender 4.2
        mat.use_nodes = True
    nt = mat.node_tree
    nt.nodes.clear()
    out = nt.nodes.new("ShaderNodeOutputMaterial")
    emit = nt.nodes.new("ShaderNodeEmission")
    emit.inputs["Color"].default_value = tuple(colour)
    emit.inputs["Strength"].default_value = 1.0
    nt.links.new(emit.outputs[0], out.inputs[0])
    emit.location, out.location = (-200, 0), (0, 0)
    mat.diffuse_color = tuple(colour)  # Solid viewport
    return mat


def _node_group(name: str, role: str, owner, float_inputs=()):
    """A geometry node group with Geometry in/out and extra float inputs; returns
    (group, input node, output node, {input name: socket identifier})."""
    ng = bpy.data.node_groups.new(name, "GeometryNodeTree")
    _tag(ng, role, owner)
    ng.interface.new_socket("Geometry", in_out="INPUT", socket_type="NodeSocketGeometry")
    ids = {}
    for label, default in float_inputs:
        sock = ng.interface.new_socket(label, in_out="INPUT", socket_type="NodeSocketFloat")
        sock.default_value = default
        ids[label] = sock.identifier
    ng.interface.new_socket("Geometry", in_out="OUTPUT", socket_type="NodeSocketGeometry")
    gin = ng.nodes.new("NodeGroupInput")
    gout = ng.nodes.new("NodeGroupOutput")
    return ng, gin, gout, ids


def _child_object(name: str, data, parent, role: str, owner, scene):
    ob = bpy.data.objects.new(name, data)
    _tag(ob, role, owner)
    if data is not None and data.get(ROLE) is None:
        _tag(data, role, owner)
    scene.collection.objects.link(ob)
    ob.parent = parent  # parent inverse stays identity: local space = parent's space
    return ob


def _evaluated_bounds(scene, ob, frames) -> tuple[np.ndarray, float]:
    """Centre (3,) of ``ob``'s evaluated bounding boxes at ``frames`` and the largest
    distance of a vertex from it (object space); the scene frame is restored."""
    keep = scene.frame_current
    shapes = []
    try:
        for f in frames:
            scene.frame_set(int(f))
            me = ob.evaluated_get(bpy.context.evaluated_depsgraph_get()).data
            buf = np.empty(len(me.vertices) * 3, np.float32)
            me.vertices.foreach_get("co", buf)
            shapes.append(buf.reshape(-1, 3).astype(np.float64))
    finally:
        scene.frame_set(keep)
    lo = np.min([p.min(axis=0) for p in shapes], axis=0)
    hi = np.max([p.max(axis=0) for p in shapes], axis=0)
    centre = 0.5 * (lo + hi)
    radius = max(float(np.linalg.norm(p - centre, axis=1).max()) for p in shapes)
    return centre, max(radius, 1e-6)


def baked_frames(ob) -> tuple[int, int]:
    """(first frame, frame count) of a baked eversion, from its build settings."""
    from .bake import PROP_TAG

    if PROP_TAG not in ob:
        raise RigError(
            f"object: {ob.name!r} is not a baked eversion (no build settings); "
            "bake one with Add > Everting Sphere first"
        )
    data = json.loads(ob[PROP_TAG])
    return int(data["frame_start"]), int(data["frames"])


def baked_triangles(ob) -> np.ndarray:
    """(M, 3) int32 triangles of a baked eversion in the core's face order."""
    from turnabout.mesh import uniform_sphere_mesh

    from .bake import PROP_TAG

    n_lon, n_lat = json.loads(ob[PROP_TAG])["mesh"]
    mesh = uniform_sphere_mesh(int(n_lon), int(n_lat))  # face order depends on counts only
    if mesh.n_vertices != len(ob.data.vertices):
        raise RigError(
            f"object: {ob.name!r} has {len(ob.data.vertices)} vertices, its build settings "
            f"say {mesh.n_vertices}; re-build it"
        )
    return mesh.triangles()


def baked_positions(scene, ob, vertex_ids=None, progress=None) -> np.ndarray:
    """Evaluated vertex positions (object space) of every baked frame.

    Returns (F, V, 3) float32, or (F, len(vertex_ids), 3) when ``vertex_ids`` is given.
    The scene frame is restored.
    """
    start, count = baked_frames(ob)
    n = len(ob.data.vertices)
    keep = scene.frame_current
    sel = None if vertex_ids is None else np.asarray(vertex_ids, np.int64)
    out = np.empty((count, n if sel is None else len(sel), 3), np.float32)
    buf = np.empty(n * 3, np.float32)
    try:
        for i in range(count):
            scene.frame_set(start + i)
            me = ob.evaluated_get(bpy.context.evaluated_depsgraph_get()).data
            me.vertices.foreach_get("co", buf)
            p = buf.reshape(-1, 3)
            out[i] = p if sel is None else p[sel]
            if progress is not None:
                progress(i + 1, count)
    finally:
        scene.frame_set(keep)
    return out


# ----------------------------------------------------------------------------- band rig


def _check_track(track) -> int:
    try:
        c, e, a = (np.asarray(getattr(track, k), np.float64) for k in ("centroid", "extent", "axes"))
    except AttributeError:
        raise RigError("track: must be a band track with centroid, extent and axes") from None
    f = len(e)
    if f < 1 or c.shape != (f, 3) or e.shape != (f,) or a.shape != (f, 3, 3):
        raise RigError(
            f"track: expected centroid (F, 3), extent (F,), axes (F, 3, 3), got {c.shape}, "
            f"{e.shape}, {a.shape}"
        )
    if not (np.all(np.isfinite(c)) and np.all(np.isfinite(e)) and np.all(np.isfinite(a))):
        raise RigError("track: contains NaN or infinity")
    return f


def add_band_rig(
    scene,
    ob,
    track,
    start_frame: int,
    band_faces=None,
    *,
    triangles=None,
    lens: float = 50.0,
    margin: float = 1.1,
    side_view: bool = True,
    elevation: float = 0.3,
    colour=BAND_COLOUR,
    lift: float = 0.004,
    make_active: bool = True,
) -> dict:
    """Cameras that follow one latitude band, and its highlight; returns the objects made.

    track : a BandTrack (centroid (F, 3), extent (F,), axes (F, 3, 3), object space) whose
    frame 0 plays at scene frame ``start_frame``. band_faces : (M,) bool over the
    surface's triangles in the core's face order (``triangles`` (M, 3) int, read from the
    object's build settings when omitted), or None for no highlight. ``lens`` in mm
    (36 mm sensor), ``margin`` >= 1 the room left around the band, ``elevation`` the side
    camera's height above the horizontal in radians, ``lift`` the highlight's offset off
    the surface as a fraction of the surface's radius.

    Returns {"top": camera object, "side": camera object or None, "highlight": object or
    None}. Any earlier band rig of ``ob`` is replaced. Raises RigError (a ValueError) with
    nothing changed when an input is wrong.
    """
    _check_object(ob)
    n_frames = _check_track(track)
    start_frame = _check_frame("start frame", start_frame)
    lens = rig_math.positive("lens", lens, 5000.0)
    margin = rig_math.positive("margin", margin, 100.0)
    lift = rig_math.positive("lift", lift, 0.5)
    patch = None
    if band_faces is not None:
        tris = baked_triangles(ob) if triangles is None else np.asarray(triangles)
        patch = rig_math.face_patch(tris, band_faces)
        if len(patch[0]) == 0:
            raise RigError("band faces: the band holds no faces; choose a wider band")
    w, h = scene.render.resolution_x, scene.render.resolution_y
    half = rig_math.half_fov_of_short_side(lens, 36.0, w, h)
    locations = np.asarray(track.camera_locations(half, margin), np.float64)
    quats = rig_math.quaternions_from_axes(track.axes)
    up = -np.asarray(track.axes, np.float64)[:, 2].mean(axis=0)
    up = rig_math.unit_up(up)
    frames = np.arange(n_frames, dtype=np.float64) + start_frame

    remove_band_rig(scene, ob)
    made = {"top": None, "side": None, "highlight": None}
    try:
        centre, radius = _evaluated_bounds(
            scene, ob, np.unique(np.linspace(start_frame, start_frame + n_frames - 1, 9).round())
        )
        distances = np.linalg.norm(locations - np.asarray(track.centroid), axis=1)
        made["top"] = cam = _camera(scene, ob, f"{ob.name} band top", "band top", lens)
        cam.data.clip_start = max(1e-4, 0.02 * float(distances.min()))
        cam.data.clip_end = 4.0 * (float(distances.max()) + 2 * radius)
        cam.rotation_mode = "QUATERNION"
        action = _new_action(cam, f"{cam.name} path", "band top", ob)
        for i in range(3):
            _key(action, cam, "location", i, frames, locations[:, i], 1)
        for i in range(4):
            _key(action, cam, "rotation_quaternion", i, frames, quats[:, i], 1)
        if side_view:
            eye, q = rig_math.side_view(centre, radius, up, half, elevation, margin)
            made["side"] = side = _camera(scene, ob, f"{ob.name} band side", "band side", lens)
            side.rotation_mode = "QUATERNION"
            side.location, side.rotation_quaternion = eye.tolist(), q.tolist()
            side.data.clip_start = 0.01 * radius
            side.data.clip_end = 4.0 * (float(np.linalg.norm(eye - centre)) + radius)
        if patch is not None:
            made["highlight"] = _band_highlight(scene, ob, patch, colour, lift * radius)
    except Exception:
        remove_band_rig(scene, ob)
        raise
    if make_active:
        scene.camera = cam
    scene.frame_set(scene.frame_current)
    return made


def _camera(scene, ob, name: str, role: str, lens: float):
    data = bpy.data.cameras.new(name)
    data.lens = lens
    data.sensor_width = 36.0
    data.sensor_fit = "AUTO"
    return _child_object(name, data, ob, role, ob, scene)


def _band_highlight(scene, ob, patch, colour, lift: float):
    """The band's triangles as an object of their own, moved every frame onto the
    evaluated eversion and drawn as a thin two-sided shell in ``colour``."""
    faces, vertex_ids = patch
    me = bpy.data.meshes.new(f"{ob.name} band")
    me.vertices.add(len(vertex_ids))
    src = np.empty(len(ob.data.vertices) * 3, np.float32)
    ob.data.vertices.foreach_get("co", src)
    me.vertices.foreach_set("co", src.reshape(-1, 3)[vertex_ids].ravel())
    me.loops.add(faces.size)
    me.loops.foreach_set("vertex_index", faces.ravel())
    me.polygons.add(len(faces))
    me.polygons.foreach_set("loop_start", np.arange(0, faces.size, 3, dtype=np.int32))
    me.update(calc_edges=True)
    attr = me.attributes.new(SOURCE_ATTRIBUTE, "INT", "POINT")
    attr.data.foreach_set("value", vertex_ids.astype(np.int32))
    hl = _child_object(f"{ob.name} band", me, ob, "band highlight", ob, scene)
    mat = _emission_material(f"{ob.name} band colour", colour, "band highlight", ob)

    ng, gin, gout, ids = _node_group(f"{ob.name} band follows surface", "band highlight", ob,
                                     [("Lift", lift)])
    nodes, links = ng.nodes, ng.links
    info = nodes.new("GeometryNodeObjectInfo")
    info.transform_space = "RELATIVE"
    info.inputs["Object"].default_value = ob
    source = nodes.new("GeometryNodeInputNamedAttribute")
    source.data_type = "INT"
    source.inputs["Name"].default_value = SOURCE_ATTRIBUTE
    pos = nodes.new("GeometryNodeInputPosition")
    sample = nodes.new("GeometryNodeSampleIndex")
    sample.data_type, sample.domain = "FLOAT_VECTOR", "POINT"
    links.new(info.outputs["Geometry"], sample.inputs["Geometry"])
    links.new(pos.outputs[0], sample.inputs["Value"])
    links.new(source.outputs["Attribute"], sample.inputs["Index"])
    follow = nodes.new("GeometryNodeSetPosition")
    links.new(gin.outputs[0], follow.inputs["Geometry"])
    links.new(sample.outputs[0], follow.inputs["Position"])
    normal = nodes.new("GeometryNodeInputNormal")
    join = nodes.new("GeometryNodeJoinGeometry")
    for sign in (1.0, -1.0):  # one copy just off each side of the surface
        scale = nodes.new("ShaderNodeVectorMath")
        scale.operation = "SCALE"
        links.new(normal.outputs["Normal"], scale.inputs[0])
        if sign > 0:
            links.new(gin.outputs[ids["Lift"]], scale.inputs["Scale"])
        else:
            neg = nodes.new("ShaderNodeMath")
            neg.operation = "MULTIPLY"
            neg.inputs[1].default_value = -1.0
            links.new(gin.outputs[ids["Lift"]], neg.inputs[0])
            links.new(neg.outputs[0], scale.inputs["Scale"])
        off = nodes.new("GeometryNodeSetPosition")
        links.new(follow.outputs[0], off.inputs["Geometry"])
        links.new(scale.outputs["Vector"], off.inputs["Offset"])
        links.new(off.outputs[0], join.inputs[0])
    setmat = nodes.new("GeometryNodeSetMaterial")
    setmat.inputs["Material"].default_value = mat
    links.new(join.outputs[0], setmat.inputs["Geometry"])
    links.new(setmat.outputs[0], gout.inputs[0])
    _layout(ng)
    mod = hl.modifiers.new("Follow the surface", "NODES")
    mod.node_group = ng
    me.materials.append(mat)
    return hl


def _layout(ng) -> None:
    """Spread the nodes left to right in creation order (readable when opened)."""
    for i, node in enumerate(ng.nodes):
        node.location = (220 * (i % 8) - 900, -180 * (i // 8))


def find_band_cameras(scene, ob=None) -> tuple:
    """(top, side) camera objects of the band rig of ``ob`` (or the only one in ``scene``)."""
    tops = [o for o in scene.objects if o.get(ROLE) == "band top" and (ob is None or o.get(OWNER) == ob)]
    if len(tops) != 1:
        whose = f"of {ob.name!r} " if ob is not None else ""
        raise RigError(
            f"band view: found {len(tops)} band rigs {whose}in the scene; "
            "add one (or name the eversion object)"
        )
    owner = tops[0].get(OWNER)
    sides = [o for o in scene.objects if o.get(ROLE) == "band side" and o.get(OWNER) == owner]
    return tops[0], (sides[0] if sides else None)


def remove_band_rig(scene, ob) -> int:
    """Remove the band cameras, highlight and their data made for ``ob``; returns how many
    data-blocks went. The scene camera falls back to another camera when it was one of them."""
    was = scene.camera
    gone_cam = was is not None and was.get(ROLE) in BAND_ROLES and was.get(OWNER) == ob
    n = _remove_made(ob, BAND_ROLES)
    if gone_cam:
        others = [o for o in scene.objects if o.type == "CAMERA"]
        scene.camera = others[0] if others else None
    return n


def _render_to_pixels(scene, camera, path: str) -> np.ndarray:
    """Render ``camera`` into ``path`` and return (H, W, 4) float32 pixels, bottom row first."""
    scene.camera = camera
    scene.render.filepath = path
    bpy.ops.render.render(write_still=True, scene=scene.name)
    img = bpy.data.images.load(path, check_existing=False)
    try:
        w, h = img.size
        px = np.empty(w * h * 4, np.float32)
        img.pixels.foreach_get(px)
    finally:
        bpy.data.images.remove(img)
    return px.reshape(h, w, 4)


def render_side_by_side(scene, out_path: str, frame: int, ob=None, cameras=None) -> str:
    """Render the band's top view and the side view at ``frame`` and write one PNG with the
    two next to each other (top view on the left), twice the scene's width.

    ``cameras`` (top, side) overrides the rig found for ``ob``. Returns the absolute path.
    The scene's camera, frame and output path are restored.
    """
    frame = _check_frame("frame", frame)
    top, side = cameras if cameras is not None else find_band_cameras(scene, ob)
    if side is None:
        raise RigError("band view: the rig has no side camera; add it with the side view on")
    out_path = os.path.abspath(out_path)
    if not out_path.lower().endswith(".png"):
        raise RigError(f"output: {out_path!r} must end in .png")
    folder = os.path.dirname(out_path)
    os.makedirs(folder, exist_ok=True)
    if not os.access(folder, os.W_OK):
        raise RigError(f"output: cannot write to {folder!r}")
    keep = (scene.camera, scene.frame_current, scene.render.filepath)
    stem = f"{out_path[:-4]}.part{os.getpid()}"
    temps = [f"{stem}-top.png", f"{stem}-side.png", f"{stem}-both.png"]
    fmt = scene.render.image_settings
    keep_fmt = (fmt.file_format, fmt.color_mode)
    try:
        fmt.file_format, fmt.color_mode = "PNG", "RGBA"
        scene.frame_set(frame)
        halves = [_render_to_pixels(scene, cam, p) for cam, p in zip((top, side), temps)]
        both = np.concatenate(halves, axis=1)
        img = bpy.data.images.new("turnabout side by side", both.shape[1], both.shape[0],
                                  alpha=True)
        try:
            img.pixels.foreach_set(both.ravel())
            img.filepath_raw = temps[2]
            img.file_format = "PNG"
            img.save()
        finally:
            bpy.data.images.remove(img)
        os.replace(temps[2], out_path)
    finally:
        for p in temps:
            if os.path.exists(p):
                os.remove(p)
        fmt.file_format, fmt.color_mode = keep_fmt
        scene.camera, scene.render.filepath = keep[0], keep[2]
        scene.frame_set(keep[1])
    return out_path


# ----------------------------------------------------------------------------- level markers


def _check_levels(levels):
    try:
        frame, kind, position = levels.frame, levels.kind, levels.position
        count = np.asarray(levels.signed_count)
    except AttributeError:
        raise RigError(
            "levels: must be level points with frame, kind, position and signed_count"
        ) from None
    table = rig_math.marker_table(frame, kind, position, 0)
    if len(frame) and int(np.max(frame)) >= len(count):
        raise RigError(
            f"levels: a point is on frame {int(np.max(frame))}, the signed count covers "
            f"{len(count)} frames"
        )
    return table, count


def add_level_markers(
    scene,
    ob,
    levels,
    start_frame: int,
    *,
    glyph_size: float = 0.08,
    text: bool = True,
    camera=None,
    up=None,
):
    """Glyphs on the level points of every frame, the signed count as an animated property
    and (``text``) as a caption in the corner of ``camera`` (default the scene camera).

    levels : LevelPoints (frame (K,) int, kind (K,) of 1 dome / 2 bowl / 3 saddle,
    position (K, 3) object space, signed_count (F,), up (3,)); its frame 0 plays at scene
    frame ``start_frame``. ``glyph_size`` is the glyph's height as a fraction of the
    surface's radius (0-1]. Returns the marker object; any earlier markers of ``ob`` are
    replaced. Raises RigError (a ValueError) with nothing changed when an input is wrong.
    """
    _check_object(ob)
    start_frame = _check_frame("start frame", start_frame)
    glyph_size = rig_math.positive("glyph size", glyph_size, 1.0)
    (co, kf, kind, point_id), count = _check_levels(levels)
    up = rig_math.unit_up(getattr(levels, "up", (0.0, 0.0, 1.0)) if up is None else up)
    if camera is not None and getattr(camera, "type", None) != "CAMERA":
        raise RigError(f"camera: must be a camera object, got {camera!r}")
    camera = camera or scene.camera if text else None

    remove_level_markers(scene, ob)
    try:
        _, radius = _evaluated_bounds(scene, ob, [start_frame])
        markers = _marker_object(scene, ob, co, kf + start_frame, kind, point_id, up,
                                 glyph_size * radius)
        frames, values = rig_math.count_keys(count, start_frame)
        _count_property(ob, frames, values)
        if camera is not None:
            _count_text(scene, ob, camera, frames, values)
    except Exception:
        remove_level_markers(scene, ob)
        raise
    scene.frame_set(scene.frame_current)
    return markers


def _marker_object(scene, ob, co, frame, kind, point_id, up, size: float):
    me = bpy.data.meshes.new(f"{ob.name} level points")
    me.vertices.add(len(frame))
    me.vertices.foreach_set("co", co)
    for name, values in ((FRAME_ATTRIBUTE, frame), (KIND_ATTRIBUTE, kind),
                         (POINT_ATTRIBUTE, point_id)):
        me.attributes.new(name, "INT", "POINT").data.foreach_set("value", values)
    me.update()
    mk = _child_object(f"{ob.name} level points", me, ob, "level markers", ob, scene)
    mats = [
        _emission_material(f"{ob.name} {what} marker", colour, "level markers", ob)
        for what, colour in zip(("dome", "bowl", "saddle"), MARKER_COLOURS)
    ]
    ng, gin, gout, ids = _node_group(f"{ob.name} level markers", "level markers", ob,
                                     [("Glyph size", size)])
    nodes, links = ng.nodes, ng.links
    # keep the points of the scene's current frame
    time = nodes.new("GeometryNodeInputSceneTime")
    rnd = nodes.new("ShaderNodeMath")
    rnd.operation = "ROUND"
    links.new(time.outputs["Frame"], rnd.inputs[0])
    fattr = nodes.new("GeometryNodeInputNamedAttribute")
    fattr.data_type = "INT"
    fattr.inputs["Name"].default_value = FRAME_ATTRIBUTE
    same = nodes.new("FunctionNodeCompare")
    same.data_type, same.operation = "INT", "EQUAL"
    links.new(fattr.outputs["Attribute"], same.inputs[2])
    links.new(rnd.outputs[0], same.inputs[3])
    kattr = nodes.new("GeometryNodeInputNamedAttribute")
    kattr.data_type = "INT"
    kattr.inputs["Name"].default_value = KIND_ATTRIBUTE
    # the glyph of each kind (unit height, centred on the point) on that kind's points
    join = nodes.new("GeometryNodeJoinGeometry")
    rotation = rig_math.rotation_z_to(up).tolist()
    for kind_value, (glyph, mat) in enumerate(zip(_glyphs(nodes, links), mats), start=1):
        setmat = nodes.new("GeometryNodeSetMaterial")
        setmat.inputs["Material"].default_value = mat
        links.new(glyph, setmat.inputs["Geometry"])
        is_kind = nodes.new("FunctionNodeCompare")
        is_kind.data_type, is_kind.operation = "INT", "EQUAL"
        links.new(kattr.outputs["Attribute"], is_kind.inputs[2])
        is_kind.inputs[3].default_value = kind_value
        both = nodes.new("FunctionNodeBooleanMath")
        both.operation = "AND"
        links.new(same.outputs[0], both.inputs[0])
        links.new(is_kind.outputs[0], both.inputs[1])
        place = nodes.new("GeometryNodeInstanceOnPoints")
        links.new(gin.outputs[0], place.inputs["Points"])
        links.new(both.outputs[0], place.inputs["Selection"])
        links.new(setmat.outputs[0], place.inputs["Instance"])
        place.inputs["Rotation"].default_value = rotation
        links.new(gin.outputs[ids["Glyph size"]], place.inputs["Scale"])
        links.new(place.outputs[0], join.inputs[0])
    real = nodes.new("GeometryNodeRealizeInstances")
    links.new(join.outputs[0], real.inputs[0])
    links.new(real.outputs[0], gout.inputs[0])
    _layout(ng)
    mod = mk.modifiers.new("Level markers", "NODES")
    mod.node_group = ng
    for mat in mats:
        me.materials.append(mat)
    return mk


def _glyphs(nodes, links):
    """Output sockets of the three unit glyphs: dome (cone, tip up), bowl (cone, tip
    down), saddle (an upright cross of two slabs), each centred on the origin."""
    out = []
    for flip in (False, True):
        cone = nodes.new("GeometryNodeMeshCone")
        cone.inputs["Vertices"].default_value = 12
        cone.inputs["Radius Top"].default_value = 0.0
        cone.inputs["Radius Bottom"].default_value = 0.45
        cone.inputs["Depth"].default_value = 1.0
        if not flip:
            out.append(cone.outputs["Mesh"])
            continue
        turn = nodes.new("GeometryNodeTransform")
        turn.inputs["Rotation"].default_value = (math.pi, 0.0, 0.0)
        links.new(cone.outputs["Mesh"], turn.inputs["Geometry"])
        out.append(turn.outputs[0])
    join = nodes.new("GeometryNodeJoinGeometry")
    for angle in (0.25 * math.pi, -0.25 * math.pi):
        slab = nodes.new("GeometryNodeMeshCube")
        slab.inputs["Size"].default_value = (1.0, 0.26, 0.6)
        turn = nodes.new("GeometryNodeTransform")
        turn.inputs["Rotation"].default_value = (0.0, 0.0, angle)
        links.new(slab.outputs["Mesh"], turn.inputs["Geometry"])
        links.new(turn.outputs[0], join.inputs[0])
    out.append(join.outputs[0])
    return out


def _count_property(ob, frames, values) -> None:
    ob[COUNT_PROP] = int(values[0])
    ob.id_properties_ui(COUNT_PROP).update(
        description="Signed count of the level points at this frame: domes and bowls count "
        "+1, a saddle 1 - (sign changes)/2; the degree of the Gauss map (1 for a sphere)",
    )
    if ob.animation_data is None or ob.animation_data.action is None:
        action = _new_action(ob, f"{ob.name} signed count", "level count", ob)
    else:
        action = ob.animation_data.action
    _key(action, ob, f'["{COUNT_PROP}"]', 0, frames, np.rint(values), 0)


def _drop_count_property(ob) -> None:
    from bpy_extras import anim_utils

    ad = ob.animation_data
    action = ad.action if ad is not None else None
    if action is not None:
        if action.get(ROLE) == "level count" and action.get(OWNER) == ob:
            ad.action = None
            bpy.data.actions.remove(action)
        else:
            bag = anim_utils.action_get_channelbag_for_slot(action, ad.action_slot)
            fc = bag.fcurves.find(f'["{COUNT_PROP}"]') if bag is not None else None
            if fc is not None:
                bag.fcurves.remove(fc)
    if COUNT_PROP in ob:
        del ob[COUNT_PROP]


def _count_text(scene, ob, camera, frames, values):
    """Caption "signed count N" in the lower-left corner of ``camera``, animated."""
    depth = max(3.0 * camera.data.clip_start, 0.05)
    corners = np.array([tuple(v) for v in camera.data.view_frame(scene=scene)])
    origin, height = rig_math.text_corner(corners, depth)
    me = bpy.data.meshes.new(f"{ob.name} count text")
    tx = _child_object(f"{ob.name} count text", me, camera, "level text", ob, scene)
    tx.location = origin.tolist()
    for flag in ("visible_shadow", "visible_diffuse", "visible_glossy", "visible_transmission",
                 "visible_volume_scatter"):
        setattr(tx, flag, False)
    mat = _emission_material(f"{ob.name} count text", TEXT_COLOUR, "level text", ob)
    ng, gin, gout, ids = _node_group(f"{ob.name} count text", "level text", ob,
                                     [("Count", float(values[0])), ("Height", height)])
    nodes, links = ng.nodes, ng.links
    num = nodes.new("FunctionNodeValueToString")
    num.inputs["Decimals"].default_value = 0
    links.new(gin.outputs[ids["Count"]], num.inputs["Value"])
    label = nodes.new("FunctionNodeInputString")
    label.string = "signed count"
    join = nodes.new("GeometryNodeStringJoin")
    join.inputs["Delimiter"].default_value = " "
    # a multi-input socket reads its newest link first
    links.new(num.outputs[0], join.inputs["Strings"])
    links.new(label.outputs[0], join.inputs["Strings"])
    curves = nodes.new("GeometryNodeStringToCurves")
    links.new(join.outputs[0], curves.inputs["String"])
    links.new(gin.outputs[ids["Height"]], curves.inputs["Size"])
    real = nodes.new("GeometryNodeRealizeInstances")
    links.new(curves.outputs["Curve Instances"], real.inputs[0])
    fill = nodes.new("GeometryNodeFillCurve")
    links.new(real.outputs[0], fill.inputs["Curve"])
    setmat = nodes.new("GeometryNodeSetMaterial")
    setmat.inputs["Material"].default_value = mat
    links.new(fill.outputs[0], setmat.inputs["Geometry"])
    links.new(setmat.outputs[0], gout.inputs[0])
    _layout(ng)
    mod = tx.modifiers.new("Count text", "NODES")
    mod.node_group = ng
    me.materials.append(mat)
    action = _new_action(tx, f"{tx.name} count", "level text", ob)
    _key(action, tx, f'modifiers["{mod.name}"]["{ids["Count"]}"]', 0, frames, np.rint(values), 0)
    return tx


def remove_level_markers(scene, ob) -> int:
    """Remove the markers, caption, their data and the count property made for ``ob``;
    returns how many data-blocks went."""
    _drop_count_property(ob)
    return _remove_made(ob, LEVEL_ROLES)


# ----------------------------------------------------------------------------- from a bake


def add_band_rig_for(scene, ob, which: int, count: int = 8, width=None, up=(0.0, 0.0, 1.0),
                     progress=None, **options) -> dict:
    """Band rig for band ``which`` of ``count`` latitude bands of a baked eversion: reads
    the evaluated frames, tracks the band with the core and calls :func:`add_band_rig`.
    Every input is checked before anything is made."""
    from turnabout.views import slices

    _check_object(ob)
    start, n_frames = baked_frames(ob)
    up = rig_math.unit_up(up)
    tris = baked_triangles(ob)
    from .bake import PROP_TAG

    n_lon, n_lat = json.loads(ob[PROP_TAG])["mesh"]
    mesh = _baked_mesh(ob, int(n_lon), int(n_lat))
    bands = slices.latitude_bands(count, width)
    vertex_ids = slices.band_vertices(mesh, bands, which)
    faces = slices.band_faces(mesh, bands, which)
    pos = baked_positions(scene, ob, vertex_ids, progress)
    track = slices.band_track(pos, np.arange(len(vertex_ids)), up)
    return add_band_rig(scene, ob, track, start, faces, triangles=tris, **options)


def _baked_mesh(ob, n_lon: int, n_lat: int):
    """The SphereMesh of a bake, its longitudes and latitudes read back from the UV map
    (u = theta / 2 pi, v = (lat + pi / 2) / pi), since a band is picked by latitude."""
    from turnabout.mesh import SphereMesh

    me = ob.data
    layer = me.uv_layers.get("UVMap")
    if layer is None or len(me.vertices) != n_lon * n_lat + 2:
        raise RigError(f"object: {ob.name!r} does not match its build settings; re-build it")
    uv = np.empty(len(me.loops) * 2, np.float32)
    layer.data.foreach_get("uv", uv)
    vi = np.empty(len(me.loops), np.int32)
    me.loops.foreach_get("vertex_index", vi)
    per_vertex = np.zeros((len(me.vertices), 2), np.float64)
    per_vertex[vi] = uv.reshape(-1, 2)
    theta = per_vertex[1 : 1 + n_lon, 0] * 2 * np.pi
    lat = per_vertex[1 + n_lon * np.arange(n_lat), 1] * np.pi - np.pi / 2
    return SphereMesh(theta=theta, lat=lat)


def add_level_markers_for(scene, ob, up=(0.0, 0.0, 1.0), progress=None, **options):
    """Level markers for a baked eversion: reads the evaluated frames, finds the level
    points with the core and calls :func:`add_level_markers`."""
    from turnabout.views.levels import level_points

    _check_object(ob)
    start, _ = baked_frames(ob)
    up = rig_math.unit_up(up)
    tris = baked_triangles(ob)
    pos = baked_positions(scene, ob, None, progress)
    levels = level_points(pos, tris, up)
    return add_level_markers(scene, ob, levels, start, **options)
