"""What the view rigs are made of: tagged data-blocks, bulk F-curves, flat annotation
materials and the geometry-node trees (band highlight, level-point glyphs, count caption).

Every data-block made here carries two custom properties, ``turnabout_view_rig`` (its
role) and ``turnabout_view_owner`` (the eversion object, as an ID pointer), so a rig can
be found and removed whole. The public entry points are in ``view_rigs``.
"""

from __future__ import annotations

import math

import bpy
import numpy as np

from turnabout.views import rig_math

from . import bake

ROLE = "turnabout_view_rig"  # custom property on everything a rig makes: its role
OWNER = "turnabout_view_owner"  # ... and the eversion object it belongs to (an ID pointer)
SOURCE_ATTRIBUTE = "turnabout_source_vertex"
FRAME_ATTRIBUTE = "turnabout_frame"
KIND_ATTRIBUTE = "turnabout_kind"
POINT_ATTRIBUTE = "turnabout_level_point"

# our own annotation colours (linear RGB), chosen away from the default side colours
BAND_COLOUR = (1.0, 0.9, 0.02, 1.0)  # lemon
DOME_COLOUR = (1.0, 0.02, 0.4, 1.0)  # hot pink, upward cone
BOWL_COLOUR = (0.04, 0.16, 1.0, 1.0)  # electric blue, downward cone
SADDLE_COLOUR = (0.3, 1.0, 0.02, 1.0)  # lime, an upright cross
TEXT_COLOUR = (1.0, 1.0, 1.0, 1.0)
MARKER_COLOURS = (DOME_COLOUR, BOWL_COLOUR, SADDLE_COLOUR)


def tag(idblock, role: str, owner) -> None:
    idblock[ROLE] = role
    idblock[OWNER] = owner


def key(action, idblock, path: str, index: int, frames, values, interpolation: int):
    """One F-curve through (frames, values): LINEAR (1) or CONSTANT (0), in bulk."""
    fc = bake.ensure_fcurve(action, idblock, path, index)
    n = len(frames)
    fc.keyframe_points.add(n)
    co = np.stack([np.asarray(frames, np.float32), np.asarray(values, np.float32)], axis=-1)
    fc.keyframe_points.foreach_set("co", co.ravel())
    fc.keyframe_points.foreach_set("interpolation", np.full(n, interpolation, np.int32))
    fc.update()
    return fc


def new_action(idblock, name: str, role: str, owner):
    idblock.animation_data_create()
    action = bpy.data.actions.new(name)
    tag(action, role, owner)
    idblock.animation_data.action = action
    return action


def emission_material(name: str, colour, role: str, owner):
    """A flat material that shows ``colour`` whatever the lighting (an annotation)."""
    mat = bpy.data.materials.new(name)
    tag(mat, role, owner)
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


def node_group(name: str, role: str, owner, float_inputs=()):
    """A geometry node group with Geometry in/out and extra float inputs; returns
    (group, input node, output node, {input name: socket identifier})."""
    ng = bpy.data.node_groups.new(name, "GeometryNodeTree")
    tag(ng, role, owner)
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


def child_object(name: str, data, parent, role: str, owner, scene):
    ob = bpy.data.objects.new(name, data)
    tag(ob, role, owner)
    if data is not None and data.get(ROLE) is None:
        tag(data, role, owner)
    scene.collection.objects.link(ob)
    ob.parent = parent  # parent inverse stays identity: local space = parent's space
    return ob


def band_highlight(scene, ob, patch, colour, lift: float):
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
    hl = child_object(f"{ob.name} band", me, ob, "band highlight", ob, scene)
    mat = emission_material(f"{ob.name} band colour", colour, "band highlight", ob)

    ng, gin, gout, ids = node_group(
        f"{ob.name} band follows surface", "band highlight", ob, [("Lift", lift)]
    )
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
    layout(ng)
    mod = hl.modifiers.new("Follow the surface", "NODES")
    mod.node_group = ng
    me.materials.append(mat)
    return hl


