"""Discrete curvature of triangle meshes.

Mean curvature from the cotangent Laplacian and Gaussian curvature from the angle defect,
both divided by the mixed Voronoi area of each vertex (Meyer, Desbrun, Schröder, Barr,
"Discrete Differential-Geometry Operators for Triangulated 2-Manifolds", 2003). The
absolute principal curvatures follow as |H| +- sqrt(max(H^2 - K, 0)).

The per-face quantities are kept stacked by coordinate, (3, M) and (3, 3, M) arrays of one
frame, which is what makes the per-frame checks fast: every step is a flat, contiguous numpy
operation, and the per-vertex sums are gathers through the corner tables of
:class:`~turnabout.check.vertex_sums.CornerSums`.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from .topology import MeshTopology
from .vertex_sums import CornerSums

TINY = np.finfo(np.float64).tiny


@dataclass
class FaceFrame:
    """Per-face geometry of one frame, stacked by coordinate; M faces, float64.

    corners : (3, 3, M), corners[c, 0] = coordinate c of each face's corner 0; the rows of
    corners 1 and 2 are scratch (overwritten): once corner 0 is used, the whole buffer is
    free for the caller's own intermediates (the per-frame working set stays small)
    edges : (3, 3, M), edges[c, k] = coordinate c of edge k, from corner k to corner k+1
    normal_padded : (3, M + 1), (p1 - p0) x (p2 - p0) (of length dbl, twice the face area)
    then a column of 0.0 (the padding :class:`CornerSums` gathers); ``normal`` is (3, M)
    dbl : (M,); inv_dbl : (M,) 1 / max(dbl, TINY)
    sq_len : (3, M), squared length of edge k
    dots : (3, M), at corner k the dot product of its two edges (e_k and -e_{k+2})
    """

    corners: np.ndarray
    edges: np.ndarray
    normal_padded: np.ndarray
    dbl: np.ndarray
    inv_dbl: np.ndarray
    sq_len: np.ndarray
    dots: np.ndarray

    @property
    def normal(self) -> np.ndarray:
        return self.normal_padded[:, :-1]


def face_frame(X: np.ndarray, Y: np.ndarray, Z: np.ndarray, topo: MeshTopology) -> FaceFrame:
    """FaceFrame from vertex coordinates X, Y, Z (each (V,) float64)."""
    m = topo.n_faces
    cols = topo.corner_columns  # validated indices: "clip" never clips, and is faster
    C = np.empty((3, 3, m))
    for c, coord in enumerate((X, Y, Z)):
        for k in range(3):
            coord.take(cols[k], out=C[c, k], mode="clip")
    E = np.empty((3, 3, m))
    np.subtract(C[:, 1:], C[:, :2], out=E[:, :2])  # e0 = p1 - p0, e1 = p2 - p1
    np.subtract(C[:, 0], C[:, 2], out=E[:, 2])  # e2 = p0 - p2
    # from here on corners 1 and 2 are scratch
    t, T = C[0, 1], C[:, 2]  # (M,), (3, M)
    # (p1 - p0) x (p2 - p0) = e0 x (-e2) = e2 x e0
    Np = np.empty((3, m + 1))
    Np[:, m] = 0.0
    N = Np[:, :m]
    for c in range(3):
        a, b = (c + 1) % 3, (c + 2) % 3
        np.multiply(E[a, 2], E[b, 0], out=N[c])
        np.multiply(E[b, 2], E[a, 0], out=t)
        N[c] -= t
    np.multiply(N, N, out=T)
    dbl = np.add(T[0], T[1])
    dbl += T[2]
    np.sqrt(dbl, out=dbl)
    L = np.multiply(E[0], E[0])  # squared edge lengths, x + y + z
    for c in (1, 2):
        np.multiply(E[c], E[c], out=T)
        L += T
    # law of cosines: at corner k the edges are e_k and -e_{k+2}, the opposite edge e_{k+1}:
    # d_k = (l_k + l_{k+2} - l_{k+1}) / 2
    D = np.empty((3, m))
    np.add(L[0], L[2], out=D[0])
    np.add(L[1:], L[:2], out=D[1:])
    np.subtract(D[:2], L[1:], out=D[:2])
    D[2] -= L[0]
    D *= 0.5
    inv = np.maximum(dbl, TINY)
    np.divide(1.0, inv, out=inv)
    return FaceFrame(C, E, Np, dbl, inv, L, D)


def corner_pair_sums(T: np.ndarray, out: np.ndarray) -> np.ndarray:
    """out (3, M) = per corner k the sum T_k + T_{k+2} of two rows of T (3, M): the rows of
    the two edges at corner k (edges k and k+2)."""
    np.add(T[0], T[2], out=out[0])
    np.add(T[1:], T[:2], out=out[1:])
    return out


def padded_corner_buffer(m: int) -> tuple[np.ndarray, np.ndarray]:
    """(3M + 1,) float64 ending in the 0.0 padding of :class:`CornerSums`, and its (3, M)
    view of the slot-major corner values (row k: corner k of every face)."""
    buf = np.empty(3 * m + 1)
    buf[3 * m] = 0.0
    return buf, buf[: 3 * m].reshape(3, m)


def curvature_of_frame(
    ff: FaceFrame,
    topo: MeshTopology,
    sums: CornerSums | None = None,
    work: np.ndarray | None = None,
    corner: np.ndarray | None = None,
    rows: np.ndarray | None = None,
) -> tuple[np.ndarray, np.ndarray]:
    """(|H| (V,), K (V,)) float64: absolute mean and Gaussian curvature per vertex.

    Vertices with no faces get 0. On an open mesh the values at boundary vertices are not
    meaningful (the angle defect there measures boundary turning). A collapsed face (a
    pinch) has unbounded cotangent weights: its vertices get inf, which the checks read as
    a failure, so the overflow there is expected and not reported as a numpy warning.
    sums : the topology's CornerSums, if already built. Buffers to reuse, overwritten:
    work (2+, 3, M), corner (3M + 1,) from :func:`padded_corner_buffer`, rows (W, V).
    """
    sums = CornerSums(topo) if sums is None else sums
    with np.errstate(over="ignore", invalid="ignore", divide="ignore"):
        return _curvature_of_frame(ff, topo, sums, work, corner, rows)


def _curvature_of_frame(
    ff: FaceFrame,
    topo: MeshTopology,
    sums: CornerSums,
    work: np.ndarray | None,
    corner: np.ndarray | None,
    rows: np.ndarray | None,
) -> tuple[np.ndarray, np.ndarray]:
    m = ff.dbl.shape[0]
    n = topo.n_vertices
    # edge k (corner k -> k+1) has weight w_k = cot of the opposite corner k+2, where
    # cot_k = d_k / dbl: w0 = c2, w1 = c0, w2 = c1; with g_k = w_k e_k, corner k receives
    # g_{k+2} - g_k
    w = np.empty((3, m)) if work is None else work[0]
    for k in range(3):
        np.multiply(ff.dots[(k + 2) % 3], ff.inv_dbl, out=w[k])
    g = np.empty((3, m)) if work is None else work[1]  # one coordinate at a time
    if corner is None:
        corner, slots = padded_corner_buffer(m)
    else:
        slots = corner[: 3 * m].reshape(3, m)
    rows = sums.rows_buffer() if rows is None else rows
    lap = np.empty((3, n))
    for c in range(3):
        np.multiply(ff.edges[c], w, out=g)
        np.subtract(g[2], g[0], out=slots[0])
        np.subtract(g[:2], g[1:], out=slots[1:])
        sums.sum_corners(corner, out=lap[c], rows=rows)
    # mixed Voronoi area: the Voronoi part for non-obtuse faces (corner k: edges k and k+2,
    # weighted by the cotangents opposite them), area/2 or area/4 in obtuse faces
    t = np.multiply(ff.sq_len, w, out=g)  # l_k w_k
    corner_pair_sums(t, slots)
    slots *= 0.125
    ob = np.less(ff.dots, 0.0)
    obtuse_face = np.logical_or(ob[0], ob[1])
    obtuse_face |= ob[2]
    if obtuse_face.any():
        quarter = np.multiply(0.125, ff.dbl, out=g[0])  # area / 4
        np.copyto(slots, quarter, where=obtuse_face)
        quarter *= 2.0  # area / 2 at the obtuse corner itself
        np.copyto(slots, quarter, where=ob)
    amix = sums.sum_corners(corner, rows=rows)
    np.arctan2(ff.dbl, ff.dots, out=slots)
    angle_sum = sums.sum_corners(corner, rows=rows)
    np.maximum(amix, TINY, out=amix)  # a_safe
    lap *= lap
    mean_abs = np.add(lap[0], lap[1])
    mean_abs += lap[2]
    np.sqrt(mean_abs, out=mean_abs)
    mean_abs /= 4.0 * amix
    gauss = np.subtract(2 * np.pi, angle_sum, out=angle_sum)
    gauss /= amix
    if not topo.all_vertices_used:
        unused = ~topo.used_vertices
        mean_abs[unused] = 0.0
        gauss[unused] = 0.0
    return mean_abs, gauss


def _single(positions, faces) -> tuple[FaceFrame, MeshTopology]:
    P = np.asarray(positions, np.float64)
    if P.ndim != 2 or P.shape[1] != 3:
        raise ValueError(f"positions must be (V, 3), got {P.shape}")
    topo = faces if isinstance(faces, MeshTopology) else MeshTopology(faces, P.shape[0])
    X, Y, Z = (np.ascontiguousarray(P[:, j]) for j in range(3))
    return face_frame(X, Y, Z, topo), topo


def mean_and_gaussian_curvature(positions, faces) -> tuple[np.ndarray, np.ndarray]:
    """(|H| (V,), K (V,)) float64 of one mesh: positions (V, 3), faces (M, 3) int."""
    ff, topo = _single(positions, faces)
    return curvature_of_frame(ff, topo)


def principal_curvatures(positions, faces) -> tuple[np.ndarray, np.ndarray]:
    """Absolute principal curvatures (k_max (V,), k_min (V,)) float64 of one mesh.

    k_max = |H| + sqrt(max(H^2 - K, 0)), k_min = | |H| - sqrt(max(H^2 - K, 0)) |.
    """
    h, k = mean_and_gaussian_curvature(positions, faces)
    with np.errstate(invalid="ignore", over="ignore"):  # inf at collapsed faces (a pinch)
        root = np.sqrt(np.maximum(h * h - k, 0.0))
        return h + root, np.abs(h - root)
