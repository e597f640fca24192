"""Each per-frame rule fires on a case made for it: fold, tight bend, Gauss-map degree and
Banchoff's triple-point parity (a checker that lost one of them fails here)."""

from __future__ import annotations

import numpy as np
import pytest
import surfaces

from turnabout.check import Thresholds, check_animation, self_intersections
from turnabout.check.metrics import frame_metrics, reference_frame
from turnabout.check.topology import MeshTopology
from turnabout.mesh import round_sphere_positions, uniform_sphere_mesh


def _causes(frame) -> list[str]:
    return [r.split(":")[0] for r in frame.reasons]


# ----------------------------------------------------------------------------- fold


@pytest.mark.parametrize("height", [1.6, 2.4])
def test_a_spike_folds_its_fan_by_the_cone_angle(height):
    # The north pole of a UV sphere pulled up to (0, 0, H): its n fan faces are congruent,
    # each rising H - z_ring over the distance rho cos(pi / n) from the axis to its ring
    # chord, so each face normal leans alpha = atan((H - z_ring) / (rho cos(pi / n))) from
    # the axis; by symmetry the vertex normal is the axis, so fold = cos(alpha) there
    # (elementary geometry). A fan leaning past 60 degrees is folded (fold_warn 0.5).
    mesh = uniform_sphere_mesh(32, 16)
    p = round_sphere_positions(mesh)
    apex = mesh.n_vertices - 1
    p[apex] = (0.0, 0.0, height)
    ring = p[apex - mesh.n_lon]
    rho, z_ring = np.hypot(ring[0], ring[1]), ring[2]
    alpha = np.arctan((height - z_ring) / (rho * np.cos(np.pi / mesh.n_lon)))
    topo = MeshTopology(mesh.triangles(), len(p))
    fm = frame_metrics(p, topo, reference_frame(p, topo))
    assert fm.fold[apex] == pytest.approx(np.cos(alpha), rel=1e-9)
    assert fm.fold[apex] < Thresholds().fold_warn
    fr = check_animation(p, mesh.triangles(), intersections=False).frames[0]
    assert "fold" in _causes(fr)
    assert fr.min_fold <= fm.fold[apex]


# ----------------------------------------------------------------------------- tight bend


@pytest.mark.parametrize(("bead", "verdict"), [(0.004, "warn"), (0.001, "fail")])
def test_a_small_bead_beside_a_sphere_is_a_tight_bend_and_nothing_else(bead, verdict):
    # A sphere of radius r has both principal curvatures 1 / r (do Carmo, "Differential
    # Geometry of Curves and Surfaces", 1976), so a bead of radius r beside the unit sphere
    # bends with radius r, as a fraction r / diag of the frame's bounding-box diagonal. The
    # bead is as well meshed as the big sphere: every other metric is quiet.
    big, bf = surfaces.round_sphere(12)
    small, _ = surfaces.round_sphere(12, radius=bead, center=(1.5, 0.0, 0.0))
    p = np.vstack([big, small])
    f = np.vstack([bf, bf + len(big)])
    lo, hi = p.min(axis=0), p.max(axis=0)
    diag = float(np.linalg.norm(hi - lo))
    fr = check_animation(p, f).frames[0]
    assert fr.min_bend_radius == pytest.approx(bead / diag, rel=0.03)
    assert fr.verdict == verdict
    assert _causes(fr) == ["tight bend"]
    assert fr.degree == pytest.approx(2.0)  # Hopf: chi / 2 for two spheres


# ----------------------------------------------------------------------------- degree


