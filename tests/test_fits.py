"""Scaling fits: known coefficients from noisy synthetic data, and c = 1 from a chain sweep."""

import numpy as np
import pytest
from numpy.testing import assert_allclose

from arealaw.workflow import Case, ResultStore, fit_rows, fit_scaling, run_cases


def test_recovers_3d_coefficients_from_noisy_data():
    rng = np.random.default_rng(7)
    r = np.linspace(2.0, 20.0, 25)
    sigma = np.full(r.size, 1e-3)
    s = 0.295 * r**2 - 1 / 90 * np.log(r) + 0.4 + rng.normal(0, 1e-3, r.size)
    fit = fit_scaling(r, s, sigma, dim=3)
    for name, true in (("area", 0.295), ("log", -1 / 90), ("const", 0.4)):
        assert abs(fit[name] - true) < 4 * fit.error(name), (name, fit[name], fit.error(name))
    assert fit.error("area") < 1e-4 and fit.error("log") < 0.01
    assert 0.3 < fit.chi2_red < 3  # errors consistent with the injected noise
    assert set(fit.stability) == {"area", "log", "const"}
    assert len(fit.stability["area"]) == 3 and fit.drift["area"] < 5 * fit.error("area") * 3


def test_recovers_2d_coefficients_with_a_power_correction():
    rng = np.random.default_rng(11)
    r = np.arange(3.0, 40.0)
    s = 0.5 * r + 0.1 * np.log(r) + 0.2 + 0.7 / r + rng.normal(0, 1e-5, r.size)
    fit = fit_scaling(r, s, np.full(r.size, 1e-5), dim=2, powers=[-1])
    assert fit.names == ["area", "log", "const", "R^-1"]
    assert_allclose([fit["area"], fit["log"], fit["R^-1"]], [0.5, 0.1, 0.7], atol=5e-3)
    assert_allclose(fit.predict(r), s, atol=1e-4)


def test_1d_central_charge_from_synthetic_log():
    rng = np.random.default_rng(3)
    ell = np.arange(4.0, 200.0, 8.0)
    s = (1 / 3) * np.log(ell) + 0.7 + rng.normal(0, 1e-4, ell.size)
    fit = fit_scaling(ell, s, np.full(ell.size, 1e-4), dim=1)
    assert abs(fit.central_charge - 1.0) < 4 * fit.central_charge_stderr + 1e-12
    assert fit.central_charge_stderr < 1e-3


