"""Cochran's test for the largest within-group variance (ISO 5725-2; docs/methods.md §6.3).

C = s²_max/Σs_i², critical value ``1/(1+(p−1)/F)`` with F the upper α/p quantile of the F distribution
(:mod:`scipy.stats`). It flags; it never deletes a result.
"""

from __future__ import annotations

from collections import Counter
from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np
from scipy import stats as sps

from calc.errors import InputError
from calc.statistics.precision import cell_arrays, checked_alpha

__all__ = ["CochranResult", "cochran", "cochran_critical"]


@dataclass(frozen=True)
class CochranResult:
    """Outcome of Cochran's test for the largest within-group variance.

    ``n`` is the number of replicates the critical value uses: that of most groups (ISO 5725-2
    practice when the numbers differ).
    """

    C: float
    C_crit: float
    index: int
    is_outlier: bool
    p: int
    n: int
    alpha: float


def cochran_critical(p: int, n: int, alpha: float = 0.05) -> float:
    """Return Cochran's critical value for ``p`` groups of ``n`` replicates at ``alpha``.

    ``C = 1/(1 + (p−1)/F)`` with F the upper α/p quantile of the F distribution with n−1 and
    (p−1)(n−1) degrees of freedom (the usual closed form).
    """
    if int(p) != p or p < 2 or int(n) != n or n < 2:
        raise InputError(f"Cochran's test needs at least 2 groups of at least 2 replicates, got p={p}, n={n}")
    a = checked_alpha(alpha)
    F = float(sps.f.isf(a / p, n - 1, (p - 1) * (n - 1)))
    return 1.0 / (1.0 + (p - 1) / F)


def cochran(cells: Sequence[Sequence[float]], alpha: float = 0.05) -> CochranResult:
    """Test the largest within-group variance (Cochran's C = s²_max / Σ s_i²).

    Groups of a single result are left out. Raises :class:`InputError` when fewer than two
    groups have replicates or no group shows any scatter.
    """
    all_cells = cell_arrays(cells)
    idx_map = [i for i, c in enumerate(all_cells) if c.size > 1]
    cs = [all_cells[i] for i in idx_map]
    if len(cs) < 2:
        raise InputError("Cochran's test needs at least two groups with two or more results")
    var = np.array([c.var(ddof=1) for c in cs])
    total = float(var.sum())
    if total <= 0:
        raise InputError("Cochran's test: no group shows any scatter")
    j = int(np.argmax(var))
    counts = Counter(c.size for c in cs)
    n = max(counts, key=lambda k: (counts[k], k))
    C = float(var[j] / total)
    crit = cochran_critical(len(cs), n, alpha)
    return CochranResult(C, crit, idx_map[j], C > crit, len(cs), int(n), float(alpha))
