"""Candidate quadruples of triangles for the quadruple-point solve of one frame interval.

A quadruple point of the linear motion from P0 to P1 is where the moving triple point of
three sheets meets a fourth. The triangle triples of the triple points seen at seeding
positions (the two frames, and intermediate positions for fast intervals) are widened by
letting one triangle be any that shares a vertex with it (the triple point may cross an edge
or a vertex meanwhile), and each widened triple is completed by every triangle that may meet
all three while moving (swept_pairs) and whose box of end positions meets the common part
of theirs (the common point lies in all four moving triangles, so in all four boxes).
Completing one triple, rather than asking two seen triples to share two triangles, finds
the point when only one of its four triple points was seen near where it is at the moment
(a triple point can cross several triangles of each sheet between two frames).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from .intersections import grid_candidate_pairs
from .topology import MeshTopology

CHUNK = 20000  # widened triples completed at once


def swept_pairs(P0: np.ndarray, P1: np.ndarray, topo: MeshTopology):
    """Pairs (a, b), a < b, of triangles sharing no vertex that may meet while moving.

    P0, P1 : (V, 3) float64 positions at the ends of a (short) linear motion. The moving
    triangle stays in the convex hull of its six end positions; a pair is kept when the
    hulls' boxes overlap and neither triangle's mid-motion normal separates the hulls
    (a separating axis rules out any contact). Returns two (K,) int64.
    """
    faces = topo.faces
    corners = np.concatenate([P0[faces], P1[faces]], axis=1)  # (M, 6, 3)
    a, b = grid_candidate_pairs(corners.min(axis=1), corners.max(axis=1))
    fa, fb = faces[a], faces[b]
    share = np.zeros(a.size, bool)
    for i in range(3):
        for j in range(3):
            share |= fa[:, i] == fb[:, j]
    a, b = a[~share], b[~share]
    mid = 0.5 * (corners[:, :3] + corners[:, 3:])
    n = np.cross(mid[:, 1] - mid[:, 0], mid[:, 2] - mid[:, 0])
    n /= np.maximum(np.linalg.norm(n, axis=1, keepdims=True), 1e-300)
    keep = np.ones(a.size, bool)
    for t, o in ((a, b), (b, a)):
        own = np.einsum("kvi,ki->kv", corners[t], n[t])
        other = np.einsum("kvi,ki->kv", corners[o], n[t])
        margin = 1e-9 * (np.abs(own).max(axis=1) + np.abs(other).max(axis=1))
        keep &= ~(
            (other.min(axis=1) > own.max(axis=1) + margin)
            | (other.max(axis=1) < own.min(axis=1) - margin)
        )
    return a[keep], b[keep]


def face_rings(topo: MeshTopology) -> tuple[np.ndarray, np.ndarray]:
    """Faces sharing a vertex with each face (itself included), as CSR (start (M+1,), ids)."""
    m = topo.n_faces
    f = np.repeat(np.arange(m), 3)
    v = topo.faces.ravel()
    order = np.argsort(v, kind="stable")
    v, f = v[order], f[order]
    vstart = np.searchsorted(v, np.arange(topo.n_vertices + 1))
    cnt = np.diff(vstart)[v]  # faces at each corner's vertex
    owner = np.repeat(f, cnt)
    local = np.arange(owner.size) - np.repeat(np.cumsum(cnt) - cnt, cnt)
    other = f[np.repeat(vstart[v], cnt) + local]
    key = np.unique(owner * m + other)
    return np.searchsorted(key // m, np.arange(m + 1)), key % m


def _csr_pairs(a: np.ndarray, b: np.ndarray, m: int):
    """Symmetric adjacency of the pairs (a, b) as CSR (start (m+1,), ids) and sorted keys."""
    u = np.concatenate([a, b])
    w = np.concatenate([b, a])
    key = np.unique(u * m + w)
    return np.searchsorted(key // m, np.arange(m + 1)), key % m, key


def _expand(start: np.ndarray, ids: np.ndarray, rows: np.ndarray, col: int) -> np.ndarray:
    """Rows (R, k) with column ``col`` replaced by each of its CSR neighbours: (R', k)."""
    v = rows[:, col]
    cnt = start[v + 1] - start[v]
    owner = np.repeat(np.arange(rows.shape[0]), cnt)
    local = np.arange(owner.size) - np.repeat(np.cumsum(cnt) - cnt, cnt)
    out = rows[owner].copy()
    out[:, col] = ids[start[v[owner]] + local]
    return out


@dataclass
class SweptGraph:
    """The triangles that may meet while the vertices move from P0 to P1, built once per
    interval: pairs as CSR (start (M+1,) int64, ids) and sorted keys a * M + b (both
    directions), each triangle's box of its six end positions (lo, hi (M, 3) float64), and
    the faces sharing a vertex with each face (ring_start (M+1,), ring_ids)."""

    start: np.ndarray
    ids: np.ndarray
    keys: np.ndarray
    lo: np.ndarray
    hi: np.ndarray
    ring_start: np.ndarray
    ring_ids: np.ndarray

    def has(self, u: np.ndarray, v: np.ndarray) -> np.ndarray:
        """May triangles u and v (int arrays of one shape) meet?  bool, same shape."""
        m = self.start.size - 1
        k = u * m + v
        if not self.keys.size:
            return np.zeros(k.shape, bool)
        pos = np.minimum(np.searchsorted(self.keys, k), self.keys.size - 1)
        return self.keys[pos] == k


def swept_graph(P0: np.ndarray, P1: np.ndarray, topo: MeshTopology) -> SweptGraph:
    """SweptGraph of the linear motion P0 -> P1 ((V, 3) float64)."""
    a, b = swept_pairs(P0, P1, topo)
    start, ids, keys = _csr_pairs(a, b, topo.n_faces)
    corners = np.concatenate([P0[topo.faces], P1[topo.faces]], axis=1)  # (M, 6, 3)
    rs, rid = face_rings(topo)
    return SweptGraph(start, ids, keys, corners.min(axis=1), corners.max(axis=1), rs, rid)


def seeded_quadruples(
    triples: np.ndarray,
    P0: np.ndarray,
    P1: np.ndarray,
    topo: MeshTopology,
    graph: SweptGraph | None = None,
) -> np.ndarray:
    """Candidate quadruples (Q, 4) int64 (sorted rows, unique) grown from triple points.

    triples : (T, 3) int the three triangles of each triple point seen at a seeding position
    of the interval. Each triple is widened by letting one of its triangles be any triangle
    that shares a vertex with it, then completed by every fourth triangle that may meet all
    three while moving (see the module notes). graph : the interval's swept_graph, built
    here when None.
    """
    if triples.shape[0] == 0:
        return np.zeros((0, 4), np.int64)
    g = swept_graph(P0, P1, topo) if graph is None else graph
    rs, rid, ps, pid, lo, hi = g.ring_start, g.ring_ids, g.start, g.ids, g.lo, g.hi
    has = g.has
    t = np.sort(np.asarray(triples, np.int64), axis=1)
    wide = np.unique(np.sort(np.concatenate([_expand(rs, rid, t, c) for c in range(3)]), 1), axis=0)
    wide = wide[(wide[:, 0] != wide[:, 1]) & (wide[:, 1] != wide[:, 2])]

    # the widened triple must itself be pairwise in the swept graph
    ok = has(wide[:, 0], wide[:, 1]) & has(wide[:, 0], wide[:, 2]) & has(wide[:, 1], wide[:, 2])
    wide = wide[ok]
    # each widened triple is completed by every fourth triangle that may meet all three of
    # them while moving and whose swept box meets the common part of theirs (the common
    # point lies in all four moving triangles, so in all four boxes): one seen triple of
    # the four is enough
    quads = []
    for i in range(0, wide.shape[0], CHUNK):
        w = wide[i : i + CHUNK]
        deg = np.diff(ps)[w]
        col = np.argmin(deg, axis=1)
        rest = np.sort(np.where(np.arange(3)[None, :] == col[:, None], -1, w), axis=1)[:, 1:]
        grown = _expand(ps, pid, np.column_stack([w, w[np.arange(w.shape[0]), col]]), 3)
        owner = np.repeat(np.arange(w.shape[0]), deg[np.arange(w.shape[0]), col])
        d = grown[:, 3]
        b, c = rest[owner, 0], rest[owner, 1]
        ok = (d != b) & (d != c) & has(np.minimum(b, d), np.maximum(b, d))
        ok &= has(np.minimum(c, d), np.maximum(c, d))
        wo = w[owner]
        box_lo = np.maximum(lo[wo].max(axis=1), lo[d])
        box_hi = np.minimum(hi[wo].min(axis=1), hi[d])
        ok &= np.all(box_lo <= box_hi, axis=1)
        quads.append(np.sort(grown[ok], axis=1))
    quad = np.concatenate(quads) if quads else np.zeros((0, 4), np.int64)
    return np.unique(quad, axis=0) if quad.size else np.zeros((0, 4), np.int64)
