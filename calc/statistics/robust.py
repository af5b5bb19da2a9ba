"""Algorithm A of ISO 13528 (Annex C): a robust mean and standard deviation (docs/methods.md §6.1)."""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np

from calc.statistics.precision import finite_series

__all__ = ["RobustEstimate", "robust_mean_sd"]

#: Algorithm A constants (ISO 13528 Annex C; docs/methods.md §6.1): MAD → σ for normal data, the
#: winsorizing half-width in units of s*, and the correction of the SD of winsorized normal data.
_MAD_FACTOR = 1.483
_WINSOR = 1.5
_WINSOR_SD_FACTOR = 1.134


@dataclass(frozen=True)
class RobustEstimate:
    """Robust mean x* and standard deviation s* by Algorithm A (ISO 13528 Annex C)."""

    mean: float
    sd: float
    iterations: int
    converged: bool


def robust_mean_sd(
    values: Sequence[float] | np.ndarray, *, rtol: float = 1e-9, max_iterations: int = 500
) -> RobustEstimate:
    """Return the robust mean and standard deviation of ``values`` by Algorithm A.

    Start from x* = median and s* = 1.483·median|x_i − x*|; then repeat: winsorize the values to
    x* ± 1.5 s*, set x* to their mean and s* to 1.134 times their standard deviation, until
    neither changes by more than ``rtol`` relative (ISO 13528 asks for no change in the third
    significant figure; iterating to the fixed point is stricter).

    Parameters
    ----------
    values:
        At least 3 results.
    rtol, max_iterations:
        Stopping rule.

    Returns
    -------
    RobustEstimate
        ``sd`` is 0 when more than half the values are equal (s* starts at 0).
    """
    x = finite_series(values, "Algorithm A", 3)
    xs = float(np.median(x))
    ss = _MAD_FACTOR * float(np.median(np.abs(x - xs)))
    if ss == 0.0:
        return RobustEstimate(xs, 0.0, 0, True)
    for it in range(1, max_iterations + 1):
        d = _WINSOR * ss
        w = np.clip(x, xs - d, xs + d)
        new_x = float(w.mean())
        new_s = _WINSOR_SD_FACTOR * float(w.std(ddof=1))
        done = abs(new_x - xs) <= rtol * max(abs(new_x), ss) and abs(new_s - ss) <= rtol * ss
        xs, ss = new_x, new_s
        if done:
            return RobustEstimate(xs, ss, it, True)
    return RobustEstimate(xs, ss, max_iterations, False)
