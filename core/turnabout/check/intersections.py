"""Self-intersection of one mesh frame: double curves and triple points.

Broad phase: triangle bounding boxes hashed into a uniform grid (pure numpy); each pair is
kept only in the cell holding the low corner of the two boxes' overlap, so no pair is seen
twice. Pairs sharing a vertex (or an edge) are dropped: neighbouring faces always touch.

Narrow phase: the double curve is made of "events", an edge of one triangle piercing
another triangle. Each event is decided by a predicate that depends only on that edge and
that triangle (computed in a canonical vertex order), so the two triangle pairs that share
an event always agree about it. A pair with two events gives one segment between the two
piercing points; segments sharing an event chain into polylines (the double curves), and
the chains are closed or end where the surface folds onto itself (a pinch point).

Triple points: a double-curve segment of sheets (A, B) that pierces a triangle of a third
sheet C. The three chains through a triple point each cross the third sheet once, so a
generic triple point is seen three times; nearby detections are merged into one point.
Banchoff ("Triple points and surgery of immersed surfaces", Proc. AMS, 1974): a generic
immersion of a closed surface has a number of triple points congruent to its Euler
characteristic mod 2.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from .broad_phase import entry_pairs, expand_ranges, grid_candidate_pairs, grid_entries
from .chains import chain_segments
from .topology import MeshTopology, component_labels

__all__ = ["IntersectionResult", "grid_candidate_pairs", "self_intersections"]

_TINY = np.finfo(np.float64).tiny


@dataclass
class IntersectionResult:
    """Double curves and triple points of one frame.

    segments : (S, 2, 3) float64 endpoints of the intersection segments
    segment_faces : (S, 2) int64 the two triangles of each segment
    curves : list of (k,) int64 arrays of segment indices, in order along each double curve
    curve_closed : list of bool, one per curve
    triple_points : (T, 3) float64 positions
    triple_faces : (T, 3) int64 one triangle of each of the three sheets
    triple_detections : (T,) int64 how many chain crossings each point merged (3 if generic)
    triple_coincident : (T,) int64 the most of those detections that agree to rounding
        (within COINCIDENT local edge lengths): 3 for a triple point however many distinct
        triple points the merge radius gathered, 12 only where four sheets truly share a point
    degenerate_pairs : pairs whose event count was not 0 or 2 (touching or coplanar faces)
    candidate_pairs : pairs left after the broad phase
    """

    segments: np.ndarray
    segment_faces: np.ndarray
    curves: list[np.ndarray]
    curve_closed: list[bool]
    triple_points: np.ndarray
    triple_faces: np.ndarray
    triple_detections: np.ndarray
    degenerate_pairs: int = 0
    candidate_pairs: int = 0
    broad_phase: str = "grid"
    extra: dict = field(default_factory=dict)
    triple_coincident: np.ndarray | None = None

    @property
    def double_curve_count(self) -> int:
        return len(self.curves)

    @property
    def triple_point_count(self) -> int:
        return int(self.triple_points.shape[0])

    def polylines(self) -> list[np.ndarray]:
        """Each double curve as a (k, 3) float64 polyline (closed curves repeat the start)."""
        out: list[np.ndarray] = []
        for seg_ids, closed in zip(self.curves, self.curve_closed, strict=True):
            pts = _chain_points(self.segments, seg_ids)
            if closed:
                pts = np.vstack([pts, pts[:1]])
            out.append(pts)
        return out


def _chain_points(segments: np.ndarray, seg_ids: np.ndarray) -> np.ndarray:
    if seg_ids.size == 1:
        return segments[seg_ids[0]].copy()
    s = segments[seg_ids]  # (k, 2, 3)
    pts = [s[0, 0], s[0, 1]]
    # orient the first segment so its end meets the second
    if np.linalg.norm(s[0, 0] - s[1, 0]) + np.linalg.norm(s[0, 0] - s[1, 1]) < np.linalg.norm(
        s[0, 1] - s[1, 0]
    ) + np.linalg.norm(s[0, 1] - s[1, 1]):
        pts = [s[0, 1], s[0, 0]]
    for k in range(1, len(s)):
        last = pts[-1]
        a, b = s[k, 0], s[k, 1]
        pts.append(b if np.sum((a - last) ** 2) <= np.sum((b - last) ** 2) else a)
    return np.array(pts)


# --------------------------------------------------------------------------- broad phase


def _mathutils_pairs(P: np.ndarray, faces: np.ndarray):  # pragma: no cover - optional
    """Pairs from Blender's mathutils BVH overlap when it can be imported, else None."""
    try:
        from mathutils.bvhtree import BVHTree
    except ImportError:
        return None
    tree = BVHTree.FromPolygons(P.tolist(), faces.tolist(), all_triangles=True)
    pairs = np.array(tree.overlap(tree), dtype=np.int64).reshape(-1, 2)
    pairs = pairs[pairs[:, 0] < pairs[:, 1]]
    return pairs[:, 0], pairs[:, 1]


