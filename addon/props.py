"""Settings of the add-on, stored on the scene as ``scene.turnabout``.

Every construction control of the core appears here under the core's own name
(``strips``, ``depth``, ``<stage>_start`` / ``<stage>_end``); ``controls_from_settings``
turns them into a validated :class:`turnabout.eversion.Controls`, so invalid values are
refused with the core's message.
"""

from __future__ import annotations

import bpy
from bpy.props import (
    BoolProperty,
    CollectionProperty,
    EnumProperty,
    FloatProperty,
    FloatVectorProperty,
    IntProperty,
    PointerProperty,
    StringProperty,
)

from turnabout.commands.controls_options import PANEL_LABELS as LABELS
from turnabout.commands.controls_options import depth_default_text
from turnabout.eversion import (
    DEFAULT_FRAMES,
    MAX_STRIPS,
    MIN_STRIPS,
    STAGE_HELP,
    STAGE_NAMES,
    Controls,
    default_depth,
    default_frames,
    depth_range,
)
from turnabout.eversion.spacing import (
    EVEN_PER_STRIP,
    EVEN_RINGS,
    MIN_LAT_RINGS,
    MIN_SAMPLES_PER_WAVE,
)

# Our default side colours: a warm apricot outside, a deep teal inside.
OUTER_COLOUR = (0.93, 0.52, 0.22, 1.0)
INNER_COLOUR = (0.08, 0.42, 0.52, 1.0)
GUIDE_TINT = (0.98, 0.93, 0.80, 1.0)

# Path settings whose default is beside the .blend ('//'): Blender 4.5+ accepts '//' in a
# path property only when the property says so (older versions have no such option).
PATH_OPTIONS = {"ANIMATABLE"} | (
    {"PATH_SUPPORTS_BLEND_RELATIVE"}
    if "is_path_supports_blend_relative" in bpy.types.Property.bl_rna.properties
    else set()
)

MESH_SPACINGS = (
    (
        "BEND",
        "bend",
        "More vertices where the surface bends over the motion, the same in every strip",
    ),
    (
        "EVEN",
        "even",
        f"Equal longitude and latitude steps ({EVEN_PER_STRIP} per strip x {EVEN_RINGS} rings)",
    ),
)

BAKE_MODES = (
    (
        "SHAPE_KEYS",
        "Shape keys",
        "Absolute shape keys driven by evaluation time, stored in the .blend",
    ),
    (
        "POINT_CACHE",
        "Point cache",
        "A PC2 file read by a Mesh Cache modifier (small .blend, long shots)",
    ),
)


class TURNABOUT_PG_frame_result(bpy.types.PropertyGroup):
    """One row of the per-frame check list."""

    frame: IntProperty(name="Frame")
    verdict: StringProperty(name="Verdict")
    reasons: StringProperty(name="Reasons")


def _stage_annotations() -> dict:
    timing = Controls().timing
    out = {}
    for stage in STAGE_NAMES:
        a, b = timing[stage]
        out[f"{stage}_start"] = FloatProperty(
            name=f"{LABELS[stage]} start",
            description=f"When {STAGE_HELP[stage]} begins, as a fraction of the motion (0-1)",
            default=a,
            min=0.0,
            max=1.0,
            precision=3,
            step=1,
        )
        out[f"{stage}_end"] = FloatProperty(
            name=f"{LABELS[stage]} end",
            description=f"When {STAGE_HELP[stage]} ends, as a fraction of the motion (0-1)",
            default=b,
            min=0.0,
            max=1.0,
            precision=3,
            step=1,
        )
    return out


