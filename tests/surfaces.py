"""Reference surfaces for the tests and benchmarks, each as (positions (V, 3) float64,
faces (M, 3) int32).

- :func:`round_sphere` and :func:`torus`: closed orientable meshes.
- :func:`sphere_with_a_seam`: a UV sphere as exporters write it, the seam column stored twice,
  as polygons (for welding).
- :func:`boy_surface` (Bryant–Kusner parametrisation), :func:`roman_surface` (Steiner) and
  :func:`cross_cap`: closed meshes of the real projective plane RP^2, built as the quotient of
  a centrally symmetric sphere mesh by the antipodal map, then mapped into space by an even
  map of the sphere. Boy's surface is an immersion (one triple point, no singular point);
  the Roman surface and the cross-cap have Whitney umbrellas (pinch points).

The sphere mesh is the octahedron with every face divided into ``n x n`` small triangles,
projected radially. For the projective-plane surfaces it is first turned by a fixed generic
rotation, so that no vertex lands on a special point of the map (a pole of the Bryant–Kusner
formula, a pinch point or the triple point).
"""

from __future__ import annotations

import numpy as np

_OCTA_CORNERS = np.array(
    [[1, 0, 0], [-1, 0, 0], [0, 1, 0], [0, -1, 0], [0, 0, 1], [0, 0, -1]], dtype=np.float64
)
# outward-oriented octahedron faces (indices into _OCTA_CORNERS)
_OCTA_FACES = np.array(
    [[0, 2, 4], [2, 1, 4], [1, 3, 4], [3, 0, 4], [2, 0, 5], [1, 2, 5], [3, 1, 5], [0, 3, 5]]
)


def _dedupe_points(points: np.ndarray, decimals: int = 9) -> tuple[np.ndarray, np.ndarray]:
    """(unique points, index of each input point) by rounding."""
    keys = np.round(points, decimals) + 0.0  # +0.0 folds -0.0 into 0.0
    uniq, inverse = np.unique(keys, axis=0, return_inverse=True)
    return uniq, inverse.ravel()


def octahedral_sphere(n: int) -> tuple[np.ndarray, np.ndarray]:
    """Unit sphere mesh: octahedron faces divided n x n, projected radially.

    Returns positions (V, 3) float64 (V = 4 n^2 + 2) and outward-oriented faces
    (8 n^2, 3) int32. The mesh is centrally symmetric: -p is a vertex for every vertex p.
    """
    if n < 1:
        raise ValueError(f"n must be >= 1, got {n}")
    i, j = np.meshgrid(np.arange(n + 1), np.arange(n + 1), indexing="ij")
    keep = i + j <= n
    i, j = i[keep], j[keep]
    lookup = -np.ones((n + 1, n + 1), np.int64)
    lookup[i, j] = np.arange(i.size)
    # small triangles of one face in (i, j) grid coordinates
    a_i, a_j = np.meshgrid(np.arange(n), np.arange(n), indexing="ij")
    up = a_i + a_j <= n - 1
    down = a_i + a_j <= n - 2
    tri_up = np.stack(
        [lookup[a_i[up], a_j[up]], lookup[a_i[up] + 1, a_j[up]], lookup[a_i[up], a_j[up] + 1]],
        axis=1,
    )
    tri_dn = np.stack(
        [
            lookup[a_i[down] + 1, a_j[down]],
            lookup[a_i[down] + 1, a_j[down] + 1],
            lookup[a_i[down], a_j[down] + 1],
        ],
        axis=1,
    )
    local_tris = np.concatenate([tri_up, tri_dn])
    pts, tris = [], []
    for k, (a, b, c) in enumerate(_OCTA_FACES):
        A, B, C = _OCTA_CORNERS[a], _OCTA_CORNERS[b], _OCTA_CORNERS[c]
        p = A + np.outer(i / n, B - A) + np.outer(j / n, C - A)
        pts.append(p)
        tris.append(local_tris + k * i.size)
    points = np.concatenate(pts)
    uniq, inverse = _dedupe_points(points)
    faces = inverse[np.concatenate(tris)]
    pos = uniq / np.linalg.norm(uniq, axis=1, keepdims=True)
    return pos, faces.astype(np.int32)


