"""Which scene frames a command works on, and the file each rendered frame goes to.

* :func:`parse_frames` reads a frame selection such as ``1-120``, ``1,5,9`` or ``1-120:10``
  (the ``--frames`` option of ``turnabout render``);
* :func:`frames_to_check` gives the inclusive (first, last) range a check runs over, from
  the scene's range or a chosen one;
* :func:`frame_path` names a rendered frame's PNG.
"""

from __future__ import annotations

import os
import re

FRAME_SPEC = re.compile(r"^\s*(-?\d+)(?:\s*-\s*(-?\d+)(?::(\d+))?)?\s*$")


class FrameRangeError(ValueError):
    """A frame selection that cannot be used; the message names the option and what is allowed."""


def parse_frames(spec: str | None, default_range: tuple[int, int] | None = None) -> list[int]:
    """Frames from ``"1-120"``, ``"1,5,9"``, ``"1-120:10"`` (every 10th) or combinations.

    An empty ``spec`` means every frame of ``default_range`` (first, last inclusive); when
    given, every part must lie inside it. Returns the sorted unique frames; FrameRangeError
    on bad syntax, a step below 1, an end before its start or an empty selection.
    """
    if spec is None or not spec.strip():
        if default_range is None:
            raise FrameRangeError("--frames: give frames like 1-120, 1,5,9 or 1-120:10")
        a, b = default_range
        frames = list(range(a, b + 1))
    else:
        frames = []
        for part in spec.split(","):
            m = FRAME_SPEC.match(part)
            if not m:
                raise FrameRangeError(
                    f"--frames: cannot read {part.strip()!r}; "
                    "use N, A-B or A-B:STEP separated by commas"
                )
            a = int(m.group(1))
            b = int(m.group(2)) if m.group(2) is not None else a
            step = int(m.group(3) or 1)
            if step < 1:
                raise FrameRangeError(f"--frames: step must be at least 1 in {part.strip()!r}")
            if b < a:
                raise FrameRangeError(f"--frames: {part.strip()!r} is empty (end before start)")
            if default_range is not None and (a < default_range[0] or b > default_range[1]):
                lo, hi = default_range
                raise FrameRangeError(
                    f"--frames: {part.strip()!r} reaches outside the file's frame range "
                    f"{lo}-{hi}; give frames from {lo} to {hi}"
                )
            frames.extend(range(a, b + 1, step))
    if not frames:
        raise FrameRangeError("--frames: the selection is empty")
    return sorted(set(frames))


def frames_to_check(
    scene_start: int, scene_end: int, chosen: tuple[int, int] | None = None
) -> tuple[int, int]:
    """The (first, last) frames to check, inclusive: ``chosen`` when given, else the scene's.

    FrameRangeError when the range is empty or holds one frame (motion needs two).
    """
    start, end = (scene_start, scene_end) if chosen is None else chosen
    start, end = int(start), int(end)
    if end < start:
        raise FrameRangeError(
            f"frame range: {start}-{end} is empty; the last frame must be at or after the first"
        )
    if end - start + 1 < 2:
        raise FrameRangeError(
            f"frame range: {start}-{end} has one frame; checking motion needs two or more"
        )
    return start, end


def frame_path(out_dir: str, frame: int) -> str:
    """The PNG of ``frame`` in ``out_dir``: ``frame_0001.png`` (four digits at least)."""
    return os.path.join(out_dir, f"frame_{frame:04d}.png")
