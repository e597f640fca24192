"""Local metrics against closed forms and a reference library (trimesh)."""

from __future__ import annotations

import numpy as np
import pytest
import surfaces
from references import require

from turnabout.check import gauss_map_degree, signed_volume
from turnabout.check.curvature import mean_and_gaussian_curvature, principal_curvatures
from turnabout.check.metrics import frame_metrics, reference_frame
from turnabout.check.topology import MeshTopology


def _max_edge(p, f):
    e = np.concatenate([f[:, [0, 1]], f[:, [1, 2]], f[:, [2, 0]]])
    return float(np.max(np.linalg.norm(p[e[:, 0]] - p[e[:, 1]], axis=1)))


def test_round_sphere_has_gauss_degree_one():
    # Hopf: degree of the Gauss map = chi / 2 = 1 for the sphere (H. Hopf, "Über die
    # Curvatura integra geschlossener Hyperflächen", Math. Ann. 1926)
    p, f = surfaces.round_sphere(12, radius=2.5)
    assert gauss_map_degree(p, f) == pytest.approx(1.0, abs=1e-9)


def test_torus_has_gauss_degree_zero():
    # Hopf: chi(torus) = 0, so the degree is 0
    p, f = surfaces.torus(48, 24)
    assert gauss_map_degree(p, f) == pytest.approx(0.0, abs=1e-9)


def test_flipped_sphere_keeps_degree_one():
    # Hopf's theorem holds for either orientation (the normal turns with the orientation)
    p, f = surfaces.round_sphere(12)
    assert gauss_map_degree(p, f[:, ::-1]) == pytest.approx(1.0, abs=1e-9)


def test_sphere_volume_is_four_thirds_pi_r_cubed_to_mesh_accuracy():
    r = 1.7
    vols, hs = [], []
    for n in (8, 16, 32):
        p, f = surfaces.round_sphere(n, radius=r)
        vols.append(signed_volume(p, f))
        hs.append(_max_edge(p, f))
    exact = 4.0 / 3.0 * np.pi * r**3  # volume of a ball (Archimedes)
    err = np.abs(np.array(vols) - exact) / exact
    # an inscribed polyhedron: below the ball, with an error shrinking like h^2
    assert all(v < exact for v in vols)
    assert np.all(err <= 1.0 * (np.array(hs) / r) ** 2)
    assert err[2] < err[1] < err[0]


def test_torus_volume_matches_pappus():
    big, small = 1.3, 0.4
    p, f = surfaces.torus(192, 96, big, small)
    # Pappus's centroid theorem: V = (area of the disk) x (path of its centre) = 2 pi^2 R r^2
    exact = 2 * np.pi**2 * big * small**2
    assert signed_volume(p, f) == pytest.approx(exact, rel=2e-3)


def test_flipped_sphere_has_negated_volume():
    p, f = surfaces.round_sphere(10)
    assert signed_volume(p, f[:, ::-1]) == pytest.approx(-signed_volume(p, f), rel=1e-12)


def test_volume_agrees_with_trimesh():
    trimesh = require("trimesh")
    for p, f in (surfaces.round_sphere(10, radius=0.8), surfaces.torus(40, 20)):
        ref = trimesh.Trimesh(p, f, process=False).volume
        assert signed_volume(p, f) == pytest.approx(ref, rel=1e-10)


def test_sphere_principal_curvatures_are_one_over_radius():
    r = 3.0
    p, f = surfaces.round_sphere(24, radius=r)
    k1, k2 = principal_curvatures(p, f)
    assert np.allclose(k1, 1 / r, rtol=0.02) and np.allclose(k2, 1 / r, rtol=0.02)


def test_torus_curvature_matches_the_closed_form():
    # on a torus of revolution (R, r) at tube angle v: k1 = 1/r and
    # k2 = cos v / (R + r cos v) (do Carmo, "Differential Geometry of Curves and Surfaces",
    # 1976); so H = (k1 + k2) / 2 and K = k1 k2
    big, small = 1.0, 0.35
    n_major, n_minor = 160, 80
    p, f = surfaces.torus(n_major, n_minor, big, small)
    h, k = mean_and_gaussian_curvature(p, f)
    v = np.tile(np.arange(n_minor) * (2 * np.pi / n_minor), n_major)
    k1, k2 = 1 / small, np.cos(v) / (big + small * np.cos(v))
    assert np.allclose(k, k1 * k2, atol=0.05 * k1**2 * 0.2)
    assert np.allclose(h, np.abs(0.5 * (k1 + k2)), rtol=0.01)


def _ellipsoid(n=40, axes=(1.0, 0.7, 0.5)):
    p, f = surfaces.round_sphere(n)
    return p * np.array(axes), f


