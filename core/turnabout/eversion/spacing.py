"""Where the eversion's mesh puts its vertices.

One mesh serves every frame (the vertices keep their (theta, lat) for the whole motion), so
its spacing answers to the worst bend over time. The fast regularity scan records, for
every theta of one strip and every latitude, how fast the unit normal turns per unit of
that parameter at worst over the whole motion (``RegularityReport.bend_theta`` and
``bend_lat``, radians per radian). Two faces across an edge of parameter length h then meet
at about rate x h, so the *bend* spacing gives each edge

    h(x) = CREASE_AIM / sqrt(rate(x)^2 + ROUND_RATE^2)

(the floor keeps the round parts, rate 1, at CREASE_AIM / ROUND_RATE), limited so that
neighbouring edges differ by at most a factor 1 + GRADING, and places the samples by
equidistributing 1 / h. Longitude samples are the same in every strip, so the mesh keeps
the n-fold symmetry exactly. Every frame also has the half-turn about the horizontal axis at
angle pi / (2 n), which acts on the parameters as (theta, lat) -> (pi / n - theta, -lat); the
bend profiles are made symmetric under it and the samples placed on one half and mirrored,
so the vertex set maps onto itself under the whole dihedral group (views.parts builds the
vertex and face permutations). The longitude samples therefore start at the symmetry
meridian theta = pi / (2 n), not at theta = 0. The default counts are the ones that meet
the aim; asked-for counts keep the same distribution, scaled.

The *even* spacing is the plain (theta, lat) grid, for textures that want square cells
(shifted by a quarter step when a strip has an odd count, which keeps the half-turn).
"""

from __future__ import annotations

import math

import numpy as np

from ..mesh import SphereMesh, uniform_sphere_mesh
from .controls import ControlError, Controls
from .regularity import RegularityReport, require_regular

SPACINGS = ("bend", "even")
CREASE_AIM_DEG = 18.0  # aimed angle between the normals of two faces across one edge
ROUND_RATE = 4.5  # rate floor: round parts get edges of CREASE_AIM / 4.5 (4 degrees)
GRADING = 0.15  # neighbouring edges differ by at most about 15 %
EVEN_PER_STRIP = 32
EVEN_RINGS = 127
MIN_SAMPLES_PER_WAVE = 8
MIN_LAT_RINGS = 16
MAX_VERTICES = 4_000_000


def _integer(name: str, v) -> None:
    if isinstance(v, bool) or not isinstance(v, (int, np.integer)):
        raise ControlError(name, f"must be an integer, got {v!r}")


def check_lon(controls: Controls, n_lon) -> None:
    _integer("lon", n_lon)
    need = MIN_SAMPLES_PER_WAVE * controls.strips
    top = MAX_VERTICES // MIN_LAT_RINGS
    if n_lon > top:
        raise ControlError("lon", f"must be at most {top}, got {n_lon}")
    if n_lon < need or n_lon % controls.strips:
        raise ControlError(
            "lon",
            f"must be a multiple of strips ({controls.strips}) and at least {need} "
            f"({MIN_SAMPLES_PER_WAVE} samples per wave), got {n_lon}",
        )


def check_lat(controls: Controls, n_lat) -> None:
    _integer("lat", n_lat)
    if n_lat < MIN_LAT_RINGS:
        raise ControlError("lat", f"must be at least {MIN_LAT_RINGS}, got {n_lat}")
    top = MAX_VERTICES // (MIN_SAMPLES_PER_WAVE * controls.strips)
    if n_lat > top:
        raise ControlError("lat", f"must be at most {top}, got {n_lat}")


def check_resolution(controls: Controls, n_lon: int, n_lat: int) -> None:
    """Refuse meshes too coarse for the waves or too large to hold."""
    check_lon(controls, n_lon)
    check_lat(controls, n_lat)
    if n_lon * n_lat + 2 > MAX_VERTICES:
        raise ControlError(
            "lon x lat",
            f"{n_lon} x {n_lat} gives {n_lon * n_lat + 2} vertices; at most {MAX_VERTICES}",
        )


