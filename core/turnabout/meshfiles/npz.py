"""Our .npz mesh sequence: positions (F, V, 3) float32, faces (M, 3) int32, optional uv
(V, 2) float32 and times (F,) float64, as the named members of a zip of .npy arrays.

Reading never unpickles (``np.load(..., allow_pickle=False)``) and checks every member's
header (shape, dtype, size against the bytes present) against :class:`ReadLimits` before
loading it. Writing is deterministic (fixed member order and zip timestamp) and goes
through the one atomic writer, :func:`turnabout.output.atomic_write_bytes`.
"""

from __future__ import annotations

import io
import zipfile
from pathlib import Path

import numpy as np

from ..output import atomic_write_bytes
from .model import (
    DEFAULT_LIMITS,
    MeshSequence,
    MeshSequenceError,
    ReadLimits,
    as_faces,
    check_positions,
    file_size,
    triangulate_polygons,
    validate,
)

# A fixed timestamp for zip members, so that npz output does not depend on the clock.
_ZIP_EPOCH = (1980, 1, 1, 0, 0, 0)
_NPZ_MEMBERS = ("positions", "faces", "uv", "times")


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
    pos = check_positions(positions).astype(np.float32)
    tri, polys = as_faces(faces)
    if tri is None:
        tri = triangulate_polygons(polys)
    seq = MeshSequence(
        positions=pos,
        faces=tri,
        polygons=list(tri),
        uv=None if uv is None else np.asarray(uv, np.float32),
        times=None if times is None else np.asarray(times, np.float64).ravel(),
    )
    validate(seq, str(path))
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
    stamps the current time); no pickled objects. Written through
    :func:`turnabout.output.atomic_write_bytes`.
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


def read_npz(path, *, limits: ReadLimits = DEFAULT_LIMITS) -> MeshSequence:
    """Read our .npz (see :func:`write_npz`), checking every member before loading it."""
    path = Path(path)
    source = str(path)
    file_size(path)
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
    return validate(seq, source)