def _vertex_normal_degree_by_preimages(p, f, u):
    """Degree of the vertex-normal map by counting signed preimages of the direction u.

    The map takes face (a, b, c) to the spherical triangle of its vertex normals; u is
    inside the cone of (na, nb, nc) when det(na, nb, u), det(nb, nc, u), det(nc, na, u) all
    have the sign of det(na, nb, nc); the degree is the sum of those signs over the faces
    (Milnor, "Topology from the Differentiable Viewpoint", 1965: the degree is the signed
    number of preimages of a regular value).
    """
    n = np.cross(p[f[:, 1]] - p[f[:, 0]], p[f[:, 2]] - p[f[:, 0]])
    vn = np.zeros_like(p)
    for k in range(3):
        np.add.at(vn, f[:, k], n)
    vn /= np.linalg.norm(vn, axis=1, keepdims=True)
    a, b, c = vn[f[:, 0]], vn[f[:, 1]], vn[f[:, 2]]

    def det(x, y, z):
        return np.einsum("ij,ij->i", np.cross(x, y), z)

    s = np.sign(det(a, b, c))
    inside = (np.sign(det(a, b, u[None])) == s) & (np.sign(det(b, c, u[None])) == s)
    inside &= np.sign(det(c, a, u[None])) == s
    return int(s[inside].sum())


def test_degree_warning_follows_the_vertex_normal_map():
    # Hopf: an immersed closed oriented surface has Gauss-map degree chi / 2 (H. Hopf,
    # "Uber die Curvatura integra geschlossener Hyperflachen", Math. Ann. 1926). Crumpled
    # spheres (random vertex moves) are no immersions: their vertex-normal map may cover
    # the sphere 0 or 2 times. The checker's degree must agree with a signed preimage count
    # and warn exactly when it is not chi / 2 = 1.
    p0, f = surfaces.round_sphere(2)
    rng = np.random.default_rng(7)
    u1, u2 = np.array([0.2, -0.5, 0.84]), np.array([-0.7, 0.1, -0.7])
    off = 0
    for _ in range(40):
        p = p0 + rng.normal(scale=0.6, size=p0.shape)
        expected = _vertex_normal_degree_by_preimages(p, f, u1 / np.linalg.norm(u1))
        assert expected == _vertex_normal_degree_by_preimages(p, f, u2 / np.linalg.norm(u2))
        fr = check_animation(p, f, intersections=False).frames[0]
        assert fr.degree == pytest.approx(expected, abs=1e-9)
        assert ("Gauss-map degree" in _causes(fr)) == (expected != 1)
        off += expected != 1
    assert off >= 3  # the case was made: some crumpled spheres have degree 0 or 2


# ----------------------------------------------------------------------------- parity


def _turn(a, b):
    ca, sa, cb, sb = np.cos(a), np.sin(a), np.cos(b), np.sin(b)
    rz = np.array([[ca, -sa, 0.0], [sa, ca, 0.0], [0.0, 0.0, 1.0]])
    rx = np.array([[1.0, 0.0, 0.0], [0.0, cb, -sb], [0.0, sb, cb]])
    return rz @ rx


def test_two_triple_points_merged_into_one_break_banchoff_parity():
    # Three unit spheres, centres (-1/2, 0, 0), (1/2, 0, 0), (0, 0, c): the first two meet
    # in a circle that the third crosses in two points (the triple points) until, as c
    # grows, it only touches it and then misses it (elementary geometry). Near that touch
    # the two points are closer than the checker can tell apart and merge into one: an odd
    # count on a closed surface of chi = 6. Banchoff: a generic immersed closed surface has
    # a number of triple points congruent to chi mod 2 (T. Banchoff, "Triple points and
    # surgery of immersed surfaces", Proc. AMS 46, 1974), so the frame is flagged as not
    # generic; with two points or none it is not.
    p, f = surfaces.round_sphere(6)
    sheets = [p @ _turn(0.3, 0.7).T, p @ _turn(1.1, 0.2).T, p @ _turn(0.5, 1.3).T]
    faces = np.vstack([f + k * len(p) for k in range(3)])
    topo = MeshTopology(faces, 3 * len(p))

    def frame(c):
        return np.vstack([sheets[0] + (-0.5, 0, 0), sheets[1] + (0.5, 0, 0), sheets[2] + (0, 0, c)])

    lo, hi = 1.8, 1.9  # two triple points at lo, none at hi (checked below)
    counts = {}
    for _ in range(40):
        mid = 0.5 * (lo + hi)
        k = self_intersections(frame(mid), topo).triple_point_count
        counts[k] = mid
        if k == 1:
            break
        lo, hi = (mid, hi) if k == 2 else (lo, mid)
    assert set(counts) >= {1}, counts
    for c, k in ((1.8, 2), (1.9, 0), (counts[1], 1)):
        fr = check_animation(frame(c), faces).frames[0]
        assert fr.triple_point_count == k
        assert fr.singular_point_count == 0 and fr.degenerate_pairs == 0
        assert ("triple-point parity" in _causes(fr)) == (k % 2 == 1), fr.reasons


