"""``turnabout sweep`` and ``turnabout tune``: regularity figures over a grid of controls.

``sweep`` scans every point of a grid (or of a CSV table) and writes ``sweep.csv``,
``sweep.json`` and, with ``--plot``, ``regular.png`` and ``curvature.png`` into ``--out``;
``tune`` searches each strip count's depth for the smallest peak curvature that stays
regular, then the windows and frames, and writes the tuned table (the format of the file
the controls' defaults come from, eversion/tuned_controls.json). Both run on all local
cores by default, on a Dask cluster with ``--scheduler``, and resume from the per-point
files already in ``--out``.
"""

from __future__ import annotations

import argparse
import sys
from pathlib import Path

from .. import cluster
from ..eversion.controls import MAX_STRIPS, MIN_STRIPS, STAGE_HELP, STAGE_NAMES, depth_range
from ..eversion.regularity import MIN_RATIO, QUICK_GRID
from ..output import OutputError, atomic_write_bytes, check_output_file, check_output_folder
from ..progress import Cancelled, ProgressBar
from ..sweeps import grid as G
from ..sweeps.pace import FPS, STEP_LIMIT

SCAN_HELP = (
    f"'quick': one strip period on the build's fast grid ({QUICK_GRID[0]} x {QUICK_GRID[1]}, "
    f"{QUICK_GRID[2]} times); 'full': the whole circle on {G.FULL_GRID[0]} x "
    f"{G.FULL_GRID[1]}, {G.FULL_GRID[2]} times, like build --scan-only (default quick)"
)


def _run_options(p: argparse.ArgumentParser, out_default: str) -> None:
    g = p.add_argument_group("scan and run")
    g.add_argument("--scan", choices=G.SCAN_KINDS, default="quick", help=SCAN_HELP)
    g.add_argument(
        "--scan-grid", type=int, nargs=3, metavar=("THETA", "LAT", "TIMES"), default=None,
        help="the scan's grid instead of the kind's own: longitudes (per strip for quick) "
        ">= 4, latitudes >= 3 (poles included), times >= 2",
    )  # fmt: skip
    g.add_argument(
        "--out", type=Path, default=Path(out_default),
        help=f"results folder: points/KEY.json per point, then the tables (default "
        f"{out_default}); its parent folder must exist; a re-run reuses the points in it",
    )  # fmt: skip
    g.add_argument(
        "--workers", type=int, default=None,
        help=f"local worker processes (default: every core, {cluster.default_workers()} here)",
    )  # fmt: skip
    g.add_argument(
        "--scheduler", default=None, metavar="ADDRESS",
        help="run on a Dask cluster instead: HOST:PORT or tcp://HOST:PORT of a running "
        "scheduler, or local:N to start N worker processes here (needs the 'sweep' extra)",
    )  # fmt: skip
    g.add_argument(
        "--retries",
        type=int,
        default=3,
        help="times a Dask task is run again after its worker fails, 0-10 (default 3)",
    )
    g.add_argument("--quiet", action="store_true", help="no progress bar and no summary")


