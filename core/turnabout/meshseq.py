"""Mesh sequences on disk: our .npz, folders of numbered OBJ files, PLY sequences.

A mesh sequence is one fixed face list plus vertex positions per frame:

- ``positions`` : (F, V, 3) float32
- ``faces`` : (M, 3) int32 triangles, or ``polygons`` (a list of (k,) int32 index arrays)
  when the files hold faces with more than three corners
- ``uv`` : optional (V, 2) float32, one texture coordinate per vertex
- ``times`` : optional (F,) float64

Every file is treated as untrusted: ``np.load(..., allow_pickle=False)``, array shapes and
element counts are checked against the file size and against :class:`ReadLimits` before
anything is allocated, and every problem raises :class:`MeshSequenceError` naming the file,
what is wrong and what is allowed. Writers are atomic (a temporary file in the destination
folder, then a rename) and deterministic (the same inputs give byte-identical files).
"""

from __future__ import annotations

import io
import os
import re
import zipfile
from collections.abc import Sequence
from dataclasses import dataclass
from pathlib import Path
from typing import Any

import numpy as np

from .output import atomic_write, atomic_write_bytes  # noqa: F401

# A fixed timestamp for zip members, so that npz output does not depend on the clock.
_ZIP_EPOCH = (1980, 1, 1, 0, 0, 0)
_NPZ_MEMBERS = ("positions", "faces", "uv", "times")


class MeshSequenceError(ValueError):
    """An unreadable or inconsistent mesh sequence (the message says what and where)."""


@dataclass(frozen=True)
class ReadLimits:
    """Upper bounds checked before allocating memory for untrusted files."""

    max_frames: int = 100_000
    max_vertices: int = 20_000_000
    max_faces: int = 40_000_000
    max_corners: int = 64  # corners of one polygon
    max_total_bytes: int = 8 * 1024**3  # decoded positions over all frames


@dataclass
class MeshSequence:
    """An animated mesh with fixed topology.

    positions : (F, V, 3) float32
    faces : (M, 3) int32 triangles, or None when the faces are general polygons
    polygons : list of (k,) int32 vertex index arrays (always set; triangles too)
    uv : (V, 2) float32 or None
    times : (F,) float64 or None
    """

    positions: np.ndarray
    faces: np.ndarray | None
    polygons: list[np.ndarray]
    uv: np.ndarray | None = None
    times: np.ndarray | None = None

    @property
    def n_frames(self) -> int:
        return int(self.positions.shape[0])

    @property
    def n_vertices(self) -> int:
        return int(self.positions.shape[1])

    def triangles(self) -> np.ndarray:
        """The faces as triangles, (M, 3) int32 (polygons are split into fans)."""
        if self.faces is not None:
            return self.faces
        return triangulate_polygons(self.polygons)


# --------------------------------------------------------------------------- helpers


def triangulate_polygons(polygons: Sequence[Any] | np.ndarray) -> np.ndarray:
    """Split polygons into triangle fans around their first corner.

    polygons : (M, k) int array or a list of index sequences (k >= 3 each)
    Returns (T, 3) int32.
    """
    if isinstance(polygons, np.ndarray) and polygons.ndim == 2:
        arr = polygons.astype(np.int64)
        k = arr.shape[1]
        if k < 3:
            raise MeshSequenceError(f"faces need at least 3 corners, got {k}")
        if k == 3:
            return arr.astype(np.int32)
        tris = [np.stack([arr[:, 0], arr[:, j], arr[:, j + 1]], axis=1) for j in range(1, k - 1)]
        return np.stack(tris, axis=1).reshape(-1, 3).astype(np.int32)
    polys = [np.asarray(p, dtype=np.int64).ravel() for p in polygons]
    if not polys:
        return np.zeros((0, 3), np.int32)
    sizes = np.array([p.size for p in polys])
    if sizes.min() < 3:
        bad = int(np.argmin(sizes))
        raise MeshSequenceError(f"face {bad} has {sizes[bad]} corners; faces need at least 3")
    flat = np.concatenate(polys)
    starts = np.concatenate([[0], np.cumsum(sizes)[:-1]])
    n_tri = sizes - 2
    first = np.repeat(starts, n_tri)
    # j-th triangle of a polygon uses corners (0, j+1, j+2)
    j = np.arange(n_tri.sum()) - np.repeat(np.cumsum(n_tri) - n_tri, n_tri)
    tri = np.stack([flat[first], flat[first + j + 1], flat[first + j + 2]], axis=1)
    return tri.astype(np.int32)


def _polygons_from_triangles(faces: np.ndarray) -> list[np.ndarray]:
    return list(faces.astype(np.int32))


def _as_faces(faces) -> tuple[np.ndarray | None, list[np.ndarray]]:
    """(triangles or None, polygons) from an (M, 3) array or a list of polygons."""
    if isinstance(faces, np.ndarray) and faces.ndim == 2 and faces.shape[1] == 3:
        tri = faces.astype(np.int32)
        return tri, _polygons_from_triangles(tri)
    if isinstance(faces, np.ndarray) and faces.ndim == 2:
        polys = [np.asarray(r, np.int32) for r in faces]
    else:
        polys = [np.asarray(p, dtype=np.int64).ravel().astype(np.int32) for p in faces]
    if polys and all(p.size == 3 for p in polys):
        tri = np.stack(polys).astype(np.int32)
        return tri, polys
    return None, polys


