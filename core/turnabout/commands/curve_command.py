"""``turnabout curve``: turning numbers of closed plane curves and regular homotopies between them.

    turnabout curve info FILE [--path SEL]
    turnabout curve morph A B --frames N --out FILE.npz

Exit codes: 0 done, 1 homotopy refused (different turning numbers) or failed its check,
2 unreadable input, bad options or an output that cannot be written, 130 cancelled.
"""

from __future__ import annotations

import argparse
import math
import sys

import numpy as np

from ..progress import ProgressBar


def add_parser(subparsers, name: str) -> argparse.ArgumentParser:
    parser = subparsers.add_parser(
        name,
        help="turning numbers of closed plane curves; regular homotopies between them",
        description="Turning numbers of closed plane curves (SVG paths, or (N, 2) point arrays "
        "in .npy / .npz files) and Whitney-Graustein regular homotopies between them.",
    )
    parser.set_defaults(run=lambda args: (parser.print_help(), 2)[1])
    sub = parser.add_subparsers(dest="curve_command", metavar="ACTION")

    info = sub.add_parser(
        "info",
        aliases=["turning"],
        help="print the turning number (two ways) and self-crossings of each closed curve",
    )
    info.add_argument("file", help="an .svg file, or an .npy / .npz file of (N, 2) points")
    info.add_argument(
        "--path", default=None, help="SVG only: the path to report, by index (as listed) or id"
    )
    _common(info)
    info.set_defaults(run=run_info)

    morph = sub.add_parser(
        "morph",
        aliases=["homotopy"],
        help="write a regular homotopy from curve A to curve B, or refuse when impossible",
    )
    morph.add_argument("a", help="the starting curve (.svg, .npy or .npz)")
    morph.add_argument("b", help="the final curve (.svg, .npy or .npz)")
    morph.add_argument("--out", required=True, help="the .npz file to write")
    morph.add_argument(
        "--frames", type=int, default=120, help="number of frames, 2-100000 (default 120)"
    )
    morph.add_argument("--path-a", default=None, help="SVG only: the path of A, by index or id")
    morph.add_argument("--path-b", default=None, help="SVG only: the path of B, by index or id")
    morph.add_argument(
        "--easing",
        choices=("smooth", "linear"),
        default="smooth",
        help="timing of the motion: smooth starts and ends at rest (default)",
    )
    morph.add_argument(
        "--keep-starts",
        action="store_true",
        help="map the first point of A to the first point of B instead of "
        "choosing the best-matching start on B",
    )
    morph.add_argument("--quiet", action="store_true", help="no progress bar")
    _common(morph)
    morph.set_defaults(run=run_morph)
    return parser


SAMPLES_RANGE = (16, 200_000)


def _samples(text: str) -> int:
    lo, hi = SAMPLES_RANGE
    try:
        value = int(text)
    except ValueError:
        raise argparse.ArgumentTypeError(
            f"must be a whole number {lo}-{hi}, got {text!r}"
        ) from None
    if not lo <= value <= hi:
        raise argparse.ArgumentTypeError(f"must be {lo}-{hi}, got {value}")
    return value


def _common(p: argparse.ArgumentParser) -> None:
    p.add_argument(
        "--samples",
        type=_samples,
        default=1024,
        help="points per curve when sampling SVG paths or resampling, 16-200000 (default "
        "1024); raised, with a note, when an SVG curve's bends need more (the tangent may "
        "turn at most 30 degrees per sample spacing inside a segment)",
    )
    p.add_argument(
        "--direction",
        type=_direction,
        default=0.0,
        help="direction (degrees counter-clockwise from +x) whose tangent points "
        "are counted and marked (default 0)",
    )


def _direction(text: str) -> float:
    """A finite angle in degrees (nan and inf would give meaningless counts)."""
    try:
        v = float(text)
    except ValueError:
        raise argparse.ArgumentTypeError(f"expected an angle in degrees, got {text!r}") from None
    if not math.isfinite(v):
        raise argparse.ArgumentTypeError(f"must be a finite angle in degrees, got {text!r}")
    return v


class _LazyBar:
    """A progress bar that appears only once there is progress to show (not on refusal)."""

    def __init__(self, description: str, enabled: bool):
        self.description, self.enabled = description, enabled
        self.bar: ProgressBar | None = None

    def __call__(self, done: int, total: int) -> None:
        if self.bar is None:
            self.bar = ProgressBar(self.description, total, enabled=self.enabled)
        self.bar(done, total)

    def close(self) -> None:
        if self.bar is not None:
            self.bar.close()


def _selector(value: str | None):
    if value is None:
        return None
    return int(value) if value.lstrip("-").isdigit() else value


def _err(message: str) -> None:
    print(f"turnabout curve: {message}", file=sys.stderr)


def _describe(label: str, pts: np.ndarray, direction: float) -> list[str]:
    from ..curves import curve_length, resample_by_arc_length, turning_report, whitney_check

    rep = turning_report(pts, direction)
    lines = [
        f"{label}: {pts.shape[0]} points, length {curve_length(pts):.6g}",
        f"  turning number {rep.by_total_turning} by total turning "
        f"({math.degrees(rep.total_turning):.1f} degrees)",
        f"  turning number {rep.by_direction_count} by tangent direction "
        f"{math.degrees(direction):g} deg (points turning left: {rep.passages_left}, "
        f"turning right: {rep.passages_right})",
    ]
    if not rep.agree:
        lines.append("  WARNING: the two methods disagree")
    src, note = pts, ""
    if pts.shape[0] > 8192:
        src, note = resample_by_arc_length(pts, 8192), " (on 8192 resampled points)"
    w = whitney_check(src)
    signs = w.crossings.signs
    lines.append(
        f"  self-crossings {w.crossings.count}{note}: {(signs > 0).sum()} positive, "
        f"{(signs < 0).sum()} negative"
    )
    verdict = "holds" if w.holds else ("FAILS" if w.generic else "not checked: curve not generic")
    lines.append(
        f"  Whitney's formula: {w.mu:+d} (base point on the outer boundary) "
        f"{w.crossing_sum:+d} (crossing signs) = {w.whitney_value}: {verdict}"
    )
    return lines


