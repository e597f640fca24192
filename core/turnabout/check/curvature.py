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

    corner0 : (3, M), coordinate c of each face's corner 0 in row c
    edges : (3, 3, M), edges[c, k] = coordinate c of edge k, from corner k to corner k+1
    normal_padded : (3, M + 1), (p1 - p0) x (p2 - p0) (of length dbl, twice the face area)
    then a column of 0.0 (the padding :class:`CornerSums` gathers); ``normal`` is (3, M)
    dbl : (M,); inv_dbl : (M,) 1 / max(dbl, TINY)
    sq_len : (3, M), squared length of edge k
    dots : (3, M), at corner k the dot product of its two edges (e_k and -e_{k+2})
    """

    corner0: np.ndarray
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
    corner0 = C[:, 0].copy()
    # (p1 - p0) x (p2 - p0) = e0 x (-e2) = e2 x e0
    Np = np.empty((3, m + 1))
    Np[:, m] = 0.0
    N = Np[:, :m]
    t = C[0, 1]  # scratch: the corners are no longer needed
    for c in range(3):
        a, b = (c + 1) % 3, (c + 2) % 3
        np.multiply(E[a, 2], E[b, 0], out=N[c])
        np.multiply(E[b, 2], E[a, 0], out=t)
        N[c] -= t
    sq = np.multiply(N, N, out=C[1])
    dbl = np.add(sq[0], sq[1])
    dbl += sq[2]
    np.sqrt(dbl, out=dbl)
    EE = np.multiply(E, E, out=C)
    L = np.add(EE[0], EE[1])
    L += EE[2]
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
    return FaceFrame(corner0, E, Np, dbl, inv, L, D)


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
    ff: FaceFrame, topo: MeshTopology, sums: CornerSums | None = None
) -> tuple[np.ndarray, np.ndarray]:
    """(|H| (V,), K (V,)) float64: absolute mean and Gaussian curvature per vertex.

    Vertices with no faces get 0. On an open mesh the values at boundary vertices are not
    meaningful (the angle defect there measures boundary turning). A collapsed face (a
    pinch) has unbounded cotangent weights: its vertices get inf, which the checks read as
    a failure, so the overflow there is expected and not reported as a numpy warning.
    sums : the topology's CornerSums, if already built.
    """
    sums = CornerSums(topo) if sums is None else sums
    with np.errstate(over="ignore", invalid="ignore", divide="ignore"):
        return _curvature_of_frame(ff, topo, sums)


def _curvature_of_frame(
    ff: FaceFrame, topo: MeshTopology, sums: CornerSums
) -> tuple[np.ndarray, np.ndarray]:
    m = ff.dbl.shape[0]
    n = topo.n_vertices
    cot = np.multiply(ff.dots, ff.inv_dbl)  # c_k: cotangent of the angle at corner k
    weight = (cot[2], cot[0], cot[1])
    # edge k (corner k -> k+1) has weight cot of the opposite corner: w0 = c2, w1 = c0,
    # w2 = c1; with g_k = w_k e_k, corner k receives g_{k+2} - g_k
    g = np.empty((3, 3, m))
    for k in range(3):
        np.multiply(ff.edges[:, k], weight[k], out=g[:, k])
    corner, slots = padded_corner_buffer(m)
    rows = sums.rows_buffer()
    lap = np.empty((3, n))
    for c in range(3):
        np.subtract(g[c, 2], g[c, 0], out=slots[0])
        np.subtract(g[c, :2], g[c, 1:], out=slots[1:])
        sums.sum_corners(corner, out=lap[c], rows=rows)
    # mixed Voronoi area: the Voronoi part for non-obtuse faces (corner k: edges k and k+2,
    # weighted by the cotangents opposite them), area/2 or area/4 in obtuse faces
    t = g[0]
    for k in range(3):
        np.multiply(ff.sq_len[k], weight[k], out=t[k])  # l_k w_k
    corner_pair_sums(t, slots)
    slots *= 0.125
    ob = np.less(ff.dots, 0.0)
    obtuse_face = np.logical_or(ob[0], ob[1])
    obtuse_face |= ob[2]
    if obtuse_face.any():
        quarter = np.multiply(0.125, ff.dbl)  # area / 4
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
