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
``turnabout.views.rig_math``, the node trees and materials from ``view_rig_nodes``; this
module checks the inputs, places the cameras and reads the baked frames.
"""

from __future__ import annotations

import json
import math
import os

import bpy
import numpy as np

from turnabout.views import rig_math
from turnabout.views.rig_math import RigError

from . import bake
from . import view_rig_nodes as rig_nodes
from .view_rig_nodes import (  # noqa: F401  (names the add-on and tests read from here)
    BAND_COLOUR,
    MARKER_COLOURS,
    OWNER,
    POINT_ATTRIBUTE,
    ROLE,
)

BAND_ROLES = ("band top", "band side", "band highlight")
LEVEL_ROLES = ("level markers", "level text")  # the count's action: _drop_count_property
COUNT_PROP = "turnabout_signed_count"
PREVIOUS_CAMERA = "turnabout_previous_camera"


# ----------------------------------------------------------------------------- shared


def _check_object(ob) -> None:
    if ob is None or getattr(ob, "type", None) != "MESH":
        what = "nothing" if ob is None else f"{getattr(ob, 'name', ob)!r} ({ob.type.lower()})"
        raise RigError(f"object: must be a mesh object such as a baked eversion, got {what}")


def _check_frame(name: str, value) -> int:
    try:
        whole = not isinstance(value, bool) and int(value) == value
    except (TypeError, ValueError, OverflowError):
        whole = False
    if not whole or abs(int(value)) > 1_048_574:  # Blender's frame range
        raise RigError(f"{name}: must be a whole frame number, got {value!r}")
    return int(value)


def _made_for(owner, roles) -> list:
    """Every data-block a rig of ``roles`` made for ``owner``, objects first."""
    found = []
    for kind in ("objects", "cameras", "lights", "meshes", "node_groups", "materials", "actions"):
        for idb in getattr(bpy.data, kind):
            if idb.get(ROLE) in roles and idb.get(OWNER) == owner:
                found.append((kind, idb))
    return found


def _remove_made(owner, roles) -> int:
    made = _made_for(owner, roles)
    for kind, idb in made:  # objects come first, so their data is free when reached
        getattr(bpy.data, kind).remove(idb)
    return len(made)


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


def baked_positions(scene, ob, vertex_ids=None, progress=None, evaluated=False) -> np.ndarray:
    """Vertex positions (object space) of every baked frame.

    Returns (F, V, 3) float32, or (F, len(vertex_ids), 3) when ``vertex_ids`` is given.
    Read straight from the stored shapes when the bake is there as absolute shape keys
    (blended between keys as Blender does) or as its point-cache file; otherwise, or with
    ``evaluated``, through the depsgraph frame by frame (the scene frame is restored).
    """
    start, count = baked_frames(ob)
    sel = None if vertex_ids is None else np.asarray(vertex_ids, np.int64)
    if not evaluated:
        stored = _stored_positions(ob, count, sel)
        if stored is not None:
            if progress is not None:
                progress(count, count)
            return stored
    n = len(ob.data.vertices)
    keep = scene.frame_current
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


def _stored_positions(ob, count: int, sel):
    """Every frame from the bake's own storage, or None when it is not as the bake left it."""
    from turnabout.baking.plan import key_offsets_for

    from .bake import MODIFIER_NAME, PROP_TAG

    n = len(ob.data.vertices)
    data = json.loads(ob[PROP_TAG])
    key = ob.data.shape_keys
    if data.get("mode") == "SHAPE_KEYS" and key is not None and not key.use_relative:
        offsets = key_offsets_for(count, int(data.get("key_step", 1)))
        blocks = key.key_blocks
        if len(blocks) != len(offsets):
            return None
        m = n if sel is None else len(sel)
        shapes = np.empty((len(blocks), m, 3), np.float32)
        buf = np.empty(n * 3, np.float32)
        for j, kb in enumerate(blocks):
            kb.points.foreach_get("co", buf)
            shapes[j] = buf.reshape(-1, 3) if sel is None else buf.reshape(-1, 3)[sel]
        if len(offsets) == count:
            return shapes
        return rig_math.blend_keys(shapes, offsets, count)
    mod = ob.modifiers.get(MODIFIER_NAME)
    if data.get("mode") == "POINT_CACHE" and mod is not None and mod.type == "MESH_CACHE":
        try:
            cache = rig_math.read_pc2(bpy.path.abspath(mod.filepath), n, count)
        except (OSError, RigError):
            return None
        return np.array(cache if sel is None else cache[:, sel], np.float32)
    return None


# ----------------------------------------------------------------------------- band rig


