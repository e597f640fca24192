"""Double curves, triple points and singular points of the classical surfaces."""

from __future__ import annotations

import os
import sys

import numpy as np
import pytest
import surfaces

from turnabout.check import check_animation, self_intersections
from turnabout.check.intersections import grid_candidate_pairs
from turnabout.check.topology import MeshTopology


def _turn(a: float, b: float) -> np.ndarray:
    """A rotation about z by a, then about x by b."""
    rz = np.array([[np.cos(a), -np.sin(a), 0], [np.sin(a), np.cos(a), 0], [0, 0, 1]])
    rx = np.array([[1, 0, 0], [0, np.cos(b), -np.sin(b)], [0, np.sin(b), np.cos(b)]])
    return rx @ rz


@pytest.fixture(scope="module")
def boy():
    p, f = surfaces.boy_surface(40)
    return p, f, check_animation(p, f)


def test_boy_surface_has_one_triple_point(boy):
    # Boy's surface (Bryant-Kusner parametrisation; Kusner, "Conformal geometry and complete
    # minimal surfaces", Bull. AMS 1987): exactly one triple point, here at the origin where
    # the three planar ends are inverted to
    _, _, rep = boy
    fr = rep.frames[0]
    assert fr.triple_point_count == 1
    assert np.linalg.norm(fr.triple_points[0]) < 0.02


def test_boy_surface_has_one_closed_double_curve(boy):
    _, _, rep = boy
    fr = rep.frames[0]
    assert fr.double_curve_count == 1 and fr.double_curves_closed == [True]
    (curve,) = rep.double_curves(0)
    assert np.allclose(curve[0], curve[-1])  # closed polyline
    # the closed double curve passes three times through the triple point
    d = np.linalg.norm(curve - rep.frames[0].triple_points[0], axis=1)
    near = d < 0.05
    runs = np.count_nonzero(near[1:] & ~near[:-1]) + int(near[0] and not near[-1])
    assert runs == 3


def test_boy_surface_has_no_singular_point_and_passes(boy):
    _, _, rep = boy
    fr = rep.frames[0]
    assert fr.singular_point_count == 0 and fr.verdict != "fail"


def test_boy_surface_satisfies_banchoff_parity(boy):
    # Banchoff, "Triple points and surgery of immersed surfaces", Proc. AMS 1974:
    # triple points = chi mod 2 for a generic immersion; chi(RP^2) = 1
    _, _, rep = boy
    assert rep.frames[0].triple_point_count % 2 == rep.topology.euler_characteristic % 2
    assert not any("Banchoff" in r for r in rep.frames[0].reasons)


def test_roman_surface_has_six_whitney_umbrellas_and_one_triple_point():
    # Steiner's Roman surface: three double segments on the axes meet in one triple point
    # at the origin and end in six pinch points at +-1/2 on the axes (classical)
    p, f = surfaces.roman_surface(40)
    fr = check_animation(p, f).frames[0]
    assert fr.triple_point_count == 1
    assert np.linalg.norm(fr.triple_points[0]) < 0.02
    assert fr.singular_point_count == 6
    where = np.array([s.position for s in fr.singular_points])
    expected = 0.5 * np.vstack([np.eye(3), -np.eye(3)])
    dist = np.linalg.norm(where[:, None] - expected[None], axis=-1)
    assert np.all(dist.min(axis=0) < 0.08)  # every umbrella found near its place
    assert fr.verdict == "fail"


def test_cross_cap_has_two_singular_points():
    # the cross-cap (x, y, z) -> (yz, 2xy, x^2 - y^2): one double segment on the z axis from
    # (0, 0, 0) to (0, 0, 1) with a Whitney umbrella at each end (classical)
    p, f = surfaces.cross_cap(40)
    fr = check_animation(p, f).frames[0]
    assert fr.singular_point_count == 2
    ends = sorted(float(s.position[2]) for s in fr.singular_points)
    assert ends[0] == pytest.approx(0.0, abs=0.08) and ends[1] == pytest.approx(1.0, abs=0.08)
    assert fr.double_curve_count >= 1 and fr.triple_point_count == 0


def test_round_sphere_and_torus_do_not_intersect_themselves():
    for p, f in (surfaces.round_sphere(16), surfaces.torus(64, 32)):
        res = self_intersections(p, MeshTopology(f, len(p)))
        assert res.segments.shape[0] == 0 and res.triple_point_count == 0


