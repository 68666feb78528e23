"""Logarithmic negativity through scenarios, the store, ``results``, ``fit`` and the report."""

import json

import pytest
from numpy.testing import assert_allclose

from arealaw.cli import main
from arealaw.workflow._scenario import Case, parse_scenario

SCENARIO = """
title = "negativity chain"
[numerics]
method = "dense"
renyi = [0.5]
negativity = true
[lattices.chain]
shape = [80]
mass = 0.05
[[family]]
name = "intervals"
box = {from = 4, to = 20, step = 4}
origin = [30]
[[pair]]
name = "adjacent"
a = {box = [6], origin = [30]}
b = {box = [6], origin = [36]}
"""


@pytest.fixture(scope="module")
def swept(tmp_path_factory):
    d = tmp_path_factory.mktemp("neg")
    scen = d / "neg.toml"
    scen.write_text(SCENARIO)
    store = d / "neg.sqlite"
    assert main(["run", str(scen), "--store", str(store), "--no-progress"]) == 0
    return d, scen, store


def _out(capsys, argv, status=0):
    capsys.readouterr()
    try:
        code = main(argv)
    except SystemExit as exc:
        code = exc.code
    assert code == status
    return capsys.readouterr()


def test_stored_rows_carry_negativity(swept, capsys):
    _, _, store = swept
    rows = json.loads(_out(capsys, ["results", "--store", str(store), "--json"]).out)
    fam = [r for r in rows if r["family"] == "intervals"]
    pair = [r for r in rows if r["family"] == "adjacent"]
    assert len(fam) == 5 and len(pair) == 1
    for r in fam:
        # a pure state against the rest: E_N = S_1/2 (Vidal & Werner 2002, PRA 65 032314)
        assert_allclose(r["log_negativity"], r["renyi"]["0.5"], rtol=1e-12)
        assert r["log_negativity_partner"] == "rest of the lattice"
        assert "mutual_information" not in r
    assert pair[0]["log_negativity"] > 100 * pair[0]["log_negativity_error_bound"] > 0
    text = _out(capsys, ["results", "--store", str(store)]).out
    assert "log neg." in text
    csv_text = _out(capsys, ["results", "--store", str(store), "--csv"]).out
    assert "log_negativity_error_bound" in csv_text.splitlines()[0]


def test_fit_and_report(swept, capsys):
    d, _, store = swept
    fits = json.loads(_out(capsys, ["fit", "--store", str(store), "--measure",
                                    "log_negativity", "--json"]).out)
    ent = json.loads(_out(capsys, ["fit", "--store", str(store), "--json"]).out)
    assert [f["family"] for f in fits] == ["intervals"]
    assert fits[0]["measure"] == "log_negativity"
    assert fits[0]["coefficients"] != ent[0]["coefficients"]  # S_1/2 differs from S
    report = d / "report.html"
    _out(capsys, ["report", "--store", str(store), "--out", str(report)])
    html = report.read_text()
    assert "Logarithmic negativity of the region against the rest" in html
    assert "E_N error bound" in html and "Fit of E_N" in html


def test_case_key_unchanged_without_negativity():
    # stores written before the option keep their keys
    a = Case({"shape": [8], "mass": 0.5}, {"box": [4]})
    assert "negativity" not in a.content()
    assert Case({"shape": [8], "mass": 0.5}, {"box": [4]}, negativity=True).key != a.key


def test_bad_negativity_value(capsys):
    with pytest.raises(ValueError, match=r"line 4: negativity = 'yes' must be true or false"):
        parse_scenario('[lattices.c]\nshape = [10]\n[[family]]\nnegativity = "yes"\n'
                       'box = {from = 2, to = 4}\n')


def test_overlapping_pair_is_refused(tmp_path, capsys):
    text = ('[numerics]\nnegativity = true\n[lattices.c]\nshape = [20]\nmass = 0.1\n'
            '[[pair]]\nname = "p"\na = {box = [4], origin = [2]}\nb = {box = [4], origin = [4]}\n')
    scen = tmp_path / "bad.toml"
    scen.write_text(text)
    code = main(["run", str(scen), "--store", str(tmp_path / "s.sqlite"), "--no-progress"])
    err = capsys.readouterr().err
    assert code == 2 and len(err.strip().splitlines()) == 1
    assert "share 2 sites; the logarithmic negativity needs disjoint regions" in err


def test_thermal_family_against_the_rest():
    # at T > 0 the state is mixed: E_N of A against the rest comes from the partial transpose
    # and falls below its ground-state value S_1/2(A) (common practice, no source)
    from arealaw.workflow._sweep import compute_case
    sc = parse_scenario('[numerics]\nmethod = "dense"\nrenyi = [0.5]\nnegativity = true\n'
                        '[lattices.c]\nshape = [24]\nmass = 0.2\n[[family]]\nbox = [6]\n'
                        'origin = [9]\ntemperature = {values = [0.0, 0.4]}\n')
    cold, hot = (compute_case(c) for c in sc.cases)
    assert hot["temperature"] == 0.4 and hot["info"]["log_negativity_route"] == "partial transpose"
    assert cold["info"]["log_negativity_route"].startswith("pure state")
    assert 0 < hot["log_negativity"] < cold["log_negativity"] - 0.05
