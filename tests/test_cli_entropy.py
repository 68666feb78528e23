"""``arealaw entropy``: summaries, JSON keys, and one-line errors with exit status 2."""

import json
import subprocess
import sys

import numpy as np
import pytest
import scipy.sparse as sp
from numpy.testing import assert_allclose

from arealaw.cli import main


def run_cli(capsys, *args):
    code = main(list(args))
    out, err = capsys.readouterr()
    return code, out, err


def test_json_keys_and_value(capsys):
    code, out, _ = run_cli(capsys, "entropy", "--shape", "100", "--mass", "0", "--box", "50",
                           "--origin", "0", "--renyi", "2", "inf", "--json")
    assert code == 0
    d = json.loads(out)
    for key in ("entropy", "renyi", "modes", "method", "sites", "region_sites", "seconds",
                "error_bound", "reason"):
        assert key in d
    # REFERENCES.md entry 3, "computed" regression value for the massless Dirichlet chain N = 100.
    assert_allclose(d["entropy"], 0.664129015839, atol=1e-9)
    assert_allclose(d["renyi"]["2"], 0.416030075671, atol=1e-9)
    assert set(d["renyi"]) == {"2", "inf"} and d["sites"] == 100 and d["region_sites"] == 50


def test_plan_assesses_without_computing(capsys):
    code, out, _ = run_cli(capsys, "entropy", "--shape", "1000", "1000", "1000", "--box", "10",
                           "10", "10", "--plan", "--json")
    d = json.loads(out)
    assert code == 0 and d["method"] == "spectral" and d["sites"] == 10**9
    assert d["estimated_seconds"] > 0 and d["estimated_bytes"] > 0 and "entropy" not in d
    code, out, _ = run_cli(capsys, "entropy", "--shape", "40", "--box", "5", "--method", "sparse",
                           "--plan")
    assert code == 0 and "requested" in out and "nothing computed" in out


def test_mutual_information_keys(capsys):
    code, out, _ = run_cli(capsys, "entropy", "--shape", "40", "--mass", "0.2", "--box", "5",
                           "--origin", "5", "--box-b", "5", "--origin-b", "20", "--json",
                           "--negativity")
    d = json.loads(out)
    assert code == 0
    assert_allclose(d["mutual_information"], d["entropy"] + d["entropy_b"] - d["entropy_ab"],
                    rtol=1e-12)
    assert d["mutual_information"] > 0 and "negativity" not in d
    assert d["log_negativity"] > 100 * d["log_negativity_error_bound"] > 0


def test_negativity_summary_and_pure_complement(capsys):
    # A against the rest of a pure state: E_N = S_1/2(A) (Vidal & Werner 2002, PRA 65 032314).
    code, out, _ = run_cli(capsys, "entropy", "--shape", "12", "--mass", "0.3", "--box", "4",
                           "--origin", "0", "--box-b", "8", "--origin-b", "4", "--negativity",
                           "--renyi", "0.5", "--json")
    d = json.loads(out)
    assert code == 0 and d["info"]["pure_complement"]
    assert_allclose(d["log_negativity"], d["renyi"]["0.5"], rtol=1e-12)
    code, out, _ = run_cli(capsys, "entropy", "--shape", "12", "--mass", "0.3", "--box", "3",
                           "--origin", "2", "--box-b", "3", "--origin-b", "5", "--negativity")
    assert code == 0 and "log negativity" in out and "partial transpose" in out


def test_summary_is_readable(capsys):
    code, out, _ = run_cli(capsys, "entropy", "--shape", "8", "8", "--mass", "0.3",
                           "--ball", "2", "--energies", "3")
    assert code == 0
    assert "entropy" in out and "method           dense" in out and "energies" in out


def test_matrix_files_and_site_list(tmp_path, capsys):
    v = sp.diags([np.full(9, -1.0), np.full(10, 2.5), np.full(9, -1.0)], [-1, 0, 1])
    m = sp.diags([np.full(9, 0.1), np.full(10, 1.0), np.full(9, 0.1)], [-1, 0, 1])
    sp.save_npz(tmp_path / "V.npz", sp.csr_matrix(v))
    sp.save_npz(tmp_path / "M.npz", sp.csr_matrix(m))
    (tmp_path / "sites.txt").write_text("0\n1\n2\n")
    code, out, _ = run_cli(capsys, "entropy", "--potential", str(tmp_path / "V.npz"),
                           "--kinetic", str(tmp_path / "M.npz"), "--sites",
                           str(tmp_path / "sites.txt"), "--json")
    assert code == 0 and json.loads(out)["region_sites"] == 3


