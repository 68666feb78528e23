"""Matrix-free FFT box operators of the spectral backend against gathered and dense blocks."""

import numpy as np
import pytest
from numpy.testing import assert_allclose

import arealaw
from arealaw import ball, box, entropy_error_bound, symplectic_spectrum, von_neumann_entropy
from arealaw.spectrum import restricted_spectrum
from arealaw.correlators import (SpectralBackend, get_backend, spectral_correlators,
                                 spectral_trace)

FFT = SpectralBackend(operators="fft")


def _offset_box(net, lo, hi):
    grids = np.meshgrid(*[np.arange(a, b) for a, b in zip(lo, hi)], indexing="ij")
    return np.sort(np.ravel_multi_index([g.ravel() for g in grids], net.index_shape))


CASES = {
    # (lattice, region indices)
    "3d-dirichlet-ball": lambda: (arealaw.hypercubic((14, 14, 14), mass=0.0),
                                  lambda n: ball(n, 4).indices),
    "3d-dirichlet-near-wall": lambda: (arealaw.hypercubic((12, 10, 9), mass=0.2),
                                       lambda n: _offset_box(n, (0, 1, 5), (4, 6, 9))),
    "2d-periodic-wrapping": lambda: (arealaw.hypercubic((12, 10), mass=0.3, boundary="periodic"),
                                     lambda n: np.sort(np.ravel_multi_index(
                                         (np.array([10, 11, 0, 1, 11, 0]),
                                          np.array([9, 9, 0, 0, 3, 3])), n.index_shape))),
    "2d-open": lambda: (arealaw.hypercubic((11, 9), mass=0.5, boundary="open"),
                        lambda n: _offset_box(n, (2, 0), (9, 5))),
    "3d-mixed": lambda: (arealaw.hypercubic((10, 9, 8), mass=0.4,
                                            boundary=("dirichlet", "periodic", "open")),
                         lambda n: _offset_box(n, (1, 2, 0), (6, 8, 5))),
    "1d-dirichlet-massless": lambda: (arealaw.hypercubic((40,), mass=0.0),
                                      lambda n: np.arange(3, 25)),
}


def _case(name):
    net, region = CASES[name]()
    return net, region(net)


@pytest.mark.parametrize("name", sorted(CASES), ids=sorted(CASES))
def test_box_products_equal_gathered_blocks(name):
    net, idx = _case(name)
    ops = FFT.operators(net, idx, tol=1e-12)
    b = spectral_correlators(net, idx, tol=1e-12)
    v = np.random.default_rng(3).standard_normal((idx.size, 5))
    for op, blk in [(ops.x, b.x), (ops.p, b.p)]:
        assert_allclose(op.matmat(v), blk @ v, rtol=0, atol=1e-12 * np.abs(blk @ v).max())
        assert_allclose(op.matvec(v[:, 0]), blk @ v[:, 0], rtol=0,
                        atol=1e-12 * np.abs(blk @ v[:, 0]).max())
    assert ops.info["operator"] == "fft-box"


@pytest.mark.parametrize("name", sorted(CASES), ids=sorted(CASES))
def test_box_error_bounds_are_honest_against_dense(name):
    # dense reference: eigendecomposition of the assembled V (common practice, no source)
    net, idx = _case(name)
    ops = FFT.operators(net, idx, tol=1e-12)
    d = get_backend("dense").blocks(net, idx)
    eye = np.eye(idx.size)
    err_x = np.linalg.norm(ops.x.matmat(eye) - d.x, 2)
    err_p = np.linalg.norm(ops.p.matmat(eye) - d.p, 2)
    assert err_x <= ops.x_error + d.x_error
    assert err_p <= ops.p_error + d.p_error
    t, t_err = ops.trace
    t_dense = float(np.sum(d.x * d.p)) - idx.size / 4
    assert abs(t - t_dense) <= t_err + 1e-9 * idx.size


def test_trace_with_orbit_weights_equals_full_trace():
    # a centred interval of a Dirichlet chain is mirror symmetric: rows i and its mirror agree
    net = arealaw.hypercubic((30,), mass=0.1)
    idx = np.arange(8, 22)
    full, err = spectral_trace(net, idx)
    half, err_half = spectral_trace(net, idx, rep_rows=np.arange(7), weights=np.full(7, 2.0))
    assert abs(full - half) <= err + err_half
    with pytest.raises(ValueError, match="add up to the region size 14"):
        spectral_trace(net, idx, rep_rows=np.arange(7), weights=np.ones(7))


@pytest.mark.parametrize("name", ["3d-dirichlet-ball", "3d-mixed"], ids=["ball", "mixed"])
def test_restricted_spectrum_from_box_operators_matches_dense(name):
    net, idx = _case(name)
    ops = FFT.operators(net, idx, tol=1e-12)
    spec = restricted_spectrum(ops.x, ops.p, entropy_tol=1e-10, trace=ops.trace,
                               x_error=ops.x_error, p_error=ops.p_error)
    d = get_backend("dense").blocks(net, idx)
    ref = symplectic_spectrum(d.x, d.p, x_error=d.x_error, p_error=d.p_error)
    diff = abs(von_neumann_entropy(spec) - von_neumann_entropy(ref))
    # the solver stops once more vectors could not lower its bound by a third: the operators'
    # trace error (~1e-8 here) keeps the bound near 5e-7, and the value follows it
    assert diff <= 1e-6
    assert diff <= entropy_error_bound(spec) + entropy_error_bound(ref)


def test_auto_operators_pick_dense_for_small_regions_and_report_why():
    net = arealaw.hypercubic((20, 20, 20), mass=0.0)
    ops = SpectralBackend().operators(net, box(net, 4).indices, tol=1e-12)
    assert ops.info["operator"] == "dense-blocks"
    assert "cheaper" in ops.info["operator_reason"]


def test_bad_operator_kind_is_refused():
    with pytest.raises(ValueError, match="operators='gpu'"):
        SpectralBackend(operators="gpu")


def test_auto_operators_go_matrix_free_when_dense_blocks_would_not_fit(monkeypatch):
    import arealaw.correlators.spectral._spectral as spectral
    net = arealaw.hypercubic((32, 32, 32), mass=0.0)
    idx = ball(net, 10).indices
    backend = SpectralBackend()
    dense_bytes = 16.0 * idx.size**2
    assert backend.operator_bytes(net, idx) == dense_bytes
    monkeypatch.setattr(spectral, "available_bytes", lambda: dense_bytes)
    ops = backend.operators(net, idx, tol=1e-12)
    assert ops.info["operator"] == "fft-box"
    assert "would not fit" in ops.info["operator_reason"]
    assert backend.operator_bytes(net, idx) < dense_bytes


def test_operators_refuse_lattices_the_spectral_method_cannot_serve():
    net = arealaw.hypercubic((8, 8), mass=0.5, mass_disorder=0.2, seed=1)
    with pytest.raises(arealaw.UnsupportedMethodError, match="uniform lattice"):
        FFT.operators(net, box(net, 3).indices, tol=1e-12)