def test_two_overlapping_spheres_meet_in_one_circle():
    # two unit spheres with centres 1 apart meet in a circle of radius sqrt(1 - 1/4) in the
    # plane x = 1/2 (elementary geometry)
    p, f = surfaces.round_sphere(20)
    q = p @ _turn(0.4, 0.9).T + np.array([1.0, 0.0, 0.0])  # turned: no coincident vertices
    pos = np.vstack([p, q])
    faces = np.vstack([f, f + len(p)])
    res = self_intersections(pos, MeshTopology(faces, len(pos)))
    assert res.double_curve_count == 1 and res.curve_closed == [True]
    assert res.triple_point_count == 0
    (curve,) = res.polylines()
    assert np.allclose(curve[:, 0], 0.5, atol=0.01)
    radius = np.linalg.norm(curve[:, 1:], axis=1)
    assert np.allclose(radius, np.sqrt(0.75), atol=0.01)


def test_three_spheres_have_two_triple_points():
    # three unit spheres centred on an equilateral triangle of side 1 share exactly two
    # points (above and below the triangle's plane): two triple points (elementary geometry)
    p, f = surfaces.round_sphere(20)
    centres = np.array([[0, 0, 0], [1, 0, 0], [0.5, np.sqrt(3) / 2, 0]])
    turns = [np.eye(3), _turn(0.4, 0.9), _turn(1.1, 0.3)]
    pos = np.vstack([p @ t.T + c for t, c in zip(turns, centres, strict=True)])
    faces = np.vstack([f + k * len(p) for k in range(3)])
    res = self_intersections(pos, MeshTopology(faces, len(pos)))
    assert res.triple_point_count == 2
    assert np.all(res.triple_detections == 3)
    height = np.sqrt(1 - 1 / 3)  # circumradius of the triangle is 1/sqrt(3)
    z = np.sort(res.triple_points[:, 2])
    assert z == pytest.approx([-height, height], abs=0.01)
    assert res.double_curve_count == 3


@pytest.mark.parametrize("one_key", [True, False])
def test_grid_broad_phase_finds_every_overlapping_box_pair_once(one_key, monkeypatch):
    import turnabout.check.broad_phase as broad

    if not one_key:  # the two-key sort used for grids too large for one int64 key
        monkeypatch.setattr(broad, "ONE_KEY_CELLS", 0.0)
    rng = np.random.default_rng(7)
    lo = rng.random((300, 3))
    hi = lo + rng.random((300, 3)) * 0.1
    a, b = grid_candidate_pairs(lo, hi)
    found = set(zip(a.tolist(), b.tolist(), strict=True))
    assert len(found) == a.size  # no pair reported twice
    ov = np.all((np.maximum(lo[:, None], lo[None]) <= np.minimum(hi[:, None], hi[None])), axis=-1)
    i, j = np.nonzero(np.triu(ov, 1))
    assert found == set(zip(i.tolist(), j.tolist(), strict=True))


@pytest.mark.parametrize("one_key", [True, False])
@pytest.mark.parametrize("parts", [2, 3, 7, 64])
def test_the_grid_cut_into_parts_lists_the_same_pairs_in_the_same_order(parts, one_key,
                                                                        monkeypatch):  # fmt: skip
    # the parts that threads work on: joined in part order, exactly the whole grid's list
    import turnabout.check.broad_phase as broad

    if not one_key:
        monkeypatch.setattr(broad, "ONE_KEY_CELLS", 0.0)
    rng = np.random.default_rng(11)
    lo = rng.random((2000, 3)) ** 2  # crowded near one corner: unequal cells
    hi = lo + rng.random((2000, 3)) * 0.05
    grid = broad.grid_entries(lo, hi)
    whole = broad.entry_pairs(grid)
    cut = grid.parts(parts)
    assert 1 < len(cut) <= parts
    assert np.array_equal(np.sort(np.concatenate(cut)), np.arange(grid.key.size))
    joined = [broad.entry_pairs(grid, sel) for sel in cut]
    for i in range(2):
        assert np.array_equal(np.concatenate([j[i] for j in joined]), whole[i])


