"""Plane curves in Blender: the turning number of the active curve, and walls that morph.

The "Plane Curves" section of the Turnabout sidebar tab shows the turning number of the
active curve object (both of the core's methods, which must agree) and builds the
Whitney-Graustein regular homotopy from the other selected curve to the active one as an
animated mesh: a thin vertical wall along the curve, baked as absolute shape keys with
the add-on's bake code and given the two-sided material, plus optional mark beads (small
octahedra at the points where the tangent points in the chosen direction, one colour per
sign). All geometry comes from the core (:mod:`turnabout.curves`,
:mod:`turnabout.curves.wall`); this module reads curves, makes Blender data and reports.

Settings live on the scene as ``scene.turnabout_curves``.
"""

from __future__ import annotations

import json
import math

import bpy
import numpy as np
from bpy.props import BoolProperty, EnumProperty, FloatProperty, IntProperty, PointerProperty

from .ui import TAB

PROP_TAG = "turnabout_curves"  # object custom property holding the build record (JSON)
BEADS_SUFFIX = " marks"
# our colours for the mark beads: gold where the curve turns left, violet where it turns right
LEFT_COLOUR = (0.95, 0.76, 0.16, 1.0)
RIGHT_COLOUR = (0.42, 0.22, 0.78, 1.0)

EASING_ITEMS = (
    ("smooth", "Smooth", "Start and end at rest (6t^5 - 15t^4 + 10t^3)"),
    ("linear", "Linear", "Constant pace"),
)


class TURNABOUT_PG_curve_settings(bpy.types.PropertyGroup):
    frames: IntProperty(
        name="Frames",
        description="Length of the motion in frames (2 or more)",
        default=60,
        min=2,
        soft_max=1000,
    )
    frame_start: IntProperty(
        name="Start frame", description="Scene frame at which the motion starts", default=1
    )
    samples: IntProperty(
        name="Samples",
        description="Points along each curve, equally spaced in arc length (16-8192)",
        default=256,
        min=16,
        max=8192,
    )
    easing: EnumProperty(name="Pace", items=EASING_ITEMS, default="smooth")
    height: FloatProperty(
        name="Wall height",
        description="Height of the wall, as a fraction of the curves' size (0.005-1)",
        default=0.08,
        min=0.005,
        max=1.0,
        precision=3,
        step=0.5,
    )
    direction: FloatProperty(
        name="Direction",
        description="The tangent direction counted for the turning number and the marks",
        default=0.0,
        subtype="ANGLE",
    )
    show_marks: BoolProperty(
        name="Mark beads",
        description="Add beads at the points where the tangent has the chosen direction",
        default=True,
    )
    bead_size: FloatProperty(
        name="Bead size",
        description="Bead radius, as a fraction of the wall height (0.05-2)",
        default=0.35,
        min=0.05,
        max=2.0,
        precision=2,
    )


# ----------------------------------------------------------------------------- reading


def turning_summary(ob, depsgraph=None, samples: int = 1024, direction: float = 0.0):
    """The core's turning report of a curve object, or the reason it has none.

    Returns (TurningReport, None) or (None, message).
    """
    from turnabout.curves import turning_report

    from .curve_input import curve_points_of_object

    try:
        pts = curve_points_of_object(ob, depsgraph, samples=samples)
        return turning_report(pts, direction=direction), None
    except ValueError as exc:  # CurveInputError, the core's CurveError
        return None, str(exc)


def source_and_target(context):
    """(source, target): the other selected object and the active one; ValueError if not two."""
    target = context.active_object
    others = [o for o in context.selected_objects if o is not target]
    if target is None or len(others) != 1:
        raise ValueError(
            f"select two curve objects: the start curve, then (active) the end curve; "
            f"{len(context.selected_objects)} selected"
            + ("" if target is not None else ", none active")
        )
    return others[0], target


# ----------------------------------------------------------------------------- building


