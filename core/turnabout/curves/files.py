"""Curve files: reading closed curves (SVG, .npy, .npz) and writing baked homotopies (.npz).

Every file is untrusted: numpy files are read with ``allow_pickle=False`` after their
header says the array is (N, 2) real and not too large; output goes to a temporary file
in the same folder that is renamed into place, so a failed run leaves no partial file.
"""

from __future__ import annotations

import zipfile
from pathlib import Path

import numpy as np

from .sampling import MAX_POINTS, CurveError, closed_curve

#: Suffixes :func:`read_curves` understands.
CURVE_SUFFIXES = (".svg", ".npy", ".npz")


def _check_header(shape, dtype, source: str) -> None:
    if dtype.hasobject or not (
        np.issubdtype(dtype, np.floating) or np.issubdtype(dtype, np.integer)
    ):
        raise CurveError(f"{source}: points must be real numbers, got dtype {dtype}")
    if len(shape) != 2 or shape[1] != 2:
        raise CurveError(f"{source}: expected an (N, 2) array of points, got shape {shape}")
    if shape[0] > MAX_POINTS:
        raise CurveError(f"{source}: {shape[0]} points; at most {MAX_POINTS} are allowed")


def _read_npy(path: Path) -> np.ndarray:
    try:
        arr = np.load(path, mmap_mode="r", allow_pickle=False)
    except (OSError, ValueError, EOFError) as exc:
        raise CurveError(f"{path.name}: not a readable .npy file ({exc})") from None
    _check_header(arr.shape, arr.dtype, path.name)
    return np.array(arr, dtype=np.float64)


def _read_npz(path: Path) -> np.ndarray:
    try:
        with zipfile.ZipFile(path) as zf:
            info = zf.getinfo("points.npy")
    except KeyError:
        raise CurveError(f"{path.name}: no 'points' array in the .npz file") from None
    except (OSError, zipfile.BadZipFile) as exc:
        raise CurveError(f"{path.name}: not a readable .npz file ({exc})") from None
    if info.file_size > MAX_POINTS * 16 + 4096:
        raise CurveError(f"{path.name}: the 'points' array is {info.file_size} bytes, too large")
    try:
        with np.load(path, allow_pickle=False) as z:
            arr = z["points"]
    except (OSError, ValueError, EOFError, zipfile.BadZipFile) as exc:
        raise CurveError(f"{path.name}: not a readable .npz file ({exc})") from None
    _check_header(arr.shape, arr.dtype, path.name)
    return arr.astype(np.float64)


def read_curves(path, *, samples: int = 1024) -> list[tuple[str, np.ndarray | None, str]]:
    """Every closed curve in a file, as (label, points (N, 2) float64 or None, problem).

    .svg: every drawn path subpath and basic shape, sampled to at least ``samples`` points
    (more when its bends need more, see :mod:`.bezier`); .npy: one (N, 2) array; .npz: the
    (N, 2) array named 'points'. A curve that
    cannot be used has points None and its problem set. Raises CurveError when the file
    itself cannot be read.
    """
    path = Path(path)
    suffix = path.suffix.lower()
    if suffix not in CURVE_SUFFIXES:
        raise CurveError(
            f"{path.name}: unknown kind of file; expected one of {', '.join(CURVE_SUFFIXES)}"
        )
    if not path.is_file():
        raise CurveError(f"{path.name}: no such file")
    if suffix == ".svg":
        from .svg import read_svg_curves

        return [
            (c.label, None if c.problem else c.points, c.problem)
            for c in read_svg_curves(path, samples=samples)
        ]
    raw = _read_npy(path) if suffix == ".npy" else _read_npz(path)
    try:
        return [("points", closed_curve(raw, name="points"), "")]
    except CurveError as exc:
        return [("points", None, str(exc).removeprefix("points: "))]


def read_curve(path, *, select: int | str | None = None, samples: int = 1024) -> np.ndarray:
    """The one closed curve of a file, or the one chosen by index, id or label (SVG)."""
    path = Path(path)
    if path.suffix.lower() == ".svg":
        from .svg import curve_from_svg

        return curve_from_svg(path, select=select, samples=samples)
    ((label, pts, problem),) = read_curves(path, samples=samples)
    if select not in (None, 0, label):
        raise CurveError(f"{path.name}: holds one curve; there is no path {select!r}")
    if pts is None:
        raise CurveError(f"{path.name}: {problem}")
    return pts


def write_npz_atomic(path, arrays: dict) -> None:
    """Write arrays to an .npz file through the one deterministic, atomic npz writer."""
    from ..meshfiles.npz import write_npz_arrays

    write_npz_arrays(path, arrays)
