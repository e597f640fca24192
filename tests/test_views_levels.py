"""Level points (views, item 3): critical points of height whose outer side faces up.

Sources checked against:
- H. Hopf, "Über die Curvatura integra geschlossener Hyperflächen", Math. Annalen 95, 1926:
  the Gauss map of a closed oriented surface has degree chi / 2, and that degree is the
  signed count (by the Morse index of height) of the points whose outer normal is "up".
- T. Banchoff, "Critical points and curvature for embedded polyhedra", J. Differential
  Geometry 1, 1967: the polyhedral index 1 - (sign changes around the link) / 2, summing to
  chi over all critical vertices of a generic height.
- H. Edelsbrunner and E. Mücke, "Simulation of Simplicity", ACM Trans. Graphics 9, 1990:
  equal heights broken by vertex id.
"""

from __future__ import annotations

import json
import os
import subprocess
import sys

import numpy as np
import pytest
from level_shapes import icosphere, octahedron, subdivided_cube, torus, torus_chain

from turnabout.check.metrics import gauss_map_degree
from turnabout.check.topology import topology_report
from turnabout.eversion import Controls, evaluate, mesh_for
from turnabout.mesh import round_sphere_positions, uniform_sphere_mesh
from turnabout.meshfiles.npz import write_npz
from turnabout.views.levels import (
    BOWL,
    DOME,
    SADDLE,
    LevelPointError,
    LevelPoints,
    level_points,
)


def _random_ups(seed: int, count: int) -> list[np.ndarray]:
    v = np.random.default_rng(seed).normal(size=(count, 3))
    return list(v / np.linalg.norm(v, axis=1, keepdims=True))


def _banchoff_consistent(lp: LevelPoints) -> None:
    # Banchoff 1967: the indices of all critical vertices (up and down) sum to chi
    np.testing.assert_array_equal(lp.signed_count + lp.down_count, lp.chi)


# --- the eversion --------------------------------------------------------------------------


@pytest.fixture(scope="module")
def eversion_frames():
    controls = Controls()
    mesh = mesh_for(controls)
    times = np.linspace(0.0, 1.0, 25)  # 24 steps, includes t = 0.5
    assert np.any(times == 0.5)
    return evaluate(controls, times, mesh), mesh.triangles()


@pytest.mark.parametrize("which", ["+z", "random 0", "random 1", "random 2"])
def test_every_eversion_frame_has_signed_count_one(eversion_frames, which):
    # Hopf 1926: an immersed sphere's Gauss map has degree chi / 2 = 1 in every frame
    P, faces = eversion_frames
    up = (0.0, 0.0, 1.0) if which == "+z" else _random_ups(20261204, 3)[int(which[-1])]
    lp = level_points(P, faces, up)
    assert lp.signed_count.shape == (P.shape[0],)
    np.testing.assert_array_equal(lp.signed_count, 1)
    _banchoff_consistent(lp)
    counts = lp.kind_counts()
    # the corrugated middle frames have many level points, the signed count stays 1
    assert counts.sum(axis=1).max() > 3
    np.testing.assert_array_equal(
        counts[:, 0] + counts[:, 1] - np.bincount(
            lp.frame[lp.kind == SADDLE], weights=-lp.index[lp.kind == SADDLE],
            minlength=P.shape[0]),
        lp.signed_count,
    )  # fmt: skip


def test_every_frame_of_the_default_build_has_signed_count_one():
    # Hopf 1926, on the baked default eversion (480 float32 frames)
    from turnabout.eversion import build

    ev = build(Controls())
    lp = level_points(ev.positions, ev.faces, (0.0, 0.0, 1.0))
    assert lp.signed_count.shape == (ev.positions.shape[0],)
    np.testing.assert_array_equal(lp.signed_count, 1)
    _banchoff_consistent(lp)


