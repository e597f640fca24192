"""The frame evaluator puts every vertex where the documented formula says, at mid-motion.

Two independent references: ``construction.surface`` (the kernel the regularity scan
certifies) and a re-implementation of the formula written here from the text of
docs/eversion.md (sections 1, 3, 4 and 5), with its own quadrature and root finding.
"""

from __future__ import annotations

import numpy as np
import pytest
from references import require

from turnabout.eversion import Controls
from turnabout.eversion.construction import FrameEvaluator, surface
from turnabout.mesh import uniform_sphere_mesh

brentq = require("scipy.optimize").brentq

MID_TIMES = (0.2, 0.3, 0.41, 0.5, 0.6, 0.7, 0.85)
# an odd number of longitudes, so no sample sits on a symmetry line of the strips
MESH = uniform_sphere_mesh(41, 23)


# --------------------------------------------------------------- the formula from the docs

# docs/eversion.md, sections 3 and 5: the shape of chi, the figure-eight aspect, the fade
# latitudes, the turn shares of the motion stages; section 5's table: depth 0.16 for 8 strips
DOC_RATIOS = (1.0, 0.1678, -0.1691)
DOC_ASPECT = 0.53
DOC_FULL_LAT, DOC_END_LAT = 0.9, 1.3
DOC_SHARES = {"swap": 0.4, "twist": 0.2, "tuck": 0.4}
DOC_DEPTH_8 = 0.16


def _quintic(x):
    """The quintic smooth step 6x^5 - 15x^4 + 10x^3 on [0, 1], clamped."""
    x = np.clip(x, 0.0, 1.0)
    return 10 * x**3 - 15 * x**4 + 6 * x**5


def _chi_profile(lat):
    lat = np.asarray(lat, np.float64)
    return sum(r * np.sin(2 * (k + 1) * lat) for k, r in enumerate(DOC_RATIOS))


def _closing_amplitude() -> float:
    """X: the first root of mean(cos chi) = 0 over a period (pi) of chi = -X profile.

    The mean of a periodic analytic function is exact to rounding with the trapezoid rule on
    enough equal steps; the first root is bracketed by scanning X upwards.
    """
    lat = np.pi * np.arange(2048) / 2048

    def mean_cos(x):
        return float(np.mean(np.cos(-x * _chi_profile(lat))))

    xs = np.linspace(0.5, 4.0, 351)
    vals = np.array([mean_cos(x) for x in xs])
    i = int(np.flatnonzero(np.sign(vals[1:]) != np.sign(vals[:-1]))[0])
    return brentq(mean_cos, xs[i], xs[i + 1], xtol=1e-15, rtol=1e-15)


X_DOC = _closing_amplitude()
GL_NODES, GL_WEIGHTS = np.polynomial.legendre.leggauss(60)


def _offset_integral(lat):
    """G(lat) = int_0^lat E, E = cos(chi) e_y + sin(chi) n0: (L, 3) by Gauss-Legendre."""
    lat = np.asarray(lat, np.float64)
    s = 0.5 * lat[:, None] * (GL_NODES[None] + 1.0)  # (L, 60) nodes on [0, lat]
    w = 0.5 * lat[:, None] * GL_WEIGHTS[None]
    ch = -X_DOC * _chi_profile(s)
    ex = np.sin(ch) * np.cos(s)
    ey = np.cos(ch)
    ez = np.sin(ch) * np.sin(s)
    return np.stack([(w * ex).sum(1), (w * ey).sum(1), (w * ez).sum(1)], -1)


def _rodrigues(k, angle, v):
    """Rotate the rows of v about the unit rows of k by ``angle`` (Rodrigues' formula)."""
    c, s = np.cos(angle), np.sin(angle)
    kv = np.einsum("ij,ij->i", k, v)[:, None]
    return v * c + np.cross(k, v) * s + k * kv * (1 - c)


def _docs_state(controls: Controls, t: float):
    """(turn p / pi, wave amplitude) at time t: each motion stage drives its share of the
    turn, eased by the quintic step in its own window; the waves grow in ripple and are
    removed in calm."""
    tm = controls.timing

    def eased(name):
        a, b = tm[name]
        return float(_quintic((t - a) / (b - a)))

    turn = min(1.0, sum(share * eased(name) for name, share in DOC_SHARES.items()))
    return turn, eased("ripple") * (1.0 - eased("calm"))


def _docs_frame(lat, turn: float):
    """Guide g, unit tangent T, wave axis and side along the guide, each (L, 3)."""
    lat = np.asarray(lat, np.float64)
    p = np.pi * turn
    zero = np.zeros_like(lat)
    g0 = np.stack([np.cos(lat), zero, np.sin(lat)], -1)  # round meridian = its normal n0
    t0 = np.stack([-np.sin(lat), zero, np.cos(lat)], -1)
    ey = np.array([0.0, 1.0, 0.0])
    ch = -X_DOC * _chi_profile(lat)
    e = np.cos(ch)[:, None] * ey + np.sin(ch)[:, None] * g0
    c_x = _offset_integral(np.array([np.pi / 2]))[0, 0]
    offset = _offset_integral(lat) - np.array([c_x, 0.0, 0.0])
    g = np.cos(p) * g0 + np.sin(p) * offset
    tangent = np.cos(p) * t0 + np.sin(p) * e
    beta = 2.0 * ch * float(_quintic(turn))
    w = np.cos(beta)[:, None] * ey + np.sin(beta)[:, None] * g0
    axis = _rodrigues(np.cross(t0, e), p, w)
    # the docs name the normal-plane frame (side, axis) but not its handedness: side =
    # T x axis, pinned by section 7's measured components of u (see the test below)
    side = np.cross(tangent, axis)
    return g, tangent, axis, side


