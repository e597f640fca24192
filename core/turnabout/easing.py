"""The quintic smooth step: one easing for the eversion's stage windows, the reveal views
and the plane-curve homotopies.

q(x) = 6x^5 - 15x^4 + 10x^3 on [0, 1], 0 below and 1 above: the lowest-degree polynomial
going from 0 to 1 with zero first and second derivatives at both ends (common practice:
Perlin's "smootherstep", K. Perlin, "Improving noise", SIGGRAPH 2002).
"""

from __future__ import annotations

import numpy as np


def quintic(y):
    """The polynomial q(y) itself, unclipped, for real or complex y (any array shape)."""
    return y * y * y * (y * (6.0 * y - 15.0) + 10.0)


def quintic_step(x) -> np.ndarray:
    """q(clip(x, 0, 1)) elementwise; x : float or (...) float -> float64 of the same shape."""
    return quintic(np.clip(np.asarray(x, dtype=np.float64), 0.0, 1.0))