def test_central_charge_from_half_chain_sweep(tmp_path):
    # Calabrese & Cardy 2004, J. Stat. Mech. P06002: S = (c/6) ln N + const for half of a
    # Dirichlet chain (one endpoint), c = 1 for the harmonic chain; the half-chain setup follows
    # REFERENCES.md entry 3 (avoids the zero-mode correction of a nearly massless infinite chain).
    sizes = [32, 64, 128, 256, 512]
    cases = [Case({"shape": [n], "mass": 0.0}, {"half_space": [0, n // 2]}, method="dense",
                  renyi=[2.0], family="half chain", label=f"N={n}", x=n) for n in sizes]
    with ResultStore(tmp_path / "chain.sqlite") as st:
        run_cases(cases, st, progress=False)
        rows = st.rows()
    fit = fit_rows(rows, endpoints=1, powers=[-2])
    assert abs(fit.central_charge - 1.0) < 0.02, fit.central_charge
    assert_allclose(fit["log"] * 6, 1.0, atol=0.02)  # slope (c/6) with c = 1 ...
    assert_allclose(fit["log"] * 2, 1 / 3, atol=0.007)  # ... i.e. (c/3) for two endpoints
    # Rényi-2: (c/12)(1 + 1/n) ln N for one endpoint (Calabrese & Cardy 2004) -> slope 1/8
    fit2 = fit_rows(rows, measure="renyi:2", endpoints=1, powers=[-2])
    assert_allclose(fit2["log"], 1 / 8, atol=0.01)


def test_half_chain_regression_value(tmp_path):
    # REFERENCES.md entry 3: N = 100 Dirichlet chain, first 50 sites, m = 0: 0.664129015839
    # (computed: regression value from an independent dense calculation)
    case = Case({"shape": [100], "mass": 0.0}, {"half_space": [0, 50]}, method="dense")
    with ResultStore(tmp_path / "one.sqlite") as st:
        run_cases([case], st, progress=False)
        (row,) = st.rows()
    assert_allclose(row["entropy"], 0.664129015839, rtol=1e-10)


BAD = [
    ("dim", dict(sizes=[1, 2, 3], values=[1, 2, 3], dim=4), "dim=4"),
    ("length", dict(sizes=[1, 2, 3], values=[1, 2], dim=1), "3 sizes but 2 values"),
    ("nonpositive", dict(sizes=[0, 2, 3], values=[1, 2, 3], dim=1), "> 0"),
    ("few-points", dict(sizes=[1, 2], values=[1, 2], dim=3), "cannot determine"),
    ("degenerate", dict(sizes=[2, 2, 2, 2], values=[1, 1, 1, 1], dim=3), "do not determine"),
    ("errors", dict(sizes=[1, 2, 3], values=[1, 2, 3], errors=[1, -1, 1], dim=1), "errors"),
    ("endpoints", dict(sizes=[1, 2, 3], values=[1, 2, 3], dim=1, endpoints=3), "endpoints=3"),
]


@pytest.mark.parametrize("kw, fragment", [b[1:] for b in BAD], ids=[b[0] for b in BAD])
def test_bad_fit_input(kw, fragment):
    with pytest.raises(ValueError, match=fragment.replace("(", r"\(").replace(">", ">")):
        fit_scaling(**kw)


def test_fit_rows_rejects_unknown_measure():
    rows = [{"x": x, "dim": 1, "entropy": 0.1 * x, "error_bound": 0.0, "renyi": {},
             "renyi_error_bound": {}} for x in (1.0, 2.0, 3.0)]
    with pytest.raises(ValueError, match="renyi:3.*none"):
        fit_rows(rows, measure="renyi:3")
    with pytest.raises(ValueError, match="'area'"):
        fit_rows(rows, measure="area")


def test_model_scatter_is_added_when_bounds_are_too_small():
    # the bounds (1e-9) understate a scatter of 1e-3: chi2 against the bounds alone is reported
    # (~1e12 per point), sigma_m makes chi2/dof = 1 for the weights and the coefficients'
    # errors then reflect the scatter (common practice, no source)
    rng = np.random.default_rng(5)
    r = np.linspace(2.0, 20.0, 40)
    s = 0.3 * r**2 + 0.5 + rng.normal(0, 1e-3, r.size)
    fit = fit_scaling(r, s, np.full(r.size, 1e-9), dim=3)
    assert fit.dof == 37 and 1e11 < fit.chi2_red < 1e13
    assert_allclose(fit.chi2, fit.chi2_red * fit.dof)
    assert fit.p_value < 1e-100 and "exceed the certified error bounds" in fit.assessment
    assert 5e-4 < fit.model_sigma < 2e-3
    assert_allclose(np.sum((fit.residuals / fit.sigma) ** 2) / fit.dof, 1.0, rtol=1e-6)
    assert abs(fit["area"] - 0.3) < 4 * fit.error("area")
    # a scatter of 1e-3 on an area term changing by 120 is a fair description: no warning
    assert fit.relative_misfit < 1e-4 and fit.warning is None
    d = fit.to_dict()
    assert d["chi2_red"] == fit.chi2_red and d["warning"] is None and d["p_value"] < 1e-100


def test_consistent_data_pass_the_chi2_test():
    # noise drawn at the stated errors: p-value not small (seeded; common practice, no source)
    rng = np.random.default_rng(9)
    r = np.linspace(2.0, 30.0, 30)
    s = 0.3 * r**2 + 0.1 * np.log(r) + rng.normal(0, 1e-4, r.size)
    fit = fit_scaling(r, s, np.full(r.size, 1e-4), dim=3)
    assert fit.p_value > 1e-3 and fit.model_sigma == 0.0 and fit.warning is None
    assert "within their error bounds" in fit.assessment


def test_chord_length_forms():
    # Calabrese & Cardy 2004, J. Stat. Mech. P06002: periodic chord (N/pi) sin(pi l/N), open
    # chain (2N/pi) sin(pi l/N); the Dirichlet lattice identification L = N + 1, cut at l + 1/2
    # makes S(l) = S(N - l) (purity) an identity of the chord
    from arealaw.workflow._fits import chord_length
    assert_allclose(chord_length(np.array([5, 10]), 20, "periodic"),
                    20 / np.pi * np.sin(np.pi * np.array([5, 10]) / 20))
    assert_allclose(chord_length(4, 30, "open"), 60 / np.pi * np.sin(np.pi * 4 / 30))
    ell = np.arange(1, 30)
    assert_allclose(chord_length(ell, 30, "dirichlet"), chord_length(30 - ell, 30, "dirichlet"))
    assert_allclose(chord_length(1, 10**6, "periodic"), 1.0, rtol=1e-9)  # -> l when N >> l
    with pytest.raises(ValueError, match="1..29"):
        chord_length(30, 30, "periodic")
    with pytest.raises(ValueError, match="'twisted'"):
        chord_length(3, 30, "twisted")


def _chain_rows(tmp_path, n, mass, boundary, ells):
    cases = [Case({"shape": [n], "mass": mass, "boundary": boundary},
                  {"box": [int(ell)], "origin": [0]}, family="intervals", label=f"l={ell}",
                  x=float(ell)) for ell in ells]
    with ResultStore(tmp_path / f"{boundary}.sqlite") as st:
        run_cases(cases, st, progress=False)
        return st.rows()


def test_chord_length_gives_c_1_on_finite_chains(tmp_path):
    # Calabrese & Cardy 2004, J. Stat. Mech. P06002, finite-size forms: c = 1 for the harmonic
    # chain.  Periodic: a massless periodic chain has a zero mode (no normalisable ground state,
    # refused), so m = 1e-5 with m N << 1; its zero mode leaves c - 1 ~ 1e-3 at N = 256.
    # Dirichlet (massless, no zero mode): intervals at the wall with the open-chain form.
    rows = _chain_rows(tmp_path, 256, 1e-5, "periodic", np.arange(16, 129, 8))
    chord = fit_rows(rows, size="chord")
    assert chord.endpoints == 2 and chord.size == "chord"
    assert abs(chord.central_charge - 1.0) < 0.01, chord.central_charge
    assert chord.warning is None and chord.relative_misfit < 1e-4
    # the plain ln l on the same data bends away from the chord form: c far from 1, and a
    # warning in words (value from the same data; the criterion is MISFIT_LIMIT)
    plain = fit_rows(rows, size="x")
    assert abs(plain.central_charge - 1.0) > 0.1, plain.central_charge
    assert plain.warning and "does not describe the data" in plain.warning
    assert "chord" in plain.warning

    rows = _chain_rows(tmp_path, 128, 0.0, "dirichlet", np.arange(8, 121, 8))
    chord = fit_rows(rows, size="chord", endpoints=2)  # endpoints follow the boundary
    assert chord.endpoints == 1
    assert abs(chord.central_charge - 1.0) < 0.005, chord.central_charge
    assert chord.warning is None
    plain = fit_rows(rows, endpoints=1)
    assert plain.warning and abs(plain.central_charge - 1.0) > 0.3


def test_chord_length_refuses_middle_intervals_of_open_chains(tmp_path):
    cases = [Case({"shape": [40], "mass": 0.0}, {"box": [ell]}, family="mid", label=str(ell),
                  x=float(ell), method="dense") for ell in (4, 8, 12, 16)]
    with ResultStore(tmp_path / "mid.sqlite") as st:
        run_cases(cases, st, progress=False)
        rows = st.rows()
    with pytest.raises(ValueError, match="intervals at an end"):
        fit_rows(rows, size="chord")
