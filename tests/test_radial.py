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


def test_auto_cutoff_agrees_with_long_explicit_sum():
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


# --- the proven l-tail (methods/_wave_tail.py) -------------------------------------------------

from arealaw.methods._radial import _sector  # noqa: E402
from arealaw.methods._wave_tail import sector_bounds  # noqa: E402
from arealaw.spectrum._measures import entropy_error_bound, renyi_entropy  # noqa: E402


@pytest.mark.parametrize("n_radial,n,dim,mass", [
    (40, 8, 3, 0.0), (24, 12, 2, 0.0), (30, 29, 3, 0.5), (16, 1, 2, 1.0), (50, 20, 3, 0.05),
], ids=["d3", "d2-half", "d3-edge-massive", "d2-one-shell", "d3-light"])
@pytest.mark.parametrize("order", [1.0, 2.0])
def test_sector_bounds_bracket_computed_sectors(n_radial, n, dim, mass, order):
    # each partial wave's entropy, computed densely, lies inside the proven bounds, for small l
    # (loose) up to l well beyond any cut-off (where both sides close in like l^-4)
    ls = [0, 1, 4, 16, 64, 256, 2048]
    lo, up = sector_bounds(n_radial, n, ls, dim=dim, mass=mass, order=order)
    for l, a, b in zip(ls, lo, up):
        spec = _sector(n_radial, n, float(l), dim, mass)
        s, err = renyi_entropy(spec, order), entropy_error_bound(spec, order)
        assert a <= s + err and s - err <= b, (l, a, s, b)
    gap = (up - lo) / lo
    assert gap[-2] < 1e-2 and 100 < gap[-3] / gap[-2] < 600  # l^-4: 4^4 from l = 64 to 256


@pytest.mark.parametrize("dim", [3, 2], ids=["d3", "d2"])
def test_total_bound_covers_a_much_longer_sum(dim):
    # S_ref: the same sum carried to a much larger cut-off (10^5 times smaller bound)
    auto = radial_entropy(14, 4, dim=dim, rtol=1e-4)
    ref = radial_entropy(14, 4, dim=dim, rtol=1e-9)
    lo_ref, hi_ref = ref.entropy - ref.error_bound, ref.entropy + ref.error_bound
    assert ref.error_bound < 1e-2 * auto.error_bound
    assert auto.entropy - auto.error_bound <= lo_ref and hi_ref <= auto.entropy + auto.error_bound
    diff = max(abs(auto.entropy - lo_ref), abs(auto.entropy - hi_ref))
    assert auto.error_bound <= 1e3 * diff  # tight: the tail's bracket, not a guess
    assert auto.info["lmax"] < ref.info["lmax"] and auto.error_bound < 1e-4 * auto.entropy


def test_ten_shell_ball_bound_below_one_hundredth(capsys):
    # the case named by issue 10: N = 60, d = 3, 10 shells, default accuracy
    import json

    from arealaw.cli import main
    assert main(["entropy", "--radial", "60", "--dim", "3", "--shells", "10", "--json"]) == 0
    doc = json.loads(capsys.readouterr().out)
    assert doc["error_bound"] <= 1e-2
    assert doc["info"]["l_tail_lower"] <= doc["info"]["l_tail_estimate"] \
        <= doc["info"]["l_tail_upper"]


def test_cutoff_follows_the_tolerance():
    # the tail bound falls like L^-6: lmax grows (slowly) as the target shrinks, and meets it
    runs = [radial_entropy(24, 5, tol=tol, rtol=1e-14) for tol in (1e-1, 1e-3, 1e-5)]
    lmax = [r.info["lmax"] for r in runs]
    assert lmax[0] < lmax[1] < lmax[2]
    for r, tol in zip(runs, (1e-1, 1e-3, 1e-5)):
        assert r.error_bound <= tol


def test_cli_rtol_sets_the_cutoff(capsys):
    import json

    from arealaw.cli import main
    docs = []
    for rtol in ("1e-3", "1e-7"):
        assert main(["entropy", "--radial", "30", "--shells", "5", "--rtol", rtol, "--json"]) == 0
        docs.append(json.loads(capsys.readouterr().out))
    assert docs[0]["lmax"] < docs[1]["lmax"] and docs[1]["error_bound"] < 1e-6 * docs[1]["entropy"]
    assert main(["entropy", "--shape", "10", "--box", "3", "--rtol", "1e-3"]) == 2
    assert "add --radial N" in capsys.readouterr().err


@pytest.mark.parametrize("dim,order", [(3, 0.5), (2, 0.25)], ids=["d3", "d2"])
def test_divergent_renyi_orders_are_refused(dim, order):
    # S_alpha of sector l is at least f_alpha(T_lo) ~ l^(-4 alpha): the l-sum diverges at or
    # below these orders (derivation in methods/_wave_tail.py)
    with pytest.raises(ValueError, match="diverges"):
        radial_entropy(16, 3, dim=dim, renyi=[order])
    res = radial_entropy(16, 3, dim=dim, renyi=[2, 0.9])
    assert 0 < res.renyi_error_bound["2"] < 1e-4 * res.renyi["2"]
    assert res.renyi_error_bound["0.9"] < res.renyi["0.9"]
