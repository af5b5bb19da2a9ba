"""GUM propagation, Welch–Satterthwaite and the Monte Carlo check.

References: JCGM 100:2008 (GUM) eq. (10)/(13) and G.2b; JCGM 101:2008 (Monte Carlo);
Student-t quantiles from scipy.stats (a general-purpose reference library) and GUM
Table G.2 (from memory).
"""

from __future__ import annotations

import math

import numpy as np
import pytest

from calc.uncertainty.gum import Input, coverage_factor, monte_carlo, propagate, xmin


def test_linear_model_matches_the_law_of_propagation():
    # y = a + 2b − 3c; u_c² = u_a² + 4u_b² + 9u_c² (GUM eq. 10), worked by hand:
    # 0.1² + 4·0.2² + 9·0.05² = 0.01 + 0.16 + 0.0225 = 0.1925
    inputs = [Input("a", 1.0, 0.1, "K"), Input("b", 2.0, 0.2, "K"), Input("c", 3.0, 0.05, "K")]
    g = propagate(inputs, lambda x: {"y": x["a"] + 2 * x["b"] - 3 * x["c"]}, "y")
    assert g.values["y"] == pytest.approx(1 + 4 - 9)
    assert g.uncertainties["y"] == pytest.approx(math.sqrt(0.1925))
    shares = {b.name: b.share for b in g.budget}
    assert shares["b"] == pytest.approx(0.16 / 0.1925)
    sens = {b.name: b.sensitivity for b in g.budget}
    assert sens == pytest.approx({"a": 1.0, "b": 2.0, "c": -3.0})
    assert g.budget[0].name == "b"  # largest share first


def test_shared_input_is_correlated_through_the_model():
    # y = V·ρ / (V·c): V cancels exactly, so it must contribute nothing (correlation handled).
    inputs = [Input("V", 50.0, 0.5, "mL"), Input("rho", 1.0, 0.01, "g/mL"), Input("c", 1.0, 0.0, "mol/L")]
    g = propagate(inputs, lambda x: {"y": x["V"] * x["rho"] / (x["V"] * x["c"])}, "y")
    assert {b.name: b.share for b in g.budget}["V"] == pytest.approx(0.0, abs=1e-12)
    assert g.uncertainties["y"] == pytest.approx(0.01)


def test_welch_satterthwaite_and_coverage_factor():
    # Two equal contributions u=1, one with ν=4, one Type B (ν=∞):
    # ν_eff = u_c⁴/Σ(u_i⁴/ν_i) = (2)²/(1/4) = 16 (GUM G.2b, worked by hand)
    inputs = [Input("a", 0.0, 1.0, "K", "t", dof=4), Input("b", 0.0, 1.0, "K")]
    g = propagate(inputs, lambda x: {"y": x["a"] + x["b"]}, "y")
    assert g.dof_eff == pytest.approx(16.0)
    # t_{0.975,16} = 2.120 (Student-t table; GUM Table G.2 gives 2.12 for ν = 16, from memory)
    assert g.coverage_factor == pytest.approx(2.120, abs=1e-3)
    assert g.expanded_uncertainty == pytest.approx(2.120 * math.sqrt(2), abs=3e-3)
    # ν → ∞: k = 1.96 (normal quantile); ν = 10: 2.23 (GUM Table G.2, from memory)
    assert coverage_factor(math.inf) == pytest.approx(1.960, abs=1e-3)
    assert coverage_factor(10) == pytest.approx(2.228, abs=1e-3)


def test_welch_satterthwaite_survives_a_huge_uncertainty():
    # the same two lines as above scaled by 1e100 (a drift fit that barely fits a short live log):
    # ν_eff is scale-free, still 16 (GUM G.2b), where u_c⁴ itself overflows a float
    inputs = [Input("a", 0.0, 1e100, "K", "t", dof=4), Input("b", 0.0, 1e100, "K")]
    g = propagate(inputs, lambda x: {"y": x["a"] + x["b"]}, "y")
    assert g.dof_eff == pytest.approx(16.0)


def test_monte_carlo_agrees_on_a_linear_model():
    inputs = [Input("a", 10.0, 0.3, "K"), Input("b", 5.0, 0.4, "K", "rectangular")]
    model = lambda x: {"y": x["a"] - x["b"]}  # noqa: E731
    g = propagate(inputs, model, "y")
    mc = monte_carlo(inputs, model, "y", g, trials=200_000, seed=1)
    assert mc.standard_uncertainty == pytest.approx(0.5, rel=0.01)
    assert mc.agrees


def test_monte_carlo_disagrees_on_a_strongly_nonlinear_ratio():
    # y = 1/x with u(x)/x = 30 %: first-order propagation understates the upper tail
    # (JCGM 101 §9-type example of a skewed output).
    inputs = [Input("x", 1.0, 0.3, "1")]
    model = lambda x: {"y": 1.0 / x["x"]}  # noqa: E731
    g = propagate(inputs, model, "y")
    mc = monte_carlo(inputs, model, "y", g, trials=200_000, seed=2)
    assert not mc.agrees
    assert mc.high > g.values["y"] + g.expanded_uncertainty


def test_monte_carlo_is_seedable():
    inputs = [Input("x", 2.0, 0.1, "1")]
    model = lambda x: {"y": x["x"] ** 2}  # noqa: E731
    g = propagate(inputs, model, "y")
    a = monte_carlo(inputs, model, "y", g, trials=10_000, seed=5)
    b = monte_carlo(inputs, model, "y", g, trials=10_000, seed=5)
    assert (a.low, a.high, a.mean) == (b.low, b.high, b.mean)


def test_xmin_works_for_floats_uncertain_numbers_and_arrays():
    from uncertainties import ufloat

    assert xmin(1.0, 2.0) == 1.0
    assert xmin(ufloat(3, 0.1), ufloat(2, 0.1)).nominal_value == 2
    assert np.array_equal(xmin(np.array([1.0, 3.0]), np.array([2.0, 2.0])), [1.0, 2.0])
