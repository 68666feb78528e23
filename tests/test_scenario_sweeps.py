"""Scenario sweeps that say what researchers mean: tied keys, expressions, swept pairs,
disorder ensembles, radial lattices and paths relative to the scenario file."""

import math

import numpy as np
import pytest
from numpy.testing import assert_allclose

from arealaw import box, entropy, hypercubic, radial_lattice, shells
from arealaw.workflow._decay import fit_decay, fit_decay_rows
from arealaw.workflow._ensembles import average_realisations, split_seed
from arealaw.workflow._expressions import evaluate
from arealaw.workflow import ResultStore, fit_rows, load_scenario, parse_scenario
from arealaw.workflow._sweep import compute_case, run_cases

CHAIN = """
[numerics]
method = "dense"
[lattices.chain]
shape = [40]
mass = 0.1
"""


def test_tied_keys_advance_together_not_as_a_product():
    sc = parse_scenario(CHAIN + """
[[family]]
box = {values = [[2], [4], [6]]}
origin = {values = [[3], [5], [7]]}
tied = ["box", "origin"]
""")
    assert [(c.region["box"], c.region["origin"]) for c in sc.cases] == [
        ([2], [3]), ([4], [5]), ([6], [7])]


def test_tied_lattice_and_region_keys_through_a_variable():
    sc = parse_scenario(CHAIN + """
[[family]]
name = "half chains"
vars = {N = {values = [20, 40, 80]}}
shape = ["= N"]
box = ["= N // 2"]
origin = [0]
""")
    assert [(c.network["shape"], c.region["box"], c.x) for c in sc.cases] == [
        ([20], [10], 20), ([40], [20], 40), ([80], [40], 80)]
    assert all(c.network["mass"] == 0.1 for c in sc.cases)


def test_size_expression_sets_the_fit_variable():
    sc = parse_scenario(CHAIN + """
[[family]]
vars = {N = {values = [20, 40]}}
shape = ["= N"]
box = ["= N // 2"]
size = "= N / 2"
""")
    assert [c.x for c in sc.cases] == [10.0, 20.0]


@pytest.mark.parametrize("text, fragments", [
    ("box = {values = [[2], [4]]}\norigin = {values = [[1]]}\ntied = [\"box\", \"origin\"]\n",
     ["same number of values", "box: 2", "origin: 1"]),
    ("box = {values = [[2], [4]]}\ntied = [\"box\", \"mass\"]\n", ["'mass' is not swept"]),
    ("box = [\"= M // 2\"]\n", ["'M' is not a swept key", "line"]),
    ("box = [\"= __import__('os').getcwd()\"]\n", ["not allowed"]),
    ("box = [\"= open('x')\"]\n", ["'open' is not a swept key or an allowed function"]),
    ("box = [\"= 2 ** 1000\"]\n", ["exponent"]),
    ("box = 2\ntemperature = -0.5\n", ["temperature = -0.5", "finite number >= 0"]),
    ("box = 2\ntemperature = {values = [0.1, nan]}\n", ["temperature = nan", ">= 0"]),
    ("vars = {box = 3}\nbox = 2\n", ["vars", "'box'"]),
])
def test_sweep_errors_are_one_clear_line(text, fragments):
    with pytest.raises(ValueError) as info:
        parse_scenario(CHAIN + "[[family]]\n" + text, source="s.toml")
    msg = str(info.value)
    assert msg.startswith("s.toml") and "\n" not in msg
    for frag in fragments:
        assert frag in msg, (frag, msg)


def test_expressions_never_reach_python_eval():
    assert evaluate("= min(N, 7) * 2 + round(2.6) - N % 3 + sqrt(16)", {"N": 10}) == 14 + 3 - 1 + 4
    for text in ("= N.__class__", "= (lambda: 1)()", "= [x for x in [1]]", "= 'a'",
                 "= N if N else 1", "= max(N, key=abs)"):
        with pytest.raises(ValueError, match="expression"):
            evaluate(text, {"N": 3})


