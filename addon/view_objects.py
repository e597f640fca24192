"""Views of a baked eversion as native Blender data: parts, build-up stills, reveal, stripes.

How the views share the one bake:

* **Parts / reveal**: one *view object* per eversion that uses the eversion's own mesh
  datablock (``view.data is ob.data``), so the same shape keys play it (a point-cache bake
  gets a copy of the Mesh Cache modifier reading the same file). Face attributes written
  once on that mesh from the core: ``turnabout_part`` (int, the part label),
  ``turnabout_tile`` (int, which copy of the fundamental piece) and, for a reveal,
  ``turnabout_reveal`` (float, ``reveal_order``). The core's faces are triangles and the
  mesh has quads: each attribute has a ``_b`` twin holding the value of a quad's second
  triangle (a, c, d), ``turnabout_split`` marks the quads whose halves differ and
  ``turnabout_corner_d`` (a corner attribute) marks every quad's fourth corner. A
  geometry-nodes modifier with the view's own small node group cuts the split quads along
  a-c (as the core does), lets each half read its own value (by whether it holds corner d)
  and deletes the faces not chosen: two Index Switch nodes (one boolean per part label, one
  per tile) and a comparison of the reveal value with a keyframed *Reveal* input.
  Switching a view only changes those booleans.
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
    PartsChoice,
    ViewOptionError,
    polygon_pairs,
)

PART_ATTR = "turnabout_part"
TILE_ATTR = "turnabout_tile"
REVEAL_ATTR = "turnabout_reveal"
SECOND_SUFFIX = "_b"  # the value of a quad's second triangle (a, c, d)
SPLIT_ATTR = "turnabout_split"  # quads whose two triangles differ
CORNER_ATTR = "turnabout_corner_d"  # 1 on the fourth corner of every quad
VIEW_ATTRIBUTES = tuple(
    n + e for n in (PART_ATTR, TILE_ATTR, REVEAL_ATTR) for e in ("", SECOND_SUFFIX)
) + (SPLIT_ATTR, CORNER_ATTR)
VIEW_TAG = "turnabout_view"  # on view objects: JSON {"kind", "source", ...}
SOURCE_TAG = "turnabout_view_source"  # on view objects and stills: the eversion (an ID pointer)
HIDDEN_TAG = "turnabout_hidden_by_view"  # on the eversion while a view hides it
FILTER_MOD = "Turnabout view"
REVEAL_INPUT = "Reveal"
SHOW_ALL = 1.5  # a Reveal input above every reveal value (they lie in [0, 1])

# node names in the filter group and in the material
N_PARTS, N_TILES = "Parts shown", "Tiles shown"


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
    theta, lat = symmetric_samples(theta, lat, info["strips"])
    return SphereMesh(theta=theta, lat=lat)


def symmetric_samples(theta: np.ndarray, lat: np.ndarray, strips: int, tol: float = 1e-5):
    """Longitudes and latitudes read back in float32, made exactly as symmetric as the
    eversion's meshes are built: every strip repeats the first (theta + k 2 pi / n), the
    first strip is mirrored about its quarter (theta -> pi / n - theta) and the latitudes
    about the equator. Values that are not symmetric to within ``tol`` are left as read.

    theta : (n_lon,) float64, lat : (n_lat,) float64; returns the same shapes.
    """
    n_lon = theta.shape[0]
    if n_lon % strips:
        return theta, lat
    per, period = n_lon // strips, 2 * np.pi / strips
    first = theta[:per]
    strips_ok = np.allclose(theta.reshape(strips, per) - first, np.arange(strips)[:, None] * period,
                            atol=tol)  # fmt: skip
    mirrored = np.sort(np.mod(period / 2 - first, period))
    mirrored = np.where(mirrored > period - tol, mirrored - period, mirrored)
    if strips_ok and np.allclose(np.sort(mirrored), first, atol=tol):
        first = 0.5 * (first + np.sort(mirrored))
        theta = (first[None, :] + np.arange(strips)[:, None] * period).ravel()
    if np.allclose(lat, -lat[::-1], atol=tol):
        lat = 0.5 * (lat - lat[::-1])
    return theta, lat


def face_tables(ob, info: dict):
    """Per-triangle part labels and tile indices of the eversion, from the core.

    Returns (label (M,) int32, tile (M,) int32) in ``SphereMesh.triangles()`` order.
    """
    from turnabout.views.parts import surface_parts, symmetry_face_maps

    sphere = sphere_of(ob, info)
    n = info["strips"]
    parts = surface_parts(sphere, n)
    piece = np.flatnonzero(parts.fundamental_piece())
    maps = symmetry_face_maps(sphere, n)
    tile = np.full(parts.label.shape[0], -1, np.int64)
    for g in range(maps.shape[0]):  # the 2n group elements
        tile[maps[g][piece]] = g
    if (tile < 0).any():
        raise ViewError("tiles: the copies of the fundamental piece do not cover the surface")
    return parts.label.astype(np.int32), tile.astype(np.int32)


def _write_attribute(me, name: str, kind: str, domain: str, values: np.ndarray) -> None:
    attr = me.attributes.get(name)
    if attr is not None and (attr.data_type != kind or attr.domain != domain):
        me.attributes.remove(attr)
        attr = None
    if attr is None:
        attr = me.attributes.new(name, kind, domain)
    attr.data.foreach_set("value", values)


def _read_attribute(me, name: str, dtype) -> np.ndarray | None:
    attr = me.attributes.get(name)
    if attr is None or attr.domain != "FACE":
        return None
    out = np.empty(len(me.polygons), dtype)
    attr.data.foreach_get("value", out)
    return out


def _write_split(me) -> None:
    """Mark the quads whose two triangles differ in part, tile or reveal value, and the
    fourth corner (d) of every quad, by which the view tells a split quad's halves apart."""
    split = np.zeros(len(me.polygons), bool)
    for name, dtype in ((PART_ATTR, np.int32), (TILE_ATTR, np.int32), (REVEAL_ATTR, np.float32)):
        first = _read_attribute(me, name, dtype)
        second = _read_attribute(me, name + SECOND_SUFFIX, dtype)
        if first is not None and second is not None:
            split |= first != second
    _write_attribute(me, SPLIT_ATTR, "BOOLEAN", "FACE", split)
    starts = np.empty(len(me.polygons), np.int32)
    sizes = np.empty(len(me.polygons), np.int32)
    me.polygons.foreach_get("loop_start", starts)
    me.polygons.foreach_get("loop_total", sizes)
    corner = np.zeros(len(me.loops), np.float32)
    corner[starts[sizes == 4] + 3] = 1.0
    _write_attribute(me, CORNER_ATTR, "FLOAT", "CORNER", corner)
    me.update()


