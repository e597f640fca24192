"""The corrugated eversion in closed form.

Notation (derivation in docs/eversion.md):

    F(theta, lat, t) = R(theta) [ g(lat, t) + W(n theta, lat, t) ]

``R(theta)`` is the rotation by theta about the vertical axis, ``g`` the *guide*: the
meridian curve at theta = 0, and ``W`` the corrugation: a figure-eight cross-section
in the guide's normal plane, of period 2 pi / n in theta, so every frame has exact
n-fold symmetry about the axis.

The guide, written with its horizontal part as (X, Y) and height Z:

    X + iY = rad(lat, t) * [ (1 - k) e^{i a(lat, t)} - k ]
    Z      = p(t) sin(lat) + q(t) sin(lat) cos(lat)^M

* ``swap`` drives p from 1 to -1 (the caps change places along the axis) while q grows
  and keeps dZ/dlat > 0 at the equator: the profile stays regular and forms the belt loop;
  a bulge of the radius ``rad = cos(lat) (1 + e cos(lat)^K)`` keeps that loop round.
* ``twist`` turns the caps by +pi (south) and -pi (north): the azimuth a(lat, t).
* ``tuck`` blends the twisted guide towards the antipodal meridian (k from 0 to 1):
  the equator passes through the centre at k = 1/2, at the same moment as the belt loop
  closes (q = -p there), and q dies away.
* ``ripple`` and ``calm`` switch the corrugation on and off.

Every function of latitude here is complex-analytic, so derivatives in latitude are
taken by complex step (exact to rounding), and derivatives in theta are analytic.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from ..mesh import SphereMesh, uniform_sphere_mesh
from .controls import Controls

# Shape constants of the construction (dimensionless; see docs/eversion.md).
BELT_EXPONENT = 4  # M: how far the belt-forming term reaches from the equator
BELT_HEIGHT = 2.5  # q at the end of the swap
BULGE = 0.8  # e at the end of the swap: outward bulge that keeps the belt loop round
BULGE_EXPONENT = 6  # K
TWIST_EDGE = 1.35  # latitude (rad) beyond which the caps turn rigidly
TWIST_EQUATOR_SHARE = 0.15  # share of the twist spread evenly over latitude
WAVE_ASPECT = 1.0  # back-and-forth amplitude of the figure-eight, relative to depth / 2
AXIS_LIFT = 0.2  # vertical bias of the wave axis while the guide is near the axis
WAVE_FULL_LAT = 0.6  # |lat| (rad) below which the waves have full depth
WAVE_END_LAT = 1.1  # |lat| (rad) beyond which there are no waves
COMPLEX_STEP = 1e-30


def ease(x):
    """Quintic smooth step on [0, 1] (zero velocity and acceleration at both ends); real x."""
    x = np.clip(x, 0.0, 1.0)
    return x * x * x * (x * (6.0 * x - 15.0) + 10.0)


def window(t: float, span: tuple[float, float]) -> float:
    a, b = span
    return float(ease((t - a) / (b - a)))


def _step(x, a: float, b: float):
    """Quintic smooth step in x from a to b; complex-analytic (branch chosen on Re x)."""
    y = (x - a) / (b - a)
    poly = y * y * y * (y * (6.0 * y - 15.0) + 10.0)
    xr = np.real(x)
    return np.where(xr <= a, 0.0 * y, np.where(xr >= b, 0.0 * y + 1.0, poly))


def _step_d(x, a: float, b: float):
    """d/dx of :func:`_step`."""
    y = (x - a) / (b - a)
    poly = 30.0 * y * y * (y - 1.0) * (y - 1.0) / (b - a)
    xr = np.real(x)
    return np.where((xr <= a) | (xr >= b), 0.0 * y, poly)


def _dot(a, b):
    return (a * b).sum(-1)


@dataclass(frozen=True)
class StageState:
    """Where each stage stands at one time t (all in [0, 1])."""

    swap: float
    twist: float
    tuck: float
    bulge: float
    lift: float
    waves: float


def stage_state(controls: Controls, t: float) -> StageState:
    tm = controls.timing
    s0, s1 = tm["swap"]
    w0, w1 = tm["twist"]
    k0, k1 = tm["tuck"]
    bulge_off = ((w0 + w1) / 2, k0 + 0.3 * (k1 - k0))
    lift = window(t, (s1 - 0.05 * (s1 - s0) / 0.3, w1)) * (
        1.0 - window(t, (k1 - 0.3 * (k1 - k0), k1))
    )
    return StageState(
        swap=window(t, tm["swap"]),
        twist=window(t, tm["twist"]),
        tuck=window(t, tm["tuck"]),
        bulge=window(t, tm["swap"]) * (1.0 - window(t, bulge_off)),
        lift=lift,
        waves=window(t, tm["ripple"]) * (1.0 - window(t, tm["calm"])),
    )


def _belt_height(state: StageState) -> tuple[float, float]:
    """(p, q) of the guide's height Z = p sin + q sin cos^M."""
    if state.tuck > 0.0:
        k = state.tuck
        # q falls from BELT_HEIGHT to 0 through 1 at k = 1/2 (quadratic through 3 points)
        c2 = 2.0 * BELT_HEIGHT - 4.0
        c1 = -BELT_HEIGHT - c2
        return -1.0, BELT_HEIGHT + c1 * k + c2 * k * k
    return 1.0 - 2.0 * state.swap, BELT_HEIGHT * state.swap


