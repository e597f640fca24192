"""Closed oriented test surfaces for the level-point tests, built here from first principles.

Each builder returns (positions (V, 3) float64, faces (M, 3) int64) with outward orientation.
"""

from __future__ import annotations

import numpy as np

_T = (1.0 + 5.0**0.5) / 2.0
_ICO_V = [(-1, _T, 0), (1, _T, 0), (-1, -_T, 0), (1, -_T, 0), (0, -1, _T), (0, 1, _T),
          (0, -1, -_T), (0, 1, -_T), (_T, 0, -1), (_T, 0, 1), (-_T, 0, -1),
          (-_T, 0, 1)]  # fmt: skip
_ICO_F = [(0, 11, 5), (0, 5, 1), (0, 1, 7), (0, 7, 10), (0, 10, 11), (1, 5, 9),
          (5, 11, 4), (11, 10, 2), (10, 7, 6), (7, 1, 8), (3, 9, 4), (3, 4, 2), (3, 2, 6),
          (3, 6, 8), (3, 8, 9), (4, 9, 5), (2, 4, 11), (6, 2, 10), (8, 6, 7),
          (9, 8, 1)]  # fmt: skip


def signed_volume(p: np.ndarray, f: np.ndarray) -> float:
    a, b, c = p[f[:, 0]], p[f[:, 1]], p[f[:, 2]]
    return float(np.einsum("ij,ij->", a, np.cross(b, c)) / 6.0)


