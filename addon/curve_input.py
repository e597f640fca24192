"""Read a Blender curve object as a closed plane curve for the core.

Only moves data: the spline's control points are read with ``foreach_get`` from the
evaluated object (falling back to the object's own curve data), in the object's local
frame, and handed to :mod:`turnabout.curves`, which samples, validates and refuses.

Accepted: a curve object with exactly one cyclic Bezier or poly spline lying in the local
plane z = 0. Refused, with a message naming the object and what is wrong: no object, a
non-curve object, no spline or several splines, a NURBS spline, an open spline, control
points off the local XY plane, and whatever the core refuses (cusps, zero-length
segments, too few points).
"""

from __future__ import annotations

import numpy as np

READABLE_SPLINES = ("BEZIER", "POLY")


class CurveInputError(ValueError):
    """A Blender object that cannot be read as a closed plane curve; the message says why."""


def _spline_data(ob, depsgraph=None):
    data = ob.data
    if depsgraph is not None:
        ev = ob.evaluated_get(depsgraph).data
        if ev is not None and hasattr(ev, "splines"):
            data = ev
    return data


def _read_array(collection, attr: str, width: int) -> np.ndarray:
    buf = np.empty(len(collection) * width, np.float64)
    collection.foreach_get(attr, buf)
    return buf.reshape(-1, width)


def curve_points_of_object(ob, depsgraph=None, samples: int = 1024) -> np.ndarray:
    """The closed plane curve of a Blender curve object, in its local XY plane.

    ob : a bpy Object of type 'CURVE' with one cyclic Bezier or poly spline
    depsgraph : read the evaluated object when given
    samples : points of the result, equally spaced in arc length
    Returns (samples, 2) float64. Raises CurveInputError (or the core's CurveError, a
    ValueError too) naming the object and the problem.
    """
    from turnabout.curves import (
        bezier_segments_from_knots,
        curve_from_bezier_segments,
        curve_from_polyline,
        curve_points_from_local_xyz,
    )

    if ob is None:
        raise CurveInputError("curve: nothing is selected; select a curve object")
    name = f"curve object {ob.name!r}"
    if ob.type != "CURVE":
        raise CurveInputError(
            f"{name} is a {ob.type.lower()}, not a curve; select a curve object "
            "(one closed Bezier or poly spline)"
        )
    data = _spline_data(ob, depsgraph)
    splines = data.splines
    if len(splines) != 1:
        raise CurveInputError(
            f"{name} has {len(splines)} splines; exactly one closed spline is allowed "
            "(separate the others into their own objects)"
        )
    sp = splines[0]
    if sp.type not in READABLE_SPLINES:
        raise CurveInputError(
            f"{name}: its spline is {sp.type}; only Bezier and poly splines are read "
            "(convert it with Curve > Set Spline Type)"
        )
    if not sp.use_cyclic_u:
        raise CurveInputError(
            f"{name} is open (its spline is not cyclic); only closed curves have a "
            "turning number: make it cyclic (Curve > Toggle Cyclic)"
        )
    if sp.type == "BEZIER":
        pts = sp.bezier_points
        co = _read_array(pts, "co", 3)
        left = _read_array(pts, "handle_left", 3)
        right = _read_array(pts, "handle_right", 3)
        # a Bezier curve lies in z = 0 exactly when all its control points do
        xy = curve_points_from_local_xyz(np.concatenate([co, left, right]), name=name)
        n = co.shape[0]
        seg = bezier_segments_from_knots(xy[:n], xy[n : 2 * n], xy[2 * n :], closed=True)
        return curve_from_bezier_segments(seg, closed=True, samples=samples, name=name)
    co = _read_array(sp.points, "co", 4)[:, :3]  # poly points carry a weight as w
    xy = curve_points_from_local_xyz(co, name=name)
    return curve_from_polyline(xy, closed=True, samples=samples, name=name)
