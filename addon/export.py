"""Export the selected animated objects through Blender's own Alembic and USD exporters."""

from __future__ import annotations

import os

import bpy
from bpy.props import BoolProperty, StringProperty
from bpy_extras.io_utils import ExportHelper


def export_alembic(scene, filepath: str, selected_only: bool = True) -> str:
    """Write an Alembic file of the scene range; returns the absolute path."""
    path = os.path.abspath(bpy.path.abspath(filepath))
    bpy.ops.wm.alembic_export(
        filepath=path,
        start=scene.frame_start,
        end=scene.frame_end,
        selected=selected_only,
        as_background_job=False,
    )
    return path


def export_usd(scene, filepath: str, selected_only: bool = True) -> str:
    """Write a USD file with the animation of the scene range; returns the absolute path."""
    path = os.path.abspath(bpy.path.abspath(filepath))
    bpy.ops.wm.usd_export(
        filepath=path,
        selected_objects_only=selected_only,
        export_animation=True,
        export_materials=True,
    )
    return path


class _ExportMixin(ExportHelper):
    selected_only: BoolProperty(name="Selected only", default=True)

    @classmethod
    def poll(cls, context):
        return context.active_object is not None

    def _run(self, context, fn):
        from turnabout.output import OutputError, check_output_file

        try:
            check_output_file(os.path.abspath(bpy.path.abspath(self.filepath)), "export")
        except OutputError as exc:
            self.report({"ERROR"}, str(exc))
            return {"CANCELLED"}
        try:
            path = fn(context.scene, self.filepath, self.selected_only)
        except RuntimeError as exc:
            self.report({"ERROR"}, f"export failed: {exc}")
            return {"CANCELLED"}
        self.report({"INFO"}, f"exported {path}")
        return {"FINISHED"}


class TURNABOUT_OT_export_alembic(bpy.types.Operator, _ExportMixin):
    """Export the animation as Alembic (.abc) for other packages and render farms"""

    bl_idname = "turnabout.export_alembic"
    bl_label = "Export Alembic"
    filename_ext = ".abc"
    filter_glob: StringProperty(default="*.abc", options={"HIDDEN"})

    def execute(self, context):
        return self._run(context, export_alembic)


class TURNABOUT_OT_export_usd(bpy.types.Operator, _ExportMixin):
    """Export the animation as USD (.usdc)"""

    bl_idname = "turnabout.export_usd"
    bl_label = "Export USD"
    filename_ext = ".usdc"
    filter_glob: StringProperty(default="*.usd;*.usdc;*.usda", options={"HIDDEN"})

    def execute(self, context):
        return self._run(context, export_usd)


CLASSES = (TURNABOUT_OT_export_alembic, TURNABOUT_OT_export_usd)