# --------------------------------------------------------------------------- predicates


def _sign(x: np.ndarray) -> np.ndarray:
    """Sign with zero counted as positive (a fixed symbolic tie-break)."""
    return np.where(x < 0, -1, 1).astype(np.int8)


def _orient4(p, q, u, v) -> np.ndarray:
    """det[q - p, u - p, v - p] for rows of (K, 3) arrays (p, q, u, v in canonical order)."""
    a = q - p
    b = u - p
    c = v - p
    return (
        a[:, 0] * (b[:, 1] * c[:, 2] - b[:, 2] * c[:, 1])
        + a[:, 1] * (b[:, 2] * c[:, 0] - b[:, 0] * c[:, 2])
        + a[:, 2] * (b[:, 0] * c[:, 1] - b[:, 1] * c[:, 0])
    )


class _Frame:
    """Per-triangle data of one frame used by the predicates."""

    def __init__(self, P: np.ndarray, faces: np.ndarray):
        self.P = P
        self.faces = faces.astype(np.int64)
        p0, p1, p2 = P[self.faces[:, 0]], P[self.faces[:, 1]], P[self.faces[:, 2]]
        self.p0 = p0
        self.normal = np.cross(p1 - p0, p2 - p0)
        self.corners = np.stack([p0, p1, p2], axis=1)  # (M, 3, 3): one row gather per pair
        self.plane = np.concatenate([p0, self.normal], axis=1)  # (M, 6): p0, normal
        # the same numbers as contiguous columns, for gathers one coordinate at a time:
        # corner_cols[c][i] the coordinate i of corner c, plane_cols p0 x, y, z, normal x, y, z
        self.corner_cols = [[np.ascontiguousarray(self.corners[:, c, i]) for i in range(3)]
                            for c in range(3)]  # fmt: skip
        self.plane_cols = [np.ascontiguousarray(self.plane[:, i]) for i in range(6)]

    def corner_values(self, s: np.ndarray, t: np.ndarray) -> list[np.ndarray]:
        """plane_value(t, corner c of s) for c = 0, 1, 2: three (K,) float64, the very numbers
        plane_value gives (the same operations in the same order), from 1-D gathers."""
        px, py, pz, nx, ny, nz = (col.take(t) for col in self.plane_cols)
        out = []
        for cx, cy, cz in self.corner_cols:
            out.append(nx * (cx.take(s) - px) + ny * (cy.take(s) - py) + nz * (cz.take(s) - pz))
        return out

    def plane_value(self, t: np.ndarray, x: np.ndarray) -> np.ndarray:
        """normal_t . (x - p0_t): a deterministic function of (t, x)."""
        d = x - self.p0[t]
        n = self.normal[t]
        return n[:, 0] * d[:, 0] + n[:, 1] * d[:, 1] + n[:, 2] * d[:, 2]

    def inside_line(self, t: np.ndarray, p: np.ndarray, q: np.ndarray) -> np.ndarray:
        """Does the line p -> q pass through triangle t?  (p, q in canonical order)

        Tests the line against each edge of t in canonical (low index first) order and
        corrects the sign for the edge's direction in t; inside when all three agree.
        """
        f = self.faces[t]
        signs = []
        for k in range(3):
            i, j = f[:, k], f[:, (k + 1) % 3]
            u = np.minimum(i, j)
            v = np.maximum(i, j)
            s = _sign(_orient4(p, q, self.P[u], self.P[v]))
            signs.append(np.where(i < j, s, -s))
        return (signs[0] == signs[1]) & (signs[1] == signs[2])


