"""Turning numbers by total turning and by direction count, against published values.

Value sources:
- the turning number (rotation index) of a closed regular curve is the degree of its
  tangent map (Whitney, "On regular closed curves in the plane", Compositio Math. 4, 1937);
  a simple closed curve has turning number +1 counter-clockwise and -1 clockwise (Hopf's
  Umlaufsatz, H. Hopf, "Ueber die Drehung der Tangenten und Sehnen ebener Kurven",
  Compositio Math. 2, 1935);
- for a curve z(t) in the complex plane the turning number is the winding number of z'(t)
  about 0, which the argument principle / Rouche's theorem gives for trigonometric curves
  (Ahlfors, "Complex Analysis", 3rd ed., 1979, ch. 5).
"""

from __future__ import annotations

import numpy as np
import pytest
from curve_shapes import (
    circle,
    curl,
    figure_eight,
    limacon,
    random_fourier_curve,
    wobbly_circle,
)

from turnabout.curves import (
    resample_by_arc_length,
    tangent_angles,
    total_turning,
    turning_number,
    turning_number_by_direction_count,
    turning_number_by_total_turning,
    turning_report,
)


def both(points, direction=0.0):
    return (
        turning_number_by_total_turning(points),
        turning_number_by_direction_count(points, direction),
    )


def test_counter_clockwise_circle_has_turning_number_plus_one():
    # Hopf 1935: simple closed curve, counter-clockwise: +1
    assert both(circle(300, ccw=True)) == (1, 1)


def test_clockwise_circle_has_turning_number_minus_one():
    # Hopf 1935: simple closed curve, clockwise: -1
    assert both(circle(300, ccw=False)) == (-1, -1)


def test_figure_eight_has_turning_number_zero():
    # handbook value: the figure-eight has rotation index 0 (do Carmo, "Differential Geometry
    # of Curves and Surfaces", 1976, sec. 5-7; recalled from memory). Whitney's formula
    # gives it too: one crossing of sign -mu (checked in test_curves_crossings.py)
    assert both(figure_eight(500)) == (0, 0)


def test_limacon_with_inner_loop_has_turning_number_two():
    # z = (b + cos t) e^{it}, z' = i e^{it} (b + e^{it}): winding 1 + 1 for 0 < b < 1
    # (argument principle, Ahlfors 1979)
    assert both(limacon(600, b=0.5)) == (2, 2)


def test_limacon_without_inner_loop_has_turning_number_one():
    # same derivation with b > 1: b + e^{it} does not wind about 0, so 1 + 0
    assert both(limacon(600, b=1.5)) == (1, 1)


@pytest.mark.parametrize("k", [1, 2, 3, 4])
def test_circle_with_k_loops_turning_with_it_has_turning_number_one_plus_k(k):
    # z = e^{it} + r e^{i(k+1)t}, r (k+1) > 1: z' = i e^{it}(1 + r(k+1) e^{ikt}) winds 1 + k
    # times about 0 (Rouche's theorem, Ahlfors 1979); the curve has k loops
    assert both(curl(2000, k, inside=True)) == (1 + k, 1 + k)


@pytest.mark.parametrize("k", [2, 3, 4, 5])
def test_circle_with_k_loops_turning_against_it_has_turning_number_one_minus_k(k):
    # z = e^{it} + r e^{-i(k-1)t}, r (k-1) > 1: z' = i e^{it}(1 - r(k-1) e^{-ikt}) winds 1 - k
    # times about 0 (Rouche's theorem, Ahlfors 1979)
    assert both(curl(2000, k, inside=False)) == (1 - k, 1 - k)


@pytest.mark.parametrize(
    "shape", [circle(), wobbly_circle(), figure_eight(), limacon(), curl(1500, 3)]
)
def test_traversing_a_curve_backwards_negates_its_turning_number(shape):
    # handbook fact: reversing the orientation negates the degree of the tangent map
    n = turning_number(shape)
    assert turning_number(shape[::-1]) == -n


@pytest.mark.parametrize("shape", [circle(), figure_eight(), limacon(), curl(1500, 2)])
def test_turning_number_does_not_depend_on_the_start_point(shape):
    # invariance under reparametrisation (Whitney 1937): a cyclic shift changes nothing
    n = turning_number(shape)
    for shift in (1, 17, shape.shape[0] // 3):
        assert both(np.roll(shape, shift, axis=0)) == (n, n)


@pytest.mark.parametrize("samples", [40, 97, 500, 3000])
def test_turning_number_does_not_depend_on_sampling_density(samples):
    # invariance under reparametrisation (Whitney 1937); 40 points still resolve the loop
    assert both(resample_by_arc_length(limacon(4000), samples)) == (2, 2)


@pytest.mark.parametrize("direction", [0.0, 0.3, np.pi / 2, 2.0, np.pi, -1.0])
def test_direction_count_gives_the_same_number_for_every_direction(direction):
    # the degree of a circle map is the same at every regular value (common practice)
    for shape, n in ((limacon(), 2), (figure_eight(), 0), (curl(1500, 3), 4)):
        assert turning_number_by_direction_count(shape, direction) == n


def test_direction_count_counts_a_step_along_the_direction_once():
    # an axis-aligned square: every step points exactly along one of the axes
    sq = np.array([[0, 0], [1, 0], [1, 1], [0, 1]], float)
    for direction in (0.0, np.pi / 2, np.pi, -np.pi / 2):
        assert turning_number_by_direction_count(sq, direction) == 1
        assert turning_number_by_direction_count(sq[::-1], direction) == -1


def test_both_methods_agree_on_many_random_generic_curves():
    rng = np.random.default_rng(5)
    seen = set()
    for _ in range(150):
        c = random_fourier_curve(rng, n=500, modes=6)
        a, b = both(c, direction=rng.uniform(-np.pi, np.pi))
        assert a == b
        seen.add(a)
    assert len(seen) >= 3  # the sample really has varied turning numbers


def test_total_turning_is_a_whole_number_of_turns():
    rng = np.random.default_rng(2)
    c = random_fourier_curve(rng)
    turns = total_turning(c) / (2 * np.pi)
    assert abs(turns - round(turns)) < 1e-9


def test_tangent_angles_climb_by_the_total_turning():
    c = curl(1000, 2)
    th = tangent_angles(c)
    d = np.roll(c, -1, axis=0) - c
    assert np.allclose(np.exp(1j * th), (d[:, 0] + 1j * d[:, 1]) / np.hypot(*d.T))
    # the angle of step N (= step 0) after one traversal: 2 pi times the turning number
    last_turn = np.angle(np.exp(1j * (np.arctan2(d[0, 1], d[0, 0]) - th[-1])))
    assert np.isclose(th[-1] + last_turn - th[0], 2 * np.pi * 3)


def test_turning_report_counts_left_and_right_passages():
    rep = turning_report(figure_eight(600))
    # each lobe of the figure-eight passes the +x direction once, turning opposite ways
    assert (rep.passages_left, rep.passages_right) == (1, 1)
    assert rep.agree and rep.by_total_turning == 0
