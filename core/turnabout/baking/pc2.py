"""The PC2 point-cache file: the positions of every vertex at every sample, as read by
Blender's Mesh Cache modifier.

Layout (the format's published layout, common practice), little-endian:

    offset  0  12 bytes  signature b"POINTCACHE2\\0"
    offset 12  int32     file version, 1
    offset 16  int32     number of points P
    offset 20  float32   start frame
    offset 24  float32   sample rate (frames per sample)
    offset 28  int32     number of samples S
    offset 32  float32   x, y, z of each point, sample after sample: S * P * 3 values

so a file is exactly 32 + 12 P S bytes.
"""

from __future__ import annotations

import os
from collections.abc import Iterable

import numpy as np

from ..output import atomic_write_bytes

PC2_HEADER = b"POINTCACHE2\0"
HEADER_BYTES = 32
VERSION = 1


class PointCacheError(ValueError):
    """A PC2 file that cannot be written or read as asked; the message names the file."""


def write_pc2(
    path,
    chunks: Iterable[np.ndarray],
    n_points: int,
    n_samples: int,
    start: float = 0.0,
    rate: float = 1.0,
) -> None:
    """Write a PC2 file from an iterable of (k, n_points, 3) float32 blocks of samples.

    Written through the one atomic writer: on any error (also a sample count differing
    from ``n_samples``) no file is left at ``path``.
    """

    def blocks():
        yield PC2_HEADER
        yield np.array([VERSION, n_points], "<i4").tobytes()
        yield np.array([start, rate], "<f4").tobytes()
        yield np.array([n_samples], "<i4").tobytes()
        written = 0
        for block in chunks:
            block = np.ascontiguousarray(block, "<f4")
            if block.ndim != 3 or block.shape[1:] != (n_points, 3):
                raise PointCacheError(
                    f"point cache {path}: a block of shape {block.shape}, expected "
                    f"(k, {n_points}, 3)"
                )
            yield block.tobytes()
            written += len(block)
        if written != n_samples:  # raised inside the write: the temporary file goes
            raise PointCacheError(
                f"point cache {path}: wrote {written} samples, expected {n_samples}"
            )

    atomic_write_bytes(path, blocks())


def read_pc2(path, max_bytes: int = 2**31) -> tuple[np.ndarray, float, float]:
    """Read a PC2 file: ``(positions (S, P, 3) float32, start, rate)``.

    The file is a user's file: its header is checked against the file's size (and
    ``max_bytes``) before anything is allocated. Raises :class:`PointCacheError`.
    """
    size = os.path.getsize(path)
    with open(path, "rb") as fh:
        head = fh.read(HEADER_BYTES)
        if len(head) < HEADER_BYTES or head[:12] != PC2_HEADER:
            raise PointCacheError(f"point cache {path}: not a PC2 file (no PC2 signature)")
        version, n_points = np.frombuffer(head[12:20], "<i4").tolist()
        start, rate = np.frombuffer(head[20:28], "<f4").tolist()
        n_samples = int(np.frombuffer(head[28:32], "<i4")[0])
        if version != VERSION:
            raise PointCacheError(f"point cache {path}: version {version}, only 1 is known")
        if n_points < 0 or n_samples < 0:
            raise PointCacheError(
                f"point cache {path}: negative counts ({n_points} points, {n_samples} samples)"
            )
        body = 12 * n_points * n_samples
        if HEADER_BYTES + body != size:
            raise PointCacheError(
                f"point cache {path}: the header promises {n_samples} samples of "
                f"{n_points} points ({HEADER_BYTES + body} bytes), the file has {size} bytes"
            )
        if body > max_bytes:
            raise PointCacheError(
                f"point cache {path}: {body} bytes of positions, over the limit of {max_bytes}"
            )
        values = np.frombuffer(fh.read(body), "<f4")
    return values.reshape(n_samples, n_points, 3).astype(np.float32), start, rate