@pytest.mark.parametrize("args,needle", [
    (["--shape", "10", "--box", "3", "--renyi", "0"], "Rényi order"),
    (["--shape", "10", "--box", "3", "--renyi", "-2"], "Rényi order"),
    (["--shape", "10", "--boundary", "periodic", "--box", "3"], "zero mode"),
    (["--shape", "10", "--mass", "1", "--sites", "/nonexistent/sites.txt"], "does not exist"),
    (["--shape", "10", "--mass", "1", "--box", "30"], "outside the lattice"),
    (["--shape", "10", "--mass", "1"], "no region"),
    (["--shape", "10", "--mass", "1", "--box", "3", "--bogus"], "unrecognized"),
    (["--shape", "ten", "--box", "3"], "not a positive integer"),
    (["--shape", "10", "--mass", "1", "--box", "3", "--method", "nope"], "invalid choice"),
    (["--shape", "10", "--mass", "1", "--box", "4", "--box-b", "4"], "share"),
    (["--shape", "10", "--mass", "1", "--box", "4", "--origin", "0", "--box-b", "4",
      "--origin-b", "2", "--negativity"], "the logarithmic negativity needs disjoint regions"),
    (["--shape", "10", "--mass", "1", "--box", "4", "--negativity"], "needs a second region"),
], ids=["renyi-0", "renyi-neg", "zero-mode", "missing-file", "box-outside", "no-region",
        "unknown-option", "bad-shape", "bad-method", "overlap", "negativity-overlap",
        "negativity-without-b"])
def test_user_errors_are_one_line(capsys, args, needle):
    try:
        code = main(["entropy", *args])
    except SystemExit as exc:  # argparse-level errors exit from inside the parser
        code = exc.code
    assert code == 2
    err = capsys.readouterr().err
    assert needle in err
    assert len(err.strip().splitlines()) == 1


def test_subprocess_exit_status_and_help():
    r = subprocess.run([sys.executable, "-m", "arealaw", "entropy", "--shape", "5",
                        "--boundary", "periodic", "--box", "2"], capture_output=True, text=True)
    assert r.returncode == 2 and "Traceback" not in r.stderr
    h = subprocess.run([sys.executable, "-m", "arealaw", "entropy", "--help"],
                       capture_output=True, text=True)
    assert h.returncode == 0 and "examples:" in h.stdout
    top = subprocess.run([sys.executable, "-m", "arealaw", "--help"], capture_output=True,
                         text=True)
    assert top.returncode == 0 and "entropy" in top.stdout


def test_closed_pipe_exits_quietly(tmp_path):
    # a reader that stops early (`arealaw ... | head -1`): the writer sees EPIPE
    import os
    code = ("import sys\nfrom arealaw.cli import main\nsys.exit(main(['entropy', '--shape', "
            "'5', '--box', '2', '--energies', '2']))\n")
    read, write = os.pipe()
    os.close(read)  # nobody will read: the first write fails with EPIPE
    r = subprocess.run([sys.executable, "-c", code], stdout=write, stderr=subprocess.PIPE,
                       text=True, env={**os.environ, "PYTHONUNBUFFERED": "1"})
    os.close(write)
    assert r.returncode == 0, r.stderr
    assert r.stderr == ""


def test_non_integer_site_error_prints_the_plain_value(tmp_path, capsys):
    sites = tmp_path / "s.txt"
    sites.write_text("2\n3.25\n")
    assert main(["entropy", "--shape", "10", "--sites", str(sites)]) == 2
    err = capsys.readouterr().err
    assert "got 3.25 (entry 2)" in err and "np.float64" not in err


def test_radial_lattice_reports_radial_sites_and_partial_waves(capsys):
    assert main(["entropy", "--radial", "20", "--dim", "3", "--shells", "4", "--json"]) == 0
    d = json.loads(capsys.readouterr().out)
    waves = d["info"]["partial_waves"]
    assert d["sites"] == 20 and waves == d["lmax"] + 1
    assert d["modes"] == 4 * waves  # one mode per shell in each partial wave summed


def test_disorder_help_states_each_distribution(capsys):
    with pytest.raises(SystemExit):
        main(["entropy", "--help"])
    out = " ".join(capsys.readouterr().out.split())
    assert "u_i ~ U(0,1) independent per site; any W >= 0" in out
    assert "u_b ~ U(-1,1) independent per bond; 0 <= W < 1" in out
