"""Running independent tasks on a local process pool or on a Dask cluster.

Both runners take a picklable top-level function and a list of argument tuples and yield
``(index, result)`` as tasks finish (in completion order; callers that need a fixed order
sort by index). Nothing here depends on what the tasks compute.

* :func:`run_local` uses the standard library (``concurrent.futures``); ``workers == 1``
  runs in-process, so a plain run needs no subprocess at all.
* :func:`run_dask` submits one task per item with ``retries``; a worker that dies loses only
  the tasks it held, which the scheduler runs again elsewhere. ``dask.distributed`` is
  imported only here, only when asked for (the ``sweep`` extra).

Scheduler addresses (:func:`parse_scheduler`): ``local:N`` starts a LocalCluster of N
single-threaded worker processes for the length of the run; anything else of the form
``[tcp://]HOST:PORT`` is the address of a running scheduler.
"""

from __future__ import annotations

import contextlib
import multiprocessing as mp
import os
import re
from collections.abc import Callable, Iterator, Sequence
from concurrent.futures import FIRST_COMPLETED, ProcessPoolExecutor, wait

MAX_LOCAL_WORKERS = 256
_REMOTE = re.compile(r"^(tcp|tls|inproc|ucx)://[^\s:/]+(:\d{1,5})?$|^[A-Za-z0-9_.\-\[\]]+:\d{1,5}$")


class SchedulerError(ValueError):
    """A scheduler address or worker count that cannot be used; the message names the option."""


def default_workers() -> int:
    """Worker processes of a local run: every core this process may use."""
    try:
        return max(1, len(os.sched_getaffinity(0)))
    except (AttributeError, OSError):
        return max(1, os.cpu_count() or 1)


def check_workers(workers, option: str = "--workers") -> int:
    if isinstance(workers, bool) or not isinstance(workers, int) or not 1 <= workers:
        raise SchedulerError(f"{option}: must be an integer >= 1, got {workers!r}")
    if workers > MAX_LOCAL_WORKERS:
        raise SchedulerError(f"{option}: at most {MAX_LOCAL_WORKERS}, got {workers}")
    return workers


def parse_scheduler(text: str, option: str = "--scheduler") -> tuple[str, int | str]:
    """('local', N) for ``local:N`` or ('remote', address); SchedulerError otherwise."""
    text = text.strip()
    if text.startswith("local:"):
        n = text.split(":", 1)[1]
        if not n.isdigit() or not 1 <= int(n) <= MAX_LOCAL_WORKERS:
            raise SchedulerError(
                f"{option} {text}: local:N needs N, the worker processes to start, an integer "
                f"from 1 to {MAX_LOCAL_WORKERS}"
            )
        return "local", int(n)
    if not _REMOTE.match(text):
        raise SchedulerError(
            f"{option} {text!r}: expected local:N (start N worker processes here) or the "
            "address of a running Dask scheduler, HOST:PORT or tcp://HOST:PORT"
        )
    return "remote", text


def require_dask(option: str = "--scheduler") -> None:
    """Refuse, before any work, a Dask run where dask.distributed is not installed."""
    try:
        import distributed  # noqa: F401
    except ImportError:
        raise SchedulerError(
            f"{option}: needs dask.distributed; install the 'sweep' extra "
            "(pip install 'turnabout[sweep]')"
        ) from None


@contextlib.contextmanager
def local_worker_environment():
    """Dask's worker environment without ``MALLOC_TRIM_THRESHOLD_``, for the length of the block.

    Dask's nanny sets that variable in every worker it spawns. Setting it turns off glibc's
    adaptive mmap threshold, so every large numpy temporary is mapped, zero-filled and
    unmapped again: one scan of 8 strips (one strip period, 48 x 181 at 60 times) took 3.54 s
    in such a process against 2.40 s without (best of 3 each, on one idle core). The thread
    caps (OMP_NUM_THREADS and the like) are kept. Workers of a remote cluster take their
    environment from their own configuration (docs/sweeps.md, section 2, says what to set).
    """
    import dask

    # None unsets a variable of that setting (dask.distributed's nanny documents it). The
    # nanny also copies its settings into this process's own environment before it spawns
    # a worker, where the next cluster's workers inherit them: so the variable is taken out
    # of os.environ for the block too, and put back as it was after.
    name = "MALLOC_TRIM_THRESHOLD_"
    before = os.environ.pop(name, None)
    try:
        with dask.config.set({f"distributed.nanny.pre-spawn-environ.{name}": None}):
            yield
    finally:
        os.environ.pop(name, None)
        if before is not None:
            os.environ[name] = before


@contextlib.contextmanager
def dask_client(address: str, option: str = "--scheduler"):
    """A dask.distributed Client for ``address`` (``local:N`` starts and stops a LocalCluster)."""
    kind, value = parse_scheduler(address, option)
    require_dask(option)
    from distributed import Client, LocalCluster

    if kind == "local":
        with local_worker_environment(), LocalCluster(
            n_workers=int(value), threads_per_worker=1, processes=True,
            dashboard_address="127.0.0.1:0", silence_logs=40,
        ) as cluster, Client(cluster) as client:  # fmt: skip
            yield client
    else:
        try:
            client = Client(str(value), timeout="10s")
        except OSError as exc:
            raise SchedulerError(f"{option} {value}: cannot reach the scheduler ({exc})") from None
        with client:
            yield client


def run_local(fn: Callable, items: Sequence[tuple], workers: int) -> Iterator[tuple[int, object]]:
    """Yield (index, fn(*items[index])) on ``workers`` processes (1: in this process)."""
    if workers == 1 or len(items) <= 1:
        for i, args in enumerate(items):
            yield i, fn(*args)
        return
    method = "fork" if "fork" in mp.get_all_start_methods() else "spawn"
    with ProcessPoolExecutor(max_workers=workers, mp_context=mp.get_context(method)) as pool:
        pending = {pool.submit(fn, *args): i for i, args in enumerate(items)}
        try:
            while pending:
                done, _ = wait(pending, return_when=FIRST_COMPLETED)
                for fut in sorted(done, key=pending.__getitem__):
                    yield pending.pop(fut), fut.result()
        except BaseException:
            pool.shutdown(wait=True, cancel_futures=True)
            raise


def run_dask(
    client, fn: Callable, items: Sequence[tuple], retries: int = 3, keys: Sequence[str] = ()
) -> Iterator[tuple[int, object]]:
    """Yield (index, fn(*items[index])) from one Dask task per item, each with ``retries``.

    ``keys`` names the tasks (one per item; e.g. a hash of the item) so the scheduler's
    dashboard and logs say which item a task is.
    """
    from distributed import as_completed

    futures = {}
    for i, args in enumerate(items):
        kw = {"key": keys[i]} if keys else {"pure": False}
        futures[client.submit(fn, *args, retries=retries, **kw)] = i
    try:
        for fut in as_completed(list(futures)):
            yield futures[fut], fut.result()
    except BaseException:
        client.cancel(list(futures))
        raise


def run_tasks(
    fn: Callable,
    items: Sequence[tuple],
    workers: int = 1,
    client=None,
    retries: int = 3,
    keys: Sequence[str] = (),
) -> Iterator[tuple[int, object]]:
    """:func:`run_dask` on ``client`` (with ``retries`` and task ``keys``) when one is given,
    else :func:`run_local` on ``workers`` processes."""
    if client is not None:
        return run_dask(client, fn, items, retries, keys)
    return run_local(fn, items, workers)
