"""Latitude bands of the starting sphere, and a camera track that looks down on one band.

A band is a range of latitude on the *round* sphere, so it is a material set: the same
vertices (and faces) in every frame, followed as the motion carries them. Bands are centred
in ``count`` equal slices of [-pi/2, pi/2], numbered from the south pole; ``width`` narrower
than a slice leaves gaps between them.

The track looks down the ``up`` axis at the band's centroid every frame. Its screen axes
stay fixed over the whole motion (a camera that spins with the band would hide the motion
it is meant to show). They come from the band's principal directions across ``up`` on the
first frame; when those are degenerate, which they are for every eversion band (a point set
with n-fold symmetry, n >= 3, has an isotropic covariance across the axis), screen right is
the world axis least aligned with ``up`` (e_x for up = e_z, the direction of guide
meridian 0), projected across ``up``.

The camera distance is chosen per frame so that the band fills the same share of the
picture: with r_i the distance of band point i from the camera's line of sight and z_i its
height above the centroid along up, a pinhole camera at height D sees it at r_i / (D - z_i)
times the focal length; D = max_i (z_i + r_i / s) with s = tan(half_fov) / margin makes the
largest of these exactly s in every frame.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from ..mesh import SphereMesh
from .parts import ViewError, check_index

MAX_BANDS = 90


@dataclass(frozen=True)
class LatitudeBands:
    """bounds : (B, 2) float64 latitudes in radians (lower, upper), south to north."""

    bounds: np.ndarray

    @property
    def count(self) -> int:
        return int(self.bounds.shape[0])


def latitude_bands(count: int, width: float | None = None) -> LatitudeBands:
    """``count`` bands centred in equal latitude slices; ``width`` (radians) in
    (0, pi / count], default pi / count (the bands tile the sphere)."""
    if isinstance(count, bool) or not isinstance(count, (int, np.integer)):
        raise ViewError("count", f"must be an integer from 1 to {MAX_BANDS}, got {count!r}")
    if not 1 <= int(count) <= MAX_BANDS:
        raise ViewError("count", f"must be an integer from 1 to {MAX_BANDS}, got {count}")
    count = int(count)
    slice_ = math.pi / count
    if width is None:
        width = slice_
    if isinstance(width, bool) or not isinstance(width, (int, float, np.floating, np.integer)):
        raise ViewError("width", f"must be a number of radians in (0, {slice_:.6g}], got "
                        f"{width!r}")  # fmt: skip
    width = float(width)
    if not (math.isfinite(width) and 0.0 < width <= slice_ * (1 + 1e-12)):
        raise ViewError("width", f"must be in (0, {slice_:.6g}] radians (pi / count), got "
                        f"{width!r}")  # fmt: skip
    width = min(width, slice_)
    centre = -math.pi / 2 + slice_ * (np.arange(count) + 0.5)
    bounds = np.stack([centre - width / 2, centre + width / 2], -1)
    if width == slice_:  # tiling: the shared edges exactly equal, the ends exactly the poles
        edges = -math.pi / 2 + slice_ * np.arange(count + 1)
        edges[-1] = math.pi / 2
        bounds = np.stack([edges[:-1], edges[1:]], -1)
    return LatitudeBands(bounds=bounds)


def _band_mask(mesh: SphereMesh, bands: LatitudeBands, which: int) -> np.ndarray:
    which = check_index("which", which, bands.count, "a band index")
    lo, hi = bands.bounds[which]
    _, lat = mesh.vertex_params
    # half-open [lo, hi) so tiling bands share no vertex; the last band keeps the north pole
    inside = (lat >= lo) & ((lat < hi) | (hi >= np.pi / 2))
    if not inside.any():
        span = f"{np.degrees(lo):.2f} to {np.degrees(hi):.2f} deg"
        raise ViewError("width", f"band {which} ({span}) holds no vertex of the mesh: "
                        "widen it or use fewer bands")  # fmt: skip
    return inside


def band_vertices(mesh: SphereMesh, bands: LatitudeBands, which: int) -> np.ndarray:
    """(k,) int64 ids of the vertices whose starting latitude lies in band ``which``
    (lower bound included, upper excluded, so tiling bands are disjoint)."""
    return np.flatnonzero(_band_mask(mesh, bands, which)).astype(np.int64)


def band_faces(mesh: SphereMesh, bands: LatitudeBands, which: int) -> np.ndarray:
    """(M,) bool: the faces (``mesh.triangles()`` order) whose three corners are in the band."""
    inside = _band_mask(mesh, bands, which)
    return inside[mesh.triangles()].all(axis=1)


@dataclass(frozen=True)
class BandTrack:
    """Where a band is in every frame, and the steady axes of a camera looking down on it.

    centroid : (F, 3) float64, mean of the band's vertices
    extent : (F,) float64, largest distance of a band vertex from the centroid
    axes : (F, 3, 3) float64, rows: screen right, screen up, view direction (= -up); the
        same in every frame
    reach : (F, K) float64, distances r_i of the band's outermost points from the line of
        sight (the points that can set the camera distance, padded with 0)
    rise : (F, K) float64, their heights z_i above the centroid along up (padding: -inf)
    """

    centroid: np.ndarray
    extent: np.ndarray
    axes: np.ndarray
    reach: np.ndarray
    rise: np.ndarray

    def camera_distances(self, half_fov: float, margin: float = 1.1) -> np.ndarray:
        """(F,) float64 heights above the centroid at which the band's largest projected
        radius is tan(half_fov) / margin of the focal length (so it fills 1 / margin of the
        half-width of a picture whose half field of view is ``half_fov`` radians)."""
        if not (isinstance(half_fov, (int, float, np.floating)) and 0 < half_fov < np.pi / 2):
            raise ViewError("half_fov", f"must be in (0, pi/2) radians, got {half_fov!r}")
        if not (isinstance(margin, (int, float, np.floating)) and 1.0 <= margin < 1e6):
            raise ViewError("margin", f"must be a number from 1 up to 1e6, got {margin!r}")
        s = math.tan(half_fov) / margin
        d = (self.rise + self.reach / s).max(axis=1)
        return np.maximum(d, self.rise.max(axis=1) + 1e-9 * (1.0 + self.extent))

    def camera_locations(self, half_fov: float, margin: float = 1.1) -> np.ndarray:
        """(F, 3) float64: the camera above the centroid, looking along axes[:, 2]."""
        d = self.camera_distances(half_fov, margin)
        return self.centroid - d[:, None] * self.axes[:, 2]


def _unit(v, option: str) -> np.ndarray:
    v = np.asarray(v, dtype=np.float64)
    if v.shape != (3,) or not np.all(np.isfinite(v)) or np.linalg.norm(v) < 1e-12:
        raise ViewError(option, f"must be a finite nonzero 3-vector, got {v!r}")
    return v / np.linalg.norm(v)


def _screen_right(first: np.ndarray, up: np.ndarray) -> np.ndarray:
    """Screen right from the first frame's points (k, 3) across ``up``; see the module text."""
    across = first - first.mean(axis=0)
    across = across - (across @ up)[:, None] * up
    eye = np.eye(3)
    fallback = eye[int(np.argmin(np.abs(eye @ up)))]
    fallback = fallback - (fallback @ up) * up
    fallback /= np.linalg.norm(fallback)
    if across.shape[0] < 2:
        return fallback
    w, vec = np.linalg.eigh(across.T @ across / across.shape[0])
    # eigenvalues ascending; the one along up is ~0; the two across are w[1], w[2]
    if w[2] <= (1 + 1e-3) * w[1] or w[2] <= 1e-24:
        return fallback
    right = vec[:, 2] - (vec[:, 2] @ up) * up
    right /= np.linalg.norm(right)
    return right if right @ fallback >= 0 else -right


