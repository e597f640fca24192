"""The parts of the eversion's surface and the symmetry that permutes them.

Every frame F(theta, lat, t) = R(theta) [g(lat) + W(n theta, lat, t)] is fixed by a dihedral
group of order 2n (n = strips, P = 2 pi / n the strip period):

* the turns R_k by k P about the vertical axis, acting as (theta, lat) -> (theta + k P, lat);
* the half-turns H_k = R_k H_0, H_0 the half-turn about the horizontal axis at angle P / 4,
  acting as (theta, lat) -> (P / 2 + k P - theta, -lat). They swap the caps.

The parts (defined on the parameters, so a face keeps its part in every frame):

* guide strip k: |theta - k P| < P / 4 (mod 2 pi): the half period around the guide meridian
  k (theta = k P, where W = 0 and the surface passes through the k-th rotated guide); it ends
  on the meridians theta = k P +- P / 4, where the corrugation is deepest (|sin n theta| = 1)
  and which the half-turn axes cross;
* wave strip k: the rest of the period, P / 4 < theta - k P < 3 P / 4, around the meridian
  theta = k P + P / 2, which is the image of a guide meridian under a half-turn;
* both only where the waves live: |lat| <= WAVE_END_LAT; beyond it the construction is a
  surface of revolution, the south and north caps.

Each triangle goes to the part holding its parameter centroid (the pole of a fan triangle
counts only in latitude). H_k maps guide strips onto wave strips and south onto north: a
guide strip's southern half is congruent to a wave strip's northern half in every frame.

The fundamental piece is the southern half of one period, guide strip 0 and wave strip 0
(theta in [-P / 4, 3 P / 4)) plus the cap faces of that period, south of the equator. South
and north are decided on ring indices (a triangle's ring indices never sum to the mirror
value), so its n turns cover the southern faces once and its n half-turns the northern ones.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from ..eversion.construction import WAVE_END_LAT
from ..eversion.controls import MAX_STRIPS, MIN_STRIPS
from ..mesh import SphereMesh

CAP_NAMES = ("south", "north")


class ViewError(ValueError):
    """A view option is outside what the view accepts.

    ``option`` names the option; the message says what was given and what is allowed.
    """

    def __init__(self, option: str, message: str):
        super().__init__(f"{option}: {message}")
        self.option = option


def check_index(option: str, value, count: int, what: str = "an integer") -> int:
    """``value`` as an int in [0, count), else ViewError naming ``option`` and the range."""
    if isinstance(value, bool) or not isinstance(value, (int, np.integer)):
        raise ViewError(option, f"must be {what} from 0 to {count - 1}, got {value!r}")
    if not 0 <= int(value) < count:
        raise ViewError(option, f"must be {what} from 0 to {count - 1}, got {value}")
    return int(value)


def check_strips(strips) -> int:
    if isinstance(strips, bool) or not isinstance(strips, (int, np.integer)):
        raise ViewError("strips", f"must be an integer from {MIN_STRIPS} to {MAX_STRIPS}, "
                        f"got {strips!r}")  # fmt: skip
    if not MIN_STRIPS <= int(strips) <= MAX_STRIPS:
        raise ViewError("strips", f"must be an integer from {MIN_STRIPS} to {MAX_STRIPS}, "
                        f"got {strips}")  # fmt: skip
    return int(strips)


def _per_strip(mesh: SphereMesh, strips: int) -> int:
    strips = check_strips(strips)
    if mesh.n_lon % strips:
        raise ViewError("strips", f"the mesh's {mesh.n_lon} longitudes are not a multiple of "
                        f"strips ({strips})")  # fmt: skip
    return mesh.n_lon // strips


@dataclass(frozen=True)
class SurfaceParts:
    """The part of every face (faces in ``SphereMesh.triangles()`` order, M of them).

    strips : n
    label : (M,) int32: guide strip k -> k, wave strip k -> n + k, south cap -> 2 n,
        north cap -> 2 n + 1
    piece : (M,) bool, the fundamental piece (see the module docstring)
    period : (M,) int32, the period [k P - P / 4, k P + 3 P / 4) holding each face's
        longitude centroid (caps included)
    """

    strips: int
    label: np.ndarray
    piece: np.ndarray
    period: np.ndarray

    @property
    def south_label(self) -> int:
        return 2 * self.strips

    @property
    def north_label(self) -> int:
        return 2 * self.strips + 1

    def guide(self, k: int | None = None) -> np.ndarray:
        """(M,) bool: faces of guide strip k (0 .. n-1), or of every guide strip."""
        if k is None:
            return self.label < self.strips
        return self.label == check_index("guides", k, self.strips)

    def wave(self, k: int | None = None) -> np.ndarray:
        """(M,) bool: faces of wave strip k (0 .. n-1), or of every wave strip."""
        if k is None:
            return (self.label >= self.strips) & (self.label < 2 * self.strips)
        return self.label == self.strips + check_index("waves", k, self.strips)

    def cap(self, name: str | None = None) -> np.ndarray:
        """(M,) bool: faces of the "south" or "north" cap, or of both."""
        if name is None:
            return self.label >= 2 * self.strips
        if name not in CAP_NAMES:
            raise ViewError("caps", f"must be 'south' or 'north', got {name!r}")
        return self.label == 2 * self.strips + CAP_NAMES.index(name)

    def select(self, guides=(), waves=(), caps=()) -> np.ndarray:
        """(M,) bool: the union of the named guide strips, wave strips and caps.

        guides, waves : iterables of strip indices 0 .. n-1; caps : of "south" / "north".
        Every entry is checked before anything is selected.
        """
        if isinstance(caps, str):
            caps = (caps,)
        g = [check_index("guides", k, self.strips) for k in guides]
        w = [check_index("waves", k, self.strips) for k in waves]
        for c in caps:
            if c not in CAP_NAMES:
                raise ViewError("caps", f"must be 'south' or 'north', got {c!r}")
        wanted = np.zeros(2 * self.strips + 2, bool)
        wanted[g] = True
        wanted[[self.strips + k for k in w]] = True
        wanted[[2 * self.strips + CAP_NAMES.index(c) for c in caps]] = True
        return wanted[self.label]

    def fundamental_piece(self) -> np.ndarray:
        """(M,) bool: one face of every orbit of the 2n-element symmetry group."""
        return self.piece.copy()


def _face_rings_and_columns(mesh: SphereMesh, faces: np.ndarray):
    """Ring index (0 south pole .. n_lat + 1 north pole) and column (-1 at a pole) of every
    face corner, each (M, 3) int64."""
    n, v = mesh.n_lon, mesh.n_vertices
    idx = np.arange(v)
    ring = np.where(idx == 0, 0, np.where(idx == v - 1, mesh.n_lat + 1, 1 + (idx - 1) // n))
    col = np.where((idx == 0) | (idx == v - 1), -1, (idx - 1) % n)
    return ring[faces], col[faces]


def _lat_centroid(lat_corners: np.ndarray) -> np.ndarray:
    """Latitude centroid of triangles whose corners lie on two rings, (M,) float64.

    Written as (2 x + y) / 3 with x the repeated latitude, so that negating every latitude
    negates the result exactly (the north half of the default mesh is the south half negated).
    """
    a, b, c = lat_corners[:, 0], lat_corners[:, 1], lat_corners[:, 2]
    rep = np.where(a == b, a, c)  # the value that appears twice
    other = np.where(a == b, c, np.where(a == c, b, a))
    return (2.0 * rep + other) / 3.0


def face_centroids(mesh: SphereMesh, strips: int):
    """Parameter centroids of the faces, in one strip's coordinates.

    Returns (strip (M,) int64, x (M,) float64, lat (M,) float64, ring (M, 3) int64 ring
    indices of the corners, 0 at the south pole): the face's longitude
    centroid is strip * P + x, with x measured from theta = 0 on the first strip's samples
    (so every strip gets bitwise the same x: the turns act exactly); pole corners count
    only in latitude.
    """
    per = _per_strip(mesh, strips)
    n = mesh.n_lon
    faces = mesh.triangles().astype(np.int64)
    ring, col = _face_rings_and_columns(mesh, faces)
    on_ring = col >= 0
    # the gap (i, i+1 mod n) each face spans: i is the smaller column unless it wraps
    c_lo = np.where(on_ring, col, n)
    c_hi = np.where(on_ring, col, -1)
    lo = np.minimum(np.minimum(c_lo[:, 0], c_lo[:, 1]), c_lo[:, 2])
    hi = np.maximum(np.maximum(c_hi[:, 0], c_hi[:, 1]), c_hi[:, 2])
    anchor = np.where((lo == 0) & (hi == n - 1), n - 1, lo)
    k = anchor // per
    local = (col - k[:, None] * per) % n  # in [0, per]
    period = 2 * np.pi / strips
    ext = np.append(mesh.theta[:per], mesh.theta[0] + period)
    th = ext[np.where(on_ring, local, 0)]
    th = np.where(on_ring, th, 0.0)
    count = on_ring.astype(np.int64)
    x = (th[:, 0] + th[:, 1] + th[:, 2]) / (count[:, 0] + count[:, 1] + count[:, 2])
    la = np.concatenate([[-np.pi / 2], mesh.lat, [np.pi / 2]])[ring]
    return k, x, _lat_centroid(la), ring


def surface_parts(mesh: SphereMesh, strips: int) -> SurfaceParts:
    """Guide strips, wave strips, caps and the fundamental piece of ``mesh``'s faces."""
    strips = check_strips(strips)
    period = 2 * np.pi / strips
    k, x, lat, ring = face_centroids(mesh, strips)
    u = (x + period / 4) / period  # periods start at -P/4
    shift = np.floor(u).astype(np.int64)
    in_period = u - shift
    per_idx = (k + shift) % strips
    label = np.where(in_period < 0.5, per_idx, strips + per_idx)
    label = np.where(lat < -WAVE_END_LAT, 2 * strips, label)
    label = np.where(lat > WAVE_END_LAT, 2 * strips + 1, label)
    south = 2 * (ring[:, 0] + ring[:, 1] + ring[:, 2]) < 3 * (mesh.n_lat + 1)
    return SurfaceParts(
        strips=strips,
        label=label.astype(np.int32),
        piece=south & (per_idx == 0),
        period=per_idx.astype(np.int32),
    )


