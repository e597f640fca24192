"""Heat colours: the documented mapping of a vertex's heat (1 = failing) to a colour.

docs/addon.md: "blue to yellow below, red at or above" the failure threshold.
"""

from __future__ import annotations

import numpy as np

from turnabout.check.heat import COOL, FAILING, WARM, heat_colours


def test_heat_runs_from_blue_through_a_linear_blend_to_yellow_then_red():
    heat = np.array([0.0, 0.25, 0.5, 0.999, 1.0, 3.0])
    rgba = heat_colours(heat)
    assert rgba.shape == (6, 4) and rgba.dtype == np.float32
    assert np.all(rgba[:, 3] == 1.0)
    cool, warm = np.array(COOL), np.array(WARM)
    for h, got in zip(heat[:4], rgba[:4], strict=True):
        assert np.allclose(got[:3], cool + h * (warm - cool), atol=1e-6)
    assert np.allclose(rgba[4:, :3], FAILING, atol=1e-6)
    assert rgba[0, 2] > rgba[0, 0] and rgba[3, 0] > rgba[3, 2]  # blue first, yellow last
    assert np.allclose(FAILING[0], 0.9) and max(FAILING[1:]) < 0.1  # red


def test_not_a_number_fails_and_negative_heat_is_cool():
    rgba = heat_colours(np.array([np.nan, np.inf, -np.inf, -2.0]))
    assert np.allclose(rgba[:2, :3], FAILING, atol=1e-6)
    assert np.allclose(rgba[2:, :3], COOL, atol=1e-6)


def test_no_vertices_give_no_colours():
    assert heat_colours(np.zeros(0)).shape == (0, 4)
