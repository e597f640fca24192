"""Topology report: manifoldness, orientation, orientability, Euler characteristic, genus."""

from __future__ import annotations

import numpy as np
import pytest
import surfaces
from references import require

from turnabout.check import topology_report
from turnabout.check.topology import MeshTopology


def test_round_sphere_is_a_closed_oriented_genus_zero_surface():
    _, faces = surfaces.round_sphere(6)
    rep = topology_report(faces)
    # Euler's polyhedron formula V - E + F = 2 for the sphere (Euler, 1758)
    assert rep.is_manifold and rep.closed and rep.consistently_oriented and rep.orientable
    assert rep.euler_characteristic == 2 and rep.genus == 0 and rep.components == 1
    assert rep.is_sphere


def test_torus_has_euler_characteristic_zero_and_genus_one():
    _, faces = surfaces.torus(24, 12)
    rep = topology_report(faces)
    # chi = 2 - 2g for a closed orientable surface of genus g (classification of surfaces)
    assert rep.euler_characteristic == 0 and rep.genus == 1 and rep.orientable
    assert not rep.is_sphere


@pytest.mark.parametrize("make", [surfaces.boy_surface, surfaces.roman_surface])
def test_projective_plane_meshes_are_closed_and_non_orientable(make):
    _, faces = make(8)
    rep = topology_report(faces)
    # RP^2: chi = 1, non-orientable, one cross-cap (classification of surfaces)
    assert rep.is_manifold and not rep.orientable and not rep.consistently_oriented
    assert rep.euler_characteristic == 1 and rep.crosscap_number == 1 and rep.genus is None


def test_flipped_faces_are_seen_as_inconsistent_but_orientable():
    _, faces = surfaces.round_sphere(6)
    f = faces.copy()
    f[::7] = f[::7, ::-1]
    rep = topology_report(f)
    assert rep.orientable and not rep.consistently_oriented and rep.is_manifold


def test_open_mesh_reports_its_boundary():
    _, faces = surfaces.round_sphere(6)
    rep = topology_report(faces[1:], n_vertices=int(faces.max()) + 1)
    assert not rep.closed and rep.boundary_edges == 3 and not rep.is_manifold


def test_two_spheres_are_two_components():
    p, faces = surfaces.round_sphere(4)
    both = np.concatenate([faces, faces + len(p)])
    rep = topology_report(both)
    assert rep.components == 2 and rep.euler_characteristic == 4 and rep.genus is None


def test_two_cones_touching_at_a_vertex_are_not_a_manifold():
    # two octahedra sharing one vertex: every edge has two faces, but that vertex's link
    # is two circles
    p, faces = surfaces.round_sphere(1)
    apex = int(np.argmax(p[:, 2]))
    other = faces + len(p)
    other[other == apex + len(p)] = apex
    rep = topology_report(np.concatenate([faces, other]), n_vertices=2 * len(p))
    assert rep.nonmanifold_edges == 0 and rep.nonmanifold_vertices == 1
    assert not rep.is_manifold


def test_edge_in_three_faces_is_non_manifold():
    faces = np.array([[0, 1, 2], [1, 0, 3], [0, 1, 4]])
    rep = topology_report(faces)
    assert rep.nonmanifold_edges == 1 and not rep.is_manifold


def test_fan_signs_orient_every_vertex_fan_of_a_non_orientable_mesh():
    p, faces = surfaces.boy_surface(10)
    topo = MeshTopology(faces, len(p))
    signs = topo.corner_fan_signs
    n = np.cross(p[faces[:, 1]] - p[faces[:, 0]], p[faces[:, 2]] - p[faces[:, 0]])
    n /= np.linalg.norm(n, axis=1, keepdims=True)
    for v in range(0, len(p), 7):
        fs, ks = np.nonzero(faces == v)
        oriented = n[fs] * signs[fs, ks][:, None]
        mean = oriented.sum(axis=0)
        assert np.all(oriented @ mean > 0)  # a smooth fan: every face agrees with the mean


def test_sphere_missing_one_face_is_an_open_consistently_oriented_disk():
    # Removing one triangle from a sphere leaves a disk: chi = 2 - 1 = 1 (Euler's formula
    # with one face fewer), bounded by the removed face's 3 edges and 3 vertices. Every
    # vertex link is one circle or (at those 3 vertices) one arc, so no vertex is singular,
    # and the remaining faces keep their orientation.
    p, faces = surfaces.round_sphere(16)
    rep = topology_report(faces[1:], n_vertices=len(p))
    assert rep.boundary_edges == 3 and rep.boundary_vertices == 3
    assert rep.nonmanifold_vertices == 0 and rep.nonmanifold_edges == 0
    assert rep.consistently_oriented and rep.orientable
    assert rep.euler_characteristic == 1 and not rep.is_manifold
    from turnabout.check import check_animation

    (reason,) = check_animation(p, faces[1:], intersections=False).reasons
    assert "3 boundary edges, 3 boundary vertices" in reason
    assert "0 non-manifold vertices" in reason
    # one flipped face is still seen, with or without a boundary
    f = faces[1:].copy()
    f[100] = f[100, ::-1]
    assert not topology_report(f, n_vertices=len(p)).consistently_oriented


def test_a_pinched_open_surface_has_its_pinch_as_the_only_singular_vertex():
    # two disks (spheres missing a face) glued at one vertex: the link there is two circles
    p, faces = surfaces.round_sphere(4)
    apex = int(np.argmax(p[:, 2]))
    assert apex not in faces[0]  # the glued vertex is interior to both disks
    other = faces[1:] + len(p)
    other[other == apex + len(p)] = apex
    rep = topology_report(np.concatenate([faces[1:], other]), n_vertices=2 * len(p))
    assert rep.nonmanifold_vertices == 1 and rep.boundary_vertices == 6


def test_component_labels_match_scipys_connected_components():
    # reference: scipy.sparse.csgraph.connected_components on random sparse graphs, with
    # isolated nodes and long chains (the worst case for label propagation)
    scipy_graph = require("scipy.sparse.csgraph")
    from scipy.sparse import coo_matrix

    from turnabout.check.topology import component_labels

    rng = np.random.default_rng(7)
    for n, m in ((1, 0), (50, 0), (200, 150), (1000, 900), (3000, 6000)):
        a = rng.integers(0, n, m)
        b = rng.integers(0, n, m)
        if n == 1000:  # one long chain in a shuffled order
            perm = rng.permutation(n)
            a, b = perm[:-1], perm[1:]
        label = component_labels(n, a, b)
        graph = coo_matrix((np.ones(a.size), (a, b)), shape=(n, n))
        count, ref = scipy_graph.connected_components(graph, directed=False)
        assert np.unique(label).size == count
        # same partition, and each label is the smallest node of its component
        pairs = np.unique(np.stack([label, ref], axis=1), axis=0)
        assert pairs.shape[0] == count
        assert np.array_equal(
            label,
            np.minimum.reduceat(
                np.arange(n)[np.argsort(ref, kind="stable")],
                np.searchsorted(np.sort(ref), np.arange(count)),
            )[ref],
        )
