"""Distributed runs on a Dask LocalCluster (two worker processes on loopback): the same
answer, bit for bit, as the local run with the same seed, even when a worker is killed
mid-run."""

from __future__ import annotations

import os
import signal

import numpy as np
import pytest

import lotwise
import lotwise.distributed

from conftest import EXAMPLES

distributed = pytest.importorskip("dask.distributed")


@pytest.fixture(scope="module")
def client():
    cluster = distributed.LocalCluster(n_workers=2, threads_per_worker=1, processes=True,
                                       host="127.0.0.1", dashboard_address=None)
    c = distributed.Client(cluster)
    yield c
    c.close()
    cluster.close()


@pytest.fixture(scope="module")
def study():
    return lotwise.load(EXAMPLES / "load_cell_amp_1pct.toml")


def same_bits(a: float, b: float) -> bool:
    return np.float64(a).tobytes() == np.float64(b).tobytes()


def assert_identical(local, remote) -> None:
    assert remote.samples == local.samples
    assert remote.passed == local.passed
    assert remote.complete and local.complete
    assert all(same_bits(x, y) for x, y in zip(remote.interval, local.interval))
    for name, m in local.measurements.items():
        r = remote.measurements[name]
        for field in ("mean", "std_dev", "min", "max"):
            assert same_bits(getattr(r, field), getattr(m, field)), (name, field)
        assert all(same_bits(x, y) for x, y in zip(r.coverage, m.coverage)), name
    for a, b in zip(local.specs, remote.specs):
        assert a.passed == b.passed


def test_distributed_run_is_bit_identical(client, study):
    local = study.run(samples=40000, seed=9, threads=2)
    remote = lotwise.distributed.run(study, client, samples=40000, seed=9, chunks_per_task=3)
    assert_identical(local, remote)


def test_a_lost_worker_costs_only_its_chunks(client, study):
    local = study.run(samples=60000, seed=10, threads=2)
    pids = client.run(os.getpid)
    victim = sorted(pids.values())[0]
    killed = []

    def kill_once(done: int, total: int) -> None:
        # After the first merged piece, with tasks on both workers, kill one outright.
        if not killed and done >= 2:
            os.kill(victim, signal.SIGKILL)
            killed.append(done)

    remote = lotwise.distributed.run(study, client, samples=60000, seed=10, chunks_per_task=1,
                                     progress=kill_once)
    assert killed, "the worker was never killed"
    assert_identical(local, remote)


def test_study_built_in_code_is_refused(client):
    from conftest import build_difference_amplifier

    study = build_difference_amplifier().compile()
    with pytest.raises(lotwise.RunError, match="built in code"):
        lotwise.distributed.run(study, client, samples=1000)
