"""Numbers behind the view rigs: camera orientations, the fixed side view, glyph sizes,
marker tables and the count's key frames.

Pure numpy; the Blender layer (the add-on's view rigs) only moves these arrays into
cameras, F-curves, meshes and node inputs. Blender cameras look along their local -Z with
local +X to the right of the image and local +Y up the image.
"""

from __future__ import annotations

import numpy as np


class RigError(ValueError):
    """A view-rig request that cannot be carried out; the message names the option and
    what is allowed."""


# ----------------------------------------------------------------------------- checks


def unit_up(up) -> np.ndarray:
    """``up`` as a (3,) float64 unit vector; RigError for a wrong shape, NaN or zero length
    (the one up-vector rule, :func:`turnabout.views.levels.unit_up`)."""
    from .levels import LevelPointError
    from .levels import unit_up as _unit_up

    try:
        return _unit_up(up)
    except LevelPointError as exc:
        raise RigError(str(exc)) from None


def positive(name: str, value, upper: float | None = None) -> float:
    """``value`` as a float in (0, upper]; RigError naming ``name`` otherwise."""
    try:
        v = float(value)
    except (TypeError, ValueError):
        raise RigError(f"{name}: must be a number, got {value!r}") from None
    if not np.isfinite(v) or v <= 0 or (upper is not None and v > upper):
        allowed = f"in (0, {upper:g}]" if upper is not None else "greater than 0"
        raise RigError(f"{name}: must be {allowed}, got {value!r}")
    return v


def colour_rgba(name: str, value) -> tuple[float, float, float, float]:
    """An RGB or RGBA colour with components in [0, 1] as an RGBA tuple; RigError otherwise."""
    try:
        c = np.asarray(value, dtype=np.float64).ravel()
    except (TypeError, ValueError):
        c = np.array([np.nan])
    if c.shape not in ((3,), (4,)) or not np.all((c >= 0) & (c <= 1)):
        raise RigError(f"{name}: must be 3 or 4 numbers from 0 to 1 (RGB or RGBA), got {value!r}")
    return tuple(float(x) for x in (c if len(c) == 4 else np.append(c, 1.0)))


def angle(name: str, value, limit: float) -> float:
    """``value`` as a float in (-limit, limit) radians; RigError naming ``name`` otherwise."""
    try:
        v = float(value)
    except (TypeError, ValueError):
        v = float("nan")
    if not -limit < v < limit:
        raise RigError(
            f"{name}: must be an angle in radians between {-limit:.4g} and "
            f"{limit:.4g}, got {value!r}"
        )
    return v


# ----------------------------------------------------------------------------- cameras


def half_fov_of_short_side(lens: float, sensor: float, width: int, height: int) -> float:
    """Half field of view (radians) across the shorter image side of a camera whose
    ``sensor`` (mm) spans the longer side (Blender's automatic sensor fit)."""
    long_side, short_side = max(width, height), min(width, height)
    return float(np.arctan(0.5 * sensor / lens * short_side / long_side))


def quaternions_from_axes(axes: np.ndarray) -> np.ndarray:
    """Camera orientations from per-frame view axes.

    axes : (F, 3, 3) float, rows = screen right, screen up, view direction.
    Returns (F, 4) float64 unit quaternions (w, x, y, z) of the rotation whose columns are
    (right, up, -view), the sign chosen so neighbouring frames stay on one side (the
    frame-to-frame blend then takes the short way round).
    """
    axes = np.asarray(axes, dtype=np.float64)
    if axes.ndim != 3 or axes.shape[1:] != (3, 3):
        raise RigError(f"axes: expected (frames, 3, 3), got {axes.shape}")
    right, up, view = axes[:, 0], axes[:, 1], axes[:, 2]
    # re-orthonormalise: the view direction leads, up is made perpendicular to it
    z = -view / np.linalg.norm(view, axis=1, keepdims=True)
    y = up - np.einsum("fi,fi->f", up, z)[:, None] * z
    y /= np.linalg.norm(y, axis=1, keepdims=True)
    x = np.cross(y, z)
    flip = np.einsum("fi,fi->f", x, right) < 0  # keep a right-handed frame facing ``right``
    if np.any(flip):
        raise RigError("axes: rows must form a right-handed frame (right x up = -view)")
    m = np.stack([x, y, z], axis=-1)  # columns
    return continuous(matrices_to_quaternions(m))


