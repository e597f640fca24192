"""Frames of the eversion on a sphere mesh."""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from ..mesh import SphereMesh, uniform_sphere_mesh
from ..progress import ProgressFn, no_progress
from .controls import Controls, ControlError
from . import construction


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


def default_mesh(controls: Controls, n_lon: int | None = None, n_lat: int | None = None) -> SphereMesh:
    """The default sphere mesh for these controls (see construction.mesh_for)."""
    return construction.mesh_for(controls, n_lon=n_lon, n_lat=n_lat)


def evaluate(controls: Controls, times, mesh: SphereMesh, progress: ProgressFn = no_progress) -> np.ndarray:
    """Vertex positions at each time, (len(times), V, 3) float64."""
    times = np.atleast_1d(np.asarray(times, dtype=np.float64))
    if not np.all(np.isfinite(times)) or times.min(initial=0) < 0 or times.max(initial=0) > 1:
        raise ControlError("times", "every time must be a finite number in [0, 1]")
    th, la = mesh.vertex_params
    out = np.empty((times.size, mesh.n_vertices, 3))
    for k, t in enumerate(times):
        out[k] = construction.positions_at(controls, float(t), mesh)
        progress(k + 1, times.size)
    return out


def build(
    controls: Controls,
    frames: int = 120,
    mesh: SphereMesh | None = None,
    progress: ProgressFn = no_progress,
) -> Eversion:
    """Bake ``frames`` evenly spaced frames from t = 0 to t = 1."""
    if isinstance(frames, bool) or not isinstance(frames, (int, np.integer)) or frames < 2:
        raise ControlError("frames", f"must be an integer >= 2, got {frames!r}")
    mesh = default_mesh(controls) if mesh is None else mesh
    times = np.linspace(0.0, 1.0, int(frames))
    pos = evaluate(controls, times, mesh, progress=progress).astype(np.float32)
    return Eversion(controls, mesh, pos, mesh.triangles(), mesh.uv(), times)
