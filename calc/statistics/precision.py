"""Statistics of a class or an inter-group study: outlier tests, ISO 5725-2 precision, Algorithm A.

Everything here works on plain numbers in one unit (the caller's), so it serves ΔH values of a
section, calorimeter heat capacities of a set of cups or any other repeated result. The formulas
are those of docs/methods.md §6.1, §6.3 and §6.4; critical values come from the t and F distributions
of :mod:`scipy.stats`, never from typed tables:

* Grubbs (two-sided, one suspect): ``G = max|x_i − x̄|/s``,
  ``G_crit = (n−1)/√n · √(t²/(n−2+t²))``, ``t = t_{α/(2n), n−2}`` (upper quantile).
* ISO 5725-2 one-way analysis with unequal replicates: ``s_r² = Σ(n_i−1)s_i²/Σ(n_i−1)``,
  ``s_d² = Σn_i(ȳ_i−ȳ)²/(p−1)``, ``n̄ = [Σn_i − Σn_i²/Σn_i]/(p−1)``,
  ``s_L² = max(0, (s_d² − s_r²)/n̄)``, ``s_R² = s_L² + s_r²``, ``r = 2.8 s_r``, ``R = 2.8 s_R``.
* Mandel's h and k, with their critical values
  ``h = (p−1)t/√(p(t²+p−2))`` (t two-sided at α, p−2 degrees of freedom) and
  ``k = √(p/(1+(p−1)/F))`` (F upper α quantile, n−1 and (p−1)(n−1) degrees of freedom).
* Cochran's C = s²_max/Σs_i², critical value ``1/(1+(p−1)/F)`` with F at α/p
  (:mod:`calc.statistics.cochran_test`).
* Algorithm A of ISO 13528, robust mean and standard deviation (:mod:`calc.statistics.robust`).

These tests *flag*; they never delete a result (docs/methods.md §6.3, ISO 5725-2 practice).
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np
from scipy import stats as sps

from calc.errors import InputError

__all__ = [
    "GrubbsResult",
    "grubbs",
    "grubbs_critical",
    "Precision",
    "iso5725",
    "mandel_h_k",
    "mandel_h_critical",
    "mandel_k_critical",
    "LIMIT_FACTOR",
]

#: Factor from a precision standard deviation to the 95 % limit of the difference of two results
#: (ISO 5725-6 uses 2.8 ≈ 1.96·√2; docs/methods.md §6.4).
LIMIT_FACTOR = 2.8

# ---------------------------------------------------------------------------- helpers


def finite_series(
    values: Sequence[float] | np.ndarray,
    what: str,
    minimum: int,
    *,
    noun: str = "value",
    too_few: str | None = None,
) -> np.ndarray:
    """Return ``values`` as a finite 1-D float array of at least ``minimum`` items.

    Shared by the statistics, control-chart and replicate modules; ``noun`` names one item
    in messages ("value", "point", "result") and ``too_few`` replaces the message for a
    series that is too short.
    """
    try:
        x = np.asarray(values, dtype=float)
    except (TypeError, ValueError):
        raise InputError(f"{what}: expected a list of numbers, got {values!r}") from None
    if x.ndim != 1:
        raise InputError(f"{what}: expected a flat list of numbers")
    if not np.all(np.isfinite(x)):
        bad = int(np.flatnonzero(~np.isfinite(x))[0])
        raise InputError(f"{what}: {noun} {bad + 1} is not a finite number ({x[bad]})")
    if too_few is None and x.size == 0 and minimum >= 1:
        raise InputError(f"{what}: no {noun}s given")
    if x.size < minimum:
        raise InputError(f"{what}: " + (too_few or f"at least {minimum} {noun}s are needed") + f", got {x.size}")
    return x


def cell_arrays(cells: Sequence[Sequence[float]], minimum_cells: int = 2) -> list[np.ndarray]:
    """Return the cells (one list of replicates per group) as arrays, validated."""
    if isinstance(cells, np.ndarray) and cells.ndim == 2:
        cells = list(cells)
    try:
        out = [finite_series(c, f"group {i + 1}", 1) for i, c in enumerate(cells)]
    except TypeError:
        raise InputError("expected a list of groups, each a list of replicate results") from None
    if len(out) < minimum_cells:
        raise InputError(f"at least {minimum_cells} groups are needed, got {len(out)}")
    return out


# ----------------------------------------------------------------------------- Grubbs


@dataclass(frozen=True)
class GrubbsResult:
    """Outcome of a two-sided Grubbs test for one outlying value.

    Attributes
    ----------
    G:
        The statistic max|x_i − x̄|/s.
    G_crit:
        Its critical value at ``alpha``.
    index:
        Position (0-based) of the most distant value.
    is_outlier:
        True when ``G > G_crit``: flag the value, do not delete it.
    n, alpha, mean, sd:
        Sample size, significance level, mean and standard deviation of the values.
    """

    G: float
    G_crit: float
    index: int
    is_outlier: bool
    n: int
    alpha: float
    mean: float
    sd: float


def checked_alpha(alpha: float) -> float:
    a = float(alpha)
    if not 0.0 < a < 1.0:
        raise InputError(f"significance level must lie between 0 and 1, got {alpha!r}", field="alpha")
    return a


def grubbs_critical(n: int, alpha: float = 0.05) -> float:
    """Return the two-sided Grubbs critical value for ``n`` values at level ``alpha``.

    Parameters
    ----------
    n:
        Number of values (≥ 3).
    alpha:
        Significance level of the two-sided test (0.05 for a straggler, 0.01 for an outlier in
        ISO 5725-2 practice).

    Returns
    -------
    float
        ``(n−1)/√n · √(t²/(n−2+t²))`` with ``t`` the upper α/(2n) quantile of Student's t with
        n−2 degrees of freedom. It can never exceed (n−1)/√n (1.1547 at n = 3).
    """
    if int(n) != n or n < 3:
        raise InputError(f"the Grubbs test needs at least 3 values, got {n}")
    a = checked_alpha(alpha)
    t = float(sps.t.isf(a / (2 * n), n - 2))
    return (n - 1) / math.sqrt(n) * math.sqrt(t * t / (n - 2 + t * t))


def grubbs(values: Sequence[float] | np.ndarray, alpha: float = 0.05) -> GrubbsResult:
    """Test the most distant of ``values`` for being an outlier (two-sided Grubbs test).

    Parameters
    ----------
    values:
        At least 3 results.
    alpha:
        Significance level.

    Returns
    -------
    GrubbsResult
        With ``G = 0`` and no outlier when all values are equal.

    Raises
    ------
    InputError
        For fewer than 3 values or a value that is not a finite number.
    """
    x = finite_series(values, "Grubbs test", 3)
    mean = float(x.mean())
    sd = float(x.std(ddof=1))
    dev = np.abs(x - mean)
    idx = int(np.argmax(dev))
    G = float(dev[idx] / sd) if sd > 0 else 0.0
    crit = grubbs_critical(x.size, alpha)
    return GrubbsResult(G, crit, idx, G > crit, int(x.size), float(alpha), mean, sd)


# ------------------------------------------------------------------------- ISO 5725-2


@dataclass(frozen=True)
class Precision:
    """Repeatability and reproducibility of a study of p groups (ISO 5725-2 one-way analysis).

    Attributes
    ----------
    mean:
        General mean Σn_iȳ_i/Σn_i.
    s_r, s_L, s_R:
        Repeatability, between-group and reproducibility standard deviations.
    r, R:
        Repeatability and reproducibility limits, 2.8 s_r and 2.8 s_R.
    p:
        Number of groups.
    n_bar:
        The effective replicates per group [Σn_i − Σn_i²/Σn_i]/(p−1).
    n_total:
        Number of results.
    s_d:
        Standard deviation between cell means scaled by the replicates, √[Σn_i(ȳ_i−ȳ)²/(p−1)].
    dof_r:
        Degrees of freedom of s_r, Σ(n_i − 1).
    F, p_value:
        One-way analysis of variance: s_d²/s_r² and its upper-tail probability under no group
        effect (F distribution with p−1 and Σ(n_i−1) degrees of freedom).
    cell_means, cell_sds, cell_sizes:
        Per group (the SD is NaN for a group of one).
    """

    mean: float
    s_r: float
    s_L: float
    s_R: float
    r: float
    R: float
    p: int
    n_bar: float
    n_total: int
    s_d: float
    dof_r: int
    F: float
    p_value: float
    cell_means: tuple[float, ...]
    cell_sds: tuple[float, ...]
    cell_sizes: tuple[int, ...]


def iso5725(cells: Sequence[Sequence[float]]) -> Precision:
    """Estimate repeatability and reproducibility from groups of replicates (ISO 5725-2).

    Parameters
    ----------
    cells:
        One list of replicate results per group ("laboratory"); the groups may have different
        numbers of replicates. At least two groups, and at least one with two or more results.

    Returns
    -------
    Precision

    Raises
    ------
    InputError
        For fewer than two groups, an empty group, a non-finite value, or no replicates at all.
    """
    cs = cell_arrays(cells)
    n = np.array([c.size for c in cs], dtype=float)
    means = np.array([c.mean() for c in cs])
    p = len(cs)
    N = float(n.sum())
    dof_r = int(round(float((n - 1).sum())))
    if dof_r < 1:
        raise InputError("every group has a single result: repeatability needs replicates (two or more in a group)")
    ss_within = float(sum(((c - c.mean()) ** 2).sum() for c in cs))
    s_r2 = ss_within / dof_r
    grand = float((n * means).sum() / N)
    s_d2 = float((n * (means - grand) ** 2).sum() / (p - 1))
    n_bar = float((N - (n * n).sum() / N) / (p - 1))
    s_L2 = max(0.0, (s_d2 - s_r2) / n_bar)
    s_r = math.sqrt(s_r2)
    s_L = math.sqrt(s_L2)
    s_R = math.sqrt(s_L2 + s_r2)
    if s_r2 > 0:
        F = s_d2 / s_r2
        pv = float(sps.f.sf(F, p - 1, dof_r))
    else:
        F = math.inf if s_d2 > 0 else math.nan
        pv = 0.0 if s_d2 > 0 else math.nan
    sds = tuple(float(c.std(ddof=1)) if c.size > 1 else math.nan for c in cs)
    return Precision(
        mean=grand,
        s_r=s_r,
        s_L=s_L,
        s_R=s_R,
        r=LIMIT_FACTOR * s_r,
        R=LIMIT_FACTOR * s_R,
        p=p,
        n_bar=n_bar,
        n_total=int(N),
        s_d=math.sqrt(s_d2),
        dof_r=dof_r,
        F=F,
        p_value=pv,
        cell_means=tuple(float(m) for m in means),
        cell_sds=sds,
        cell_sizes=tuple(int(k) for k in n),
    )


def mandel_h_k(cells: Sequence[Sequence[float]]) -> tuple[np.ndarray, np.ndarray]:
    """Return Mandel's between-group statistic h and within-group statistic k of each group.

    ``h_i = (ȳ_i − m)/s_m`` with m and s_m the plain mean and SD of the cell means;
    ``k_i = s_i √p' / √(Σ s_j²)`` over the p' groups with replicates (NaN for a group of one).
    k assumes equal numbers of replicates (ISO 5725-2); with unequal numbers it is indicative.

    Parameters
    ----------
    cells:
        One list of replicate results per group; at least two groups.

    Returns
    -------
    tuple of numpy.ndarray
        (h, k), one value per group. h is all zero when the cell means are equal, and k all zero
        when no group shows any scatter.
    """
    cs = cell_arrays(cells)
    means = np.array([c.mean() for c in cs])
    s_m = float(means.std(ddof=1))
    h = (means - means.mean()) / s_m if s_m > 0 else np.zeros(means.size)
    sds = np.array([c.std(ddof=1) if c.size > 1 else np.nan for c in cs])
    have = np.isfinite(sds)
    total = float(np.sum(sds[have] ** 2))
    if total > 0:
        k = sds * math.sqrt(int(have.sum())) / math.sqrt(total)
    else:
        k = np.where(have, 0.0, np.nan)
    return h, k


def mandel_h_critical(p: int, alpha: float = 0.05) -> float:
    """Return the critical value of Mandel's h for ``p`` groups at level ``alpha``.

    ``h = (p−1)t / √(p(t² + p − 2))`` with t the two-sided α quantile of Student's t with p−2
    degrees of freedom.
    """
    if int(p) != p or p < 3:
        raise InputError(f"Mandel's h needs at least 3 groups, got {p}")
    a = checked_alpha(alpha)
    t = float(sps.t.isf(a / 2, p - 2))
    return (p - 1) * t / math.sqrt(p * (t * t + p - 2))


def mandel_k_critical(p: int, n: int, alpha: float = 0.05) -> float:
    """Return the critical value of Mandel's k for ``p`` groups of ``n`` replicates at ``alpha``.

    ``k = √(p / (1 + (p−1)/F))`` with F the upper α quantile of the F distribution with n−1 and
    (p−1)(n−1) degrees of freedom.
    """
    if int(p) != p or p < 2 or int(n) != n or n < 2:
        raise InputError(f"Mandel's k needs at least 2 groups of at least 2 replicates, got p={p}, n={n}")
    a = checked_alpha(alpha)
    F = float(sps.f.isf(a, n - 1, (p - 1) * (n - 1)))
    return math.sqrt(p / (1.0 + (p - 1) / F))
