"""Views of a baked eversion as native Blender data: parts, build-up stills, reveal, stripes.

How the views share the one bake:

* **Parts / reveal**: one *view object* per eversion that uses the eversion's own mesh
  datablock (``view.data is ob.data``), so the same shape keys play it (a point-cache bake
  gets a copy of the Mesh Cache modifier reading the same file). Three face attributes are
  written once on that mesh from the core: ``turnabout_part`` (int, the part label),
  ``turnabout_tile`` (int, which copy of the fundamental piece) and, for a reveal,
  ``turnabout_reveal`` (float, the reveal value of each face). A geometry-nodes modifier
  with the view's own small node group deletes the faces not chosen: two Index Switch
  nodes (one boolean per part label, one per tile) and a comparison of the reveal value
  with a keyframed *Reveal* input. Switching a view only changes those booleans.
* **Stills**: a shape-key bake evaluates per mesh datablock at the scene's time, so a
  per-object time offset would need a second copy of every key. Each key moment is taken
  instead as its own small static mesh (``bpy.data.meshes.new_from_object`` of the
  evaluated surface at that frame): K stills cost K meshes, not a second bake.
* **Stripes**: nodes in the two-sided material that replace the outer colour with bands
  of world height (Geometry > Position z / spacing -> fraction -> step -> mix).

Everything is modifiers, node groups, keyframes and materials: a saved .blend plays and
renders without the add-on.
"""

from __future__ import annotations

import json

import bpy
import numpy as np

from . import bake
from .view_options import (
    STRIPE_A,
    STRIPE_B,
    PartsChoice,
    ViewOptionError,
    polygon_values,
)

PART_ATTR = "turnabout_part"
TILE_ATTR = "turnabout_tile"
REVEAL_ATTR = "turnabout_reveal"
VIEW_TAG = "turnabout_view"  # on view objects: JSON {"kind", "source", ...}
HIDDEN_TAG = "turnabout_hidden_by_view"  # on the eversion while a view hides it
FILTER_MOD = "Turnabout view"
REVEAL_INPUT = "Reveal"
STILLS_SUFFIX = " stills"
SHOW_ALL = 1.5  # a Reveal input above every reveal value (they lie in [0, 1])

# node names in the filter group and in the material
N_PARTS, N_TILES = "Parts shown", "Tiles shown"
N_STRIPES = "Height stripes"
N_STRIPE_A, N_STRIPE_B, N_STRIPE_SCALE = "Stripe colour A", "Stripe colour B", "Stripe spacing"


# a view that cannot be made: the same error as a bad view option (one name for both)
ViewError = ViewOptionError


# ----------------------------------------------------------------------------- the eversion


def eversion_info(ob) -> dict:
    """Build settings of a Turnabout eversion object; ViewError for anything else."""
    if ob is None:
        raise ViewError("object: no active object; select a Turnabout eversion")
    if not bake.is_eversion_object(ob):
        raise ViewError(f"object: {ob.name!r} is not a Turnabout eversion (bake one first)")
    try:
        data = json.loads(ob[bake.PROP_TAG])
        strips = int(data["controls"]["strips"])
        n_lon, n_lat = (int(v) for v in data["mesh"])
    except (ValueError, KeyError, TypeError):
        raise ViewError(f"object: {ob.name!r} has unreadable build settings") from None
    want = n_lon * n_lat + 2
    if len(ob.data.vertices) != want or len(ob.data.polygons) != n_lon * (n_lat + 1):
        raise ViewError(f"object: {ob.name!r} no longer has the mesh it was baked with")
    data.update(strips=strips, n_lon=n_lon, n_lat=n_lat)
    return data


