"""Closed-curve validation, arc length, resampling and spline sampling.

Sample counts come from the curve's own bends (turnabout.curves.bezier): checked against
turning numbers and crossing counts known from the mathematics, not against our own output.
"""

from __future__ import annotations

import numpy as np
import pytest
from curve_shapes import circle, curl, ellipse, limacon
from references import require

from turnabout.curves import (
    MAX_POINTS,
    CurveError,
    bezier_segments_from_knots,
    closed_curve,
    cumulative_length,
    curve_from_bezier_segments,
    curve_from_polyline,
    curve_length,
    curve_points_from_local_xyz,
    resample_by_arc_length,
    turning_number,
    whitney_check,
)
from turnabout.curves.bezier import STEP_TURN, sample_pieces

# four-arc cubic Bezier circle: handle length 4/3 (sqrt(2) - 1) of the radius
# (common practice; its largest radial error is about 2.7e-4 of the radius)
KAPPA = 4.0 / 3.0 * (np.sqrt(2.0) - 1.0)


def bezier_circle_segments(radius=1.0, ccw=True):
    ang = np.arange(4) * np.pi / 2
    if not ccw:
        ang = -ang
    knots = radius * np.stack([np.cos(ang), np.sin(ang)], axis=1)
    tangents = np.stack([-np.sin(ang), np.cos(ang)], axis=1) * (1 if ccw else -1)
    h = KAPPA * radius
    return bezier_segments_from_knots(knots, knots - h * tangents, knots + h * tangents)


def test_ellipse_length_matches_scipy_quad_of_the_analytic_speed():
    quad = require("scipy.integrate").quad
    a, b = 2.0, 0.7
    exact, _ = quad(lambda t: np.hypot(a * np.sin(t), b * np.cos(t)), 0, 2 * np.pi, limit=200)
    c = ellipse(20000, a, b)
    assert abs(curve_length(c) - exact) < 1e-6 * exact
    # resampling by arc length keeps the length and spaces the points evenly
    r = resample_by_arc_length(c, 5000)
    steps = np.diff(cumulative_length(r))
    assert abs(curve_length(r) - exact) < 1e-5 * exact
    assert steps.max() / steps.min() < 1.001


def test_resampling_starts_where_asked():
    c = circle(1000)
    r = resample_by_arc_length(c, 100, start=0.25)
    s = cumulative_length(c)
    target = 0.25 * s[-1]
    k = np.searchsorted(s, target) - 1
    expected = c[k] + (target - s[k]) / (s[k + 1] - s[k]) * (c[(k + 1) % 1000] - c[k])
    assert np.allclose(r[0], expected)


def test_bezier_circle_is_round_and_turns_once():
    c = curve_from_bezier_segments(bezier_circle_segments(2.0), samples=512)
    radius = np.hypot(*c.T)
    assert np.abs(radius / 2.0 - 1).max() < 3e-4  # the known error of the 4-arc circle
    assert turning_number(c) == 1
    cw = curve_from_bezier_segments(bezier_circle_segments(2.0, ccw=False), samples=512)
    assert turning_number(cw) == -1


def test_bezier_segments_from_knots_use_each_knots_two_handles():
    kn = np.array([[0.0, 0], [1, 0], [1, 1]])
    hi = kn + [[-0.1, 0], [0, -0.1], [0.1, 0]]
    ho = kn + [[0.1, 0], [0, 0.1], [-0.1, 0]]
    seg = bezier_segments_from_knots(kn, hi, ho, closed=True)
    assert seg.shape == (3, 4, 2)
    assert np.array_equal(seg[1], np.stack([kn[1], ho[1], hi[2], kn[2]]))
    assert np.array_equal(seg[2], np.stack([kn[2], ho[2], hi[0], kn[0]]))
    assert bezier_segments_from_knots(kn, hi, ho, closed=False).shape == (2, 4, 2)


def test_open_bezier_spline_is_refused():
    seg = bezier_circle_segments()[:3]
    with pytest.raises(CurveError, match="open"):
        curve_from_bezier_segments(seg, closed=False)


