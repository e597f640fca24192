"""Clearing a check's results from the scene: the timeline markers, the per-frame list and
verdict, and on every checked object the metric properties with their F-curves (and the
action the check made for them), the heat colour attribute and the double-curve object.

Only what :func:`turnabout_blender.check_objects.apply_outcome` made is removed: other
Turnabout records share the ``turnabout_`` prefix (a view's tag, a curve wall's record), so
a metric property is known by the description written with it.
"""

from __future__ import annotations

import bpy

from .check_objects import (
    CURVE_SUFFIX,
    HEAT_ATTRIBUTE,
    MARKER_FAIL,
    MARKER_QUADRUPLE,
    MARKER_WORST,
    METRIC_DESCRIPTION,
    METRIC_PREFIX,
    METRICS_ACTION_SUFFIX,
)

MARKERS = (MARKER_FAIL, MARKER_WORST, MARKER_QUADRUPLE)


def _is_metric(ob, key: str) -> bool:
    """Whether custom property ``key`` of ``ob`` is a check metric (other Turnabout tags such
    as a view's or a curve wall's share the prefix, so the description written with it is
    what tells)."""
    if not key.startswith(METRIC_PREFIX):
        return False
    try:
        description = ob.id_properties_ui(key).as_dict().get("description", "")
    except TypeError:  # not a number: not ours
        return False
    return description.startswith(METRIC_DESCRIPTION)


def _metric_keys(ob) -> list[str]:
    return [k for k in ob.keys() if _is_metric(ob, k)]


def _has_check_data(ob) -> bool:
    return bool(
        _metric_keys(ob)
        or (ob.type == "MESH" and HEAT_ATTRIBUTE in ob.data.color_attributes)
        or bpy.data.objects.get(ob.name + CURVE_SUFFIX) is not None
    )


def _remove_metric_curves(ob, keys) -> None:
    """Remove the F-curves of the metric properties ``keys``, and the action the check made
    once nothing else is in it."""
    ad = ob.animation_data
    action = ad.action if ad is not None else None
    if action is None:
        return
    paths = {f'["{k}"]' for k in keys}
    if hasattr(action, "layers"):  # Blender 4.4+: layered actions
        bags = [b for layer in action.layers for strip in layer.strips for b in strip.channelbags]
    else:  # pragma: no cover - Blender 4.2/4.3
        bags = [action]
    left = 0
    for bag in bags:
        for fc in [fc for fc in bag.fcurves if fc.data_path in paths]:
            bag.fcurves.remove(fc)
        left += len(bag.fcurves)
    if left == 0 and action.name == ob.name + METRICS_ACTION_SUFFIX:
        ad.action = None
        if action.users == 0:
            bpy.data.actions.remove(action)


def clear_object(ob) -> None:
    """Remove what a check showed on ``ob``: metric properties and their curves, the heat
    attribute and the double-curve object."""
    keys = _metric_keys(ob)
    _remove_metric_curves(ob, keys)
    for key in keys:
        del ob[key]
    if ob.type == "MESH" and HEAT_ATTRIBUTE in ob.data.color_attributes:
        ob.data.color_attributes.remove(ob.data.color_attributes[HEAT_ATTRIBUTE])
    cob = bpy.data.objects.get(ob.name + CURVE_SUFFIX)
    if cob is not None:
        cu = cob.data
        bpy.data.objects.remove(cob)
        if cu is not None and cu.users == 0:
            bpy.data.curves.remove(cu)


class TURNABOUT_OT_clear_check(bpy.types.Operator):
    """Remove the check's markers, list, metric curves, heat colours and double-curve objects
    from the scene, whatever is selected"""

    bl_idname = "turnabout.clear_check"
    bl_label = "Clear Check Results"
    bl_options = {"REGISTER", "UNDO"}

    def execute(self, context):
        scene = context.scene
        s = scene.turnabout
        markers = [m for m in scene.timeline_markers if m.name in MARKERS]
        checked = [ob for ob in scene.objects if _has_check_data(ob)]
        if not (markers or checked or len(s.results) or s.last_verdict):
            self.report({"INFO"}, "no check results to clear")
            return {"CANCELLED"}
        for m in markers:
            scene.timeline_markers.remove(m)
        s.results.clear()
        s.last_verdict = ""
        for ob in checked:
            clear_object(ob)
        return {"FINISHED"}


CLASSES = (TURNABOUT_OT_clear_check,)