def sphere_of(ob, info: dict):
    """The core SphereMesh of a baked object, read back from its UV map.

    The bake's UVs are u = theta / 2 pi, v = (lat + pi / 2) / pi; a uniform grid is
    recognised and rebuilt exactly, any other spacing is taken from the UVs (float32).
    """
    from turnabout.mesh import SphereMesh, uniform_sphere_mesh

    me = ob.data
    n_lon, n_lat = info["n_lon"], info["n_lat"]
    layer = me.uv_layers.get("UVMap")
    if layer is None:
        raise ViewError(f"object: {ob.name!r} lost its UV map 'UVMap' (the views read it)")
    uv = np.empty(len(me.loops) * 2, np.float32)
    layer.data.foreach_get("uv", uv)
    vid = np.empty(len(me.loops), np.int32)
    me.loops.foreach_get("vertex_index", vid)
    per_vertex = np.zeros((len(me.vertices), 2), np.float64)
    per_vertex[vid] = uv.reshape(-1, 2)
    theta = per_vertex[1 : 1 + n_lon, 0] * (2 * np.pi)
    lat = per_vertex[1 + np.arange(n_lat) * n_lon, 1] * np.pi - np.pi / 2
    uniform = uniform_sphere_mesh(n_lon, n_lat)
    if np.allclose(theta, uniform.theta, atol=1e-5) and np.allclose(lat, uniform.lat, atol=1e-5):
        return uniform
    return SphereMesh(theta=theta, lat=lat)


def face_tables(ob, info: dict):
    """Per-polygon part labels and tile indices of the eversion, from the core.

    Returns (label (P,) int32, tile (P,) int32, parts) with P polygons of the add-on's mesh.
    """
    from turnabout.views.parts import surface_parts, symmetry_face_maps

    sphere = sphere_of(ob, info)
    n = info["strips"]
    parts = surface_parts(sphere, n)
    piece = np.flatnonzero(parts.fundamental_piece())
    maps = symmetry_face_maps(sphere, n)
    tile = np.full(parts.label.shape[0], -1, np.int64)
    for g in range(maps.shape[0]):
        tile[maps[g][piece]] = g
    if (tile < 0).any():
        raise ViewError("tiles: the copies of the fundamental piece do not cover the surface")
    label = polygon_values(info["n_lon"], info["n_lat"], parts.label).astype(np.int32)
    return label, polygon_values(info["n_lon"], info["n_lat"], tile).astype(np.int32), parts


def _write_face_attribute(me, name: str, kind: str, values: np.ndarray) -> None:
    attr = me.attributes.get(name)
    if attr is not None and (attr.data_type != kind or attr.domain != "FACE"):
        me.attributes.remove(attr)
        attr = None
    if attr is None:
        attr = me.attributes.new(name, kind, "FACE")
    attr.data.foreach_set("value", values)
    me.update()


def ensure_part_attributes(ob, label: np.ndarray, tile: np.ndarray) -> None:
    """Write the part and tile attributes on the shared mesh (once; rewritten if changed)."""
    me = ob.data
    for name, values in ((PART_ATTR, label), (TILE_ATTR, tile)):
        attr = me.attributes.get(name)
        if attr is not None and attr.data_type == "INT" and attr.domain == "FACE":
            have = np.empty(len(me.polygons), np.int32)
            attr.data.foreach_get("value", have)
            if np.array_equal(have, values):
                continue
        _write_face_attribute(me, name, "INT", values)


# ----------------------------------------------------------------------------- filter nodes


