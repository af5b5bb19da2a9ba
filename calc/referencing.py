"""Attach the reference comparison and the safety cautions to an analyzed run (best effort).

A missing reference or hazard table never fails a run: the comparison and the cautions are
simply left empty.
"""

from __future__ import annotations

from functools import lru_cache
from typing import Any

from calc.errors import CupcalError
from calc.io.runfile import RunSpec
from calc.kinds import get_kind
from calc.result import Analysis

__all__ = ["attach_reference", "run_reference"]


def _reference_args(spec: RunSpec) -> tuple[str, str | None, str | None, str | None, str | None]:
    r = spec.sections.get("reaction", {})
    return (
        get_kind(spec.kind).compared_with,
        spec.get("solute", "formula") or r.get("limiting_reagent"),
        spec.get("acid", "formula"),
        spec.get("base", "formula"),
        spec.get("reference", "name"),
    )


def run_reference(spec: RunSpec) -> Any:
    """Return the reference value a run's result is compared with (None when there is none)."""
    try:
        return _reference(*_reference_args(spec))
    except CupcalError:  # an unknown reference name is reported by the comparison, not by a check
        return None


@lru_cache(maxsize=512)
def _cautions(formulas: tuple[str, ...]) -> list[Any]:
    # cached: a batch repeats the same few substances thousands of times
    try:
        from calc.refdata.hazards import cautions_for
    except ImportError:
        return []
    return cautions_for(list(formulas))


@lru_cache(maxsize=512)
def _reference(kind: str, formula: str | None, acid: str | None, base: str | None, name: str | None) -> Any:
    try:
        from calc.refdata.reference import find_reference
    except ImportError:
        return None
    return find_reference(kind, formula=formula, acid=acid, base=base, name=name)


def attach_reference(analysis: Analysis) -> None:
    """Attach the reference comparison and the cautions (best effort, never fails the run)."""
    spec = analysis.spec
    formulas = [spec.get(sec, "formula") for sec in ("solute", "acid", "base") if spec.get(sec, "formula") is not None]
    r = spec.sections.get("reaction", {})
    if r.get("limiting_reagent"):
        formulas.append(r["limiting_reagent"])
    analysis.cautions = _cautions(tuple(formulas))
    if analysis.main != "molar_enthalpy":
        return
    try:
        from calc.refdata.comparison import compare
    except ImportError:
        return
    ref = _reference(*_reference_args(spec))
    if ref is None:
        return
    v = analysis.gum.values["molar_enthalpy"]
    analysis.comparison = compare(
        v,
        analysis.gum.expanded_uncertainty,
        ref,
        molality=analysis.model.molality,
        T_K=analysis.model.reference_temperature or 298.15,
    )
