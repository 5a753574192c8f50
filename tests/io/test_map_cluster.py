"""`fringe map --scheduler tcp://…` on a real dask cluster: two worker processes on this
machine (loopback only) compute the same map as one process.

Common practice, no source: a map is a pure function of the scenario and the grid, so
the blocks computed by remote workers must be the same numbers, bit for bit.
"""

from __future__ import annotations

from importlib import resources

import numpy as np
import pytest

from fringe.cli.main import main

distributed = pytest.importorskip("distributed")


@pytest.fixture
def demo_path():
    with resources.as_file(resources.files("fringe") / "data" / "demo_site.toml") as p:
        yield str(p)


@pytest.fixture(scope="module")
def cluster():
    """A local scheduler with two worker processes, one thread each, no dashboard."""
    with distributed.LocalCluster(n_workers=2, threads_per_worker=1, processes=True,
                                  host="127.0.0.1", dashboard_address=None,
                                  silence_logs=True) as c:
        yield c


def test_map_through_a_two_worker_cluster_equals_the_single_process_map(cluster, tmp_path,
                                                                        demo_path):
    address = cluster.scheduler_address
    assert address.startswith("tcp://127.0.0.1:")
    args = ["map", demo_path, "--box", "7.5", "3", "0.5", "9.5", "5", "1.7", "--step", "0.1",
            "--quiet", "--block-points", "2000"]
    assert main([*args, "--out", str(tmp_path / "one.npz")]) == 0
    assert main([*args, "--out", str(tmp_path / "cluster.npz"), "--scheduler", address]) == 0
    a, b = np.load(tmp_path / "one.npz"), np.load(tmp_path / "cluster.npz")
    assert a["B_T"].shape == b["B_T"].shape and a["B_T"].size > 3 * 2000  # several blocks
    np.testing.assert_array_equal(a["B_T"], b["B_T"])
    assert len(cluster.scheduler_info["workers"]) == 2