def test_cyclic_bezier_spline_with_a_gap_is_closed_by_a_straight_step():
    seg = bezier_circle_segments()[:3]  # three quarters of a circle, cyclic
    c = curve_from_bezier_segments(seg, closed=True, samples=400)
    assert turning_number(c) == 1


def test_zero_length_bezier_segment_is_refused():
    seg = bezier_circle_segments()
    p = seg[0, 3]
    dot = np.repeat(p[None], 4, axis=0)[None]
    seg = np.concatenate([seg[:1], dot, seg[1:]])
    with pytest.raises(CurveError, match="segment 1 has zero length"):
        curve_from_bezier_segments(seg)


def test_cusp_in_a_bezier_segment_is_refused():
    # B'(1/2) = 3/4 (P3 + P2 - P1 - P0) vanishes when P3 + P2 = P1 + P0: a cusp at t = 1/2
    # (derived from the Bernstein form of the derivative)
    seg = np.array(
        [
            [[0.0, 0.0], [1.0, 1.0], [0.0, 1.0], [1.0, 0.0]],
            [[1.0, 0.0], [0.7, -0.5], [0.3, -0.5], [0.0, 0.0]],
        ]
    )
    with pytest.raises(CurveError, match="cusp"):
        curve_from_bezier_segments(seg, samples=400)


def test_polyline_keeps_its_points_and_refuses_open_ends():
    sq = [[0, 0], [1, 0], [1, 1], [0, 1]]
    assert np.array_equal(curve_from_polyline(sq), np.array(sq, float))
    with pytest.raises(CurveError, match="open"):
        curve_from_polyline(sq, closed=False)
    # a repeated end point closes it
    assert curve_from_polyline(sq + [[0, 0]], closed=False).shape == (4, 2)


@pytest.mark.parametrize(
    "points, message",
    [
        (np.zeros((3, 2)) + [[0, 0], [1, 0], [0, 1]], "at least 4"),
        ([[0, 0], [1, 0], [np.nan, 1], [0, 1]], "not finite"),
        ([[0, 0], [1, 0], [1, 0], [1, 1], [0, 1]], "zero-length step"),
        ([[0, 0], [2, 0], [1, 0], [1, 1], [0, 1]], "cusp"),
        (np.zeros((5, 3)), r"\(N, 2\)"),
        ([["a", "b"]] * 5, "real numbers"),
        (np.zeros((6, 2)), "no length"),
    ],
)
def test_bad_curves_are_refused_with_a_clear_message(points, message):
    with pytest.raises(CurveError, match=message):
        closed_curve(points)


def test_oversized_curves_are_refused_before_copying():
    big = np.broadcast_to(np.zeros(2), (MAX_POINTS + 1, 2))
    with pytest.raises(CurveError, match="at most"):
        closed_curve(big)


def test_points_off_the_local_plane_are_refused():
    c = limacon(200)
    flat = np.column_stack([c, np.zeros(200)])
    assert np.array_equal(curve_points_from_local_xyz(flat), c)
    tilted = flat.copy()
    tilted[:, 2] = 0.01 * c[:, 0]
    with pytest.raises(CurveError, match="not planar"):
        curve_points_from_local_xyz(tilted)


# ------------------------------------------------------------- sample counts from the geometry


def hermite_segments(z, dz, n: int) -> np.ndarray:
    """Cubic Bezier segments through z(t), t in [0, 2 pi), matching z and z' at n knots.

    The Hermite-to-Bezier handles P0 + z'(t) dt / 3 (common practice). Returns (n, 4, 2).
    """
    t = 2 * np.pi * np.arange(n + 1) / n
    p, d = z(t), dz(t) * (2 * np.pi / n) / 3
    ctrl = np.stack([p[:-1], p[:-1] + d[:-1], p[1:] - d[1:], p[1:]], axis=1)
    ctrl[-1, 3] = p[0]
    return np.stack([ctrl.real, ctrl.imag], axis=-1)


