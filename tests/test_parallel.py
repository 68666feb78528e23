"""Work units of one computation on local processes and on a dask.distributed cluster.

Every kind of unit (sparse column blocks, parity sectors, partial waves, transverse momenta)
gives the serial numbers bit for bit (common practice, no source: the units are independent and
their results are joined in order), locally (joblib 'loky') and on a real LocalCluster of two
single-threaded worker processes.
"""

import json
import os

import numpy as np
import pytest
from threadpoolctl import threadpool_limits

from arealaw import ball, box, entropy, hypercubic, logarithmic_negativity, slab
from arealaw._parallel import map_units, parallel_work, parallelism
from arealaw._progress import reporting
from arealaw.cli import main
from arealaw.correlators import SparseBackend
from arealaw.methods import RadialMethod
from arealaw.methods._registry import BlockMethod
from arealaw.network import radial_lattice, shells


def _disordered():
    # 14³ with seeded site masses (its spectral interval from Gershgorin discs, no dense
    # eigenproblem); a ball of radius 2.2 has 48 boundary right-hand sides
    net = hypercubic((14, 14, 14), mass=0.3, mass_disorder=0.5, seed=1)
    return net, ball(net, 2.2)


def _sparse_in_blocks_of(size):
    method = BlockMethod("sparse")
    method.backend = SparseBackend(block_size=size)
    return method


@pytest.fixture(autouse=True)
def _one_blas_thread():
    # the serial references run with one BLAS thread, as the units do
    with threadpool_limits(limits=1):
        yield


def _numbers(res):
    return (res.entropy, res.error_bound, res.entropy_per_area, res.modes,
            tuple(sorted(res.renyi.items())), tuple(sorted(res.renyi_error_bound.items())))


def _cases():
    """(name, network, region, method): one case per kind of work unit, each a few units."""
    net, region = _disordered()
    cube = hypercubic((20, 20, 20), mass=0.2)
    strip = hypercubic((30, 12, 12), mass=0.1, boundary=["dirichlet", "periodic", "periodic"])
    radial = radial_lattice(40, dim=3, mass=0.1)
    return [("sparse column blocks", net, region, _sparse_in_blocks_of(8)),
            ("parity sectors", cube, box(cube, (10, 10, 10)), "spectral"),
            ("transverse momenta", strip, slab(strip, 0, 5, 15), "transverse"),
            ("partial waves", radial, shells(radial, 6), RadialMethod(lmax=24, n_jobs=1))]


@pytest.fixture(scope="module")
def serial():
    out = {}
    for name, net, region, method in _cases():
        res = entropy(net, region, method=method, renyi=[2], workers=1)
        out[name] = _numbers(res), res.info
    return out


def test_every_kind_of_unit_splits(serial):
    # the cases really hold several units (else the comparisons below would be empty claims)
    assert serial["sparse column blocks"][1]["boundary_rhs"] > 3 * 8  # four blocks of 8
    assert len(serial["parity sectors"][1]["reflection_sectors"]) == 8
    assert serial["transverse momenta"][1]["distinct_chains"] > 4
    assert serial["partial waves"][1]["lmax"] == 24


def test_local_processes_give_serial_numbers(serial):
    for name, net, region, method in _cases():
        res = entropy(net, region, method=method, renyi=[2], workers=2)
        assert _numbers(res) == serial[name][0], name
        assert res.info["parallel"] == "2 local processes"


def test_units_run_in_other_processes_with_progress():
    seen = []
    with reporting(lambda stage, done, total: seen.append((stage, done, total))), \
            parallel_work(parallelism(workers=2)):
        pids = map_units(os.getpid, [()] * 4, stage="units")
    assert os.getpid() not in pids
    assert seen[-1] == ("units", 4, 4)


def test_sparse_blocks_equal_for_any_split():
    # column blocks of 8 on two processes against one block of all columns, in process
    net, region = _disordered()
    rows = region.indices
    one = SparseBackend(block_size=1000, n_jobs=1).blocks(net, rows, tol=1e-10)
    assert one.info["boundary_rhs"] > 8
    with parallel_work(parallelism(workers=2)):
        split = SparseBackend(block_size=8).blocks(net, rows, tol=1e-10)
    assert np.array_equal(one.x, split.x) and np.array_equal(one.p, split.p)
    assert (one.x_error, one.p_error) == (split.x_error, split.p_error)
    assert np.array_equal(one.x_dominant, split.x_dominant)


@pytest.fixture(scope="module")
def cluster():
    distributed = pytest.importorskip("distributed")
    with distributed.LocalCluster(n_workers=2, threads_per_worker=1, processes=True,
                                  host="127.0.0.1", dashboard_address=":0") as cl:
        yield cl