def write_pair(ob, info: dict, name: str, kind: str, per_triangle: np.ndarray) -> None:
    """Write per-triangle values as the polygon attributes ``name`` and ``name_b``."""
    first, second = polygon_pairs(info["n_lon"], info["n_lat"], per_triangle)
    _write_attribute(ob.data, name, kind, "FACE", first)
    _write_attribute(ob.data, name + SECOND_SUFFIX, kind, "FACE", second)
    _write_split(ob.data)


def ensure_part_attributes(ob, info: dict, label: np.ndarray, tile: np.ndarray) -> None:
    """Write the part and tile attributes on the shared mesh (once; rewritten if changed)."""
    me = ob.data
    for name, values in ((PART_ATTR, label), (TILE_ATTR, tile)):
        first, second = polygon_pairs(info["n_lon"], info["n_lat"], values)
        have = _read_attribute(me, name, np.int32)
        have_b = _read_attribute(me, name + SECOND_SUFFIX, np.int32)
        if (
            have is None
            or have_b is None
            or not (np.array_equal(have, first) and np.array_equal(have_b, second))
        ):
            write_pair(ob, info, name, "INT", values)


# ----------------------------------------------------------------------------- filter nodes


def _new_filter_group(name: str, n_parts: int, n_tiles: int):
    """A node group that keeps chosen parts and tiles and faces already revealed.

    Quads marked split are cut along a-c first (as the core cuts them), and each half reads
    its own value: the first or the ``_b`` attribute, by whether it holds the quad's d corner.
    """
    ng = bpy.data.node_groups.new(name, "GeometryNodeTree")
    ng.interface.new_socket("Geometry", in_out="INPUT", socket_type="NodeSocketGeometry")
    ng.interface.new_socket("Geometry", in_out="OUTPUT", socket_type="NodeSocketGeometry")
    sock = ng.interface.new_socket(REVEAL_INPUT, in_out="INPUT", socket_type="NodeSocketFloat")
    sock.default_value = SHOW_ALL
    sock.description = "Faces whose reveal value is below this are shown (keyframe it)"
    nodes, links = ng.nodes, ng.links
    gin = nodes.new("NodeGroupInput")
    gout = nodes.new("NodeGroupOutput")

    def named(attr_name: str, kind: str, x: float, y: float):
        node = nodes.new("GeometryNodeInputNamedAttribute")
        node.data_type = kind
        node.inputs["Name"].default_value = attr_name
        node.location = (x, y)
        return node.outputs["Attribute"]

    split = named(SPLIT_ATTR, "BOOLEAN", -900, 400)
    cut = nodes.new("GeometryNodeTriangulate")
    if "Quad Method" in cut.inputs:  # a menu input from Blender 5.0 on
        cut.inputs["Quad Method"].default_value = "Fixed"  # along the first and third corners
    else:  # Blender 4.2-4.5: a node property
        cut.quad_method = "FIXED"
    links.new(gin.outputs["Geometry"], cut.inputs["Mesh"])
    links.new(split, cut.inputs["Selection"])
    second = nodes.new("FunctionNodeCompare")
    second.data_type = "FLOAT"
    second.operation = "GREATER_THAN"
    second.inputs["B"].default_value = 0.1
    links.new(named(CORNER_ATTR, "FLOAT", -1100, -600), second.inputs["A"])

    def pick(attr_name: str, kind: str, y: float):
        sw = nodes.new("GeometryNodeSwitch")
        sw.input_type = kind
        links.new(second.outputs[0], sw.inputs["Switch"])
        links.new(named(attr_name, kind, -1100, y), sw.inputs["False"])
        links.new(named(attr_name + SECOND_SUFFIX, kind, -1100, y - 150), sw.inputs["True"])
        sw.location = (-850, y)
        return sw.outputs[0]

    def switch(value, count: int, node_name: str, y: float):
        sw = nodes.new("GeometryNodeIndexSwitch")
        sw.name = sw.label = node_name
        sw.data_type = "BOOLEAN"
        while len(sw.index_switch_items) < count:
            sw.index_switch_items.new()
        for k in range(count):
            sw.inputs[k + 1].default_value = True
        links.new(value, sw.inputs[0])
        sw.location = (-600, y)
        return sw

    parts = switch(pick(PART_ATTR, "INT", 300), n_parts, N_PARTS, 300)
    tiles = switch(pick(TILE_ATTR, "INT", 0), n_tiles, N_TILES, 0)
    less = nodes.new("FunctionNodeCompare")
    less.data_type = "FLOAT"
    less.operation = "LESS_THAN"
    links.new(pick(REVEAL_ATTR, "FLOAT", -300), less.inputs["A"])
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
    links.new(cut.outputs["Mesh"], delete.inputs["Geometry"])
    links.new(drop.outputs[0], delete.inputs["Selection"])
    links.new(delete.outputs["Geometry"], gout.inputs["Geometry"])
    gin.location, cut.location, second.location = (-1100, 600), (-600, 600), (-850, -600)
    less.location, both.location, keep.location = (-600, -300), (-350, 150), (-150, 0)
    drop.location, delete.location, gout.location = (0, 0), (250, 300), (500, 300)
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
    """The parts/reveal view object of eversion ``ob`` (found through its pointer to ``ob``,
    which survives renaming), or None."""
    for other in bpy.data.objects:
        tag = other.get(VIEW_TAG)
        if tag and other.type == "MESH" and other.get(SOURCE_TAG) == ob:
            if json.loads(tag).get("kind") == "parts":
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
    if view is None or view.data is not ob.data or PART_ATTR not in ob.data.attributes:
        label, tile = face_tables(ob, info)  # the core work, before any data is made
        ensure_part_attributes(ob, info, label, tile)
    n = info["strips"]
    if view is not None and view.data is not ob.data:  # the eversion was re-built
        old, view.data = view.data, ob.data
        bake._free_mesh(old)
        for mod in [m for m in view.modifiers if m.type == "MESH_CACHE"]:
            view.modifiers.remove(mod)
        _copy_cache_modifier(ob, view)
        if len(view.modifiers) > 1 and view.modifiers[-1].type == "MESH_CACHE":
            view.modifiers.move(len(view.modifiers) - 1, 0)
        mod = view.modifiers[FILTER_MOD]
        if len(mod.node_group.nodes[N_PARTS].index_switch_items) != 2 * n + 2:
            old_group = mod.node_group
            mod.node_group = _new_filter_group(f"{view.name} filter", 2 * n + 2, 2 * n)
            if old_group.users == 0:
                bpy.data.node_groups.remove(old_group)
    if view is None:
        view = bpy.data.objects.new(f"{ob.name} view", ob.data)
        for coll in ob.users_collection:
            coll.objects.link(view)
        view.matrix_world = ob.matrix_world.copy()
        view[VIEW_TAG] = json.dumps({"kind": "parts", "source": ob.name, "parts": "all"})
        view[SOURCE_TAG] = ob
        _copy_cache_modifier(ob, view)
        mod = view.modifiers.new(FILTER_MOD, "NODES")
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
    order = np.asarray(order, np.float32)
    view = view_object_of(ob)
    if view is None:
        from .view_options import parse_parts

        view = make_parts_view(scene, ob, parse_parts("all", info["strips"]), info)
    write_pair(ob, info, REVEAL_ATTR, "FLOAT", order)
    mod = view.modifiers[FILTER_MOD]
    path = f'modifiers["{FILTER_MOD}"]["{reveal_socket_id(mod.node_group)}"]'
    if view.animation_data is None:
        view.animation_data_create()
    if view.animation_data.action is None:
        view.animation_data.action = bpy.data.actions.new(f"{view.name} reveal")
    # just above the largest value at the end, so every face is shown on the last frame
    top = float(order.max()) + 1e-3
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
    for name in (REVEAL_ATTR, REVEAL_ATTR + SECOND_SUFFIX):
        attr = ob.data.attributes.get(name)
        if attr is not None:
            ob.data.attributes.remove(attr)
    _write_split(ob.data)


# ----------------------------------------------------------------------------- clearing


def clear_views(ob) -> None:
    """Remove the view object, its node group and action, the stills; show ``ob`` again."""
    from .view_stills import remove_stills

    remove_stills(ob)
    view = view_object_of(ob)
    if view is not None:
        remove_reveal(ob)
        mod = view.modifiers.get(FILTER_MOD)
        ng = mod.node_group if mod is not None else None
        bpy.data.objects.remove(view)
        if ng is not None and ng.users == 0:
            bpy.data.node_groups.remove(ng)
    for name in VIEW_ATTRIBUTES:
        attr = ob.data.attributes.get(name)
        if attr is not None:
            ob.data.attributes.remove(attr)
    _show_source(ob)


def check_choice(info: dict, text: str, option: str = "parts") -> PartsChoice:
    """Parse the parts text for this eversion; ViewError naming ``option`` when wrong."""
    from .view_options import parse_parts

    return parse_parts(text, info["strips"], option)