def outward(p: np.ndarray, f: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """The same mesh, faces flipped if its signed volume is negative."""
    return (p, f) if signed_volume(p, f) > 0 else (p, f[:, ::-1].copy())


def icosphere(level: int) -> tuple[np.ndarray, np.ndarray]:
    """Unit sphere: the icosahedron with each triangle split in four ``level`` times."""
    p = np.array(_ICO_V, np.float64)
    p /= np.linalg.norm(p, axis=1, keepdims=True)
    f = np.array(_ICO_F, np.int64)
    for _ in range(level):
        a, b, c = f[:, 0], f[:, 1], f[:, 2]
        e = np.stack([np.stack([a, b], 1), np.stack([b, c], 1), np.stack([c, a], 1)])  # (3,M,2)
        key = np.sort(e, axis=2).reshape(-1, 2)
        uniq, inv = np.unique(key, axis=0, return_inverse=True)
        mid = p[uniq[:, 0]] + p[uniq[:, 1]]
        mid /= np.linalg.norm(mid, axis=1, keepdims=True)
        ids = (inv.ravel() + p.shape[0]).reshape(3, -1)
        ab, bc, ca = ids
        p = np.concatenate([p, mid])
        f = np.concatenate([np.stack(t, 1) for t in
                            ((a, ab, ca), (b, bc, ab), (c, ca, bc), (ab, bc, ca))])  # fmt: skip
    return outward(p, f)


def torus(n_u: int, n_v: int, big: float = 1.0, small: float = 0.4):
    """Torus of revolution about z: n_u steps around the axis, n_v around the tube."""
    u = np.arange(n_u) * (2 * np.pi / n_u)
    v = np.arange(n_v) * (2 * np.pi / n_v)
    uu, vv = np.meshgrid(u, v, indexing="ij")
    rho = big + small * np.cos(vv)
    p = np.stack([rho * np.cos(uu), rho * np.sin(uu), small * np.sin(vv)], -1).reshape(-1, 3)
    i, j = np.meshgrid(np.arange(n_u), np.arange(n_v), indexing="ij")
    a = i * n_v + j
    b = ((i + 1) % n_u) * n_v + j
    c = ((i + 1) % n_u) * n_v + (j + 1) % n_v
    d = i * n_v + (j + 1) % n_v
    f = np.concatenate([np.stack([a, b, c], -1).reshape(-1, 3),
                        np.stack([a, c, d], -1).reshape(-1, 3)])  # fmt: skip
    return outward(p, f)


def subdivided_cube(n: int) -> tuple[np.ndarray, np.ndarray]:
    """Axis-aligned cube [-1, 1]^3, each side an n x n grid of split squares (many equal
    coordinates: ties for any axis direction)."""
    g = np.linspace(-1.0, 1.0, n + 1)
    pts: dict[tuple, int] = {}
    faces = []

    def vid(q):
        key = tuple(np.round(q, 12))
        if key not in pts:
            pts[key] = len(pts)
        return pts[key]

    for axis in range(3):
        for side in (-1.0, 1.0):
            for i in range(n):
                for j in range(n):
                    quad = []
                    for di, dj in ((0, 0), (1, 0), (1, 1), (0, 1)):
                        q = np.zeros(3)
                        q[axis] = side
                        q[(axis + 1) % 3] = g[i + di]
                        q[(axis + 2) % 3] = g[j + dj]
                        quad.append(vid(q))
                    if side < 0:
                        quad = quad[::-1]
                    faces += [(quad[0], quad[1], quad[2]), (quad[0], quad[2], quad[3])]
    p = np.array(list(pts.keys()), np.float64)
    return outward(p, np.array(faces, np.int64))


def octahedron() -> tuple[np.ndarray, np.ndarray]:
    p = np.array([(1, 0, 0), (-1, 0, 0), (0, 1, 0), (0, -1, 0), (0, 0, 1), (0, 0, -1)], float)
    f = np.array([(0, 2, 4), (2, 1, 4), (1, 3, 4), (3, 0, 4),
                  (2, 0, 5), (1, 2, 5), (3, 1, 5), (0, 3, 5)], np.int64)  # fmt: skip
    return outward(p, f)


# --- marching tetrahedra -------------------------------------------------------------------

# the cube split into six tetrahedra around its 0-7 diagonal (corner bit 1 = x, 2 = y, 4 = z)
_TETS = ((0, 1, 3, 7), (0, 3, 2, 7), (0, 2, 6, 7), (0, 6, 4, 7), (0, 4, 5, 7), (0, 5, 1, 7))
_CORNER = np.array([[(c >> 0) & 1, (c >> 1) & 1, (c >> 2) & 1] for c in range(8)])


def marching_tetrahedra(values: np.ndarray, origin, spacing: float):
    """The surface {values = 0} of a sampled field, oriented from negative to positive.

    values : (nx, ny, nz) float64, none exactly 0. Each cube is split into six tetrahedra
    sharing a diagonal, so neighbouring cubes agree on their shared faces and the result is
    a closed 2-manifold where {values < 0} stays inside the grid. One vertex per crossed
    grid edge (linear interpolation).
    """
    nx, ny, nz = values.shape
    ii, jj, kk = np.meshgrid(np.arange(nx - 1), np.arange(ny - 1), np.arange(nz - 1),
                             indexing="ij")  # fmt: skip
    base = np.stack([ii.ravel(), jj.ravel(), kk.ravel()], 1)
    flat = lambda q: (q[:, 0] * ny + q[:, 1]) * nz + q[:, 2]  # noqa: E731
    vals = values.ravel()
    xyz = lambda q: np.asarray(origin) + spacing * q  # noqa: E731
    tris_keys = []
    for tet in _TETS:
        node = np.stack([flat(base + _CORNER[c]) for c in tet], 1)  # (N, 4)
        v = vals[node]
        neg = v < 0
        count = neg.sum(1)
        for m in (1, 2, 3):
            sel = count == m
            if not sel.any():
                continue
            nd, ng = node[sel], neg[sel]
            if m == 3:  # one positive: same as one negative with roles swapped
                ng = ~ng
            order = np.argsort(~ng, axis=1, kind="stable")  # the "lone"/first group first
            q = np.take_along_axis(nd, order, 1)
            k = 1 if m != 2 else 2
            if k == 1:
                polys = [np.stack([_ekey(q[:, 0], q[:, j]) for j in (1, 2, 3)], 1)]
            else:  # quad: edges 0-2, 0-3, 1-3, 1-2 in cyclic order
                e = [_ekey(q[:, 0], q[:, 2]), _ekey(q[:, 0], q[:, 3]),
                     _ekey(q[:, 1], q[:, 3]), _ekey(q[:, 1], q[:, 2])]  # fmt: skip
                polys = [np.stack([e[0], e[1], e[2]], 1), np.stack([e[0], e[2], e[3]], 1)]
            lone = q[:, 0]
            for t in polys:
                tris_keys.append((t, lone, np.where(m == 3, 1, 0) * np.ones(len(t), int)))
    keys = np.concatenate([t.reshape(-1, 2) for t, _, _ in tris_keys])
    uniq, inv = np.unique(keys, axis=0, return_inverse=True)
    inv = inv.ravel()
    a, b = uniq[:, 0], uniq[:, 1]
    va, vb = vals[a], vals[b]
    s = va / (va - vb)
    ijk = lambda n: np.stack([n // (ny * nz), (n // nz) % ny, n % nz], 1)  # noqa: E731
    pos = xyz(ijk(a) * (1 - s)[:, None] + ijk(b) * s[:, None])
    faces = inv.reshape(-1, 3)
    lone = np.concatenate([lo for _, lo, _ in tris_keys])
    # orient every triangle so its normal points from negative to positive values
    tri = pos[faces]
    n = np.cross(tri[:, 1] - tri[:, 0], tri[:, 2] - tri[:, 0])
    centre = tri.mean(1)
    lone_p = xyz(ijk(lone))
    outward_dir = centre - lone_p
    lone_negative = vals[lone] < 0
    outward_dir[~lone_negative] *= -1
    flip = np.einsum("ij,ij->i", n, outward_dir) < 0
    faces[flip] = faces[flip][:, ::-1]
    return pos, faces.astype(np.int64)


def _ekey(a, b):
    return np.stack([np.minimum(a, b), np.maximum(a, b)], 1)


def torus_chain(genus: int, spacing: float = 0.06, big: float = 1.0, small: float = 0.35):
    """A closed surface of the given genus: ``genus`` solid tori in a row along x, each
    overlapping the next, meshed by marching tetrahedra. genus 0 gives a ball."""
    if genus == 0:
        field = lambda x, y, z: x * x + y * y + z * z - 1.0  # noqa: E731
        lo = np.array([-1.3, -1.3, -1.3])
        hi = -lo
    else:
        centres = (np.arange(genus) - (genus - 1) / 2) * 2.0 * big

        def field(x, y, z):
            d = np.full(x.shape, np.inf)
            for c in centres:
                ring = np.sqrt((x - c) ** 2 + y * y) - big
                d = np.minimum(d, np.sqrt(ring * ring + z * z) - small)
            return d

        lo = np.array([centres[0] - big - small - 0.2, -big - small - 0.2, -small - 0.2])
        hi = np.array([centres[-1] + big + small + 0.2, big + small + 0.2, small + 0.2])
    # offset the grid by an irrational fraction so no sample is exactly on the surface
    lo = lo - spacing * np.array([0.3183, 0.2718, 0.1414])
    counts = np.ceil((hi - lo) / spacing).astype(int) + 1
    axes = [lo[i] + spacing * np.arange(counts[i]) for i in range(3)]
    X, Y, Z = np.meshgrid(*axes, indexing="ij")
    V = field(X, Y, Z)
    V[V == 0] = 1e-12
    return marching_tetrahedra(V, lo, spacing)