# ----------------------------------------------------------------------------- non-generic


_OCTAHEDRON_V = np.array(
    [[1, 0, 0], [-1, 0, 0], [0, 1, 0], [0, -1, 0], [0, 0, 1], [0, 0, -1]], np.float64
)
_OCTAHEDRON_F = np.array(
    [[0, 2, 4], [0, 4, 3], [0, 3, 5], [0, 5, 2], [1, 4, 2], [1, 3, 4], [1, 5, 3], [1, 2, 5]]
)


def _rotation(v):
    """Rotation by |v| radians about v (Rodrigues' formula)."""
    th = float(np.linalg.norm(v))
    k = v / th
    kx = np.array([[0, -k[2], k[1]], [k[2], 0, -k[0]], [-k[1], k[0], 0]])
    return np.eye(3) + np.sin(th) * kx + (1 - np.cos(th)) * kx @ kx


def _three_octahedra(radii, centres, turns=None):
    p = [
        (_OCTAHEDRON_V * r) @ (np.eye(3) if turns is None else _rotation(turns[k])).T + centres[k]
        for k, r in enumerate(radii)
    ]
    return np.vstack(p), np.vstack([_OCTAHEDRON_F + 6 * k for k in range(3)])


def _vertex_on_a_foreign_plane(p, f) -> bool:
    """Does some vertex lie exactly on the plane of a face of another sheet?  Exact integer
    arithmetic on the doubled coordinates (they are half-integers here)."""
    q = [[int(round(2 * x)) for x in row] for row in p]
    sheet = [i // 6 for i in range(len(q))]
    for a, b, c in f.tolist():
        u = [q[b][i] - q[a][i] for i in range(3)]
        w = [q[c][i] - q[a][i] for i in range(3)]
        n = (u[1] * w[2] - u[2] * w[1], u[2] * w[0] - u[0] * w[2], u[0] * w[1] - u[1] * w[0])
        for v in range(len(q)):
            if sheet[v] != sheet[a] and sum(n[i] * (q[v][i] - q[a][i]) for i in range(3)) == 0:
                return True
    return False


@pytest.mark.parametrize(
    ("radii", "centres", "touching"),
    [
        ((3, 3, 3), ((0, 0, -0.5), (-1, 1, 0), (-0.5, 1, 0)), True),
        ((4, 3, 4), ((0, -1, 1), (1, 0.5, 0.5), (-1, -1, -0.5)), False),
    ],
)
def test_lattice_octahedra_warn_of_touching_faces_and_unmatched_triple_points(
    radii, centres, touching
):
    # Octahedra with lattice corners put vertices exactly on other sheets' face planes and
    # triple points exactly on mesh edges: such a frame is not generic. At a generic triple
    # point three sheets cross pairwise transversally, so it lies on exactly three branches
    # of double curve (elementary transversality, e.g. Guillemin and Pollack, "Differential
    # Topology", 1974, ch. 1 s. 5), and two triangles in general position cross in a
    # segment with two ends or not at all. In the lattice frame some triple point is seen by
    # fewer than three double curves ("unmatched"), and in the first frame some face pairs
    # touch ("touching faces"). A small generic rotation of each octahedron removes both,
    # and the count of triple points then has the parity of chi = 6 (Banchoff 1974).
    centres = np.asarray(centres, np.float64)
    p, f = _three_octahedra(radii, centres)
    assert _vertex_on_a_foreign_plane(p, f)  # the case is degenerate by construction
    topo = MeshTopology(f, len(p))
    res = self_intersections(p, topo)
    assert np.any(res.triple_detections % 3 != 0)
    assert (res.degenerate_pairs > 0) == touching
    fr = check_animation(p, f).frames[0]
    assert "unmatched triple point" in _causes(fr)
    assert ("touching faces" in _causes(fr)) == touching
    assert fr.degenerate_pairs == res.degenerate_pairs
    rng = np.random.default_rng(0)
    for _ in range(4):
        q, _ = _three_octahedra(radii, centres, rng.normal(scale=1e-3, size=(3, 3)))
        moved = self_intersections(q, topo)
        assert moved.degenerate_pairs == 0
        assert np.all(moved.triple_detections == 3)
        assert moved.triple_point_count % 2 == 0  # chi(three spheres) = 6
        causes = _causes(check_animation(q, f).frames[0])
        assert "unmatched triple point" not in causes and "touching faces" not in causes
        assert "triple-point parity" not in causes


def _four_symmetric_spheres():
    """Four unit spheres, each the previous one turned a quarter turn about z (exact in
    floating point), all through the origin and through (0, 0, 2h): two points where four
    sheets meet (elementary geometry; as in test_check_intersections)."""
    p, f = surfaces.round_sphere(24)
    p = p @ _turn(0.4, 0.9).T
    quarter = np.array([[0.0, -1.0, 0.0], [1.0, 0.0, 0.0], [0.0, 0.0, 1.0]])
    parts = [p + np.array([0.8, 0.0, 0.6])]
    for _ in range(3):
        parts.append(parts[-1] @ quarter.T)
    return np.vstack(parts), np.vstack([f + k * len(p) for k in range(4)])


@pytest.mark.parametrize(
    ("keep", "extra", "odd"),
    [
        ([0, 1], 0, False),  # the real frame: 2 x C(4, 3) = 8 triple points, chi = 8
        ([0], 0, False),  # one fourfold point alone: 4, still even
        ([0, 1], 1, True),  # one triple point too many: 9
        ([0], 1, True),  # 5
    ],
)
def test_parity_counts_a_fourfold_point_as_four_triple_points(keep, extra, odd):
    # Banchoff (Proc. AMS 1974): a generic immersed closed surface has a number of triple
    # points congruent to chi mod 2. A point where k sheets meet splits into C(k, 3) triple
    # points under a generic perturbation, so a fourfold point counts 4, not 1. The judge is
    # fed the real frame's intersections with points removed or one generic triple point
    # (three detections) added: the parity warning fires exactly when the count is odd.
    from dataclasses import replace

    from turnabout.check import judge_frame
    from turnabout.check.topology import topology_report

    p, f = _four_symmetric_spheres()
    topo = MeshTopology(f, len(p))
    rep = topology_report(topo)
    assert rep.is_manifold and rep.euler_characteristic == 8  # four spheres
    fm = frame_metrics(p, topo, reference_frame(p, topo))
    real = self_intersections(p, topo)
    assert list(real.triple_detections) == [12, 12]  # two fourfold points
    pts, tf, det = real.triple_points[keep], real.triple_faces[keep], real.triple_detections[keep]
    if extra:
        pts = np.vstack([pts, [[5.0, 5.0, 5.0]]])
        tf = np.vstack([tf, tf[:1]])
        det = np.append(det, 3)
    fed = replace(real, triple_points=pts, triple_faces=tf, triple_detections=det)
    fr = judge_frame(0, p, fm, topo, Thresholds(), 8, True, True, fed)
    assert fr.singular_point_count == 0 and fr.degenerate_pairs == 0
    assert ("triple-point parity" in _causes(fr)) == odd, fr.reasons