def guide_and_tangent(lat, state: StageState):
    """Guide point g and its latitude derivative dg/dlat, each (..., 3); complex-analytic in lat."""
    c, s = np.cos(lat), np.sin(lat)
    k = state.tuck
    e = BULGE * state.bulge
    rad = c * (1.0 + e * c**BULGE_EXPONENT)
    rad_d = -s * (1.0 + e * (BULGE_EXPONENT + 1) * c**BULGE_EXPONENT)
    s1 = np.sin(TWIST_EDGE)
    lin = 2.0 * _step(lat, -TWIST_EDGE, TWIST_EDGE) - 1.0
    lin_d = 2.0 * _step_d(lat, -TWIST_EDGE, TWIST_EDGE)
    cub = 2.0 * _step(s**3, -(s1**3), s1**3) - 1.0
    cub_d = 2.0 * _step_d(s**3, -(s1**3), s1**3) * 3.0 * s * s * c
    sh = TWIST_EQUATOR_SHARE
    az = -np.pi * state.twist * (sh * lin + (1.0 - sh) * cub)
    az_d = -np.pi * state.twist * (sh * lin_d + (1.0 - sh) * cub_d)
    ca, sa = np.cos(az), np.sin(az)
    hx = (1.0 - k) * ca - k
    hy = (1.0 - k) * sa
    x = rad * hx
    y = rad * hy
    x_d = rad_d * hx - rad * (1.0 - k) * sa * az_d
    y_d = rad_d * hy + rad * (1.0 - k) * ca * az_d
    p, q = _belt_height(state)
    m = BELT_EXPONENT
    z = p * s + q * s * c**m
    z_d = p * c + q * c ** (m - 1) * (c * c - m * s * s)
    return np.stack([x, y, z], -1), np.stack([x_d, y_d, z_d], -1)


def wave_frame(lat, state: StageState, depth: float):
    """Guide point, unit wave axis, unit side vector and local depth along the guide.

    Returns (g, axis, side, d): g, axis, side (..., 3); d (...,). ``axis`` is the normal
    component of the latitude velocity e_z x g (lifted slightly while the guide passes the
    axis); ``side`` = tangent x axis.
    """
    g, g_d = guide_and_tangent(lat, state)
    tangent = g_d / np.sqrt(_dot(g_d, g_d))[..., None]
    lift = AXIS_LIFT * state.lift
    v = np.stack([-g[..., 1], g[..., 0], 0.0 * g[..., 2] + lift], -1)
    axis = v - _dot(v, tangent)[..., None] * tangent
    axis = axis / np.sqrt(_dot(axis, axis))[..., None]
    side = np.cross(tangent, axis)
    lat_env = 1.0 - _step(lat * lat, WAVE_FULL_LAT**2, WAVE_END_LAT**2)
    d = depth * state.waves * lat_env
    return g, axis, side, d


