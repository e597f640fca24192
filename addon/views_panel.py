"""The *Views* section of the Turnabout sidebar: its settings and operators.

Settings live on the scene as ``scene.turnabout_views``. Every operator works on the active
Turnabout eversion (or on the eversion behind the active view object or still), checks all
its input first and reports a clear error that leaves the scene untouched.
"""

from __future__ import annotations

import math

import bpy
from bpy.props import (
    BoolProperty,
    EnumProperty,
    FloatProperty,
    FloatVectorProperty,
    IntProperty,
    PointerProperty,
    StringProperty,
)

from . import view_objects as vo
from . import view_stills, view_stripes
from .props import PATH_OPTIONS
from .view_options import (
    DEFAULT_STRIPE_SPACING,
    PARTS_HELP,
    STRIPE_A,
    STRIPE_B,
    parse_vector,
)

REVEAL_ITEMS = (
    ("BAND", "Band", "Faces appear band by band of latitude"),
    ("PART", "Part", "Faces appear part by part (caps, guide strips, wave strips)"),
)


class TURNABOUT_PG_views(bpy.types.PropertyGroup):
    parts: StringProperty(
        name="Parts",
        description=f"Parts to show, words separated by spaces: {PARTS_HELP}",
        default="guide:0 caps",
    )
    stills_gap: FloatProperty(
        name="Gap",
        description="Space between stills, as a fraction of a still's width (0-2)",
        default=0.3,
        min=0.0,
        max=2.0,
    )
    reveal_by: EnumProperty(name="Reveal by", items=REVEAL_ITEMS, default="BAND")
    reveal_count: IntProperty(
        name="Count",
        description="Bands (or groups) that appear one after another (0 = the core's default)",
        default=0,
        min=0,
        soft_max=64,
    )
    reveal_use_range: BoolProperty(
        name="Scene range",
        description="Play the reveal over the scene's frame range",
        default=True,
    )
    reveal_start: IntProperty(name="From frame", default=1)
    reveal_end: IntProperty(name="To frame", default=48)
    stripes: BoolProperty(
        name="Height stripes",
        description="Bands of world height on the outer side; the inner side keeps its colour",
        default=False,
    )
    stripe_spacing: FloatProperty(
        name="Spacing",
        description="One light and one dark band every this many scene units (> 0)",
        default=DEFAULT_STRIPE_SPACING,
        min=1e-4,
        soft_max=2.0,
        precision=3,
    )
    stripe_colour_a: FloatVectorProperty(
        name="Band A", subtype="COLOR", size=4, min=0.0, max=1.0, default=STRIPE_A
    )
    stripe_colour_b: FloatVectorProperty(
        name="Band B", subtype="COLOR", size=4, min=0.0, max=1.0, default=STRIPE_B
    )
    slice_count: IntProperty(
        name="Bands",
        description="Latitude bands the surface is cut into (1 or more)",
        default=8,
        min=1,
        soft_max=64,
    )
    slice_width: FloatProperty(
        name="Width",
        description="Width of each band in degrees of latitude (0 = the bands touch)",
        default=0.0,
        min=0.0,
        max=180.0,
    )
    slice_which: IntProperty(
        name="Band",
        description="The band the camera tracks, 0 = southmost",
        default=0,
        min=0,
    )
    slice_image: StringProperty(
        name="Image",
        description="Where the side-by-side render goes ('//' = beside the .blend)",
        default="//slices.png",
        subtype="FILE_PATH",
        options=PATH_OPTIONS,
    )
    level_text: BoolProperty(
        name="Count text",
        description="Show the signed count of level points as text in the camera's corner",
        default=True,
    )
    level_up: FloatVectorProperty(
        name="Up",
        description="The direction that defines height for level points and slices",
        size=3,
        default=(0.0, 0.0, 1.0),
    )


# ----------------------------------------------------------------------------- helpers


def eversion_for(ob):
    """The eversion behind ``ob``: itself, or the source of a view object or still."""
    if ob is not None and vo.VIEW_TAG in ob:
        source = ob.get(vo.SOURCE_TAG)
        return source if isinstance(source, bpy.types.Object) else None
    return ob


class _ViewOperator:
    bl_options = {"REGISTER", "UNDO"}

    target: StringProperty(name="Object", description="Eversion to work on (default: active)")

    def eversion(self, context):
        ob = bpy.data.objects.get(self.target) if self.target else context.active_object
        ob = eversion_for(ob) if ob is not None else None
        return ob, vo.eversion_info(ob)

    def execute(self, context):
        try:
            message = self.run(context)
        except ValueError as exc:  # ViewOptionError, RigError, core errors: all ValueErrors
            self.report({"ERROR"}, str(exc))
            return {"CANCELLED"}
        if message:
            self.report({"INFO"}, message)
        return {"FINISHED"}