def _check_track(track) -> int:
    try:
        c, e, a = (
            np.asarray(getattr(track, k), np.float64) for k in ("centroid", "extent", "axes")
        )
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
    cutaway: bool = True,
    make_active: bool = True,
) -> dict:
    """Cameras that follow one latitude band, and its highlight; returns the objects made.

    track : a BandTrack (centroid (F, 3), extent (F,), axes (F, 3, 3), object space) whose
    frame 0 plays at scene frame ``start_frame``. band_faces : (M,) bool over the
    surface's triangles in the core's face order (``triangles`` (M, 3) int, read from the
    object's build settings when omitted), or None for no highlight. ``lens`` in mm
    (36 mm sensor), ``margin`` >= 1 the room left around the band, ``elevation`` the side
    camera's height above the horizontal in radians, ``lift`` the highlight's offset off
    the surface as a fraction of the surface's radius. With ``cutaway`` the top camera's
    clip start is keyframed to just above the band, so sheets of the surface that pass
    between the camera and the band are cut away instead of hiding it.

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
    elevation = rig_math.angle("elevation", elevation, 0.5 * math.pi)
    colour = rig_math.colour_rgba("colour", colour)
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
        action = rig_nodes.new_action(cam, f"{cam.name} path", "band top", ob)
        for i in range(3):
            rig_nodes.key(action, cam, "location", i, frames, locations[:, i], 1)
        for i in range(4):
            rig_nodes.key(action, cam, "rotation_quaternion", i, frames, quats[:, i], 1)
        if cutaway:  # clip away whatever lies between the camera and the band
            extent = np.asarray(track.extent, np.float64)
            near = rig_math.cutaway_distances(
                distances, _band_top(track, extent), 0.05 * extent + 2 * lift * radius
            )
            lens_action = rig_nodes.new_action(cam.data, f"{cam.name} cutaway", "band top", ob)
            rig_nodes.key(lens_action, cam.data, "clip_start", 0, frames, near, 1)
        if side_view:
            eye, q = rig_math.side_view(centre, radius, up, half, elevation, margin)
            made["side"] = side = _camera(scene, ob, f"{ob.name} band side", "band side", lens)
            side.rotation_mode = "QUATERNION"
            side.location, side.rotation_quaternion = eye.tolist(), q.tolist()
            side.data.clip_start = 0.01 * radius
            side.data.clip_end = 4.0 * (float(np.linalg.norm(eye - centre)) + radius)
        if patch is not None:
            made["highlight"] = rig_nodes.band_highlight(scene, ob, patch, colour, lift * radius)
    except Exception:
        remove_band_rig(scene, ob)
        raise
    if scene.camera is not None:
        cam[PREVIOUS_CAMERA] = scene.camera  # given back when the rig goes
    if make_active:
        scene.camera = cam
    scene.frame_set(scene.frame_current)
    return made


def _band_top(track, extent: np.ndarray) -> np.ndarray:
    """(F,) height of the band's highest point above its centroid: from the track's
    ``rise`` (heights of the band's outermost points, the highest among them) when it has
    one, else the extent (an upper bound)."""
    rise = getattr(track, "rise", None)
    if rise is None:
        return extent
    rise = np.asarray(rise, np.float64)
    top = np.where(np.isfinite(rise), rise, -np.inf).max(axis=1)
    return np.where(np.isfinite(top), np.minimum(top, extent), extent)


def _camera(scene, ob, name: str, role: str, lens: float):
    data = bpy.data.cameras.new(name)
    data.lens = lens
    data.sensor_width = 36.0
    data.sensor_fit = "AUTO"
    return rig_nodes.child_object(name, data, ob, role, ob, scene)


def find_band_cameras(scene, ob=None) -> tuple:
    """(top, side) camera objects of the band rig of ``ob`` (or the only one in ``scene``)."""
    tops = [
        o for o in scene.objects if o.get(ROLE) == "band top" and (ob is None or o.get(OWNER) == ob)
    ]
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
    data-blocks went. When one of its cameras was the scene camera, the camera that was the
    scene camera before the rig comes back (or another camera, or none)."""
    was = scene.camera
    gone_cam = was is not None and was.get(ROLE) in BAND_ROLES and was.get(OWNER) == ob
    tops = [o for o in bpy.data.objects if o.get(ROLE) == "band top" and o.get(OWNER) == ob]
    before = tops[0].get(PREVIOUS_CAMERA) if tops else None
    n = _remove_made(ob, BAND_ROLES)
    if gone_cam:
        if before is not None and scene.objects.get(before.name) == before:
            scene.camera = before
        else:
            others = [o for o in scene.objects if o.type == "CAMERA"]
            scene.camera = others[0] if others else None
    return n


def _render_to_pixels(scene, camera, path: str) -> np.ndarray:
    """Render ``camera`` into ``path`` and return (H, W, 4) float32 pixels, bottom row first."""
    from .headless import read_png

    scene.camera = camera
    scene.render.filepath = path
    bpy.ops.render.render(write_still=True, scene=scene.name)
    return read_png(path)[::-1]


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
    from turnabout.output import OutputError, atomic_write, check_output_file

    out_path = os.path.abspath(out_path)
    if not out_path.lower().endswith(".png"):
        raise RigError(f"output: {out_path!r} must end in .png")
    try:
        check_output_file(out_path, "output")
    except OutputError as exc:
        raise RigError(str(exc)) from None
    keep = (scene.camera, scene.frame_current, scene.render.filepath)
    stem = f"{out_path[:-4]}.part{os.getpid()}"
    temps = [f"{stem}-top.png", f"{stem}-side.png"]
    fmt = scene.render.image_settings
    keep_fmt = (fmt.file_format, fmt.color_mode)
    try:
        fmt.file_format, fmt.color_mode = "PNG", "RGBA"
        scene.frame_set(frame)
        halves = [
            _render_to_pixels(scene, cam, p) for cam, p in zip((top, side), temps[:2], strict=True)
        ]
        both = np.concatenate(halves, axis=1)
        img = bpy.data.images.new(
            "turnabout side by side", both.shape[1], both.shape[0], alpha=True
        )
        try:
            img.pixels.foreach_set(both.ravel())
            img.file_format = "PNG"

            def save(tmp: str) -> None:
                img.filepath_raw = tmp
                img.save()

            atomic_write(out_path, save, suffix=".png")
        finally:
            bpy.data.images.remove(img)
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
        markers = rig_nodes.marker_object(
            scene, ob, co, kf + start_frame, kind, point_id, up, glyph_size * radius
        )
        frames, values = rig_math.count_keys(count, start_frame)
        _count_property(ob, frames, values)
        if camera is not None:
            rig_nodes.count_text(scene, ob, camera, frames, values)
    except Exception:
        remove_level_markers(scene, ob)
        raise
    scene.frame_set(scene.frame_current)
    return markers


def _count_property(ob, frames, values) -> None:
    ob[COUNT_PROP] = int(values[0])
    ob.id_properties_ui(COUNT_PROP).update(
        description="Signed count of the level points at this frame: domes and bowls count "
        "+1, a saddle 1 - (sign changes)/2; the degree of the Gauss map (1 for a sphere)",
    )
    if ob.animation_data is None or ob.animation_data.action is None:
        action = rig_nodes.new_action(ob, f"{ob.name} signed count", "level count", ob)
    else:
        action = ob.animation_data.action
    rig_nodes.key(action, ob, f'["{COUNT_PROP}"]', 0, frames, np.rint(values), 0)


def _drop_count_property(ob) -> None:
    """Remove the count's F-curve (and its action when the markers made it and nothing else
    is left in it) and the property."""
    ad = ob.animation_data
    action = ad.action if ad is not None else None
    if action is not None:
        curves = bake.animated_fcurves(ad)
        fc = curves.find(f'["{COUNT_PROP}"]') if curves is not None else None
        if fc is not None:
            curves.remove(fc)
        if action.get(ROLE) == "level count" and action.get(OWNER) == ob:
            if curves is None or len(curves) == 0:
                ad.action = None
                bpy.data.actions.remove(action)
            else:  # keys of the user's own live in it now: it is theirs
                del action[ROLE], action[OWNER]
    if COUNT_PROP in ob:
        del ob[COUNT_PROP]


def remove_level_markers(scene, ob) -> int:
    """Remove the markers, caption, their data and the count property made for ``ob``;
    returns how many data-blocks went."""
    _drop_count_property(ob)
    return _remove_made(ob, LEVEL_ROLES)


# ----------------------------------------------------------------------------- from a bake


def add_band_rig_for(
    scene, ob, which: int, count: int = 8, width=None, up=(0.0, 0.0, 1.0), progress=None, **options
) -> dict:
    """Band rig for band ``which`` of ``count`` latitude bands of a baked eversion: reads
    the evaluated frames, tracks the band with the core and calls :func:`add_band_rig`.
    Every input is checked before anything is made."""
    from turnabout.views import slices

    _check_object(ob)
    start, n_frames = baked_frames(ob)
    up = rig_math.unit_up(up)
    tris = baked_triangles(ob)
    from .view_objects import eversion_info, sphere_of

    mesh = sphere_of(ob, eversion_info(ob))
    bands = slices.latitude_bands(count, width)
    vertex_ids = slices.band_vertices(mesh, bands, which)
    faces = slices.band_faces(mesh, bands, which)
    pos = baked_positions(scene, ob, vertex_ids, progress)
    track = slices.band_track(pos, np.arange(len(vertex_ids)), up)
    return add_band_rig(scene, ob, track, start, faces, triangles=tris, **options)


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
