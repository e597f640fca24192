"""Self-crossings with signs and Whitney's formula.

Whitney, "On regular closed curves in the plane", Compositio Mathematica 4, 1937,
Theorem 2: for a generic closed curve with base point on the outer boundary,
turning number = mu + sum of crossing signs (mu = +-1, the sense at the base point).
"""

from __future__ import annotations

import numpy as np
import pytest
from curve_shapes import circle, curl, figure_eight, limacon, random_fourier_curve

from turnabout.curves import crossing_pairs, self_crossings, turning_number, whitney_check


def cross2(u, v):
    return u[0] * v[1] - u[1] * v[0]


def brute_force_crossings(points):
    """Independent reference: every pair of non-adjacent steps, one at a time (slow)."""
    p = np.asarray(points)
    n = len(p)
    found = 0
    for i in range(n):
        a, b = p[i], p[(i + 1) % n]
        for j in range(i + 2, n):
            if i == 0 and j == n - 1:
                continue
            c, d = p[j], p[(j + 1) % n]
            # orientation tests (common practice: segments cross iff each straddles the other)
            o1 = np.sign(cross2(b - a, c - a))
            o2 = np.sign(cross2(b - a, d - a))
            o3 = np.sign(cross2(d - c, a - c))
            o4 = np.sign(cross2(d - c, b - c))
            if o1 * o2 < 0 and o3 * o4 < 0:
                found += 1
    return found


def test_round_circle_has_no_crossings_and_whitney_gives_one():
    w = whitney_check(circle(300))
    assert w.crossings.count == 0 and w.mu == 1 and w.holds


def test_figure_eight_has_one_crossing_cancelling_mu():
    # Whitney 1937: 0 = mu + eps, so the single crossing has sign -mu
    w = whitney_check(figure_eight(500))
    assert w.crossings.count == 1
    assert w.crossings.sign_sum == -w.mu
    assert w.holds and w.generic


def test_limacon_inner_loop_crossing_adds_one():
    # Whitney 1937 with turning number 2 (limacon, see test_curves_turning.py): 2 = 1 + 1
    w = whitney_check(limacon(600))
    assert (w.mu, w.crossings.count, w.crossing_sum) == (1, 1, 1)
    assert w.holds


@pytest.mark.parametrize("k", [1, 2, 3])
def test_whitney_formula_holds_for_circles_with_loops(k):
    w = whitney_check(curl(1500, k))
    assert w.generic and w.holds and w.turning_number == k + 1


def test_whitney_formula_holds_on_many_random_generic_curves():
    rng = np.random.default_rng(11)
    crossings = []
    for _ in range(120):
        c = random_fourier_curve(rng, n=400, modes=5)
        w = whitney_check(c)
        assert w.generic
        assert w.whitney_value == turning_number(c)
        crossings.append(w.crossings.count)
    assert max(crossings) >= 4  # the sample has curves with many crossings


def test_vectorised_crossings_match_a_brute_force_count():
    rng = np.random.default_rng(3)
    for _ in range(5):
        c = random_fourier_curve(rng, n=120, modes=5)
        pairs, params, pos = crossing_pairs(c)
        assert len(pairs) == brute_force_crossings(c)
        # each reported point lies on both steps
        d = np.roll(c, -1, axis=0) - c
        on_i = c[pairs[:, 0]] + params[:, :1] * d[pairs[:, 0]]
        on_j = c[pairs[:, 1]] + params[:, 1:] * d[pairs[:, 1]]
        assert np.allclose(on_i, pos) and np.allclose(on_j, pos)


def test_crossing_through_sample_points_is_found_once():
    # sampled with a point exactly on the crossing of the lemniscate (t = 0 and t = pi)
    t = np.linspace(0, 2 * np.pi, 400, endpoint=False)
    c = np.stack([np.sin(t), np.sin(t) * np.cos(t)], axis=1)
    assert self_crossings(c).count == 1


def test_whitney_formula_holds_whatever_the_start_point():
    c = curl(1200, 2)
    for shift in (0, 100, 777):
        w = whitney_check(np.roll(c, shift, axis=0))
        assert w.holds and w.whitney_value == 3


def test_crossing_signs_flip_sum_when_the_curve_is_mirrored():
    # mirroring negates the turning number and mu, so the sign sum must flip too
    c = limacon(600)
    m = c * np.array([1.0, -1.0])
    a, b = whitney_check(c), whitney_check(m)
    assert (b.mu, b.crossing_sum, b.turning_number) == (-a.mu, -a.crossing_sum, -a.turning_number)
