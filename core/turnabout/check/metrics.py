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

from .curvature import TINY, FaceFrame, curvature_of_frame, face_frame
from .topology import MeshTopology

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


def face_quality(ff: FaceFrame) -> np.ndarray:
    """(M,) shape quality 2 sqrt(3) (2 area) / (sum of squared edges): 1 equilateral, 0 flat."""
    return _TWO_SQRT3 * ff.dbl / np.maximum(ff.l0 + ff.l1 + ff.l2, TINY)


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


def frame_metrics(
    P: np.ndarray,
    topo: MeshTopology,
    ref: ReferenceFrame,
    previous: np.ndarray | None = None,
    previous_length: np.ndarray | None = None,
    concentration_floor_deg: float = CONCENTRATION_FLOOR_DEG,
    orientable: bool = True,
) -> FrameMetrics:
    """All local metrics of one frame P (V, 3).

    previous : (V, 3) the frame before (None for the first frame: its steps are 0);
    previous_length : (V,) that frame's ``local_length`` if already known.
    concentration_floor_deg : floor (degrees) for the neighbours' mean angle, so that flat
    surroundings do not divide by zero.
    orientable : False skips the volume and degree (they need an orientation).
    """
    n = topo.n_vertices
    used = topo.used_vertices
    all_used = topo.all_vertices_used
    X0, Y0, Z0 = _components(P)
    X, Y, Z = _centred(X0, Y0, Z0, topo)
    ff = face_frame(X, Y, Z, topo)
    dbl = ff.dbl
    inv = 1.0 / np.maximum(dbl, TINY)
    unx, uny, unz = ff.nx * inv, ff.ny * inv, ff.nz * inv

    area_ratio = (0.5 * dbl) * ref.inverse_area
    quality_ratio = face_quality(ff) * ref.inverse_quality

    # crease: angle between the unit normals of each edge's two faces; on a non-orientable
    # mesh an edge traversed the same way by both faces compares n with -n.
    fa, fb = topo.edge_face_columns
    cosang = unx.take(fa) * unx.take(fb)
    cosang += uny.take(fa) * uny.take(fb)
    cosang += unz.take(fa) * unz.take(fb)
    if topo.has_flipped_edges:
        cosang *= topo.edge_flip_sign
    np.minimum(cosang, 1.0, out=cosang)
    np.maximum(cosang, -1.0, out=cosang)
    crease = np.arccos(cosang)
    crease *= 180.0 / np.pi
    if not topo.is_edge_manifold:
        crease[~topo.manifold_edges] = 0.0
    # concentration: the edge's angle over the mean angle of its neighbours one row over
    # (chosen on the reference frame), floored so that flat surroundings do not divide by 0
    nb = ref.crease_neighbours
    if ref.all_crease_neighbours:
        side_mean = crease.take(nb[:, 0])
        side_mean += crease.take(nb[:, 1])
        side_mean *= 0.5
    else:
        ok = nb >= 0
        vals = np.where(ok, crease[np.maximum(nb, 0)], 0.0)
        side_mean = vals.sum(axis=1) / np.maximum(ok.sum(axis=1), 1)
    concentration = crease / np.maximum(side_mean, concentration_floor_deg)

    # vertex normals (area weighted, fan-oriented) and fold agreement
    idx = topo.corner_index_slot_major
    f0, f1, f2 = topo.corner_columns
    flat_fans = not topo.has_flipped_edges
    if flat_fans:
        wx = np.concatenate([ff.nx, ff.nx, ff.nx])
        wy = np.concatenate([ff.ny, ff.ny, ff.ny])
        wz = np.concatenate([ff.nz, ff.nz, ff.nz])
    else:
        sgn = topo.corner_fan_signs_slot_major
        wx = sgn * np.concatenate([ff.nx, ff.nx, ff.nx])
        wy = sgn * np.concatenate([ff.ny, ff.ny, ff.ny])
        wz = sgn * np.concatenate([ff.nz, ff.nz, ff.nz])
    vx = np.bincount(idx, wx, minlength=n)
    vy = np.bincount(idx, wy, minlength=n)
    vz = np.bincount(idx, wz, minlength=n)
    vinv = 1.0 / np.maximum(np.sqrt(vx * vx + vy * vy + vz * vz), TINY)
    vx *= vinv
    vy *= vinv
    vz *= vinv
    corner_normals = []
    dots = []
    for fk in (f0, f1, f2):
        ax, ay, az = vx.take(fk), vy.take(fk), vz.take(fk)
        corner_normals.append((ax, ay, az))
        d = ax * unx
        d += ay * uny
        d += az * unz
        dots.append(d)
    corner_dot = np.concatenate(dots)
    if not flat_fans:
        corner_dot *= topo.corner_fan_signs_slot_major
    starts = topo.vertex_corner_starts
    if all_used:
        fold = np.minimum.reduceat(corner_dot.take(topo.slot_major_corner_order), starts[:-1])
    else:
        fold = np.ones(n)
        if used.any():
            fold[used] = np.minimum.reduceat(
                corner_dot.take(topo.slot_major_corner_order), starts[:-1][used]
            )

    # tight bend: 1 / (largest absolute principal curvature), relative to the frame's size
    h, k = curvature_of_frame(ff, topo)
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

    # local edge length: mean over the corners' two edges (each edge counted from both faces)
    s0, s1, s2 = np.sqrt(ff.l0), np.sqrt(ff.l1), np.sqrt(ff.l2)
    local_len = np.bincount(idx, np.concatenate([s0 + s2, s1 + s0, s2 + s1]), minlength=n)
    local_len *= topo.inverse_twice_degree
    if previous is None:
        step = np.zeros(n)
    else:
        Q = np.asarray(previous, np.float64)
        dx = X0 - Q[:, 0]
        dy = Y0 - Q[:, 1]
        dz = Z0 - Q[:, 2]
        if previous_length is None:  # exactly as that frame's own metrics computed it
            pff = face_frame(*_centred(*_components(Q), topo), topo)
            q0, q1, q2 = np.sqrt(pff.l0), np.sqrt(pff.l1), np.sqrt(pff.l2)
            previous_length = np.bincount(
                idx, np.concatenate([q0 + q2, q1 + q0, q2 + q1]), minlength=n
            )
            previous_length = previous_length * topo.inverse_twice_degree
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

    if orientable:
        volume = float(np.dot(ff.x0, ff.nx) + np.dot(ff.y0, ff.ny) + np.dot(ff.z0, ff.nz)) / 6.0
        # degree: signed solid angles of the spherical triangles spanned by vertex normals
        # (Van Oosterom & Strackee, "The solid angle of a plane triangle", 1983)
        (ax, ay, az), (bx, by, bz), (qx, qy, qz) = corner_normals
        triple = ax * (by * qz - bz * qy) + ay * (bz * qx - bx * qz) + az * (bx * qy - by * qx)
        den = 1.0 + (ax * bx + ay * by + az * bz) + (bx * qx + by * qy + bz * qz)
        den += qx * ax + qy * ay + qz * az
        degree = float(2.0 * np.arctan2(triple, den).sum() / (4 * np.pi))
        # an integer up to rounding (the solid angles tile the sphere a whole number of
        # times): snap float noise to it, so that a torus reports 0.0, never -0.0 or -4e-17
        nearest = round(degree)
        if abs(degree - nearest) <= _DEGREE_SNAP:
            degree = float(nearest)
        degree += 0.0  # -0.0 -> 0.0
    else:
        volume = float("nan")
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
        area=float(0.5 * dbl.sum()),
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