def matrices_to_quaternions(m: np.ndarray) -> np.ndarray:
    """(F, 3, 3) rotation matrices -> (F, 4) quaternions (w, x, y, z), largest-term method."""
    m = np.asarray(m, dtype=np.float64)
    t = np.einsum("fii->f", m)
    d = np.stack([m[:, 0, 0], m[:, 1, 1], m[:, 2, 2]], axis=1)
    cand = np.stack([1 + t, 1 + 2 * d[:, 0] - t, 1 + 2 * d[:, 1] - t, 1 + 2 * d[:, 2] - t], 1)
    k = np.argmax(cand, axis=1)
    s = np.sqrt(cand[np.arange(len(m)), k])  # 2 |q_k| for the largest component q_k
    a = m
    xw, yw, zw = a[:, 2, 1] - a[:, 1, 2], a[:, 0, 2] - a[:, 2, 0], a[:, 1, 0] - a[:, 0, 1]
    xy, xz, yz = a[:, 0, 1] + a[:, 1, 0], a[:, 0, 2] + a[:, 2, 0], a[:, 1, 2] + a[:, 2, 1]
    # every component times 2 s (4 q_k q_j off the diagonal, s^2 on it); normalised below
    table = np.stack(
        [
            np.stack([s * s, xw, yw, zw], 1),
            np.stack([xw, s * s, xy, xz], 1),
            np.stack([yw, xy, s * s, yz], 1),
            np.stack([zw, xz, yz, s * s], 1),
        ],
        1,
    )  # (F, branch, component)
    q = table[np.arange(len(m)), k]
    q /= np.linalg.norm(q, axis=1, keepdims=True)
    return q


def continuous(q: np.ndarray) -> np.ndarray:
    """Flip quaternion signs so that each one has a non-negative dot product with the one
    before; (F, 4) -> (F, 4)."""
    q = np.array(q, dtype=np.float64)
    if len(q) > 1:
        dots = np.einsum("fi,fi->f", q[1:], q[:-1])
        sign = np.cumprod(np.where(dots < 0, -1.0, 1.0))
        q[1:] *= sign[:, None]
    return q


def look_at_quaternion(eye, target, up) -> np.ndarray:
    """(4,) quaternion (w, x, y, z) of a camera at ``eye`` looking at ``target`` with the
    image's up as close to ``up`` as possible."""
    view = np.asarray(target, float) - np.asarray(eye, float)
    view /= np.linalg.norm(view)
    up = np.asarray(up, float)
    right = np.cross(view, up)
    if np.linalg.norm(right) < 1e-9:  # looking along up: any perpendicular will do
        right = np.cross(view, _perpendicular(view))
    right /= np.linalg.norm(right)
    screen_up = np.cross(right, view)
    return quaternions_from_axes(np.stack([right, screen_up, view])[None])[0]


def _perpendicular(u: np.ndarray) -> np.ndarray:
    """A unit vector perpendicular to the unit vector ``u`` (deterministic)."""
    e = np.eye(3)[int(np.argmin(np.abs(u)))]
    p = e - np.dot(e, u) * u
    return p / np.linalg.norm(p)


def cutaway_distances(distances, top, room) -> np.ndarray:
    """Per-frame camera clip start that cuts away everything above the band.

    distances : (F,) camera-to-centroid distances along the view direction; top : (F,)
    height of the band's highest point above its centroid (along up); room : scalar or
    (F,) space kept above that point. Every band point is at least ``distance - top`` in
    front of the camera, so a clip start of ``distance - top - room`` keeps the whole band
    and cuts what lies above it; never nearer than 2 % of the distance. Returns (F,) float64.
    """
    d = np.asarray(distances, dtype=np.float64)
    return np.maximum(d - np.asarray(top, np.float64) - room, 0.02 * d)


