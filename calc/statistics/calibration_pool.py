"""Pool repeat calibrations of one calorimeter into the heat capacity in force.

The rule (documented for users in ``webapp/README.md``):

1. The candidates are given newest first (the caller picks the recent, approved ones).
2. Their inverse-variance weighted mean ``x̄ = Σ wᵢxᵢ / Σ wᵢ`` with ``wᵢ = 1/uᵢ²`` and the
   chi-square ``χ² = Σ wᵢ(xᵢ − x̄)²`` on ``n − 1`` degrees of freedom are computed.
3. The set is *consistent* when ``χ²`` does not exceed the ``level`` quantile (default 0.95) of
   the chi-square distribution with ``n − 1`` degrees of freedom. While it is not, the member
   with the largest normalised residual ``|xᵢ − x̄|/uᵢ`` is left out (on a tie, the older one)
   and the test is made again, down to a single member.
4. The pooled standard uncertainty is ``1/√Σwᵢ`` times the Birge ratio ``R_B = √(χ²/(n−1))``
   when ``R_B > 1`` (scatter larger than the stated uncertainties widens the interval; it is
   never narrowed).

Pure numpy/scipy; no database.
"""

from __future__ import annotations

import dataclasses
import math
from collections.abc import Sequence

from scipy import stats

from calc.errors import InputError

#: the chi-square quantile below which a set of calibrations counts as consistent
DEFAULT_LEVEL = 0.95


@dataclasses.dataclass(frozen=True)
class Pooled:
    """The pooled value, its standard uncertainty, and how it was reached."""

    value: float
    u: float
    members: tuple[int, ...]  # the candidates kept (their keys), newest first
    excluded: tuple[int, ...]  # left out as inconsistent with the rest, in the order they were left out
    chi2: float
    dof: int
    birge: float
    limit: float  # the chi-square quantile the kept set passed (nan for one member)

    def as_dict(self) -> dict[str, object]:
        """Return the pool as JSON-ready data."""
        return {
            "value": self.value,
            "u": self.u,
            "members": list(self.members),
            "excluded": list(self.excluded),
            "chi2": self.chi2,
            "dof": self.dof,
            "birge": self.birge,
            "limit": None if math.isnan(self.limit) else self.limit,
        }


def weighted_mean(values: Sequence[float], uncertainties: Sequence[float]) -> tuple[float, float, float]:
    """Return (x̄, 1/√Σw, χ²) of values with standard uncertainties (all positive and finite)."""
    w = [1.0 / (u * u) for u in uncertainties]
    total = math.fsum(w)
    mean = math.fsum(wi * x for wi, x in zip(w, values, strict=True)) / total
    chi2 = math.fsum(wi * (x - mean) ** 2 for wi, x in zip(w, values, strict=True))
    return mean, 1.0 / math.sqrt(total), chi2


def pool(candidates: Sequence[tuple[int, float, float]], level: float = DEFAULT_LEVEL) -> Pooled:
    """Pool ``(key, value, u)`` candidates, newest first, by the rule of this module.

    :raise InputError: no candidate, or an uncertainty that is not positive and finite
    """
    if not candidates:
        raise InputError("no calibration to pool", field="calibrations")
    for key, x, u in candidates:
        if not (math.isfinite(x) and math.isfinite(u) and u > 0):
            raise InputError(
                f"calibration {key}: expected a finite value with a positive standard uncertainty, got {x!r} ± {u!r}",
                field="calibrations",
            )
    kept = list(candidates)
    excluded: list[int] = []
    while True:
        mean, u_int, chi2 = weighted_mean([c[1] for c in kept], [c[2] for c in kept])
        dof = len(kept) - 1
        limit = float(stats.chi2.ppf(level, dof)) if dof > 0 else math.nan
        if dof == 0 or chi2 <= limit:
            break
        # the largest normalised residual; on a tie the older one (later in the newest-first list)
        worst = max(range(len(kept)), key=lambda i: (abs(kept[i][1] - mean) / kept[i][2], i))
        excluded.append(kept.pop(worst)[0])
    birge = math.sqrt(chi2 / dof) if dof > 0 else math.nan
    u = u_int * (birge if dof > 0 and birge > 1 else 1.0)
    return Pooled(mean, u, tuple(c[0] for c in kept), tuple(excluded), chi2, dof, birge, limit)


def moves_too_far(old: tuple[float, float], new: tuple[float, float], k: float) -> bool:
    """Return whether a value in force moving from ``old`` to ``new`` ((value, u) each) needs confirmation.

    It does when ``|new − old| > k·√(u_old² + u_new²)``.
    """
    (x0, u0), (x1, u1) = old, new
    return abs(x1 - x0) > k * math.hypot(u0, u1)
