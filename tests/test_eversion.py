"""The corrugated eversion: end states, symmetry, derivatives, controls and output."""

from __future__ import annotations

import os

import numpy as np
import pytest
from references import require

from turnabout.cli import main
from turnabout.eversion import ControlError, Controls, build, check_resolution, evaluate
from turnabout.eversion import construction as C
from turnabout.eversion.regularity import scan, scan_times
from turnabout.mesh import round_sphere_positions, uniform_sphere_mesh

SMALL = uniform_sphere_mesh(96, 47)


def _signed_volume(P, faces):
    a, b, c = P[faces[:, 0]], P[faces[:, 1]], P[faces[:, 2]]
    return np.einsum("ij,ij->i", a, np.cross(b, c)).sum() / 6.0


def test_time_zero_is_the_round_unit_sphere_with_outward_orientation():
    P = evaluate(Controls(), [0.0], SMALL)[0]
    assert np.allclose(P, round_sphere_positions(SMALL), atol=1e-12)
    assert _signed_volume(P, SMALL.triangles()) > 0


def test_final_frame_is_the_sphere_with_reversed_orientation():
    P0, P1 = evaluate(Controls(), [0.0, 1.0], SMALL)
    assert np.allclose(np.linalg.norm(P1, axis=1), 1.0, atol=1e-12)
    faces = SMALL.triangles()
    # the antipodal map reverses orientation: signed volume changes sign
    assert np.isclose(_signed_volume(P1, faces), -_signed_volume(P0, faces), rtol=1e-12)