def _local(theta, lat, state: StageState, n: int, depth: float):
    """Point before the rotation R(theta): g + W. theta (..., m), lat (..., 1) broadcast."""
    g, axis, side, d = wave_frame(lat, state, depth)
    sn = n * theta
    a = np.sin(sn)
    b = -0.5 * WAVE_ASPECT * np.sin(2.0 * sn)
    return g[..., None, :] + d[..., None, None] * (
        a[..., None] * side[..., None, :] + b[..., None] * axis[..., None, :]
    )


def _rotate(theta, p):
    ct, st = np.cos(theta), np.sin(theta)
    return np.stack(
        [ct * p[..., 0] - st * p[..., 1], st * p[..., 0] + ct * p[..., 1], p[..., 2]], -1
    )


def surface(controls: Controls, t: float, theta, lat):
    """F(theta, lat, t) on the grid theta (m,) x lat (l,): (l, m, 3)."""
    state = stage_state(controls, t)
    th = np.asarray(theta)[None, :]
    la = np.asarray(lat)[:, None]
    loc = _local(th, la[:, 0], state, controls.strips, controls.wave_depth)
    return _rotate(th, loc)


def jacobian(controls: Controls, t: float, theta, lat):
    """(F, F_theta, F_lat) on the grid theta (m,) x lat (l,), each (l, m, 3).

    F_theta is exact (analytic derivative of the rotation and the waves); F_lat is taken by
    complex step, exact to rounding because every latitude function is analytic.
    """
    state = stage_state(controls, t)
    n, depth = controls.strips, controls.wave_depth
    th = np.asarray(theta, dtype=float)[None, :]
    la = np.asarray(lat, dtype=float)
    g, axis, side, d = wave_frame(la, state, depth)
    sn = n * th
    a, a_t = np.sin(sn), n * np.cos(sn)
    b, b_t = -0.5 * WAVE_ASPECT * np.sin(2.0 * sn), -WAVE_ASPECT * n * np.cos(2.0 * sn)
    dd = d[:, None, None]
    loc = g[:, None, :] + dd * (a[..., None] * side[:, None, :] + b[..., None] * axis[:, None, :])
    loc_t = dd * (a_t[..., None] * side[:, None, :] + b_t[..., None] * axis[:, None, :])
    F = _rotate(th, loc)
    # d/dtheta [R(theta) p] = R(theta) (e_z x p + dp/dtheta)
    jp = np.stack([-loc[..., 1], loc[..., 0], 0.0 * loc[..., 2]], -1)
    F_theta = _rotate(th, jp + loc_t)
    h = COMPLEX_STEP
    loc_c = _local(th.astype(complex), (la + 1j * h), state, n, depth)
    F_lat = _rotate(th, loc_c.imag / h)
    return F, F_theta, F_lat


def mesh_for(controls: Controls, n_lon: int | None = None, n_lat: int | None = None) -> SphereMesh:
    """Default mesh: 32 longitude samples per strip, 127 latitude rings."""
    return uniform_sphere_mesh(n_lon or 32 * controls.strips, n_lat or 127)


def positions_at(controls: Controls, t: float, mesh: SphereMesh) -> np.ndarray:
    """Vertex positions of ``mesh`` at time t, (V, 3) float64."""
    grid = surface(controls, t, mesh.theta, mesh.lat)  # (n_lat, n_lon, 3)
    state = stage_state(controls, t)
    poles, _ = guide_and_tangent(np.array([-np.pi / 2, np.pi / 2]), state)
    out = np.empty((mesh.n_vertices, 3))
    out[0] = poles[0]
    out[1:-1] = grid.reshape(-1, 3)
    out[-1] = poles[1]
    return out