def side_view(
    centre, radius: float, up, half_fov: float, elevation: float = 0.3, margin: float = 1.1
) -> tuple[np.ndarray, np.ndarray]:
    """A fixed camera beside the surface, framing a ball of ``radius`` about ``centre``.

    The camera sits in the direction of -Y made horizontal (perpendicular to ``up``; +X
    when up is along Y), raised by ``elevation`` radians above the horizontal, at the
    distance where the ball fits the shorter image side with ``margin``.
    Returns (location (3,), quaternion (4,) w, x, y, z), float64.
    """
    u = unit_up(up)
    e = np.array([0.0, -1.0, 0.0]) if abs(u[1]) < 0.9 else np.array([1.0, 0.0, 0.0])
    h = e - np.dot(e, u) * u
    h /= np.linalg.norm(h)
    distance = margin * radius / np.sin(half_fov)
    eye = np.asarray(centre, float) + distance * (np.cos(elevation) * h + np.sin(elevation) * u)
    return eye, look_at_quaternion(eye, centre, u)


def rotation_z_to(up) -> np.ndarray:
    """Euler angles (XYZ order, radians, (3,) float64) of a rotation taking +Z to ``up``."""
    u = unit_up(up)
    z = np.array([0.0, 0.0, 1.0])
    c = float(np.dot(z, u))
    if c < -1 + 1e-12:
        m = np.diag([1.0, -1.0, -1.0])  # half turn about X
    else:
        v = np.cross(z, u)
        vx = np.array([[0, -v[2], v[1]], [v[2], 0, -v[0]], [-v[1], v[0], 0]])
        m = np.eye(3) + vx + vx @ vx / (1 + c)
    # R = Rz(c) Ry(b) Rx(a) -> (a, b, c)
    b = np.arcsin(-np.clip(m[2, 0], -1, 1))
    if abs(m[2, 0]) < 1 - 1e-12:
        a = np.arctan2(m[2, 1], m[2, 2])
        c_ = np.arctan2(m[1, 0], m[0, 0])
    else:  # gimbal lock: put all of the turn on X
        a = np.arctan2(-m[1, 2], m[1, 1])
        c_ = 0.0
    return np.array([a, b, c_])


# ----------------------------------------------------------------------------- stored frames


def blend_keys(shapes: np.ndarray, offsets: np.ndarray, count: int) -> np.ndarray:
    """Every frame from shapes stored at some frames, blended linearly between them.

    shapes : (K, V, 3) at frame offsets ``offsets`` (K,) int, increasing, the first 0 and
    the last ``count - 1``. Returns (count, V, 3) in the dtype of ``shapes``.
    """
    offsets = np.asarray(offsets, np.int64)
    f = np.arange(count)
    j = np.clip(np.searchsorted(offsets, f, side="right") - 1, 0, len(offsets) - 2)
    w = ((f - offsets[j]) / (offsets[j + 1] - offsets[j])).astype(shapes.dtype)[:, None, None]
    return (1 - w) * shapes[j] + w * shapes[j + 1]


PC2_SIGNATURE = b"POINTCACHE2\0"


def read_pc2(path: str, n_points: int, n_samples: int) -> np.ndarray:
    """The samples of a PC2 point cache, checked against the expected sizes.

    Layout (little-endian, common practice): 12-byte signature, int32 version, int32
    points, float32 start, float32 rate, int32 samples, then float32 xyz per point per
    sample. Returns a read-only (n_samples, n_points, 3) float32 memory map.
    """
    with open(path, "rb") as fh:
        head = fh.read(32)
    if len(head) < 32 or head[:12] != PC2_SIGNATURE:
        raise RigError(f"point cache: {path!r} is not a PC2 file")
    points, samples = (
        int(np.frombuffer(head[16:20], "<i4")[0]),
        int(np.frombuffer(head[28:32], "<i4")[0]),
    )
    if (points, samples) != (n_points, n_samples):
        raise RigError(
            f"point cache: {path!r} holds {samples} x {points} points, expected "
            f"{n_samples} x {n_points}"
        )
    return np.memmap(path, "<f4", "r", offset=32, shape=(n_samples, n_points, 3))


