"""Closed plane curves: turning numbers, self-crossings, Whitney-Graustein regular homotopies.

A closed curve is a ``(N, 2) float64`` array of points (the first point is not repeated).
Public API::

    c = closed_curve(points)                            # validate (N, 2) points
    c = curve_from_polyline(points, closed=True)        # polygon vertices, e.g. a poly spline
    seg = bezier_segments_from_knots(co, left, right, closed=True)   # (k, 4, 2)
    c = curve_from_bezier_segments(seg, closed=True, samples=1024)
    xy = curve_points_from_local_xyz(points3)           # refuse non-planar (N, 3) points
    c = curve_from_svg("file.svg", select=None)         # paths and basic shapes
    n = turning_number(c)                               # both methods, checked to agree
    rep = turning_report(c, direction=0.0)              # both figures
    w = whitney_check(c)                                # crossings with signs, Whitney's formula
    h = regular_homotopy(a, b, frames=120)              # points (F, N, 2), checks, plan
    m = marks_per_frame(h.points)                       # marked points per frame
"""

from .crossings import (
    Crossings,
    WhitneyCheck,
    crossing_pairs,
    outer_base_point,
    self_crossings,
    whitney_check,
)
from .homotopy import (
    EASINGS,
    CurveHomotopy,
    FrameChecks,
    HomotopyCheckFailed,
    HomotopyPlan,
    HomotopyRefused,
    check_curve_frames,
    ease,
    homotopy_points,
    plan_homotopy,
    regular_homotopy,
    require_same_turning_number,
)
from .marks import FrameMarks, mark_events, marks_per_frame, track_marks
from .sampling import (
    MAX_POINTS,
    MAX_SAMPLES,
    MIN_POINTS,
    CurveError,
    bezier_segments_from_knots,
    closed_curve,
    cumulative_length,
    curve_from_bezier_segments,
    curve_from_polyline,
    curve_length,
    curve_points_from_local_xyz,
    resample_by_arc_length,
    step_vectors,
    turn_angles,
)
from .svg import SvgCurve, curve_from_svg, read_svg_curves, select_svg_curve, svg_path_data_curves
from .turning import (
    TurningReport,
    direction_passages,
    tangent_angles,
    total_turning,
    turning_number,
    turning_number_by_direction_count,
    turning_number_by_total_turning,
    turning_report,
)

__all__ = [
    "EASINGS",
    "MAX_POINTS",
    "MAX_SAMPLES",
    "MIN_POINTS",
    "Crossings",
    "CurveError",
    "CurveHomotopy",
    "FrameChecks",
    "FrameMarks",
    "HomotopyCheckFailed",
    "HomotopyPlan",
    "HomotopyRefused",
    "SvgCurve",
    "TurningReport",
    "WhitneyCheck",
    "bezier_segments_from_knots",
    "check_curve_frames",
    "closed_curve",
    "crossing_pairs",
    "cumulative_length",
    "curve_from_bezier_segments",
    "curve_from_polyline",
    "curve_from_svg",
    "curve_length",
    "curve_points_from_local_xyz",
    "direction_passages",
    "ease",
    "homotopy_points",
    "mark_events",
    "marks_per_frame",
    "outer_base_point",
    "plan_homotopy",
    "read_svg_curves",
    "regular_homotopy",
    "require_same_turning_number",
    "resample_by_arc_length",
    "select_svg_curve",
    "self_crossings",
    "step_vectors",
    "svg_path_data_curves",
    "tangent_angles",
    "total_turning",
    "track_marks",
    "turn_angles",
    "turning_number",
    "turning_number_by_direction_count",
    "turning_number_by_total_turning",
    "turning_report",
    "whitney_check",
]
