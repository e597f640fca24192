"""Research sketch: a guide motion in the class of the formal solution (docs/eversion.md §5).

The guide tangent turns inside the round sphere's tangent plane,

    T(lat, s) = cos(psi) T0(lat) + sin(psi) e_y,     wave axis = -sin(psi) T0 + cos(psi) e_y,

with psi = 0 at s = 0, psi = pi at s = 1 and psi = pi s at both poles (the caps turn by +pi and
-pi). Every such family has tangent sweep class 0, so the topological obstruction of the
current construction is absent, and the wave axis is explicit. The guide is the integral
g = S(s) + int sigma(s) T dlat. It closes on the axis only if the y-component of
int T dlat vanishes. That needs sin(psi) to take both signs along the guide at every s.

Here psi = pi s - A sin(2 pi s)/2 cos(lat)^2 + kappa(s) sin(2 lat)^2, with kappa found
by continuation so that the guide closes.

The first half of the motion is regular (normalised ratio >= 0.27 up to s ~ 0.45, for
8 strips and depth 0.1). The closing branch does not return to kappa = 0 at s = 1, though:
it ends at kappa ~ -4.8. Joining the two halves (a second closing profile, or a final
untwist) is the open step.

Run: python docs/research/tangent_plane_family.py   (prints the ratio over the first half)
"""

import numpy as np

N_STRIPS, DEPTH, A_EQ, SIGMA_MIN = 8, 0.1, 2.0, 0.8
GRID = np.linspace(-np.pi / 2, np.pi / 2, 1201)
STEP = np.gradient(GRID)


def ease(x):
    x = np.clip(x, 0.0, 1.0)
    return x * x * x * (x * (6 * x - 15) + 10)


def base_psi(lat, s):
    c, sn = np.cos(lat), np.sin(lat)
    return np.pi * s - A_EQ * np.sin(2 * np.pi * s) / 2 * c * c, (2 * sn * c) ** 2


def closing_turns(n=801):
    """kappa(s) on [0, 1] by continuation from kappa(0) = 0 (Newton on the closure)."""
    ss, ks, k = np.linspace(0, 1, n), np.zeros(n), 0.0
    for i, s in enumerate(ss):
        b, h = base_psi(GRID, s)
        for _ in range(80):
            ps = b + k * h
            f = (np.sin(ps) * STEP).sum()
            df = (np.cos(ps) * h * STEP).sum()
            if abs(f) < 1e-13 or abs(df) < 1e-9:
                break
            k -= np.clip(f / df, -0.2, 0.2)
        ks[i] = k
    return ss, ks


SS, KS = closing_turns()


def frame(lat, s):
    b, h = base_psi(lat, s)
    psi = b + np.interp(s, SS, KS) * h
    t0 = np.stack([-np.sin(lat), 0 * lat, np.cos(lat)], -1)
    ey = np.array([0.0, 1.0, 0.0])
    tan = np.cos(psi)[..., None] * t0 + np.sin(psi)[..., None] * ey
    axis = -np.sin(psi)[..., None] * t0 + np.cos(psi)[..., None] * ey
    return tan, axis


def guide(lat, s):
    tan, _ = frame(GRID, s)
    sigma = 1 - (1 - SIGMA_MIN) * np.sin(np.pi * s) ** 2
    v = sigma * tan
    g = np.zeros((len(GRID), 3))
    g[1:] = np.cumsum(0.5 * (v[1:] + v[:-1]) * np.diff(GRID)[:, None], axis=0)
    g[:, 2] -= 0.5 * g[-1, 2]
    return np.stack([np.interp(lat, GRID, g[:, k]) for k in range(3)], -1)


def surface(theta, lat, s, waves=1.0):
    g = guide(lat, s)
    tan, axis = frame(lat, s)
    side = np.cross(tan, axis)
    env = waves * (1 - ease((lat * lat - 0.81) / (1.69 - 0.81)))
    d = DEPTH * env
    a, b = np.sin(N_STRIPS * theta), -0.5 * np.sin(2 * N_STRIPS * theta)
    loc = g[:, None] + d[:, None, None] * (
        a[None, :, None] * side[:, None] + b[None, :, None] * axis[:, None]
    )
    ct, st = np.cos(theta)[None], np.sin(theta)[None]
    return np.stack(
        [ct * loc[..., 0] - st * loc[..., 1], st * loc[..., 0] + ct * loc[..., 1], loc[..., 2]], -1
    )


def ratio(theta, lat, s, h=1e-5):
    ft = (surface(theta + h, lat, s) - surface(theta - h, lat, s)) / (2 * h)
    fl = (surface(theta, lat + h, s) - surface(theta, lat - h, s)) / (2 * h)
    a, b = ft / np.cos(lat)[:, None, None], fl
    aa, bb, ab = (a * a).sum(-1), (b * b).sum(-1), (a * b).sum(-1)
    tr, det = aa + bb, np.sqrt(np.maximum(aa * bb - ab * ab, 0))
    return det / (tr / 2 + np.sqrt(np.maximum(tr * tr / 4 - det * det, 0)))


if __name__ == "__main__":
    theta = np.linspace(0, 2 * np.pi / N_STRIPS, 48, endpoint=False)
    lat = np.linspace(-1.5, 1.5, 151)
    for s in np.linspace(0.0, 0.6, 13):
        k, r = np.interp(s, SS, KS), ratio(theta, lat, s).min()
        print(f"s={s:.2f}  kappa={k:+.2f}  min ratio {r:.3f}")
    print(f"kappa at s=1: {KS[-1]:+.2f} (must be 0 for the family to end on the everted sphere)")