def _check_positions(positions, name: str = "positions") -> np.ndarray:
    pos = np.asarray(positions)
    if pos.ndim == 2:
        pos = pos[None]
    if pos.ndim != 3 or pos.shape[-1] != 3:
        raise MeshSequenceError(f"{name} must have shape (frames, vertices, 3), got {pos.shape}")
    if pos.dtype.kind not in "fiu":
        raise MeshSequenceError(f"{name} must be numeric, got dtype {pos.dtype}")
    return pos


def _validate(seq: MeshSequence, source: str, files: Sequence[Path] = ()) -> MeshSequence:
    """Check shapes, finiteness and indices; ``files`` (one per frame) names the file at fault."""
    pos = seq.positions
    if pos.ndim != 3 or pos.shape[-1] != 3:
        raise MeshSequenceError(
            f"{source}: positions must be (frames, vertices, 3), got {pos.shape}"
        )
    if pos.shape[0] == 0:
        raise MeshSequenceError(f"{source}: no frames")
    if pos.shape[1] == 0:
        raise MeshSequenceError(f"{source}: no vertices")
    bad = ~np.isfinite(pos)
    if bad.any():
        f, v, _ = np.argwhere(bad)[0]
        where = str(files[f]) if len(files) > f else source
        raise MeshSequenceError(
            f"{where}: positions contain NaN or infinity (first at frame {f}, vertex {v}); "
            "every coordinate must be a finite number"
        )
    if not seq.polygons:
        raise MeshSequenceError(f"{source}: no faces")
    n = pos.shape[1]
    flat = np.concatenate([np.asarray(p).ravel() for p in seq.polygons])
    if flat.min() < 0 or flat.max() >= n:
        worst = int(flat.max()) if flat.max() >= n else int(flat.min())
        raise MeshSequenceError(
            f"{source}: a face uses vertex index {worst}, but there are {n} vertices "
            f"(indices must be 0..{n - 1})"
        )
    if seq.uv is not None and seq.uv.shape != (n, 2):
        raise MeshSequenceError(
            f"{source}: uv must be (vertices, 2) = ({n}, 2), got {seq.uv.shape}"
        )
    if seq.times is not None:
        if seq.times.shape != (pos.shape[0],):
            raise MeshSequenceError(
                f"{source}: times must be (frames,) = ({pos.shape[0]},), got {seq.times.shape}"
            )
        if not np.all(np.isfinite(seq.times)):
            raise MeshSequenceError(f"{source}: times contain NaN or infinity")
    return seq


# The one atomic writer lives in turnabout.output; re-exported here for existing callers.


# --------------------------------------------------------------------------- npz


def _npy_bytes(arr: np.ndarray) -> bytes:
    buf = io.BytesIO()
    np.lib.format.write_array(buf, np.ascontiguousarray(arr), allow_pickle=False)
    return buf.getvalue()


def write_npz(
    path,
    positions,
    faces,
    uv=None,
    times=None,
    *,
    compress: bool = False,
) -> Path:
    """Write our .npz: positions (F, V, 3) float32, faces (M, 3) int32, optional uv, times.

    Members are written in the fixed order positions, faces, uv, times with a fixed zip
    timestamp, so the same inputs give byte-identical files. Polygon faces are split into
    triangle fans. ``compress`` uses deflate (smaller, slower). Returns the path.
    """
    path = Path(path)
    pos = _check_positions(positions).astype(np.float32)
    tri, polys = _as_faces(faces)
    if tri is None:
        tri = triangulate_polygons(polys)
    seq = MeshSequence(
        positions=pos,
        faces=tri,
        polygons=list(tri),
        uv=None if uv is None else np.asarray(uv, np.float32),
        times=None if times is None else np.asarray(times, np.float64).ravel(),
    )
    _validate(seq, str(path))
    members = {"positions": pos, "faces": tri.astype(np.int32)}
    if seq.uv is not None:
        members["uv"] = seq.uv
    if seq.times is not None:
        members["times"] = seq.times
    write_npz_arrays(path, {k: members[k] for k in _NPZ_MEMBERS if k in members}, compress)
    return path


def write_npz_arrays(path, arrays: dict[str, np.ndarray], compress: bool = False) -> Path:
    """Write named arrays as an .npz (readable by ``np.load``), byte-identical for equal input.

    Members go in the dict's order with a fixed zip timestamp and permissions (``np.savez``
    stamps the current time); no pickled objects. Written through :func:`atomic_write`.
    """
    method = zipfile.ZIP_DEFLATED if compress else zipfile.ZIP_STORED
    buf = io.BytesIO()
    with zipfile.ZipFile(buf, "w", compression=method, allowZip64=True) as zf:
        for name, arr in arrays.items():
            info = zipfile.ZipInfo(name + ".npy", date_time=_ZIP_EPOCH)
            info.compress_type = method
            info.external_attr = 0o644 << 16
            zf.writestr(info, _npy_bytes(np.asarray(arr)))
    atomic_write_bytes(path, buf.getvalue())
    return Path(path)