def _inside_line_cols(ids, corners, p, q) -> np.ndarray:
    """_Frame.inside_line with the triangles given as columns: the same predicate.

    ids : three (K,) int, the triangles' vertex indices; corners : corners[c][x] (K,) float64,
    coordinate x of corner c; p, q : three (K,) float64 each, the lines' points in canonical
    order. Returns (K,) bool. Each edge is taken in the triangle's own order: swapping the
    last two arguments of the orientation determinant negates it exactly in floating point,
    so only an exact zero needs the canonical order's tie-break (zero counts as positive in
    low-index-first order).
    """
    a0, a1, a2 = q[0] - p[0], q[1] - p[1], q[2] - p[2]
    signs = []
    for k in range(3):
        kk = (k + 1) % 3
        b0, b1, b2 = corners[k][0] - p[0], corners[k][1] - p[1], corners[k][2] - p[2]
        c0, c1, c2 = corners[kk][0] - p[0], corners[kk][1] - p[1], corners[kk][2] - p[2]
        o = a0 * (b1 * c2 - b2 * c1) + a1 * (b2 * c0 - b0 * c2) + a2 * (b0 * c1 - b1 * c0)
        s = np.sign(o).astype(np.int8)
        zero = s == 0
        if zero.any():
            s[zero] = np.where(ids[k][zero] < ids[kk][zero], 1, -1)
        signs.append(s)
    return (signs[0] == signs[1]) & (signs[1] == signs[2])


def _edge_events(ids, corners, values, k: int, target_ids, target_corners):
    """Does edge k of a triangle pierce the target triangle?  Returns (hit, point).

    ids : three (K,) int, the edge's triangle's vertex indices; corners : corners[c][x] (K,)
    float64 their positions; values : three (K,) float64, the target's plane_value at them
    (the very numbers plane_value gives, so the two pairs sharing an event agree bit for
    bit); target_ids, target_corners : the target triangles, same layout.
    hit : (K,) bool; point : (K, 3) float64 where the edge meets the plane (0 if no hit).
    """
    i, j = k, (k + 1) % 3
    n = ids[0].size
    hit = np.zeros(n, bool)
    point = np.zeros((n, 3))
    w = np.flatnonzero((values[i] < 0) != (values[j] < 0))  # signs differ (zero positive)
    if w.size == 0:
        return hit, point
    swap = ids[i][w] > ids[j][w]  # canonical order: the lower vertex index first
    p = [np.where(swap, corners[j][x][w], corners[i][x][w]) for x in range(3)]
    q = [np.where(swap, corners[i][x][w], corners[j][x][w]) for x in range(3)]
    target = [[target_corners[c][x][w] for x in range(3)] for c in range(3)]
    ins = _inside_line_cols([t[w] for t in target_ids], target, p, q)
    w, swap = w[ins], swap[ins]
    p, q = [x[ins] for x in p], [x[ins] for x in q]
    vi, vj = values[i][w], values[j][w]
    op, oq = np.where(swap, vj, vi), np.where(swap, vi, vj)
    hit[w] = True
    t = op / (op - oq)
    for x in range(3):
        point[w, x] = p[x] + (q[x] - p[x]) * t
    return hit, point


def _straddles(v: list[np.ndarray]) -> np.ndarray:
    """Are the three values not all of one sign (zero counted positive, as _sign)?"""
    neg = [x < 0 for x in v]
    return (neg[0] | neg[1] | neg[2]) & ~(neg[0] & neg[1] & neg[2])


# --------------------------------------------------------------------------- main

PARTS_PER_THREAD = 2  # grid parts per thread: mid-motion frames crowd a few cell ranges


