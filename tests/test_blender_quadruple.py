"""Quadruple points on Blender's timeline: one marker at the frame nearest each moment."""

from __future__ import annotations

import numpy as np
import pytest
from blender_support import bpy, fresh_file
from test_check_quadruple import four_spheres

pytestmark = pytest.mark.blender


def test_a_marker_sits_at_the_frame_nearest_each_quadruple_point():
    from turnabout.check import check_animation

    from turnabout_blender.check_objects import (
        MARKER_FAIL,
        MARKER_QUADRUPLE,
        CheckOutcome,
        apply_outcome,
    )

    fresh_file()
    P, F = four_spheres(frames=12)
    me = bpy.data.meshes.new("spheres")
    me.from_pydata(P[0].tolist(), [], F.tolist())
    ob = bpy.data.objects.new("spheres", me)
    bpy.context.scene.collection.objects.link(ob)
    report = check_animation(P, F, quadruple=True)
    q = report.quadruple_points
    assert q.count == 1
    start = 5
    frames = np.arange(start, start + P.shape[0])
    outcome = CheckOutcome(ob.name, frames, P.astype(np.float32), F.astype(np.int32), report)
    scene = bpy.context.scene
    scene.timeline_markers.new(MARKER_FAIL, frame=99)  # a stale marker of ours goes
    scene.timeline_markers.new("someone else's", frame=3)  # other markers stay
    apply_outcome(bpy.context, ob, outcome)
    quad = [m.frame for m in scene.timeline_markers if m.name == MARKER_QUADRUPLE]
    assert quad == [start + int(np.floor(q.time[0] + 0.5))]
    assert "someone else's" in [m.name for m in scene.timeline_markers]
    assert 99 not in [m.frame for m in scene.timeline_markers if m.name == MARKER_FAIL]
    # running the same check again leaves one marker, not two
    apply_outcome(bpy.context, ob, outcome)
    assert len([m for m in scene.timeline_markers if m.name == MARKER_QUADRUPLE]) == 1
