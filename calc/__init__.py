"""cupcal calculation library: coffee-cup solution calorimetry with honest uncertainty.

Pure calculation code (no web framework, no database). The public entry point is
:func:`calc.analysis.analyze_run`; the command line lives in :mod:`calc.cli.main`.
"""

from __future__ import annotations

__version__ = "0.1.0"

__all__ = ["__version__"]
