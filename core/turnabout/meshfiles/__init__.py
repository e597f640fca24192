"""Mesh sequences on disk: our .npz, folders of numbered OBJ files, PLY sequences.

Reading order: ``model`` (the in-memory :class:`~.model.MeshSequence`, its validation and
read limits) -> ``npz``, ``obj``, ``ply`` (one module per format, each with its writer and
reader; ``frame_files`` names and lists the numbered files of the per-frame formats) ->
``weld`` (merging seam duplicates) -> :func:`read_sequence` here, which picks the reader
by suffix.

Every file is treated as untrusted: ``np.load(..., allow_pickle=False)``, array shapes and
element counts are checked against the file size and against :class:`~.model.ReadLimits`
before anything is allocated, and every problem raises :class:`~.model.MeshSequenceError`
naming the file, what is wrong and what is allowed. Writers go through the one atomic
writer in :mod:`turnabout.output` and are deterministic (the same inputs give
byte-identical files).
"""

from __future__ import annotations

from pathlib import Path

from .model import DEFAULT_LIMITS, MeshSequence, MeshSequenceError, ReadLimits
from .npz import read_npz
from .obj import read_obj_sequence
from .ply import read_ply_sequence
from .weld import weld_sequence


def read_sequence(
    path, *, weld: bool = False, weld_tolerance: float = 1e-6, limits: ReadLimits = DEFAULT_LIMITS
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