def _limit_growth(h: np.ndarray, x: np.ndarray, slope: float) -> np.ndarray:
    """The largest function <= h whose slope is at most ``slope`` (lower Lipschitz envelope)."""
    fwd = slope * x + np.minimum.accumulate(h - slope * x)
    bwd = -slope * x + np.minimum.accumulate((h + slope * x)[::-1])[::-1]
    return np.minimum(fwd, bwd)


def edge_lengths(rate: np.ndarray, x: np.ndarray, periodic: float | None = None) -> np.ndarray:
    """Aimed parameter edge length h(x) on the samples x from the bend rate there.

    ``periodic`` is the period when x samples one period of a periodic profile.
    """
    aim = math.radians(CREASE_AIM_DEG)
    h = aim / np.sqrt(rate * rate + ROUND_RATE * ROUND_RATE)
    if periodic is None:
        return _limit_growth(h, x, GRADING)
    xx = np.concatenate([x - periodic, x, x + periodic])
    return _limit_growth(np.tile(h, 3), xx, GRADING)[x.size : 2 * x.size]


REFINE = 16  # sub-samples per profile interval when integrating 1 / h


def _cumulative(x: np.ndarray, h: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """(xf, cum): a fine grid over x (REFINE per interval) and the integral of 1 / h on it
    (h linear between the nodes x), both (R,) float64, cum[0] = 0."""
    fine = np.linspace(0.0, x.size - 1.0, (x.size - 1) * REFINE + 1)
    xf = np.interp(fine, np.arange(x.size), x)
    density = 1.0 / np.interp(fine, np.arange(x.size), h)
    steps = 0.5 * (density[1:] + density[:-1]) * np.diff(xf)
    return xf, np.concatenate([[0.0], np.cumsum(steps)])


def _mirrored_half(x: np.ndarray, h: np.ndarray, count: int | None) -> tuple[np.ndarray, int]:
    """Sample positions on a whole interval symmetric about its middle, built from one half.

    x : (k,) increasing nodes of the *first* half, from the interval's start x[0] to its
        middle x[-1]; h : (k,) the (symmetric) aimed spacing there;
    count : number of intervals over the whole (None: as few as keep every spacing <= h).
    Returns (first, count): ``first`` holds the positions of levels 0 .. count // 2 (the
    first half, ending on the middle when count is even); the caller mirrors the rest, so
    the sample set is symmetric by construction rather than to rounding.
    """
    xf, cum = _cumulative(x, h)
    total = 2.0 * cum[-1]
    count = count or math.ceil(total - 1e-9)
    levels = np.arange(count // 2 + 1) * (total / count)
    first = np.interp(levels, cum, xf)
    first[0] = x[0]
    if count % 2 == 0:
        first[-1] = x[-1]
    return first, count


def symmetric_rate(rate: np.ndarray, x: np.ndarray, centre: float, period: float | None = None):
    """max(rate(x), rate(2 centre - x)): a bend profile made symmetric about ``centre``.

    The eversion's half-turn maps (theta, lat) to (pi / n - theta, -lat), so the worst bend
    over the motion is symmetric in both parameters; this removes the scan's sampling
    asymmetry so that the mesh shares the symmetry. rate, x : (k,) float64.
    """
    mirror = np.interp(2.0 * centre - x, x, rate, period=period)
    return np.maximum(rate, mirror)


def theta_samples(rep: RegularityReport, strips: int, per_strip: int | None) -> np.ndarray:
    """Longitudes of one strip, (m,) float64 increasing in [0, 2 pi / strips), equidistributing
    1 / h and invariant under theta -> pi / strips - theta (mod 2 pi / strips).

    The map reflects the strip circle about its two fixed points, a quarter and three
    quarters of a period. The samples are placed from the first fixed point (a sample) over
    the half-circle to the second (a sample when m is even) and mirrored.
    """
    period = 2 * np.pi / strips
    rate = symmetric_rate(rep.bend_theta, rep.theta, period / 4, period=period)
    h = edge_lengths(rate, rep.theta, periodic=period)
    lo, hi = period / 4, 3 * period / 4
    inner = rep.theta[(rep.theta > lo) & (rep.theta < hi)]
    x = np.concatenate([[lo], inner, [hi]])
    hx = np.interp(x, rep.theta, h, period=period)
    first, count = _mirrored_half(x, hx, per_strip)
    last = count // 2 if count % 2 == 0 else count // 2 + 1  # levels beyond the half
    mirrored = period / 2 - first[1:last]  # levels count - 1 .. , in (-period / 4, period / 4)
    one = np.concatenate([first, mirrored])
    return np.sort(np.where(one < 0.0, one + period, one))


def lat_samples(rep: RegularityReport, rings: int | None) -> np.ndarray:
    """Latitudes of the rings, (r,) float64 south to north (poles excluded), equidistributing
    1 / h; lat -> -lat maps the set to itself exactly (the north half is the south half
    negated; the equator is a ring when r is odd)."""
    rate = symmetric_rate(rep.bend_lat, rep.lat, 0.0)
    h = edge_lengths(rate, rep.lat)
    south = rep.lat < 0.0
    x = np.concatenate([[-np.pi / 2], rep.lat[south], [0.0]])
    hx = np.concatenate([h[:1], h[south], np.interp([0.0], rep.lat, h)])
    first, count = _mirrored_half(x, hx, rings + 1 if rings else None)
    south_rings = first[1 : (count + 1) // 2]  # levels 1 .. below the equator
    mid = [0.0] if count % 2 == 0 else []
    return np.concatenate([south_rings, mid, -south_rings[::-1]])


def check_mesh_request(
    controls: Controls, spacing: str, n_lon: int | None, n_lat: int | None
) -> None:
    """Refuse a spacing name or asked-for counts before anything is sampled (ControlError);
    None counts are the defaults, checked once the mesh is made."""
    if spacing not in SPACINGS:
        raise ControlError("spacing", f"must be one of {', '.join(SPACINGS)}, got {spacing!r}")
    if n_lon is not None and n_lat is not None:
        check_resolution(controls, n_lon, n_lat)
    elif n_lon is not None:
        check_lon(controls, n_lon)
    elif n_lat is not None:
        check_lat(controls, n_lat)


def mesh_for(
    controls: Controls,
    n_lon: int | None = None,
    n_lat: int | None = None,
    spacing: str = "bend",
) -> SphereMesh:
    """The eversion's sphere mesh, its counts checked before anything is sampled.

    n_lon : longitude samples (a multiple of strips) or None for the default;
    n_lat : latitude rings between the poles, or None for the default;
    spacing : "bend" (default: vertices where the surface bends, as many as keep the angle
        between neighbouring faces near CREASE_AIM_DEG in every frame, from the fast scan,
        which it runs if it has not run yet, refusing controls that fail it) or "even"
        (32 per strip x 127 rings by default).
    """
    check_mesh_request(controls, spacing, n_lon, n_lat)
    n = controls.strips
    if spacing == "even":
        mesh = uniform_sphere_mesh(n_lon or EVEN_PER_STRIP * n, n_lat or EVEN_RINGS)
        if (mesh.n_lon // n) % 2:  # keep theta -> pi / n - theta: a quarter-step offset
            mesh = SphereMesh(theta=mesh.theta + np.pi / (2 * mesh.n_lon), lat=mesh.lat)
    else:
        rep = require_regular(controls)
        one = theta_samples(rep, n, n_lon // n if n_lon else None)
        theta = (one[None, :] + (2 * np.pi / n) * np.arange(n)[:, None]).ravel()
        mesh = SphereMesh(theta=theta, lat=lat_samples(rep, n_lat))
    check_resolution(controls, mesh.n_lon, mesh.n_lat)  # the default counts too
    return mesh