def test_signed_count_agrees_with_the_checkers_gauss_map_degree(eversion_frames):
    # two independent polyhedral routes to Hopf's degree: vertex-normal solid angles
    # (checker) and level points (here)
    P, faces = eversion_frames
    lp = level_points(P, faces, _random_ups(7, 1)[0])
    degree = np.array([gauss_map_degree(P[k], faces) for k in range(P.shape[0])])
    np.testing.assert_allclose(degree, lp.signed_count, atol=0.05)


def test_level_points_of_one_frame_match_the_block(eversion_frames):
    P, faces = eversion_frames
    whole = level_points(P, faces)
    one = level_points(P[12], faces)
    part = whole.of_frame(12)
    np.testing.assert_array_equal(one.frame, part.frame)
    np.testing.assert_array_equal(one.kind_counts(), part.kind_counts())
    np.testing.assert_array_equal(one.vertex, part.vertex)
    np.testing.assert_array_equal(one.kind, part.kind)
    np.testing.assert_allclose(one.position, part.position)
    assert one.signed_count.tolist() == part.signed_count.tolist() == [1]


def test_progress_is_reported_per_chunk_and_can_cancel(eversion_frames, monkeypatch):
    from turnabout.progress import Cancelled
    from turnabout.views import levels

    P, faces = eversion_frames
    monkeypatch.setattr(levels, "_CHUNK_ELEMENTS", 5 * faces.shape[0])  # 5 frames a chunk
    calls = []
    lp = level_points(P, faces, progress=lambda d, t: calls.append((d, t)))
    assert calls == [(k, 25) for k in (5, 10, 15, 20, 25)]
    np.testing.assert_array_equal(lp.signed_count, 1)

    def stop(done, total):
        raise Cancelled

    with pytest.raises(Cancelled):
        level_points(P, faces, progress=stop)


# --- spheres, tori, higher genus -----------------------------------------------------------


@pytest.mark.parametrize("flip", [False, True])
def test_unit_sphere_has_one_level_point_either_orientation(flip):
    # Hopf 1926: degree chi / 2 = 1 for either orientation; outward: the top is a dome;
    # inward (flipped): the bottom is the point whose outer side faces up, a bowl
    mesh = uniform_sphere_mesh(32, 15)
    p, f = round_sphere_positions(mesh), mesh.triangles()
    if flip:
        f = f[:, ::-1]
    for up in [(0.0, 0.0, 1.0), *_random_ups(1, 3)]:
        lp = level_points(p, f, up)
        assert lp.signed_count.tolist() == [1]
        assert lp.kind.tolist() == [BOWL if flip else DOME]
        u = lp.up
        # the point is the extreme of height on the sphere (within one edge length)
        target = -u if flip else u
        assert np.linalg.norm(lp.position[0] - target) < 0.25
        _banchoff_consistent(lp)
    assert abs(gauss_map_degree(p, f) - 1.0) < 0.05


def _unit(colat, lon):
    return np.array([np.sin(colat) * np.cos(lon), np.sin(colat) * np.sin(lon), np.cos(colat)])


# (centre, amplitude, width): three bumps round a dent at the north pole, more elsewhere
_BUMPS = [(_unit(0.0, 0.0), -0.05, 0.2), (_unit(0.45, 0.3), 0.12, 0.25),
          (_unit(0.45, 2.4), 0.10, 0.25), (_unit(0.5, 4.3), 0.11, 0.22),
          (_unit(0.9, 1.3), -0.08, 0.2), (_unit(1.2, 3.5), 0.1, 0.2),
          (_unit(2.2, 0.5), -0.1, 0.3)]  # fmt: skip


def _bump_radius(x):
    r = np.ones(x.shape[:-1])
    for c, a, w in _BUMPS:
        r = r + a * np.exp(-np.sum((x - c) ** 2, -1) / w**2)
    return r


@pytest.fixture(scope="module")
def bumpy_sphere():
    p, f = icosphere(6)
    return p * _bump_radius(p)[:, None], f