def test_volume_of_the_first_frame_approaches_four_thirds_pi():
    # Volume of the unit ball 4*pi/3 (Archimedes); an inscribed mesh converges as O(h^2).
    errs = []
    for n in (32, 64, 128):
        m = uniform_sphere_mesh(n, n // 2 - 1)
        P = evaluate(Controls(), [0.0], m)[0]
        errs.append(abs(_signed_volume(P, m.triangles()) - 4 * np.pi / 3))
    assert errs[0] > errs[1] > errs[2]
    assert errs[1] / errs[2] > 3.0  # second order: halving h divides the error by ~4


@pytest.mark.parametrize("strips", [8, 11, 16])
def test_every_frame_is_invariant_under_rotation_by_one_strip(strips):
    ctl = Controls(strips=strips)
    m = uniform_sphere_mesh(8 * strips, 31)
    for t in (0.1, 0.33, 0.5, 0.68, 0.9):
        P = evaluate(ctl, [t], m)[0]
        ring = P[1:-1].reshape(m.n_lat, m.n_lon, 3)
        a = 2 * np.pi / strips
        rot = np.array([[np.cos(a), -np.sin(a), 0], [np.sin(a), np.cos(a), 0], [0, 0, 1]])
        shifted = np.roll(ring, -(m.n_lon // strips), axis=1)  # theta + 2 pi / n
        assert np.abs(shifted - ring @ rot.T).max() < 1e-6


def test_jacobian_matches_finite_differences():
    ctl = Controls()
    theta = np.linspace(0.01, 2 * np.pi, 37)
    lat = np.linspace(-1.5, 1.5, 29)
    h = 1e-6
    for t in (0.05, 0.3, 0.45, 0.62, 0.7, 0.95):
        F, Ft, Fl = C.jacobian(ctl, t, theta, lat)
        assert np.allclose(F, C.surface(ctl, t, theta, lat), atol=1e-14)
        fd_t = (C.surface(ctl, t, theta + h, lat) - C.surface(ctl, t, theta - h, lat)) / (2 * h)
        fd_l = (C.surface(ctl, t, theta, lat + h) - C.surface(ctl, t, theta, lat - h)) / (2 * h)
        scale = 1 + np.abs(Fl).max()
        assert np.abs(fd_t - Ft).max() < 1e-6 * scale
        assert np.abs(fd_l - Fl).max() < 1e-6 * scale


def test_motion_has_continuous_velocity_at_stage_boundaries():
    ctl = Controls()
    theta, lat = np.linspace(0, 2 * np.pi, 24), np.linspace(-1.4, 1.4, 15)
    h = 1e-6
    for t in scan_times(ctl, 2)[1:-1]:
        v_left = (C.surface(ctl, t, theta, lat) - C.surface(ctl, t - h, theta, lat)) / h
        v_right = (C.surface(ctl, t + h, theta, lat) - C.surface(ctl, t, theta, lat)) / h
        # a velocity jump would be O(1); one-sided differences differ by O(h * acceleration)
        assert np.abs(v_left - v_right).max() < 1e-3 * (1 + np.abs(v_left).max())


@pytest.mark.parametrize(
    "kwargs, option",
    [
        ({"strips": 3}, "strips"),
        ({"strips": 8.0}, "strips"),
        ({"strips": "8"}, "strips"),
        ({"depth": 0.9}, "depth"),
        ({"depth": float("nan")}, "depth"),
        ({"depth": float("inf")}, "depth"),
        ({"timing": {**Controls().timing, "swap": (0.5, 0.4)}}, "swap"),
        ({"timing": {**Controls().timing, "calm": (0.9, 1.2)}}, "calm"),
        ({"timing": {**Controls().timing, "twist": (0.05, 0.2)}}, "twist"),
        ({"timing": {**Controls().timing, "tuck": (float("nan"), 0.9)}}, "tuck start"),
    ],
)
def test_bad_controls_are_refused_naming_the_option(kwargs, option):
    with pytest.raises(ControlError) as exc:
        Controls(**kwargs)
    assert exc.value.option == option
    assert option in str(exc.value)


def test_too_coarse_resolution_and_too_few_frames_are_refused():
    with pytest.raises(ControlError, match="samples per wave"):
        check_resolution(Controls(), 40, 64)
    with pytest.raises(ControlError, match="frames"):
        build(Controls(), frames=1, mesh=SMALL)


def test_huge_resolutions_are_refused_before_anything_is_sampled():
    from turnabout.eversion import mesh_for

    for kw, option in (
        ({"n_lat": 10**9}, "lat"),
        ({"n_lon": 8 * 10**8}, "lon"),
        ({"n_lon": 8000, "n_lat": 4000}, "lon x lat"),
    ):
        with pytest.raises(ControlError, match=option):
            mesh_for(Controls(), **kw)


def test_same_inputs_give_byte_identical_npz(tmp_path):
    a, b = tmp_path / "a.npz", tmp_path / "b.npz"
    args = ["build", "--frames", "3", "--lon", "64", "--lat", "31", "--quiet"]
    assert main([*args, "--out", str(a)]) == 0
    assert main([*args, "--out", str(b)]) == 0
    assert a.read_bytes() == b.read_bytes()
    with np.load(a, allow_pickle=False) as z:
        assert z["positions"].shape == (3, 64 * 31 + 2, 3) and z["positions"].dtype == np.float32
        assert z["faces"].dtype == np.int32 and z["faces"].shape[1] == 3
        assert z["uv"].shape == (64 * 31 + 2, 2) and z["times"].dtype == np.float64
    # written through a temporary file, but with the permissions open() would have given
    mask = os.umask(0o022)
    os.umask(mask)
    assert a.stat().st_mode & 0o777 == 0o666 & ~mask


@pytest.mark.parametrize(
    "extra",
    [
        ["--strips", "5"],
        ["--depth", "2"],
        ["--swap", "0.6,0.2"],
        ["--frames", "1"],
        ["--lon", "24"],
        ["--depth", "nan"],
    ],
)
def test_cli_refuses_bad_input_without_writing_a_file(tmp_path, capsys, extra):
    out = tmp_path / "x.npz"
    assert main(["build", "--quiet", "--out", str(out), *extra]) == 2
    assert not out.exists()
    assert "turnabout build:" in capsys.readouterr().err


@pytest.mark.parametrize("fmt", ["obj", "ply"])
def test_frame_folder_outputs_read_back_as_the_npz_geometry(tmp_path, fmt):
    # The frames read back by trimesh (an outside reader) and by ours carry the npz output's
    # positions to the written precision (9 significant digits, float32 in binary PLY) and
    # its faces; the first and last frames are the unit sphere.
    from turnabout.meshfiles import read_sequence

    trimesh = require("trimesh")

    args = ["build", "--quiet", "--frames", "2", "--lon", "64", "--lat", "17"]
    assert main([*args, "--format", fmt, "--out", str(tmp_path / fmt)]) == 0
    assert main([*args, "--out", str(tmp_path / "ref.npz")]) == 0
    ref = read_sequence(tmp_path / "ref.npz")
    files = sorted((tmp_path / fmt).glob(f"*.{fmt}"))
    assert len(files) == 2
    ours = read_sequence(tmp_path / fmt)
    np.testing.assert_allclose(ours.positions, ref.positions, rtol=0, atol=1e-8)
    assert np.array_equal(ours.triangles(), ref.triangles())
    for k, path in enumerate(files):
        m = trimesh.load(path, process=False)
        np.testing.assert_allclose(m.vertices, ref.positions[k], rtol=0, atol=1e-8)
        assert np.array_equal(m.faces, ref.triangles())
        np.testing.assert_allclose(np.linalg.norm(m.vertices, axis=1), 1.0, atol=1e-6)


def test_scan_reports_the_round_sphere_ratio_as_one_at_time_zero():
    rep = scan(Controls(), n_theta=64, n_lat=33, n_times=2, curvature=True)
    assert np.isclose(rep.ratio_per_time[0], 1.0, atol=1e-6)
    assert np.isclose(rep.curvature_per_time[0], 1.0, atol=1e-3)  # unit sphere: k = 1/R
    assert rep.pole_min_ratio > 0.99


def test_guide_closes_on_the_axis_at_the_first_zero_of_j0():
    # The guide's ends lie on the axis iff J0(X) = 0; X is the first zero of J0
    # (Abramowitz and Stegun, Handbook of Mathematical Functions, 1964, table 9.5),
    # checked against scipy's Bessel zeros.
    special = require("scipy.special")
    j01 = special.jn_zeros(0, 1)[0]
    assert np.isclose(C.J0_FIRST_ZERO, j01, rtol=0, atol=1e-15)
    # the closure solver, given chi = -X sin(2 lat), finds the same root
    assert np.isclose(C.guide_shape((1.0,)).amplitude, j01, rtol=0, atol=1e-13)
    for turn in np.linspace(0.0, 1.0, 11):
        g, _ = C.guide_and_tangent(np.array([-np.pi / 2, np.pi / 2]), C.StageState(turn, 1.0))
        assert np.abs(g[:, :2]).max() < 1e-15


def test_guide_offset_curve_integrates_its_tangent():
    # G' = cos(chi) e_y + sin(chi) n0 (complex step against the closed-form integrand)
    lat = np.linspace(-1.5, 1.5, 31)
    h = 1e-30
    dG = C.guide_offset_curve(lat + 1j * h).imag / h
    ch = C.chi(lat)
    n0 = np.stack([np.cos(lat), 0 * lat, np.sin(lat)], -1)
    e = np.cos(ch)[:, None] * np.array([0.0, 1.0, 0.0]) + np.sin(ch)[:, None] * n0
    assert np.abs(dG - e).max() < 1e-13


@pytest.mark.parametrize("strips", range(8, 17))
def test_coarse_scan_is_regular_for_every_documented_strip_count(strips):
    # coarse version of the full check in the README (720 x 361 x 400)
    rep = scan(Controls(strips=strips), n_theta=12 * strips, n_lat=61, n_times=60, curvature=False)
    assert rep.min_ratio >= 0.05
    assert rep.pole_min_ratio > 0.99


@pytest.mark.parametrize("strips", [8, 11])
def test_every_frame_has_the_half_turn_that_swaps_the_caps(strips):
    # Besides the n-fold turn, every frame is fixed by the half-turn about a horizontal axis
    # at angle pi / (2 n): the caps' opposite turns and the odd chi make the motion
    # symmetric under (theta, lat) -> (pi / n - theta, -lat). The vertex set maps to itself.
    from scipy.spatial import cKDTree

    ctl = Controls(strips=strips)
    m = uniform_sphere_mesh(16 * strips, 63)
    a = np.pi / strips
    half = np.array([[np.cos(a), np.sin(a), 0], [np.sin(a), -np.cos(a), 0], [0, 0, -1]])
    for t in (0.2, 0.45, 0.6, 0.8):
        P = evaluate(ctl, [t], m)[0]
        d, _ = cKDTree(P).query(P @ half.T)
        assert d.max() < 1e-9
