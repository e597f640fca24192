"""The worker processes that ``--scheduler local:N`` starts (turnabout.cluster.dask_client)."""

from __future__ import annotations

import os

import pytest

from turnabout import cluster

distributed = pytest.importorskip("distributed")


def _worker_environment() -> dict:
    keys = ("MALLOC_TRIM_THRESHOLD_", "OMP_NUM_THREADS")
    return {k: os.environ.get(k) for k in keys}


def test_local_workers_keep_the_adaptive_malloc_and_the_thread_caps():
    # Dask's nanny exports MALLOC_TRIM_THRESHOLD_ to its workers by default (its
    # distributed.nanny.pre-spawn-environ setting); with it glibc stops adapting its mmap
    # threshold, and a scan ran 1.48x slower (measured; docs/sweeps.md, section 2).
    # A local cluster started by the commands drops that variable and keeps the rest.
    with cluster.dask_client("local:1") as client:
        envs = client.run(_worker_environment)
    assert len(envs) == 1
    for env in envs.values():
        assert env["MALLOC_TRIM_THRESHOLD_"] is None
        assert env["OMP_NUM_THREADS"] == "1"


def test_a_cluster_started_with_dasks_defaults_before_does_not_leak_the_variable(monkeypatch):
    # Dask's nanny writes its worker settings into the starting process's os.environ
    # (MALLOC_TRIM_THRESHOLD_=65536 by default), where later workers would inherit them
    monkeypatch.setenv("MALLOC_TRIM_THRESHOLD_", "65536")
    with cluster.dask_client("local:1") as client:
        envs = client.run(_worker_environment)
    assert [e["MALLOC_TRIM_THRESHOLD_"] for e in envs.values()] == [None]
    assert os.environ["MALLOC_TRIM_THRESHOLD_"] == "65536"  # the process's own, put back


def test_the_setting_is_restored_after_the_cluster_stops():
    import dask

    key = "distributed.nanny.pre-spawn-environ"
    before = dict(dask.config.get(key))
    with cluster.local_worker_environment():
        assert dask.config.get(key)["MALLOC_TRIM_THRESHOLD_"] is None
    assert dict(dask.config.get(key)) == before


def test_the_documented_worker_configuration_unsets_the_variable(tmp_path):
    # docs/sweeps.md, section 2: the YAML file for the workers of a running cluster.
    import shutil
    import subprocess
    import sys
    from pathlib import Path

    shutil.copy(Path(__file__).parents[1] / "docs/examples/dask-worker-memory.yaml", tmp_path)
    code = (
        "import os, distributed\n"
        "with distributed.LocalCluster(n_workers=1, threads_per_worker=1, processes=True,\n"
        "        dashboard_address='127.0.0.1:0', silence_logs=40) as c, \\\n"
        "        distributed.Client(c) as cl:\n"
        "    print(list(cl.run(lambda: os.environ.get('MALLOC_TRIM_THRESHOLD_')).values()))\n"
    )
    # a fresh worker machine's shell: no Dask settings, and not the variable itself (an
    # earlier Dask cluster in this test process wrote it into os.environ)
    env = {k: v for k, v in os.environ.items()
           if not k.startswith("DASK_") and k != "MALLOC_TRIM_THRESHOLD_"}  # fmt: skip
    run = lambda e: subprocess.run(  # noqa: E731
        [sys.executable, "-c", code], env=e, capture_output=True, text=True, timeout=120
    ).stdout.strip()
    assert run(env) == "['65536']"  # Dask's own default, so the file is what changes it
    assert run({**env, "DASK_CONFIG": str(tmp_path)}) == "[None]"
