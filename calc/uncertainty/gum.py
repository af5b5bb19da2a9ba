"""Uncertainty evaluation: GUM linear propagation and a Monte Carlo check.

A measurement model is a plain Python function of a mapping of input names to
values. It must use only arithmetic and the helpers of this module
(:func:`xmin`), so the same function evaluates on floats, on ``uncertainties``
numbers (linear propagation with correlations, JCGM 100) and on numpy arrays
(Monte Carlo, JCGM 101).

Inputs are primary and independent (each volume, each concentration, each
uncertainty component of ΔT); correlations between intermediate quantities such
as the solution mass and the amount of acid then follow from the model itself.
"""

from __future__ import annotations

import math
from collections.abc import Callable, Mapping
from dataclasses import dataclass, field
from typing import Any

import numpy as np
from scipy.special import ndtri, stdtrit
from uncertainties import ufloat
from uncertainties.core import AffineScalarFunc

__all__ = [
    "Input",
    "BudgetLine",
    "GumResult",
    "MonteCarloResult",
    "propagate",
    "monte_carlo",
    "xmin",
    "coverage_factor",
]

Model = Callable[[Mapping[str, Any]], dict[str, Any]]


def xmin(a: Any, b: Any) -> Any:
    """Return the smaller of ``a`` and ``b`` for floats, uncertain numbers or arrays."""
    if isinstance(a, np.ndarray) or isinstance(b, np.ndarray):
        return np.minimum(a, b)
    na = a.nominal_value if isinstance(a, AffineScalarFunc) else a
    nb = b.nominal_value if isinstance(b, AffineScalarFunc) else b
    return a if na <= nb else b


@dataclass(frozen=True)
class Input:
    """One primary input of a measurement model.

    ``distribution`` is "normal", "rectangular" or "t" (a scaled and shifted
    t distribution with ``dof`` degrees of freedom, for Type A components).
    """

    name: str
    value: float
    u: float
    unit: str
    distribution: str = "normal"
    dof: float = math.inf
    label: str = ""


@dataclass(frozen=True)
class BudgetLine:
    """One line of an uncertainty budget."""

    name: str
    label: str
    value: float
    unit: str
    standard_uncertainty: float
    distribution: str
    dof: float
    sensitivity: float
    contribution: float  # |c_i| u(x_i), in the output's unit
    share: float  # fraction of u_c²

    def as_dict(self) -> dict[str, Any]:
        """Return the line as a JSON-ready dict."""
        return {
            "input": self.name,
            "label": self.label,
            "value": self.value,
            "unit": self.unit,
            "standard_uncertainty": self.standard_uncertainty,
            "distribution": self.distribution,
            "degrees_of_freedom": None if math.isinf(self.dof) else self.dof,
            "sensitivity": self.sensitivity,
            "contribution": self.contribution,
            "share": self.share,
        }


@dataclass
class GumResult:
    """Values and standard uncertainties of every output; budget of the main one."""

    values: dict[str, float]
    uncertainties: dict[str, float]
    main: str
    budget: list[BudgetLine]
    dof_eff: float
    coverage_factor: float
    expanded_uncertainty: float
    extra: dict[str, Any] = field(default_factory=dict)


def coverage_factor(dof: float, p: float = 0.95) -> float:
    """Return the coverage factor t_{(1+p)/2, ν} (1.96 for ν = ∞ at 95 %)."""
    if not math.isfinite(dof) or dof > 1e7:
        return float(ndtri(0.5 + p / 2))
    return float(stdtrit(max(dof, 1.0), 0.5 + p / 2))


def _welch_satterthwaite(contribs: list[tuple[Input, float, float]], uc2: float) -> float:
    """Return the effective degrees of freedom (GUM G.2b), written with the shares ci²/uc² (≤ 1):
    uc2**2 itself overflows for the huge U of a log that barely fits."""
    if not 0 < uc2 < math.inf:
        return math.inf
    denom = sum((ci * ci / uc2) ** 2 / inp.dof for inp, _, ci in contribs if math.isfinite(inp.dof) and ci > 0)
    return 1.0 / denom if denom > 0 else math.inf


