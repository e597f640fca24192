"""Colours for a check's per-vertex heat (the worst severity of a vertex, 1 = failing).

Cool blue at heat 0 blends linearly to warm yellow near 1; a failing vertex (heat >= 1, or
not a number) is red. The add-on writes these as a colour attribute.
"""

from __future__ import annotations

import numpy as np

COOL = (0.12, 0.30, 0.85)
WARM = (1.0, 0.85, 0.15)
FAILING = (0.9, 0.08, 0.05)


def heat_colours(heat) -> np.ndarray:
    """RGBA per vertex: heat (V,) float -> (V, 4) float32, alpha 1.

    NaN and +inf count as failing (red), -inf as 0 (cool blue).
    """
    h = np.nan_to_num(np.asarray(heat, np.float64), nan=1.0, posinf=1.0, neginf=0.0)
    t = np.clip(h, 0.0, 1.0)[:, None]
    rgb = np.asarray(COOL) * (1 - t) + np.asarray(WARM) * t
    rgb[h >= 1.0] = FAILING
    return np.concatenate([rgb, np.ones((len(h), 1))], axis=1).astype(np.float32)
