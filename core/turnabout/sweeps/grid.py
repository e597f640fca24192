"""The points of a sweep: value lists, their cartesian product, and a table file of points.

Syntax (the same on the command line and in :func:`parse_values`):

``8,10``          a list of values;
``0.13:0.16:4``   START:STOP:COUNT, COUNT evenly spaced values from START to STOP inclusive;
``8,12:16:3``     both, in the order written (duplicates are dropped, first one kept).

A stage window list is ``START,END`` windows separated by ``/``: ``--tuck 0.586,0.97/0.6,0.95``.

Every point is a validated :class:`~turnabout.eversion.Controls` (the table is refused as a
whole, naming the row, before any scan runs). A point's *key* hashes its controls and the
scan (kind and grid), so a results folder can hold several sweeps and a re-run finds what
is already done.
"""

from __future__ import annotations

import csv
import hashlib
import io
import itertools
import json
import math
from dataclasses import dataclass
from pathlib import Path

import numpy as np

from ..eversion.controls import STAGE_NAMES, ControlError, Controls
from ..eversion.regularity import QUICK_GRID, scan_grid_problem

SCAN_KINDS = ("quick", "full")
FULL_GRID = (720, 361, 400)  # the full scan of ``turnabout build --scan-only``
MAX_POINTS = 100_000
# Above this many points a sweep needs a confirming flag (--large-grid): at about 3 s a quick
# scan, 10,000 points are some 8 hours of one core, easy to ask for by a typo in a range.
LARGE_GRID = 10_000
MAX_TABLE_BYTES = 10_000_000


class SweepInputError(ValueError):
    """A sweep option or table that cannot be used; the message names the option."""


@dataclass(frozen=True)
class ScanSpec:
    """Which scan each point gets: ``quick`` (one strip period) or ``full`` (whole circle),
    on a theta x lat grid (poles included) at ``times`` evenly spaced times."""

    kind: str = "quick"
    theta: int = QUICK_GRID[0]
    lat: int = QUICK_GRID[1]
    times: int = QUICK_GRID[2]
    frames_needed: bool = False  # also measure the frames the point's default mesh needs

    @property
    def one_strip(self) -> bool:
        return self.kind == "quick"

    def as_dict(self) -> dict:
        out = {"kind": self.kind, "grid": [self.theta, self.lat, self.times]}
        if self.frames_needed:  # absent otherwise, so the keys of plain scans stay as they were
            out["frames_needed"] = True
        return out


def scan_spec(kind: str, grid=None, frames_needed: bool = False) -> ScanSpec:
    """The scan of a sweep: kind 'quick' or 'full', grid (theta, lat, times) or its default;
    ``frames_needed`` also measures each point's frames (see sweeps.run.point_figures)."""
    if kind not in SCAN_KINDS:
        raise SweepInputError(f"--scan: must be one of {', '.join(SCAN_KINDS)}, got {kind!r}")
    nt, nl, ns = (QUICK_GRID if kind == "quick" else FULL_GRID) if grid is None else grid
    problem = scan_grid_problem(nt, nl, ns)
    if problem:
        raise SweepInputError(problem)
    return ScanSpec(kind, int(nt), int(nl), int(ns), bool(frames_needed))


def _number(option: str, text: str) -> float:
    try:
        v = float(text)
    except ValueError:
        raise SweepInputError(f"{option}: {text!r} is not a number") from None
    if not math.isfinite(v):
        raise SweepInputError(f"{option}: {text!r} is not finite")
    return v


def parse_values(option: str, text: str, integer: bool = False) -> list[float] | list[int]:
    """Values of ``V,V,...`` with START:STOP:COUNT ranges (see the module's docstring)."""
    if not text.strip():
        raise SweepInputError(
            f"{option}: an empty list; give values separated by commas, or leave the option out"
        )
    out: list = []
    for item in text.split(","):
        item = item.strip()
        if not item:
            raise SweepInputError(f"{option} {text!r}: an empty item; separate values by commas")
        parts = item.split(":")
        if len(parts) == 1:
            vals = [_number(option, parts[0])]
        elif len(parts) == 3:
            a, b = _number(option, parts[0]), _number(option, parts[1])
            count = parts[2].strip()
            if not count.isdigit() or not 1 <= int(count) <= MAX_POINTS:
                raise SweepInputError(
                    f"{option} {item!r}: COUNT of START:STOP:COUNT must be an integer from 1 "
                    f"to {MAX_POINTS}"
                )
            vals = [a] if int(count) == 1 else np.linspace(a, b, int(count)).tolist()
        else:
            raise SweepInputError(
                f"{option} {item!r}: expected a value or START:STOP:COUNT (e.g. 0.13:0.16:4)"
            )
        for v in vals:
            if integer:
                if not float(v).is_integer():
                    raise SweepInputError(f"{option}: {v:g} is not an integer (from {item!r})")
                v = int(v)
            else:
                v = round(float(v), 12)  # 0.13:0.16:4 gives 0.14, not 0.14000000000000001
            if v not in out:
                out.append(v)
    return out


def parse_windows(option: str, text: str) -> list[tuple[float, float]]:
    """Stage windows ``START,END/START,END/...``."""
    out: list[tuple[float, float]] = []
    for item in text.split("/"):
        parts = item.split(",")
        if len(parts) != 2:
            raise SweepInputError(
                f"{option} {item!r}: expected START,END windows separated by '/', "
                "e.g. 0.586,0.97/0.6,0.95"
            )
        w = (_number(option, parts[0]), _number(option, parts[1]))
        if w not in out:
            out.append(w)
    return out


