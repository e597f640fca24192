"""Height stripes: bands of world height on the outer side of the two-sided material.

World height z (Geometry > Position) over the spacing -> fraction -> below or above 0.5
picks colour A or B, replacing the outer colour; the inner side keeps its colour.
"""

from __future__ import annotations

import numpy as np

from .view_objects import ViewError
from .view_options import STRIPE_A, STRIPE_B

N_STRIPES = "Height stripes"
N_STRIPE_A, N_STRIPE_B, N_STRIPE_SCALE = "Stripe colour A", "Stripe colour B", "Stripe spacing"


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
