"""The sweep commands: run, results, fit, plot, report, demo — and their one-line errors."""

import csv
import io
import json

import pytest
from numpy.testing import assert_allclose

from arealaw.workflow import load_scenario
from arealaw.cli import main

SCENARIO = """
title = "tiny chain"
[numerics]
method = "dense"
renyi = [2]
energies = 4
[lattices.chain]
shape = [60]
mass = 0.05
[[family]]
name = "intervals"
box = {from = 4, to = 24, step = 4}
[[pair]]
name = "two intervals"
a = {box = [4], origin = [10]}
b = {box = [4], origin = [20]}
"""


@pytest.fixture(scope="module")
def swept(tmp_path_factory):
    d = tmp_path_factory.mktemp("cli")
    scen = d / "tiny.toml"
    scen.write_text(SCENARIO)
    store = d / "tiny.sqlite"
    assert main(["run", str(scen), "--store", str(store), "--no-progress"]) == 0
    return d, scen, store


def _out(capsys, argv, status=0):
    capsys.readouterr()
    try:
        code = main(argv)
    except SystemExit as exc:  # argparse errors
        code = exc.code
    assert code == status
    return capsys.readouterr()


def test_rerun_skips_everything(swept, capsys):
    d, scen, store = swept
    out = _out(capsys, ["run", str(scen), "--store", str(store), "--no-progress"]).out
    assert "0 cases computed, 7 already stored, 0 failed" in out


def test_results_json_has_case_and_entropy(swept, capsys):
    _, scen, store = swept
    rows = json.loads(_out(capsys, ["results", "--store", str(store), "--json"]).out)
    keys = {c.key for c in load_scenario(scen).cases}
    assert {r["case"] for r in rows} == keys
    assert all(isinstance(r["entropy"], float) and r["entropy"] > 0 for r in rows)
    (pair,) = [r for r in rows if r["family"] == "two intervals"]
    assert_allclose(pair["mutual_information"],
                    pair["entropy"] + pair["entropy_b"] - pair["entropy_ab"], rtol=1e-12)


def test_results_csv_and_table(swept, capsys):
    _, _, store = swept
    text = _out(capsys, ["results", "--store", str(store), "--csv", "--family", "intervals"]).out
    rows = list(csv.DictReader(io.StringIO(text)))
    assert len(rows) == 6 and {"case", "entropy", "renyi_2", "error_bound"} <= set(rows[0])
    table = _out(capsys, ["results", "--store", str(store)]).out
    assert table.count("\n") == 8 and "intervals" in table


def test_fit_json(swept, capsys):
    _, _, store = swept
    (fit,) = json.loads(_out(capsys, ["fit", "--store", str(store), "--json"]).out)
    assert fit["family"] == "intervals" and fit["dim"] == 1 and fit["points"] == 6
    assert set(fit["coefficients"]) == {"log", "const"}
    assert fit["central_charge"]["endpoints"] == 2
    assert {"chi2", "dof", "p_value", "model_sigma", "relative_misfit", "warning"} <= set(fit)
    text = _out(capsys, ["fit", "--store", str(store), "--measure", "renyi:2"]).out
    assert "central charge" in text and "against the error bounds: chi2" in text
    assert "chi2/dof 1)" not in text


def test_fit_text_warns_and_chord_fits(tmp_path, capsys):
    # middle intervals of a nearly massless periodic chain: ln l bends away from the chord form
    # of Calabrese & Cardy 2004 (J. Stat. Mech. P06002); the fit must say so in words
    scen = tmp_path / "ring.toml"
    scen.write_text('[lattices.ring]\nshape = [96]\nmass = 1e-5\nboundary = "periodic"\n'
                    '[[family]]\nname = "intervals"\nbox = {from = 8, to = 48, step = 8}\n')
    store = str(tmp_path / "ring.sqlite")
    assert main(["run", str(scen), "--store", store, "--no-progress"]) == 0
    text = _out(capsys, ["fit", "--store", store]).out
    assert "WARNING: the law does not describe the data" in text, text
    text = _out(capsys, ["fit", "--store", store, "--size", "chord"]).out
    assert "WARNING" not in text and "chord length" in text, text
    (fit,) = json.loads(_out(capsys, ["fit", "--store", store, "--size", "chord",
                                      "--json"]).out)
    assert abs(fit["central_charge"]["value"] - 1.0) < 0.02  # c = 1 (same source)


