"""The two-sided look: one colour on the outer side, another on the inner side.

The material mixes the two colours with the Geometry node's Backfacing output, so the
side facing the camera decides the colour in Cycles and EEVEE. An optional tint marks
every other strip through the mesh's ``turnabout_guide`` face attribute.
"""

from __future__ import annotations

import bpy

LOOK_TAG = "turnabout_look"

# node names inside our material, so re-applying updates values in place
N_OUTER, N_INNER, N_SIDES, N_TINT, N_GUIDE, N_BSDF = (
    "Outer side",
    "Inner side",
    "Side mix",
    "Guide tint",
    "Guide strips",
    "Surface",
)


def _build_tree(mat) -> None:
    from .bake import GUIDE_ATTRIBUTE

    if getattr(mat, "node_tree", None) is None:  # Blender 4.2 starts without nodes
        mat.use_nodes = True
    nt = mat.node_tree
    nt.nodes.clear()
    out = nt.nodes.new("ShaderNodeOutputMaterial")
    bsdf = nt.nodes.new("ShaderNodeBsdfPrincipled")
    bsdf.name = N_BSDF
    geo = nt.nodes.new("ShaderNodeNewGeometry")
    guide = nt.nodes.new("ShaderNodeAttribute")
    guide.name = N_GUIDE
    guide.attribute_type = "GEOMETRY"
    guide.attribute_name = GUIDE_ATTRIBUTE
    outer = nt.nodes.new("ShaderNodeRGB")
    outer.name = N_OUTER
    inner = nt.nodes.new("ShaderNodeRGB")
    inner.name = N_INNER
    tint = nt.nodes.new("ShaderNodeMix")
    tint.name = N_TINT
    tint.data_type = "RGBA"
    tint.blend_type = "MULTIPLY"
    sides = nt.nodes.new("ShaderNodeMix")
    sides.name = N_SIDES
    sides.data_type = "RGBA"
    # Mix node sockets for RGBA: inputs[0] factor (float), [6] A colour, [7] B colour; output [2]
    nt.links.new(geo.outputs["Backfacing"], sides.inputs[0])
    nt.links.new(outer.outputs[0], sides.inputs[6])
    nt.links.new(inner.outputs[0], sides.inputs[7])
    nt.links.new(sides.outputs[2], tint.inputs[6])
    nt.links.new(guide.outputs["Fac"], tint.inputs[0])
    nt.links.new(tint.outputs[2], bsdf.inputs["Base Color"])
    nt.links.new(bsdf.outputs[0], out.inputs[0])
    bsdf.inputs["Roughness"].default_value = 0.45
    for i, node in enumerate((geo, guide, outer, inner, sides, tint, bsdf, out)):
        node.location = (-900 + 200 * i, 0)


def two_sided_material(name: str, outer, inner, tint=None, tint_strength: float = 0.0):
    """A new two-sided material (tagged so it can be updated in place)."""
    mat = bpy.data.materials.new(name)
    mat[LOOK_TAG] = 1
    _build_tree(mat)
    update_material(mat, outer, inner, tint, tint_strength)
    return mat


def update_material(mat, outer, inner, tint=None, tint_strength: float = 0.0) -> None:
    from .bake import GUIDE_ATTRIBUTE

    nodes = mat.node_tree.nodes
    if N_SIDES not in nodes:
        _build_tree(mat)
        nodes = mat.node_tree.nodes
    nodes[N_OUTER].outputs[0].default_value = tuple(outer)
    nodes[N_INNER].outputs[0].default_value = tuple(inner)
    tint_node = nodes[N_TINT]
    tint_node.inputs[7].default_value = tuple(tint) if tint is not None else (1, 1, 1, 1)
    # the guide attribute drives the factor; its strength scales the tinted colour
    nodes[N_GUIDE].attribute_name = GUIDE_ATTRIBUTE if tint_strength > 0 else ""
    mat.diffuse_color = tuple(outer)  # the Solid viewport colour


def apply_look(ob, settings) -> None:
    """Give ``ob`` our two-sided material (made once per object, then updated in place)."""
    mat = None
    if ob.data.materials and ob.data.materials[0] is not None and LOOK_TAG in ob.data.materials[0]:
        mat = ob.data.materials[0]
    tint = settings.guide_tint if settings.colour_strips else None
    strength = 1.0 if settings.colour_strips else 0.0
    if mat is None:
        mat = two_sided_material(
            f"{ob.name} sides", settings.outer_colour, settings.inner_colour, tint, strength
        )
        if ob.data.materials:
            ob.data.materials[0] = mat
        else:
            ob.data.materials.append(mat)
    else:
        update_material(mat, settings.outer_colour, settings.inner_colour, tint, strength)


class TURNABOUT_OT_apply_look(bpy.types.Operator):
    """Give the active mesh the two-sided material with the panel's colours"""

    bl_idname = "turnabout.apply_look"
    bl_label = "Apply Two-Sided Look"
    bl_options = {"REGISTER", "UNDO"}

    @classmethod
    def poll(cls, context):
        ob = context.active_object
        return ob is not None and ob.type == "MESH"

    def execute(self, context):
        apply_look(context.active_object, context.scene.turnabout)
        return {"FINISHED"}


CLASSES = (TURNABOUT_OT_apply_look,)