def test_bumpy_sphere_keeps_signed_count_one(bumpy_sphere):
    # Hopf 1926: more domes, bowls and saddles, same degree chi / 2 = 1
    p, f = bumpy_sphere
    for up in [(0.0, 0.0, 1.0), *_random_ups(2, 4)]:
        lp = level_points(p, f, up)
        assert lp.signed_count.tolist() == [1]
        _banchoff_consistent(lp)
    lp = level_points(p, f)
    domes, bowls, saddles = lp.kind_counts()[0]
    assert domes > 1 and saddles >= 1 and bowls >= 1
    assert domes + bowls - saddles == 1  # all simple saddles here
    assert abs(gauss_map_degree(p, f) - 1.0) < 0.05


def _smooth_critical_points():
    """Critical points of height z on the smooth surface r(x) x over the upper hemisphere
    chart x = (a, b, sqrt(1 - a^2 - b^2)), found with scipy.optimize.root from a grid of
    starts and classified by the Hessian's eigenvalues."""
    from scipy import optimize

    def h(ab):
        a, b = ab
        z = np.sqrt(max(1.0 - a * a - b * b, 0.0))
        return _bump_radius(np.array([a, b, z])) * z

    def grad(ab, e=1e-6):
        ex, ey = np.array([e, 0.0]), np.array([0.0, e])
        return np.array([h(ab + ex) - h(ab - ex), h(ab + ey) - h(ab - ey)]) / (2 * e)

    def hess(ab, e=1e-4):
        ex, ey = np.array([e, 0.0]), np.array([0.0, e])
        return np.array([grad(ab + ex) - grad(ab - ex), grad(ab + ey) - grad(ab - ey)]) / (2 * e)

    found: list[tuple[np.ndarray, int]] = []
    g = np.linspace(-0.8, 0.8, 21)
    for a in g:
        for b in g:
            if a * a + b * b > 0.64:
                continue
            sol = optimize.root(grad, [a, b], tol=1e-12)
            x = sol.x
            if not sol.success or x @ x > 0.7 or np.linalg.norm(grad(x)) > 1e-7:
                continue
            if any(np.linalg.norm(x - q) < 1e-5 for q, _ in found):
                continue
            ev = np.linalg.eigvalsh(0.5 * (hess(x) + hess(x).T))
            kind = DOME if ev.max() < 0 else BOWL if ev.min() > 0 else SADDLE
            found.append((x, kind))
    out = []
    for (a, b), kind in found:
        q = np.array([a, b, np.sqrt(1 - a * a - b * b)])
        out.append((q * _bump_radius(q), kind))
    return out


def test_bumpy_sphere_matches_the_smooth_critical_points(bumpy_sphere):
    # the polyhedral level points (Banchoff 1967) of a fine mesh sit within a few edge lengths
    # of the smooth surface's critical points of height (found with scipy.optimize), with
    # the same kind (Morse index from the Hessian)
    p, f = bumpy_sphere
    edge = np.linalg.norm(p[f[:, 0]] - p[f[:, 1]], axis=1).mean()
    smooth = _smooth_critical_points()
    lp = level_points(p, f)
    assert len(smooth) == len(lp.kind) == 7
    for pos, kind in smooth:
        d = np.linalg.norm(lp.position - pos, axis=1)
        j = int(np.argmin(d))
        assert d[j] < 3 * edge, (pos, kind)
        assert lp.kind[j] == kind


def test_tilted_torus_has_signed_count_zero():
    # Hopf 1926: chi(torus) = 0, so as many saddles as domes and bowls facing up
    p, f = torus(96, 48)
    for up in _random_ups(5, 4):
        lp = level_points(p, f, up)
        assert lp.signed_count.tolist() == [0]
        assert lp.kind_counts()[0, 2] >= 1
        _banchoff_consistent(lp)
        assert abs(gauss_map_degree(p, f) - 0.0) < 0.05


@pytest.fixture(scope="module")
def genus_surfaces():
    return {g: torus_chain(g, spacing=0.08) for g in range(4)}