def _pair_segments(fr: _Frame, topo: MeshTopology, a: np.ndarray, b: np.ndarray):
    """The double-curve segments of candidate pairs (a, b) (box pairs, a < b): (segment
    event keys (S, 2), endpoints (S, 2, 3), faces (S, 2), pairs left once neighbours are
    dropped, degenerate pairs). Row by row, so the pairs can be split and the parts joined."""
    m = fr.faces.shape[0]
    # drop pairs sharing a vertex (an edge shares two): neighbours always touch
    cols32 = topo.corner_columns_int32
    fa = [c.take(a) for c in cols32]
    fb = [c.take(b) for c in cols32]
    share = fa[0] == fb[0]
    for i in range(3):
        for j in range(3):
            if i or j:
                share |= fa[i] == fb[j]
    keep_pair = ~share
    a, b = a[keep_pair], b[keep_pair]
    n_candidates = int(a.size)

    # plane straddling: two triangles can cross only where each has vertices on both sides
    # of the other's plane (an edge of one piercing the other puts a point of the other on
    # the first one's plane). Tested one direction at a time, on the survivors of the
    # first, from 1-D gathers; the plane values are kept for the event tests.
    va = fr.corner_values(a, b)  # a's vertices against b's plane
    keep = _straddles(va)
    a, b, va = a[keep], b[keep], [v[keep] for v in va]
    vb = fr.corner_values(b, a)
    keep = _straddles(vb)
    a, b = a[keep], b[keep]
    val_a, val_b = [v[keep] for v in va], [v[keep] for v in vb]
    cols = topo.corner_columns
    ids_a, ids_b = [c.take(a) for c in cols], [c.take(b) for c in cols]
    corners_a = [[x.take(a) for x in corner] for corner in fr.corner_cols]
    corners_b = [[x.take(b) for x in corner] for corner in fr.corner_cols]
    k = a.size
    # six events per pair: edges 0..2 of a through b, edges 0..2 of b through a
    hits = np.zeros((k, 6), bool)
    points = np.zeros((k, 6, 3))
    keys = np.zeros((k, 6), np.int64)
    for e in range(3):
        hits[:, e], points[:, e] = _edge_events(ids_a, corners_a, val_a, e, ids_b, corners_b)
        keys[:, e] = topo.face_edges[a, e] * m + b
        hits[:, 3 + e], points[:, 3 + e] = _edge_events(
            ids_b, corners_b, val_b, e, ids_a, corners_a
        )
        keys[:, 3 + e] = topo.face_edges[b, e] * m + a
    n_ev = hits.sum(axis=1)
    degenerate = int(np.sum((n_ev != 0) & (n_ev != 2)))
    good = np.flatnonzero(n_ev == 2)
    hsub = hits[good]
    col = np.argsort(~hsub, axis=1, kind="stable")[:, :2]  # the two event columns
    rows = np.arange(good.size)[:, None]
    seg_keys = keys[good][rows, col]  # (S, 2)
    seg_pts = points[good][rows, col]  # (S, 2, 3)
    # canonical endpoint order: lower event key first
    flip = seg_keys[:, 0] > seg_keys[:, 1]
    seg_keys[flip] = seg_keys[flip][:, ::-1]
    seg_pts[flip] = seg_pts[flip][:, ::-1]
    seg_faces = np.stack([a[good], b[good]], axis=1)
    return seg_keys, seg_pts, seg_faces, n_candidates, degenerate


def self_intersections(
    positions: np.ndarray,
    topo: MeshTopology,
    use_mathutils: bool = False,
    cell_scale: float = 1.5,
    threads: int = 1,
) -> IntersectionResult:
    """Double curves and triple points of one frame.

    positions : (V, 3) float; topo : the mesh topology (faces (M, 3)).
    use_mathutils : take the broad phase from Blender's BVH overlap when importable.
    threads : the pair search and the exact tests run on that many threads, over parts of
    the grid (whole cell ranges); the result is the same, bit for bit, for any count.
    """
    if isinstance(threads, bool) or not isinstance(threads, int | np.integer) or threads < 1:
        raise ValueError(f"threads must be an integer >= 1, got {threads!r}")
    if threads == 1:
        return _self_intersections(positions, topo, use_mathutils, cell_scale, 1, _Inline())
    from concurrent.futures import ThreadPoolExecutor

    with ThreadPoolExecutor(max_workers=threads) as pool:
        return _self_intersections(positions, topo, use_mathutils, cell_scale, threads, pool)


class _Done:
    def __init__(self, value):
        self._value = value

    def result(self):
        return self._value


class _Inline:
    """A stand-in for a thread pool that works at once, in the calling thread."""

    map = staticmethod(map)

    @staticmethod
    def submit(fn, *args):
        return _Done(fn(*args))