def _pareto_front(r: np.ndarray, z: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Per frame, the points not beaten in both r and z by another, padded to a common K.

    r, z : (F, k). Only these can give max_i (z_i + r_i / s) for some s > 0.
    """
    order = np.argsort(-r, axis=1, kind="stable")
    rs = np.take_along_axis(r, order, axis=1)
    zs = np.take_along_axis(z, order, axis=1)
    best = np.maximum.accumulate(zs, axis=1)
    keep = np.ones_like(zs, dtype=bool)
    keep[:, 1:] = zs[:, 1:] > best[:, :-1]
    k = int(keep.sum(axis=1).max())
    rank = np.cumsum(keep, axis=1) - 1
    reach = np.zeros((r.shape[0], k))
    rise = np.full((r.shape[0], k), -np.inf)
    f, j = np.nonzero(keep)
    reach[f, rank[f, j]] = rs[f, j]
    rise[f, rank[f, j]] = zs[f, j]
    return reach, rise


def band_track(positions, vertex_ids, up=(0.0, 0.0, 1.0)) -> BandTrack:
    """The track of the vertices ``vertex_ids`` ((k,) int) through positions (F, V, 3)."""
    positions = np.asarray(positions)
    if positions.ndim != 3 or positions.shape[-1] != 3 or positions.shape[0] < 1:
        raise ViewError("positions", f"must be (F, V, 3), got {positions.shape}")
    ids = np.asarray(vertex_ids)
    if ids.ndim != 1 or ids.size == 0 or not np.issubdtype(ids.dtype, np.integer):
        raise ViewError("vertex_ids", "must be a nonempty 1-D integer array")
    if ids.min() < 0 or ids.max() >= positions.shape[1]:
        raise ViewError("vertex_ids", f"must lie in 0 .. {positions.shape[1] - 1}")
    u = _unit(up, "up")
    pts = positions[:, ids].astype(np.float64)  # (F, k, 3)
    centroid = pts.mean(axis=1)
    rel = pts - centroid[:, None, :]
    extent = np.linalg.norm(rel, axis=-1).max(axis=1)
    z = rel @ u
    r = np.linalg.norm(rel - z[..., None] * u, axis=-1)
    right = _screen_right(pts[0], u)
    axes = np.stack([right, np.cross(u, right), -u])
    reach, rise = _pareto_front(r, z)
    frames = positions.shape[0]
    return BandTrack(
        centroid=centroid,
        extent=extent,
        axes=np.broadcast_to(axes, (frames, 3, 3)).copy(),
        reach=reach,
        rise=rise,
    )