def _npy_header(zf: zipfile.ZipFile, info: zipfile.ZipInfo, source: str):
    """(shape, dtype) from a member's .npy header, without reading its data."""
    with zf.open(info) as fh:
        try:
            version = np.lib.format.read_magic(fh)
            if version == (1, 0):
                shape, fortran, dtype = np.lib.format.read_array_header_1_0(fh)
            elif version in ((2, 0), (3, 0)):
                shape, fortran, dtype = np.lib.format.read_array_header_2_0(fh)
            else:
                raise ValueError(f"unsupported npy version {version}")
        except ValueError as exc:
            raise MeshSequenceError(
                f"{source}: member {info.filename!r} is not a valid .npy array ({exc})"
            ) from None
    if dtype.hasobject:
        raise MeshSequenceError(
            f"{source}: member {info.filename!r} holds Python objects; "
            "only numeric arrays are allowed"
        )
    return tuple(int(s) for s in shape), dtype


def _file_size(path: Path) -> int:
    """Size of a file we are about to read; refuses missing, unreadable and empty files."""
    try:
        size = path.stat().st_size
    except OSError as exc:
        raise MeshSequenceError(f"{path}: cannot read ({exc.strerror})") from None
    if size == 0:
        raise MeshSequenceError(f"{path}: the file is empty")
    return size


def read_npz(path, *, limits: ReadLimits = ReadLimits()) -> MeshSequence:
    """Read our .npz (see :func:`write_npz`), checking every member before loading it."""
    path = Path(path)
    source = str(path)
    _file_size(path)
    try:
        zf = zipfile.ZipFile(path)
    except (zipfile.BadZipFile, OSError) as exc:
        raise MeshSequenceError(
            f"{source}: not a readable .npz archive ({exc}); the file may be truncated"
        ) from None
    with zf:
        infos = {
            i.filename[:-4] if i.filename.endswith(".npy") else i.filename: i for i in zf.infolist()
        }
        missing = [m for m in ("positions", "faces") if m not in infos]
        if missing:
            raise MeshSequenceError(
                f"{source}: missing array(s) {', '.join(missing)}; a mesh sequence .npz needs "
                "'positions' (F, V, 3) and 'faces' (M, 3), optionally 'uv' (V, 2) and 'times' (F,)"
            )
        headers = {}
        for name in _NPZ_MEMBERS:
            if name in infos:
                headers[name] = _npy_header(zf, infos[name], source)
        (pshape, pdtype), (fshape, fdtype) = headers["positions"], headers["faces"]
        if len(pshape) == 2 and pshape[-1] == 3:
            pshape = (1, *pshape)
        if len(pshape) != 3 or pshape[-1] != 3:
            raise MeshSequenceError(
                f"{source}: positions must be (frames, vertices, 3), got {pshape}"
            )
        if len(fshape) != 2 or fshape[-1] != 3:
            raise MeshSequenceError(f"{source}: faces must be (M, 3) triangles, got {fshape}")
        if pdtype.kind != "f" or fdtype.kind not in "iu":
            raise MeshSequenceError(
                f"{source}: positions must be float and faces integer, got {pdtype} and {fdtype}"
            )
        n_f, n_v, _ = pshape
        if n_f > limits.max_frames or n_v > limits.max_vertices or fshape[0] > limits.max_faces:
            raise MeshSequenceError(
                f"{source}: {n_f} frames x {n_v} vertices, {fshape[0]} faces exceeds the limits "
                f"({limits.max_frames} frames, {limits.max_vertices} vertices, "
                f"{limits.max_faces} faces)"
            )
        if n_f * n_v * 3 * 4 > limits.max_total_bytes:
            raise MeshSequenceError(
                f"{source}: positions would need more than {limits.max_total_bytes} bytes"
            )
        for name, (shape, dtype) in headers.items():
            need = int(np.prod(shape, dtype=np.int64)) * dtype.itemsize
            if infos[name].file_size < need:
                raise MeshSequenceError(
                    f"{source}: member {name!r} is truncated ({infos[name].file_size} bytes for a "
                    f"{shape} {dtype} array needing {need})"
                )
    try:
        with np.load(path, allow_pickle=False) as data:
            positions = np.asarray(data["positions"], dtype=np.float32)
            faces = np.asarray(data["faces"])
            uv = np.asarray(data["uv"], dtype=np.float32) if "uv" in data.files else None
            times = np.asarray(data["times"], dtype=np.float64) if "times" in data.files else None
    except (ValueError, OSError, zipfile.BadZipFile, EOFError) as exc:
        raise MeshSequenceError(
            f"{source}: cannot load arrays ({exc}); the file may be truncated"
        ) from None
    if positions.ndim == 2:
        positions = positions[None]
    if faces.size and (faces.min() < 0 or faces.max() > np.iinfo(np.int32).max):
        raise MeshSequenceError(
            f"{source}: face indices out of range (min {faces.min()}, max {faces.max()})"
        )
    faces = faces.astype(np.int32)
    seq = MeshSequence(positions=positions, faces=faces, polygons=list(faces), uv=uv, times=times)
    return _validate(seq, source)


# --------------------------------------------------------------------------- OBJ


def _make_folder(folder: Path) -> None:
    """Make the output folder itself (its parent must exist: a typo is not a new tree)."""
    from .output import check_output_folder

    check_output_folder(folder)
    folder.mkdir(exist_ok=True)


