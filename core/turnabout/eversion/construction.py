"""The corrugated eversion in closed form.

Notation (derivation in docs/eversion.md):

    F(theta, lat, t) = R(theta) [ g(lat, p) + W(n theta, lat, t) ]

``R(theta)`` is the rotation by theta about the vertical axis e_z, ``g`` the *guide* (the
meridian curve at theta = 0) and ``W`` the corrugation: a figure-eight cross-section in
the guide's normal plane, of period 2 pi / n in theta, so every frame has exact n-fold
symmetry about the axis.

The guide depends on one angle p in [0, pi], the *turn*. Its unit tangent turns, at every
latitude, along a great circle from the round meridian's tangent T0 to -T0:

    T = cos(p) T0 + sin(p) E,   E = cos(chi) e_y + sin(chi) n0,   chi = -X sum_k r_k sin(2k lat)

with n0 the round sphere's outward normal, and the guide is the integral of T along
latitude, centred so that both ends lie on the axis:

    g(lat, p) = cos(p) g0(lat) + sin(p) (G(lat) - c e_x),     G' = E, G(0) = 0.

The ends stay on the axis because X makes the mean of cos(chi) vanish: the y-part of G at
the poles. For chi = -X sin(2 lat) that is J0(X) = 0 (Jacobi-Anger expansion), so X is the
first zero of J0; the shape used adds two small harmonics, chosen to lower the peak
curvature. G has a closed form as a trigonometric series (coefficients by FFT), so every
function of latitude is smooth: F_lat is taken by a fourth-order central difference in
real arithmetic (relative error about 1e-12) and F_theta analytically. Real arithmetic
keeps the result identical from run to run: numpy 1.26 multiplies complex arrays with or
without a fused multiply-add depending on where they lie in memory, so a complex step
gave last-bit differences that moved the default mesh.

* The caps turn by +p (south) and -p (north) about the axis: the odd relative turn that
  the frame obstruction (pi_1(SO(3)) = Z/2) demands.
* The caps pass each other along the axis at p = P_LEVEL, and the equator passes
  through the centre at p = P_CENTRE (both from the closed form).
* The wave axis is the start frame's e_y carried along the tangent's great circle,
  pre-turned by 2 chi q(p / pi) (q the quintic step of ``turnabout.easing``) about T0 so
  that it ends as -e_y, the direction of the latitude velocity on the everted sphere. It
  never vanishes.

The stages ``swap``, ``twist`` and ``tuck`` drive the turn p through consecutive shares
of [0, pi] (the caps pass each other inside ``swap``, the equator passes the centre
inside ``tuck``); ``ripple`` and ``calm`` grow and remove the waves.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from ..easing import quintic, quintic_step
from ..mesh import SphereMesh
from .controls import Controls

# --- shape constants (dimensionless; see docs/eversion.md) -------------------------------
# First zero of the Bessel function J0 (Abramowitz and Stegun, Handbook of Mathematical
# Functions, 1964, table 9.5): makes the guide close on the axis.
J0_FIRST_ZERO = 2.404825557695773
WAVE_ASPECT = 0.53  # back-and-forth amplitude of the figure-eight, relative to depth / 2
WAVE_FULL_LAT = 0.9  # |lat| (rad) below which the waves have full depth
WAVE_END_LAT = 1.3  # |lat| (rad) beyond which there are no waves
# chi = -X sum_k r_k sin(2k lat): the r_k, chosen by minimising the peak curvature on coarse
# scans (docs/eversion.md, section 5); (1,) would give X = the first zero of J0.
CHI_SHAPE: tuple[float, ...] = (1.0, 0.1678, -0.1691)
LAT_STEP = 1e-4  # step of the central difference for F_lat (radians)

# Shares of the turn driven by each motion stage (they sum to 1).
TURN_SHARES = {"swap": 0.4, "twist": 0.2, "tuck": 0.4}


def window(t: float, span: tuple[float, float]) -> float:
    a, b = span
    return float(quintic_step((t - a) / (b - a)))


def _step(x, a: float, b: float):
    """Quintic smooth step in x from a to b; complex-analytic (branch chosen on Re x)."""
    y = (x - a) / (b - a)
    poly = quintic(y)
    xr = np.real(x)
    return np.where(xr <= a, 0.0 * y, np.where(xr >= b, 0.0 * y + 1.0, poly))


def _dot(a, b):
    return (a * b).sum(-1)


# --- the guide's closed form ----------------------------------------------------------------


@dataclass(frozen=True)
class GuideShape:
    """The closed form of G for chi = -X sum_k r_k sin(2 k lat), with X closing the guide.

    cos(chi), sin(chi) cos(lat) and sin(chi) sin(lat) are 2 pi-periodic and analytic, so
    their Fourier series (from an FFT, truncated where the coefficients fall below 1e-15)
    integrate term by term. X is the first root of mean(cos chi) = 0: the y-part of G at
    the poles, which must vanish for the ends to stay on the axis. For chi = -X sin(2 lat)
    this is J0(X) = 0 (Jacobi-Anger expansion).
    """

    ratios: tuple[float, ...]
    amplitude: float
    orders: np.ndarray  # m >= 1
    cos_chi: np.ndarray  # cosine coefficients of cos(chi) (its mean is 0 by the closure)
    sx: np.ndarray  # sine coefficients of sin(chi) cos(lat)
    sz0: float  # mean of sin(chi) sin(lat)
    sz: np.ndarray  # cosine coefficients of sin(chi) sin(lat)
    centre_x: float  # c = G_x(pi/2) = G_x(-pi/2): shifts the guide's ends onto the axis

    def chi(self, lat):
        return -self.amplitude * _chi_profile(self.ratios, lat)

    def integral(self, lat):
        """G(lat) = int_0^lat E, (..., 3)."""
        la = np.asarray(lat)[..., None]
        m = self.orders
        sm, cm = np.sin(m * la), np.cos(m * la)
        gx = (self.sx * (1.0 - cm) / m).sum(-1)
        gy = (self.cos_chi * sm / m).sum(-1)
        gz = self.sz0 * la[..., 0] + (self.sz * sm / m).sum(-1)
        return np.stack([gx, gy, gz], -1)


def _chi_profile(ratios: tuple[float, ...], lat):
    """sum_k r_k sin(2 k lat), (...,); complex-analytic in lat."""
    k = np.arange(1, len(ratios) + 1)
    return (np.asarray(ratios) * np.sin(2.0 * k * np.asarray(lat)[..., None])).sum(-1)


def _fourier(values: np.ndarray):
    n = values.size
    f = np.fft.rfft(values) / n
    return float(f[0].real), 2.0 * f[1:].real, -2.0 * f[1:].imag


def _closing_amplitude(profile: np.ndarray) -> float:
    """First root X > 0 of mean(cos(X profile)) = 0 (bracketed scan, then bisection)."""
    xs = np.arange(0.05, 20.0, 0.05)
    vals = np.array([np.cos(x * profile).mean() for x in xs])
    idx = np.nonzero(np.sign(vals[1:]) != np.sign(vals[:-1]))[0]
    if idx.size == 0:
        raise ValueError("this chi profile cannot close the guide")
    lo, hi = xs[idx[0]], xs[idx[0] + 1]
    flo = vals[idx[0]]
    for _ in range(200):
        mid = 0.5 * (lo + hi)
        fm = np.cos(mid * profile).mean()
        if np.sign(fm) == np.sign(flo):
            lo, flo = mid, fm
        else:
            hi = mid
        if hi - lo < 1e-16:
            break
    return 0.5 * (lo + hi)


_SHAPES: dict[tuple[float, ...], GuideShape] = {}


def guide_shape(ratios: tuple[float, ...] | None = None, samples: int = 1024) -> GuideShape:
    ratios = CHI_SHAPE if ratios is None else tuple(float(r) for r in ratios)
    cached = _SHAPES.get(ratios)
    if cached is not None:
        return cached
    lat = 2.0 * np.pi * np.arange(samples) / samples
    profile = _chi_profile(ratios, lat)
    x = _closing_amplitude(profile)
    ch = -x * profile
    _, cos_a, _ = _fourier(np.cos(ch))
    _, _, sx_b = _fourier(np.sin(ch) * np.cos(lat))
    sz0, sz_a, _ = _fourier(np.sin(ch) * np.sin(lat))
    keep = np.abs(np.stack([cos_a, sx_b, sz_a])).max(0) > 1e-15
    top = int(np.nonzero(keep)[0].max()) + 1
    orders = np.arange(1, top + 1, dtype=float)
    # G_x(pi/2): the sine series of sin(chi) cos(lat) integrated, at lat = pi/2
    centre_x = float((sx_b[:top] * (1.0 - np.cos(orders * np.pi / 2)) / orders).sum())
    shape = GuideShape(
        ratios=ratios,
        amplitude=float(x),
        orders=orders,
        cos_chi=cos_a[:top],
        sx=sx_b[:top],
        sz0=sz0,
        sz=sz_a[:top],
        centre_x=centre_x,
    )
    _SHAPES[ratios] = shape
    return shape


def chi(lat):
    """Angle of the tangent's turning plane about T0, measured from e_y towards n0."""
    return guide_shape().chi(np.asarray(lat))


