"""Wavefront OBJ sequences: one text file per frame, ``<prefix>0000.obj`` ... in a folder.

Vertices (``v``), optional texture coordinates (``vt``, kept when each vertex has one) and
faces (``f``, polygons of 3 to ``ReadLimits.max_corners`` corners). Each file's size is
checked before it is read; every frame must repeat the first frame's faces.
"""

from __future__ import annotations

from pathlib import Path

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


def _obj_face_block(polys: list[np.ndarray], with_uv: bool) -> bytes:
    tri, _ = as_faces(polys)
    if tri is not None:
        one = tri.astype(np.int64) + 1
        if with_uv:
            one = np.repeat(one, 2, axis=1)
            return format_rows("f %d/%d %d/%d %d/%d", one)
        return format_rows("f %d %d %d", one)
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
    pos = check_positions(positions).astype(np.float32)
    tri, polys = as_faces(faces)
    uvs = None if uv is None else np.asarray(uv, np.float32)
    validate(MeshSequence(pos, tri, polys, uvs, None), str(folder))
    face_block = _obj_face_block(polys, uvs is not None)
    uv_block = b"" if uvs is None else format_rows("vt %.9g %.9g", uvs.astype(np.float64))
    paths = frame_names(folder, prefix, "obj", pos.shape[0])
    make_folder(folder)
    for k, path in enumerate(paths):
        header = f"# frame {k} of {pos.shape[0]}\n".encode("ascii")
        vblock = format_rows("v %.9g %.9g %.9g", pos[k].astype(np.float64))
        atomic_write_bytes(path, [header, vblock, uv_block, face_block])
    return paths


def _read_text(path: Path, limit_bytes: int) -> str:
    size = file_size(path)
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


def read_obj_sequence(paths, *, limits: ReadLimits = DEFAULT_LIMITS) -> MeshSequence:
    """Read a folder of numbered OBJ files (or a list of OBJ paths) as one mesh sequence.

    Every file must have the same vertex count and the same faces (a clear error otherwise).
    """
    files = sequence_files(paths, "obj", limits)
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
    tri, polys = as_faces(polys)
    source = str(files[0] if len(files) == 1 else files[0].parent)
    return validate(MeshSequence(positions, tri, polys, uv, None), source, files)
