"""Frames of the eversion on a sphere mesh."""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from ..mesh import SphereMesh
from ..progress import ProgressFn, no_progress
from . import construction
from .controls import ControlError, Controls, default_frames
from .regularity import require_regular
from .spacing import mesh_for

MIN_SAMPLES_PER_WAVE = 8
MIN_LAT_RINGS = 16
MAX_VERTICES = 4_000_000


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


def _integer(name: str, v) -> None:
    if isinstance(v, bool) or not isinstance(v, (int, np.integer)):
        raise ControlError(name, f"must be an integer, got {v!r}")


def _check_lon(controls: Controls, n_lon) -> None:
    _integer("longitude samples", n_lon)
    need = MIN_SAMPLES_PER_WAVE * controls.strips
    top = MAX_VERTICES // MIN_LAT_RINGS
    if n_lon > top:
        raise ControlError("longitude samples", f"must be at most {top}, got {n_lon}")
    if n_lon < need or n_lon % controls.strips:
        raise ControlError(
            "longitude samples",
            f"must be a multiple of strips ({controls.strips}) and at least {need} "
            f"({MIN_SAMPLES_PER_WAVE} samples per wave), got {n_lon}",
        )


def _check_lat(controls: Controls, n_lat) -> None:
    _integer("latitude rings", n_lat)
    if n_lat < MIN_LAT_RINGS:
        raise ControlError("latitude rings", f"must be at least {MIN_LAT_RINGS}, got {n_lat}")
    top = MAX_VERTICES // (MIN_SAMPLES_PER_WAVE * controls.strips)
    if n_lat > top:
        raise ControlError("latitude rings", f"must be at most {top}, got {n_lat}")


def check_resolution(controls: Controls, n_lon: int, n_lat: int) -> None:
    """Refuse meshes too coarse for the waves or too large to hold."""
    _check_lon(controls, n_lon)
    _check_lat(controls, n_lat)
    if n_lon * n_lat + 2 > MAX_VERTICES:
        raise ControlError(
            "resolution",
            f"{n_lon} x {n_lat} gives {n_lon * n_lat + 2} vertices; at most {MAX_VERTICES}",
        )


def default_mesh(
    controls: Controls,
    n_lon: int | None = None,
    n_lat: int | None = None,
    spacing: str = "bend",
) -> SphereMesh:
    """The sphere mesh for these controls; see :func:`turnabout.eversion.spacing.mesh_for`.

    By default the vertices sit where the surface bends, as many as keep the angle between
    neighbouring faces near the aim (``spacing.CREASE_AIM_DEG``) in every frame.
    """
    if n_lon is not None:
        _check_lon(controls, n_lon)
    if n_lat is not None:
        _check_lat(controls, n_lat)
    if n_lon is not None and n_lat is not None:
        check_resolution(controls, n_lon, n_lat)  # the product too, before any sample
    mesh = mesh_for(controls, n_lon=n_lon, n_lat=n_lat, spacing=spacing)
    check_resolution(controls, mesh.n_lon, mesh.n_lat)
    return mesh


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
    mesh = default_mesh(controls) if mesh is None else mesh
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