def _raised_note(asked: int, used: int) -> str:
    return (
        f"  sampled at {used} points: --samples {asked} is too coarse for this curve's bends "
        "(raised to the least that keeps the tangent turning at most 30 degrees per sample "
        "spacing inside a segment, and the turning number)"
    )


def run_info(args) -> int:
    from ..curves import CurveError
    from ..curves.files import read_curves

    direction = math.radians(args.direction)
    try:
        curves = read_curves(args.file, samples=args.samples)
    except CurveError as exc:
        _err(str(exc))
        return 2
    sel = _selector(args.path)
    if sel is not None:
        hit = [
            i
            for i, c in enumerate(curves)
            if (sel == i if isinstance(sel, int) else sel == c[0] or f"(id={sel})" in c[0])
        ]
        if not hit:
            _err(
                f"{args.file}: no path {sel!r}; the file has: "
                + "; ".join(f"[{i}] {c[0]}" for i, c in enumerate(curves))
            )
            return 2
        curves = [curves[i] for i in hit]
    usable = 0
    for i, (label, pts, problem) in enumerate(curves):
        if pts is None:
            print(f"[{i}] {label}: skipped: {problem}")
            continue
        usable += 1
        lines = _describe(label, pts, direction)
        if _is_svg(args.file) and pts.shape[0] > args.samples:
            lines.insert(1, _raised_note(args.samples, pts.shape[0]))
        print("\n".join([f"[{i}] " + lines[0], *lines[1:]]))
    if usable == 0:
        _err(f"{args.file}: no closed regular curve to report")
        return 2
    return 0


def _is_svg(*files: str) -> bool:
    return any(str(f).lower().endswith(".svg") for f in files)


def run_morph(args) -> int:
    from ..curves import (
        CurveError,
        HomotopyCheckFailed,
        HomotopyRefused,
        marks_per_frame,
        regular_homotopy,
        track_marks,
    )
    from ..curves.files import read_curve, write_npz_atomic
    from ..output import OutputError, check_output_file, check_suffix

    direction = math.radians(args.direction)
    try:  # the output is checked before any work
        check_suffix(args.out, (".npz",), "--out", "the homotopy file")
        check_output_file(args.out, "--out")
    except OutputError as exc:
        _err(str(exc))
        return 2
    from ..curves.homotopy import MAX_FRAMES

    if not 2 <= args.frames <= MAX_FRAMES:
        _err(f"--frames: must be from 2 to {MAX_FRAMES}, got {args.frames}")
        return 2
    try:
        a = read_curve(args.a, select=_selector(args.path_a), samples=args.samples)
        b = read_curve(args.b, select=_selector(args.path_b), samples=args.samples)
    except CurveError as exc:
        _err(str(exc))
        return 2
    samples = max(
        [args.samples] + [c.shape[0] for f, c in ((args.a, a), (args.b, b)) if _is_svg(f)]
    )
    if samples > args.samples:
        print(_raised_note(args.samples, samples).strip())
    bar = _LazyBar("homotopy", enabled=not args.quiet)
    try:
        h = regular_homotopy(
            a,
            b,
            frames=args.frames,
            samples=samples,
            easing=args.easing,
            names=(args.a, args.b),
            direction=direction,
            match_base_points=not args.keep_starts,
            progress=bar,
        )
    except (HomotopyRefused, HomotopyCheckFailed) as exc:
        _err(str(exc))
        return 1
    except CurveError as exc:
        _err(str(exc))
        return 2
    finally:
        bar.close()
    marks = marks_per_frame(h.points, direction)
    ids = track_marks(marks)
    c = h.checks
    arrays = {
        "points": h.points,
        "times": h.times,
        "eased": h.eased,
        "turning_number": c.turning_number,
        "min_speed": c.min_speed,
        "max_turn": c.max_turn,
        "max_curvature": c.max_curvature,
        "bend": c.bend,
        "marks_frame": marks.frame,
        "marks_point": marks.point,
        "marks_xy": marks.positions,
        "marks_sign": marks.signs,
        "marks_track": ids,
        "marks_count": marks.counts,
        "marks_signed_count": marks.signed_counts,
        "direction": np.float64(direction),
    }
    try:
        write_npz_atomic(args.out, arrays)
    except (OSError, ValueError) as exc:
        _err(f"--out {args.out}: cannot write ({getattr(exc, 'strerror', None) or exc})")
        return 2
    f, n = h.points.shape[:2]
    print(
        f"wrote {args.out}: {f} frames x {n} points, turning number {h.turning_number}; "
        f"lowest speed {c.min_speed.min():.3f} of the mean, sharpest turn "
        f"{c.max_turn.max():.3g} rad, largest curvature {c.max_curvature.max():.4g}; "
        f"marked points per frame {marks.counts.min()}-{marks.counts.max()}"
    )
    return 0
