"""Welding: merging vertices that coincide in every frame (the seam duplicates of files
that store one vertex per face corner or per texture seam).
"""

from __future__ import annotations

import numpy as np

from .model import MeshSequence, as_faces


def weld_coincident_vertices(
    positions: np.ndarray, polygons, tolerance: float = 1e-6
) -> tuple[np.ndarray, list[np.ndarray], np.ndarray]:
    """Merge vertices that coincide in every frame (seam duplicates).

    positions : (F, V, 3); polygons : (M, k) array or list of index arrays;
    tolerance : distance, as a fraction of the first frame's bounding-box diagonal.
    Vertices are grouped by rounding the first frame to a grid of the tolerance's size
    (common practice; a pair straddling a grid line is left unwelded), and a group is
    merged only if it stays within the tolerance in every frame.
    Returns (positions (F, V', 3), polygons with degenerate corners removed,
    mapping (V,) int64 from old to new vertex index).
    """
    pos = np.asarray(positions)
    diag = float(np.linalg.norm(np.ptp(pos[0], axis=0))) or 1.0
    tol = tolerance * diag
    keys = np.round(pos[0] / tol).astype(np.int64)
    _, group = np.unique(keys, axis=0, return_inverse=True)
    group = group.ravel()
    rep = np.full(group.max() + 1, -1, np.int64)
    # representative: the lowest vertex index of each group
    order = np.argsort(group, kind="stable")
    first = np.ones(order.size, bool)
    first[1:] = group[order][1:] != group[order][:-1]
    rep[group[order][first]] = order[first]
    target = rep[group]
    dist = np.linalg.norm(pos - pos[:, target], axis=-1).max(axis=0)
    target = np.where(dist <= tol, target, np.arange(pos.shape[1]))
    keep = np.unique(target)
    new_index = np.full(pos.shape[1], -1, np.int64)
    new_index[keep] = np.arange(keep.size)
    mapping = new_index[target]
    polys_out = []
    for p in polygons if not isinstance(polygons, np.ndarray) else list(polygons):
        q = mapping[np.asarray(p, np.int64)]
        # drop repeated consecutive corners created by welding
        keep_c = q != np.roll(q, 1)
        q = q[keep_c] if q.size > 1 else q
        if q.size >= 3:
            polys_out.append(q.astype(np.int32))
    return pos[:, keep], polys_out, mapping


def weld_sequence(seq: MeshSequence, tolerance: float = 1e-6) -> MeshSequence:
    """A copy of ``seq`` with coincident vertices merged (see weld_coincident_vertices)."""
    pos, polys, mapping = weld_coincident_vertices(seq.positions, seq.polygons, tolerance)
    uv = None
    if seq.uv is not None:
        uv = np.zeros((pos.shape[1], 2), np.float32)
        uv[mapping] = seq.uv  # one of the merged vertices' uv
    tri, polys = as_faces(polys)
    return MeshSequence(pos, tri, polys, uv, seq.times)
