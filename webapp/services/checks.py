"""Plausibility checks of stored results: which runs are flagged, and how to say why.

calc's :mod:`calc.checks` gives each result a list of ``{"code", "severity", "message",
"value"}``; :class:`webapp.models.Result` stores it in ``checks``. A run whose current result
carries a check of severity "warning" is *flagged*: it is marked on the run page, in the runs
list and on the dashboard, and it is left out of section statistics, Grubbs tests and
control-chart baselines (until staff accept it: the review screens decide that).
"""

from __future__ import annotations

from collections.abc import Iterable
from typing import Any

__all__ = ["flagged_checks", "run_flagged", "flag_text", "history_of"]


def flagged_checks(checks: Iterable[Any] | None) -> list[dict[str, Any]]:
    """Return the checks of severity "warning" from a stored checks list (None: no checks)."""
    return [c for c in (checks or []) if isinstance(c, dict) and c.get("severity") == "warning"]


def run_flagged(result: Any) -> bool:
    """Tell whether a stored result carries a warning check (a result may be None: not flagged)."""
    return result is not None and bool(flagged_checks(getattr(result, "checks", None)))


def flag_text(checks: Iterable[Any] | None) -> str:
    """Return the warning checks' messages as one line of text (for tables and exports)."""
    return "; ".join(str(c.get("message", "")) for c in flagged_checks(checks))


def history_of(calorimeter: Any, *, leave_out_results: Iterable[int] = ()) -> list[tuple[float, float]]:
    """Return a calorimeter's calibrations as (value, u) in J/K, leaving out those of the given results."""
    if calorimeter is None:
        return []
    skip = set(leave_out_results)
    return [
        (c.heat_capacity_j_k, c.heat_capacity_j_k_std)
        for c in calorimeter.calibrations
        if c.result_id is None or c.result_id not in skip
    ]