def propagate(inputs: list[Input], model: Model, main: str, p: float = 0.95) -> GumResult:
    """Propagate ``inputs`` through ``model`` by the GUM law (first order).

    Returns every output's value and standard uncertainty, the budget of
    ``main`` (value, u, sensitivity coefficient, contribution and share of the
    variance of each input), the Welch–Satterthwaite effective degrees of
    freedom and the coverage factor for probability ``p``.
    """
    xs: dict[str, Any] = {}
    variables = {}
    for inp in inputs:
        if inp.u > 0:
            v = ufloat(inp.value, inp.u, tag=inp.name)
            xs[inp.name] = v
            variables[inp.name] = v
        else:
            xs[inp.name] = inp.value
    out = model(xs)
    values: dict[str, float] = {}
    uncs: dict[str, float] = {}
    for key, val in out.items():
        if isinstance(val, AffineScalarFunc):
            values[key] = float(val.nominal_value)
            uncs[key] = float(val.std_dev)
        else:
            values[key] = float(val)
            uncs[key] = 0.0
    y = out[main]
    derivs = y.derivatives if isinstance(y, AffineScalarFunc) else {}
    coefs = [float(derivs.get(variables[inp.name], 0.0)) if inp.name in variables else 0.0 for inp in inputs]
    contribs: list[tuple[Input, float, float]] = [(inp, c, abs(c) * inp.u) for inp, c in zip(inputs, coefs)]
    uc2 = sum(ci**2 for _, _, ci in contribs)
    budget = [
        BudgetLine(
            name=inp.name,
            label=inp.label or inp.name,
            value=inp.value,
            unit=inp.unit,
            standard_uncertainty=inp.u,
            distribution=inp.distribution,
            dof=inp.dof,
            sensitivity=c,
            contribution=ci,
            share=(ci**2 / uc2) if uc2 > 0 else 0.0,
        )
        for inp, c, ci in contribs
    ]
    budget.sort(key=lambda b: -b.share)
    dof = _welch_satterthwaite(contribs, uc2)
    k = coverage_factor(dof, p)
    return GumResult(
        values=values,
        uncertainties=uncs,
        main=main,
        budget=budget,
        dof_eff=dof,
        coverage_factor=k,
        expanded_uncertainty=k * math.sqrt(uc2),
    )


@dataclass
class MonteCarloResult:
    """Summary of a JCGM 101 Monte Carlo evaluation of the main output."""

    trials: int
    mean: float
    standard_uncertainty: float
    low: float  # probabilistically symmetric 95 % interval
    high: float
    tolerance: float  # numerical tolerance δ of u_c at 1 significant digit
    d_low: float
    d_high: float
    agrees: bool  # the GUM interval is validated (JCGM 101 §8)
    seed: int | None


def _draw(inp: Input, rng: np.random.Generator, n: int) -> np.ndarray:
    if inp.u <= 0:
        return np.full(n, inp.value)
    if inp.distribution == "rectangular":
        a = inp.u * math.sqrt(3.0)
        return inp.value + rng.uniform(-a, a, n)
    if inp.distribution == "t" and math.isfinite(inp.dof) and inp.dof > 2:
        # scaled t with the same standard deviation as u (JCGM 101 6.4.9 uses s/√n scaling;
        # here u is already the standard uncertainty, so rescale by sqrt((ν−2)/ν))
        scale = inp.u * math.sqrt((inp.dof - 2.0) / inp.dof)
        return inp.value + scale * rng.standard_t(inp.dof, n)
    return inp.value + inp.u * rng.standard_normal(n)


def _tolerance(u: float, ndig: int = 1) -> float:
    if u <= 0 or not math.isfinite(u):
        return 0.0
    ell = math.floor(math.log10(u)) - (ndig - 1)
    return 0.5 * 10.0**ell


def monte_carlo(
    inputs: list[Input],
    model: Model,
    main: str,
    gum: GumResult,
    trials: int = 100_000,
    seed: int | None = None,
    p: float = 0.95,
) -> MonteCarloResult:
    """Evaluate ``model`` by Monte Carlo (JCGM 101) and compare with ``gum``.

    The comparison follows JCGM 101 §8: the GUM interval y ± U is validated when
    both end-point differences are within the numerical tolerance δ of u_c
    stated to one significant digit (n_dig = 1; with 10⁵ trials the Monte Carlo
    end points themselves scatter by about 1 % of u_c, so two digits would
    flag chance). Draws are vectorised; the model is
    evaluated once on arrays of ``trials`` values.
    """
    rng = np.random.default_rng(seed)
    xs = {inp.name: _draw(inp, rng, trials) for inp in inputs}
    with np.errstate(divide="ignore", invalid="ignore"):
        y = np.asarray(model(xs)[main], dtype=float)
    y = y[np.isfinite(y)]
    if y.size < trials // 2:
        raise ValueError("the Monte Carlo evaluation gave too many non-finite values")
    lo_q, hi_q = (1 - p) / 2, (1 + p) / 2
    lo, hi = np.quantile(y, [lo_q, hi_q])
    mean = float(y.mean())
    sd = float(y.std(ddof=1))
    yv = gum.values[main]
    U = gum.expanded_uncertainty
    uc = gum.uncertainties[main]
    delta = _tolerance(uc)
    d_low = abs(yv - U - float(lo))
    d_high = abs(yv + U - float(hi))
    return MonteCarloResult(
        trials=trials,
        mean=mean,
        standard_uncertainty=sd,
        low=float(lo),
        high=float(hi),
        tolerance=delta,
        d_low=d_low,
        d_high=d_high,
        agrees=bool(d_low <= delta and d_high <= delta),
        seed=seed,
    )