def test_plot_writes_each_figure_in_each_format(swept, capsys, tmp_path):
    _, _, store = swept
    out = _out(capsys, ["plot", "--store", str(store), "--out", str(tmp_path / "fig"),
                        "--format", "png,svg,pdf", "--quiet"]).out
    paths = out.split()
    kinds = [p.rsplit("_", 1)[1] for p in paths if "intervals" in p]
    assert kinds == [f"{k}.{f}" for k in ("fit", "region", "modes", "energies")
                     for f in ("png", "svg", "pdf")]
    magic = {"png": b"\x89PNG", "svg": b"<?xml", "pdf": b"%PDF"}
    for p in paths:
        with open(p, "rb") as f:
            assert f.read(5).startswith(magic[p.rsplit(".", 1)[1]])


def test_plot_refuses_an_unknown_format(swept, capsys, tmp_path):
    _, _, store = swept
    err = _out(capsys, ["plot", "--store", str(store), "--out", str(tmp_path / "f"),
                        "--format", "png,gif"], status=2).err
    assert "'gif' is not known" in err and "png, svg, pdf" in err


def test_report_is_self_contained_html(swept, capsys, tmp_path):
    _, _, store = swept
    path = tmp_path / "r.html"
    _out(capsys, ["report", "--store", str(store), "--out", str(path), "--title", "T"])
    html = path.read_text()
    assert html.startswith("<!DOCTYPE html>") and "<title>T</title>" in html
    assert html.count("data:image/png;base64,") >= 5
    assert "http://" not in html and "https://" not in html and "<script" not in html
    assert "Mutual information" in html and "central charge" in html
    figures = sorted(p.name for p in (tmp_path / "r_figures").iterdir())
    assert "intervals_fit.png" in figures and "intervals_fit.svg" in figures


def test_report_records_the_physics_and_the_scenario(swept, capsys, tmp_path):
    _, scen, store = swept
    path = tmp_path / "r.html"
    _out(capsys, ["report", "--store", str(store), "--out", str(path), "--no-figure-files"])
    html = path.read_text()
    assert not (tmp_path / "r_figures").exists()
    assert "<title>tiny chain</title>" in html  # the scenario's title by default
    for fragment in ("lattice shape", "<td>60</td>", "dirichlet (default)", "mass m",
                     "<td>0.05</td>", "couplings J", "kinetic matrix M", "disorder",
                     "temperature T", "0 (ground state)", "region", "box = 4 … 24 (6 values)",
                     "Rényi S_n, n = 2", "the 4 lowest entanglement energies",
                     "requested dense", "tolerance tol", "arealaw version", "computed",
                     "Model S = ", "size variable", "window 6 points", "χ² =",
                     "model scatter", "Scenario files"):
        assert fragment in html, fragment
    import html as h
    assert h.escape(scen.read_text()) in html  # the scenario file itself, embedded


def test_report_of_an_ensemble_shows_means_with_error_bars(tmp_path, capsys):
    scen = tmp_path / "e.toml"
    scen.write_text('title = "ensemble"\n[numerics]\nmethod = "dense"\n[lattices.c]\n'
                    'shape = [24]\nmass = 0.3\nmass_disorder = 2.0\nseed = {from = 1, to = 3}'
                    '\n[[family]]\nbox = {values = [3, 5, 7, 9]}\norigin = [0]\n')
    store = str(tmp_path / "e.sqlite")
    _out(capsys, ["run", str(scen), "--store", store, "--no-progress"])
    path = tmp_path / "e.html"
    _out(capsys, ["report", "--store", store, "--out", str(path), "--no-figure-files"])
    html = path.read_text()
    for fragment in ("Ensemble means", "standard error", "ensemble of 3 realisations per point",
                     "seeds 1, 2, 3", "ensemble standard errors in quadrature",
                     "site masses m_i = m + W·u_i"):
        assert fragment in html, fragment


def test_demo_save_scenario(tmp_path, capsys):
    path = tmp_path / "demo.toml"
    _out(capsys, ["demo", "--save-scenario", str(path)])
    sc = load_scenario(path)
    assert sc.cases and sc.cases[0].network["shape"] and len(sc.cases[0].network["shape"]) == 3


@pytest.mark.slow
def test_demo_runs_end_to_end(tmp_path, capsys):
    out = _out(capsys, ["demo", "--out", str(tmp_path / "demo"), "--no-progress"]).out
    assert "0 failed" in out and "report:" in out
    assert (tmp_path / "demo" / "report.html").stat().st_size > 10000