def _frame_names(folder: Path, prefix: str, ext: str, n: int) -> list[Path]:
    width = max(4, len(str(max(n - 1, 0))))
    return [folder / f"{prefix}{i:0{width}d}.{ext}" for i in range(n)]


def _fmt_rows(fmt: str, arr: np.ndarray) -> bytes:
    if arr.size == 0:
        return b""
    row_fmt = fmt + "\n"
    return ((row_fmt * arr.shape[0]) % tuple(arr.ravel().tolist())).encode("ascii")


def _obj_face_block(polys: list[np.ndarray], with_uv: bool) -> bytes:
    tri, _ = _as_faces(polys)
    if tri is not None:
        one = tri.astype(np.int64) + 1
        if with_uv:
            one = np.repeat(one, 2, axis=1)
            return _fmt_rows("f %d/%d %d/%d %d/%d", one)
        return _fmt_rows("f %d %d %d", one)
    lines = []
    for p in polys:
        idx = (np.asarray(p, np.int64) + 1).tolist()
        if with_uv:
            lines.append("f " + " ".join(f"{i}/{i}" for i in idx))
        else:
            lines.append("f " + " ".join(str(i) for i in idx))
    return ("\n".join(lines) + "\n").encode("ascii")


def write_obj_sequence(folder, positions, faces, uv=None, *, prefix: str = "frame_") -> list[Path]:
    """Write one OBJ file per frame, ``<prefix>0000.obj`` ... into ``folder``.

    positions : (F, V, 3); faces : (M, 3) int or a list of polygons; uv : optional (V, 2).
    Coordinates are written with 9 significant digits (float32 round-trips exactly).
    Each file is written atomically. Returns the paths in frame order.
    """
    folder = Path(folder)
    pos = _check_positions(positions).astype(np.float32)
    tri, polys = _as_faces(faces)
    uvs = None if uv is None else np.asarray(uv, np.float32)
    _validate(MeshSequence(pos, tri, polys, uvs, None), str(folder))
    face_block = _obj_face_block(polys, uvs is not None)
    uv_block = b"" if uvs is None else _fmt_rows("vt %.9g %.9g", uvs.astype(np.float64))
    paths = _frame_names(folder, prefix, "obj", pos.shape[0])
    _make_folder(folder)
    for k, path in enumerate(paths):
        header = f"# frame {k} of {pos.shape[0]}\n".encode("ascii")
        vblock = _fmt_rows("v %.9g %.9g %.9g", pos[k].astype(np.float64))
        atomic_write_bytes(path, [header, vblock, uv_block, face_block])
    return paths


def _read_text(path: Path, limit_bytes: int) -> str:
    size = _file_size(path)
    if size > limit_bytes:
        raise MeshSequenceError(f"{path}: {size} bytes is over the limit of {limit_bytes}")
    data = path.read_bytes()
    try:
        return data.decode("utf-8")
    except UnicodeDecodeError:
        raise MeshSequenceError(f"{path}: not a text file (OBJ must be ASCII/UTF-8 text)") from None


def _parse_obj(path: Path, limits: ReadLimits):
    """(vertices (V, 3) float64, face lines list[str], uv (T, 2) or None) of one OBJ file."""
    text = _read_text(path, limits.max_total_bytes)
    vlines, flines, tlines = [], [], []
    for line in text.splitlines():
        s = line.strip()
        if s.startswith("v "):
            vlines.append(s[2:])
        elif s.startswith("f "):
            flines.append(s[2:])
        elif s.startswith("vt "):
            tlines.append(s[3:])
    if not vlines:
        raise MeshSequenceError(f"{path}: no vertex ('v x y z') lines")
    if len(vlines) > limits.max_vertices or len(flines) > limits.max_faces:
        raise MeshSequenceError(f"{path}: too many vertices or faces for the limits")
    try:
        vtok = [t.split() for t in vlines]
        if any(len(t) < 3 for t in vtok):
            raise ValueError("a vertex line has fewer than 3 coordinates")
        verts = np.array([t[:3] for t in vtok], dtype=np.float64)
        uvs = None
        if tlines:
            ttok = [t.split() for t in tlines]
            if all(len(t) >= 2 for t in ttok):
                uvs = np.array([t[:2] for t in ttok], dtype=np.float64)
    except ValueError as exc:
        raise MeshSequenceError(f"{path}: malformed number in a vertex line ({exc})") from None
    return verts, flines, uvs