def _new_mesh(name: str, first: np.ndarray, faces: np.ndarray):
    """A mesh of polygons of one size, ``faces`` (M, k) int, at ``first`` (V, 3) float32."""
    m, k = faces.shape
    me = bpy.data.meshes.new(name)
    me.vertices.add(first.shape[0])
    me.vertices.foreach_set("co", np.ascontiguousarray(first, np.float32).ravel())
    me.loops.add(m * k)
    me.loops.foreach_set("vertex_index", np.ascontiguousarray(faces, np.int32).ravel())
    me.polygons.add(m)
    me.polygons.foreach_set("loop_start", np.arange(0, m * k, k, dtype=np.int32))
    me.update(calc_edges=True)
    return me


def _bake_keys(ob, positions: np.ndarray, frame_start: int, times: np.ndarray) -> None:
    """One absolute shape key per frame through the eversion bake's key writer."""
    from turnabout.baking.plan import BakePlan

    from . import bake

    n = positions.shape[0]
    plan = BakePlan(
        controls=None,
        mesh=None,
        frames=n,
        frame_start=frame_start,
        key_step=1,
        mode="SHAPE_KEYS",
        key_offsets=np.arange(n, dtype=np.int64),
        times=np.asarray(times, np.float64),
    )
    bake._write_shape_keys(ob, plan, positions, lambda d, t: None)


def _flat_material(name: str, colour):
    mat = bpy.data.materials.new(name)
    if getattr(mat, "node_tree", None) is None:  # Blender 4.2 starts without nodes
        mat.use_nodes = True
    tree = mat.node_tree
    bsdf = tree.nodes.get("Principled BSDF") if tree is not None else None
    if bsdf is not None:
        bsdf.inputs["Base Color"].default_value = tuple(colour)
    mat.diffuse_color = tuple(colour)
    return mat


def compute_wall(source_pts, target_pts, settings, names=("A", "B")):
    """Everything the build needs, from the core; nothing in Blender is touched.

    Returns (homotopy, wall positions (F, 2N, 3) float32, quads (N, 4) int32, height,
    beads or None). Raises the core's errors (HomotopyRefused, CurveError, ...).
    """
    from turnabout.curves import marks_per_frame, regular_homotopy
    from turnabout.curves.wall import mark_beads, wall_faces, wall_height_for, wall_positions

    h = regular_homotopy(
        source_pts,
        target_pts,
        frames=int(settings.frames),
        samples=int(settings.samples),
        easing=settings.easing,
        names=names,
        direction=float(settings.direction),
    )
    height = wall_height_for(h.points, settings.height)
    positions = wall_positions(h.points, height)
    quads = wall_faces(h.points.shape[1])
    beads = None
    if settings.show_marks:
        marks = marks_per_frame(h.points, direction=float(settings.direction))
        beads = mark_beads(marks, radius=settings.bead_size * height, z=height)
        if beads.n_tracks == 0:
            beads = None
    return h, positions, quads, height, beads


def build_wall(context, source, target, settings):
    """Build the wall object (and its beads) from ``source`` to ``target``; returns the wall.

    Reads and computes everything first; Blender data is made only when all of it
    succeeded, so a refusal leaves the file unchanged.
    """
    from . import look
    from .curve_input import curve_points_of_object

    dg = context.evaluated_depsgraph_get()
    n = int(settings.samples)
    a = curve_points_of_object(source, dg, samples=n)
    b = curve_points_of_object(target, dg, samples=n)
    h, positions, quads, height, beads = compute_wall(a, b, settings, (source.name, target.name))

    # --- from here on Blender data is created
    scene = context.scene
    start = int(settings.frame_start)
    name = f"{source.name} to {target.name}"
    wall = bpy.data.objects.new(name, _new_mesh(name, positions[0], quads))
    scene.collection.objects.link(wall)
    wall.matrix_world = target.matrix_world.copy()
    _bake_keys(wall, positions, start, h.times)
    look.apply_look(wall, scene.turnabout)
    checks = h.checks
    wall[PROP_TAG] = json.dumps(
        {
            "source": source.name,
            "target": target.name,
            "turning_number": int(h.turning_number),
            "frames": int(positions.shape[0]),
            "frame_start": start,
            "samples": int(h.points.shape[1]),
            "height": float(height),
            "easing": settings.easing,
            "direction": float(settings.direction),
            "min_speed": float(np.min(checks.min_speed)),
            "max_curvature": float(np.max(checks.max_curvature)),
        }
    )
    if beads is not None:
        bname = name + BEADS_SUFFIX
        bme = _new_mesh(bname, beads.positions[0], beads.faces)
        bme.materials.append(_flat_material(bname + " left", LEFT_COLOUR))
        bme.materials.append(_flat_material(bname + " right", RIGHT_COLOUR))
        # faces come in eights per track; slot 0 for +1 marks, slot 1 for -1
        bme.polygons.foreach_set("material_index", np.repeat((beads.signs < 0).astype(np.int32), 8))
        bob = bpy.data.objects.new(bname, bme)
        scene.collection.objects.link(bob)
        bob.parent = wall
        _bake_keys(bob, beads.positions, start, h.times)
    scene.frame_start = start
    scene.frame_end = start + positions.shape[0] - 1
    return wall


