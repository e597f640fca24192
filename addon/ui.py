"""The Add > Mesh entry and the "Turnabout" tab in the 3D View sidebar."""

from __future__ import annotations

import bpy

from turnabout.eversion import STAGE_NAMES

from .bake import is_eversion_object

TAB = "Turnabout"


class _SidebarPanel:
    bl_space_type = "VIEW_3D"
    bl_region_type = "UI"
    bl_category = TAB


class TURNABOUT_PT_build(_SidebarPanel, bpy.types.Panel):
    bl_label = "Everting Sphere"

    def draw(self, context):
        s = context.scene.turnabout
        col = self.layout.column(align=False)
        row = col.row(align=True)
        row.prop(s, "strips")
        row.operator("turnabout.use_tuned_controls", icon="PRESET")
        row = col.row(align=True)
        row.prop(s, "auto_depth")
        sub = row.row()
        sub.enabled = not s.auto_depth
        sub.prop(s, "depth", text="")
        box = col.box()
        box.label(text="Stages (fractions of the motion)")
        grid = box.grid_flow(columns=3, align=True)
        for stage in STAGE_NAMES:
            grid.label(text=stage.capitalize())
            grid.prop(s, f"{stage}_start", text="")
            grid.prop(s, f"{stage}_end", text="")
        col.separator()
        col.prop(s, "frames")
        col.prop(s, "frame_start")
        col.prop(s, "key_step")
        row = col.row(align=True)
        row.prop(s, "mesh_lon")
        row.prop(s, "mesh_lat")
        col.prop(s, "mesh_spacing")
        col.prop(s, "bake_mode")
        if s.bake_mode == "POINT_CACHE":
            col.prop(s, "cache_dir")
        col.prop(s, "memory_limit_mb")
        row = col.row(align=True)
        row.operator("turnabout.add_eversion", text="New", icon="ADD")
        ob = context.active_object
        sub = row.row(align=True)
        sub.enabled = is_eversion_object(ob)
        sub.operator("turnabout.rebuild", text="Re-build", icon="FILE_REFRESH")
        sub.operator("turnabout.load_settings", text="", icon="IMPORT")


class TURNABOUT_PT_look(_SidebarPanel, bpy.types.Panel):
    bl_label = "Sides"
    bl_options = {"DEFAULT_CLOSED"}

    def draw(self, context):
        s = context.scene.turnabout
        col = self.layout.column()
        col.prop(s, "outer_colour")
        col.prop(s, "inner_colour")
        col.prop(s, "colour_strips")
        sub = col.row()
        sub.enabled = s.colour_strips
        sub.prop(s, "guide_tint")
        col.operator("turnabout.apply_look", icon="MATERIAL")


class TURNABOUT_UL_frames(bpy.types.UIList):
    def draw_item(self, context, layout, data, item, icon, active_data, active_prop, index):
        ok = item.verdict.lower() in ("pass", "ok", "passed", "good")
        row = layout.row(align=True)
        row.label(text=str(item.frame), icon="CHECKMARK" if ok else "ERROR")
        row.label(text=item.verdict)
        row.label(text=item.reasons)


class TURNABOUT_PT_check(_SidebarPanel, bpy.types.Panel):
    bl_label = "Check"

    def draw(self, context):
        s = context.scene.turnabout
        col = self.layout.column()
        col.prop(s, "check_use_scene_range")
        row = col.row(align=True)
        row.enabled = not s.check_use_scene_range
        row.prop(s, "check_start")
        row.prop(s, "check_end")
        col.prop(s, "check_intersections")
        col.prop(s, "check_quadruple_points")
        col.prop(s, "check_curve_object")
        col.prop(s, "report_dir")
        row = col.row(align=True)
        row.operator("turnabout.check", icon="VIEWZOOM")
        row.operator("turnabout.clear_check", text="", icon="X")
        if s.last_verdict:
            col.label(text=f"Verdict: {s.last_verdict}")
        if len(s.results):
            col.template_list("TURNABOUT_UL_frames", "", s, "results", s, "results_index", rows=5)


class TURNABOUT_PT_export(_SidebarPanel, bpy.types.Panel):
    bl_label = "Export"
    bl_options = {"DEFAULT_CLOSED"}

    def draw(self, context):
        row = self.layout.row(align=True)
        row.operator("turnabout.export_alembic", text="Alembic", icon="EXPORT")
        row.operator("turnabout.export_usd", text="USD", icon="EXPORT")


def draw_add_menu(self, context):
    self.layout.operator("turnabout.add_eversion", text="Everting Sphere", icon="MESH_UVSPHERE")


CLASSES = (
    TURNABOUT_UL_frames,
    TURNABOUT_PT_build,
    TURNABOUT_PT_look,
    TURNABOUT_PT_check,
    TURNABOUT_PT_export,
)


def register() -> None:
    bpy.types.VIEW3D_MT_mesh_add.append(draw_add_menu)


def unregister() -> None:
    bpy.types.VIEW3D_MT_mesh_add.remove(draw_add_menu)