def test_swept_pair_has_the_separation_as_its_size():
    sc = parse_scenario(CHAIN + """
[[pair]]
name = "decay"
vars = {d = {from = 6, to = 10, step = 2}}
a = {box = [4], origin = [2]}
b = {box = [4], origin = ["= 2 + d"]}
[[pair]]
name = "direct"
a = {box = [4], origin = [2]}
b = {box = [4], origin = {values = [[20], [24]]}}
size = "= gap"
""")
    decay = [c for c in sc.cases if c.family == "decay"]
    assert [c.region_b["origin"] for c in decay] == [[8], [10], [12]]
    # centres 3.5 and 2 + d + 1.5: separation d (lattice units), by construction
    assert [c.x for c in decay] == [6.0, 8.0, 10.0]
    direct = [c for c in sc.cases if c.family == "direct"]
    assert [c.x for c in direct] == [15.0, 19.0]  # smallest site distance: 20 - 5, 24 - 5
    assert direct[0].label == "b.origin=[20]"


def test_seed_sweep_is_an_ensemble_not_a_size():
    sc = parse_scenario("""
[numerics]
method = "dense"
[lattices.chain]
shape = [30]
mass = 0.2
mass_disorder = 1.5
seed = {from = 1, to = 3}
[[family]]
box = {values = [4, 6]}
origin = [0]
""")
    assert [c.x for c in sc.cases] == [4, 4, 4, 6, 6, 6]
    assert sc.cases[0].label == "box=4 | seed=1"
    assert split_seed(sc.cases[0].label) == ("box=4", "1")


@pytest.fixture(scope="module")
def ensemble(tmp_path_factory):
    sc = parse_scenario("""
[numerics]
method = "dense"
renyi = [2]
[lattices.chain]
shape = [30]
mass = 0.2
mass_disorder = 1.5
seed = {from = 1, to = 4}
[[family]]
name = "boxes"
box = {values = [3, 5, 7, 9]}
origin = [2]
[[pair]]
name = "decay"
vars = {d = {values = [4, 6, 8]}}
a = {box = [3], origin = [2]}
b = {box = [3], origin = ["= 2 + d"]}
""")
    with ResultStore(tmp_path_factory.mktemp("ens") / "e.sqlite") as st:
        run_cases(sc.cases, st, progress=False)
        return st.rows()


def test_ensemble_mean_and_standard_error_of_stored_realisations(ensemble):
    means = average_realisations(ensemble)
    assert len(ensemble) == 28 and len(means) == 7
    m = next(r for r in means if r["family"] == "boxes" and r["x"] == 5)
    each = [r for r in ensemble if r["family"] == "boxes" and r["x"] == 5]
    s = np.array([r["entropy"] for r in each])
    assert m["realisations"] == 4 and sorted(m["seeds"]) == ["1", "2", "3", "4"]
    assert_allclose(m["entropy"], s.mean(), rtol=1e-14)
    assert_allclose(m["entropy_stderr"], s.std(ddof=1) / 2, rtol=1e-12)
    assert_allclose(m["renyi"]["2"], np.mean([r["renyi"]["2"] for r in each]), rtol=1e-14)
    assert m["error_bound"] <= max(r["error_bound"] for r in each)
    assert m["entropy_stderr"] > 0  # the disorder does change the entropy


def test_fit_averages_realisations_and_weights_by_standard_error(ensemble):
    rows = [r for r in ensemble if r["family"] == "boxes"]
    fit = fit_rows(rows)
    means = average_realisations(rows)
    assert_allclose(fit.sizes, [3, 5, 7, 9])
    assert_allclose(fit.values, [m["entropy"] for m in means], rtol=1e-14)
    assert_allclose(fit.bounds, [math.hypot(m["error_bound"], m["entropy_stderr"])
                                 for m in means], rtol=1e-12)


def test_decay_fit_of_an_ensemble_of_pairs(ensemble):
    fit = fit_decay_rows([r for r in ensemble if r["family"] == "decay"])
    assert_allclose(fit.sizes, [4.0, 6.0, 8.0])
    assert fit["p"] > 0 and fit.size == "separation"