@pytest.mark.parametrize("genus", [0, 1, 2, 3])
def test_genus_g_surface_has_signed_count_one_minus_g(genus_surfaces, genus):
    # Hopf 1926: degree chi / 2 = 1 - g; the surface is checked to be a closed oriented
    # 2-manifold with V - E + F = 2 - 2 g before counting
    p, f = genus_surfaces[genus]
    edges = np.unique(np.sort(f[:, [0, 1, 1, 2, 2, 0]].reshape(-1, 2), axis=1), axis=0)
    assert len(p) - len(edges) + len(f) == 2 - 2 * genus  # V - E + F, counted here
    rep = topology_report(f, len(p))
    assert rep.is_manifold and rep.consistently_oriented and rep.components == 1
    assert rep.euler_characteristic == 2 - 2 * genus
    for up in _random_ups(10 + genus, 3):
        lp = level_points(p, f, up)
        assert lp.signed_count.tolist() == [1 - genus]
        _banchoff_consistent(lp)
    assert abs(gauss_map_degree(p, f) - (1 - genus)) < 0.05


# --- ties ----------------------------------------------------------------------------------


@pytest.mark.parametrize("shape", ["octahedron", "cube", "cube 4"])
def test_equal_heights_are_broken_consistently(shape):
    # Edelsbrunner & Mücke 1990: with (height, id) keys every axis direction, where many
    # vertices share a height, still gives Hopf's degree 1 (and Banchoff's chi = 2)
    p, f = {"octahedron": octahedron(), "cube": subdivided_cube(1),
            "cube 4": subdivided_cube(4)}[shape]  # fmt: skip
    for up in [(0, 0, 1), (0, 0, -1), (1, 0, 0), (0, -1, 0), (1, 1, 1), (1, -1, 0)]:
        lp = level_points(p, f, up)
        assert lp.signed_count.tolist() == [1], up
        _banchoff_consistent(lp)
        # the level points lie on the top face (the outer side facing up)
        u = lp.up
        top = (p @ u).max()
        assert np.allclose(lp.position @ u, top), up
    assert abs(gauss_map_degree(p, f) - 1.0) < 0.05


def test_monkey_saddle_counts_with_multiplicity():
    # Banchoff 1967: six sign changes around the link give index 1 - 6/2 = -2; Hopf 1926:
    # the signed count stays 1, so the monkey saddle counts twice (z = 1 + a Re(e^(i alpha)
    # (x + i y)^3) (1 - x^2)(1 - y^2) on the top of a cube, a monkey saddle at the centre)
    p, f = subdivided_cube(20)
    x, y = p[:, 0], p[:, 1]
    top = (p[:, 2] == 1.0) & (np.abs(x) < 1) & (np.abs(y) < 1)
    cubic = np.real(np.exp(0.3j) * (x + 1j * y) ** 3) * (1 - x * x) * (1 - y * y)
    p = p.copy()
    p[top, 2] += 0.3 * cubic[top]
    lp = level_points(p, f)
    assert lp.signed_count.tolist() == [1]
    _banchoff_consistent(lp)
    centre = int(np.argmin(np.linalg.norm(p - [0.0, 0.0, 1.0], axis=1)))
    j = lp.vertex.tolist().index(centre)
    assert lp.kind[j] == SADDLE and lp.index[j] == -2
    domes, bowls, saddles = lp.kind_counts()[0]
    multiplicity = -lp.index[lp.kind == SADDLE].sum()
    assert multiplicity == saddles + 1
    assert domes + bowls - multiplicity == 1
    assert abs(gauss_map_degree(p, f) - 1.0) < 0.05


# --- an independent link walk --------------------------------------------------------------