def _parse_obj_faces(path: Path, flines: list[str], n_verts: int, n_uv: int, limits: ReadLimits):
    polys: list[np.ndarray] = []
    uv_of_vertex: dict[int, int] = {}
    uv_consistent = n_uv > 0
    for k, line in enumerate(flines):
        toks = line.split()
        if len(toks) < 3 or len(toks) > limits.max_corners:
            raise MeshSequenceError(
                f"{path}: face {k} has {len(toks)} corners (allowed: 3..{limits.max_corners})"
            )
        idx = []
        for tok in toks:
            parts = tok.split("/")
            try:
                vi = int(parts[0])
                ti = int(parts[1]) if len(parts) > 1 and parts[1] else None
            except ValueError:
                raise MeshSequenceError(
                    f"{path}: face {k} has a malformed corner {tok!r}"
                ) from None
            vi = vi - 1 if vi > 0 else n_verts + vi
            if vi < 0 or vi >= n_verts:
                raise MeshSequenceError(
                    f"{path}: face {k} uses vertex {parts[0]}, but the file has {n_verts} vertices"
                )
            if uv_consistent:
                if ti is None:
                    uv_consistent = False
                else:
                    ti = ti - 1 if ti > 0 else n_uv + ti
                    if ti < 0 or ti >= n_uv or uv_of_vertex.setdefault(vi, ti) != ti:
                        uv_consistent = False
            idx.append(vi)
        polys.append(np.array(idx, np.int32))
    return polys, (uv_of_vertex if uv_consistent else None)


def _numbered_files(folder: Path, ext: str) -> list[Path]:
    files = [p for p in folder.iterdir() if p.is_file() and p.suffix.lower() == "." + ext]
    numbered = []
    for p in files:
        m = re.search(r"(\d+)(?!.*\d)", p.stem)
        if m:
            numbered.append((int(m.group(1)), p.name, p))
    if len(numbered) != len(files):
        unnumbered = sorted(set(files) - {p for _, _, p in numbered})
        raise MeshSequenceError(
            f"{folder}: {unnumbered[0].name} has no frame number; every .{ext} file in a sequence "
            "folder must end in a number (frame_0001.obj)"
        )
    numbered.sort()
    nums = [n for n, _, _ in numbered]
    if len(set(nums)) != len(nums):
        raise MeshSequenceError(f"{folder}: two .{ext} files carry the same frame number")
    return [p for _, _, p in numbered]


def _sequence_files(paths, ext: str, limits: ReadLimits) -> list[Path]:
    """The frame files named by ``paths``: a folder of numbered files, one file, or a list."""
    if isinstance(paths, str | os.PathLike) and Path(paths).is_dir():
        files = _numbered_files(Path(paths), ext)
        if not files:
            raise MeshSequenceError(f"{paths}: no .{ext} files in this folder")
    elif isinstance(paths, str | os.PathLike):
        files = [Path(paths)]
    else:
        files = [Path(p) for p in paths]
    if len(files) > limits.max_frames:
        raise MeshSequenceError(
            f"{len(files)} {ext.upper()} files exceed the limit of {limits.max_frames} frames"
        )
    return files


def read_obj_sequence(paths, *, limits: ReadLimits = ReadLimits()) -> MeshSequence:
    """Read a folder of numbered OBJ files (or a list of OBJ paths) as one mesh sequence.

    Every file must have the same vertex count and the same faces (a clear error otherwise).
    """
    files = _sequence_files(paths, "obj", limits)
    verts0, flines0, uv0 = _parse_obj(files[0], limits)
    n = verts0.shape[0]
    if len(files) * n * 12 > limits.max_total_bytes:
        raise MeshSequenceError(f"{len(files)} frames x {n} vertices exceeds the memory limit")
    polys, uv_map = _parse_obj_faces(files[0], flines0, n, 0 if uv0 is None else len(uv0), limits)
    positions = np.empty((len(files), n, 3), np.float32)
    positions[0] = verts0
    for k, path in enumerate(files[1:], start=1):
        verts, flines, _ = _parse_obj(path, limits)
        if verts.shape[0] != n:
            raise MeshSequenceError(
                f"{path}: {verts.shape[0]} vertices, but {files[0].name} has {n}; "
                "every frame must have the same topology"
            )
        if flines != flines0:
            other, _ = _parse_obj_faces(path, flines, n, 0, limits)
            if len(other) != len(polys) or any(
                a.shape != b.shape or np.any(a != b) for a, b in zip(other, polys, strict=True)
            ):
                raise MeshSequenceError(
                    f"{path}: its faces differ from {files[0].name}; every frame must have the "
                    "same topology"
                )
        positions[k] = verts
    uv = None
    if uv_map is not None and len(uv_map) == n and uv0 is not None:
        order = np.array([uv_map[i] for i in range(n)])
        uv = uv0[order].astype(np.float32)
    tri, polys = _as_faces(polys)
    source = str(files[0] if len(files) == 1 else files[0].parent)
    return _validate(MeshSequence(positions, tri, polys, uv, None), source, files)


# --------------------------------------------------------------------------- PLY

_PLY_TYPES = {
    "char": "i1", "int8": "i1", "uchar": "u1", "uint8": "u1",
    "short": "i2", "int16": "i2", "ushort": "u2", "uint16": "u2",
    "int": "i4", "int32": "i4", "uint": "u4", "uint32": "u4",
    "float": "f4", "float32": "f4", "double": "f8", "float64": "f8",
}  # fmt: skip


def _ply_header(positions_k: np.ndarray, n_faces: int, binary: bool) -> bytes:
    fmt = "binary_little_endian" if binary else "ascii"
    return (
        f"ply\nformat {fmt} 1.0\nelement vertex {positions_k.shape[0]}\n"
        "property float x\nproperty float y\nproperty float z\n"
        f"element face {n_faces}\nproperty list uchar int vertex_indices\nend_header\n"
    ).encode("ascii")