def _self_intersections(positions, topo: MeshTopology, use_mathutils: bool, cell_scale: float,
                        threads: int, pool) -> IntersectionResult:  # fmt: skip
    P = np.asarray(positions, np.float64)
    faces = topo.faces.astype(np.int64)
    m = faces.shape[0]
    frame = pool.submit(_Frame, P, faces)  # beside the grid
    pairs = _mathutils_pairs(P, faces) if use_mathutils else None
    broad = "mathutils" if pairs is not None else "grid"
    if pairs is not None:
        a, b = pairs
        cuts = np.linspace(0, a.size, PARTS_PER_THREAD * threads + 1).astype(np.int64)
        jobs = [lambda i=i, j=j: (a[i:j], b[i:j]) for i, j in zip(cuts[:-1], cuts[1:], strict=True)]
    elif m < 2:
        jobs = [lambda: (np.zeros(0, np.int64), np.zeros(0, np.int64))]
    else:
        cols = topo.corner_columns
        lo = np.empty((m, 3))
        hi = np.empty((m, 3))
        for ax in range(3):
            c = np.ascontiguousarray(P[:, ax])
            c0, c1, c2 = c.take(cols[0]), c.take(cols[1]), c.take(cols[2])
            lo[:, ax] = np.minimum(np.minimum(c0, c1), c2)
            hi[:, ax] = np.maximum(np.maximum(c0, c1), c2)
        grid = grid_entries(lo, hi, cell_scale)
        parts = grid.parts(1 if threads == 1 else PARTS_PER_THREAD * threads)
        jobs = [lambda sel=sel: entry_pairs(grid, sel) for sel in parts]
    fr = frame.result()
    done = list(pool.map(lambda job: _pair_segments(fr, topo, *job()), jobs))
    seg_keys = np.concatenate([d[0] for d in done])
    seg_pts = np.concatenate([d[1] for d in done])
    seg_faces = np.concatenate([d[2] for d in done])
    chained = pool.submit(chain_segments, seg_keys)  # beside the triple points
    tp, tf, td, tc = _triple_points(fr, seg_pts, seg_faces, topo)
    curves, closed = chained.result()
    n_candidates = sum(d[3] for d in done)
    degenerate = sum(d[4] for d in done)
    return IntersectionResult(
        segments=seg_pts,
        segment_faces=seg_faces,
        curves=curves,
        curve_closed=closed,
        triple_points=tp,
        triple_faces=tf,
        triple_detections=td,
        triple_coincident=tc,
        degenerate_pairs=degenerate,
        candidate_pairs=n_candidates,
        broad_phase=broad,
    )


TRIPLE_MERGE = 0.01  # merge radius of triple-point detections, in local edge lengths
COINCIDENT = 1e-9  # detections closer than this (local edge lengths) are one point to rounding:
# the three detections of one triple point come from the same three planes and agree to about
# 1e-14 (measured on the default eversion), while distinct triple points inside the merge
# radius were never closer than 4.7e-6 there