# ----------------------------------------------------------------------------- operators


class TURNABOUT_OT_curve_homotopy(bpy.types.Operator):
    """Animate the other selected curve into the active curve as a wall (regular homotopy)"""

    bl_idname = "turnabout.curve_homotopy"
    bl_label = "Morph Curve Into Active"
    bl_options = {"REGISTER", "UNDO"}

    @classmethod
    def poll(cls, context):
        return context.active_object is not None

    def execute(self, context):
        settings = context.scene.turnabout_curves
        try:
            source, target = source_and_target(context)
            wall = build_wall(context, source, target, settings)
        except (ValueError, RuntimeError) as exc:  # refusals and failed checks
            self.report({"ERROR"}, str(exc))
            return {"CANCELLED"}
        for other in context.selected_objects:
            other.select_set(False)
        context.view_layer.objects.active = wall
        wall.select_set(True)
        rec = json.loads(wall[PROP_TAG])
        self.report(
            {"INFO"},
            f"{wall.name}: {rec['frames']} frames, turning number {rec['turning_number']}, "
            f"lowest speed {rec['min_speed']:.3f} of the mean, "
            f"largest curvature {rec['max_curvature']:.3g}",
        )
        return {"FINISHED"}


# ----------------------------------------------------------------------------- panel


class TURNABOUT_PT_curves(bpy.types.Panel):
    bl_space_type = "VIEW_3D"
    bl_region_type = "UI"
    bl_category = TAB
    bl_label = "Plane Curves"
    bl_options = {"DEFAULT_CLOSED"}

    def draw(self, context):
        s = context.scene.turnabout_curves
        col = self.layout.column()
        ob = context.active_object
        if ob is None or ob.type != "CURVE":
            col.label(text="Select a closed curve object", icon="INFO")
        else:
            rep, why = turning_summary(
                ob, context.evaluated_depsgraph_get(), samples=s.samples, direction=s.direction
            )
            if rep is None:
                col.label(text=why, icon="ERROR")
            else:
                if rep.agree:
                    col.label(text=f"{ob.name}: turning number {rep.by_total_turning}")
                else:  # would be a defect in the core; show both rather than pick one
                    col.label(
                        text=f"{ob.name}: the two methods disagree "
                        f"({rep.by_total_turning} and {rep.by_direction_count})",
                        icon="ERROR",
                    )
                box = col.box()
                box.label(text=f"Total turning: {rep.total_turning / (2 * math.pi):+.3f} turns")
                box.label(
                    text=f"Tangent at {math.degrees(rep.direction):.0f} deg: "
                    f"{rep.passages_left} left, {rep.passages_right} right "
                    f"= {rep.by_direction_count}"
                )
        col.separator()
        col.prop(s, "frames")
        col.prop(s, "frame_start")
        col.prop(s, "samples")
        col.prop(s, "easing")
        col.prop(s, "height")
        col.prop(s, "direction")
        row = col.row(align=True)
        row.prop(s, "show_marks")
        sub = row.row()
        sub.enabled = s.show_marks
        sub.prop(s, "bead_size", text="Size")
        col.operator("turnabout.curve_homotopy", icon="MOD_CURVE")


CLASSES = (TURNABOUT_PG_curve_settings, TURNABOUT_OT_curve_homotopy, TURNABOUT_PT_curves)


def register() -> None:
    bpy.types.Scene.turnabout_curves = PointerProperty(type=TURNABOUT_PG_curve_settings)


def unregister() -> None:
    del bpy.types.Scene.turnabout_curves