def _reference_by_link_walk(p, f, up):
    """Slow reference: walk each vertex's ordered link, count sign changes of height (ties by
    id), and decide up / down from the winding of the projected link (angles summed), else
    the star's projected area. Returns {vertex: index} of the points facing up and the sum
    of all indices."""
    u = np.asarray(up, float) / np.linalg.norm(up)
    h = p @ u
    key = lambda i: (h[i], i)  # noqa: E731
    nxt: dict[int, dict[int, int]] = {}
    for a, b, c in f.tolist():
        for v, x, y in ((a, b, c), (b, c, a), (c, a, b)):
            nxt.setdefault(v, {})[x] = y
    ups, total = {}, 0
    e1 = np.cross(u, [1.0, 0, 0] if abs(u[0]) < 0.9 else [0, 1.0, 0])
    e1 /= np.linalg.norm(e1)
    e2 = np.cross(u, e1)
    for v, succ in nxt.items():
        start = next(iter(succ))
        ring = [start]
        while succ[ring[-1]] != start:
            ring.append(succ[ring[-1]])
        assert len(ring) == len(succ)
        above = [key(w) > key(v) for w in ring]
        changes = sum(above[i] != above[i - 1] for i in range(len(ring)))
        index = 1 - changes // 2
        if index == 0:
            continue
        total += index
        d = p[ring] - p[v]
        xy = np.stack([d @ e1, d @ e2], 1)
        cross = [xy[i - 1, 0] * xy[i, 1] - xy[i - 1, 1] * xy[i, 0] for i in range(len(ring))]
        ang = [np.arctan2(cross[i], xy[i - 1] @ xy[i]) for i in range(len(ring))]
        wind = round(sum(ang) / (2 * np.pi))
        area = sum(cross)
        if (wind > 0) if wind != 0 else (area > 0):
            ups[v] = index
    return ups, total


@pytest.mark.parametrize("surface", ["bumpy", "genus 2"])
def test_face_counting_matches_a_link_walk(surface):
    # Banchoff 1967 computed literally: sign changes around each ordered link
    if surface == "bumpy":
        p, f = icosphere(3)
        p = p * _bump_radius(p)[:, None]
    else:
        p, f = torus_chain(2, spacing=0.15)
    for up in _random_ups(30, 2):
        ref, total = _reference_by_link_walk(p, f, up)
        lp = level_points(p, f, up)
        assert total == lp.chi
        assert dict(zip(lp.vertex.tolist(), lp.index.tolist(), strict=True)) == ref
        assert lp.signed_count[0] == sum(ref.values())


# --- bad input -----------------------------------------------------------------------------


@pytest.fixture(scope="module")
def small_sphere():
    return icosphere(2)


@pytest.mark.parametrize(
    ("up", "words"),
    [((0, 0, 0), "non-zero"), ((0, np.nan, 1), "finite"), ((0, np.inf, 1), "finite"),
     ((0, 1), "three numbers"), ("up", "three numbers")],
)  # fmt: skip
def test_bad_up_vector_is_refused(small_sphere, up, words):
    p, f = small_sphere
    with pytest.raises(LevelPointError, match=words):
        level_points(p, f, up)


def test_open_mesh_is_refused(small_sphere):
    p, f = small_sphere
    with pytest.raises(LevelPointError, match="open .*boundary edges"):
        level_points(p, f[1:])


def test_non_manifold_mesh_is_refused(small_sphere):
    p, f = small_sphere
    # a second sphere glued on by one shared vertex: every edge has two faces, but that
    # vertex's faces form two disks
    q = p + np.array([2.0, 0.0, 0.0])
    shared = int(np.argmax(p[:, 0]))
    other = int(np.argmin(q[:, 0]))
    g = f + len(p)
    g[g == other + len(p)] = shared
    with pytest.raises(LevelPointError, match="not a 2-manifold"):
        level_points(np.concatenate([p, q]), np.concatenate([f, g]))
    # an edge in three faces
    with pytest.raises(LevelPointError, match="not a 2-manifold|open"):
        level_points(p, np.concatenate([f, [[f[0, 0], f[0, 1], f[5, 2]]]]))