def test_local_cluster_gives_serial_numbers(serial, cluster):
    import distributed
    with distributed.Client(cluster) as client:
        worker_pids = set(client.run(os.getpid).values())
        for name, net, region, method in _cases():
            with distributed.get_task_stream(client) as ts:
                res = entropy(net, region, method=method, renyi=[2], scheduler=client)
            assert _numbers(res) == serial[name][0], name
            assert len(ts.data) >= 2, name  # the units ran as tasks on the cluster
        with parallel_work(parallelism(scheduler=client)):
            pids = map_units(os.getpid, [()] * 4)
    assert set(pids) <= worker_pids and os.getpid() not in pids


def test_cluster_of_one_worker_computes_there(serial):
    # joblib runs a pool of one in the calling process; a cluster of one worker must still get
    # the units (its worker may be the machine with the memory)
    import distributed
    with distributed.LocalCluster(n_workers=1, threads_per_worker=1, processes=True,
                                  host="127.0.0.1", dashboard_address=":0") as cl, \
            distributed.Client(cl) as client:
        worker_pids = set(client.run(os.getpid).values())
        seen = []
        with reporting(lambda stage, done, total: seen.append((stage, done, total))), \
                parallel_work(parallelism(scheduler=client)):
            pids = map_units(os.getpid, [()] * 3, stage="units")
        assert set(pids) == worker_pids and os.getpid() not in pids
        assert seen[0] == ("units", 0, 3) and seen[-1] == ("units", 3, 3)
        name, net, region, method = _cases()[0]  # sparse blocks: the matrix is scattered
        with distributed.get_task_stream(client) as ts:
            res = entropy(net, region, method=method, renyi=[2], scheduler=client)
        assert _numbers(res) == serial[name][0]
        assert len(ts.data) >= 4


def test_cli_scheduler_address_and_negativity(cluster, capsys):
    # an address (not a client): connected, used and closed by the command
    net, region = _disordered()
    res = entropy(net, region, method="sparse", workers=1)
    code = main(["entropy", "--shape", "14", "14", "14", "--mass", "0.3", "--mass-disorder",
                 "0.5", "--seed", "1", "--ball", "2.2", "--method", "sparse", "--json",
                 "--quiet", "--scheduler", cluster.scheduler_address])
    out, err = capsys.readouterr()
    assert code == 0, err
    d = json.loads(out)
    assert d["entropy"] == res.entropy and d["error_bound"] == res.error_bound
    assert d["info"]["parallel"].startswith("dask")
    a, b = box(net, 3, origin=(1, 1, 1)), box(net, 3, origin=(1, 1, 5))
    serial = logarithmic_negativity(net, a, b, method="sparse", workers=1)
    on_cluster = logarithmic_negativity(net, a, b, method="sparse",
                                        scheduler=cluster.scheduler_address)
    assert on_cluster.log_negativity == serial.log_negativity


def test_cluster_without_workers_one_line(monkeypatch):
    distributed = pytest.importorskip("distributed")
    import arealaw._parallel as parallel
    monkeypatch.setattr(parallel, "WAIT_FOR_WORKERS", 0.5)
    with distributed.LocalCluster(n_workers=0, processes=False, host="127.0.0.1",
                                  protocol="tcp", dashboard_address=":0") as empty, \
            distributed.Client(empty) as client:
        with parallel_work(parallelism(scheduler=client)), \
                pytest.raises(ConnectionError, match="has no workers .waited 0.5 s"):
            map_units(os.getpid, [()] * 2)


@pytest.mark.parametrize("argv, words", [
    (["--scheduler", "tcp://127.0.0.1:1", "--scheduler-timeout", "1"],
     "cannot reach the dask scheduler at 'tcp://127.0.0.1:1'"),
    (["--scheduler", "no-port-here"], "cannot reach the dask scheduler at 'no-port-here'"),
    (["--scheduler", "tcp://127.0.0.1:1", "--workers", "2"], "not both"),
    (["--workers", "0"], "'0' must be >= 1"),
])
def test_cli_bad_parallel_options_one_line(argv, words, capsys):
    try:
        code = main(["entropy", "--shape", "12", "--mass", "0.3", "--box", "4"] + argv)
    except SystemExit as exc:  # refused by the argument parser itself
        code = exc.code
    _, err = capsys.readouterr()
    assert code == 2
    assert words in err and len(err.strip().splitlines()) == 1


@pytest.mark.parametrize("kwargs, words", [
    ({"workers": 0}, "workers must be >= 1, got 0"),
    ({"workers": 2.5}, "workers must be a whole number, got 2.5"),
    ({"workers": True}, "workers must be a whole number"),
    ({"scheduler": 8786}, "scheduler must be an address"),
    ({"scheduler": "tcp://head node:8786"}, "is not an address"),
    ({"workers": 2, "scheduler": "tcp://head:8786"}, "not both"),
])
def test_api_bad_parallel_arguments(kwargs, words):
    net = hypercubic(12, mass=0.3)
    with pytest.raises(ValueError, match=words):
        entropy(net, box(net, 4), **kwargs)
