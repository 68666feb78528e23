"""Sweeps: one worker, two workers and a Dask cluster give identical numbers."""

import os

import numpy as np
import pytest
from numpy.testing import assert_allclose

from arealaw import box, entropy, hypercubic
from arealaw.workflow import Case, ResultStore, parse_scenario
from arealaw.workflow._sweep import boundary_bonds, compute_case, run_cases

SCENARIO = """
[numerics]
method = "dense"
renyi = [2]
energies = 3
[lattices.square]
shape = [10, 10]
mass = {values = [0.2, 0.5]}
[[family]]
name = "boxes"
box = {from = 2, to = 5}
[[pair]]
a = {box = [2, 2], origin = [1, 1]}
b = {box = [2, 2], origin = [6, 6]}
"""


def _numbers(store):
    return {r["case"]: (r["entropy"], r["renyi"]["2"], r.get("mutual_information"),
                        tuple(r["entanglement_energies"])) for r in store.rows()}


@pytest.fixture(scope="module")
def serial(tmp_path_factory):
    cases = parse_scenario(SCENARIO).cases
    with ResultStore(tmp_path_factory.mktemp("serial") / "s.sqlite") as st:
        summary = run_cases(cases, st, workers=1, progress=False)
        assert summary.done == len(cases) == 10 and not summary.failed
        return cases, _numbers(st)


def test_serial_sweep_matches_direct_entropy_call(serial):
    cases, numbers = serial
    c = cases[0]
    net = hypercubic((10, 10), mass=c.network["mass"])
    direct = entropy(net, box(net, c.region["box"]), method="dense", renyi=[2])
    assert numbers[c.key][0] == direct.entropy


def test_two_workers_give_identical_numbers(serial, tmp_path):
    cases, numbers = serial
    with ResultStore(tmp_path / "two.sqlite") as st:
        summary = run_cases(cases, st, workers=2, progress=False)
        pids = {r["pid"] for r in st.rows()}
        got = _numbers(st)
    assert summary.done == len(cases)
    assert os.getpid() not in pids  # computed in worker processes
    assert got == numbers  # bit-identical


def test_dask_local_cluster_gives_identical_numbers(serial, tmp_path):
    distributed = pytest.importorskip("distributed")
    cases, numbers = serial
    with distributed.LocalCluster(n_workers=1, threads_per_worker=1, processes=False,
                                  host="127.0.0.1", protocol="tcp", dashboard_address=None) as cl:
        assert cl.scheduler_address.startswith("tcp://127.0.0.1:")
        with ResultStore(tmp_path / "dask.sqlite") as st:
            summary = run_cases(cases, st, scheduler=cl.scheduler_address, progress=False)
            got = _numbers(st)
    assert summary.done == len(cases)
    assert got == numbers


def test_rerun_skips_stored_cases(serial, tmp_path):
    cases, _ = serial
    with ResultStore(tmp_path / "r.sqlite") as st:
        run_cases(cases[:4], st, progress=False)
        summary = run_cases(cases, st, progress=False)
    assert (summary.skipped, summary.done) == (4, len(cases) - 4)


def test_failed_case_is_reported_and_not_stored(tmp_path):
    good = Case({"shape": [12], "mass": 0.3}, {"box": [4]}, method="dense")
    bad = Case({"shape": ["inf"], "mass": 0.3}, {"box": [4], "origin": [0]}, method="dense")
    with ResultStore(tmp_path / "f.sqlite") as st:
        summary = run_cases([good, bad], st, progress=False)
        assert st.keys() == {good.key}
    assert summary.done == 1 and len(summary.failed) == 1
    assert "finite network" in summary.failed[0][1]
    with ResultStore(tmp_path / "g.sqlite") as st, pytest.raises(ValueError, match="finite"):
        run_cases([bad], st, progress=False, stop_on_error=True)


@pytest.mark.parametrize("workers", [0, -1, 1.5, True], ids=["zero", "negative", "float", "bool"])
def test_bad_worker_count(tmp_path, workers):
    with ResultStore(tmp_path / "w.sqlite") as st, pytest.raises(ValueError, match="workers"):
        run_cases([], st, workers=workers)


def test_boundary_bonds_count_the_cut():
    net = hypercubic((10, 10), mass=0.1)
    # a 3x3 square has 4 * 3 bonds to its outside (common practice, no source: counting)
    assert boundary_bonds(net, box(net, [3, 3], origin=[4, 4])) == 12
    assert compute_case(Case({"shape": [10, 10], "mass": 0.1},
                             {"box": [3, 3], "origin": [0, 0]}))["boundary_bonds"] == 6
    assert np.isfinite(compute_case(Case({"shape": [6], "mass": 0.1}, {"box": [3]}))["entropy"])


def test_most_entangled_mode_is_an_eigenvector_of_xp():
    from arealaw import region_modes
    from arealaw.correlators import dense_correlators
    net = hypercubic((8, 8), mass=0.3)
    reg = box(net, [3, 3])
    nu, u = region_modes(net, reg, count=2, method="dense")
    x, p, _ = dense_correlators(net)
    xa, pa = x[np.ix_(reg.indices, reg.indices)], p[np.ix_(reg.indices, reg.indices)]
    top = np.sqrt(np.sort(np.linalg.eigvals(xa @ pa).real)[::-1][:2])
    assert_allclose(nu, top, rtol=1e-10)  # the two largest symplectic eigenvalues
    assert_allclose(np.linalg.norm(u, axis=1), 1.0, rtol=1e-12)
    for k in range(2):
        assert_allclose(xa @ pa @ u[k], nu[k] ** 2 * u[k], atol=1e-12)