def test_threads_give_the_same_result_bit_for_bit():
    # a mid-motion frame of the default eversion (94,080 triangles, hundreds of triple
    # points): every array of the result is identical on 1, 2 and 3 threads
    from turnabout.eversion import Controls, evaluate, mesh_for
    from turnabout.eversion.controls import default_frames

    c = Controls()
    mesh = mesh_for(c)
    P = evaluate(c, [240 / (default_frames(c.strips) - 1)], mesh)[0]
    topo = MeshTopology(mesh.triangles(), P.shape[0])
    one = self_intersections(P, topo)
    assert one.triple_point_count > 100
    for threads in (2, 3):
        other = self_intersections(P, topo, threads=threads)
        for name in ("segments", "segment_faces", "triple_points", "triple_faces",
                     "triple_detections", "triple_coincident"):  # fmt: skip
            x, y = getattr(one, name), getattr(other, name)
            assert x.dtype == y.dtype and np.array_equal(x, y), name
        assert [list(c) for c in one.curves] == [list(c) for c in other.curves]
        assert one.curve_closed == other.curve_closed
        assert (one.candidate_pairs, one.degenerate_pairs) == (
            other.candidate_pairs, other.degenerate_pairs)  # fmt: skip
    for bad in (0, 1.5, True):
        with pytest.raises(ValueError, match="threads"):
            self_intersections(P, topo, threads=bad)


@pytest.mark.blender
def test_intersecting_pairs_are_a_subset_of_blenders_bvh_overlap(tmp_path):
    if "bpy" not in sys.modules:  # keep Blender away from the home folder
        os.environ["BLENDER_USER_RESOURCES"] = str(tmp_path)
    pytest.importorskip("bpy")
    bvhtree = pytest.importorskip("mathutils.bvhtree")
    p, f = surfaces.boy_surface(24)
    res = self_intersections(p, MeshTopology(f, len(p)))
    tree = bvhtree.BVHTree.FromPolygons(p.tolist(), f.tolist(), all_triangles=True)
    theirs = {tuple(sorted(x)) for x in tree.overlap(tree)}
    ours = {tuple(x) for x in np.sort(res.segment_faces, axis=1).tolist()}
    assert ours and ours <= theirs


def test_triple_points_closer_than_an_edge_length_stay_apart():
    # Three unit spheres whose centres' circumradius is rc share two points at heights
    # +-sqrt(1 - rc^2) (elementary geometry). With rc near 1 the two triple points are
    # 0.06 apart, about 1.3 edge lengths of this mesh: still two points, not one.
    import turnabout.check.intersections as inter

    p, f = surfaces.round_sphere(40)
    height = 0.03
    rc = np.sqrt(1 - height**2)
    ang = np.array([0.0, 2 * np.pi / 3, 4 * np.pi / 3])
    centres = np.stack([rc * np.cos(ang), rc * np.sin(ang), np.zeros(3)], axis=1)
    turns = [np.eye(3), _turn(0.4, 0.9), _turn(1.1, 0.3)]
    pos = np.vstack([p @ t.T + c for t, c in zip(turns, centres, strict=True)])
    faces = np.vstack([f + k * len(p) for k in range(3)])
    edge = np.linalg.norm(p[f[:, 0]] - p[f[:, 1]], axis=1).mean()
    assert edge < 2 * height < 3 * edge
    res = self_intersections(pos, MeshTopology(faces, len(pos)))
    assert res.triple_point_count == 2
    # one below and one above the centres' plane (the inscribed mesh shifts them: with the
    # circles meeting at a shallow angle, a chordal error e moves them by about e / height)
    low, high = np.sort(res.triple_points[:, 2])
    assert -2 * height < low < 0 < high < 2 * height
    assert inter.TRIPLE_MERGE < 1.0


def test_sheets_meeting_from_detection_counts():
    # k sheets through a point: each of the C(k, 2) double curves crosses the other k - 2
    # sheets there, so k (k - 1) (k - 2) / 2 detections (elementary counting)
    from turnabout.check.animation import sheets_meeting

    assert list(sheets_meeting(np.array([3, 12, 30, 168, 1, 2, 6]))) == [3, 4, 5, 8, 0, 0, 0]


