"""Every candidate quadruple of triangles for the quadruple-point solve of one interval.

A quadruple point of the linear motion from P0 to P1 is a moment where four triangles (of
four sheets) share a point, so any two of them meet then. The candidates are therefore all
the quadruples of triangles that pairwise may meet while moving (the 4-cliques of the
"swept graph"), and whose boxes of end positions have a common part: no seeding from triple
points seen at chosen moments, so a triple point that is born and dies between two frames
is not missed.

The swept graph is kept small by a test that uses the motion itself. Between the ends every
point of a moving triangle is a convex combination of its corners at s = 0 and at s = 1,
with the same weights; so if along a fixed axis n one triangle lies strictly above the other
at both ends, the gap at s is at least (1 - s) gap(0) + s gap(1) > 0 and they never meet.
Triangles of one smooth sheet move almost together, and an axis in the plane of one of them
(perpendicular to an edge) separates nearby non-neighbours of the same sheet at both ends,
although the boxes swept by the two overlap. On the default eversion this leaves about a
sixth of the pairs that overlapping swept boxes leave, and a few thousand times fewer
4-cliques (measured on frames 240, 296 and 334).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from .intersections import grid_candidate_pairs
from .topology import MeshTopology

CHUNK = 200000  # pairs tested against the separating axes at once
EXPAND = 2_000_000  # neighbours examined at once while growing cliques (memory)
MARGIN = 1e-9  # a separation must exceed this fraction of the projected sizes (rounding)


def _separated(Ca: np.ndarray, Cb: np.ndarray, n: np.ndarray) -> np.ndarray:
    """Does axis n separate the triangles, on the same side at both ends?

    Ca, Cb : (K, 2, 3, 3) corners at s = 0 and s = 1; n : (K, 3). Returns (K,) bool."""
    pa = np.einsum("keci,ki->kec", Ca, n)  # (K, 2 ends, 3 corners)
    pb = np.einsum("keci,ki->kec", Cb, n)
    margin = MARGIN * (np.abs(pa).max(axis=(1, 2)) + np.abs(pb).max(axis=(1, 2)))[:, None]
    above = np.all(pb.min(axis=2) > pa.max(axis=2) + margin, axis=1)
    below = np.all(pb.max(axis=2) < pa.min(axis=2) - margin, axis=1)
    return above | below


def _axes(C: np.ndarray) -> list[np.ndarray]:
    """Each triangle's candidate separating axes from its mid-motion shape: its normal and,
    in its plane, the perpendicular of each edge. C (M, 2, 3, 3) -> four (M, 3)."""
    mid = 0.5 * (C[:, 0] + C[:, 1])
    n = np.cross(mid[:, 1] - mid[:, 0], mid[:, 2] - mid[:, 0])
    return [n] + [np.cross(n, mid[:, (e + 1) % 3] - mid[:, e]) for e in range(3)]


def swept_pairs(P0: np.ndarray, P1: np.ndarray, topo: MeshTopology):
    """Pairs (a, b), a < b, of triangles sharing no vertex that may meet while moving.

    P0, P1 : (V, 3) float64 positions at the ends of a linear motion. Kept: pairs whose
    boxes of their six end positions overlap, and that no axis (a coordinate axis, either
    triangle's mid-motion normal or an in-plane edge perpendicular) separates on the same
    side at both ends. Returns two (K,) int64, sorted by (a, b).
    """
    faces = topo.faces
    C = np.stack([P0[faces], P1[faces]], axis=1)  # (M, 2, 3, 3)
    lo_end, hi_end = C.min(axis=2), C.max(axis=2)  # (M, 2, 3) box of each end
    a, b = grid_candidate_pairs(lo_end.min(axis=1), hi_end.max(axis=1))
    fa, fb = faces[a], faces[b]
    share = np.zeros(a.size, bool)
    for i in range(3):
        for j in range(3):
            share |= fa[:, i] == fb[:, j]
    a, b = a[~share], b[~share]
    # coordinate axes: apart on one side at both ends
    gap = (lo_end[b] > hi_end[a]).all(axis=1) | (lo_end[a] > hi_end[b]).all(axis=1)
    keep = ~gap.any(axis=1)
    a, b = a[keep], b[keep]
    axes = _axes(C)
    kept = []
    for i in range(0, a.size, CHUNK):
        ca, cb = a[i : i + CHUNK], b[i : i + CHUNK]
        Ca, Cb = C[ca], C[cb]
        alive = np.ones(ca.size, bool)
        for own in (ca, cb):
            for ax in axes:
                idx = np.flatnonzero(alive)
                alive[idx[_separated(Ca[idx], Cb[idx], ax[own[idx]])]] = False
        kept.append(alive)
    keep = np.concatenate(kept) if kept else np.zeros(0, bool)
    a, b = a[keep], b[keep]
    order = np.lexsort((b, a))
    return a[order], b[order]


@dataclass
class SweptGraph:
    """The triangles that may meet while the vertices move from P0 to P1, built once per
    interval: forward pairs (b > a) as CSR (start (M+1,) int64, ids sorted in each row),
    sorted keys a * M + b of the same pairs, and each triangle's box of its six end
    positions (lo, hi (M, 3) float64)."""

    start: np.ndarray
    ids: np.ndarray
    keys: np.ndarray
    lo: np.ndarray
    hi: np.ndarray

    @property
    def n_faces(self) -> int:
        return self.start.size - 1

    @property
    def n_pairs(self) -> int:
        return int(self.ids.size)

    def has(self, u: np.ndarray, v: np.ndarray) -> np.ndarray:
        """May triangles u < v (int arrays of one shape) meet?  bool, same shape."""
        k = u * self.n_faces + v
        if not self.keys.size:
            return np.zeros(k.shape, bool)
        pos = np.minimum(np.searchsorted(self.keys, k), self.keys.size - 1)
        return self.keys[pos] == k


def swept_graph(P0: np.ndarray, P1: np.ndarray, topo: MeshTopology) -> SweptGraph:
    """SweptGraph of the linear motion P0 -> P1 ((V, 3) float64)."""
    a, b = swept_pairs(P0, P1, topo)
    m = topo.n_faces
    corners = np.concatenate([P0[topo.faces], P1[topo.faces]], axis=1)  # (M, 6, 3)
    start = np.searchsorted(a, np.arange(m + 1))
    return SweptGraph(start, b, a * m + b, corners.min(axis=1), corners.max(axis=1))


def _extend(g: SweptGraph, rows: np.ndarray) -> np.ndarray:
    """Rows (R, k) of increasing triangles, each extended by every forward neighbour of its
    last triangle that is in the graph with all the others: (R', k + 1), in row order."""
    cnt = g.start[rows[:, -1] + 1] - g.start[rows[:, -1]]
    ends = np.searchsorted(np.cumsum(cnt), np.arange(EXPAND, int(cnt.sum()), EXPAND))
    cuts = [0, *np.unique(np.maximum(ends, 1)).tolist(), rows.shape[0]]
    parts = [_extend_rows(g, rows[i:j]) for i, j in zip(cuts[:-1], cuts[1:], strict=True) if j > i]
    return np.concatenate(parts) if parts else np.zeros((0, rows.shape[1] + 1), np.int64)


def _extend_rows(g: SweptGraph, rows: np.ndarray) -> np.ndarray:
    last = rows[:, -1]
    cnt = g.start[last + 1] - g.start[last]
    owner = np.repeat(np.arange(rows.shape[0]), cnt)
    local = np.arange(owner.size) - np.repeat(np.cumsum(cnt) - cnt, cnt)
    nxt = g.ids[g.start[last[owner]] + local]
    ok = np.ones(owner.size, bool)
    for col in range(rows.shape[1] - 1):
        idx = np.flatnonzero(ok)
        ok[idx] = g.has(rows[owner[idx], col], nxt[idx])
    return np.column_stack([rows[owner[ok]], nxt[ok]])


def swept_quadruples(g: SweptGraph) -> np.ndarray:
    """Every quadruple a < b < c < d of triangles that pairwise may meet (the graph's
    4-cliques) and whose boxes of end positions share a point: (Q, 4) int64, sorted rows in
    lexicographic order."""
    m = g.n_faces
    a = np.repeat(np.arange(m), np.diff(g.start))
    triples = _extend(g, np.column_stack([a, g.ids]))
    quads = _extend(g, triples)
    common = np.all(g.lo[quads].max(axis=1) <= g.hi[quads].min(axis=1), axis=1)
    return quads[common]