def _new_filter_group(name: str, n_parts: int, n_tiles: int):
    """A node group that keeps chosen parts and tiles and faces already revealed."""
    ng = bpy.data.node_groups.new(name, "GeometryNodeTree")
    ng.interface.new_socket("Geometry", in_out="INPUT", socket_type="NodeSocketGeometry")
    ng.interface.new_socket("Geometry", in_out="OUTPUT", socket_type="NodeSocketGeometry")
    sock = ng.interface.new_socket(REVEAL_INPUT, in_out="INPUT", socket_type="NodeSocketFloat")
    sock.default_value = SHOW_ALL
    sock.description = "Faces whose reveal value is below this are shown (keyframe it)"
    nodes, links = ng.nodes, ng.links
    gin = nodes.new("NodeGroupInput")
    gout = nodes.new("NodeGroupOutput")

    def switch(attr_name: str, count: int, node_name: str, y: float):
        attr = nodes.new("GeometryNodeInputNamedAttribute")
        attr.data_type = "INT"
        attr.inputs["Name"].default_value = attr_name
        sw = nodes.new("GeometryNodeIndexSwitch")
        sw.name = sw.label = node_name
        sw.data_type = "BOOLEAN"
        while len(sw.index_switch_items) < count:
            sw.index_switch_items.new()
        for k in range(count):
            sw.inputs[k + 1].default_value = True
        links.new(attr.outputs["Attribute"], sw.inputs[0])
        attr.location, sw.location = (-600, y), (-350, y)
        return sw

    parts = switch(PART_ATTR, n_parts, N_PARTS, 300)
    tiles = switch(TILE_ATTR, n_tiles, N_TILES, 0)
    rev = nodes.new("GeometryNodeInputNamedAttribute")
    rev.data_type = "FLOAT"
    rev.inputs["Name"].default_value = REVEAL_ATTR
    less = nodes.new("FunctionNodeCompare")
    less.data_type = "FLOAT"
    less.operation = "LESS_THAN"
    links.new(rev.outputs["Attribute"], less.inputs["A"])
    links.new(gin.outputs[REVEAL_INPUT], less.inputs["B"])
    both = nodes.new("FunctionNodeBooleanMath")
    both.operation = "AND"
    links.new(parts.outputs[0], both.inputs[0])
    links.new(tiles.outputs[0], both.inputs[1])
    keep = nodes.new("FunctionNodeBooleanMath")
    keep.operation = "AND"
    links.new(both.outputs[0], keep.inputs[0])
    links.new(less.outputs[0], keep.inputs[1])
    drop = nodes.new("FunctionNodeBooleanMath")
    drop.operation = "NOT"
    links.new(keep.outputs[0], drop.inputs[0])
    delete = nodes.new("GeometryNodeDeleteGeometry")
    delete.domain = "FACE"
    links.new(gin.outputs["Geometry"], delete.inputs["Geometry"])
    links.new(drop.outputs[0], delete.inputs["Selection"])
    links.new(delete.outputs["Geometry"], gout.inputs["Geometry"])
    rev.location, less.location = (-600, -300), (-350, -300)
    gin.location, both.location, keep.location = (-600, -500), (-150, 150), (0, 0)
    drop.location, delete.location, gout.location = (150, 0), (350, 0), (550, 0)
    return ng


def reveal_socket_id(ng) -> str:
    return next(
        s.identifier
        for s in ng.interface.items_tree
        if getattr(s, "in_out", None) == "INPUT" and s.name == REVEAL_INPUT
    )


def set_choice(view, choice: PartsChoice) -> None:
    """Switch the parts and tiles a view object shows (the cheap part: node defaults only)."""
    ng = view.modifiers[FILTER_MOD].node_group
    for node_name, keep in ((N_PARTS, choice.parts), (N_TILES, choice.tiles)):
        sw = ng.nodes[node_name]
        for k, on in enumerate(keep):
            sock = sw.inputs[k + 1]
            if sock.default_value != bool(on):
                sock.default_value = bool(on)
    data = json.loads(view[VIEW_TAG])
    data["parts"] = choice.text
    view[VIEW_TAG] = json.dumps(data)


# ----------------------------------------------------------------------------- view objects


def view_object_of(ob):
    """The parts/reveal view object of eversion ``ob``, or None."""
    for other in bpy.data.objects:
        tag = other.get(VIEW_TAG)
        if tag and other.data is ob.data:
            data = json.loads(tag)
            if data.get("kind") == "parts" and data.get("source") == ob.name:
                return other
    return None


def _hide_source(ob) -> None:
    if HIDDEN_TAG not in ob:
        ob[HIDDEN_TAG] = json.dumps([ob.hide_render, ob.hide_viewport])
    ob.hide_render = True
    ob.hide_viewport = True


def _show_source(ob) -> None:
    if HIDDEN_TAG in ob:
        ob.hide_render, ob.hide_viewport = json.loads(ob[HIDDEN_TAG])
        del ob[HIDDEN_TAG]


def _copy_cache_modifier(ob, view) -> None:
    src = ob.modifiers.get(bake.MODIFIER_NAME)
    if src is None or src.type != "MESH_CACHE":
        return
    mod = view.modifiers.new(bake.MODIFIER_NAME, "MESH_CACHE")
    for prop in src.bl_rna.properties:
        if not prop.is_readonly and prop.identifier not in ("name", "show_expanded"):
            setattr(mod, prop.identifier, getattr(src, prop.identifier))


