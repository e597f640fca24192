"""Build-up: the moments worth stopping at, and the order in which faces appear.

A *reveal* parameter r runs from 0 (nothing shown) to 1 (the whole surface). Each face has
an order value o in [0, 1], the reveal value at which it starts to appear, and a weight

    w(r) = q((r (1 + s) - o) / s),   s = softness,

with q = ``easing.quintic_step`` the project's quintic smooth step: 0 for every face at r = 0
(o >= 0), 1 for every face at r = 1 (o <= 1), non-decreasing and twice continuously
differentiable in r. Each face takes s / (1 + s) of the reveal's range to fade in.

Orders:

* ``by="band"``: from the south pole northwards, o = (lat + pi/2) / pi of the face's
  latitude centroid on the starting sphere, or with ``count`` bands, o = j / count for the
  faces of band j (equal latitude slices, numbered from the south): the surface grows like
  a vase turned on a wheel, one material band after another.
* ``by="part"``: the two caps first (o = 0), then guide strips 0 .. n-1 one by one, then
  wave strips 0 .. n-1: step j of 2 n + 1 at o = j / (2 n). Whole parts appear together.
"""

from __future__ import annotations

import math

import numpy as np

from ..easing import quintic_step
from ..eversion.controls import STAGE_NAMES, Controls
from ..mesh import SphereMesh
from .parts import ViewError, face_centroids, surface_parts
from .slices import MAX_BANDS

REVEAL_ORDERS = ("band", "part")


def key_moments(controls: Controls) -> list[tuple[str, float]]:
    """The middle and the end of each stage, sorted by time: [("ripple middle", t), ...].

    Ten (name, t) pairs, t in [0, 1] the fraction of the motion; stage windows from
    ``controls.timing`` (stages overlap, so the list interleaves them).
    """
    out = []
    for name in STAGE_NAMES:
        a, b = controls.timing[name]
        out.append((f"{name} middle", 0.5 * (float(a) + float(b))))
        out.append((f"{name} end", float(b)))
    order = sorted(range(len(out)), key=lambda i: (out[i][1], i))
    return [out[i] for i in order]


def reveal_order(mesh: SphereMesh, strips: int, by: str = "band", count: int | None = None):
    """(M,) float64 in [0, 1]: the reveal value at which each face (``mesh.triangles()``
    order) appears. by : "band" or "part"; count : bands for "band" (1 .. MAX_BANDS; None
    for a continuous sweep); not used by "part"."""
    if by not in REVEAL_ORDERS:
        raise ViewError("by", f"must be 'band' or 'part', got {by!r}")
    if by == "part":
        parts = surface_parts(mesh, strips)
        n = parts.strips
        step = np.where(parts.label >= 2 * n, 0, parts.label + 1)  # caps, guides, waves
        return step / (2.0 * n)
    if count is not None and (
        isinstance(count, bool)
        or not isinstance(count, (int, np.integer))
        or not 1 <= int(count) <= MAX_BANDS
    ):
        raise ViewError("count", f"must be an integer from 1 to {MAX_BANDS}, got {count!r}")
    _, _, lat, _ = face_centroids(mesh, strips)
    u = np.clip((lat + np.pi / 2) / np.pi, 0.0, 1.0)
    if count is None:
        return u
    count = int(count)
    return np.minimum(np.floor(u * count), count - 1) / count


def reveal_weights(order, reveal: float, softness: float = 0.05) -> np.ndarray:
    """(M,) float64 in [0, 1]: how far each face has appeared at ``reveal`` in [0, 1].

    order : (M,) from :func:`reveal_order`; softness in (0, 1]: the share of the reveal over
    which a face fades in (relative to the reveal's range, see the module docstring).
    """
    if not isinstance(reveal, (int, float, np.floating, np.integer)) or isinstance(reveal, bool):
        raise ViewError("reveal", f"must be a number from 0 to 1, got {reveal!r}")
    if not (math.isfinite(reveal) and 0.0 <= reveal <= 1.0):
        raise ViewError("reveal", f"must be a number from 0 to 1, got {reveal!r}")
    if not isinstance(softness, (int, float, np.floating)) or isinstance(softness, bool):
        raise ViewError("softness", f"must be a number in (0, 1], got {softness!r}")
    if not (math.isfinite(softness) and 0.0 < softness <= 1.0):
        raise ViewError("softness", f"must be a number in (0, 1], got {softness!r}")
    o = np.asarray(order, dtype=np.float64)
    return quintic_step((float(reveal) * (1.0 + softness) - o) / softness)
