"""Regular homotopies of closed plane curves (Whitney-Graustein theorem).

Whitney, "On regular closed curves in the plane", Compositio Mathematica 4, 1937: two
closed regular plane curves are regularly homotopic exactly when their turning numbers
agree. So every pair of equal turning number must give a homotopy that is regular at
every frame, and every pair of different turning numbers must be refused.
"""

from __future__ import annotations

import dataclasses

import numpy as np
import pytest
from curve_shapes import (
    circle,
    curl,
    ellipse,
    figure_eight,
    limacon,
    lopsided_figure_eight,
    wobbly_circle,
)

from turnabout.curves import (
    CurveError,
    HomotopyRefused,
    check_curve_frames,
    ease,
    homotopy_points,
    plan_homotopy,
    regular_homotopy,
    resample_by_arc_length,
    turning_number,
)

PAIRS = {
    "circle-ellipse (1)": (circle(300), ellipse(500, 2.0, 0.6, centre=(3.0, -1.0))),
    "circle-wobbly circle (1)": (circle(400), wobbly_circle(600, 0.3, 5)),
    "figure-eight-lopsided mirror (0)": (
        figure_eight(400),
        lopsided_figure_eight(500) * [1.0, -1.0],
    ),
    "limacon-circle with one loop (2)": (limacon(500), curl(800, 1)),
    "clockwise circle-clockwise wobbly circle (-1)": (
        circle(300, ccw=False),
        wobbly_circle(500, 0.25, 3)[::-1],
    ),
}


def independent_checks(frames, turning):
    """Regularity figures computed here from the points alone (not by the code under test)."""
    d = np.roll(frames, -1, axis=1) - frames
    speed = np.linalg.norm(d, axis=2)
    a = np.arctan2(d[..., 1], d[..., 0])
    turn = np.angle(np.exp(1j * (a - np.roll(a, 1, axis=1))))
    tn = np.rint(turn.sum(axis=1) / (2 * np.pi))
    return speed.min(axis=1) / speed.mean(axis=1), np.abs(turn).max(axis=1), tn


@pytest.mark.parametrize("name", list(PAIRS))
def test_homotopy_is_regular_at_every_frame(name):
    a, b = PAIRS[name]
    h = regular_homotopy(a, b, frames=80, samples=600)
    n = turning_number(a)
    assert h.turning_number == n
    speed, turn, tn = independent_checks(h.points, n)
    # speed bounded away from zero, curvature bounded, turning number kept, every frame
    assert speed.min() > 0.2, f"lowest speed {speed.min():.3g}"
    assert turn.max() < 0.5, f"sharpest turn {turn.max():.3g} rad"
    assert np.all(tn == n)
    assert h.checks.all_pass
    assert np.allclose(h.checks.min_speed, speed)
    assert np.isfinite(h.checks.max_curvature).all()


@pytest.mark.parametrize("name", list(PAIRS))
def test_homotopy_starts_and_ends_at_the_given_curves(name):
    a, b = PAIRS[name]
    h = regular_homotopy(a, b, frames=20, samples=600)
    ra = resample_by_arc_length(a, 600)
    rb = np.roll(resample_by_arc_length(b, 600), -h.plan.end_shift, axis=0)
    assert np.array_equal(h.points[0], ra)
    assert np.array_equal(h.points[-1], rb)
    # and the formula itself lands there, up to rounding
    ends = homotopy_points(h.plan, np.array([1e-300, 1.0 - 1e-16]))
    scale = np.ptp(b, axis=0).max()
    assert np.abs(ends[0] - ra).max() < 1e-9 * scale
    assert np.abs(ends[1] - rb).max() < 1e-9 * scale


def test_frames_change_gradually():
    a, b = PAIRS["circle-wobbly circle (1)"]
    h = regular_homotopy(a, b, frames=60, samples=400)
    jumps = np.linalg.norm(np.diff(h.points, axis=0), axis=2).max(axis=1)
    assert jumps.max() < 0.05  # the shapes differ by about 0.3: many small moves