def docs_surface(controls: Controls, t: float, theta, lat, depth: float, strips: int):
    """F(theta, lat, t) = R(theta) [g + W], W = d (sin s side - (a/2) sin 2s axis), s = n
    theta, d = depth x waves x (1 - quintic step in lat^2 from 0.9^2 to 1.3^2): (L, M, 3)."""
    turn, waves = _docs_state(controls, t)
    lat = np.asarray(lat, np.float64)
    g, _, axis, side = _docs_frame(lat, turn)
    fade = _quintic((lat**2 - DOC_FULL_LAT**2) / (DOC_END_LAT**2 - DOC_FULL_LAT**2))
    d = depth * waves * (1.0 - fade)
    s = strips * np.asarray(theta, np.float64)
    across, along = np.sin(s), -0.5 * DOC_ASPECT * np.sin(2 * s)
    local = g[:, None] + d[:, None, None] * (
        across[None, :, None] * side[:, None] + along[None, :, None] * axis[:, None]
    )
    ct, st = np.cos(s / strips), np.sin(s / strips)
    x, y = local[..., 0], local[..., 1]
    return np.stack([ct * x - st * y, st * x + ct * y, local[..., 2]], -1)


# --------------------------------------------------------------- tests


def _evaluator_grid(controls: Controls, t: float):
    out = FrameEvaluator(controls, MESH)(t)
    return out, out[1:-1].reshape(MESH.n_lat, MESH.n_lon, 3)


def test_the_docs_closing_amplitude_is_the_first_zero_of_j0_for_the_plain_shape():
    # The reference's root finder against a published value: for chi = -X sin(2 lat) the
    # mean of cos(chi) is J0(X) (Jacobi-Anger), whose first zero is 2.404825557695773
    # (Abramowitz and Stegun, "Handbook of Mathematical Functions", 1964, table 9.5).
    jn_zeros = require("scipy.special").jn_zeros

    lat = np.pi * np.arange(2048) / 2048
    root = brentq(lambda x: np.mean(np.cos(-x * np.sin(2 * lat))), 2.0, 3.0, xtol=1e-15)
    assert root == pytest.approx(float(jn_zeros(0, 1)[0]), abs=1e-13)
    assert 1.0 < X_DOC < 4.0


def test_the_docs_side_direction_matches_the_measured_components_of_u():
    # docs/eversion.md section 7, measured at the peak (8 strips, t = 0.526, lat -20.5 deg):
    # u = e_z x g has 0.37 along side, -0.05 along the axis and 0.12 along the guide. This
    # pins the handedness of (side, axis) that the reference above assumes.
    turn, _ = _docs_state(Controls(strips=8), 0.526)
    g, tangent, axis, side = _docs_frame(np.array([np.radians(-20.5)]), turn)
    u = np.cross([0.0, 0.0, 1.0], g[0])
    assert float(u @ side[0]) == pytest.approx(0.37, abs=0.01)
    assert float(u @ axis[0]) == pytest.approx(-0.05, abs=0.01)
    assert float(u @ tangent[0]) == pytest.approx(0.12, abs=0.01)


@pytest.mark.parametrize("t", MID_TIMES)
def test_frame_evaluator_agrees_with_the_certified_surface_kernel(t):
    controls = Controls(strips=8)
    out, grid = _evaluator_grid(controls, t)
    ref = surface(controls, t, MESH.theta, MESH.lat)
    np.testing.assert_allclose(grid, ref, rtol=0, atol=1e-12)
    poles = surface(controls, t, np.array([0.0]), np.array([-np.pi / 2, np.pi / 2]))[:, 0]
    np.testing.assert_allclose(out[[0, -1]], poles, rtol=0, atol=1e-12)


@pytest.mark.parametrize("strips", [8, 11])
@pytest.mark.parametrize("t", MID_TIMES)
def test_frame_evaluator_agrees_with_the_formula_written_from_the_docs(t, strips):
    controls = Controls(strips=strips)
    if strips == 8:
        assert controls.wave_depth == DOC_DEPTH_8
    out, grid = _evaluator_grid(controls, t)
    ref = docs_surface(controls, t, MESH.theta, MESH.lat, controls.wave_depth, strips)
    # the waves are present and move the surface well off the guide: the comparison sees
    # the figure-eight term (its axis part alone is up to a d / 2 = 0.04 at 8 strips)
    turn, waves = _docs_state(controls, t)
    assert waves == 1.0
    np.testing.assert_allclose(grid, ref, rtol=0, atol=1e-12)
    poles = docs_surface(controls, t, [0.0], [-np.pi / 2, np.pi / 2], controls.wave_depth,
                         strips)[:, 0]  # fmt: skip
    np.testing.assert_allclose(out[[0, -1]], poles, rtol=0, atol=1e-12)
