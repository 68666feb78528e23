"""Radial partial waves (Srednicki 1993) against direct constructions and the published κ."""

import numpy as np
import pytest
from numpy.testing import assert_allclose

import arealaw as al
from arealaw import radial_entropy
from arealaw.methods import RadialMethod
from arealaw.network import radial_chain, radial_lattice, shells


def _direct_chain(n_radial, l, dim):
    """V_l written as Bᵀ B + centrifugal term, one row of B per radial bond (incl. the wall)."""
    j = np.arange(1, n_radial + 1, dtype=float)
    b = np.zeros((n_radial, n_radial))
    for i in range(n_radial):
        w = (j[i] + 0.5) if dim == 3 else np.sqrt(j[i] + 0.5)
        p = 1.0 if dim == 3 else 0.5
        b[i, i] = w / j[i] ** p
        if i + 1 < n_radial:
            b[i, i + 1] = -w / j[i + 1] ** p
    cent = l * (l + 1) if dim == 3 else l * l
    return b.T @ b + np.diag(cent / j**2)


@pytest.mark.parametrize("dim,l", [(3, 0), (3, 4), (2, 0), (2, 3)],
                         ids=["d3-l0", "d3-l4", "d2-l0", "d2-l3"])
def test_chain_matches_direct_construction(dim, l):
    assert_allclose(radial_chain(12, l, dim=dim).toarray(), _direct_chain(12, l, dim),
                    rtol=1e-14, atol=1e-14)


@pytest.mark.parametrize("dim", [2, 3], ids=["d2", "d3"])
def test_fixed_cutoff_equals_weighted_dense_sectors(dim):
    n_radial, n, lmax = 16, 5, 12
    res = radial_entropy(n_radial, n, dim=dim, lmax=lmax)
    total = 0.0
    for l in range(lmax + 1):
        net = al.OscillatorNetwork(_direct_chain(n_radial, l, dim))
        s = al.entropy(net, al.from_sites(net, range(n)), method="dense").entropy
        total += ((2 * l + 1) if dim == 3 else (1 if l == 0 else 2)) * s
    assert_allclose(res.entropy, total, rtol=1e-11)
    assert res.info["lmax"] == lmax


def test_ball_area_coefficient_srednicki():
    # Srednicki 1993, PRL 71 666: S ≈ κ R², κ ≈ 0.30 (0.295 with a careful l-sum: Lohmayer et al.
    # 2010, value from memory).  Slope between two radii at N = 40.
    a, b = radial_entropy(40, 8), radial_entropy(40, 12)
    kappa = (b.entropy - a.entropy) / (12.5**2 - 8.5**2)
    assert abs(kappa - 0.30) < 0.01
    assert abs(a.entropy / 8.5**2 - 0.30) < 0.01


def test_tail_quadrature_agrees_with_long_explicit_sum():
    quad = radial_entropy(30, 5)
    long = radial_entropy(30, 5, lmax=1500)
    allowed = quad.info["l_tail_bound"] + long.info["l_tail_bound"]
    assert abs(quad.entropy - long.entropy) <= allowed
    assert quad.info["l_tail_bound"] < 1e-5 * quad.entropy
    assert quad.info["l_tail_bound"] <= quad.error_bound


def test_disk_entropy_grows_with_the_perimeter():
    # area law in 2-D: S ∝ R up to a constant (common practice, no source)
    s5, s10 = radial_entropy(40, 5, dim=2).entropy, radial_entropy(40, 10, dim=2).entropy
    assert 1.8 < s10 / s5 < 2.05


def test_auto_picks_radial_and_renyi_is_ordered():
    net = radial_lattice(20, dim=3, mass=0.1)
    res = al.entropy(net, shells(net, 4), renyi=[2])
    assert res.method == "radial"
    assert 0 < res.renyi["2"] < res.entropy


def test_bad_input_names_the_supported_method():
    with pytest.raises(ValueError, match="d = 2 and 3"):
        radial_lattice(10, dim=4)
    net = radial_lattice(10)
    with pytest.raises(al.UnsupportedMethodError, match="first n radial sites"):
        al.entropy(net, al.from_sites(net, [2, 3]), method="radial")
    with pytest.raises(ValueError, match="1 <= n < N"):
        shells(net, 10)
    cube = al.hypercubic((6, 6, 6), mass=0.5)
    with pytest.raises(al.UnsupportedMethodError, match="method='dense'"):
        al.entropy(cube, al.ball(cube, 1.5), method=RadialMethod())


def test_cli_radial_json(capsys):
    import json

    from arealaw.cli import main
    assert main(["entropy", "--radial", "30", "--dim", "3", "--shells", "5", "--json"]) == 0
    doc = json.loads(capsys.readouterr().out)
    assert doc["method"] == "radial" and doc["lmax"] == doc["info"]["lmax"] >= 40
    assert_allclose(doc["entropy"], radial_entropy(30, 5).entropy, rtol=1e-12)


@pytest.mark.parametrize("argv,message", [
    (["--radial", "30", "--dim", "4", "--shells", "5"], "d = 2 and 3"),
    (["--radial", "30"], "--radial needs --shells"),
    (["--shape", "10", "--shells", "3"], "add --radial N"),
    (["--radial", "30", "--shells", "5", "--box", "3"], "cannot be combined with --box"),
], ids=["dim4", "no-shells", "shells-alone", "with-box"])
def test_cli_radial_bad_input(argv, message, capsys):
    from arealaw.cli import main
    assert main(["entropy", *argv]) == 2
    err = capsys.readouterr().err
    assert message in err and err.count("\n") == 1


def test_parallel_sectors_match_serial():
    serial = radial_entropy(24, 4, lmax=40, n_jobs=1)
    parallel = radial_entropy(24, 4, lmax=40, n_jobs=2)
    assert_allclose(parallel.entropy, serial.entropy, rtol=1e-13)