def test_four_symmetric_spheres_meet_in_fourfold_points():
    # Four unit spheres centred at distance 1 from the origin, each the previous turned by a
    # quarter turn about z (exact in floating point), all pass through the origin and through
    # the reflection of the origin in the centres' plane z = h: two points where four sheets
    # meet, each worth C(4, 3) = 4 triple points for Banchoff's parity (elementary geometry).
    p, f = surfaces.round_sphere(24)
    p = p @ _turn(0.4, 0.9).T
    s, h = 0.8, 0.6
    quarter = np.array([[0.0, -1.0, 0.0], [1.0, 0.0, 0.0], [0.0, 0.0, 1.0]])
    sheet = p + np.array([s, 0.0, h])
    parts = [sheet]
    for _ in range(3):
        parts.append(parts[-1] @ quarter.T)
    pos = np.vstack(parts)
    faces = np.vstack([f + k * len(p) for k in range(4)])
    rep = check_animation(pos, faces)
    fr = rep.frames[0]
    assert fr.triple_point_count == 2
    assert np.allclose(np.sort(fr.triple_points[:, 2]), [0.0, 2 * h], atol=0.01)  # mesh error
    # a fact of the symmetric configuration, not a fault: a note, not a warning
    assert any("more than three sheets meet (up to 4)" in n for n in fr.notes)
    assert not any("sheets meet" in r for r in fr.reasons)
    assert not any("Banchoff" in r for r in fr.reasons)


# --------------------------------------------------------------------------- brute force


def _brute_force_segments(P: np.ndarray, faces: np.ndarray) -> dict:
    """Every pair of triangles sharing no vertex, intersected exactly the textbook way.

    For triangles T1, T2 in general position the intersection is the overlap of the two
    segments T1 n plane(T2) and T2 n plane(T1) on the line where the planes meet (common
    practice: the interval-overlap test of triangle-triangle intersection). Returns
    {(i, j): (2, 3) segment} for i < j, over all pairs (no broad phase).
    """
    m = faces.shape[0]
    i, j = np.triu_indices(m, 1)
    share = np.zeros(i.size, bool)
    for u in range(3):
        for v in range(3):
            share |= faces[i, u] == faces[j, v]
    i, j = i[~share], j[~share]
    T = P[faces]
    n = np.cross(T[:, 1] - T[:, 0], T[:, 2] - T[:, 0])
    out: dict = {}

    def cut(A, nB, pB):
        """Segment where triangles A (K, 3, 3) cross the planes (nB, pB): (K, 2, 3), ok."""
        d = np.einsum("kvi,ki->kv", A - pB[:, None], nB)
        pts = []
        for e in range(3):
            d0, d1 = d[:, e], d[:, (e + 1) % 3]
            t = d0 / np.where(d0 != d1, d0 - d1, 1.0)
            hit = (d0 > 0) != (d1 > 0)
            pts.append((hit, A[:, e] + (A[:, (e + 1) % 3] - A[:, e]) * t[:, None]))
        hits = np.stack([h for h, _ in pts], 1)
        xyz = np.stack([p for _, p in pts], 1)
        ok = hits.sum(1) == 2
        col = np.argsort(~hits, axis=1, kind="stable")[:, :2]
        return xyz[np.arange(len(A))[:, None], col], ok

    for start in range(0, i.size, 200_000):
        a, b = i[start : start + 200_000], j[start : start + 200_000]
        sa, oka = cut(T[a], n[b], T[b, 0])
        sb, okb = cut(T[b], n[a], T[a, 0])
        direction = np.cross(n[a], n[b])
        ta = np.einsum("kpi,ki->kp", sa, direction)
        tb = np.einsum("kpi,ki->kp", sb, direction)
        lo = np.maximum(ta.min(1), tb.min(1))
        hi = np.minimum(ta.max(1), tb.max(1))
        good = np.flatnonzero(oka & okb & (lo < hi))
        for k in good.tolist():
            pts = np.concatenate([sa[k], sb[k]])
            t = np.concatenate([ta[k], tb[k]])
            ends = [pts[np.argmin(np.abs(t - lo[k]))], pts[np.argmin(np.abs(t - hi[k]))]]
            out[(int(a[k]), int(b[k]))] = np.array(ends)
    return out


def _assert_same_as_brute_force(P: np.ndarray, faces: np.ndarray) -> int:
    res = self_intersections(P, MeshTopology(faces, len(P)))
    brute = _brute_force_segments(P, faces)
    ours = {tuple(map(int, f)): s for f, s in zip(res.segment_faces, res.segments, strict=True)}
    assert set(ours) == set(brute)  # same pairs
    scale = np.ptp(P, axis=0).max()
    for key, seg in ours.items():  # same segments, either way round
        other = brute[key]
        d = min(np.abs(seg - other).max(), np.abs(seg - other[::-1]).max())
        assert d < 1e-9 * scale, (key, seg, other)
    return len(ours)