def layout(ng) -> None:
    """Spread the nodes left to right in creation order (readable when opened)."""
    for i, node in enumerate(ng.nodes):
        node.location = (220 * (i % 8) - 900, -180 * (i // 8))


def marker_object(scene, ob, co, frame, kind, point_id, up, size: float):
    me = bpy.data.meshes.new(f"{ob.name} level points")
    me.vertices.add(len(frame))
    me.vertices.foreach_set("co", co)
    for name, values in (
        (FRAME_ATTRIBUTE, frame),
        (KIND_ATTRIBUTE, kind),
        (POINT_ATTRIBUTE, point_id),
    ):
        me.attributes.new(name, "INT", "POINT").data.foreach_set("value", values)
    me.update()
    mk = child_object(f"{ob.name} level points", me, ob, "level markers", ob, scene)
    mats = [
        emission_material(f"{ob.name} {what} marker", colour, "level markers", ob)
        for what, colour in zip(("dome", "bowl", "saddle"), MARKER_COLOURS, strict=True)
    ]
    ng, gin, gout, ids = node_group(
        f"{ob.name} level markers", "level markers", ob, [("Glyph size", size)]
    )
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
    for kind_value, (glyph, mat) in enumerate(
        zip(_glyphs(nodes, links), mats, strict=True), start=1
    ):
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
    layout(ng)
    mod = mk.modifiers.new("Level markers", "NODES")
    mod.node_group = ng
    for mat in mats:
        me.materials.append(mat)
    return mk


def _glyphs(nodes, links):
    """Output sockets of the three unit glyphs, each standing on the origin and reaching
    up to z = 1 (a level point's outer side faces up, so that is the side they stand on):
    dome, a cone with its tip up; bowl, a cone with its tip on the point, opening up;
    saddle, an upright cross of two slabs."""
    out = []
    for flip in (False, True):
        cone = nodes.new("GeometryNodeMeshCone")  # base on z = 0, tip at z = depth
        cone.inputs["Vertices"].default_value = 12
        cone.inputs["Radius Top"].default_value = 0.0
        cone.inputs["Radius Bottom"].default_value = 0.45
        cone.inputs["Depth"].default_value = 1.0
        if not flip:
            out.append(cone.outputs["Mesh"])
            continue
        turn = nodes.new("GeometryNodeTransform")  # rotate, then translate
        turn.inputs["Rotation"].default_value = (math.pi, 0.0, 0.0)
        turn.inputs["Translation"].default_value = (0.0, 0.0, 1.0)
        links.new(cone.outputs["Mesh"], turn.inputs["Geometry"])
        out.append(turn.outputs[0])
    join = nodes.new("GeometryNodeJoinGeometry")
    for angle in (0.25 * math.pi, -0.25 * math.pi):
        slab = nodes.new("GeometryNodeMeshCube")  # centred on the origin
        slab.inputs["Size"].default_value = (1.0, 0.26, 0.6)
        turn = nodes.new("GeometryNodeTransform")
        turn.inputs["Rotation"].default_value = (0.0, 0.0, angle)
        turn.inputs["Translation"].default_value = (0.0, 0.0, 0.3)
        links.new(slab.outputs["Mesh"], turn.inputs["Geometry"])
        links.new(turn.outputs[0], join.inputs[0])
    out.append(join.outputs[0])
    return out


def count_text(scene, ob, camera, frames, values):
    """Caption "signed count N" in the lower-left corner of ``camera``, animated."""
    depth = max(3.0 * camera.data.clip_start, 0.05)
    corners = np.array([tuple(v) for v in camera.data.view_frame(scene=scene)])
    origin, height = rig_math.text_corner(corners, depth)
    me = bpy.data.meshes.new(f"{ob.name} count text")
    tx = child_object(f"{ob.name} count text", me, camera, "level text", ob, scene)
    tx.location = origin.tolist()
    for flag in (
        "visible_shadow",
        "visible_diffuse",
        "visible_glossy",
        "visible_transmission",
        "visible_volume_scatter",
    ):
        setattr(tx, flag, False)
    mat = emission_material(f"{ob.name} count text", TEXT_COLOUR, "level text", ob)
    ng, gin, gout, ids = node_group(
        f"{ob.name} count text", "level text", ob, [("Count", float(values[0])), ("Height", height)]
    )
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
    layout(ng)
    mod = tx.modifiers.new("Count text", "NODES")
    mod.node_group = ng
    me.materials.append(mat)
    action = new_action(tx, f"{tx.name} count", "level text", ob)
    key(action, tx, f'modifiers["{mod.name}"]["{ids["Count"]}"]', 0, frames, np.rint(values), 0)
    clip = animated_clip_start(camera, frames)
    if clip is not None:  # a cutaway camera: ride just beyond its clip start, same look
        scale = np.maximum(depth, 1.02 * clip) / depth
        for i in range(3):
            key(action, tx, "location", i, frames, origin[i] * scale, 1)
            key(action, tx, "scale", i, frames, scale, 1)
    return tx


def animated_clip_start(camera, frames):
    """(F,) clip start of ``camera`` at ``frames`` when it is animated, else None."""
    curves = bake.animated_fcurves(camera.data.animation_data)
    fc = curves.find("clip_start") if curves is not None else None
    if fc is None or len(fc.keyframe_points) == 0:
        return None
    return np.array([fc.evaluate(float(f)) for f in frames])