class TURNABOUT_PG_settings(bpy.types.PropertyGroup):
    # --- construction
    strips: IntProperty(
        name=LABELS["strips"],
        description=f"Number of guide strips, the symmetry order ({MIN_STRIPS}-{MAX_STRIPS})",
        default=MIN_STRIPS,
        min=MIN_STRIPS,
        max=MAX_STRIPS,
    )
    auto_depth: BoolProperty(
        name="Default depth",
        description="Use the documented corrugation depth for the strip count",
        default=True,
    )
    depth: FloatProperty(
        name=LABELS["depth"],
        description="Corrugation depth as a fraction of the sphere's radius "
        f"({depth_range()[0]:g}-{depth_range()[1]:g}; the documented "
        f"depth is {depth_default_text()})",
        default=default_depth(MIN_STRIPS),
        min=depth_range()[0],
        max=depth_range()[1],
        precision=4,
        step=0.1,
    )
    # --- frames and sampling
    frames: IntProperty(
        name=LABELS["frames"],
        description=f"Length of the motion in frames (2 or more). {DEFAULT_FRAMES} "
        f"({DEFAULT_FRAMES / 24:g} s at 24 fps) keeps "
        f"every vertex of 8 strips within one edge length per frame; 16 strips need "
        f"{default_frames(MAX_STRIPS)}",
        default=DEFAULT_FRAMES,
        min=2,
        soft_max=2000,
    )
    frame_start: IntProperty(
        name="Start frame",
        description="Scene frame at which the motion starts",
        default=1,
    )
    key_step: IntProperty(
        name="Key every",
        description="Store a shape every this many frames; frames between are blended linearly",
        default=1,
        min=1,
        soft_max=20,
    )
    mesh_lon: IntProperty(
        name=LABELS["lon"],
        description="Longitude samples around each ring, a multiple of strips with at least "
        f"{MIN_SAMPLES_PER_WAVE} per strip (0 = the spacing's default)",
        default=0,
        min=0,
        soft_max=1024,
    )
    mesh_lat: IntProperty(
        name=LABELS["lat"],
        description=f"Latitude rings between the poles, at least {MIN_LAT_RINGS} "
        "(0 = the spacing's default)",
        default=0,
        min=0,
        soft_max=512,
    )
    mesh_spacing: EnumProperty(
        name=LABELS["spacing"],
        items=MESH_SPACINGS,
        default="BEND",
        description="Where the mesh puts its vertices",
    )
    bake_mode: EnumProperty(name="Store as", items=BAKE_MODES, default="SHAPE_KEYS")
    cache_dir: StringProperty(
        name="Cache folder",
        description="Folder for point-cache files ('//' = beside the .blend)",
        default="//turnabout_cache/",
        subtype="DIR_PATH",
        options=PATH_OPTIONS,
    )
    memory_limit_mb: FloatProperty(
        name="Memory limit (MB)",
        description="Refuse to bake when the estimated memory exceeds this many megabytes",
        default=4096.0,
        min=1.0,
        soft_max=65536.0,
    )
    # --- look
    outer_colour: FloatVectorProperty(
        name="Outer side",
        subtype="COLOR",
        size=4,
        min=0.0,
        max=1.0,
        default=OUTER_COLOUR,
    )
    inner_colour: FloatVectorProperty(
        name="Inner side",
        subtype="COLOR",
        size=4,
        min=0.0,
        max=1.0,
        default=INNER_COLOUR,
    )
    colour_strips: BoolProperty(
        name="Tint guide strips",
        description="Tint every other strip so guide and corrugated strips read apart",
        default=False,
    )
    guide_tint: FloatVectorProperty(
        name="Guide tint",
        subtype="COLOR",
        size=4,
        min=0.0,
        max=1.0,
        default=GUIDE_TINT,
    )
    # --- checking
    check_use_scene_range: BoolProperty(
        name="Scene range",
        description="Check the scene's frame range",
        default=True,
    )
    check_start: IntProperty(name="First frame", default=1)
    check_end: IntProperty(name="Last frame", default=DEFAULT_FRAMES)
    check_intersections: BoolProperty(
        name="Double curves",
        description="Find self-intersections (double curves and triple points); slower",
        default=True,
    )
    check_quadruple_points: BoolProperty(
        name="Four-sheet moments",
        description="Also find the quadruple points between frames (needs Double curves); "
        "marks each on the timeline",
        default=False,
    )
    check_curve_object: BoolProperty(
        name="Double-curve object",
        description="Add the current frame's double curves as a curve object",
        default=False,
    )
    report_dir: StringProperty(
        name="Report folder",
        description="Where the JSON and PNG reports go ('//' = beside the .blend)",
        default="//",
        subtype="DIR_PATH",
        options=PATH_OPTIONS,
    )
    results: CollectionProperty(type=TURNABOUT_PG_frame_result)
    results_index: IntProperty(name="Frame", default=0)
    last_verdict: StringProperty(name="Verdict", default="")


TURNABOUT_PG_settings.__annotations__.update(_stage_annotations())


def _panel_float(value) -> float:
    """A panel float as the decimal the user typed: Blender keeps float properties in single
    precision (0.13 comes back as 0.12999999523), and the core's range and windows are
    decimals. Single precision is within 6e-8 of any value in [0, 1], so six decimals give
    back every value typed with up to six."""
    return round(float(value), 6)


def controls_from_settings(settings):
    """A validated Controls from the scene settings (raises the core's ControlError)."""
    timing = {
        s: tuple(_panel_float(getattr(settings, f"{s}_{end}")) for end in ("start", "end"))
        for s in STAGE_NAMES
    }
    depth = None if settings.auto_depth else _panel_float(settings.depth)
    return Controls(strips=int(settings.strips), depth=depth, timing=timing)


CLASSES = (TURNABOUT_PG_frame_result, TURNABOUT_PG_settings)


def register() -> None:
    bpy.types.Scene.turnabout = PointerProperty(type=TURNABOUT_PG_settings)


def unregister() -> None:
    del bpy.types.Scene.turnabout
