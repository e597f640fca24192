"""Frames of the eversion on a sphere mesh."""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from ..mesh import SphereMesh
from ..progress import ProgressFn, no_progress
from . import construction
from .controls import ControlError, Controls, default_frames
from .regularity import require_regular
from .spacing import check_resolution, mesh_for


@dataclass(frozen=True)
class Eversion:
    """A baked eversion.

    positions : (F, V, 3) float32
    faces : (M, 3) int32 triangles
    uv : (V, 2) float32
    times : (F,) float64 in [0, 1]
    """

    controls: Controls
    mesh: SphereMesh
    positions: np.ndarray
    faces: np.ndarray
    uv: np.ndarray
    times: np.ndarray


def _check_times(times) -> np.ndarray:
    times = np.atleast_1d(np.asarray(times, dtype=np.float64))
    if (
        times.ndim != 1
        or not np.all(np.isfinite(times))
        or times.min(initial=0) < 0
        or times.max(initial=0) > 1
    ):
        raise ControlError("times", "every time must be a finite number in [0, 1]")
    return times


def evaluate(
    controls: Controls, times, mesh: SphereMesh, progress: ProgressFn = no_progress
) -> np.ndarray:
    """Vertex positions at each time, (len(times), V, 3) float64 (no regularity check)."""
    times = _check_times(times)
    out = np.empty((times.size, mesh.n_vertices, 3))
    frame = construction.FrameEvaluator(controls, mesh)
    for k, t in enumerate(times):
        frame(float(t), out[k])
        progress(k + 1, times.size)
    return out


def build(
    controls: Controls,
    frames: int | None = None,
    mesh: SphereMesh | None = None,
    progress: ProgressFn = no_progress,
    check: bool = True,
) -> Eversion:
    """Bake ``frames`` evenly spaced frames from t = 0 to t = 1.

    ``frames`` None takes :func:`~turnabout.eversion.controls.default_frames` for the strip
    count (480 for 8 strips): enough that no vertex of the default mesh moves more than one
    local edge length per frame with the default stage windows.

    Runs the fast regularity check first (cached per controls) and raises
    :class:`~turnabout.eversion.regularity.RegularityError` for controls that fail it.
    """
    frames = default_frames(controls.strips) if frames is None else frames
    if isinstance(frames, bool) or not isinstance(frames, (int, np.integer)) or frames < 2:
        raise ControlError("frames", f"must be an integer >= 2, got {frames!r}")
    mesh = mesh_for(controls) if mesh is None else mesh
    check_resolution(controls, mesh.n_lon, mesh.n_lat)
    if check:
        require_regular(controls)
    times = np.linspace(0.0, 1.0, int(frames))
    pos = np.empty((times.size, mesh.n_vertices, 3), dtype=np.float32)
    frame = construction.FrameEvaluator(controls, mesh)
    for k, t in enumerate(times):
        frame(float(t), pos[k])
        progress(k + 1, times.size)
    return Eversion(controls, mesh, pos, mesh.triangles(), mesh.uv(), times)