def guide_offset_curve(lat):
    """G(lat) - c e_x: the closed curve the guide passes through at p = pi / 2, (..., 3)."""
    shape = guide_shape()
    return shape.integral(lat) - np.array([shape.centre_x, 0.0, 0.0])


# Landmarks of the turn: the caps are level (south pole height 0) when tan p = 1 / G_z(S);
# the equator is at the centre when cos p + sin p (G_x(0) - c) = 0.
_G_SOUTH_Z = float(guide_offset_curve(np.array(-np.pi / 2))[2])
_G_EQ_X = float(guide_offset_curve(np.array(0.0))[0])
P_LEVEL = float(np.arctan2(1.0, _G_SOUTH_Z))
P_CENTRE = float(np.arctan2(1.0, -_G_EQ_X))


@dataclass(frozen=True)
class StageState:
    """Where the motion stands at one time t."""

    turn: float  # p / pi in [0, 1]
    waves: float  # wave amplitude in [0, 1]

    @property
    def angle(self) -> float:
        return float(np.pi * self.turn)

    def cos_sin(self) -> tuple[float, float]:
        """(cos p, sin p), exact at both ends of the motion."""
        if self.turn >= 1.0:
            return -1.0, 0.0
        if self.turn <= 0.0:
            return 1.0, 0.0
        p = self.angle
        return float(np.cos(p)), float(np.sin(p))