def _ply_face_block(polys: list[np.ndarray], binary: bool) -> bytes:
    tri, _ = _as_faces(polys)
    if binary:
        if tri is not None:
            rec = np.zeros(tri.shape[0], dtype=[("n", "u1"), ("i", "<i4", (3,))])
            rec["n"] = 3
            rec["i"] = tri
            return rec.tobytes()
        out = bytearray()
        for p in polys:
            out += np.uint8(len(p)).tobytes() + np.asarray(p, "<i4").tobytes()
        return bytes(out)
    if tri is not None:
        return _fmt_rows("3 %d %d %d", tri.astype(np.int64))
    return ("".join(f"{len(p)} " + " ".join(map(str, p.tolist())) + "\n" for p in polys)).encode()


def write_ply_sequence(
    folder, positions, faces, *, binary: bool = True, prefix: str = "frame_"
) -> list[Path]:
    """Write one PLY file per frame (binary little-endian by default, or ASCII).

    positions : (F, V, 3); faces : (M, 3) int or a list of polygons. Atomic per file,
    deterministic. Returns the paths in frame order.
    """
    folder = Path(folder)
    pos = _check_positions(positions).astype(np.float32)
    tri, polys = _as_faces(faces)
    _validate(MeshSequence(pos, tri, polys, None, None), str(folder))
    face_block = _ply_face_block(polys, binary)
    n_faces = len(polys)
    paths = _frame_names(folder, prefix, "ply", pos.shape[0])
    _make_folder(folder)
    for k, path in enumerate(paths):
        header = _ply_header(pos[k], n_faces, binary)
        if binary:
            vblock = np.ascontiguousarray(pos[k], "<f4").tobytes()
        else:
            vblock = _fmt_rows("%.9g %.9g %.9g", pos[k].astype(np.float64))
        atomic_write_bytes(path, [header, vblock, face_block])
    return paths


@dataclass
class _PlyElement:
    name: str
    count: int
    props: list[tuple[str, str, str | None]]  # (name, dtype, list-count dtype or None)


def _parse_ply_header(fh, path: Path, limits: ReadLimits):
    first = fh.readline(64)
    if first.strip() != b"ply":
        raise MeshSequenceError(f"{path}: not a PLY file (it must start with 'ply')")
    fmt = None
    elements: list[_PlyElement] = []
    for _ in range(10_000):
        raw = fh.readline(1024)
        if not raw:
            raise MeshSequenceError(f"{path}: the PLY header has no 'end_header' line (truncated?)")
        try:
            line = raw.decode("ascii").strip()
        except UnicodeDecodeError:
            raise MeshSequenceError(f"{path}: the PLY header is not ASCII text") from None
        toks = line.split()
        if not toks or toks[0] in ("comment", "obj_info"):
            continue
        if toks[0] == "end_header":
            break
        try:
            if toks[0] == "format":
                fmt = toks[1]
            elif toks[0] == "element":
                count = int(toks[2])
                if count < 0:
                    raise ValueError("negative count")
                elements.append(_PlyElement(toks[1], count, []))
            elif toks[0] == "property":
                if not elements:
                    raise ValueError("property before any element")
                if toks[1] == "list":
                    elements[-1].props.append((toks[4], _PLY_TYPES[toks[3]], _PLY_TYPES[toks[2]]))
                else:
                    elements[-1].props.append((toks[2], _PLY_TYPES[toks[1]], None))
            else:
                raise ValueError(f"unknown keyword {toks[0]!r}")
        except (IndexError, KeyError, ValueError) as exc:
            raise MeshSequenceError(f"{path}: malformed PLY header line {line!r} ({exc})") from None
    else:
        raise MeshSequenceError(f"{path}: the PLY header is too long")
    if fmt not in ("ascii", "binary_little_endian", "binary_big_endian"):
        raise MeshSequenceError(
            f"{path}: PLY format {fmt!r} is not supported (ascii, binary_little_endian, "
            "binary_big_endian are)"
        )
    names = [e.name for e in elements]
    if "vertex" not in names or "face" not in names:
        raise MeshSequenceError(f"{path}: a PLY mesh needs 'vertex' and 'face' elements")
    vert = elements[names.index("vertex")]
    face = elements[names.index("face")]
    if vert.count > limits.max_vertices or face.count > limits.max_faces:
        raise MeshSequenceError(
            f"{path}: {vert.count} vertices / {face.count} faces exceed the limits "
            f"({limits.max_vertices} / {limits.max_faces})"
        )
    if not {"x", "y", "z"} <= {p[0] for p in vert.props}:
        raise MeshSequenceError(f"{path}: the vertex element needs x, y, z properties")
    return fmt, elements


def _read_ply(path: Path, limits: ReadLimits) -> tuple[np.ndarray, list[np.ndarray] | np.ndarray]:
    """(vertices (V, 3) float64, faces as (M, k) array or list of polygons) of one PLY file."""
    size = _file_size(path)
    with open(path, "rb") as fh:
        fmt, elements = _parse_ply_header(fh, path, limits)
        body_start = fh.tell()
        if fmt == "ascii":
            if size - body_start > limits.max_total_bytes:
                raise MeshSequenceError(f"{path}: too large")
            lines = fh.read().decode("ascii", errors="replace").split("\n")
            return _read_ply_ascii(path, elements, lines)
        endian = "<" if fmt == "binary_little_endian" else ">"
        body = fh.read()
    return _read_ply_binary(path, elements, body, endian)