class TURNABOUT_OT_show_parts(_ViewOperator, bpy.types.Operator):
    """Show only the chosen parts of the eversion (an object sharing the bake)"""

    bl_idname = "turnabout.show_parts"
    bl_label = "Show Parts"

    parts: StringProperty(name="Parts", description=f"Default: the panel's. {PARTS_HELP}")

    def run(self, context):
        ob, info = self.eversion(context)
        text = self.parts or context.scene.turnabout_views.parts
        choice = vo.check_choice(info, text)
        view = vo.make_parts_view(context.scene, ob, choice, info)
        return f"{view.name}: showing {choice.text}"


class TURNABOUT_OT_add_stills(_ViewOperator, bpy.types.Operator):
    """Lay out stills of the key moments side by side (static meshes taken from the bake)"""

    bl_idname = "turnabout.add_stills"
    bl_label = "Lay Out Stills"

    def run(self, context):
        ob, info = self.eversion(context)
        stills = view_stills.add_stills(
            context.scene, ob, info, context.scene.turnabout_views.stills_gap
        )
        return f"{len(stills)} stills: " + ", ".join(s.name for s in stills)


class TURNABOUT_OT_add_reveal(_ViewOperator, bpy.types.Operator):
    """Let the faces appear in order as the frames play (a keyframed node input)"""

    bl_idname = "turnabout.add_reveal"
    bl_label = "Reveal in Order"

    def run(self, context):
        ob, info = self.eversion(context)
        s, scene = context.scene.turnabout_views, context.scene
        if s.reveal_use_range:
            frames = (scene.frame_start, scene.frame_end)
        else:
            frames = (s.reveal_start, s.reveal_end)
        if not frames[0] < frames[1]:
            raise vo.ViewError(
                f"reveal frames: the first must come before the last, got {frames[0]}-{frames[1]}"
            )
        count = s.reveal_count or None
        vo.add_reveal(scene, ob, s.reveal_by.lower(), count, frames, info)
        return f"reveal by {s.reveal_by.lower()} over frames {frames[0]}-{frames[1]}"


class TURNABOUT_OT_remove_reveal(_ViewOperator, bpy.types.Operator):
    """Show every face again (remove the reveal's keyframes)"""

    bl_idname = "turnabout.remove_reveal"
    bl_label = "Remove Reveal"

    def run(self, context):
        ob, _ = self.eversion(context)
        vo.remove_reveal(ob)
        return ""


class TURNABOUT_OT_apply_stripes(_ViewOperator, bpy.types.Operator):
    """Draw height stripes on the outer side (or remove them), per the panel's settings"""

    bl_idname = "turnabout.apply_stripes"
    bl_label = "Apply Height Stripes"

    def run(self, context):
        ob, _ = self.eversion(context)
        s = context.scene.turnabout_views
        mat = view_stripes.eversion_material(ob)
        colours = (tuple(s.stripe_colour_a), tuple(s.stripe_colour_b))
        view_stripes.set_stripes(mat, s.stripes, s.stripe_spacing, colours)
        return f"height stripes {'on' if s.stripes else 'off'} in {mat.name}"


class TURNABOUT_OT_clear_views(_ViewOperator, bpy.types.Operator):
    """Remove the views of the eversion (view object, stills, reveal) and show it whole"""

    bl_idname = "turnabout.clear_views"
    bl_label = "Clear Views"

    def run(self, context):
        ob, _ = self.eversion(context)
        vo.clear_views(ob)
        from . import view_wiring

        view_wiring.remove_rigs(context.scene, ob)
        if getattr(context, "view_layer", None) is not None:
            context.view_layer.objects.active = ob  # the active view object is gone
        return f"views of {ob.name} cleared"


class TURNABOUT_OT_add_slice_rig(_ViewOperator, bpy.types.Operator):
    """Add a camera that follows one latitude band through the motion"""

    bl_idname = "turnabout.add_slice_rig"
    bl_label = "Track a Band"

    def run(self, context):
        from . import view_wiring

        ob, info = self.eversion(context)
        s = context.scene.turnabout_views
        width = math.radians(s.slice_width) if s.slice_width > 0 else None
        up = parse_vector(",".join(str(v) for v in s.level_up), "up")
        made = view_wiring.band_rig(context, ob, info, s.slice_count, width, s.slice_which, up)
        return f"band {s.slice_which} of {s.slice_count}: {made}"


class TURNABOUT_OT_render_slices(_ViewOperator, bpy.types.Operator):
    """Render the band camera and the whole surface side by side into one image"""

    bl_idname = "turnabout.render_slices"
    bl_label = "Render Side by Side"

    def run(self, context):
        from . import view_wiring

        ob, _ = self.eversion(context)
        path = bpy.path.abspath(context.scene.turnabout_views.slice_image)
        out = view_wiring.side_by_side(context, ob, path, context.scene.frame_current)
        return f"wrote {out}"