def turn_at(controls: Controls, t: float) -> float:
    """The turn p / pi at time t: each motion stage drives its share, eased in its window."""
    tm = controls.timing
    return float(sum(share * window(t, tm[name]) for name, share in TURN_SHARES.items()))


def stage_state(controls: Controls, t: float) -> StageState:
    tm = controls.timing
    waves = window(t, tm["ripple"]) * (1.0 - window(t, tm["calm"]))
    return StageState(turn=min(1.0, turn_at(controls, t)), waves=waves)


def _round_frame(lat):
    """Round meridian point g0 (= outward normal n0) and tangent T0, each (..., 3)."""
    c, s = np.cos(lat), np.sin(lat)
    z = 0.0 * c
    return np.stack([c, z, s], -1), np.stack([-s, z, c], -1)


_EY = np.array([0.0, 1.0, 0.0])


def _guide_parts(lat, state: StageState):
    """(g, T, g0, chi): guide point, unit tangent, round meridian point and chi, analytic."""
    cp, sp = state.cos_sin()
    g0, t0 = _round_frame(lat)
    ch = chi(lat)
    e = np.cos(ch)[..., None] * _EY + np.sin(ch)[..., None] * g0
    g = cp * g0 + sp * guide_offset_curve(lat)
    return g, cp * t0 + sp * e, g0, ch