def test_circle_to_circle_with_an_inner_loop_is_refused_naming_both_numbers():
    with pytest.raises(HomotopyRefused, match=r"turning number 1\).*turning number 2\)") as e:
        regular_homotopy(circle(), limacon())
    assert (e.value.turning_a, e.value.turning_b) == (1, 2)
    assert "Whitney-Graustein" in str(e.value)


def test_circle_to_reversed_circle_is_refused_naming_plus_and_minus_one():
    with pytest.raises(HomotopyRefused, match=r"turning number 1\).*turning number -1\)"):
        regular_homotopy(circle(), circle(ccw=False))


def test_turning_number_zero_mirror_pair_with_fixed_starts_needs_and_gets_the_wobble():
    # theta_b = const - theta_a pointwise: the plain interpolation is a constant angle at
    # s = 1/2, where the closure correction collapses the curve to a point
    a = lopsided_figure_eight(500)
    b = a * [1.0, -1.0]
    plan = plan_homotopy(a, b, samples=500, match_base_points=False)
    assert plan.end_shift == 0 and plan.wobble_amplitude > 0
    h = regular_homotopy(a, b, frames=81, samples=500, match_base_points=False)
    speed, turn, tn = independent_checks(h.points, 0)
    assert speed.min() > 0.1 and np.all(tn == 0)
    # without the wobble the middle frame really does collapse (what the wobble prevents)
    bare = dataclasses.replace(plan, wobble_amplitude=0.0)
    mid = homotopy_points(bare, np.array([0.5]))
    bare_speed, _, _ = independent_checks(mid, 0)
    assert bare_speed[0] < 0.05


def test_figure_eight_to_its_reverse_passes():
    a = figure_eight(400)
    h = regular_homotopy(a, a[::-1].copy(), frames=40, samples=400)
    assert h.checks.all_pass and np.all(h.checks.turning_number == 0)


def test_smooth_easing_starts_and_ends_at_rest():
    t = np.linspace(0, 1, 1001)
    e = ease(t, "smooth")
    assert e[0] == 0 and e[-1] == 1 and np.all(np.diff(e) >= 0)
    v = np.gradient(e, t)
    assert abs(v[0]) < 1e-4 and abs(v[-1]) < 1e-4
    assert np.allclose(ease(t, "linear"), t)


def test_homotopy_is_deterministic():
    a, b = PAIRS["limacon-circle with one loop (2)"]
    h1 = regular_homotopy(a, b, frames=10, samples=300)
    h2 = regular_homotopy(a, b, frames=10, samples=300)
    assert np.array_equal(h1.points, h2.points)


def test_progress_is_reported_to_the_end():
    calls = []
    regular_homotopy(
        circle(), ellipse(), frames=30, samples=200, progress=lambda d, t: calls.append((d, t))
    )
    assert calls and calls[-1] == (30, 30)


def test_check_flags_a_frame_with_a_near_cusp():
    good = circle(200)
    bad = good.copy()
    bad[50] = bad[49] + 1e-4 * (bad[50] - bad[49])  # one step almost zero
    checks = check_curve_frames(np.stack([good, bad, good]), turning=1)
    assert list(checks.passes) == [True, False, True]
    assert "frame 1" in checks.first_failure()


@pytest.mark.parametrize(
    "kwargs, message",
    [({"frames": 1}, "frames"), ({"easing": "bouncy"}, "easing"), ({"samples": 3}, "samples")],
)
def test_bad_options_are_refused(kwargs, message):
    with pytest.raises(CurveError, match=message):
        regular_homotopy(circle(), ellipse(), **kwargs)


def test_bad_curves_are_refused_before_any_work():
    c = circle(100)
    c[10] = np.nan
    with pytest.raises(CurveError, match="B: point 10 is not finite"):
        regular_homotopy(circle(), c)