def symmetry_matrices(strips: int) -> np.ndarray:
    """(2n, 3, 3) float64: the turns R_0 .. R_{n-1} by k 2 pi / n about e_z, then the
    half-turns H_k = R_k H_0 about the horizontal axes at angles pi / (2n) + k pi / n."""
    n = check_strips(strips)
    ang = 2 * np.pi * np.arange(n) / n
    c, s = np.cos(ang), np.sin(ang)
    z, o = np.zeros(n), np.ones(n)
    rot = np.stack([np.stack([c, -s, z], -1), np.stack([s, c, z], -1), np.stack([z, z, o], -1)],
                   axis=1)  # fmt: skip
    a = np.pi / n
    h0 = np.array([[np.cos(a), np.sin(a), 0.0], [np.sin(a), -np.cos(a), 0.0], [0.0, 0.0, -1.0]])
    return np.concatenate([rot, rot @ h0])


def _match(values: np.ndarray, targets: np.ndarray, span: float | None, what: str) -> np.ndarray:
    """Index j with values[j] == targets[i] (to 1e-9 of the smallest gap), (m,) int64;
    values increasing; span: the period when the values are angles."""
    gaps = np.diff(values)
    if span is not None:
        gaps = np.append(gaps, values[0] + span - values[-1])
    tol = 1e-9 * max(float(gaps.min()), 1e-300) if gaps.size else 1e-12
    if span is not None:
        targets = np.mod(targets, span)
    j = np.clip(np.searchsorted(values, targets), 1, values.size - 1)
    ends = np.zeros_like(j)
    cand = np.stack([j - 1, j, ends, ends + values.size - 1], -1)  # the ends: wrap-around
    d = np.abs(values[cand] - targets[:, None])
    if span is not None:
        d = np.minimum(d, span - d)
    best = cand[np.arange(targets.size), d.argmin(axis=1)]
    bad = d.min(axis=1) > tol
    if bad.any() or np.unique(best).size != best.size:
        raise ViewError("mesh", f"its {what} are not symmetric under the eversion's half-turn "
                        "(theta -> pi / strips - theta, lat -> -lat); meshes from "
                        "eversion.mesh_for keep it for both spacings")  # fmt: skip
    return best.astype(np.int64)