class TURNABOUT_OT_add_level_points(_ViewOperator, bpy.types.Operator):
    """Mark the level points (domes, bowls, saddles) and show their signed count per frame"""

    bl_idname = "turnabout.add_level_points"
    bl_label = "Mark Level Points"

    def run(self, context):
        from . import view_wiring

        ob, info = self.eversion(context)
        up = parse_vector(",".join(str(v) for v in context.scene.turnabout_views.level_up), "up")
        text = context.scene.turnabout_views.level_text
        return view_wiring.level_markers(context, ob, info, up, text)


class TURNABOUT_OT_remove_level_points(_ViewOperator, bpy.types.Operator):
    """Remove the level-point markers and the count text"""

    bl_idname = "turnabout.remove_level_points"
    bl_label = "Remove Level Points"

    def run(self, context):
        from . import view_wiring

        ob, _ = self.eversion(context)
        view_wiring.remove_rigs(context.scene, ob, bands=False)
        return ""


# ----------------------------------------------------------------------------- panel


class TURNABOUT_PT_views(bpy.types.Panel):
    bl_space_type = "VIEW_3D"
    bl_region_type = "UI"
    bl_category = "Turnabout"
    bl_label = "Views"
    bl_options = {"DEFAULT_CLOSED"}

    def draw(self, context):
        s = context.scene.turnabout_views
        ob = eversion_for(context.active_object)
        layout = self.layout
        if ob is None or not vo.bake.is_eversion_object(ob):
            layout.label(text="Select a Turnabout eversion", icon="INFO")
        col = layout.column()
        col.enabled = ob is not None and vo.bake.is_eversion_object(ob)

        box = col.box()
        box.label(text="Parts", icon="MOD_EXPLODE")
        box.prop(s, "parts", text="")
        box.operator("turnabout.show_parts", icon="HIDE_OFF")

        box = col.box()
        box.label(text="Build-up", icon="SEQ_STRIP_DUPLICATE")
        row = box.row(align=True)
        row.prop(s, "stills_gap")
        row.operator("turnabout.add_stills", text="Stills", icon="RENDERLAYERS")
        row = box.row(align=True)
        row.prop(s, "reveal_by", expand=True)
        box.prop(s, "reveal_count")
        box.prop(s, "reveal_use_range")
        row = box.row(align=True)
        row.enabled = not s.reveal_use_range
        row.prop(s, "reveal_start")
        row.prop(s, "reveal_end")
        row = box.row(align=True)
        row.operator("turnabout.add_reveal", icon="PLAY")
        row.operator("turnabout.remove_reveal", text="", icon="X")

        box = col.box()
        box.prop(s, "stripes")
        sub = box.column()
        sub.enabled = s.stripes
        sub.prop(s, "stripe_spacing")
        row = sub.row(align=True)
        row.prop(s, "stripe_colour_a", text="")
        row.prop(s, "stripe_colour_b", text="")
        box.operator("turnabout.apply_stripes", icon="MATERIAL")

        box = col.box()
        box.label(text="Slices", icon="MOD_ARRAY")
        row = box.row(align=True)
        row.prop(s, "slice_count")
        row.prop(s, "slice_which")
        box.prop(s, "slice_width")
        box.operator("turnabout.add_slice_rig", icon="CAMERA_DATA")
        box.prop(s, "slice_image")
        box.operator("turnabout.render_slices", icon="RENDER_STILL")

        box = col.box()
        box.label(text="Level points", icon="EMPTY_SINGLE_ARROW")
        box.prop(s, "level_up")
        box.prop(s, "level_text")
        row = box.row(align=True)
        row.operator("turnabout.add_level_points", icon="ADD")
        row.operator("turnabout.remove_level_points", text="", icon="X")

        col.separator()
        col.operator("turnabout.clear_views", icon="TRASH")


CLASSES = (
    TURNABOUT_PG_views,
    TURNABOUT_OT_show_parts,
    TURNABOUT_OT_add_stills,
    TURNABOUT_OT_add_reveal,
    TURNABOUT_OT_remove_reveal,
    TURNABOUT_OT_apply_stripes,
    TURNABOUT_OT_clear_views,
    TURNABOUT_OT_add_slice_rig,
    TURNABOUT_OT_render_slices,
    TURNABOUT_OT_add_level_points,
    TURNABOUT_OT_remove_level_points,
    TURNABOUT_PT_views,
)


def register() -> None:
    bpy.types.Scene.turnabout_views = PointerProperty(type=TURNABOUT_PG_views)


def unregister() -> None:
    del bpy.types.Scene.turnabout_views
