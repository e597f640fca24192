"""The one quintic smooth step, against its closed form and its end conditions.

Closed form q(t) = 6t^5 - 15t^4 + 10t^3 (K. Perlin, "Improving noise", SIGGRAPH 2002, the
"smootherstep" of common practice). Its end conditions, derived: q(0) = 0, q(1) = 1,
q'(t) = 30 t^2 (t - 1)^2 and q''(t) = 60 t (t - 1)(2t - 1) vanish at both ends (C2).
"""

from __future__ import annotations

import re
from pathlib import Path

import numpy as np
import pytest

from turnabout.easing import quintic_step

REPO = Path(__file__).resolve().parents[1]


def test_the_step_is_the_closed_form_quintic_on_the_unit_interval():
    t = np.linspace(0.0, 1.0, 2001)
    closed = np.polynomial.Polynomial([0, 0, 0, 10, -15, 6])(t)
    assert np.allclose(quintic_step(t), closed, rtol=0, atol=1e-14)
    assert quintic_step(0.0) == 0.0 and quintic_step(1.0) == 1.0
    assert quintic_step(0.5) == 0.5  # q(1/2) = 6/32 - 15/16 + 10/8 = 1/2


def test_the_step_is_flat_outside_the_unit_interval_and_symmetric_inside():
    assert np.all(quintic_step(np.array([-3.0, -1e-9])) == 0.0)
    assert np.all(quintic_step(np.array([1.0 + 1e-9, 7.0])) == 1.0)
    t = np.linspace(0.0, 1.0, 501)
    assert np.allclose(quintic_step(1.0 - t), 1.0 - quintic_step(t), atol=1e-15)


@pytest.mark.parametrize("h", [1e-2, 1e-3])
@pytest.mark.parametrize("end", [0.0, 1.0])
def test_velocity_and_acceleration_vanish_at_both_ends(end, h):
    # central differences across the end, where the clipped step meets the constant:
    # C2 means both are O(h) (q' ~ 30 h^2, q'' ~ 60 h near the end)
    x = np.array([end - h, end, end + h])
    q = quintic_step(x)
    velocity = (q[2] - q[0]) / (2 * h)
    acceleration = (q[2] - 2 * q[1] + q[0]) / h**2
    assert abs(velocity) <= 20 * h * h
    assert abs(acceleration) <= 40 * h
    # the closed-form derivatives at the end themselves are zero
    assert 30 * end**2 * (end - 1) ** 2 == 0 and 60 * end * (end - 1) * (2 * end - 1) == 0


def test_the_stage_windows_the_reveal_and_the_curve_easing_use_the_one_step():
    from turnabout.curves.homotopy import ease
    from turnabout.eversion import construction
    from turnabout.views.reveal import reveal_weights

    t = np.linspace(0.0, 1.0, 257)
    assert np.array_equal(ease(t, "smooth"), quintic_step(t))
    assert construction.window(0.3, (0.2, 0.6)) == float(quintic_step((0.3 - 0.2) / (0.6 - 0.2)))
    order = np.linspace(0.0, 1.0, 11)
    assert np.array_equal(reveal_weights(order, 0.4, 0.5), quintic_step((0.4 * 1.5 - order) / 0.5))
    # and no module of the core writes the polynomial out again
    pattern = re.compile(r"6(\.0)?\s*\*\s*\w+\s*-\s*15")
    writers = [
        p.relative_to(REPO).as_posix()
        for p in (REPO / "core").rglob("*.py")
        if pattern.search(p.read_text(encoding="utf-8"))
    ]
    assert writers == ["core/turnabout/easing.py"]


def test_the_latitude_envelope_is_the_same_step_between_its_latitudes():
    from turnabout.eversion import construction as C

    x = np.linspace(-0.5, 2.5, 301)
    a, b = 0.4, 1.7
    assert np.array_equal(C._step(x, a, b), quintic_step((x - a) / (b - a)))
