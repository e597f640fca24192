"""Local metrics of one mesh frame, per element.

:func:`frame_metrics` computes, for one frame of a fixed topology, every per-face, per-edge
and per-vertex number the checker judges: pinch (area and shape relative to the first
frame), crease (normal angle per edge and how concentrated it is), fold (agreement of face
normals around each vertex), tight bend (discrete curvature), jump (move since the previous
frame), plus the signed volume and the degree of the Gauss map. All of it is flat numpy
over component arrays: no Python loop over elements.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from .curvature import (
    TINY,
    FaceFrame,
    corner_pair_sums,
    curvature_of_frame,
    face_frame,
    padded_corner_buffer,
)
from .topology import MeshTopology
from .vertex_sums import CornerSums

_TWO_SQRT3 = 2.0 * np.sqrt(3.0)

# Floor of the neighbours' mean crease angle in the concentration ratio, degrees: an edge
# beside flat rows is compared with 1 degree, not divided by zero (docs/checker.md).
CONCENTRATION_FLOOR_DEG = 1.0
# Gauss-map degrees within this of an integer are that integer (float64 rounding of a sum of
# solid angles over up to millions of faces stays far below it)
_DEGREE_SNAP = 1e-9


@dataclass(frozen=True)
class ReferenceFrame:
    """Rest quantities of the first frame, against which pinches are measured.

    face_area : (M,) float64; face_quality : (M,) float64 in [0, 1]
    crease_neighbours : (E, 2) int64, for every edge the edge one row over on each side that
    is most parallel to it in this frame (-1 where there is none); see
    :func:`crease_neighbours`.
    """

    face_area: np.ndarray
    face_quality: np.ndarray
    inverse_area: np.ndarray  # 1 / face_area (guarded against zero)
    inverse_quality: np.ndarray
    crease_neighbours: np.ndarray
    all_crease_neighbours: bool  # every edge has a neighbour on both sides
    # the two columns of crease_neighbours as contiguous (E,) intp arrays
    crease_neighbour_columns: tuple[np.ndarray, np.ndarray]


def face_quality(ff: FaceFrame, out: np.ndarray | None = None) -> np.ndarray:
    """(M,) shape quality 2 sqrt(3) (2 area) / (sum of squared edges): 1 equilateral, 0 flat."""
    L = ff.sq_len
    den = np.add(L[0], L[1])
    den += L[2]
    np.maximum(den, TINY, out=den)
    q = np.multiply(_TWO_SQRT3, ff.dbl, out=out)
    q /= den
    return q


def _components(P: np.ndarray) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    P = np.asarray(P, np.float64)
    c = np.ascontiguousarray
    return c(P[:, 0]), c(P[:, 1]), c(P[:, 2])


def _centred(X0: np.ndarray, Y0: np.ndarray, Z0: np.ndarray, topo: MeshTopology):
    """Coordinates minus the mean of the used vertices: every metric is invariant under the
    shift, and the rounding is better (and the same however a frame is reached)."""
    if topo.all_vertices_used:
        cx, cy, cz = X0.mean(), Y0.mean(), Z0.mean()
    else:
        used = topo.used_vertices
        cx, cy, cz = X0[used].mean(), Y0[used].mean(), Z0[used].mean()
    return X0 - cx, Y0 - cy, Z0 - cz


def crease_neighbours(P0: np.ndarray, topo: MeshTopology) -> np.ndarray:
    """(E, 2) int64: per edge and side, the candidate one row over most parallel to the edge.

    P0 : (V, 3) float, the frame whose edge directions decide (the reference frame: a grid's
    rows keep their directions while it moves). The candidates are
    :attr:`MeshTopology.edge_row_candidates`, two per side; ties go to the first. -1 where a
    side has no candidate (boundary and non-manifold edges).
    """
    P = np.asarray(P0, np.float64)
    ev = topo.edges
    cand = topo.edge_row_candidates  # (E, 2, 2)
    d = P[ev[:, 1]] - P[ev[:, 0]]
    d /= np.maximum(np.linalg.norm(d, axis=1, keepdims=True), TINY)
    c = np.maximum(cand, 0)
    dc = P[ev[c, 1]] - P[ev[c, 0]]  # (E, 2, 2, 3)
    dc /= np.maximum(np.linalg.norm(dc, axis=-1, keepdims=True), TINY)
    par = np.abs(np.einsum("ei,esci->esc", d, dc))
    par = np.where(cand >= 0, par, -1.0)
    best = np.argmax(par, axis=2)  # (E, 2)
    return np.take_along_axis(cand, best[..., None], axis=2)[..., 0]


def reference_frame(P0: np.ndarray, topo: MeshTopology) -> ReferenceFrame:
    """ReferenceFrame of one frame P0 (V, 3)."""
    ff = face_frame(*_components(P0), topo)
    area, quality = 0.5 * ff.dbl, face_quality(ff)
    nb = crease_neighbours(P0, topo)
    return ReferenceFrame(
        face_area=area,
        face_quality=quality,
        inverse_area=1.0 / np.maximum(area, TINY),
        inverse_quality=1.0 / np.maximum(quality, TINY),
        crease_neighbours=nb,
        all_crease_neighbours=bool(np.all(nb >= 0)),
        crease_neighbour_columns=(
            np.ascontiguousarray(nb[:, 0], np.intp),
            np.ascontiguousarray(nb[:, 1], np.intp),
        ),
    )


@dataclass
class FrameMetrics:
    """Per-element metrics of one frame."""

    area_ratio: np.ndarray  # (M,) face area / first-frame area
    quality_ratio: np.ndarray  # (M,) shape quality / first-frame quality
    crease_deg: np.ndarray  # (E,) angle between the two face normals at each edge, degrees
    crease_concentration: np.ndarray  # (E,) crease angle / mean of its 2 row neighbours'
    fold: np.ndarray  # (V,) min over incident faces of n_face . n_vertex (1 = flat fan)
    bend_radius: np.ndarray  # (V,) 1 / max |k|, as a fraction of the frame's size
    step: np.ndarray  # (V,) move since the previous frame / local edge length
    local_length: np.ndarray  # (V,) mean length of the edges at each vertex
    signed_volume: float  # NaN on a non-orientable mesh
    degree: float  # degree of the Gauss map from vertex normals; NaN if non-orientable
    size: float  # bounding-box diagonal
    area: float


def _local_length(
    ff: FaceFrame,
    topo: MeshTopology,
    sums: CornerSums,
    corner: np.ndarray | None = None,
    rows: np.ndarray | None = None,
    root: np.ndarray | None = None,
) -> np.ndarray:
    """(V,) mean length of the edges at each vertex: over the corners' two edges (each edge
    counted from both faces). Buffers to reuse: corner (3M + 1,), rows (W, V), root (3, M)."""
    m = topo.n_faces
    if corner is None:
        corner = padded_corner_buffer(m)[0]
    root = np.sqrt(ff.sq_len, out=root)
    corner_pair_sums(root, corner[: 3 * m].reshape(3, m))
    length = sums.sum_corners(corner, rows=rows)
    length *= topo.inverse_twice_degree
    return length


def frame_metrics(
    P: np.ndarray,
    topo: MeshTopology,
    ref: ReferenceFrame,
    previous: np.ndarray | None = None,
    previous_length: np.ndarray | None = None,
    concentration_floor_deg: float = CONCENTRATION_FLOOR_DEG,
    orientable: bool = True,
    sums: CornerSums | None = None,
) -> FrameMetrics:
    """All local metrics of one frame P (V, 3).

    previous : (V, 3) the frame before (None for the first frame: its steps are 0);
    previous_length : (V,) that frame's ``local_length`` if already known.
    concentration_floor_deg : floor (degrees) for the neighbours' mean angle, so that flat
    surroundings do not divide by zero.
    orientable : False skips the volume and degree (they need an orientation).
    sums : the topology's :class:`CornerSums` (built once per animation; built for this
    call when None).

    The (M,)-sized intermediates live in few buffers, each reused once its content is
    spent (the comments say which): the memory one frame touches stays a fraction of the
    cache, which is most of the speed.
    """
    sums = CornerSums(topo) if sums is None else sums
    n, m = topo.n_vertices, topo.n_faces
    used = topo.used_vertices
    all_used = topo.all_vertices_used
    X0, Y0, Z0 = _components(P)
    if previous is not None and previous_length is None:
        # exactly as that frame's own metrics computed it
        Q = np.asarray(previous, np.float64)
        previous_length = _local_length(face_frame(*_centred(*_components(Q), topo), topo),
                                        topo, sums)  # fmt: skip
    X, Y, Z = _centred(X0, Y0, Z0, topo)
    ff = face_frame(X, Y, Z, topo)
    dbl = ff.dbl
    N = ff.normal
    area = float(0.5 * dbl.sum())
    spare = ff.corners  # (3, 3, M): free once the volume has used corner 0
    if orientable:
        # divergence theorem: sum over faces of p0 . n / 6 (a pairwise sum: the same on
        # every machine, unlike a BLAS dot product)
        p0n = np.multiply(spare[:, 0], N, out=spare[:, 1])
        vol = np.add(p0n[0], p0n[1])
        vol += p0n[2]
        volume = float(vol.sum()) / 6.0
        del vol, p0n
    else:
        volume = float("nan")

    area_ratio = np.multiply(0.5, dbl)
    area_ratio *= ref.inverse_area
    quality_ratio = face_quality(ff)
    quality_ratio *= ref.inverse_quality
    un = np.multiply(N, ff.inv_dbl)  # (3, M) unit normals

    # crease: angle between the unit normals of each edge's two faces; on a non-orientable
    # mesh an edge traversed the same way by both faces compares n with -n.
    fa, fb = topo.edge_face_columns
    ne = fa.shape[0]
    ta, tb = np.empty(ne), np.empty(ne)
    cosang = np.empty(ne)
    for c in range(3):
        un[c].take(fa, out=ta, mode="clip")
        un[c].take(fb, out=tb, mode="clip")
        if c == 0:
            np.multiply(ta, tb, out=cosang)
        else:
            ta *= tb
            cosang += ta
    if topo.has_flipped_edges:
        cosang *= topo.edge_flip_sign
    np.minimum(cosang, 1.0, out=cosang)
    np.maximum(cosang, -1.0, out=cosang)
    crease = np.arccos(cosang, out=cosang)
    crease *= 180.0 / np.pi
    if not topo.is_edge_manifold:
        crease[~topo.manifold_edges] = 0.0
    # concentration: the edge's angle over the mean angle of its neighbours one row over
    # (chosen on the reference frame), floored so that flat surroundings do not divide by 0
    if ref.all_crease_neighbours:
        nb0, nb1 = ref.crease_neighbour_columns
        side_mean = crease.take(nb0, out=ta, mode="clip")
        side_mean += crease.take(nb1, out=tb, mode="clip")
        side_mean *= 0.5
    else:
        nb = ref.crease_neighbours
        ok = nb >= 0
        vals = np.where(ok, crease[np.maximum(nb, 0)], 0.0)
        side_mean = vals.sum(axis=1) / np.maximum(ok.sum(axis=1), 1)
    np.maximum(side_mean, concentration_floor_deg, out=side_mean)
    concentration = np.divide(crease, side_mean)
    del ta, tb, side_mean

    # tight bend: 1 / (largest absolute principal curvature), relative to the frame's size
    corner = padded_corner_buffer(m)[0]  # corner values for every per-vertex sum below
    rows = sums.rows_buffer()
    h, k = curvature_of_frame(ff, topo, sums, work=spare, corner=corner, rows=rows)
    with np.errstate(invalid="ignore", over="ignore"):  # inf at collapsed faces (a pinch)
        disc = h * h
        disc -= k
        np.maximum(disc, 0.0, out=disc)
        kmax = np.sqrt(disc)
        kmax += h
    if all_used:
        size = float(np.sqrt(np.ptp(X) ** 2 + np.ptp(Y) ** 2 + np.ptp(Z) ** 2))
    else:
        size = float(np.sqrt(np.ptp(X[used]) ** 2 + np.ptp(Y[used]) ** 2 + np.ptp(Z[used]) ** 2))
    np.maximum(kmax, TINY, out=kmax)
    with np.errstate(under="ignore"):
        kmax *= max(size, TINY)
    with np.errstate(divide="ignore", under="ignore"):  # a frame collapsed to one point
        bend = np.reciprocal(kmax)
    if not all_used:
        bend[~used] = np.inf

    local_len = _local_length(ff, topo, sums, corner, rows, root=spare[0])
    if previous is None:
        step = np.zeros(n)
    else:
        Q = np.asarray(previous, np.float64)
        dx = X0 - Q[:, 0]
        dy = Y0 - Q[:, 1]
        dz = Z0 - Q[:, 2]
        dx *= dx
        dy *= dy
        dz *= dz
        dx += dy
        dx += dz
        mean_len = local_len + previous_length
        mean_len *= 0.5
        np.maximum(mean_len, TINY, out=mean_len)
        step = np.sqrt(dx)
        step /= mean_len
        if not all_used:
            step[~used] = 0.0

    # vertex normals (area weighted, fan-oriented) and fold agreement; from here on the
    # edges, squared lengths and corner dot products of ff are spent: their buffers hold
    # the corner normals (edges), corner agreement (dots) and products (sq_len)
    vn = np.empty((3, n))
    flat_fans = not topo.has_flipped_edges
    if flat_fans:
        for c in range(3):
            sums.sum_faces(ff.normal_padded[c], out=vn[c], rows=rows)
    else:
        sgn = topo.corner_fan_signs_slot_major.reshape(3, m)
        for c in range(3):
            np.multiply(sgn, N[c], out=corner[: 3 * m].reshape(3, m))
            sums.sum_corners(corner, out=vn[c], rows=rows)
    vinv = np.multiply(vn[0], vn[0])
    vinv += vn[1] * vn[1]
    vinv += vn[2] * vn[2]
    np.sqrt(vinv, out=vinv)
    np.maximum(vinv, TINY, out=vinv)
    np.divide(1.0, vinv, out=vinv)
    vn *= vinv
    cols = topo.corner_columns
    cn = ff.edges  # cn[c, k]: coordinate c of the vertex normal at corner k
    for c in range(3):
        for k in range(3):
            vn[c].take(cols[k], out=cn[c, k], mode="clip")
    corner_dot = np.multiply(cn[0], un[0], out=ff.dots)  # (3, M), slot-major
    t3 = ff.sq_len
    for c in (1, 2):
        np.multiply(cn[c], un[c], out=t3)
        corner_dot += t3
    if not flat_fans:
        corner_dot *= topo.corner_fan_signs_slot_major.reshape(3, m)
    fold = sums.min_corners(corner_dot.reshape(-1), rows=rows)

    if orientable:
        # degree: signed solid angles of the spherical triangles spanned by vertex normals
        # (Van Oosterom & Strackee, "The solid angle of a plane triangle", 1983); a, b, q
        # are the vertex normals at corners 0, 1, 2
        a, b, q = cn[:, 0], cn[:, 1], cn[:, 2]
        cross, tmp = t3, ff.inv_dbl  # b x q; inv_dbl is spent
        for c in range(3):
            i, j = (c + 1) % 3, (c + 2) % 3
            np.multiply(b[i], q[j], out=cross[c])
            np.multiply(b[j], q[i], out=tmp)
            cross[c] -= tmp
        cross *= a
        triple = np.add(cross[0], cross[1], out=dbl)  # dbl is spent
        triple += cross[2]
        pairs = spare  # pairs[c, i]: a b, b q, q a, coordinate c
        np.multiply(cn[:, :2], cn[:, 1:], out=pairs[:, :2])
        np.multiply(q, a, out=pairs[:, 2])
        dots = np.add(pairs[0], pairs[1], out=t3)  # (a.b, b.q, q.a)
        dots += pairs[2]
        den = np.add(1.0, dots[0], out=tmp)
        den += dots[1]
        den += dots[2]
        solid = np.arctan2(triple, den, out=triple)
        degree = float(2.0 * solid.sum() / (4 * np.pi))
        # an integer up to rounding (the solid angles tile the sphere a whole number of
        # times): snap float noise to it, so that a torus reports 0.0, never -0.0 or -4e-17
        nearest = round(degree)
        if abs(degree - nearest) <= _DEGREE_SNAP:
            degree = float(nearest)
        degree += 0.0  # -0.0 -> 0.0
    else:
        degree = float("nan")
    return FrameMetrics(
        area_ratio=area_ratio,
        quality_ratio=quality_ratio,
        crease_deg=crease,
        crease_concentration=concentration,
        fold=fold,
        bend_radius=bend,
        step=step,
        local_length=local_len,
        signed_volume=volume,
        degree=degree,
        size=size,
        area=area,
    )


def signed_volume(positions, faces) -> float:
    """Signed enclosed volume of one closed mesh: positive for outward orientation.

    positions : (V, 3) float; faces : (M, 3) int. Sum over faces of p0 . (p1 x p2) / 6
    (divergence theorem), after centring for rounding.
    """
    p = np.asarray(positions, np.float64)
    f = np.asarray(faces, np.int64)
    p = p - p[np.unique(f)].mean(axis=0)
    a, b, c = p[f[:, 0]], p[f[:, 1]], p[f[:, 2]]
    return float(np.einsum("mi,mi->", a, np.cross(b, c)) / 6.0)


def gauss_map_degree(positions, faces) -> float:
    """Degree of the Gauss map of one closed oriented mesh from area-weighted vertex normals.

    The vertex normals span a spherical triangle per face; the signed solid angles sum to
    4 pi times the degree (an integer unless neighbouring normals are nearly opposite).
    Hopf: the degree is half the Euler characteristic for an immersed closed oriented
    surface (H. Hopf, "Über die Curvatura integra geschlossener Hyperflächen", Math. Ann. 1926).
    """
    P = np.asarray(positions, np.float64)
    topo = faces if isinstance(faces, MeshTopology) else MeshTopology(faces, P.shape[0])
    return frame_metrics(P, topo, reference_frame(P, topo)).degree