# ----------------------------------------------------------------------------- highlight


def face_patch(triangles: np.ndarray, face_mask: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """The faces picked by ``face_mask`` as a stand-alone patch.

    triangles : (M, 3) int, face_mask : (M,) bool.
    Returns (faces (m, 3) int32 renumbered from 0, vertex_ids (v,) int64 sorted): patch
    vertex j is surface vertex ``vertex_ids[j]``.
    """
    triangles = np.asarray(triangles)
    face_mask = np.asarray(face_mask, dtype=bool)
    if face_mask.shape != (len(triangles),):
        raise RigError(
            f"band faces: expected a ({len(triangles)},) mask over the surface's triangles, "
            f"got shape {face_mask.shape}"
        )
    picked = triangles[face_mask]
    vertex_ids, inverse = np.unique(picked.ravel(), return_inverse=True)
    return inverse.reshape(-1, 3).astype(np.int32), vertex_ids.astype(np.int64)


# ----------------------------------------------------------------------------- markers


def marker_table(frame, kind, position, start_frame: int, kinds=(1, 2, 3)):
    """Arrays for the marker point mesh, checked.

    frame (K,) int, kind (K,) int, position (K, 3) float; frame 0 plays at ``start_frame``.
    Returns (co (K*3,) float32, scene_frame (K,) int32, kind (K,) int32, point_id (K,) int32).
    """
    frame = np.asarray(frame)
    kind = np.asarray(kind)
    position = np.asarray(position, dtype=np.float64)
    k = len(frame)
    if kind.shape != (k,) or position.shape != (k, 3):
        raise RigError(
            f"levels: frame, kind and position must have matching lengths, got {frame.shape}, "
            f"{kind.shape} and {position.shape}"
        )
    if k and (frame.min() < 0 or not np.all(np.isfinite(position))):
        raise RigError("levels: frames must be >= 0 and positions finite")
    bad = ~np.isin(kind, kinds)
    if np.any(bad):
        raise RigError(
            f"levels: kind must be one of {', '.join(map(str, kinds))}, got {kind[bad][0]}"
        )
    return (
        np.ascontiguousarray(position, np.float32).ravel(),
        (frame.astype(np.int64) + int(start_frame)).astype(np.int32),
        kind.astype(np.int32),
        np.arange(k, dtype=np.int32),
    )


def count_keys(signed_count, start_frame: int) -> tuple[np.ndarray, np.ndarray]:
    """Key frames for the per-frame signed count: (frames (F,) float32, values (F,) float32),
    frame 0 at ``start_frame``."""
    values = np.asarray(signed_count)
    if values.ndim != 1 or len(values) == 0:
        raise RigError(f"levels: signed_count must be (frames,), got shape {values.shape}")
    frames = np.arange(len(values), dtype=np.float64) + float(start_frame)
    return frames.astype(np.float32), values.astype(np.float32)


def text_corner(frame_corners: np.ndarray, depth: float, inset: float = 0.06):
    """Where on-screen text starts and how tall it is, in camera space.

    frame_corners : (4, 3) camera-space corners of the image frame at any depth (as the
    camera gives them). Returns (origin (3,) float64 near the lower-left corner at
    ``depth`` in front of the camera, text height float) with the text a twelfth of the
    image height.
    """
    c = np.asarray(frame_corners, dtype=np.float64)
    c = c * (depth / -c[:, 2])[:, None]  # onto the plane z = -depth
    lo, hi = c.min(axis=0), c.max(axis=0)
    height = hi[1] - lo[1]
    origin = np.array([lo[0] + inset * height, lo[1] + inset * height, -depth])
    return origin, height / 12.0
