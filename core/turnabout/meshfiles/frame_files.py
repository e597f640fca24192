"""Folders of numbered frame files (one OBJ or PLY file per frame): naming them when
writing, finding and ordering them when reading, and formatting rows of numbers as text.
"""

from __future__ import annotations

import os
import re
from pathlib import Path

import numpy as np

from ..output import check_output_folder
from .model import MeshSequenceError, ReadLimits


def make_folder(folder: Path) -> None:
    """Make the output folder itself (its parent must exist: a typo is not a new tree)."""
    check_output_folder(folder)
    folder.mkdir(exist_ok=True)


def frame_names(folder: Path, prefix: str, ext: str, n: int) -> list[Path]:
    """``n`` file names ``<prefix>0000.<ext>`` ... (at least four digits, more when needed)."""
    width = max(4, len(str(max(n - 1, 0))))
    return [folder / f"{prefix}{i:0{width}d}.{ext}" for i in range(n)]


def format_rows(fmt: str, arr: np.ndarray) -> bytes:
    """Each row of ``arr`` (R, C) formatted with ``fmt`` (C fields), one line per row."""
    if arr.size == 0:
        return b""
    row_fmt = fmt + "\n"
    return ((row_fmt * arr.shape[0]) % tuple(arr.ravel().tolist())).encode("ascii")


def numbered_files(folder: Path, ext: str) -> list[Path]:
    """The ``.ext`` files of ``folder`` in the order of the last number in each name."""
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


def sequence_files(paths, ext: str, limits: ReadLimits) -> list[Path]:
    """The frame files named by ``paths``: a folder of numbered files, one file, or a list."""
    if isinstance(paths, str | os.PathLike) and Path(paths).is_dir():
        files = numbered_files(Path(paths), ext)
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