def _controls(strips, depth, windows: dict, where: str) -> Controls:
    """A point; windows not given are the strip count's defaults."""
    try:
        timing = {**Controls(strips=strips).timing, **windows} if windows else None
        return Controls(strips=strips, depth=depth, timing=timing)
    except ControlError as exc:
        opt = exc.option.split()[0]
        raise SweepInputError(f"{where}--{opt}: {exc.message}") from None


def check_size(total: int, large_ok: bool, what: str = "the grid") -> None:
    """Refuse an empty grid, one over MAX_POINTS, and one over LARGE_GRID unless confirmed."""
    if total == 0:
        raise SweepInputError(f"{what} has no points")
    if total > MAX_POINTS:
        raise SweepInputError(f"{what} has {total} points; at most {MAX_POINTS}")
    if total > LARGE_GRID and not large_ok:
        raise SweepInputError(
            f"{what} has {total} points (about {total * 3 / 3600:.0f} core-hours of quick "
            f"scans); more than {LARGE_GRID} need --large-grid to confirm"
        )


def grid_points(
    strips: list[int],
    depths: list[float] | None,
    windows: dict[str, list[tuple[float, float]]],
    large_ok: bool = False,
) -> list[Controls]:
    """The cartesian product, strips outermost, then depth, then the stages in motion order.

    depths None: each strip count's documented depth. Every point is validated here; see
    :func:`check_size` for the sizes refused (``large_ok`` confirms a large grid).
    """
    depth_list: list = [None] if depths is None else depths
    stage_lists = [[(s, w) for w in windows[s]] for s in STAGE_NAMES if windows.get(s)]
    total = len(strips) * len(depth_list) * math.prod(len(x) for x in stage_lists)
    check_size(total, large_ok)
    out = []
    for n, d, *ws in itertools.product(strips, depth_list, *stage_lists):
        out.append(_controls(n, d, dict(ws), ""))
    return out


def read_table(path: Path, large_ok: bool = False) -> list[Controls]:
    """Points from a CSV table: a header with ``strips`` and optionally ``depth`` and stage
    names (each cell START,END, quoted); one point per row; empty cells take the default.
    Sizes as :func:`check_size` (``large_ok`` confirms a large table)."""
    try:
        size = path.stat().st_size
    except OSError as exc:
        raise SweepInputError(f"--table {path}: cannot read it ({exc.strerror})") from None
    if size > MAX_TABLE_BYTES:
        raise SweepInputError(f"--table {path}: {size} bytes; at most {MAX_TABLE_BYTES}")
    try:
        text = path.read_text(encoding="utf-8")
    except (OSError, UnicodeDecodeError) as exc:
        raise SweepInputError(f"--table {path}: cannot read it as UTF-8 text ({exc})") from None
    rows = list(csv.reader(io.StringIO(text)))
    rows = [r for r in rows if any(c.strip() for c in r)]
    if not rows:
        raise SweepInputError(f"--table {path}: empty; needs a header row and one row per point")
    head = [c.strip().lower() for c in rows[0]]
    allowed = ("strips", "depth", *STAGE_NAMES)
    bad = [c for c in head if c not in allowed]
    if bad or "strips" not in head or len(set(head)) != len(head):
        raise SweepInputError(
            f"--table {path}: the header must name 'strips' and may name {', '.join(allowed[1:])}"
            f", each once; got {', '.join(head)}"
        )
    check_size(len(rows) - 1, large_ok, f"--table {path}")
    out: list[Controls] = []
    for r, row in enumerate(rows[1:], start=2):
        where = f"--table {path} row {r}: "
        if len(row) != len(head):
            raise SweepInputError(f"{where}{len(row)} cells for {len(head)} columns")
        cell = {h: c.strip() for h, c in zip(head, row, strict=True)}
        try:
            strips = parse_values("strips", cell["strips"], integer=True)
            depth = parse_values("depth", cell["depth"]) if cell.get("depth") else [None]
            wins = {s: parse_windows(s, cell[s]) for s in STAGE_NAMES if cell.get(s)}
        except SweepInputError as exc:
            raise SweepInputError(f"{where}{exc}") from None
        if len(strips) != 1 or len(depth) != 1 or any(len(w) != 1 for w in wins.values()):
            raise SweepInputError(f"{where}one value per cell (a row is one point)")
        c = _controls(strips[0], depth[0], {s: w[0] for s, w in wins.items()}, where)
        if c not in out:
            out.append(c)
    return out


def point_record(controls: Controls, spec: ScanSpec) -> dict:
    """The canonical description of a point: its controls and its scan (what its key hashes)."""
    return {
        "strips": controls.strips,
        "depth": controls.wave_depth,
        "timing": {s: [float(a), float(b)] for s, (a, b) in controls.timing.items()},
        "scan": spec.as_dict(),
    }


def point_key(controls: Controls, spec: ScanSpec) -> str:
    """A 16-hex-digit hash of :func:`point_record` (floats by their shortest exact repr)."""
    text = json.dumps(point_record(controls, spec), sort_keys=True, separators=(",", ":"))
    return hashlib.sha256(text.encode()).hexdigest()[:16]
