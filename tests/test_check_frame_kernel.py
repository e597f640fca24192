"""The per-frame metrics kernel against plain formulas, numpy.bincount and trimesh.

The kernel (turnabout.check.metrics.frame_metrics) gathers through corner tables, reuses its
buffers and works one coordinate row at a time; here every metric of a frame is recomputed
the straightforward way (np.cross, np.linalg.norm, np.add.at, one face or corner at a time
in vectorised form) and compared, on closed, non-orientable and open meshes.
"""

from __future__ import annotations

import numpy as np
import pytest
import surfaces
from references import require

from turnabout.check.metrics import frame_metrics, reference_frame
from turnabout.check.topology import MeshTopology, topology_report
from turnabout.check.vertex_sums import CornerSums


def _meshes():
    rng = np.random.default_rng(3)
    p, f = surfaces.round_sphere(10)
    bump = 1.0 + 0.1 * np.sin(3 * p[:, 0]) * np.cos(2 * p[:, 2])
    yield "sphere", p, p * bump[:, None] + rng.normal(0, 0.005, p.shape), f
    p, f = surfaces.torus(40, 20)
    yield "torus", p, 1.1 * p + rng.normal(0, 0.01, p.shape), f
    p, f = surfaces.boy_surface(12)  # non-orientable: flipped edges and fans
    yield "boy", p, p + rng.normal(0, 0.01, p.shape), f
    p, f = surfaces.round_sphere(6)
    open_f = f[: len(f) // 2]  # a hemisphere-like open mesh; the other vertices unused
    yield "open", p, 0.9 * p + rng.normal(0, 0.01, p.shape), open_f


def _reference_metrics(p0, p, q, faces, orientable):
    """Every metric of frame p (previous frame q, first frame p0), the plain way."""
    f = np.asarray(faces, np.int64)
    n = len(p)
    topo = MeshTopology(f, n)
    used = np.zeros(n, bool)
    used[f.ravel()] = True

    def tri(x):
        return x[f[:, 0]], x[f[:, 1]], x[f[:, 2]]

    def area_quality(x):
        a, b, c = tri(x)
        cr = np.cross(b - a, c - a)
        dbl = np.linalg.norm(cr, axis=1)
        l2 = sum(np.sum(e * e, axis=1) for e in (b - a, c - b, a - c))
        return 0.5 * dbl, 2 * np.sqrt(3) * dbl / l2, cr

    area0, qual0, _ = area_quality(p0)
    area, qual, cr = area_quality(p)
    unit = cr / np.linalg.norm(cr, axis=1, keepdims=True)
    # crease: angle between the normals of each edge's two faces (sign-corrected where the
    # two faces traverse the edge the same way, on a non-orientable mesh)
    fa, fb = topo.edge_faces[:, 0], topo.edge_faces[:, 1]
    two = topo.edge_face_count == 2
    cos = np.where(two, np.sum(unit[fa] * unit[np.maximum(fb, 0)], axis=1), 1.0)
    cos = np.where(topo.edge_same_direction, -cos, cos)
    crease = np.degrees(np.arccos(np.clip(cos, -1, 1)))
    # vertex normals: sum of the incident faces' normals, each turned to agree with the fan
    signs = topo.corner_fan_signs  # (M, 3) +-1
    vn = np.zeros((n, 3))
    np.add.at(vn, f.ravel(), (cr[:, None, :] * signs[..., None]).reshape(-1, 3))
    vn /= np.maximum(np.linalg.norm(vn, axis=1, keepdims=True), 1e-300)
    corner_dot = np.einsum("mkc,mc->mk", vn[f], unit) * signs
    fold = np.ones(n)
    np.minimum.at(fold, f.ravel(), corner_dot.ravel())
    fold[~used] = 1.0

    # local length: mean of the two edges at every corner of the vertex
    def local_length(x):
        a, b, c = tri(x)
        la, lb, lc = (np.linalg.norm(e, axis=1) for e in (b - a, c - b, a - c))
        per_corner = np.stack([la + lc, lb + la, lc + lb], axis=1)  # corner 0, 1, 2
        tot = np.zeros(n)
        np.add.at(tot, f.ravel(), per_corner.ravel())
        deg = np.bincount(f.ravel(), minlength=n)
        return np.where(deg > 0, tot / np.maximum(2 * deg, 1), 0.0)

    ll = local_length(p)
    mean_len = np.where(used, 0.5 * (ll + local_length(q)), 1.0)
    step = np.where(used, np.linalg.norm(p - q, axis=1) / mean_len, 0.0)
    # tight bend from the discrete curvatures of Meyer, Desbrun, Schröder and Barr,
    # "Discrete Differential-Geometry Operators for Triangulated 2-Manifolds" (2003): the
    # cotangent Laplacian, the mixed Voronoi area and the angle defect, corner by corner
    lap, amix, angles = np.zeros((n, 3)), np.zeros(n), np.zeros(n)
    corners = tri(p)
    for k in range(3):
        i, j = f[:, k], f[:, (k + 1) % 3]
        pi, pj, po = corners[k], corners[(k + 1) % 3], corners[(k + 2) % 3]
        # the angle at corner o, opposite the edge i-j, weighs that edge (cot alpha)
        u, w = pi - po, pj - po
        cot = np.sum(u * w, axis=1) / np.linalg.norm(np.cross(u, w), axis=1)
        np.add.at(lap, i, cot[:, None] * (pj - pi))
        np.add.at(lap, j, cot[:, None] * (pi - pj))
        a, b = pj - pi, po - pi  # the angle at corner i
        np.add.at(angles, i, np.arctan2(np.linalg.norm(np.cross(a, b), axis=1),
                                        np.sum(a * b, axis=1)))  # fmt: skip
    for k in range(3):
        i = f[:, k]
        a, b = corners[(k + 1) % 3] - corners[k], corners[(k + 2) % 3] - corners[k]
        c = corners[(k + 2) % 3] - corners[(k + 1) % 3]
        cot_b = np.sum(-a * c, axis=1) / (2 * area)  # at corner k+1, opposite edge k+2 - k
        cot_c = np.sum(b * c, axis=1) / (2 * area)  # at corner k+2, opposite edge k - k+1
        voronoi = (np.sum(b * b, axis=1) * cot_b + np.sum(a * a, axis=1) * cot_c) / 8
        obtuse_here = np.sum(a * b, axis=1) < 0
        obtuse_face = obtuse_here | (cot_b < 0) | (cot_c < 0)
        part = np.where(obtuse_face, np.where(obtuse_here, area / 2, area / 4), voronoi)
        np.add.at(amix, i, part)
    safe = np.where(used, amix, 1.0)
    mean_abs = np.linalg.norm(lap, axis=1) / (2 * 2 * safe)
    gauss = (2 * np.pi - angles) / safe
    kmax = mean_abs + np.sqrt(np.maximum(mean_abs**2 - gauss, 0.0))
    centred = p[used] - p[used].mean(axis=0)
    size = np.linalg.norm(np.ptp(centred, axis=0))
    with np.errstate(divide="ignore"):  # unused vertices have no curvature
        bend = np.where(used, 1.0 / (kmax * size), np.inf)
    out = {
        "area_ratio": area / area0,
        "quality_ratio": qual / qual0,
        "crease_deg": np.where(two, crease, 0.0),
        "fold": fold,
        "local_length": ll,
        "step": step,
        "bend_radius": bend,
        "area": area.sum(),
    }
    if orientable:
        a, b, c = tri(p - p[used].mean(axis=0))
        out["signed_volume"] = np.einsum("mi,mi->", a, np.cross(b, c)) / 6.0
        # Gauss-map degree: solid angles of the vertex-normal triangles (Van Oosterom &
        # Strackee, "The solid angle of a plane triangle", 1983)
        na, nb, nc = tri(vn)
        num = np.einsum("mi,mi->m", na, np.cross(nb, nc))
        den = 1 + np.einsum("mi,mi->m", na, nb) + np.einsum("mi,mi->m", nb, nc)
        den += np.einsum("mi,mi->m", nc, na)
        out["degree"] = 2 * np.arctan2(num, den).sum() / (4 * np.pi)
    return out


@pytest.mark.parametrize("name", ["sphere", "torus", "boy", "open"])
def test_frame_metrics_match_the_plain_formulas(name):
    p0, p, f = next((a, b, c) for n, a, b, c in _meshes() if n == name)
    q = 0.5 * (p0 + p)  # the previous frame
    topo = MeshTopology(f, len(p0))
    orientable = topology_report(topo).orientable
    ref = reference_frame(p0, topo)
    fm = frame_metrics(p, topo, ref, previous=q, orientable=orientable)
    want = _reference_metrics(p0, p, q, f, orientable)
    for key in ("area_ratio", "quality_ratio", "local_length", "step", "fold"):
        np.testing.assert_allclose(getattr(fm, key), want[key], rtol=1e-10, atol=1e-12,
                                   err_msg=key)  # fmt: skip
    # bend radius: interior vertices (the boundary's curvature is not meaningful)
    inner = np.ones(len(p), bool)
    inner[topo.edges[topo.edge_face_count == 1].ravel()] = False
    np.testing.assert_allclose(fm.bend_radius[inner], want["bend_radius"][inner], rtol=1e-8)
    # arccos near 0 loses digits: compare the angles to 1e-6 degree
    np.testing.assert_allclose(fm.crease_deg, want["crease_deg"], atol=1e-6)
    assert fm.area == pytest.approx(want["area"], rel=1e-12)
    if orientable:
        assert fm.signed_volume == pytest.approx(want["signed_volume"], rel=1e-12)
        assert fm.degree == pytest.approx(want["degree"], abs=1e-9)
    else:
        assert np.isnan(fm.signed_volume) and np.isnan(fm.degree)


def test_crease_angles_match_trimesh_dihedral_angles():
    trimesh = require("trimesh")
    _, p, p2, f = next(m for m in _meshes() if m[0] == "torus")
    topo = MeshTopology(f, len(p))
    fm = frame_metrics(p2, topo, reference_frame(p, topo))
    mesh = trimesh.Trimesh(p2, f, process=False)
    pairs = np.sort(mesh.face_adjacency_edges, axis=1)
    key = pairs[:, 0] * len(p) + pairs[:, 1]
    ours = topo.edges[:, 0] * len(p) + topo.edges[:, 1]
    idx = np.searchsorted(ours, key)
    assert np.array_equal(ours[idx], key)
    np.testing.assert_allclose(fm.crease_deg[idx], np.degrees(mesh.face_adjacency_angles),
                               atol=1e-6)  # fmt: skip


def test_frame_metrics_do_not_depend_on_reusing_the_corner_tables():
    # the tables built once per animation give the same numbers, bit for bit, as tables
    # built for a single call
    for _, p0, p, f in _meshes():
        topo = MeshTopology(f, len(p0))
        ref = reference_frame(p0, topo)
        sums = CornerSums(topo)
        a = frame_metrics(p, topo, ref, previous=p0, sums=sums)
        frame_metrics(p0, topo, ref, sums=sums)  # another frame in between
        b = frame_metrics(p, topo, ref, previous=p0)
        for key in ("area_ratio", "crease_deg", "crease_concentration", "fold",
                    "bend_radius", "step", "local_length"):  # fmt: skip
            assert np.array_equal(getattr(a, key), getattr(b, key)), key


def _random_mesh(rng, n_vertices=60, n_faces=300):
    f = rng.integers(0, n_vertices, (n_faces, 3))
    f = f[(f[:, 0] != f[:, 1]) & (f[:, 1] != f[:, 2]) & (f[:, 0] != f[:, 2])]
    fan = np.stack([np.zeros(40, int), np.arange(1, 41), np.arange(2, 42)], axis=1)
    return np.vstack([f, fan])  # vertex 0 has a large degree; the last vertices are unused


@pytest.mark.parametrize("mesh", ["sphere", "torus", "random"])
def test_corner_sums_equal_bincount_bit_for_bit(mesh):
    # reference: numpy.bincount, which adds each vertex's values in order from 0.0
    rng = np.random.default_rng(11)
    if mesh == "random":
        f, n = _random_mesh(rng), 64
    else:
        p, f = surfaces.round_sphere(8) if mesh == "sphere" else surfaces.torus(20, 10)
        n = len(p)
    topo = MeshTopology(f, n)
    sums = CornerSums(topo)
    m = topo.n_faces
    idx = topo.corner_index_slot_major
    for _ in range(3):
        v = rng.normal(size=3 * m + 1) * 10.0 ** rng.integers(-6, 6, 3 * m + 1)
        v[rng.integers(0, 3 * m, 7)] = -0.0
        v[-1] = 0.0
        got = sums.sum_corners(v)
        want = np.bincount(idx, v[:-1], minlength=n)
        assert np.array_equal(got, want) and np.array_equal(np.signbit(got), np.signbit(want))
        fv = np.append(rng.normal(size=m), 0.0)
        assert np.array_equal(sums.sum_faces(fv), np.bincount(idx, np.tile(fv[:-1], 3), n))
        low = np.full(n, np.inf)
        np.minimum.at(low, idx, v[:-1])
        assert np.array_equal(sums.min_corners(v[:-1]), np.where(np.isinf(low), 1.0, low))
    zeros = np.zeros(3 * m + 1)
    zeros[:-1] = -0.0  # bincount starts from +0.0: all -0.0 sums to +0.0
    assert not np.signbit(sums.sum_corners(zeros)).any()