def add_parser(sub, name: str) -> argparse.ArgumentParser:
    if name == "tune":
        return _add_tune(sub, name)
    lo, hi = depth_range()
    p = sub.add_parser(
        name,
        help="regularity figures over a grid of controls",
        description="Scan the eversion's regularity at every point of a grid of controls "
        "(or of a CSV table) and write sweep.csv and sweep.json (and PNG maps with --plot). "
        "Lists: 8,10; ranges START:STOP:COUNT (inclusive): 0.13:0.16:4; stage windows "
        "START,END separated by '/'. Exit 0 when every point is scanned (each point's "
        "verdict is in the tables).",
    )
    g = p.add_argument_group("grid (the eversion's controls, as lists)")
    g.add_argument(
        "--strips", default=None, metavar="LIST",
        help=f"strip counts, integers {MIN_STRIPS}-{MAX_STRIPS} (default {MIN_STRIPS})",
    )  # fmt: skip
    g.add_argument(
        "--depth", default=None, metavar="LIST",
        help=f"corrugation depths, fractions of the radius, {lo:g}-{hi:g} "
        "(default: each strip count's documented depth)",
    )  # fmt: skip
    for stage in STAGE_NAMES:
        g.add_argument(
            f"--{stage}", default=None, metavar="START,END[/START,END...]",
            help=f"windows of when {STAGE_HELP[stage]} (default: each strip count's "
            "documented window)",
        )  # fmt: skip
    g.add_argument(
        "--table", type=Path, default=None, metavar="FILE.csv",
        help="points from a CSV table instead: header 'strips' and optionally 'depth' and "
        "stage names (cells START,END, quoted), one point per row",
    )  # fmt: skip
    _run_options(p, "sweep-results")
    p.add_argument(
        "--frames-needed", action="store_true",
        help="also measure the frames each regular point's default mesh needs so that no "
        "vertex moves more than one local edge length per frame (bakes the point's frames: "
        "some seconds each)",
    )  # fmt: skip
    p.add_argument(
        "--large-grid", action="store_true",
        help=f"confirm a grid of more than {G.LARGE_GRID:,} points (refused without it)",
    )  # fmt: skip
    p.add_argument(
        "--plot", action="store_true",
        help="also write regular.png and curvature.png over strips x depth (needs matplotlib)",
    )  # fmt: skip
    p.set_defaults(run=run_sweep_command)
    return p


def _add_tune(sub, name: str) -> argparse.ArgumentParser:
    p = sub.add_parser(
        name,
        help="tune each strip count's depth, windows and frames; write the tuned table",
        description=f"For each strip count: sweep the depth over its allowed range, keep the "
        f"regular point (min ratio >= {MIN_RATIO:g}) with the smallest peak curvature x "
        "radius, and sweep again between its neighbours (--rounds times); then choose the "
        "windows that need the fewest frames (a step-rate model of the default mesh, "
        "optimised, then checked on the real frames; adopted only when they save a whole "
        f"second) and the frames: the smallest multiple of {FPS} whose largest move per frame "
        f"is at most {STEP_LIMIT:g} local edge lengths. With lists of stage windows the "
        "windows are not tuned: the depth is tuned for each combination and the best kept. "
        "Writes the tuned table (JSON; the format of the file the controls' defaults come "
        "from). Exit 1 when a strip count has no regular depth.",
    )
    p.add_argument(
        "--strips", default=str(MIN_STRIPS), metavar="LIST",
        help=f"strip counts, integers {MIN_STRIPS}-{MAX_STRIPS}, e.g. 8:16:9 for all "
        f"(default {MIN_STRIPS})",
    )  # fmt: skip
    for stage in STAGE_NAMES:
        p.add_argument(f"--{stage}", default=None, metavar="START,END[/START,END...]",
                       help=f"windows of when {STAGE_HELP[stage]} to try; the depth is "
                       "tuned for each combination and the best kept, and the windows are "
                       "not tuned (default: the reference window)")  # fmt: skip
    p.add_argument("--coarse", type=int, default=7,
                   help="depths per round, 3-50 (default 7)")  # fmt: skip
    p.add_argument("--rounds", type=int, default=2,
                   help="refining rounds after the coarse one, 0-10 (default 2)")  # fmt: skip
    p.add_argument(
        "--tuned",
        type=Path,
        default=None,
        metavar="FILE.json",
        help="the tuned table to write (default OUT/tuned.json)",
    )
    p.add_argument(
        "--keep", default=None, metavar="LIST",
        help="strip counts (among --strips) whose depth, windows and frames are kept from the "
        "existing --tuned file; their figures are measured again and the tuner's own "
        "choice is recorded beside them",
    )  # fmt: skip
    _run_options(p, "tune-results")
    p.set_defaults(run=run_tune_command)
    return p