ERRORS = [
    ("missing-scenario", ["run", "nope.toml"], "does not exist"),
    ("bad-scenario", ["run", "{bad}"], "'colour'"),
    ("workers", ["run", "{scen}", "--workers", "0"], "must be >= 1"),
    ("no-store", ["results", "--store", "nope.sqlite"], "does not exist"),
    ("not-a-store", ["results", "--store", "{junk}"], "not an arealaw result store"),
    ("measure", ["fit", "--store", "{store}", "--measure", "renyi:7"], "renyi:7"),
    ("unknown-family", ["fit", "--store", "{store}", "--family", "zzz"], "'zzz'"),
    ("no-scheduler", ["run", "{scen}", "--store", "{tmp}/x.sqlite", "--scheduler",
                      "tcp://127.0.0.1:9", "--scheduler-timeout", "1"], "dask scheduler"),
]


@pytest.mark.parametrize("argv, fragment", [e[1:] for e in ERRORS], ids=[e[0] for e in ERRORS])
def test_errors_are_one_line_and_exit_2(swept, tmp_path, capsys, argv, fragment, monkeypatch):
    d, scen, store = swept
    monkeypatch.chdir(tmp_path)
    (tmp_path / "bad.toml").write_text(SCENARIO + "colour = 3\n")
    (tmp_path / "junk.sqlite").write_bytes(b"not a database" * 200)
    fill = {"scen": str(scen), "store": str(store), "bad": str(tmp_path / "bad.toml"),
            "junk": str(tmp_path / "junk.sqlite"), "tmp": str(tmp_path)}
    argv = [a.format(**fill) for a in argv]
    err = _out(capsys, argv, status=2).err
    assert err.count("\n") == 1 and fragment in err, err


def test_stored_mode_profiles_are_drawn_without_recomputing(tmp_path, capsys, monkeypatch):
    import numpy as np

    import arealaw.views._report as views_report
    from arealaw import box, hypercubic, region_modes
    scen = tmp_path / "m.toml"
    scen.write_text('[numerics]\nmethod = "dense"\nmode_profiles = 3\n[lattices.c]\n'
                    'shape = [40]\nmass = 0.1\n[[family]]\nbox = {values = [4, 8, 12]}\n'
                    'origin = [2]\n')
    store = str(tmp_path / "m.sqlite")
    _out(capsys, ["run", str(scen), "--store", store, "--quiet"])
    (row,) = [r for r in json.loads(_out(capsys, ["results", "--store", store, "--json"]).out)
              if r["x"] == 12]
    stored = row["mode_profiles"]
    net = hypercubic(40, mass=0.1)
    nu, u = region_modes(net, box(net, 12, origin=2), count=3)
    # the same eigenproblem as region_modes: agreement to rounding (common practice, no source)
    assert_allclose(stored["nu"], nu, rtol=1e-12)
    assert_allclose(np.abs(np.sum(np.asarray(stored["profiles"]) * u, axis=1)), 1.0, rtol=1e-9)

    def no_blocks(*args, **kwargs):
        raise AssertionError("mode profiles recomputed although stored")
    monkeypatch.setattr(views_report, "region_modes", no_blocks)
    path = tmp_path / "m.html"
    _out(capsys, ["report", "--store", store, "--out", str(path), "--no-figure-files"])
    html = path.read_text()
    assert "most entangled modes of box=12 (read from the store)" in html
    assert "site profiles of the 3 most entangled modes" in html


@pytest.mark.parametrize("extra, fragment", [
    ("mode_profiles = -1", "must be a whole number >= 0"),
    ("mode_profiles = true", "must be a whole number >= 0"),
    ("mode_profiles = 2\ntemperature = 0.5", "leave it out of thermal cases"),
])
def test_mode_profiles_refusals(tmp_path, capsys, extra, fragment):
    scen = tmp_path / "bad.toml"
    scen.write_text(f"[numerics]\n{extra}\n[lattices.c]\nshape = [20]\nmass = 0.1\n"
                    "[[family]]\nbox = {values = [2, 4]}\n")
    err = _out(capsys, ["run", str(scen), "--store", str(tmp_path / "x.sqlite")], status=2).err
    assert fragment in err and "mode_profiles" in err and err.count("\n") == 1