def symmetry_vertex_maps(mesh: SphereMesh, strips: int) -> np.ndarray:
    """(2n, V) int64: row g maps vertex v to the vertex at M_g applied to it, so that
    ``positions[vmap[g]] == positions @ symmetry_matrices(strips)[g].T`` in every frame.

    Raises ViewError when the mesh's samples do not share the symmetry."""
    per = _per_strip(mesh, strips)
    n_str = check_strips(strips)
    n, m, v = mesh.n_lon, mesh.n_lat, mesh.n_vertices
    period = 2 * np.pi / n_str
    rolled = np.roll(mesh.theta, -per)
    rolled[-per:] += 2 * np.pi
    if np.abs(rolled - mesh.theta - period).max() > 1e-9 * period:
        raise ViewError("mesh", "its longitudes do not repeat from strip to strip")
    col_h = _match(mesh.theta, period / 2 - mesh.theta, 2 * np.pi, "longitudes")
    ring_h = _match(mesh.lat, -mesh.lat, None, "latitudes")
    ring = np.arange(m)[:, None]
    col = np.arange(n)[None, :]
    out = np.empty((2 * n_str, v), np.int64)
    for k in range(n_str):  # the group's 2n elements, not the vertices
        grid = 1 + ring * n + (col + k * per) % n
        out[k, 0], out[k, 1:-1], out[k, -1] = 0, grid.ravel(), v - 1
        hgrid = 1 + ring_h[ring] * n + (col_h[col] + k * per) % n
        out[n_str + k, 0], out[n_str + k, 1:-1], out[n_str + k, -1] = v - 1, hgrid.ravel(), 0
    return out


