"""Meshes that show a plane-curve homotopy in 3D: the wall and the mark beads.

The wall stands a curve up as a thin vertical band: every point of the curve becomes a
bottom vertex at z = 0 and a top vertex at z = height, and each step of the curve becomes
one quad. An animated curve (F, N, 2) becomes an animated band (F, 2N, 3) over one fixed
face array, which is what the Blender layer bakes and what the mesh checker reads.

The band is an annulus (open at the bottom and top rings): every rung edge lies in two
quads, every ring edge in one, and its Euler characteristic is V - E + F = 2N - 3N + N = 0.
Quad k runs bottom k, bottom k+1, top k+1, top k, so its normal is the step direction
turned clockwise: on a counter-clockwise curve the front side faces outwards.

The mark beads show the marked points of :mod:`.marks` (where the tangent passes the
chosen direction). One small octahedron per mark track sits on the wall's top edge and
follows its mark; while the track does not exist (before the mark appears, after it
vanishes) all six corners of its octahedron coincide at the place where it appears or
vanishes, so it has no area and shows nothing. The vertex count stays fixed, so the
beads bake as shape keys like the wall.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from .marks import FrameMarks, track_marks

#: Most vertices (frames x vertices) one baked wall or bead set may hold.
MAX_FRAME_VERTICES = 50_000_000

# unit octahedron: six corners (+-x, +-y, +-z) and eight outward-facing triangles
_OCTA_CORNERS = np.array(
    [[1, 0, 0], [-1, 0, 0], [0, 1, 0], [0, -1, 0], [0, 0, 1], [0, 0, -1]], np.float64
)
_OCTA_FACES = np.array(
    [[0, 2, 4], [2, 1, 4], [1, 3, 4], [3, 0, 4], [2, 0, 5], [1, 2, 5], [3, 1, 5], [0, 3, 5]],
    np.int32,
)


def _frames_of_points(points, name: str) -> np.ndarray:
    p = np.asarray(points, dtype=np.float64)
    if p.ndim == 2:
        p = p[None]
    if p.ndim != 3 or p.shape[2] != 2 or p.shape[1] < 3 or p.shape[0] < 1:
        raise ValueError(f"{name}: expected (F, N, 2) points with N >= 3, got {np.shape(points)}")
    if p.shape[0] * p.shape[1] * 2 > MAX_FRAME_VERTICES:
        raise ValueError(
            f"{name}: {p.shape[0]} frames x {2 * p.shape[1]} vertices is more than "
            f"{MAX_FRAME_VERTICES}; use fewer frames or samples"
        )
    if not np.all(np.isfinite(p)):
        raise ValueError(f"{name}: some coordinates are not finite")
    return p


def _check_height(height: float) -> float:
    h = float(height)
    if not np.isfinite(h) or h <= 0.0:
        raise ValueError(f"height: must be a positive finite number, got {height!r}")
    return h


def wall_height_for(points, fraction: float = 0.1) -> float:
    """A wall height as ``fraction`` of the largest extent of the curves' points.

    points : (F, N, 2) or (N, 2) float. fraction : 0 < fraction <= 10.
    """
    f = float(fraction)
    if not np.isfinite(f) or not 0.0 < f <= 10.0:
        raise ValueError(f"height fraction: must be in (0, 10], got {fraction!r}")
    p = np.asarray(points, dtype=np.float64).reshape(-1, 2)
    extent = float(np.ptp(p, axis=0).max()) if p.size else 0.0
    if not np.isfinite(extent) or extent <= 0.0:
        raise ValueError("height: the curves have no extent")
    return f * extent


def wall_faces(n: int) -> np.ndarray:
    """Quads of the wall over a closed curve of ``n`` points.

    Vertices 0..n-1 are the bottom ring, n..2n-1 the top ring. Quad k is
    (k, k+1, n+k+1, n+k), indices taken mod n within each ring.
    Returns (n, 4) int32.
    """
    n = int(n)
    if n < 3:
        raise ValueError(f"wall: a closed curve needs at least 3 points, got {n}")
    k = np.arange(n, dtype=np.int32)
    nxt = (k + 1) % n
    return np.stack([k, nxt, nxt + n, k + n], axis=1).astype(np.int32)


def wall_positions(points, height: float, dtype=np.float32) -> np.ndarray:
    """Vertex positions of the wall over each frame's curve.

    points : (F, N, 2) float (or (N, 2), then F = 1), the curve's local XY per frame
    height : top ring's z (the bottom ring is at z = 0)
    Returns (F, 2N, 3) of ``dtype`` (float32 for Blender by default): bottom ring first,
    then the top ring, in the curve's point order.
    """
    p = _frames_of_points(points, "wall")
    h = _check_height(height)
    nf, n = p.shape[:2]
    out = np.empty((nf, 2 * n, 3), dtype=dtype)
    out[:, :n, :2] = p
    out[:, n:, :2] = p
    out[:, :n, 2] = 0.0
    out[:, n:, 2] = h
    return out


@dataclass(frozen=True)
class MarkBeads:
    """Mark beads for every frame: one octahedron per mark track.

    positions : (F, 6T, 3) float32, six corners per track (collapsed to one point in the
        frames where the track's mark does not exist)
    faces : (8T, 3) int32
    signs : (T,) int8, the sign of each track's mark (+1 turning left, -1 right)
    present : (F, T) bool, whether each track's mark exists in each frame
    """

    positions: np.ndarray
    faces: np.ndarray
    signs: np.ndarray
    present: np.ndarray

    @property
    def n_tracks(self) -> int:
        return int(self.signs.shape[0])


def mark_beads(
    marks: FrameMarks, radius: float, z: float, max_jump: float = 0.05, dtype=np.float32
) -> MarkBeads:
    """Octahedra following the marked points of a curve animation (see the module text).

    marks : from :func:`turnabout.curves.marks_per_frame` over F frames
    radius : corner distance of each octahedron from its centre
    z : height of the centres (the wall's top edge, for example)
    max_jump : passed to :func:`turnabout.curves.track_marks`
    """
    r = _check_height(radius)
    zc = float(z)
    if not np.isfinite(zc):
        raise ValueError(f"z: must be finite, got {z!r}")
    nf = int(marks.counts.shape[0])
    ids = track_marks(marks, max_jump=max_jump)
    nt = int(ids.max()) + 1 if ids.size else 0
    if nf * nt * 6 > MAX_FRAME_VERTICES:
        raise ValueError(f"mark beads: {nf} frames x {nt} tracks is too many to bake")
    centre = np.zeros((nf, nt, 2), np.float64)
    present = np.zeros((nf, nt), bool)
    centre[marks.frame, ids] = marks.positions
    present[marks.frame, ids] = True
    signs = np.zeros(nt, np.int8)
    signs[ids] = marks.signs
    if nt:
        # hold each absent track at its nearest own position: forward fill, then backward
        f_idx = np.arange(nf)[:, None]
        last = np.maximum.accumulate(np.where(present, f_idx, -1), axis=0)
        first = np.flip(
            np.minimum.accumulate(np.flip(np.where(present, f_idx, nf), axis=0), axis=0), axis=0
        )
        src = np.where(last >= 0, last, first)  # every track is present somewhere
        centre = centre[src, np.arange(nt)[None, :]]
    size = np.where(present, r, 0.0)[:, :, None, None]  # (F, T, 1, 1)
    c3 = np.concatenate([centre, np.full((nf, nt, 1), zc)], axis=2)[:, :, None, :]
    pos = (c3 + size * _OCTA_CORNERS[None, None]).reshape(nf, 6 * nt, 3).astype(dtype)
    faces = (_OCTA_FACES[None] + 6 * np.arange(nt, dtype=np.int32)[:, None, None]).reshape(-1, 3)
    return MarkBeads(positions=pos, faces=faces.astype(np.int32), signs=signs, present=present)