def _read_ply_ascii(path, elements, lines):
    lines = [ln for ln in (s.strip() for s in lines) if ln]
    pos = 0
    verts = faces = None
    for el in elements:
        if pos + el.count > len(lines):
            raise MeshSequenceError(
                f"{path}: the header promises {el.count} {el.name} rows but the file ends early "
                "(truncated?)"
            )
        rows = lines[pos : pos + el.count]
        pos += el.count
        try:
            if el.name == "vertex":
                if any(p[2] is not None for p in el.props):
                    raise MeshSequenceError(
                        f"{path}: list properties in vertices are not supported"
                    )
                names = [p[0] for p in el.props]
                table = np.array([r.split() for r in rows], dtype=np.float64)
                if table.ndim != 2 or table.shape[1] != len(names):
                    raise ValueError("vertex rows have the wrong number of values")
                verts = table[:, [names.index("x"), names.index("y"), names.index("z")]]
            elif el.name == "face":
                faces = []
                for k, r in enumerate(rows):
                    vals = [int(t) for t in r.split()]
                    n = vals[0]
                    if n < 3 or len(vals) < n + 1:
                        raise MeshSequenceError(f"{path}: face {k} is malformed ({r!r})")
                    faces.append(np.array(vals[1 : n + 1], np.int64))
        except ValueError as exc:
            raise MeshSequenceError(f"{path}: malformed {el.name} row ({exc})") from None
    return verts, faces


def _read_ply_binary(path, elements, body: bytes, endian: str):
    off = 0
    verts: Any = None
    faces: Any = None
    for el in elements:
        if all(p[2] is None for p in el.props):
            dt = np.dtype([(p[0], endian + p[1]) for p in el.props])
            need = dt.itemsize * el.count
            if off + need > len(body):
                raise MeshSequenceError(
                    f"{path}: the header promises {el.count} {el.name} records ({need} bytes) but "
                    f"only {len(body) - off} bytes remain (truncated?)"
                )
            rec = np.frombuffer(body, dtype=dt, count=el.count, offset=off)
            off += need
            if el.name == "vertex":
                verts = np.stack([rec["x"], rec["y"], rec["z"]], axis=1).astype(np.float64)
            continue
        if el.name != "face" or len(el.props) != 1:
            raise MeshSequenceError(
                f"{path}: element {el.name!r} has list properties; only the face element may"
            )
        _, idx_t, cnt_t = el.props[0]
        cnt_dt, idx_dt = np.dtype(endian + cnt_t), np.dtype(endian + idx_t)
        if off + cnt_dt.itemsize > len(body) and el.count:
            raise MeshSequenceError(f"{path}: the face data is missing (truncated?)")
        first_n = int(np.frombuffer(body, cnt_dt, 1, off)[0]) if el.count else 3
        # fast path: every face has first_n corners
        rec_dt = np.dtype([("n", cnt_dt), ("i", idx_dt, (max(first_n, 1),))])
        need = rec_dt.itemsize * el.count
        if first_n >= 3 and off + need <= len(body):
            rec = np.frombuffer(body, rec_dt, el.count, off)
            if np.all(rec["n"] == first_n):
                faces = rec["i"].astype(np.int64)
                off += need
                continue
        polys = []
        for k in range(el.count):
            if off + cnt_dt.itemsize > len(body):
                raise MeshSequenceError(f"{path}: face {k} is cut off (truncated file)")
            n = int(np.frombuffer(body, cnt_dt, 1, off)[0])
            off += cnt_dt.itemsize
            if n < 3 or n > 64:
                raise MeshSequenceError(f"{path}: face {k} has {n} corners (allowed: 3..64)")
            if off + n * idx_dt.itemsize > len(body):
                raise MeshSequenceError(f"{path}: face {k} is cut off (truncated file)")
            polys.append(np.frombuffer(body, idx_dt, n, off).astype(np.int64))
            off += n * idx_dt.itemsize
        faces = polys
    return verts, faces


def _faces_equal(a, b) -> bool:
    if isinstance(a, np.ndarray) and isinstance(b, np.ndarray):
        return a.shape == b.shape and bool(np.all(a == b))
    la = list(a)
    lb = list(b)
    return len(la) == len(lb) and all(
        np.asarray(x).shape == np.asarray(y).shape and np.all(np.asarray(x) == np.asarray(y))
        for x, y in zip(la, lb, strict=True)
    )


