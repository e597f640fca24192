"""Discrete curvature of triangle meshes.

Mean curvature from the cotangent Laplacian and Gaussian curvature from the angle defect,
both divided by the mixed Voronoi area of each vertex (Meyer, Desbrun, Schröder, Barr,
"Discrete Differential-Geometry Operators for Triangulated 2-Manifolds", 2003). The
absolute principal curvatures follow as |H| +- sqrt(max(H^2 - K, 0)).

The per-face quantities are kept as separate x / y / z arrays (one frame at a time), which
is what makes the per-frame checks fast: every step is a flat, contiguous numpy operation.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from .topology import MeshTopology

TINY = np.finfo(np.float64).tiny


@dataclass
class FaceFrame:
    """Per-face geometry of one frame, component-wise; every array is (M,) float64.

    e{k}{x,y,z} : edge k, from corner k to corner k+1
    n{x,y,z} : (p1 - p0) x (p2 - p0), of length dbl (twice the face area)
    l{k} : squared length of edge k; d{k} : at corner k, the dot product of its two edges
    x0, y0, z0 : corner 0
    """

    e0x: np.ndarray
    e0y: np.ndarray
    e0z: np.ndarray
    e1x: np.ndarray
    e1y: np.ndarray
    e1z: np.ndarray
    e2x: np.ndarray
    e2y: np.ndarray
    e2z: np.ndarray
    nx: np.ndarray
    ny: np.ndarray
    nz: np.ndarray
    dbl: np.ndarray
    l0: np.ndarray
    l1: np.ndarray
    l2: np.ndarray
    d0: np.ndarray
    d1: np.ndarray
    d2: np.ndarray
    x0: np.ndarray
    y0: np.ndarray
    z0: np.ndarray


def face_frame(X: np.ndarray, Y: np.ndarray, Z: np.ndarray, topo: MeshTopology) -> FaceFrame:
    """FaceFrame from vertex coordinates X, Y, Z (each (V,) float64)."""
    f0, f1, f2 = topo.corner_columns
    x0, x1, x2 = X.take(f0), X.take(f1), X.take(f2)
    y0, y1, y2 = Y.take(f0), Y.take(f1), Y.take(f2)
    z0, z1, z2 = Z.take(f0), Z.take(f1), Z.take(f2)
    e0x, e0y, e0z = x1 - x0, y1 - y0, z1 - z0
    e1x, e1y, e1z = x2 - x1, y2 - y1, z2 - z1
    e2x, e2y, e2z = x0 - x2, y0 - y2, z0 - z2
    # (p1 - p0) x (p2 - p0) = e0 x (-e2) = e2 x e0
    nx = e2y * e0z - e2z * e0y
    ny = e2z * e0x - e2x * e0z
    nz = e2x * e0y - e2y * e0x
    dbl = np.sqrt(nx * nx + ny * ny + nz * nz)
    l0 = e0x * e0x + e0y * e0y + e0z * e0z
    l1 = e1x * e1x + e1y * e1y + e1z * e1z
    l2 = e2x * e2x + e2y * e2y + e2z * e2z
    # law of cosines: at corner k the edges are e_k and -e_{k+2}, the opposite edge e_{k+1}
    d0 = 0.5 * (l0 + l2 - l1)
    d1 = 0.5 * (l1 + l0 - l2)
    d2 = 0.5 * (l2 + l1 - l0)
    return FaceFrame(
        e0x, e0y, e0z, e1x, e1y, e1z, e2x, e2y, e2z, nx, ny, nz, dbl, l0, l1, l2, d0, d1, d2,
        x0, y0, z0,
    )  # fmt: skip


def curvature_of_frame(ff: FaceFrame, topo: MeshTopology) -> tuple[np.ndarray, np.ndarray]:
    """(|H| (V,), K (V,)) float64: absolute mean and Gaussian curvature per vertex.

    Vertices with no faces get 0. On an open mesh the values at boundary vertices are not
    meaningful (the angle defect there measures boundary turning). A collapsed face (a
    pinch) has unbounded cotangent weights: its vertices get inf, which the checks read as
    a failure, so the overflow there is expected and not reported as a numpy warning.
    """
    with np.errstate(over="ignore", invalid="ignore", divide="ignore"):
        return _curvature_of_frame(ff, topo)


def _curvature_of_frame(ff: FaceFrame, topo: MeshTopology) -> tuple[np.ndarray, np.ndarray]:
    n = topo.n_vertices
    m = ff.dbl.shape[0]
    idx = topo.corner_index_slot_major
    inv = 1.0 / np.maximum(ff.dbl, TINY)
    c0, c1, c2 = ff.d0 * inv, ff.d1 * inv, ff.d2 * inv
    # edge k (corner k -> k+1) has weight cot of the opposite corner: w0 = c2, w1 = c0,
    # w2 = c1; with g_k = w_k e_k, corner k receives g_{k+2} - g_k
    buf = np.empty(3 * m)
    lap = []
    for e0, e1, e2 in ((ff.e0x, ff.e1x, ff.e2x), (ff.e0y, ff.e1y, ff.e2y),
                       (ff.e0z, ff.e1z, ff.e2z)):  # fmt: skip
        g0, g1, g2 = c2 * e0, c0 * e1, c1 * e2
        np.subtract(g2, g0, out=buf[:m])
        np.subtract(g0, g1, out=buf[m : 2 * m])
        np.subtract(g1, g2, out=buf[2 * m :])
        lap.append(np.bincount(idx, buf, minlength=n))
    lx, ly, lz = lap
    # mixed Voronoi area: the Voronoi part for non-obtuse faces (corner k: edges k and k+2,
    # weighted by the cotangents opposite them), area/2 or area/4 in obtuse faces
    np.multiply(ff.l0, c2, out=buf[:m])
    buf[:m] += ff.l2 * c1
    np.multiply(ff.l1, c0, out=buf[m : 2 * m])
    buf[m : 2 * m] += ff.l0 * c2
    np.multiply(ff.l2, c1, out=buf[2 * m :])
    buf[2 * m :] += ff.l1 * c0
    buf *= 0.125
    ob = np.concatenate([ff.d0 < 0, ff.d1 < 0, ff.d2 < 0])
    obtuse_face = ob[:m] | ob[m : 2 * m] | ob[2 * m :]
    if obtuse_face.any():
        f_ob = np.flatnonzero(obtuse_face)
        quarter = 0.125 * ff.dbl[f_ob]  # area / 4
        for k in range(3):
            slot = k * m + f_ob
            buf[slot] = np.where(ob[slot], 2.0 * quarter, quarter)
    amix = np.bincount(idx, buf, minlength=n)
    np.arctan2(ff.dbl, ff.d0, out=buf[:m])
    np.arctan2(ff.dbl, ff.d1, out=buf[m : 2 * m])
    np.arctan2(ff.dbl, ff.d2, out=buf[2 * m :])
    angle_sum = np.bincount(idx, buf, minlength=n)
    a_safe = np.maximum(amix, TINY)
    mean_abs = np.sqrt(lx * lx + ly * ly + lz * lz) / (4.0 * a_safe)
    gauss = (2 * np.pi - angle_sum) / a_safe
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
