"""A bake's plan: which frames are stored, at which eversion times, on which mesh, at what
memory cost, and where its point cache goes.

A bake of ``frames`` frames stores a shape every ``key_step`` frames plus the last frame
(shape keys; Blender blends the frames between linearly) or one sample per frame (a point
cache). Everything here is checked before any Blender data is made.
"""

from __future__ import annotations

import os
from dataclasses import dataclass

import numpy as np

from ..output import safe_file_name

MODES = ("SHAPE_KEYS", "POINT_CACHE")
# Point-cache bakes evaluate this many frames at a time.
CACHE_CHUNK = 16


class BakeError(ValueError):
    """A bake request that cannot be carried out; the message says why and what is allowed."""


@dataclass(frozen=True)
class BakePlan:
    """What to bake: the validated controls, the sphere mesh, and the frame layout.

    key_offsets : (K,) int64, frame offsets from ``frame_start`` of the stored shapes
    times : (K,) float64, eversion time in [0, 1] of each stored shape
    """

    controls: object
    mesh: object
    frames: int
    frame_start: int
    key_step: int
    mode: str
    key_offsets: np.ndarray
    times: np.ndarray

    @property
    def n_keys(self) -> int:
        return int(self.key_offsets.shape[0])

    @property
    def n_vertices(self) -> int:
        return int(self.mesh.n_vertices)


def key_offsets_for(frames: int, key_step: int) -> np.ndarray:
    """(K,) int64 frame offsets of the stored shapes: every ``key_step`` frames plus the
    last frame ``frames - 1``."""
    offsets = np.arange(0, frames, key_step, dtype=np.int64)
    if offsets[-1] != frames - 1:
        offsets = np.append(offsets, np.int64(frames - 1))
    return offsets


def plan_bake(controls, frames=None, frame_start=1, key_step=1, mesh=None, mode="SHAPE_KEYS"):
    """Check the frame layout and pick the mesh; raises BakeError naming the bad value.

    ``frames`` None takes the eversion's default frame count; ``mesh`` None its default
    mesh. A point cache holds one sample per frame, so its key step is 1.
    """
    from ..eversion import default_frames, mesh_for

    frames = default_frames(controls.strips) if frames is None else frames
    if isinstance(frames, bool) or int(frames) != frames or frames < 2:
        raise BakeError(f"frames: must be an integer of at least 2, got {frames!r}")
    if isinstance(key_step, bool) or int(key_step) != key_step or key_step < 1:
        raise BakeError(f"key step: must be an integer of at least 1, got {key_step!r}")
    if mode not in MODES:
        raise BakeError(f"store as: must be SHAPE_KEYS or POINT_CACHE, got {mode!r}")
    frames, key_step = int(frames), int(key_step)
    if mode == "POINT_CACHE":
        key_step = 1
    mesh = mesh_for(controls) if mesh is None else mesh
    offsets = key_offsets_for(frames, key_step)
    return BakePlan(
        controls, mesh, frames, int(frame_start), key_step, mode, offsets, offsets / (frames - 1)
    )


def mesh_from_settings(controls, n_lon: int, n_lat: int, spacing: str = "bend"):
    """The sphere mesh for the given resolution and spacing ("bend" or "even"); 0 keeps the
    spacing's default count."""
    from ..eversion import mesh_for

    if (n_lon and n_lon < 3) or n_lat < 0:
        raise BakeError(
            f"mesh resolution: needs at least 3 longitude samples, got {n_lon} x {n_lat}"
        )
    return mesh_for(controls, n_lon=n_lon or None, n_lat=n_lat or None, spacing=spacing)


def estimated_bytes(plan: BakePlan) -> int:
    """Peak memory of the bake in bytes (core float64 evaluation plus float32 storage).

    Shape keys: every stored shape evaluated at once (8 + 4 bytes per coordinate) plus
    Blender's own float32 copy in the key blocks; a point cache: one chunk of
    ``CACHE_CHUNK`` frames at a time.
    """
    per_shape = plan.n_vertices * 3 * (8 + 4)
    if plan.mode == "POINT_CACHE":
        return min(plan.n_keys, CACHE_CHUNK) * per_shape
    return plan.n_keys * (per_shape + plan.n_vertices * 3 * 4)


def refuse_if_too_big(plan: BakePlan, limit_mb: float) -> int:
    """Raise BakeError with the figure when the estimate exceeds ``limit_mb``; return the bytes."""
    need = estimated_bytes(plan)
    if need > limit_mb * 1e6:
        raise BakeError(
            f"baking would need about {need / 1e6:.0f} MB ({plan.n_keys} shapes x "
            f"{plan.n_vertices} vertices), over the memory limit of {limit_mb:.0f} MB; "
            "key less often, use a coarser mesh, store as a point cache or raise the limit"
        )
    return need


def cache_file_path(folder: str, object_name: str) -> str:
    """The object's PC2 file in ``folder`` (an absolute folder): ``<safe name>.pc2``."""
    return os.path.join(folder, safe_file_name(object_name) + ".pc2")
