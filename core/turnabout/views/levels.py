"""Level points: where the tangent plane is horizontal and the outer side faces up.

For a closed oriented triangle mesh and an "up" direction u, the height of vertex v is
h(v) = p_v . u, with ties broken by vertex id (compare (h, id) lexicographically: simulation
of simplicity, H. Edelsbrunner and E. Mücke, "Simulation of Simplicity", ACM Trans. Graphics
9, 1990). A vertex is critical when the signs of h(w) - h(v) around its link change other
than twice; its index is 1 - (sign changes) / 2 (T. Banchoff, "Critical points and curvature
for embedded polyhedra", J. Differential Geometry 1, 1967): +1 for a dome (local maximum) or
a bowl (local minimum), 1 - k for a saddle with 2k sign changes (k >= 2: a monkey saddle).

Each critical vertex then has its outer side facing up or down: up when the horizontal
projection of its oriented link winds positively around the projection of the vertex
(counter-clockwise seen from above), or, when that winding is 0 or undefined, when the
oriented projected area of its star is positive. The level points are the critical
vertices facing up; the sum of their indices (the signed count, domes + bowls - saddles with
multiplicity) is the degree of the Gauss map, chi / 2 for an immersed closed oriented
surface (H. Hopf, "Über die Curvatura integra geschlossener Hyperflächen", Math. Annalen
95, 1926). The derivation is in docs/views.md, "Level points".

Sign changes without walking links: in a face whose three vertices have distinct (h, id)
keys, exactly one link edge (the one opposite the middle vertex) joins a higher and a lower
vertex. So the number of sign changes around v's link is the number of faces in which v is
the middle vertex, and a frame needs only three comparisons per face and one bincount.
Summing 1 - c_v / 2 over vertices gives V - M / 2 = V - E + F = chi on a closed mesh
(Banchoff's theorem, here an identity of the counting).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from ..check.topology import MeshTopology, TopologyError, topology_report
from ..progress import ProgressFn, no_progress

DOME, BOWL, SADDLE = 1, 2, 3
KIND_NAMES = {DOME: "dome", BOWL: "bowl", SADDLE: "saddle"}

# elements of one chunk's (frames x faces) arrays; bounds the working memory (~100 MB)
_CHUNK_ELEMENTS = 4_000_000
_TWO_PI = 2.0 * np.pi


class LevelPointError(ValueError):
    """Input that level points cannot be computed for (the message says what is allowed)."""


@dataclass(frozen=True)
class LevelPoints:
    """Level points of every frame, frame-major.

    frame : (K,) int64; vertex : (K,) int64; position : (K, 3) float64;
    kind : (K,) int8 of DOME, BOWL, SADDLE; index : (K,) int64 (+1 for domes and bowls,
    1 - (sign changes) / 2 <= -1 for saddles); signed_count : (F,) int64, the sum of index
    per frame (= the Gauss-map degree); up : (3,) float64 unit vector.
    down_count : (F,) int64, the same sum over the critical vertices whose outer side faces
    down (signed_count + down_count = chi, Banchoff); chi : the mesh's Euler characteristic.
    """

    frame: np.ndarray
    vertex: np.ndarray
    position: np.ndarray
    kind: np.ndarray
    index: np.ndarray
    signed_count: np.ndarray
    up: np.ndarray
    down_count: np.ndarray
    chi: int

    @property
    def n_frames(self) -> int:
        return int(self.signed_count.shape[0])

    def of_frame(self, f: int) -> LevelPoints:
        """The level points of frame f as a one-frame LevelPoints (as if computed from that
        frame alone: ``frame`` is 0 for every point, signed_count and down_count have length 1)."""
        if not -self.n_frames <= f < self.n_frames:
            raise LevelPointError(f"frame {f} out of range (allowed 0..{self.n_frames - 1})")
        f = int(f) % self.n_frames
        lo, hi = np.searchsorted(self.frame, [f, f + 1])
        return LevelPoints(
            frame=np.zeros(hi - lo, np.int64),
            vertex=self.vertex[lo:hi],
            position=self.position[lo:hi],
            kind=self.kind[lo:hi],
            index=self.index[lo:hi],
            signed_count=self.signed_count[f : f + 1],
            up=self.up,
            down_count=self.down_count[f : f + 1],
            chi=self.chi,
        )

    def kind_counts(self) -> np.ndarray:
        """(F, 3) int64: the number of domes, bowls and saddles (points, not multiplicity)."""
        out = np.zeros((self.n_frames, 3), np.int64)
        np.add.at(out, (self.frame, self.kind.astype(np.int64) - 1), 1)
        return out


def unit_up(up, option: str = "up") -> np.ndarray:
    """(3,) float64 unit vector from a 3-vector; LevelPointError for zero / NaN / infinity.

    The one rule for an "up" direction (level points, slices, camera rigs, ``--up``);
    messages name ``option``.
    """
    try:
        u = np.asarray(up, dtype=np.float64)
    except (TypeError, ValueError):
        raise LevelPointError(f"{option}: must be three numbers, got {up!r}") from None
    if u.shape != (3,):
        raise LevelPointError(f"{option}: must be three numbers X,Y,Z, got {up!r}")
    if not np.all(np.isfinite(u)):
        raise LevelPointError(f"{option}: must be three finite numbers, got {up!r}")
    norm = float(np.sqrt(u @ u))
    if not norm > 1e-300:
        raise LevelPointError(
            f"{option}: must be a non-zero direction such as (0, 0, 1), got {up!r}"
        )
    return u / norm


def up_from_text(text: str, option: str = "--up") -> tuple[float, float, float]:
    """``"X,Y,Z"`` (a command-line value) -> the unit up direction; LevelPointError naming
    ``option`` for anything else."""
    try:
        xyz = [float(v) for v in str(text).split(",")]
    except ValueError:
        raise LevelPointError(f"{option}: must be three numbers X,Y,Z, got {text!r}") from None
    u = unit_up(xyz if len(xyz) == 3 else text, option)
    return (float(u[0]), float(u[1]), float(u[2]))


class LevelTopology:
    """Face-derived arrays of a closed, consistently oriented triangle mesh (built once).

    faces : (M, 3) int64; used : (V,) bool; chi : int. Corners sorted by vertex:
    corner_vertex / corner_a / corner_b : (3M,) int64 for the corner (v, a, b) of face
    (v, a, b) (cyclic order), starts : (V + 1,) int64 (CSR). first_neighbour : (V,) int64.
    """

    def __init__(self, faces, n_vertices: int):
        try:
            topo = faces if isinstance(faces, MeshTopology) else MeshTopology(faces, n_vertices)
        except TopologyError as exc:
            raise LevelPointError(f"faces: {exc}") from None
        except (TypeError, ValueError) as exc:
            raise LevelPointError(f"faces must be (M, 3) integer vertex indices ({exc})") from None
        if topo.n_vertices != n_vertices:
            raise LevelPointError(
                f"faces are for {topo.n_vertices} vertices, positions have {n_vertices}"
            )
        rep = topology_report(topo)
        if rep.degenerate_faces:
            raise LevelPointError(
                f"{rep.degenerate_faces} face(s) repeat a vertex; every face needs three "
                "distinct vertices"
            )
        if not rep.closed:
            raise LevelPointError(
                f"the mesh is open ({rep.boundary_edges} boundary edges); level points need a "
                "closed surface: every edge in exactly two faces"
            )
        if not rep.is_manifold:
            raise LevelPointError(
                f"the mesh is not a 2-manifold ({rep.nonmanifold_edges} edges in more than two "
                f"faces, {rep.nonmanifold_vertices} vertices whose faces do not form one disk); "
                "level points need every edge in exactly two faces and one disk per vertex"
            )
        if not rep.consistently_oriented:
            raise LevelPointError(
                "the faces are not consistently oriented (some edge is traversed the same way "
                "by both its faces); level points need an oriented mesh: orient the faces first"
            )
        self.n_vertices = int(n_vertices)
        self.chi = int(rep.euler_characteristic)
        f = topo.faces.astype(np.int64)
        self.faces = f
        self.columns = tuple(np.ascontiguousarray(f[:, k]) for k in range(3))
        a, b, c = self.columns
        self.id_less = (a < b, b < c, c < a)  # tie rule per face edge
        self.used = topo.used_vertices.copy()
        order = topo.corner_order
        self.starts = topo.vertex_corner_starts.astype(np.int64)
        face, k = order // 3, order % 3
        self.corner_vertex = f[face, k]
        self.corner_a = f[face, (k + 1) % 3]
        self.corner_b = f[face, (k + 2) % 3]
        self.degree = np.diff(self.starts)
        first = np.minimum(self.starts[:-1], max(order.size - 1, 0))
        self.first_neighbour = np.where(self.used, self.corner_a[first], -1)


def _positions_block(positions) -> tuple[np.ndarray, bool]:
    try:
        P = np.asarray(positions)
    except (TypeError, ValueError):
        raise LevelPointError("positions must be a numeric (V, 3) or (F, V, 3) array") from None
    single = P.ndim == 2
    if single:
        P = P[None]
    if P.ndim != 3 or P.shape[-1] != 3 or P.shape[0] == 0 or P.shape[1] == 0:
        raise LevelPointError(
            f"positions must be (V, 3) or (F, V, 3) with F, V >= 1, got shape {P.shape}"
        )
    if P.dtype.kind not in "fiu":
        raise LevelPointError(f"positions must be numbers, got dtype {P.dtype}")
    return P, single


def _less(x, y, id_less):
    """(x, id_x) < (y, id_y) lexicographically; id_less = id_x < id_y per column."""
    return (x < y) | ((x == y) & id_less)


def _less_block(x: np.ndarray, y: np.ndarray, id_less: np.ndarray) -> np.ndarray:
    """_less over a (C, M) block; the tie rule is applied only where heights are equal."""
    out = x < y
    tie = x == y
    if tie.any():
        out |= tie & id_less
    return out


def _chunk_critical(H: np.ndarray, lt: LevelTopology):
    """Sign-change counts of one chunk: H (C, V) float64 heights -> critical (frame, vertex).

    Returns (frame (k,), vertex (k,), changes (k,)) int64 of the critical vertices.
    """
    c, n = H.shape
    a, b, d = lt.columns
    ha, hb, hd = H.take(a, axis=1), H.take(b, axis=1), H.take(d, axis=1)
    ab = _less_block(ha, hb, lt.id_less[0])  # a < b
    bd = _less_block(hb, hd, lt.id_less[1])  # b < d
    da = _less_block(hd, ha, lt.id_less[2])  # d < a
    del ha, hb, hd
    mid_a = ab == da  # a > b xor a > d  (a > b = ~ab, a > d = da)
    mid_b = bd == ab  # b > d xor b > a
    mid = np.where(mid_a, a, np.where(mid_b, b, d))
    changes = np.empty((c, n), np.int64)
    for k in range(c):  # one bincount per frame (a loop over frames, not vertices)
        changes[k] = np.bincount(mid[k], minlength=n)
    crit = (changes != 2) & lt.used
    fr, vx = np.nonzero(crit)
    return fr, vx, changes[fr, vx]


def _facing_up(P: np.ndarray, fr: np.ndarray, vx: np.ndarray, u: np.ndarray, lt: LevelTopology):
    """(k,) bool: the outer side of each critical vertex faces up (see the module doc).

    P : (C, V, 3) float; fr, vx : (k,) int64 frame-in-chunk and vertex of each point.
    Winding of the oriented link's projection around the vertex's projection: the sum over
    its corners (v, a, b) of the signed angle from a - v to b - v seen along u, over 2 pi.
    Falls back on the sign of the star's projected area (sum of (a - v) x (b - v) . u) when
    a corner is degenerate (the vertex's projection on the projected edge) or the winding is 0.
    """
    if fr.size == 0:
        return np.zeros(0, bool)
    lens = lt.degree[vx]
    seg = np.zeros(lens.size, np.int64)
    np.cumsum(lens[:-1], out=seg[1:])
    corner = np.repeat(lt.starts[vx] - seg, lens) + np.arange(int(lens.sum()))
    f = np.repeat(fr, lens)
    pv = P[f, lt.corner_vertex[corner]].astype(np.float64)
    ea = P[f, lt.corner_a[corner]] - pv
    eb = P[f, lt.corner_b[corner]] - pv
    cross = np.cross(ea, eb) @ u
    za, zb = ea @ u, eb @ u
    dot = np.einsum("ij,ij->i", ea, eb) - za * zb
    scale = np.sqrt(np.maximum((np.einsum("ij,ij->i", ea, ea) - za * za), 0.0)
                    * np.maximum((np.einsum("ij,ij->i", eb, eb) - zb * zb), 0.0))  # fmt: skip
    bad = (np.abs(cross) <= 1e-12 * scale) & (dot <= 0.0)
    angle = np.arctan2(cross, dot)
    wind = np.add.reduceat(angle, seg) / _TWO_PI
    area = np.add.reduceat(cross, seg)
    degenerate = np.add.reduceat(bad.astype(np.int64), seg) > 0
    w = np.rint(wind)
    degenerate |= np.abs(wind - w) > 1e-6
    use_area = degenerate | (w == 0)
    return np.where(use_area, area > 0.0, w > 0)


def level_points(
    positions,
    faces,
    up=(0.0, 0.0, 1.0),
    topology: LevelTopology | None = None,
    progress: ProgressFn | None = None,
) -> LevelPoints:
    """Level points of one frame or of every frame of an animation.

    positions : (V, 3) or (F, V, 3) float (float32 is read as float64 in chunks of frames);
    faces : (M, 3) int triangles of a closed, consistently oriented 2-manifold (or a
    MeshTopology of them); up : 3 numbers, any non-zero length; topology : a LevelTopology
    of these faces, to skip re-validating them; progress(done, total) is called after each
    chunk of frames and may raise turnabout.progress.Cancelled. Returns :class:`LevelPoints`
    (F = 1 for a (V, 3) input). Raises LevelPointError on bad input, before any work.
    """
    u = unit_up(up)
    P, _ = _positions_block(positions)
    n_frames, n_vertices = P.shape[0], P.shape[1]
    lt = LevelTopology(faces, n_vertices) if topology is None else topology
    if lt.n_vertices != n_vertices:
        raise LevelPointError(
            f"the topology is for {lt.n_vertices} vertices, positions have {n_vertices}"
        )
    chunk = max(1, _CHUNK_ELEMENTS // max(lt.faces.shape[0], 1))
    if P.dtype.kind == "f":
        for s in range(0, n_frames, chunk):
            block = P[s : s + chunk]
            if not np.all(np.isfinite(block)):
                f, v, _ = np.argwhere(~np.isfinite(block))[0]
                raise LevelPointError(
                    f"positions contain NaN or infinity (first at frame {s + f}, vertex {v}); "
                    "every coordinate must be a finite number"
                )
    progress = no_progress if progress is None else progress
    frames, verts, changes, ups, maxima = [], [], [], [], []
    for s in range(0, n_frames, chunk):
        block = P[s : s + chunk]
        H = block @ u  # (C, V) float64
        fr, vx, ch = _chunk_critical(H, lt)
        ups.append(_facing_up(block, fr, vx, u, lt))
        # a vertex without sign changes is a dome when its first neighbour is lower
        nb = lt.first_neighbour[vx]
        maxima.append(_less(H[fr, nb], H[fr, vx], nb < vx))
        frames.append(fr + s)
        verts.append(vx)
        changes.append(ch)
        progress(min(s + chunk, n_frames), n_frames)
    fr = np.concatenate(frames)
    vx = np.concatenate(verts)
    ch = np.concatenate(changes)
    facing = np.concatenate(ups)
    index = 1 - ch // 2
    up_count = np.bincount(fr[facing], weights=index[facing], minlength=n_frames)
    down_count = np.bincount(fr[~facing], weights=index[~facing], minlength=n_frames)
    is_max = np.concatenate(maxima)[facing]
    fr, vx, ch, index = fr[facing], vx[facing], ch[facing], index[facing]
    kind = np.where(ch == 0, np.where(is_max, DOME, BOWL), SADDLE).astype(np.int8)
    return LevelPoints(
        frame=fr.astype(np.int64),
        vertex=vx.astype(np.int64),
        position=P[fr, vx].astype(np.float64).reshape(-1, 3),
        kind=kind,
        index=index.astype(np.int64),
        signed_count=np.rint(up_count).astype(np.int64),
        up=u,
        down_count=np.rint(down_count).astype(np.int64),
        chi=lt.chi,
    )


def level_topology(faces, n_vertices: int) -> LevelTopology:
    """Validated :class:`LevelTopology` of (M, 3) faces over n_vertices vertices."""
    return LevelTopology(faces, n_vertices)


def level_count_table(up=(0.0, 0.0, 1.0)):
    """A ``level_counts`` function for :func:`turnabout.check.check_animation`.

    It maps (positions (F, V, 3), faces (M, 3)) to an (F, 4) int64 table: signed count,
    domes, bowls, saddles per frame, or None where the mesh has no level points to count
    (open, non-manifold or inconsistently oriented), so the report's level fields stay null.
    """
    u = unit_up(up)

    def count(positions, faces):
        try:
            lp = level_points(positions, faces, u)
        except LevelPointError:
            return None
        return np.column_stack([lp.signed_count, lp.kind_counts()])

    return count