def test_fast_path_matches_brute_force_on_random_triangles():
    rng = np.random.default_rng(11)
    centres = rng.random((300, 1, 3))
    P = (centres + 0.15 * rng.standard_normal((300, 3, 3))).reshape(-1, 3)
    faces = np.arange(900).reshape(300, 3)
    assert _assert_same_as_brute_force(P, faces) > 100


def test_fast_path_matches_brute_force_on_an_eversion_frame_region():
    # mid-motion frame of a coarse corrugated eversion, cropped to the triangles near its
    # axis where many sheets cross
    from turnabout.eversion import Controls, evaluate, mesh_for

    c = Controls()
    mesh = mesh_for(c, n_lon=96, n_lat=40, spacing="even")
    P = evaluate(c, [0.5], mesh)[0]
    faces = mesh.triangles()
    centre = P[faces].mean(axis=1)
    near = np.linalg.norm(centre - np.array([0.0, 0.0, 0.2]), axis=1) < 0.35
    crop = faces[near]
    used, inverse = np.unique(crop, return_inverse=True)
    crop_faces = inverse.reshape(-1, 3)
    assert 1000 < crop_faces.shape[0] < 4000
    assert _assert_same_as_brute_force(P[used], crop_faces) > 100


def _chain_reference(seg_keys: np.ndarray):
    """The chaining written as a walk, one segment at a time (the order chain_segments
    documents): a reference for the vectorised one."""
    s = seg_keys.shape[0]
    if s == 0:
        return [], []
    flat = seg_keys.ravel()
    order = np.argsort(flat, kind="stable")
    sk = flat[order]
    # each key normally appears exactly twice (two pairs share an event)
    nbr = -np.ones(2 * s, np.int64)
    same = np.flatnonzero(sk[1:] == sk[:-1])
    # only match keys that appear exactly twice
    if same.size:
        cnt_ok = np.ones(same.size, bool)
        cnt_ok &= ~np.isin(same - 1, same)
        cnt_ok &= ~np.isin(same + 1, same)
        same = same[cnt_ok]
    e1, e2 = order[same], order[same + 1]
    nbr[e1] = e2 // 2  # end slot -> neighbouring segment
    nbr[e2] = e1 // 2
    nb = nbr.reshape(s, 2).tolist()
    linked = (nbr.reshape(s, 2) >= 0).all(axis=1)  # a neighbour at both ends
    seen = bytearray(s)
    curves: list[np.ndarray] = []
    closed: list[bool] = []

    def walk(prev: int, cur: int) -> list[int]:
        """Segments after ``cur``, walking away from ``prev``."""
        out: list[int] = []
        while True:
            n0, n1 = nb[cur]
            nxt = n1 if n0 == prev else n0
            if nxt < 0 or seen[nxt]:
                return out
            seen[nxt] = 1
            out.append(nxt)
            prev, cur = cur, nxt

    for start in range(s):
        if seen[start]:
            continue
        seen[start] = 1
        n0, n1 = nb[start]
        forward = walk(n1, start)
        backward = walk(n0, start)
        ids = np.array(backward[::-1] + [start] + forward, np.int64)
        curves.append(ids)
        closed.append(ids.size > 2 and bool(linked[ids].all()))
    return curves, closed


@pytest.mark.parametrize("seed", range(4))
def test_vectorised_chaining_matches_a_walk_one_segment_at_a_time(seed):
    # random keys: paths, cycles, keys seen once (free ends) or three times (unlinked), two
    # segments sharing both keys, and a segment whose two keys are equal
    from turnabout.check.chains import chain_segments

    rng = np.random.default_rng(seed)
    for _ in range(400):
        n = int(rng.integers(1, 60))
        nk = int(rng.integers(1, 2 * n + 3))
        keys = rng.integers(0, nk, (n, 2))
        if rng.random() < 0.9:
            keys[:, 1] = np.where(keys[:, 1] == keys[:, 0], keys[:, 1] + nk, keys[:, 1])
        curves, closed = chain_segments(keys)
        want, want_closed = _chain_reference(keys)
        assert closed == want_closed
        assert [c.tolist() for c in curves] == [c.tolist() for c in want]
    # one long cycle and one long path: a single curve each, in walk order
    ring = np.column_stack([np.arange(1000), (np.arange(1000) + 1) % 1000])
    (c,), (cl,) = chain_segments(ring[rng.permutation(1000)])
    assert cl and c.size == 1000
    path = np.column_stack([np.arange(999), np.arange(1, 1000)])
    (c,), (cl,) = chain_segments(path)
    assert not cl and sorted(c.tolist()) == list(range(999))
