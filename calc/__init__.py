"""cupcal calculation library: coffee-cup solution calorimetry with honest uncertainty.

Pure calculation code (no web framework, no database). The public surface is small and loaded
lazily, so that ``import calc`` costs nothing until a name is used::

    from calc import analyze_run, InputError
    analysis = analyze_run("run.toml")

The command line lives in :mod:`calc.cli`; the sub-packages are ``calc.io`` (quantity text,
readings, run files), ``calc.deltat`` (periods, drift fits, corrected-ΔT methods),
``calc.uncertainty`` (measurement models, GUM, Monte Carlo), ``calc.refdata`` (formulas,
reference data, property models, hazards, comparison), ``calc.statistics`` (class precision,
replicates, control charts) and ``calc.simulation`` (runs with a known truth).
"""

from __future__ import annotations

import importlib
from typing import Any

__version__ = "0.1.0"

#: public name → the module that defines it (imported on first use)
_PUBLIC: dict[str, str] = {
    "analyze_run": "calc.analysis",
    "Analysis": "calc.result",
    "CupcalError": "calc.errors",
    "InputError": "calc.errors",
    "AnalysisError": "calc.errors",
    "METHODS": "calc.deltat.registry",
    "DEFAULT_METHOD": "calc.deltat.base",
    "format_report": "calc.report",
    "to_record": "calc.report",
    "hess": "calc.refdata.hess",
    "plan_run": "calc.plan",
}

__all__ = ["__version__", *_PUBLIC]


def __getattr__(name: str) -> Any:
    module = _PUBLIC.get(name)
    if module is None:
        raise AttributeError(f"module 'calc' has no attribute {name!r}")
    value = getattr(importlib.import_module(module), name)
    globals()[name] = value
    return value


def __dir__() -> list[str]:
    return sorted(__all__)