def round_sphere(n: int = 24, radius: float = 1.0, center=(0.0, 0.0, 0.0)):
    """Round sphere, outward orientation: positions (4n^2+2, 3) float64, faces (8n^2, 3) int32."""
    pos, faces = octahedral_sphere(n)
    return radius * pos + np.asarray(center, np.float64), faces


def torus(
    n_major: int = 96, n_minor: int = 48, major_radius: float = 1.0, minor_radius: float = 0.35
):
    """Torus of revolution about z, outward orientation.

    Returns positions (n_major * n_minor, 3) float64 and faces (2 n_major n_minor, 3) int32.
    """
    if minor_radius >= major_radius:
        raise ValueError("the minor radius must be smaller than the major radius")
    u = np.arange(n_major) * (2 * np.pi / n_major)
    v = np.arange(n_minor) * (2 * np.pi / n_minor)
    uu, vv = np.meshgrid(u, v, indexing="ij")
    rho = major_radius + minor_radius * np.cos(vv)
    pos = np.stack([rho * np.cos(uu), rho * np.sin(uu), minor_radius * np.sin(vv)], axis=-1)
    idx = np.arange(n_major * n_minor).reshape(n_major, n_minor)
    a = idx
    b = np.roll(idx, -1, axis=0)
    c = np.roll(np.roll(idx, -1, axis=0), -1, axis=1)
    d = np.roll(idx, -1, axis=1)
    faces = np.concatenate(
        [np.stack([a, b, c], -1).reshape(-1, 3), np.stack([a, c, d], -1).reshape(-1, 3)]
    )
    return pos.reshape(-1, 3), faces.astype(np.int32)


def _generic_rotation() -> np.ndarray:
    """A fixed rotation matrix with no special alignment with the coordinate axes."""
    ax, ay, az = 0.3711, 0.5923, 0.2217
    rx = np.array([[1, 0, 0], [0, np.cos(ax), -np.sin(ax)], [0, np.sin(ax), np.cos(ax)]])
    ry = np.array([[np.cos(ay), 0, np.sin(ay)], [0, 1, 0], [-np.sin(ay), 0, np.cos(ay)]])
    rz = np.array([[np.cos(az), -np.sin(az), 0], [np.sin(az), np.cos(az), 0], [0, 0, 1]])
    return rz @ ry @ rx


def projective_plane_mesh(n: int = 32, rotate: bool = True) -> tuple[np.ndarray, np.ndarray]:
    """A closed mesh of RP^2: the octahedral sphere mesh modulo the antipodal map.

    Returns sphere points (V, 3) float64 (one representative of each antipodal pair, chosen
    with z >= 0 after the optional generic rotation) and faces (4 n^2, 3) int32. Any even map
    of the sphere (f(-p) = f(p)) applied to the points gives a closed surface on these faces.
    Euler characteristic 1 (V = 2n^2 + 1, E = 6n^2, F = 4n^2).
    """
    pos, faces = octahedral_sphere(n)
    keys = np.round(pos, 9) + 0.0
    neg = np.round(-pos, 9) + 0.0
    uniq, inverse = np.unique(np.concatenate([keys, neg]), axis=0, return_inverse=True)
    inverse = inverse.ravel()
    if len(uniq) != len(pos):
        raise RuntimeError("the sphere mesh is not centrally symmetric")
    point_of_group = np.empty(len(pos), np.int64)
    point_of_group[inverse[: len(pos)]] = np.arange(len(pos))
    antipode = point_of_group[inverse[len(pos) :]]
    canonical = np.minimum(np.arange(len(pos)), antipode)
    f = canonical[faces]
    key = np.sort(f, axis=1)
    _, first = np.unique(key, axis=0, return_index=True)
    f = f[np.sort(first)]
    used = np.unique(f)
    remap = -np.ones(len(pos), np.int64)
    remap[used] = np.arange(used.size)
    pts = pos[used]
    if rotate:
        pts = pts @ _generic_rotation().T
    pts = np.where(pts[:, 2:3] < 0, -pts, pts)
    return pts, remap[f].astype(np.int32)