def curl_segments(k: int, n: int = 48) -> np.ndarray:
    """z = e^{it} + (1.6 / m) e^{imt}, m = k + 1: a circle with k inner loops."""
    m = k + 1
    return hermite_segments(
        lambda t: np.exp(1j * t) + 1.6 / m * np.exp(1j * m * t),
        lambda t: 1j * np.exp(1j * t) + 1.6j * np.exp(1j * m * t),
        n,
    )


@pytest.mark.parametrize("k", [1, 2, 3, 5])
def test_curl_with_k_loops_turns_k_plus_one_times_even_when_few_samples_are_asked(k):
    # H. Whitney, "On regular closed curves in the plane", Compositio Math. 4 (1937): the
    # tangent of z = e^{it} + r e^{imt} with r m > 1 turns m times (the e^{imt} term
    # dominates z'); its k = m - 1 small loops each add one crossing of the same sign, and
    # Whitney's formula n = mu + sum of crossing signs holds for a normal curve.
    c = curve_from_bezier_segments(curl_segments(k), samples=16)
    assert c.shape[0] > 16  # raised
    assert turning_number(c) == k + 1
    w = whitney_check(c)
    assert w.generic and w.holds and w.crossings.count == k


def test_plain_arc_length_resampling_at_16_points_loses_the_loops():
    # the old behaviour, for the record: 16 points equally spaced in arc length on a curl
    # with turning number 3 form a polygon with turning number 1
    assert turning_number(resample_by_arc_length(curl(4000, 2), 16)) != 3


def test_circle_count_follows_from_its_curvature():
    # along one spacing h the tangent of a circle of radius r turns by h / r; at most
    # STEP_TURN per spacing needs N >= 2 pi / STEP_TURN = 12 samples
    c = curve_from_bezier_segments(bezier_circle_segments(3.0), samples=4)
    need = 2 * np.pi / STEP_TURN
    assert need <= c.shape[0] <= need + 2
    assert turning_number(c) == 1


def test_requests_above_the_least_count_are_kept_exactly():
    assert curve_from_bezier_segments(curl_segments(2), samples=5000).shape == (5000, 2)
    eight = hermite_segments(
        lambda t: np.sin(t) + 1j * np.sin(t) * np.cos(t),
        lambda t: np.cos(t) + 1j * np.cos(2 * t),
        24,
    )
    c = curve_from_bezier_segments(eight, samples=16)
    assert turning_number(c) == 0  # a figure-eight (Whitney 1937: one crossing, mu = +-1)
    assert whitney_check(c).crossings.count == 1


def test_corners_are_not_bends():
    # a square's four straight sides: no turning inside any segment, so four samples (its
    # corners) are enough and the count is not raised
    sq = np.array([[0.0, 0], [1, 0], [1, 1], [0, 1]])
    seg = np.stack(
        [
            sq,
            sq + (np.roll(sq, -1, 0) - sq) / 3,
            sq + 2 * (np.roll(sq, -1, 0) - sq) / 3,
            np.roll(sq, -1, 0),
        ],
        axis=1,
    )
    c = sample_pieces(seg, samples=4)
    assert np.allclose(c, sq)


def test_cusp_message_names_the_segment():
    seg = np.array(
        [
            [[0.0, 0.0], [1.0, 1.0], [0.0, 1.0], [1.0, 0.0]],
            [[1.0, 0.0], [0.7, -0.5], [0.3, -0.5], [0.0, 0.0]],
        ]
    )
    with pytest.raises(CurveError, match="segment 0 has a cusp"):
        curve_from_bezier_segments(seg, samples=64)


def test_polyline_resampling_keeps_its_turning_number():
    # a polygon through 4000 points of a curl with turning number 3 (Whitney 1937): 16
    # points equally spaced in arc length would turn once; the count is raised instead
    c = curve_from_polyline(curl(4000, 2), samples=16)
    assert c.shape[0] > 16 and turning_number(c) == 3
    # a request that already keeps it is met exactly, on the polygon's own path
    sq = np.array([[0.0, 0], [2, 0], [2, 2], [0, 2]])
    assert np.allclose(curve_from_polyline(sq, samples=8), resample_by_arc_length(sq, 8))
