"""Quadruple points of a mesh animation: moments where four sheets pass through one point.

Between frames k and k + 1 every vertex moves on a straight line, x(s) = (1 - s) P_k + s
P_k+1 for s in [0, 1]. A triangle's plane is then n(s) . x = n(s) . p0(s) with the normal
n(s) = (p1 - p0) x (p2 - p0) quadratic in s and the offset n(s) . p0(s) cubic. Four planes
have a common point exactly when

    D(s) = det [ n_i(s)  -n_i(s) . p0_i(s) ]  (i = 1..4, a 4 x 4 matrix)

vanishes, a polynomial of degree at most 3 * 2 + 3 = 9 in s. (Equivalently: the point where
three of the planes meet is x(s) = N(s) / det[n_1, n_2, n_3] by Cramer's rule, a rational
function of s, and the fourth plane's value along it is D(s) / det[n_1, n_2, n_3].) D is
sampled at ten Chebyshev nodes, which fixes it exactly; its real roots in [0, 1] are
bracketed on a fine grid and refined by bisection; each root's common point is kept when
it lies inside all four moving triangles.

Candidates (quadruple_candidates.py): every quadruple of triangles, no two sharing a vertex,
that pairwise may meet while moving (no axis separates them on one side at both ends of the
interval) and whose boxes of end positions share a point. This is every quadruple that can
hold a quadruple point, so the count does not depend on where triple points happen to be
seen: a triple point born and gone between two frames still meets its fourth sheet.

Confirmation (the change in the triple points' structure): just before and just after the
moment, the four triple points of the four sheets taken three at a time span a small
tetrahedron; at a transverse quadruple point it collapses to the point and comes back
mirrored, so its orientation (the sign of its volume) flips. Detections that do not flip
are reported as unconfirmed.

General position: Max and Banchoff ("Every sphere eversion has a quadruple point", in
Contributions to Analysis and Geometry, Johns Hopkins University Press, 1981) prove that a
sphere eversion in general position has an odd number of quadruple points. A symmetric
motion is not in general position: several quadruple points at one moment (copies under
the symmetry: moments equal to rounding, COPY_MOMENT), more than four sheets through one
point, four planes that keep a common point for a whole interval, or four sheets through one
point at a frame (triple-point detections of four or more sheets that agree to rounding,
intersections.COINCIDENT) with no quadruple point detected next to it. These are reported
in ``notes`` and ``general_position`` is False, so a count is never read as a parity it
cannot carry. Distinct triple points that merely lie within the triple-point merge radius
of each other at a frame (1 % of an edge) are not four sheets through one point: whether
their sheets meet between frames is what the interval solve decides.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from ..progress import ProgressFn, no_progress
from .quadruple_candidates import swept_graph, swept_quadruples
from .topology import MeshTopology, as_triangles

DEGREE = 9  # degree of D(s)
CHUNK = 20000  # quadruples solved at once (memory: about 10 kB each)
ROOT_GRID = 256  # samples of D(s) on [0, 1] used to bracket its roots
SAME_MOMENT = 1e-7  # detections closer than this in s (and in space) are one point
COPY_MOMENT = 1e-10  # distinct points closer than this in s (frames) share their moment: the
# copies of a symmetric motion agree to about 1e-14 (measured on the symmetric default
# eversion), while the densest bursts of a generic one (about 2,000 points in a tenth of a
# frame) put two of them within 1e-10 with a chance of about 1 in 250
SAME_PLACE = 1e-4  # ... in space, as a fraction of the mean edge length
EXPLAINED = 0.1  # a frame's four-sheet point this close to a quadruple point (in local
# edge lengths, within a frame of its moment) is that quadruple point seen at the frame
_TINY = 1e-300
INSIDE_TOL = 1e-9  # barycentric tolerance of the inside test (a point on a shared edge
# is found in both triangles and merged)


@dataclass
class QuadruplePoints:
    """Quadruple points of an animation.

    interval : (Q,) int64 frame k of the interval [k, k + 1] holding each point
    time : (Q,) float64 the moment, in frames (k + s)
    position : (Q, 3) float64 where the four sheets meet
    faces : (Q, 4) int64 one triangle of each of the four sheets
    confirmed : (Q,) bool the triple points' tetrahedron turns inside out across the moment
    general_position : False when the motion is visibly not generic (see notes)
    notes : human-readable reasons
    candidates : quadruples of triangles tested (all intervals)
    """

    interval: np.ndarray
    time: np.ndarray
    position: np.ndarray
    faces: np.ndarray
    confirmed: np.ndarray
    general_position: bool = True
    notes: list[str] = field(default_factory=list)
    candidates: int = 0

    @property
    def count(self) -> int:
        return int(self.time.size)

    def to_json(self) -> dict:
        """A JSON-ready dict (lists of plain numbers)."""
        return {
            "count": self.count,
            "general_position": bool(self.general_position),
            "notes": list(self.notes),
            "points": [
                {
                    "frames": [int(k), int(k) + 1],
                    "time": round(float(t), 9),
                    "position": [round(float(v), 9) for v in p],
                    "faces": [int(f) for f in fs],
                    "confirmed": bool(c),
                }
                for k, t, p, fs, c in zip(
                    self.interval,
                    self.time,
                    self.position,
                    self.faces,
                    self.confirmed,
                    strict=True,
                )
            ],
        }


# --------------------------------------------------------------------------- D(s)


def _chebyshev_nodes(n: int) -> np.ndarray:
    return 0.5 - 0.5 * np.cos(np.pi * (np.arange(n) + 0.5) / n)


_NODES = _chebyshev_nodes(DEGREE + 1)
_CHEB_AT_NODES = np.polynomial.chebyshev.chebvander(2 * _NODES - 1, DEGREE)
_FROM_NODES = np.linalg.inv(_CHEB_AT_NODES)
_GRID = np.linspace(0.0, 1.0, ROOT_GRID + 1)
_CHEB_AT_GRID = np.polynomial.chebyshev.chebvander(2 * _GRID - 1, DEGREE)


def _planes(C0: np.ndarray, C1: np.ndarray, s: np.ndarray) -> np.ndarray:
    """Rows [n, -n . p0] of moving triangles: C0, C1 (..., 3, 3) corners at the ends, s
    broadcastable to (...). Returns (..., 4) float64."""
    s = np.asarray(s, np.float64)[..., None, None]
    C = C0 + (C1 - C0) * s
    n = np.cross(C[..., 1, :] - C[..., 0, :], C[..., 2, :] - C[..., 0, :])
    return np.concatenate([n, -np.sum(n * C[..., 0, :], axis=-1, keepdims=True)], axis=-1)


def _det_at(C0: np.ndarray, C1: np.ndarray, s: np.ndarray) -> np.ndarray:
    """D(s) of quadruples: C0, C1 (Q, 4, 3, 3); s (Q, k) -> (Q, k) float64."""
    rows = _planes(C0[:, None], C1[:, None], s[:, :, None])  # (Q, k, 4, 4)
    return np.linalg.det(rows)


def _roots(coef: np.ndarray, scale: np.ndarray):
    """Simple real roots in [0, 1] of Chebyshev series coef (Q, 10) (in x = 2 s - 1).

    Returns (quad index, s) for every sign change on the grid, refined by bisection, and a
    (Q,) bool mask of series that vanish identically (relative to ``scale``)."""
    flat = np.abs(coef).max(axis=1) <= 1e-12 * scale
    vals = coef @ _CHEB_AT_GRID.T  # (Q, G + 1)
    sg = np.sign(vals)
    q, g = np.nonzero((sg[:, :-1] * sg[:, 1:] < 0) | ((sg[:, :-1] == 0) & (sg[:, 1:] != 0)))
    keep = ~flat[q]
    q, g = q[keep], g[keep]
    lo, hi = _GRID[g].copy(), _GRID[g + 1].copy()
    c = coef[q]
    f_lo = np.polynomial.chebyshev.chebval(2 * lo - 1, c.T, tensor=False)
    for _ in range(52):
        mid = 0.5 * (lo + hi)
        f_mid = np.polynomial.chebyshev.chebval(2 * mid - 1, c.T, tensor=False)
        left = np.sign(f_mid) * np.sign(f_lo) <= 0
        hi = np.where(left, mid, hi)
        lo = np.where(left, lo, mid)
        f_lo = np.where(left, f_lo, f_mid)
    return q, 0.5 * (lo + hi), flat


def _common_point(rows: np.ndarray) -> np.ndarray:
    """Least-squares point of planes rows (Q, k, 4) (n . x + d = 0): (Q, 3)."""
    A, d = rows[..., :3], -rows[..., 3]
    size = np.maximum(np.linalg.norm(A, axis=-1), 1e-300)
    An = A / size[..., None]
    dn = d / size
    AtA = np.einsum("qki,qkj->qij", An, An)
    Atb = np.einsum("qki,qk->qi", An, dn)
    x = np.full((A.shape[0], 3), np.nan)
    ok = np.abs(np.linalg.det(AtA)) > 1e-12
    if ok.any():
        x[ok] = np.linalg.solve(AtA[ok], Atb[ok][..., None])[..., 0]
    return x


def _inside(C: np.ndarray, x: np.ndarray, tol: float = INSIDE_TOL) -> np.ndarray:
    """Is x (Q, 3) inside (the prism over) each triangle C (Q, 4, 3, 3)?  (Q,) bool."""
    n = np.cross(C[..., 1, :] - C[..., 0, :], C[..., 2, :] - C[..., 0, :])  # (Q, 4, 3)
    nn = np.sum(n * n, axis=-1)
    ok = np.ones(x.shape[0], bool)
    for k in range(3):
        u = C[..., (k + 1) % 3, :] - x[:, None]
        v = C[..., (k + 2) % 3, :] - x[:, None]
        w = np.sum(np.cross(u, v) * n, axis=-1)
        ok &= np.all(w >= -tol * nn, axis=1)
    return ok


def _tetra_sign(C0, C1, s) -> np.ndarray:
    """Orientation of the four triple points (three planes at a time) at s: (Q,) sign."""
    rows = _planes(C0, C1, s[:, None])  # (Q, 4, 4)
    pts = []
    for skip in range(4):
        sub = np.delete(rows, skip, axis=1)
        M = sub[..., :3]
        p = np.zeros((M.shape[0], 3))
        ok = np.abs(np.linalg.det(M)) > 0
        if ok.any():
            p[ok] = np.linalg.solve(M[ok], -sub[ok][..., 3:])[..., 0]
        pts.append(p)
    e1, e2, e3 = pts[1] - pts[0], pts[2] - pts[0], pts[3] - pts[0]
    return np.sign(np.sum(np.cross(e1, e2) * e3, axis=-1))


# --------------------------------------------------------------------------- per interval


def quadruple_points_between(P0: np.ndarray, P1: np.ndarray, topo: MeshTopology):
    """Quadruple points while the vertices move linearly from P0 to P1 ((V, 3) float).

    Returns unmerged detections (s (N,), position (N, 3), faces (N, 4), confirmed (N,)),
    the count of quadruples whose four planes keep a common point for the whole interval
    and the count of candidates (quadruple_candidates.swept_quadruples).
    """
    P0 = np.asarray(P0, np.float64)
    P1 = np.asarray(P1, np.float64)
    return _solve_chunked(P0, P1, topo, swept_quadruples(swept_graph(P0, P1, topo)))


def _solve_chunked(P0, P1, topo: MeshTopology, quads: np.ndarray):
    empty = (np.zeros(0), np.zeros((0, 3)), np.zeros((0, 4), np.int64), np.zeros(0, bool))
    if quads.shape[0] == 0:
        return (*empty, 0, 0)
    out = [quadruple_points_between_quads(P0, P1, topo, quads[i : i + CHUNK])
           for i in range(0, quads.shape[0], CHUNK)]  # fmt: skip
    return (np.concatenate([o[0] for o in out]), np.concatenate([o[1] for o in out]),
            np.concatenate([o[2] for o in out]), np.concatenate([o[3] for o in out]),
            sum(o[4] for o in out), int(quads.shape[0]))  # fmt: skip


def quadruple_points_between_quads(P0, P1, topo: MeshTopology, quads: np.ndarray):
    """quadruple_points_between for given candidate quadruples (Q, 4) int64."""
    empty = (np.zeros(0), np.zeros((0, 3)), np.zeros((0, 4), np.int64), np.zeros(0, bool))
    if quads.shape[0] == 0:
        return (*empty, 0, 0)
    faces = topo.faces
    C0, C1 = P0[faces[quads]], P1[faces[quads]]  # (Q, 4, 3, 3)
    vals = _det_at(C0, C1, np.broadcast_to(_NODES, (quads.shape[0], _NODES.size)))
    coef = vals @ _FROM_NODES.T
    # scale of D: product of the four rows' sizes, at the nodes
    rows = _planes(C0[:, None], C1[:, None], _NODES[None, :, None])
    scale = np.prod(np.linalg.norm(rows, axis=-1), axis=-1).max(axis=1)
    q, s, flat = _roots(coef, scale)
    if q.size == 0:
        return (*empty, int(flat.sum()), int(quads.shape[0]))
    Cs = C0[q] + (C1[q] - C0[q]) * s[:, None, None, None]
    x = _common_point(_planes(C0[q], C1[q], s[:, None]))
    ok = np.all(np.isfinite(x), axis=1)
    ok[ok] = _inside(Cs[ok], x[ok])
    q, s, x = q[ok], s[ok], x[ok]
    delta = np.full(s.size, 1e-4)
    confirmed = _tetra_sign(C0[q], C1[q], np.clip(s - delta, 0, 1)) != _tetra_sign(
        C0[q], C1[q], np.clip(s + delta, 0, 1)
    )
    return s, x, quads[q], confirmed, int(flat.sum()), int(quads.shape[0])


def _merge(interval, s, x, fq, confirmed, length: float):
    """One detection per point: same interval, |ds| < SAME_MOMENT, |dx| < SAME_PLACE * length.

    Returns the kept indices (ordered by interval, then s) and, per kept point, the set of
    distinct faces of its group; ``confirmed`` is or-ed over each group in place."""
    order = np.lexsort((s, interval)).tolist()
    keep: list[int] = []
    groups: list[set[int]] = []
    for i in order:
        g = len(keep) - 1
        while g >= 0 and interval[keep[g]] == interval[i] and s[i] - s[keep[g]] < SAME_MOMENT:
            j = keep[g]
            if np.linalg.norm(x[j] - x[i]) < SAME_PLACE * length:
                groups[g].update(fq[i].tolist())
                confirmed[j] |= confirmed[i]
                break
            g -= 1
        else:
            keep.append(i)
            groups.append(set(fq[i].tolist()))
    return np.array(keep, np.int64), groups


def _sheet_count(face_ids: set[int], faces: np.ndarray) -> int:
    """Sheets among triangles: groups of triangles linked by shared vertices."""
    ids = sorted(face_ids)
    parent = list(range(len(ids)))

    def root(i):
        while parent[i] != i:
            parent[i] = parent[parent[i]]
            i = parent[i]
        return i

    for i in range(len(ids)):
        for j in range(i + 1, len(ids)):
            if set(faces[ids[i]].tolist()) & set(faces[ids[j]].tolist()):
                parent[root(i)] = root(j)
    return len({root(i) for i in range(len(ids))})


def _intervals(P: np.ndarray, topo: MeshTopology, start: int, stop: int, progress=None):
    """Detections of the intervals start .. stop - 1: a list of (k, s, x, faces, confirmed)
    plus the flat and candidate counts."""
    parts, flat_total, cand_total = [], 0, 0
    for k in range(start, stop):
        s, x, fq, conf, flat, cand = quadruple_points_between(P[k], P[k + 1], topo)
        flat_total += flat
        cand_total += cand
        parts.append((np.full(s.size, k), s, x, fq, conf))
        if progress is not None:
            progress(k - start + 1)
    return parts, flat_total, cand_total


_POOL_JOB: tuple | None = None  # (P, topo) in forked workers


def _pool_init(job) -> None:
    global _POOL_JOB
    _POOL_JOB = job


def _pool_range(start: int, stop: int):
    P, topo = _POOL_JOB
    return _intervals(P, topo, start, stop)


def _run_intervals(P, topo: MeshTopology, workers: int, progress: ProgressFn):
    """Every interval's detections, in interval order, on ``workers`` forked processes."""
    import multiprocessing as mp
    from concurrent.futures import ProcessPoolExecutor, as_completed

    n_int = P.shape[0] - 1
    if workers == 1 or n_int < 2 or "fork" not in mp.get_all_start_methods():
        return _intervals(P, topo, 0, n_int, lambda done: progress(done, n_int))
    # small chunks: the costly intervals (mid-motion) sit together
    chunk = max(1, -(-n_int // (16 * workers)))
    bounds = [(a, min(a + chunk, n_int)) for a in range(0, n_int, chunk)]
    results, done = {}, 0
    with ProcessPoolExecutor(
        max_workers=workers, mp_context=mp.get_context("fork"),
        initializer=_pool_init, initargs=((P, topo),),
    ) as pool:  # fmt: skip
        futures = {pool.submit(_pool_range, a, b): (a, b) for a, b in bounds}
        try:
            for fut in as_completed(futures):
                a, b = futures[fut]
                results[a] = fut.result()
                done += b - a
                progress(done, n_int)
        except BaseException:
            pool.shutdown(wait=True, cancel_futures=True)
            raise
    ordered = [results[a] for a in sorted(results)]
    return ([p for r in ordered for p in r[0]], sum(r[1] for r in ordered),
            sum(r[2] for r in ordered))  # fmt: skip


def _crowded_points(P, topo: MeshTopology, frame_intersections: dict):
    """(frame, position, edge length) of each point where a frame's triple-point detections
    agree to rounding in a number only four or more sheets explain. Distinct triple points
    that the merge radius gathered (the four triple points of four sheets shortly before or
    after their quadruple point, or passing near each other without one) are not that: at
    a frame they are apart, and whether the four sheets meet between frames is what the
    interval solve decides."""
    from .animation import sheets_meeting

    out: list[tuple[int, np.ndarray, float]] = []
    for k in sorted(frame_intersections):
        res = frame_intersections[k]
        if res is None or not res.triple_detections.size:
            continue
        same = res.triple_detections if res.triple_coincident is None else (
            res.triple_coincident)  # fmt: skip
        where = np.flatnonzero(sheets_meeting(same) >= 4)
        f0 = topo.faces[res.triple_faces[where, 0]]
        size = np.linalg.norm(P[k][f0[:, 1]] - P[k][f0[:, 0]], axis=1)
        out += [(k, res.triple_points[i], size[j]) for j, i in enumerate(where)]
    return out


def quadruple_points(
    positions,
    faces,
    progress: ProgressFn | None = None,
    frame_intersections: dict | None = None,
    workers: int = 1,
) -> QuadruplePoints:
    """Quadruple points of an animation of a fixed triangle mesh.

    positions : (F, V, 3) float32/float64 (F >= 2); faces : (M, 3) int;
    frame_intersections : optional {frame: IntersectionResult} already computed for these
    positions, used only to notice four sheets through one point at a frame (a note on
    general position); the points themselves come from every candidate quadruple of every
    interval (quadruple_candidates.py). workers : intervals are solved in that many forked
    processes (POSIX; otherwise in this one), with the same result. progress(done, total)
    is called as intervals finish. Moments are in frames (k + s).
    """
    if isinstance(workers, bool) or not isinstance(workers, int | np.integer) or workers < 1:
        raise ValueError(f"workers must be an integer >= 1, got {workers!r}")
    progress = no_progress if progress is None else progress
    P = np.asarray(positions, np.float64)
    if P.ndim != 3 or P.shape[0] < 2 or P.shape[2] != 3:
        raise ValueError(f"positions must be (frames >= 2, V, 3), got {P.shape}")
    tri = as_triangles(np.asarray(faces), P.shape[1])
    topo = MeshTopology(tri, P.shape[1])
    crowded_points = _crowded_points(P, topo, frame_intersections or {})
    parts, flat_total, cand_total = _run_intervals(P, topo, int(workers), progress)
    if not parts:
        parts = [(np.zeros(0), np.zeros(0), np.zeros((0, 3)), np.zeros((0, 4)), np.zeros(0))]
    interval = np.concatenate([p[0] for p in parts]).astype(np.int64)
    s = np.concatenate([p[1] for p in parts])
    x = np.concatenate([p[2] for p in parts]).reshape(-1, 3)
    fq = np.concatenate([p[3] for p in parts]).reshape(-1, 4).astype(np.int64)
    conf = np.concatenate([p[4] for p in parts]).astype(bool)
    e = P[0][topo.edges[:, 1]] - P[0][topo.edges[:, 0]]
    length = float(np.linalg.norm(e, axis=1).mean()) if e.size else 1.0
    keep, groups = _merge(interval, s, x, fq, conf, length)
    notes: list[str] = []
    crowded = [g for g in groups if _sheet_count(g, topo.faces) > 4]
    if crowded:
        most = max(_sheet_count(g, topo.faces) for g in crowded)
        notes.append(
            f"{len(crowded)} point(s) where more than four sheets meet (up to {most}): "
            "the motion is not in general position"
        )
    it, sk = interval[keep], s[keep]
    same_moment = 0
    if keep.size > 1:
        o = np.lexsort((sk, it))
        close = (np.diff(it[o]) == 0) & (np.diff(sk[o]) < COPY_MOMENT)
        same_moment = int(close.sum())
    if same_moment:
        notes.append(
            f"{same_moment + 1 if same_moment == 1 else same_moment} quadruple point(s) share "
            "their moment with another one elsewhere (symmetric copies): the motion is not in "
            "general position"
        )
    # four triple points within the merge radius at a frame are expected when the frame lies
    # within a small fraction of a frame of a quadruple point (the four shrink to it): only
    # those no detected quadruple point explains say the motion is not generic
    when = it + sk
    unexplained = [
        k
        for k, pos, size in crowded_points
        if not np.any(
            (np.abs(when - k) <= 1.0)
            & (np.linalg.norm(x[keep] - pos, axis=1) <= EXPLAINED * max(size, _TINY))
        )
    ]
    crowded_frames = len(set(unexplained))
    if crowded_frames:
        notes.append(
            f"{crowded_frames} frame(s) with points where four or more sheets meet "
            "(coincident triple points): the motion is not in general position"
        )
    if flat_total:
        notes.append(
            f"{flat_total} quadruple(s) of triangles whose planes keep a common point for a "
            "whole interval: the motion is not in general position"
        )
    return QuadruplePoints(
        interval=it,
        time=it + sk,
        position=x[keep],
        faces=fq[keep],
        confirmed=conf[keep],
        general_position=not notes,
        notes=notes,
        candidates=cand_total,
    )