def make_parts_view(scene, ob, choice: PartsChoice, info: dict | None = None):
    """Show ``choice`` of eversion ``ob`` through its view object (made on first use).

    All checks run before any Blender data changes; ViewError when ``choice`` was read for
    another strip count. Returns the view object.
    """
    info = info or eversion_info(ob)
    if choice.strips != info["strips"]:
        raise ViewError(
            f"parts: chosen for {choice.strips} strips but {ob.name!r} has {info['strips']}"
        )
    view = view_object_of(ob)
    if view is None:
        label, tile, _ = face_tables(ob, info)  # the core work, before any data is made
        ensure_part_attributes(ob, label, tile)
        view = bpy.data.objects.new(f"{ob.name} view", ob.data)
        for coll in ob.users_collection:
            coll.objects.link(view)
        view.matrix_world = ob.matrix_world.copy()
        view[VIEW_TAG] = json.dumps({"kind": "parts", "source": ob.name, "parts": "all"})
        _copy_cache_modifier(ob, view)
        mod = view.modifiers.new(FILTER_MOD, "NODES")
        n = info["strips"]
        mod.node_group = _new_filter_group(f"{view.name} filter", 2 * n + 2, 2 * n)
    set_choice(view, choice)
    _hide_source(ob)
    return view


def add_reveal(scene, ob, by: str, count, frames: tuple[int, int], info: dict | None = None):
    """Faces of ``ob`` appear in reveal order (``by`` = "band" or "part") between
    ``frames`` (first, last): a keyframed Reveal input of the view object's filter."""
    from turnabout.views.reveal import reveal_order

    info = info or eversion_info(ob)
    a, b = (int(f) for f in frames)
    if not a < b:
        raise ViewError(f"reveal frames: the first must come before the last, got {a}-{b}")
    if by not in ("band", "part"):
        raise ViewError(f"reveal: must be band or part, got {by!r}")
    sphere = sphere_of(ob, info)
    try:
        order = reveal_order(sphere, info["strips"], by=by, count=count)
    except ValueError as exc:
        raise ViewError(f"reveal: {exc}") from None
    values = polygon_values(info["n_lon"], info["n_lat"], order).astype(np.float32)
    view = view_object_of(ob)
    if view is None:
        from .view_options import parse_parts

        view = make_parts_view(scene, ob, parse_parts("all", info["strips"]), info)
    _write_face_attribute(ob.data, REVEAL_ATTR, "FLOAT", values)
    mod = view.modifiers[FILTER_MOD]
    path = f'modifiers["{FILTER_MOD}"]["{reveal_socket_id(mod.node_group)}"]'
    if view.animation_data is None:
        view.animation_data_create()
    if view.animation_data.action is None:
        view.animation_data.action = bpy.data.actions.new(f"{view.name} reveal")
    # just above the largest value at the end, so every face is shown on the last frame
    top = float(values.max()) + 1e-3
    bake._set_fcurve(view.animation_data.action, view, path, np.array([a, b]), np.array([0, top]))
    data = json.loads(view[VIEW_TAG])
    data["reveal"] = [by, count, a, b]
    view[VIEW_TAG] = json.dumps(data)
    return view


def remove_reveal(ob) -> None:
    view = view_object_of(ob)
    if view is None:
        return
    action = view.animation_data.action if view.animation_data else None
    if action is not None:
        view.animation_data.action = None
        if action.users == 0:
            bpy.data.actions.remove(action)
    mod = view.modifiers[FILTER_MOD]
    mod[reveal_socket_id(mod.node_group)] = SHOW_ALL
    attr = ob.data.attributes.get(REVEAL_ATTR)
    if attr is not None:
        ob.data.attributes.remove(attr)


