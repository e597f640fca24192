"""Marked points: where the tangent points in the chosen direction, frame by frame.

Their signed count is the turning number (the degree of the tangent map counted at one
regular value; Whitney, "On regular closed curves in the plane", Compositio Math. 4,
1937), so during a regular homotopy it stays constant and marks appear and vanish only
in pairs of opposite sign.
"""

from __future__ import annotations

import numpy as np
from curve_shapes import circle, curl, figure_eight, lopsided_figure_eight, params

from turnabout.curves import mark_events, marks_per_frame, regular_homotopy, track_marks


def dented_circle(n=400, depth=0.6, where=1.5 * np.pi):
    """A circle pushed in near angle ``where``: two inflections, turning number still 1."""
    t = params(n)
    r = 1 - depth * np.exp(-((((t - where + np.pi) % (2 * np.pi) - np.pi) / 0.5) ** 2))
    return np.stack([r * np.cos(t), r * np.sin(t)], axis=1)


def test_counter_clockwise_circle_is_marked_at_its_lowest_point():
    # handbook fact: a counter-clockwise circle moves in +x at its bottom, turning left
    m = marks_per_frame(circle(360))
    pos, sign = m.of_frame(0)
    assert sign.tolist() == [1]
    assert np.allclose(pos[0], [0.0, -1.0], atol=1e-4)


def test_mark_for_the_upward_direction_is_at_the_rightmost_point():
    m = marks_per_frame(circle(360), direction=np.pi / 2)
    pos, sign = m.of_frame(0)
    assert sign.tolist() == [1] and np.allclose(pos[0], [1.0, 0.0], atol=1e-4)


def test_marks_lie_where_the_tangent_has_the_direction():
    # on the analytic lemniscate x = sin t, y = sin t cos t the tangent (cos t, cos 2t)
    # points along +x where cos 2t = 0 and cos t > 0: t = pi/4 and 7 pi/4
    m = marks_per_frame(figure_eight(2000))
    pos, sign = m.of_frame(0)
    t = np.array([np.pi / 4, 7 * np.pi / 4])
    expected = np.stack([np.sin(t), np.sin(t) * np.cos(t)], axis=1)
    d = np.linalg.norm(pos[:, None] - expected[None], axis=2).min(axis=1)
    assert d.max() < 1e-3
    assert sorted(sign.tolist()) == [-1, 1]


def test_signed_count_is_the_turning_number_in_every_frame():
    h = regular_homotopy(curl(800, 2), curl(1000, 2) * [1.5, 0.8], frames=40, samples=600)
    m = marks_per_frame(h.points)
    assert np.all(m.signed_counts == 3)


def test_marks_appear_and_cancel_in_pairs_of_opposite_sign():
    # the dent at the bottom makes the +x tangent occur three times (two new points)
    h = regular_homotopy(circle(400), dented_circle(400), frames=80, samples=400)
    m = marks_per_frame(h.points)
    assert m.counts[0] == 1 and m.counts[-1] == 3
    assert np.all(m.signed_counts == 1)
    assert np.all((m.counts - 1) % 2 == 0)  # always 1 + an even number
    ids = track_marks(m)
    appear, vanish = mark_events(m, ids)
    nf = len(m.counts)
    for f in range(1, nf):  # what appears in a frame sums to zero, and what vanishes
        born = np.flatnonzero(appear == f)
        died = np.flatnonzero(vanish == f)
        born_sum = sum(int(m.signs[ids == k][0]) for k in born)
        died_sum = sum(int(m.signs[ids == k][0]) for k in died)
        assert born_sum == died_sum
    assert np.any(appear > 0)  # a pair really appears during the motion
    for k in range(int(ids.max()) + 1):  # a track keeps its sign
        assert len(set(m.signs[ids == k].tolist())) == 1


def test_figure_eight_homotopy_keeps_signed_count_zero():
    a = figure_eight(500)
    b = lopsided_figure_eight(500) * [1.0, -1.0]
    h = regular_homotopy(a, b, frames=50, samples=500)
    m = marks_per_frame(h.points, direction=0.7)
    assert np.all(m.signed_counts == 0)
    assert np.all(m.counts % 2 == 0) and m.counts.min() >= 2
