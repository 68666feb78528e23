"""Every ``arealaw …`` command in README.md's code blocks runs, and does what its comment says.

The commands are parsed from the README itself, so a new example is tested by writing it.  The
files they name (V.npz, M.npz, region.txt, sweep.toml = the README's TOML block) are written to
a temporary directory first.  Commands that take minutes run with ``--plan`` (assess and choose
the method, compute nothing) in the default suite; the sweep, report and demo commands run in
full under the ``slow`` marker.
"""

import json
import re
import shlex
from pathlib import Path

import numpy as np
import pytest
import scipy.sparse as sp

from arealaw.cli import main

README = Path(__file__).resolve().parents[1] / "README.md"

#: Commands (matched by a fragment) that take more than a few seconds: the default suite runs
#: them with --plan, the slow suite in full, except PLAN_ONLY (the 10^6-site disordered sparse
#: case takes ~10 min, README performance table), which runs with --plan only.
LONG = ("--half-space 0 10", "--shape 1000 1000 1000", "--shape inf --mass 0.01 --box 800")
PLAN_ONLY = ("--mass-disorder 0.5 --seed 1 --ball 6.2 --method sparse",)
#: Commands that need a running sweep store or write reports: the slow test runs them in order.
SWEEP_COMMANDS = ("run", "results", "fit", "plot", "report", "demo")
#: Comments whose claim is checked on the JSON output.
CHECKED = ("half of a massive chain", "10^9 sites", "infinite chain", "partial waves")


def _blocks(text, lang):
    return re.findall(rf"```{lang}\n(.*?)```", text, flags=re.S)


def readme_commands():
    """(argv, comment) of every ``arealaw`` command in the README's bash blocks."""
    out = []
    for block in _blocks(README.read_text(encoding="utf-8"), "bash"):
        for line in block.splitlines():
            code, _, comment = line.partition("#")
            for part in re.split(r"&&|;", code):
                words = shlex.split(part)
                for i, w in enumerate(words):  # drop shell redirections (> r.csv)
                    if w[0] in "<>|":
                        words = words[:i]
                        break
                if words and words[0] == "arealaw":
                    out.append((words[1:], comment.strip()))
    return out


def _files(d):
    """The input files the README's commands name, in directory ``d``."""
    n = 12
    v = sp.diags([np.full(n - 1, -1.0), np.full(n, 2.25), np.full(n - 1, -1.0)], [-1, 0, 1])
    sp.save_npz(d / "V.npz", sp.csr_matrix(v))
    sp.save_npz(d / "M.npz", sp.identity(n, format="csr"))
    (d / "region.txt").write_text("0\n1\n2\n3\n")
    (d / "sweep.toml").write_text(_blocks(README.read_text(encoding="utf-8"), "toml")[0])


def _run(argv, capsys):
    capsys.readouterr()
    try:
        code = main(argv)
    except SystemExit as exc:  # --help exits through argparse
        code = exc.code
    return code, capsys.readouterr().out


ENTROPY = [(a, c) for a, c in readme_commands() if a and a[0] not in SWEEP_COMMANDS]
SWEEPS = [(a, c) for a, c in readme_commands() if a and a[0] in SWEEP_COMMANDS]


def test_the_readme_has_commands():
    assert len(ENTROPY) >= 8 and len(SWEEPS) >= 6


def _long(argv, fragments):
    return any(frag in " ".join(argv) for frag in fragments)


def _params():
    out = []
    for argv, comment in ENTROPY:
        name = " ".join(argv)[:60]
        if _long(argv, PLAN_ONLY + LONG):
            out.append(pytest.param(argv, comment, True, id=name + " --plan"))
        if not _long(argv, PLAN_ONLY):
            marks = [pytest.mark.slow] if _long(argv, LONG) else []
            out.append(pytest.param(argv, comment, False, id=name, marks=marks))
    return out


@pytest.mark.parametrize("argv, comment, plan", _params())
def test_readme_entropy_command(argv, comment, plan, tmp_path, monkeypatch, capsys):
    _files(tmp_path)
    monkeypatch.chdir(tmp_path)
    if plan:
        argv = argv + ["--plan"]
    elif any(w in comment for w in CHECKED) and "--json" not in argv:
        argv = argv + ["--json"]  # the claim is checked on the JSON of the same computation
    code, out = _run(argv, capsys)
    if "--plan" in argv:
        assert code == 0 and "nothing computed" in out, (argv, out)
        return
    assert code == 0, (argv, out)
    if "--help" in argv or plan:
        assert out.strip()
        return
    if "--json" not in argv:
        assert "entropy" in out
        return
    d = json.loads(out)
    assert d["entropy"] > 0 and d["error_bound"] < d["entropy"]
    if "half of a massive chain" in comment:
        # half of the chain: one cut, the region is the first 50 of 100 sites
        assert d["region_sites"] == 50 and ("at (0)" in d["region"] or "x0 < 50" in d["region"])
    if "10^9 sites" in comment:
        assert d["sites"] == 10**9 and d["method"] == "spectral"
    if "infinite chain" in comment:
        assert d["sites"] == "inf"
    if "partial waves" in comment:
        assert d["method"] == "radial"


@pytest.mark.slow
def test_readme_sweep_commands(tmp_path, monkeypatch, capsys):
    # in README order: run, results, fit, plot, report, demo; the cluster line runs against a
    # local dask scheduler in place of tcp://HEAD:8786
    _files(tmp_path)
    monkeypatch.chdir(tmp_path)
    cluster = None
    try:
        for argv, comment in SWEEPS:
            if any(a.startswith("tcp://HEAD") for a in argv):
                from distributed import LocalCluster
                cluster = cluster or LocalCluster(n_workers=1, threads_per_worker=1,
                                                  processes=False, dashboard_address=None)
                argv = [cluster.scheduler_address if a.startswith("tcp://HEAD") else a
                        for a in argv]
            if argv[0] == "run":
                argv = argv + ["--no-progress"]
            if argv[0] == "demo" and "--out" in argv:
                argv = argv + ["--no-progress"]
            code, out = _run(argv, capsys)
            assert code == 0, (argv, out)
    finally:
        if cluster is not None:
            cluster.close()
    assert (tmp_path / "report.html").exists() and (tmp_path / "demo.toml").exists()