def guide_and_tangent(lat, state: StageState):
    """Guide point g and its latitude derivative T (unit), each (..., 3); analytic in lat."""
    g, tangent, _, _ = _guide_parts(lat, state)
    return g, tangent


def wave_frame(lat, state: StageState, depth: float):
    """Guide point, unit wave axis, unit side vector and local depth along the guide."""
    cp, sp = state.cos_sin()
    g, tangent, g0, ch = _guide_parts(lat, state)
    cc, sc = np.cos(ch)[..., None], np.sin(ch)[..., None]
    ey = _EY
    # axis = Rot(k, p) w: w = e_y turned by beta about T0, k = T0 x E the turning axis
    beta = (2.0 * float(quintic_step(state.turn))) * ch
    w = np.cos(beta)[..., None] * ey + np.sin(beta)[..., None] * g0
    k = sc * ey - cc * g0
    axis = cp * w + sp * np.cross(k, w) + (1.0 - cp) * _dot(k, w)[..., None] * k
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

    F_theta is exact (analytic derivative of the rotation and the waves); F_lat is a
    fourth-order central difference with step LAT_STEP (relative error about 1e-12), in
    real arithmetic so that it is the same bits in every run (see the module notes).
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
    h = LAT_STEP

    def at(shift: float):
        return _local(th, la + shift, state, n, depth)

    loc_l = (8.0 * (at(h) - at(-h)) - (at(2.0 * h) - at(-2.0 * h))) / (12.0 * h)
    F_lat = _rotate(th, loc_l)
    return F, F_theta, F_lat


class FrameEvaluator:
    """Vertex positions of one mesh at any time, with the longitude factors computed once.

    Per frame only the latitude functions (guide, wave frame, depth) are evaluated; the
    grid is then filled component by component straight into the caller's array:

        P = g + d sin(n theta) side + d b(theta) axis,   F = R(theta) P
    """

    def __init__(self, controls: Controls, mesh: SphereMesh):
        self.controls = controls
        self.mesh = mesh
        n = controls.strips
        th = np.asarray(mesh.theta, dtype=float)
        self._a = np.sin(n * th)
        self._b = -0.5 * WAVE_ASPECT * np.sin(2.0 * n * th)
        self._c = np.cos(th)
        self._s = np.sin(th)
        self._lat = np.asarray(mesh.lat, dtype=float)

    def __call__(self, t: float, out: np.ndarray | None = None) -> np.ndarray:
        """Positions at time t into ``out`` ((V, 3), any float dtype; float64 if None)."""
        return self.at_state(stage_state(self.controls, t), out)

    def at_state(self, state: StageState, out: np.ndarray | None = None) -> np.ndarray:
        """Positions at a stage state (turn, waves) into ``out`` ((V, 3), as for a time).

        The shape depends on the time only through this state; the windows reparametrise
        time (the step-rate model of ``sweeps.pace`` samples the shape by state).
        """
        m = self.mesh
        if out is None:
            out = np.empty((m.n_vertices, 3))
        g, axis, side, d = wave_frame(self._lat, state, self.controls.wave_depth)
        ds = d[:, None] * side
        da = d[:, None] * axis
        a, b = self._a[None, :], self._b[None, :]
        px = g[:, 0:1] + ds[:, 0:1] * a + da[:, 0:1] * b
        py = g[:, 1:2] + ds[:, 1:2] * a + da[:, 1:2] * b
        grid = out[1:-1].reshape(m.n_lat, m.n_lon, 3)
        grid[..., 0] = self._c * px - self._s * py
        grid[..., 1] = self._s * px + self._c * py
        grid[..., 2] = g[:, 2:3] + ds[:, 2:3] * a + da[:, 2:3] * b
        poles, _ = guide_and_tangent(np.array([-np.pi / 2, np.pi / 2]), state)
        out[0] = (0.0, 0.0, poles[0, 2])  # on the axis (the closed form puts them there
        out[-1] = (0.0, 0.0, poles[1, 2])  # to rounding)
        return out