def read_ply_sequence(paths, *, limits: ReadLimits = ReadLimits()) -> MeshSequence:
    """Read a folder of numbered PLY files (or a list of paths; ASCII or binary)."""
    files = _sequence_files(paths, "ply", limits)
    verts0, faces0 = _read_ply(files[0], limits)
    n = verts0.shape[0]
    if len(files) * n * 12 > limits.max_total_bytes:
        raise MeshSequenceError(f"{len(files)} frames x {n} vertices exceeds the memory limit")
    positions = np.empty((len(files), n, 3), np.float32)
    positions[0] = verts0
    for k, path in enumerate(files[1:], start=1):
        verts, faces = _read_ply(path, limits)
        if verts.shape[0] != n or not _faces_equal(faces, faces0):
            raise MeshSequenceError(
                f"{path}: its vertices or faces differ from {files[0].name} ({verts.shape[0]} vs "
                f"{n} vertices); every frame must have the same topology"
            )
        positions[k] = verts
    flat_max = max(int(np.max(np.asarray(f))) for f in faces0) if len(faces0) else -1
    if flat_max >= n or min(int(np.min(np.asarray(f))) for f in faces0) < 0:
        raise MeshSequenceError(
            f"{files[0]}: a face uses vertex index {flat_max}, but there are {n} vertices"
        )
    tri, polys = _as_faces(faces0)
    source = str(files[0] if len(files) == 1 else files[0].parent)
    return _validate(MeshSequence(positions, tri, polys, None, None), source, files)


# --------------------------------------------------------------------------- welding


def weld_coincident_vertices(
    positions: np.ndarray, polygons, tolerance: float = 1e-6
) -> tuple[np.ndarray, list[np.ndarray], np.ndarray]:
    """Merge vertices that coincide in every frame (seam duplicates).

    positions : (F, V, 3); polygons : (M, k) array or list of index arrays;
    tolerance : distance, as a fraction of the first frame's bounding-box diagonal.
    Vertices are grouped by rounding the first frame to a grid of the tolerance's size
    (common practice; a pair straddling a grid line is left unwelded), and a group is
    merged only if it stays within the tolerance in every frame.
    Returns (positions (F, V', 3), polygons with degenerate corners removed,
    mapping (V,) int64 from old to new vertex index).
    """
    pos = np.asarray(positions)
    diag = float(np.linalg.norm(np.ptp(pos[0], axis=0))) or 1.0
    tol = tolerance * diag
    keys = np.round(pos[0] / tol).astype(np.int64)
    _, group = np.unique(keys, axis=0, return_inverse=True)
    group = group.ravel()
    rep = np.full(group.max() + 1, -1, np.int64)
    # representative: the lowest vertex index of each group
    order = np.argsort(group, kind="stable")
    first = np.ones(order.size, bool)
    first[1:] = group[order][1:] != group[order][:-1]
    rep[group[order][first]] = order[first]
    target = rep[group]
    dist = np.linalg.norm(pos - pos[:, target], axis=-1).max(axis=0)
    target = np.where(dist <= tol, target, np.arange(pos.shape[1]))
    keep = np.unique(target)
    new_index = np.full(pos.shape[1], -1, np.int64)
    new_index[keep] = np.arange(keep.size)
    mapping = new_index[target]
    polys_out = []
    for p in polygons if not isinstance(polygons, np.ndarray) else list(polygons):
        q = mapping[np.asarray(p, np.int64)]
        # drop repeated consecutive corners created by welding
        keep_c = q != np.roll(q, 1)
        q = q[keep_c] if q.size > 1 else q
        if q.size >= 3:
            polys_out.append(q.astype(np.int32))
    return pos[:, keep], polys_out, mapping


def weld_sequence(seq: MeshSequence, tolerance: float = 1e-6) -> MeshSequence:
    """A copy of ``seq`` with coincident vertices merged (see weld_coincident_vertices)."""
    pos, polys, mapping = weld_coincident_vertices(seq.positions, seq.polygons, tolerance)
    uv = None
    if seq.uv is not None:
        uv = np.zeros((pos.shape[1], 2), np.float32)
        uv[mapping] = seq.uv  # one of the merged vertices' uv
    tri, polys = _as_faces(polys)
    return MeshSequence(pos, tri, polys, uv, seq.times)


# --------------------------------------------------------------------------- dispatch


def read_sequence(
    path, *, weld: bool = False, weld_tolerance: float = 1e-6, limits: ReadLimits = ReadLimits()
) -> MeshSequence:
    """Read a mesh sequence: a .npz file, an .obj or .ply file (one frame), or a folder of
    numbered .obj or .ply files. ``weld`` merges coincident vertices afterwards.
    """
    path = Path(path)
    if not path.exists():
        raise MeshSequenceError(f"{path}: no such file or folder")
    if path.is_dir():
        exts = {p.suffix.lower() for p in path.iterdir() if p.is_file()}
        if ".obj" in exts and ".ply" in exts:
            raise MeshSequenceError(
                f"{path}: holds both .obj and .ply files; use one format per folder"
            )
        if ".obj" in exts:
            seq = read_obj_sequence(path, limits=limits)
        elif ".ply" in exts:
            seq = read_ply_sequence(path, limits=limits)
        else:
            raise MeshSequenceError(f"{path}: no .obj or .ply files in this folder")
    else:
        ext = path.suffix.lower()
        if ext == ".npz":
            seq = read_npz(path, limits=limits)
        elif ext == ".obj":
            seq = read_obj_sequence(path, limits=limits)
        elif ext == ".ply":
            seq = read_ply_sequence(path, limits=limits)
        else:
            raise MeshSequenceError(
                f"{path}: unknown file type {ext!r}; allowed: .npz, .obj, .ply, or a folder of "
                "numbered .obj / .ply files"
            )
    return weld_sequence(seq, weld_tolerance) if weld else seq
