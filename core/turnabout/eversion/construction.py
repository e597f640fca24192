"""WORK IN PROGRESS: placeholder geometry so the pipeline can be wired up.

This module is being replaced by the corrugated construction; until then it
returns a naive push-through with ripples, which is NOT regular at t = 1/2.
"""

from __future__ import annotations

import numpy as np

from ..mesh import SphereMesh, uniform_sphere_mesh
from .controls import Controls


def mesh_for(controls: Controls, n_lon: int | None = None, n_lat: int | None = None) -> SphereMesh:
    return uniform_sphere_mesh(n_lon or 32 * controls.strips, n_lat or 127)


def positions_at(controls: Controls, t: float, mesh: SphereMesh) -> np.ndarray:
    th, la = mesh.vertex_params
    r = 1.0 + 0.1 * np.sin(np.pi * t) * np.sin(controls.strips * th) * np.cos(la) ** 2
    c = np.cos(la)
    # ends right (t=1 is the mirrored sphere, reversed orientation) but is singular at t=1/2
    return np.stack([r * c * np.cos(th), r * c * np.sin(th), np.cos(np.pi * t) * r * np.sin(la)], axis=-1)
