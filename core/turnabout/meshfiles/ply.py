"""PLY sequences: one file per frame (ASCII, binary little- or big-endian).

The header is read line by line with bounded line lengths; element counts are checked
against :class:`ReadLimits`, and binary bodies against the bytes present, before any array
is allocated. Every frame must repeat the first frame's faces.
"""

from __future__ import annotations

from dataclasses import dataclass
from pathlib import Path
from typing import Any

import numpy as np

from ..output import atomic_write_bytes
from .frame_files import format_rows, frame_names, make_folder, sequence_files
from .model import (
    DEFAULT_LIMITS,
    MeshSequence,
    MeshSequenceError,
    ReadLimits,
    as_faces,
    check_positions,
    file_size,
    validate,
)

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
    tri, _ = as_faces(polys)
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
        return format_rows("3 %d %d %d", tri.astype(np.int64))
    return ("".join(f"{len(p)} " + " ".join(map(str, p.tolist())) + "\n" for p in polys)).encode()


def write_ply_sequence(
    folder, positions, faces, *, binary: bool = True, prefix: str = "frame_"
) -> list[Path]:
    """Write one PLY file per frame (binary little-endian by default, or ASCII).

    positions : (F, V, 3); faces : (M, 3) int or a list of polygons. Atomic per file,
    deterministic. Returns the paths in frame order.
    """
    folder = Path(folder)
    pos = check_positions(positions).astype(np.float32)
    tri, polys = as_faces(faces)
    validate(MeshSequence(pos, tri, polys, None, None), str(folder))
    face_block = _ply_face_block(polys, binary)
    n_faces = len(polys)
    paths = frame_names(folder, prefix, "ply", pos.shape[0])
    make_folder(folder)
    for k, path in enumerate(paths):
        header = _ply_header(pos[k], n_faces, binary)
        if binary:
            vblock = np.ascontiguousarray(pos[k], "<f4").tobytes()
        else:
            vblock = format_rows("%.9g %.9g %.9g", pos[k].astype(np.float64))
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
    size = file_size(path)
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


def read_ply_sequence(paths, *, limits: ReadLimits = DEFAULT_LIMITS) -> MeshSequence:
    """Read a folder of numbered PLY files (or a list of paths; ASCII or binary)."""
    files = sequence_files(paths, "ply", limits)
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
    tri, polys = as_faces(faces0)
    source = str(files[0] if len(files) == 1 else files[0].parent)
    return validate(MeshSequence(positions, tri, polys, None, None), source, files)