def _check_run_options(args) -> G.ScanSpec:
    """The scan, every run option checked; raises SweepInputError, OutputError or
    SchedulerError naming the option."""
    spec = G.scan_spec(args.scan, args.scan_grid, getattr(args, "frames_needed", False))
    check_output_folder(args.out, "--out")
    if args.workers is not None:
        cluster.check_workers(args.workers)
        if args.scheduler is not None:
            raise cluster.SchedulerError(
                "--workers: counts local processes; with --scheduler the cluster's workers run "
                "the points (use local:N to start N of them)"
            )
    if isinstance(args.retries, bool) or not 0 <= args.retries <= 10:
        raise G.SweepInputError(f"--retries: must be from 0 to 10, got {args.retries}")
    if args.scheduler is not None:
        cluster.parse_scheduler(args.scheduler)
        cluster.require_dask()
    return spec


def _windows(args) -> dict:
    out = {}
    for s in STAGE_NAMES:
        text = getattr(args, s)
        if text is not None:
            out[s] = G.parse_windows(f"--{s}", text)
    return out


def _execute(args, label: str, work) -> int:
    """Run work(run_options) on the asked-for runner with a progress bar; map errors to codes."""
    workers = args.workers or cluster.default_workers()
    try:
        with ProgressBar(label, 1, enabled=not args.quiet) as bar:
            if args.scheduler is not None:
                with cluster.dask_client(args.scheduler) as client:
                    return work({"client": client, "retries": args.retries, "progress": bar})
            return work({"workers": workers, "progress": bar})
    except cluster.SchedulerError as exc:
        print(f"turnabout {args.command}: {exc}", file=sys.stderr)
        return 2
    except (Cancelled, KeyboardInterrupt):
        print(f"turnabout {args.command}: cancelled (finished points are kept in {args.out}; "
              "run again to resume)", file=sys.stderr)  # fmt: skip
        return 130


def run_sweep_command(args) -> int:
    try:
        grid_given = any(getattr(args, s) is not None for s in ("strips", "depth", *STAGE_NAMES))
        if args.table is not None:
            if grid_given:
                raise G.SweepInputError(
                    "--table: gives the points itself; leave out --strips, --depth and the "
                    "stage windows"
                )
            points = G.read_table(args.table, args.large_grid)
        else:
            strips = G.parse_values(
                "--strips", str(MIN_STRIPS) if args.strips is None else args.strips, integer=True
            )
            depths = None if args.depth is None else G.parse_values("--depth", args.depth)
            points = G.grid_points(strips, depths, _windows(args), args.large_grid)
        spec = _check_run_options(args)
        if args.plot:
            try:
                import matplotlib  # noqa: F401
            except ImportError:
                raise G.SweepInputError(
                    "--plot: plots need matplotlib: install the 'plot' extra "
                    "(pip install 'turnabout[plot]')"
                ) from None
    except (G.SweepInputError, OutputError, cluster.SchedulerError) as exc:
        print(f"turnabout sweep: {exc}", file=sys.stderr)
        return 2
    from ..sweeps.run import run_sweep, write_tables

    def work(opts):
        res = run_sweep(points, spec, args.out, **opts)
        csv_path, json_path = write_tables(res, args.out)
        paths = [csv_path, json_path]
        if args.plot:
            from ..sweeps.plot import write_plots

            paths += list(write_plots(res, args.out))
        if not args.quiet:
            ok = sum(f["verdict"] == "regular" for f in res.figures)
            print(f"{len(points)} points ({len(res.computed)} computed, {len(res.reused)} "
                  f"reused), {ok} regular; wrote {', '.join(str(p) for p in paths)}")  # fmt: skip
        return 0

    return _execute(args, "sweep", work)


def _tune_command_text(args) -> str:
    """The command as the table records it: every option that shapes the table."""
    parts = ["turnabout tune", f"--strips {args.strips}"]
    if args.keep:
        parts.append(f"--keep {args.keep}")
    parts += [f"--{s} {getattr(args, s)}" for s in STAGE_NAMES if getattr(args, s) is not None]
    if args.coarse != 7:
        parts.append(f"--coarse {args.coarse}")
    if args.rounds != 2:
        parts.append(f"--rounds {args.rounds}")
    if args.scan != "quick":
        parts.append(f"--scan {args.scan}")
    if args.scan_grid is not None:
        parts.append("--scan-grid " + " ".join(map(str, args.scan_grid)))
    if args.tuned is not None:
        parts.append(f"--tuned {args.tuned.as_posix()}")
    parts.append(f"--out {args.out.as_posix()}")
    return " ".join(parts)


