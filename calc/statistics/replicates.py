"""Statistics of a series of repeat runs: mean, Type A uncertainty, shared Type B part, Birge ratio.

A series is the same measurement repeated (a group's three runs of one practical, a week of
check-standard runs on one calorimeter). Following docs/methods.md §5.2 (GUM 4.2, G.2, G.4):

* Type A: ``x̄ = Σx_k/n``, ``s² = Σ(x_k − x̄)²/(n−1)``, ``u_A = s/√n`` with ``ν = n − 1`` and the
  Student-t 95 % interval ``x̄ ± t_{0.975,ν} u_A``.
* The runs of a series share some inputs (the calorimeter heat capacity, the solution's heat
  capacity, a stock concentration, a probe's calibration): their errors are the same in every run,
  so they do not average out and are not in the scatter s. Their part of one run's budget is the
  non-averaging Type B component ``u_B`` (:func:`shared_type_b` takes it from a run's budget), and
  ``u_c² = s²/n + u_B²``.
* ``ν_eff = u_c⁴ / (u_A⁴/(n−1) + u_B⁴/ν_B)`` (Welch–Satterthwaite, GUM G.2b),
  ``U = k u_c``, ``k = t_{0.975, ν_eff}``.
* Consistency of the scatter with the stated uncertainties: the Birge ratio
  ``R_B = √[χ²/(n−1)]``, ``χ² = Σ(x_k − x̄_w)²/u_k²`` (x̄_w the weighted mean); well above 1 means a
  component missing from the budgets.
"""

from __future__ import annotations

import math
from collections.abc import Iterable, Sequence
from dataclasses import dataclass
from typing import Any

import numpy as np
from scipy import stats as sps

from calc.errors import InputError
from calc.statistics.precision import finite_series
from calc.uncertainty.gum import coverage_factor

__all__ = [
    "SeriesSummary",
    "summarize_series",
    "BirgeResult",
    "birge_ratio",
    "shared_type_b",
    "SHARED_INPUTS",
]

#: Inputs of a run's model that are usually the same for every run of a series made with one
#: calorimeter, one stock and one probe (their errors do not average). Callers may pass their own.
SHARED_INPUTS: tuple[str, ...] = (
    "calorimeter.heat_capacity",
    "mixture.specific_heat_capacity",
    "water.density",
    "solution.density",
    "acid.density",
    "base.density",
    "acid.concentration",
    "base.concentration",
    "solute.purity",
    "delta_t.method",
)


def _series(values: Sequence[float] | np.ndarray, what: str = "series") -> np.ndarray:
    return finite_series(values, what, 2, too_few="at least 2 results are needed for a standard deviation")


@dataclass(frozen=True)
class SeriesSummary:
    """Summary of a series of repeat results (all in the results' unit).

    Attributes
    ----------
    n, mean, sd:
        Number of results, mean and standard deviation (n − 1 in the denominator).
    u_mean, dof:
        Type A standard uncertainty of the mean, s/√n, and its degrees of freedom n − 1.
    t95, ci95:
        Student's t factor t_{0.975, n−1} and the 95 % interval of the mean from the scatter alone.
    type_b_u, type_b_dof:
        The shared (non-averaging) Type B part that was added, and its degrees of freedom.
    u_combined, dof_eff, k, U:
        √(u_mean² + type_b_u²), its Welch–Satterthwaite degrees of freedom, the coverage factor
        t_{0.975, ν_eff} and the expanded uncertainty k·u_combined.
    """

    n: int
    mean: float
    sd: float
    u_mean: float
    dof: int
    t95: float
    ci95: tuple[float, float]
    type_b_u: float
    type_b_dof: float
    u_combined: float
    dof_eff: float
    k: float
    U: float


def _checked_type_b(type_b_u: float | None, type_b_dof: float, p: float) -> tuple[float, float]:
    """Return (u_B, ν_B) of :func:`summarize_series` once ``p``, ``type_b_u`` and ``type_b_dof`` are checked."""
    if not 0.0 < p < 1.0:
        raise InputError(f"coverage probability must lie between 0 and 1, got {p!r}", field="p")
    ub = 0.0 if type_b_u is None else float(type_b_u)
    if not (ub >= 0.0 and math.isfinite(ub)):
        raise InputError(
            f"the shared Type B uncertainty must be a finite number ≥ 0, got {type_b_u!r}", field="type_b_u"
        )
    nu_b = float(type_b_dof)
    if not nu_b > 0:
        raise InputError(f"degrees of freedom must be > 0, got {type_b_dof!r}", field="type_b_dof")
    return ub, nu_b


