"""The mesh sequence held in memory, its validation, and the checks every reader shares.

A mesh sequence is one fixed face list plus vertex positions per frame:

- ``positions`` : (F, V, 3) float32
- ``faces`` : (M, 3) int32 triangles, or ``None`` when the faces are general polygons
- ``polygons`` : a list of (k,) int32 index arrays (always set; triangles too)
- ``uv`` : optional (V, 2) float32, one texture coordinate per vertex
- ``times`` : optional (F,) float64
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass
from pathlib import Path
from typing import Any

import numpy as np


class MeshSequenceError(ValueError):
    """An unreadable or inconsistent mesh sequence (the message says what and where)."""


@dataclass(frozen=True)
class ReadLimits:
    """Upper bounds checked before allocating memory for untrusted files."""

    max_frames: int = 100_000
    max_vertices: int = 20_000_000
    max_faces: int = 40_000_000
    max_corners: int = 64  # corners of one polygon
    max_total_bytes: int = 8 * 1024**3  # decoded positions over all frames


DEFAULT_LIMITS = ReadLimits()


@dataclass
class MeshSequence:
    """An animated mesh with fixed topology.

    positions : (F, V, 3) float32
    faces : (M, 3) int32 triangles, or None when the faces are general polygons
    polygons : list of (k,) int32 vertex index arrays (always set; triangles too)
    uv : (V, 2) float32 or None
    times : (F,) float64 or None
    """

    positions: np.ndarray
    faces: np.ndarray | None
    polygons: list[np.ndarray]
    uv: np.ndarray | None = None
    times: np.ndarray | None = None

    @property
    def n_frames(self) -> int:
        return int(self.positions.shape[0])

    @property
    def n_vertices(self) -> int:
        return int(self.positions.shape[1])

    def triangles(self) -> np.ndarray:
        """The faces as triangles, (M, 3) int32 (polygons are split into fans)."""
        if self.faces is not None:
            return self.faces
        return triangulate_polygons(self.polygons)


def triangulate_polygons(polygons: Sequence[Any] | np.ndarray) -> np.ndarray:
    """Split polygons into triangle fans around their first corner.

    polygons : (M, k) int array or a list of index sequences (k >= 3 each)
    Returns (T, 3) int32.
    """
    if isinstance(polygons, np.ndarray) and polygons.ndim == 2:
        arr = polygons.astype(np.int64)
        k = arr.shape[1]
        if k < 3:
            raise MeshSequenceError(f"faces need at least 3 corners, got {k}")
        if k == 3:
            return arr.astype(np.int32)
        tris = [np.stack([arr[:, 0], arr[:, j], arr[:, j + 1]], axis=1) for j in range(1, k - 1)]
        return np.stack(tris, axis=1).reshape(-1, 3).astype(np.int32)
    polys = [np.asarray(p, dtype=np.int64).ravel() for p in polygons]
    if not polys:
        return np.zeros((0, 3), np.int32)
    sizes = np.array([p.size for p in polys])
    if sizes.min() < 3:
        bad = int(np.argmin(sizes))
        raise MeshSequenceError(f"face {bad} has {sizes[bad]} corners; faces need at least 3")
    flat = np.concatenate(polys)
    starts = np.concatenate([[0], np.cumsum(sizes)[:-1]])
    n_tri = sizes - 2
    first = np.repeat(starts, n_tri)
    # j-th triangle of a polygon uses corners (0, j+1, j+2)
    j = np.arange(n_tri.sum()) - np.repeat(np.cumsum(n_tri) - n_tri, n_tri)
    tri = np.stack([flat[first], flat[first + j + 1], flat[first + j + 2]], axis=1)
    return tri.astype(np.int32)


def as_faces(faces) -> tuple[np.ndarray | None, list[np.ndarray]]:
    """(triangles (M, 3) int32 or None, polygons) from an (M, k) array or a list of polygons.

    The triangles are None when any face has more than three corners.
    """
    if isinstance(faces, np.ndarray) and faces.ndim == 2 and faces.shape[1] == 3:
        tri = faces.astype(np.int32)
        return tri, list(tri.astype(np.int32))  # polygons do not share memory with tri
    if isinstance(faces, np.ndarray) and faces.ndim == 2:
        polys = [np.asarray(r, np.int32) for r in faces]
    else:
        polys = [np.asarray(p, dtype=np.int64).ravel().astype(np.int32) for p in faces]
    if polys and all(p.size == 3 for p in polys):
        tri = np.stack(polys).astype(np.int32)
        return tri, polys
    return None, polys


def check_positions(positions, name: str = "positions") -> np.ndarray:
    """Positions given to a writer as a (F, V, 3) numeric array ((V, 3) is one frame)."""
    pos = np.asarray(positions)
    if pos.ndim == 2:
        pos = pos[None]
    if pos.ndim != 3 or pos.shape[-1] != 3:
        raise MeshSequenceError(f"{name} must have shape (frames, vertices, 3), got {pos.shape}")
    if pos.dtype.kind not in "fiu":
        raise MeshSequenceError(f"{name} must be numeric, got dtype {pos.dtype}")
    return pos


def validate(seq: MeshSequence, source: str, files: Sequence[Path] = ()) -> MeshSequence:
    """Check shapes, finiteness and indices; ``files`` (one per frame) names the file at fault."""
    pos = seq.positions
    if pos.ndim != 3 or pos.shape[-1] != 3:
        raise MeshSequenceError(
            f"{source}: positions must be (frames, vertices, 3), got {pos.shape}"
        )
    if pos.shape[0] == 0:
        raise MeshSequenceError(f"{source}: no frames")
    if pos.shape[1] == 0:
        raise MeshSequenceError(f"{source}: no vertices")
    bad = ~np.isfinite(pos)
    if bad.any():
        f, v, _ = np.argwhere(bad)[0]
        where = str(files[f]) if len(files) > f else source
        raise MeshSequenceError(
            f"{where}: positions contain NaN or infinity (first at frame {f}, vertex {v}); "
            "every coordinate must be a finite number"
        )
    if not seq.polygons:
        raise MeshSequenceError(f"{source}: no faces")
    n = pos.shape[1]
    flat = np.concatenate([np.asarray(p).ravel() for p in seq.polygons])
    if flat.min() < 0 or flat.max() >= n:
        worst = int(flat.max()) if flat.max() >= n else int(flat.min())
        raise MeshSequenceError(
            f"{source}: a face uses vertex index {worst}, but there are {n} vertices "
            f"(indices must be 0..{n - 1})"
        )
    if seq.uv is not None and seq.uv.shape != (n, 2):
        raise MeshSequenceError(
            f"{source}: uv must be (vertices, 2) = ({n}, 2), got {seq.uv.shape}"
        )
    if seq.times is not None:
        if seq.times.shape != (pos.shape[0],):
            raise MeshSequenceError(
                f"{source}: times must be (frames,) = ({pos.shape[0]},), got {seq.times.shape}"
            )
        if not np.all(np.isfinite(seq.times)):
            raise MeshSequenceError(f"{source}: times contain NaN or infinity")
    return seq


def file_size(path: Path) -> int:
    """Size of a file we are about to read; refuses missing, unreadable and empty files."""
    try:
        size = path.stat().st_size
    except OSError as exc:
        raise MeshSequenceError(f"{path}: cannot read ({exc.strerror})") from None
    if size == 0:
        raise MeshSequenceError(f"{path}: the file is empty")
    return size