# ----------------------------------------------------------------------------- stills


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
    """The radius to give the stage camera (headless.add_stage) so a row of objects along x,
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
    # add_stage: 50 mm lens, 36 mm sensor along the longer side (Blender's AUTO fit)
    short = math.atan(18.0 / 50.0 / max(aspect, 1.0 / aspect))
    long_ = math.atan(18.0 / 50.0)
    wide = half_width * math.sin(short) / (1.08 * math.tan(long_ if aspect >= 1 else short))
    return max(r, wide)


# ----------------------------------------------------------------------------- stripes


def set_stripes(mat, on: bool, spacing: float = 0.25, colours=(STRIPE_A, STRIPE_B)) -> None:
    """Height stripes on the outer side of our two-sided material, or back to plain.

    World height z (Geometry > Position) over ``spacing`` -> fraction -> below 0.5 picks
    colour A, else B; one A and one B band every ``spacing`` units. The inner side keeps
    its colour.
    """
    from . import look

    if not (spacing > 0 and np.isfinite(spacing)):
        raise ViewError(f"stripe spacing: must be a number > 0, got {spacing}")
    nodes = mat.node_tree.nodes
    links = mat.node_tree.links
    if look.N_SIDES not in nodes or look.N_OUTER not in nodes:
        raise ViewError(f"material: {mat.name!r} is not Turnabout's two-sided material")
    sides, outer = nodes[look.N_SIDES], nodes[look.N_OUTER]
    for n in [n for n in nodes if n.name.startswith(N_STRIPES) or n.name.startswith("Stripe ")]:
        nodes.remove(n)
    if not on:
        links.new(outer.outputs[0], sides.inputs[6])
        return
    geo = nodes.new("ShaderNodeNewGeometry")
    geo.name = f"{N_STRIPES} position"
    xyz = nodes.new("ShaderNodeSeparateXYZ")
    xyz.name = f"{N_STRIPES} height"
    scale = nodes.new("ShaderNodeMath")
    scale.name = N_STRIPE_SCALE
    scale.operation = "DIVIDE"
    scale.inputs[1].default_value = float(spacing)
    frac = nodes.new("ShaderNodeMath")
    frac.name = f"{N_STRIPES} fraction"
    frac.operation = "FRACT"
    step = nodes.new("ShaderNodeMath")
    step.name = f"{N_STRIPES} step"
    step.operation = "GREATER_THAN"
    step.inputs[1].default_value = 0.5
    a, b = nodes.new("ShaderNodeRGB"), nodes.new("ShaderNodeRGB")
    a.name, b.name = N_STRIPE_A, N_STRIPE_B
    a.outputs[0].default_value = tuple(colours[0])
    b.outputs[0].default_value = tuple(colours[1])
    mix = nodes.new("ShaderNodeMix")
    mix.name = f"{N_STRIPES} mix"
    mix.data_type = "RGBA"
    links.new(geo.outputs["Position"], xyz.inputs[0])
    links.new(xyz.outputs["Z"], scale.inputs[0])
    links.new(scale.outputs[0], frac.inputs[0])
    links.new(frac.outputs[0], step.inputs[0])
    links.new(step.outputs[0], mix.inputs[0])
    links.new(a.outputs[0], mix.inputs[6])
    links.new(b.outputs[0], mix.inputs[7])
    links.new(mix.outputs[2], sides.inputs[6])
    x0, y0 = sides.location.x - 1400, sides.location.y + 400
    for i, n in enumerate((geo, xyz, scale, frac, step, a, mix)):
        n.location = (x0 + 200 * i, y0)
    b.location = (x0 + 1000, y0 - 220)


def eversion_material(ob):
    from . import look

    mats = [m for m in ob.data.materials if m is not None and look.LOOK_TAG in m]
    if not mats:
        raise ViewError(
            f"material: {ob.name!r} has no two-sided material; apply the two-sided look first"
        )
    return mats[0]


# ----------------------------------------------------------------------------- clearing


def clear_views(ob) -> None:
    """Remove the view object, its node group and action, the stills; show ``ob`` again."""
    remove_stills(ob)
    view = view_object_of(ob)
    if view is not None:
        remove_reveal(ob)
        mod = view.modifiers.get(FILTER_MOD)
        ng = mod.node_group if mod is not None else None
        bpy.data.objects.remove(view)
        if ng is not None and ng.users == 0:
            bpy.data.node_groups.remove(ng)
    for name in (PART_ATTR, TILE_ATTR, REVEAL_ATTR):
        attr = ob.data.attributes.get(name)
        if attr is not None:
            ob.data.attributes.remove(attr)
    _show_source(ob)


def check_choice(info: dict, text: str, option: str = "parts") -> PartsChoice:
    """Parse the parts text for this eversion; ViewError naming ``option`` when wrong."""
    from .view_options import parse_parts

    return parse_parts(text, info["strips"], option)