def _row_lookup(ref: np.ndarray, query: np.ndarray) -> np.ndarray:
    """For each row of ``query`` the index of the equal row of ``ref`` (rows as vertex sets),
    (M,) int64; ViewError if some row has no partner."""
    a = np.sort(ref, axis=1)
    b = np.sort(query, axis=1)
    m = a.shape[0]
    both = np.concatenate([a, b])
    tag = np.repeat(np.array([0, 1], np.int8), m)
    order = np.lexsort((tag, both[:, 2], both[:, 1], both[:, 0]))
    first, second = order[0::2], order[1::2]
    ok = (first < m).all() and (second >= m).all() and np.array_equal(both[first], both[second])
    if not ok:
        raise ViewError("mesh", "its triangles do not map onto each other under the symmetry")
    out = np.empty(m, np.int64)
    out[second - m] = first
    return out


def symmetry_face_maps(mesh: SphereMesh, strips: int) -> np.ndarray:
    """(2n, M) int64: row g maps face f (``mesh.triangles()`` order) to its image under M_g."""
    vmap = symmetry_vertex_maps(mesh, strips)
    n = vmap.shape[0] // 2
    faces = mesh.triangles().astype(np.int64)
    # the generators R_1 and H_0 by lookup; R_k = R_1^k and H_k = R_k H_0 by composition
    turn = _row_lookup(faces, vmap[1][faces])
    half = _row_lookup(faces, vmap[n][faces])
    out = np.empty((2 * n, faces.shape[0]), np.int64)
    out[0] = np.arange(faces.shape[0])
    for k in range(1, n):  # the group's elements, not the faces
        out[k] = turn[out[k - 1]]
    out[n:] = out[:n][:, half]
    return out


def extract(positions, faces, face_mask):
    """The sub-mesh of the faces in ``face_mask``, its vertices renumbered.

    positions : (V, 3) or (F, V, 3); faces : (M, 3) int; face_mask : (M,) bool.
    Returns (positions (v, 3) or (F, v, 3) (same dtype), faces (m, 3) int32 into the new
    vertices, vertex_ids (v,) int64: the original index of each kept vertex, increasing).
    """
    positions = np.asarray(positions)
    faces = np.asarray(faces)
    mask = np.asarray(face_mask)
    if positions.ndim not in (2, 3) or positions.shape[-1] != 3:
        raise ViewError("positions", f"must be (V, 3) or (F, V, 3), got {positions.shape}")
    if faces.ndim != 2 or faces.shape[1] != 3:
        raise ViewError("faces", f"must be (M, 3), got {faces.shape}")
    if mask.dtype != bool or mask.shape != (faces.shape[0],):
        raise ViewError("face_mask", f"must be a ({faces.shape[0]},) bool array, got "
                        f"{mask.shape} {mask.dtype}")  # fmt: skip
    v = positions.shape[-2]
    kept = faces[mask]
    if kept.size and (kept.min() < 0 or kept.max() >= v):
        raise ViewError("faces", f"refer to vertices outside 0 .. {v - 1}")
    ids = np.unique(kept).astype(np.int64)
    new = np.full(v, -1, np.int64)
    new[ids] = np.arange(ids.size)
    return positions[..., ids, :], new[kept].astype(np.int32), ids