def _triple_points(fr: _Frame, seg_pts: np.ndarray, seg_faces: np.ndarray, topo: MeshTopology):
    """Segments of sheets (a, b) crossing a triangle c of a third sheet, merged into points."""
    s = seg_pts.shape[0]
    empty = (np.zeros((0, 3)), np.zeros((0, 3), np.int64), np.zeros(0, np.int64),
             np.zeros(0, np.int64))  # fmt: skip
    if s == 0:
        return empty
    m = topo.n_faces
    # partners: triangles that intersect a given triangle (from the segment list)
    owner = np.concatenate([seg_faces[:, 0], seg_faces[:, 1]])
    other = np.concatenate([seg_faces[:, 1], seg_faces[:, 0]])
    order = np.argsort(owner, kind="stable")
    owner, other = owner[order], other[order]
    starts = np.zeros(m + 1, np.int64)
    np.cumsum(np.bincount(owner, minlength=m), out=starts[1:])
    # a third sheet's triangle c through the segment's point meets both a and b there, so
    # c is a partner of a that is also a partner of b: the partners of the one of a, b with
    # fewer, looked up among the other's
    partner_keys = np.sort(owner * m + other)
    deg = np.diff(starts)
    fewer = np.where(deg[seg_faces[:, 0]] <= deg[seg_faces[:, 1]], 0, 1)
    fa = seg_faces[np.arange(s), fewer]
    fb = seg_faces[np.arange(s), 1 - fewer]
    seg_id, local = expand_ranges(deg[fa])
    c = other[starts[fa[seg_id]] + local]
    k = fb[seg_id] * m + c
    pos = np.minimum(np.searchsorted(partner_keys, k), partner_keys.size - 1)
    pair = np.sort(seg_id[partner_keys[pos] == k] * m + c[partner_keys[pos] == k])
    seg_id, c = pair // m, pair % m
    fa, fb = seg_faces[seg_id, 0], seg_faces[seg_id, 1]
    # the third sheet must not touch the first two (a local fold is not a triple point)
    faces = fr.faces
    touch = (c == fa) | (c == fb)
    fc, ffa, ffb = faces[c], faces[fa], faces[fb]
    for i in range(3):
        for j in range(3):
            touch |= fc[:, i] == ffa[:, j]
            touch |= fc[:, i] == ffb[:, j]
    seg_id, c = seg_id[~touch], c[~touch]
    if seg_id.size == 0:
        return empty
    X, Y = seg_pts[seg_id, 0], seg_pts[seg_id, 1]
    ox = fr.plane_value(c, X)
    oy = fr.plane_value(c, Y)
    crosses = _sign(ox) != _sign(oy)
    seg_id, c, X, Y, ox, oy = (v[crosses] for v in (seg_id, c, X, Y, ox, oy))
    if seg_id.size == 0:
        return empty
    ins = fr.inside_line(c, X, Y)
    seg_id, c, X, Y, ox, oy = (v[ins] for v in (seg_id, c, X, Y, ox, oy))
    if seg_id.size == 0:
        return empty
    pts = X + (Y - X) * (ox / (ox - oy))[:, None]
    trip = np.stack([seg_faces[seg_id, 0], seg_faces[seg_id, 1], c], axis=1)
    # Merge the detections of one point. Each triple point is found once per pair of its
    # sheets (three times), from the same three planes, so the copies agree to rounding;
    # distinct triple points of a corrugated surface can be a fraction of an edge apart
    # (720 of them at mid-motion in the default eversion). So the radius is 1 % of the
    # local edge length.
    edge = np.sqrt(np.linalg.norm(fr.normal[trip[:, 2]], axis=1))
    # the same detections grouped to rounding: a merged point's largest such group says how
    # many sheets really share one point (several distinct triple points crowded inside the
    # merge radius give groups of 3)
    merged, (tight, tight_counts) = _point_groups(pts, edge * TRIPLE_MERGE, edge * COINCIDENT)
    centers, faces3, counts, group = _merge_points(pts, trip, merged)
    coincident = np.zeros(counts.size, np.int64)
    np.maximum.at(coincident, group, tight_counts[tight])
    return centers, faces3, counts, coincident


def _point_groups(pts: np.ndarray, *radii: np.ndarray) -> list[tuple[np.ndarray, np.ndarray]]:
    """Groups of points linked by distances <= either point's radius r (n,), for each of
    ``radii`` (largest first, each no larger than the one before at every point): per radius
    the group of each point (n,) int64 and each group's size (G,) int64, groups in order of
    their lowest point. Neighbours come from the grid broad phase (once, for the largest
    radius: the others' neighbours are among them) and groups from label propagation, so
    the cost grows with n, not n^2."""
    n = pts.shape[0]
    r = np.asarray(radii[0], np.float64)
    a, b = grid_candidate_pairs(pts - r[:, None], pts + r[:, None])
    dist = np.linalg.norm(pts[a] - pts[b], axis=1)
    out = []
    for rk in radii:
        rk = np.asarray(rk, np.float64)
        near = dist <= np.maximum(rk[a], rk[b])
        label = component_labels(n, a[near], b[near])
        _, group, counts = np.unique(label, return_inverse=True, return_counts=True)
        out.append((group.ravel().astype(np.int64), counts.astype(np.int64)))
    return out


def _merge_points(pts: np.ndarray, trip: np.ndarray, groups: tuple[np.ndarray, np.ndarray]):
    """Merge each group of detections (_point_groups at the merge radius) into one point.

    Returns (centres (G, 3), one face triple per point (G, 3), detections per point (G,),
    the point of each detection (n,)), in the order of each group's first detection.
    """
    n = pts.shape[0]
    group, counts = groups
    centers = np.zeros((counts.size, 3))
    np.add.at(centers, group, pts)
    centers /= counts[:, None]
    first = np.full(counts.size, n)
    np.minimum.at(first, group, np.arange(n))
    return centers, trip[first].astype(np.int64).reshape(-1, 3), counts.astype(np.int64), group