def test_inconsistent_orientation_and_bad_shapes_are_refused(small_sphere):
    p, f = small_sphere
    g = f.copy()
    g[0] = g[0, ::-1]
    with pytest.raises(LevelPointError, match="not consistently oriented"):
        level_points(p, g)
    with pytest.raises(LevelPointError, match=r"\(V, 3\) or \(F, V, 3\)"):
        level_points(p[:, :2], f)
    bad = p.copy()
    bad[3, 1] = np.nan
    with pytest.raises(LevelPointError, match="NaN .*vertex 3"):
        level_points(bad, f)
    with pytest.raises(LevelPointError, match="vertex index"):
        level_points(p[:10], f)


# --- the checker ---------------------------------------------------------------------------


def _run_cli(*args):
    env = dict(os.environ)
    return subprocess.run([sys.executable, "-m", "turnabout.cli", "check", *args],
                          capture_output=True, text=True, timeout=300, env=env)  # fmt: skip


def test_check_command_reports_level_points_per_frame(tmp_path):
    # Hopf 1926: each frame of a breathing sphere has signed count chi / 2 = 1
    p, f = icosphere(3)
    scale = 1.0 + 0.2 * np.sin(np.linspace(0, np.pi, 5))
    stretch = np.array([1.0, 1.0, 0.6])
    pos = p[None] * scale[:, None, None] * stretch
    path = write_npz(tmp_path / "breathe.npz", pos, f)
    out = tmp_path / "r.json"
    table = tmp_path / "r.csv"
    proc = _run_cli(str(path), "--json", str(out), "--csv", str(table), "--up", "1,2,3",
                    "--no-intersections", "--quiet")  # fmt: skip
    assert proc.returncode == 0, proc.stderr
    data = json.loads(out.read_text())
    assert data["level_up"] == pytest.approx(list(np.array([1, 2, 3]) / np.sqrt(14)))
    for fr in data["frames"]:
        assert fr["level_signed_count"] == 1
        assert fr["dome_count"] - fr["saddle_count"] + fr["bowl_count"] >= 1
    header = table.read_text().splitlines()[0].split(",")
    assert {"level_signed_count", "dome_count", "bowl_count", "saddle_count"} <= set(header)


@pytest.mark.parametrize(
    ("value", "words"), [("0,0,0", "non-zero"), ("1,nan,0", "finite"), ("1,2", "three")]
)
def test_check_command_refuses_a_bad_up_before_reading(tmp_path, value, words):
    proc = _run_cli(str(tmp_path / "missing.npz"), "--up", value, "--quiet")
    assert proc.returncode == 2
    assert "--up" in proc.stderr and words in proc.stderr
    assert "Traceback" not in proc.stderr


def test_checker_warns_where_the_signed_count_is_not_half_chi():
    # a sphere crumpled at a third of its edge length: vertex stars fold over, and in some
    # frames the level points no longer count Hopf's degree chi / 2 = 1; the checker says so
    from turnabout.check import check_animation

    p, f = icosphere(3)
    rng = np.random.default_rng(0)
    pos = p[None] + 0.05 * rng.normal(size=(12, *p.shape))
    pos[0] = p

    def counts(positions, faces):
        lp = level_points(positions, faces, (0, 0, 1))
        return np.column_stack([lp.signed_count, lp.kind_counts()])

    rep = check_animation(pos, f, intersections=False, level_counts=counts, level_up=(0, 0, 1))
    assert rep.level_up == (0.0, 0.0, 1.0)
    signed = np.array([fr.level_signed_count for fr in rep.frames])
    assert signed[0] == 1 and np.any(signed != 1)
    for fr in rep.frames:
        flagged = any("chi/2 = 1" in r and "level points" in r for r in fr.reasons)
        assert flagged == (fr.level_signed_count != 1)
        if flagged:
            assert fr.verdict in ("warn", "fail")
    table = rep.metrics_table()
    np.testing.assert_array_equal(table["level_signed_count"], signed)
    # without a counter the columns are absent from the table and null in the JSON
    plain = check_animation(pos[:2], f, intersections=False)
    assert "level_signed_count" not in plain.metrics_table()
    assert plain.to_dict()["frames"][0]["level_signed_count"] is None
    assert plain.to_dict()["level_up"] is None
