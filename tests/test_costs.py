"""The cost model: one sourced table, and an automatic choice that prefers exact methods."""

import datetime

import pytest

import arealaw
from arealaw._costs import COSTS, cost
from arealaw.correlators import Assessment
from arealaw.methods import _registry
from arealaw.methods._registry import APPROXIMATE_ADVANTAGE, Method, choose_method


def test_every_constant_is_sourced_and_dated():
    for name, c in COSTS.items():
        assert c.value > 0 and c.per and c.measured_by, name
        datetime.date.fromisoformat(c.date)
    with pytest.raises(KeyError, match="no cost constant 'nope'"):
        cost("nope")


def test_auto_prefers_exact_spectral_on_a_uniform_chain():
    # the massless Dirichlet chain of N = 2000 with an interval of 256 at the wall went to
    # 'sparse' (tolerance-level); the exact heat-kernel quadrature serves it at similar cost
    net = arealaw.hypercubic((2000,), mass=0.0)
    choice = choose_method(net, [arealaw.box(net, 256, origin=(0,))], tol=1e-10)
    assert choice.method.name == "spectral" and choice.method.exact, choice.reason
    # disorder: no exact method but dense, which costs far more than sparse here
    net = arealaw.hypercubic((30, 30, 30), mass=0.3, mass_disorder=0.5, seed=1)
    choice = choose_method(net, [arealaw.ball(net, 2.5)], tol=1e-10)
    assert choice.method.name == "sparse", choice.reason


class _Fake(Method):
    def __init__(self, name, seconds, exact):
        self.name, self.seconds, self.exact = name, seconds, exact

    def assess(self, network, regions, *, tol, temperature=0.0):
        return Assessment(True, f"fake {self.name}", 0.0, self.seconds)


@pytest.mark.parametrize("approx_seconds, chosen", [
    (1.0 / APPROXIMATE_ADVANTAGE * 1.01, "exact"),    # not cheaper by the margin: exact
    (1.0 / APPROXIMATE_ADVANTAGE * 0.99, "approx"),   # cheaper by more than the margin
    (2.0, "exact"),
])
def test_approximate_method_needs_a_clear_advantage(monkeypatch, approx_seconds, chosen):
    fakes = {"exact": _Fake("exact", 1.0, True), "approx": _Fake("approx", approx_seconds, False)}
    monkeypatch.setattr(_registry, "_METHODS", fakes)
    choice = choose_method(None, [None], tol=1e-10)
    assert choice.method.name == chosen
    if chosen == "exact" and approx_seconds < 1.0:
        assert "preferred to 'approx'" in choice.reason
