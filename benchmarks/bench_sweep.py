"""Sweep throughput: the same sweep on 1 and 2 local workers (and a 2-worker Dask cluster when
the 'sweep' extra is installed), against one scan run directly in this process.

Prints, all measured in this run:
  * the cost per grid point of each runner / the cost of one direct scan (1.0 = no overhead);
  * the speed-up of 2 workers over 1 (ideal 2.0 on two idle cores).

Each figure is the fastest of --repeat runs (the machine may be shared).

Usage: python benchmarks/bench_sweep.py [--points N] [--grid THETA LAT TIMES] [--repeat R]
"""

from __future__ import annotations

import argparse
import tempfile
import time
from pathlib import Path

from turnabout.eversion.regularity import QUICK_GRID, scan
from turnabout.sweeps import grid_points, run_sweep, scan_spec


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--points", type=int, default=8, help="depths of the 8-strip sweep")
    ap.add_argument("--repeat", type=int, default=3, help="runs of each; the fastest counts")
    ap.add_argument(
        "--grid",
        type=int,
        nargs=3,
        default=(24, 91, 40),
        help=f"scan grid per point (default 24 91 40; quick scan: {QUICK_GRID})",
    )
    a = ap.parse_args()
    spec = scan_spec("quick", tuple(a.grid))
    pts = grid_points([8], [round(0.13 + 0.03 * i / (a.points - 1), 6)
                            for i in range(a.points)], {})  # fmt: skip
    nt, nl, ns = spec.theta, spec.lat, spec.times

    single = float("inf")
    for k in range(a.repeat):
        t0 = time.perf_counter()
        scan(pts[k % len(pts)], n_theta=nt, n_lat=nl, n_times=ns, one_strip=True)
        single = min(single, time.perf_counter() - t0)

    def timed(**opts) -> float:
        best = float("inf")
        for _ in range(a.repeat):  # the machine may be shared: the fastest run counts
            with tempfile.TemporaryDirectory() as d:
                t = time.perf_counter()
                res = run_sweep(pts, spec, Path(d), **opts)
                assert len(res.computed) == len(pts)
                best = min(best, time.perf_counter() - t)
        return best

    runs = {"local, 1 worker": timed(workers=1), "local, 2 workers": timed(workers=2)}
    try:
        from distributed import Client, LocalCluster

        from turnabout.cluster import local_worker_environment

        for n in (1, 2):
            with local_worker_environment(), LocalCluster(
                n_workers=n, threads_per_worker=1, processes=True,
                dashboard_address="127.0.0.1:0", silence_logs=40,
            ) as cl, Client(cl) as client:  # fmt: skip
                client.wait_for_workers(n)
                client.submit(abs, 1).result()  # workers up before the clock starts
                runs[f"dask LocalCluster, {n} worker{'s' * (n > 1)}"] = timed(client=client)
    except ImportError:
        print("(dask.distributed not installed: Dask runner skipped)")

    print(f"sweep of {len(pts)} points, scan grid {nt} x {nl}, {ns} times (one strip)")
    print(f"one direct scan: {single:.3f} s")
    for name, t in runs.items():
        print(f"{name:30s} {t:7.2f} s   per point / direct scan = {t / len(pts) / single:.2f}")
    for runner in ("local", "dask LocalCluster"):
        one, two = runs.get(f"{runner}, 1 worker"), runs.get(f"{runner}, 2 workers")
        if one and two:
            print(f"speed-up of {runner}, 2 workers over 1: {one / two:.2f}")
    if "dask LocalCluster, 2 workers" in runs:
        print(
            "speed-up of dask LocalCluster, 2 workers over local, 1 worker: "
            f"{runs['local, 1 worker'] / runs['dask LocalCluster, 2 workers']:.2f}"
        )


if __name__ == "__main__":
    main()