def run_tune_command(args) -> int:
    from ..eversion.controls import TunedTableError
    from ..sweeps import tuned_table as T

    try:
        strips = G.parse_values("--strips", args.strips, integer=True)
        windows = _windows(args)
        G.grid_points(strips, None, windows)  # validates every combination
        if not 3 <= args.coarse <= 50:
            raise G.SweepInputError(f"--coarse: must be from 3 to 50, got {args.coarse}")
        if not 0 <= args.rounds <= 10:
            raise G.SweepInputError(f"--rounds: must be from 0 to 10, got {args.rounds}")
        keep = G.parse_values("--keep", args.keep, integer=True) if args.keep else []
        if set(keep) - set(strips):
            raise G.SweepInputError(
                f"--keep: {', '.join(map(str, sorted(set(keep) - set(strips))))} not among "
                "--strips; keep only counts that are tuned"
            )
        if keep and args.tuned is None:
            raise G.SweepInputError("--keep: keeps entries of the --tuned file; give --tuned")
        spec = _check_run_options(args)
        tuned = args.tuned or args.out / "tuned.json"
        if args.tuned is not None:
            check_output_file(tuned, "--tuned")
        kept = T.read_kept(tuned, keep)
    except (G.SweepInputError, OutputError, cluster.SchedulerError, TunedTableError) as exc:
        print(f"turnabout tune: {exc}", file=sys.stderr)
        return 2
    from ..sweeps.run import run_sweep
    from ..sweeps.tune import tune_windows

    def work(opts):
        results = [tune_windows(n, spec, args.out, windows, coarse=args.coarse,
                                rounds=args.rounds, **opts) for n in strips]  # fmt: skip
        ok = [r for r in results if r.depth is not None]
        records = []
        for r in ok:
            k = kept.get(r.strips)
            if k is None:
                records.append(T.pace_record(r.strips, r.depth, r.timing, not windows))
            else:
                records.append(T.pace_record(r.strips, k["depth"], k["timing"], not windows,
                                             frames_at=k["frames"]))  # fmt: skip
        paced = T.run_pace(records, args.out, **opts)
        chosen = [T.chosen_controls(r, p, kept.get(r.strips))
                  for r, p in zip(ok, paced, strict=True)]  # fmt: skip
        figures = run_sweep(chosen, spec, args.out, **opts).figures
        entries: dict = {r.strips: None for r in results}
        for r, p, f in zip(ok, paced, figures, strict=True):
            entries[r.strips] = T.entry(r, p, f, kept.get(r.strips))
        args.out.mkdir(exist_ok=True)
        atomic_write_bytes(tuned, T.table_bytes(T.table(entries, spec, _tune_command_text(args))))
        if not args.quiet:
            for r in results:
                e = entries[r.strips]
                if e is None:
                    print(f"{r.strips} strips: no regular depth among {len(r.tried)} tried")
                    continue
                t = e["tuner"]
                q = e["quick_scan"]
                saved = t["reference_windows"]["frames"] - t["frames"]
                print(f"{r.strips} strips: depth {e['depth']:g}, min ratio {q['min_ratio']:.4f}, "
                      f"peak curvature x R {q['max_curvature']:.1f}, {e['frames']} frames "
                      f"(largest step {e['largest_step']:.4f}; {t['windows']} windows, "
                      f"{saved} frames saved{', kept from the table' if e['kept'] else ''}; "
                      f"{t['depths_tried']} depths tried, {r.computed} computed)")  # fmt: skip
            print(f"wrote {tuned}")
        return 1 if any(r.depth is None for r in results) else 0

    return _execute(args, "tune", work)