def test_ellipsoid_curvature_matches_the_closed_form():
    # ellipsoid x^2/a^2 + y^2/b^2 + z^2/c^2 = 1, with s = x^2/a^4 + y^2/b^4 + z^2/c^4:
    # K = 1 / (a b c)^2 s^2 and |H| = |x^2 + y^2 + z^2 - a^2 - b^2 - c^2| / (2 (a b c)^2 s^1.5)
    # (formulas recalled from memory; classical results for the ellipsoid)
    a, b, c = 1.0, 0.7, 0.5
    p, f = _ellipsoid(40, (a, b, c))
    h, k = mean_and_gaussian_curvature(p, f)
    x, y, z = p.T
    s = x * x / a**4 + y * y / b**4 + z * z / c**4
    gauss = 1.0 / ((a * b * c) ** 2 * s**2)
    mean = np.abs(x * x + y * y + z * z - a * a - b * b - c * c) / (2 * (a * b * c) ** 2 * s**1.5)
    assert np.allclose(k, gauss, rtol=0.02)
    assert np.allclose(h, mean, rtol=0.02)


def test_curvature_agrees_with_trimesh_measures():
    trimesh = require("trimesh")
    p, f = _ellipsoid()
    mesh = trimesh.Trimesh(p, f, process=False)
    h, k = mean_and_gaussian_curvature(p, f)
    # per-vertex area: a third of the incident faces' area (trimesh's face areas); this
    # lumped area differs from the mixed Voronoi area at irregular vertices, so the
    # comparison is on the median and on the bulk
    area = np.bincount(f.ravel(), np.repeat(mesh.area_faces / 3.0, 3), minlength=len(p))
    # Gaussian curvature: trimesh's angle defects per vertex (Descartes / Gauss-Bonnet)
    gauss_ref = trimesh.curvature.vertex_defects(mesh) / area
    assert mesh.vertex_defects.sum() == pytest.approx(4 * np.pi)  # Gauss-Bonnet, chi = 2
    rel_k = np.abs(k / gauss_ref - 1.0)
    assert np.median(rel_k) < 0.03 and np.quantile(rel_k, 0.9) < 0.1
    # mean curvature: the edge measure sum(theta_e * l_e) / 4 over a vertex's edges
    # (Cohen-Steiner and Morvan, "Restricted Delaunay triangulations and normal cycle", 2003)
    # from trimesh's dihedral angles, per unit area
    edges = np.sort(mesh.face_adjacency_edges, axis=1)
    theta = mesh.face_adjacency_angles
    length = np.linalg.norm(p[edges[:, 0]] - p[edges[:, 1]], axis=1)
    measure = np.bincount(edges.ravel(), np.repeat(theta * length / 4.0, 2), minlength=len(p))
    rel_h = np.abs(h / (measure / area) - 1.0)
    assert np.median(rel_h) < 0.03 and np.quantile(rel_h, 0.9) < 0.1


def test_crease_angle_of_a_folded_sheet():
    # two triangles at a known dihedral angle (elementary geometry)
    a = np.radians(50.0)
    p = np.array([[0, 0, 0], [1, 0, 0], [0.5, 1, 0], [0.5, -np.cos(a), np.sin(a)]], float)
    faces = np.array([[0, 1, 2], [1, 0, 3]])
    topo = MeshTopology(faces, 4)
    fm = frame_metrics(p, topo, reference_frame(p, topo))
    shared = int(np.flatnonzero(topo.edge_face_count == 2)[0])
    assert fm.crease_deg[shared] == pytest.approx(50.0, abs=1e-9)


def test_step_is_measured_in_local_edge_lengths():
    p, f = surfaces.round_sphere(8)
    topo = MeshTopology(f, len(p))
    ref = reference_frame(p, topo)
    moved = p.copy()
    moved[5] += np.array([0.0, 0.0, 0.3])
    fm = frame_metrics(moved, topo, ref, previous=p)
    nb = topo.edges[(topo.edges == 5).any(axis=1)]
    before = np.linalg.norm(p[nb[:, 0]] - p[nb[:, 1]], axis=1).mean()
    after = np.linalg.norm(moved[nb[:, 0]] - moved[nb[:, 1]], axis=1).mean()
    assert fm.step[5] == pytest.approx(0.3 / (0.5 * (before + after)), rel=1e-9)
    assert np.count_nonzero(fm.step) == 1


def test_pinch_ratios_are_relative_to_the_first_frame():
    p, f = surfaces.round_sphere(8)
    topo = MeshTopology(f, len(p))
    ref = reference_frame(p, topo)
    fm = frame_metrics(2.0 * p, topo, ref)
    assert np.allclose(fm.area_ratio, 4.0) and np.allclose(fm.quality_ratio, 1.0)