def boy_surface(n: int = 40) -> tuple[np.ndarray, np.ndarray]:
    """Boy's surface by the Bryant–Kusner parametrisation, as a closed RP^2 mesh.

    For w in the closed unit disk (stereographic image of the upper hemisphere),
    with D = w^6 + sqrt(5) w^3 - 1 (formula recalled from memory; Kusner, "Conformal geometry
    and complete minimal surfaces", Bull. AMS 1987; Bryant, "Surfaces in conformal geometry",
    1988):
        g1 = -3/2 Im(w (1 - w^4) / D),  g2 = -3/2 Re(w (1 + w^4) / D),
        g3 = Im((1 + w^6) / D) - 1/2,   (x, y, z) = (g1, g2, g3) / (g1^2 + g2^2 + g3^2).
    The map is even on the sphere (antipodal points on the boundary circle agree).
    Returns positions (2n^2+1, 3) float64 and faces (4n^2, 3) int32.
    """
    p, faces = projective_plane_mesh(n)
    w = (p[:, 0] + 1j * p[:, 1]) / (1.0 + p[:, 2])
    d = w**6 + np.sqrt(5.0) * w**3 - 1.0
    g1 = -1.5 * np.imag(w * (1 - w**4) / d)
    g2 = -1.5 * np.real(w * (1 + w**4) / d)
    g3 = np.imag((1 + w**6) / d) - 0.5
    g = np.stack([g1, g2, g3], axis=1)
    pos = g / np.sum(g * g, axis=1, keepdims=True)
    return pos, faces


def roman_surface(n: int = 40) -> tuple[np.ndarray, np.ndarray]:
    """Steiner's Roman surface (x, y, z) -> (yz, zx, xy) on the unit sphere, as an RP^2 mesh.

    It has three double segments along the axes meeting in one triple point at the origin,
    and six pinch points (Whitney umbrellas) at their ends (+-1/2 on each axis).
    Returns positions (2n^2+1, 3) float64 and faces (4n^2, 3) int32.
    """
    p, faces = projective_plane_mesh(n)
    x, y, z = p.T
    return np.stack([y * z, z * x, x * y], axis=1), faces


def cross_cap(n: int = 40) -> tuple[np.ndarray, np.ndarray]:
    """The cross-cap (x, y, z) -> (yz, 2xy, x^2 - y^2) on the unit sphere, as an RP^2 mesh.

    Its double segment runs along the z axis from (0, 0, 0) to (0, 0, 1), with a pinch point
    (Whitney umbrella) at each end. Returns positions (2n^2+1, 3) and faces (4n^2, 3) int32.
    """
    p, faces = projective_plane_mesh(n)
    x, y, z = p.T
    return np.stack([y * z, 2 * x * y, x * x - y * y], axis=1), faces


def sphere_with_a_seam(n_lon: int = 10, n_lat: int = 6, exact_copies: bool = True):
    """Two frames of a UV sphere whose seam column is stored twice (as UV-unwrapped exports
    have), as polygons: positions (2, V, 3) float32 and a list of index arrays (quads between
    rings, triangles at the poles). With ``exact_copies`` the repeated column is a
    bit-identical copy of the first; otherwise it is computed at longitude 2 pi."""
    lon = np.linspace(0, 2 * np.pi, n_lon + 1)  # the last column repeats the first
    lat = np.linspace(-np.pi / 2, np.pi / 2, n_lat + 2)[1:-1]
    lo, la = np.meshgrid(lon, lat, indexing="ij")
    ring = np.stack([np.cos(la) * np.cos(lo), np.cos(la) * np.sin(lo), np.sin(la)], -1)
    if exact_copies:
        ring[-1] = ring[0]
    pts = np.vstack([ring.reshape(-1, 3), [[0, 0, -1]], [[0, 0, 1]]])
    idx = np.arange((n_lon + 1) * n_lat).reshape(n_lon + 1, n_lat)
    quads = [[idx[i, j], idx[i + 1, j], idx[i + 1, j + 1], idx[i, j + 1]]
             for i in range(n_lon) for j in range(n_lat - 1)]  # fmt: skip
    south, north = len(pts) - 2, len(pts) - 1
    tris = [[south, idx[i + 1, 0], idx[i, 0]] for i in range(n_lon)]
    tris += [[idx[i, -1], idx[i + 1, -1], north] for i in range(n_lon)]
    polys = [np.array(q) for q in quads + tris]
    return np.stack([pts, 1.5 * pts]).astype(np.float32), polys