def test_decay_fit_recovers_an_exact_power_law_and_refuses_unresolved_values():
    r = np.array([3.0, 5.0, 8.0, 13.0])
    fit = fit_decay(r, 0.7 * r**-2.5, 1e-12 * np.ones(4))
    assert_allclose([fit["A"], fit["p"]], [0.7, 2.5], rtol=1e-9)
    with pytest.raises(ValueError, match="not above its error"):
        fit_decay(r, [1e-3, 1e-4, 1e-5, 1e-13], 1e-12 * np.ones(4))
    with pytest.raises(ValueError, match="3 distinct separations"):
        fit_decay([2.0, 2.0, 3.0], [1.0, 1.0, 0.5])


def test_radial_lattice_in_a_scenario_matches_the_api():
    sc = parse_scenario("""
[lattices.ball]
radial = 30
dim = 3
mass = 0.0
[[family]]
shells = {values = [4, 6]}
""")
    assert [c.x for c in sc.cases] == [4, 6]
    res = compute_case(sc.cases[1])
    net = radial_lattice(30, dim=3)
    assert_allclose(res["entropy"], entropy(net, shells(net, 6)).entropy, rtol=1e-13)
    with pytest.raises(ValueError, match="shells"):
        parse_scenario("[lattices.b]\nradial = 30\n[[family]]\nball = 3\n")


def test_relative_paths_resolve_against_the_scenario_folder(tmp_path, monkeypatch):
    folder = tmp_path / "project"
    folder.mkdir()
    (folder / "a.txt").write_text("3\n4\n5\n")
    (folder / "s.toml").write_text('out = "res"\n' + CHAIN + '[[family]]\nsites = "a.txt"\n')
    monkeypatch.chdir(tmp_path)  # not the scenario's folder
    sc = load_scenario("project/s.toml")
    assert sc.out == str(folder / "res")
    (case,) = sc.cases
    assert case.region["sites"] == str(folder / "a.txt")
    net = hypercubic(40, mass=0.1)
    s = compute_case(case)["entropy"]
    assert_allclose(s, entropy(net, box(net, 3, origin=3), method="dense").entropy, rtol=1e-12)


def test_mass_disorder_may_exceed_one_but_coupling_disorder_may_not():
    net = hypercubic(12, mass=0.1, mass_disorder=3.0, seed=4)
    m = np.sqrt(net.potential.diagonal() - 2.0)  # interior sites: m_i² + 2J (J = 1)
    assert np.all(m[1:-1] >= 0.1) and np.all(m[1:-1] <= 3.1)  # m + W·u, u in [0, 1)
    with pytest.raises(ValueError, match="coupling_disorder=1.0 must satisfy 0 <= w < 1"):
        hypercubic(12, mass=0.1, coupling_disorder=1.0)
    with pytest.raises(ValueError, match="mass_disorder=-0.5 must be a finite number >= 0"):
        hypercubic(12, mass=0.1, mass_disorder=-0.5)


def test_results_command_averages_ensembles_unless_asked_for_each(tmp_path, capsys):
    import json

    from arealaw.cli import main
    scen = tmp_path / "e.toml"
    scen.write_text('out = "o"\n[numerics]\nmethod = "dense"\n[lattices.c]\nshape = [20]\n'
                    'mass = 0.3\nmass_disorder = 2.0\nseed = {from = 1, to = 3}\n'
                    '[[family]]\nbox = {values = [3, 5]}\norigin = [0]\n')
    assert main(["run", str(scen), "--no-progress"]) == 0
    store = str(tmp_path / "o" / "results.sqlite")  # out is relative to the scenario
    capsys.readouterr()
    assert main(["results", "--store", store, "--json"]) == 0
    means = json.loads(capsys.readouterr().out)
    assert [(r["label"], r["realisations"]) for r in means] == [("box=3", 3), ("box=5", 3)]
    assert main(["results", "--store", store, "--json", "--each"]) == 0
    assert len(json.loads(capsys.readouterr().out)) == 6