def summarize_series(
    values: Sequence[float] | np.ndarray,
    *,
    type_b_u: float | None = None,
    type_b_dof: float = math.inf,
    p: float = 0.95,
) -> SeriesSummary:
    """Summarize a series of repeat results and combine its scatter with the shared Type B part.

    Parameters
    ----------
    values:
        The results, at least 2.
    type_b_u:
        Standard uncertainty of the mean from inputs shared by every run (they do not average);
        e.g. from :func:`shared_type_b`. None or 0: the scatter alone.
    type_b_dof:
        Degrees of freedom of ``type_b_u`` (∞ for a well-known Type B; GUM G.4.2 gives
        ½(Δu/u)⁻² for a relative reliability Δu/u).
    p:
        Coverage probability of ``ci95``, ``t95`` and ``U`` (0.95 by default).

    Returns
    -------
    SeriesSummary

    Raises
    ------
    InputError
        For fewer than 2 results, a non-finite value, or a negative Type B uncertainty.
    """
    x = _series(values)
    ub, nu_b = _checked_type_b(type_b_u, type_b_dof, p)
    n = int(x.size)
    mean = float(x.mean())
    sd = float(x.std(ddof=1))
    ua = sd / math.sqrt(n)
    dof = n - 1
    t = coverage_factor(dof, p)
    uc = math.hypot(ua, ub)
    denom = ua**4 / dof + (ub**4 / nu_b if math.isfinite(nu_b) else 0.0)
    nu_eff = uc**4 / denom if denom > 0 else math.inf
    k = coverage_factor(nu_eff, p)
    return SeriesSummary(
        n=n,
        mean=mean,
        sd=sd,
        u_mean=ua,
        dof=dof,
        t95=t,
        ci95=(mean - t * ua, mean + t * ua),
        type_b_u=ub,
        type_b_dof=nu_b,
        u_combined=uc,
        dof_eff=nu_eff,
        k=k,
        U=k * uc,
    )


def shared_type_b(budget: Iterable[Any], shared: Iterable[str] = SHARED_INPUTS) -> tuple[float, float]:
    """Return the shared (non-averaging) part of a run's budget and its degrees of freedom.

    Parameters
    ----------
    budget:
        Budget lines of one run of the series (``calc.uncertainty.gum.BudgetLine``: each has ``name``,
        ``contribution`` |c_i|u(x_i) in the result's unit and ``dof``), e.g.
        ``analysis.gum.budget``.
    shared:
        Names of the inputs that are the same in every run (default :data:`SHARED_INPUTS`).

    Returns
    -------
    tuple of float
        (u_B, ν_B): the root sum of squares of the shared contributions and their
        Welch–Satterthwaite degrees of freedom (∞ when all are Type B of infinite ν).

    Notes
    -----
    The sensitivities are those of the run given; for runs of similar size they hold for the
    mean of the series too (first order).
    """
    names = set(shared)
    lines = [b for b in budget if b.name in names and b.contribution > 0]
    u2 = sum(b.contribution**2 for b in lines)
    denom = sum(b.contribution**4 / b.dof for b in lines if math.isfinite(b.dof))
    dof = (u2**2 / denom) if denom > 0 else math.inf
    return math.sqrt(u2), dof


@dataclass(frozen=True)
class BirgeResult:
    """Birge ratio of a series with stated uncertainties.

    Attributes
    ----------
    ratio:
        R_B = √[χ²/(n−1)]; about 1 when the scatter agrees with the stated uncertainties.
    chi2, dof:
        Σ(x_k − x̄_w)²/u_k² and n − 1.
    weighted_mean, u_weighted_mean:
        x̄_w = Σ(x_k/u_k²)/Σ(1/u_k²) and its standard uncertainty 1/√Σ(1/u_k²).
    p_value:
        Probability of a χ² this large or larger if the stated uncertainties were complete.
    """

    ratio: float
    chi2: float
    dof: int
    weighted_mean: float
    u_weighted_mean: float
    p_value: float


def birge_ratio(values: Sequence[float] | np.ndarray, uncertainties: Sequence[float] | np.ndarray) -> BirgeResult:
    """Return the Birge ratio of results with their standard uncertainties.

    Parameters
    ----------
    values:
        At least 2 results.
    uncertainties:
        Their standard uncertainties (same length, each > 0).

    Returns
    -------
    BirgeResult

    Raises
    ------
    InputError
        For lists of different length, fewer than 2 results or an uncertainty ≤ 0.
    """
    x = _series(values, "Birge ratio")
    u = _series(uncertainties, "Birge ratio uncertainties")
    if u.size != x.size:
        raise InputError(f"Birge ratio: {x.size} results but {u.size} uncertainties")
    if np.any(u <= 0):
        bad = int(np.flatnonzero(u <= 0)[0])
        raise InputError(f"Birge ratio: uncertainty {bad + 1} must be > 0, got {u[bad]}")
    w = 1.0 / u**2
    xw = float(np.sum(w * x) / np.sum(w))
    chi2 = float(np.sum(w * (x - xw) ** 2))
    dof = int(x.size - 1)
    return BirgeResult(
        ratio=math.sqrt(chi2 / dof),
        chi2=chi2,
        dof=dof,
        weighted_mean=xw,
        u_weighted_mean=float(1.0 / math.sqrt(np.sum(w))),
        p_value=float(sps.chi2.sf(chi2, dof)),
    )
