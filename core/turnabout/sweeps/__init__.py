"""Sweeps of the eversion's controls: regularity figures over a grid of points, and tuning.

Reads in order: grid (the points and their keys) -> run (one scan per point, on a local
pool or a Dask cluster; the results folder) -> plot (PNG maps over strips x depth) -> tune
(the depth with the smallest peak curvature that stays regular) -> pace (the frames a
timing needs, and the windows that need the fewest) -> tuned_table (the file of documented
defaults the eversion reads). Depends on eversion/ and the shared output and cluster
modules; nothing below depends on it.
"""

from .grid import (
    SCAN_KINDS,
    ScanSpec,
    SweepInputError,
    grid_points,
    parse_values,
    parse_windows,
    point_key,
    read_table,
    scan_spec,
)
from .run import SweepResult, point_figures, run_sweep, table_csv, table_json, write_tables
from .tune import TuneResult, tune_depth

__all__ = [
    "SCAN_KINDS",
    "ScanSpec",
    "SweepInputError",
    "SweepResult",
    "TuneResult",
    "grid_points",
    "parse_values",
    "parse_windows",
    "point_figures",
    "point_key",
    "read_table",
    "run_sweep",
    "scan_spec",
    "table_csv",
    "table_json",
    "tune_depth",
    "write_tables",
]
