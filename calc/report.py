"""Turn an :class:`calc.result.Analysis` into a readable report or a JSON record.

Every number is printed through :mod:`calc.formatting` (two significant digits of the
uncertainty, the value to the same decimal place, units always), the formatter the web pages
and the exports use too, so every surface shows the same numbers.
"""

from __future__ import annotations

import math
from typing import Any

from calc import formatting as fmt
from calc.deltat.constructions import SharedFitConstruction
from calc.kinds import get_kind
from calc.refdata.comparison import verdict, verdict_lines, verdict_record
from calc.result import Analysis

__all__ = ["to_record", "error_record", "format_report", "format_value", "TOP_BUDGET_LINES"]

TOP_BUDGET_LINES = 5


def _num(x: float) -> float | None:
    return float(x) if math.isfinite(x) else None


def _qty(analysis: Analysis, key: str) -> dict[str, Any]:
    v, u, unit = analysis.value(key)
    return {"value": _num(v), "standard_uncertainty": _num(u), "unit": unit}


def to_record(analysis: Analysis, input_path: str) -> dict[str, Any]:
    """Return the JSON record of one analyzed run (the keys of the public format)."""
    main = analysis.main
    return {
        "input": input_path,
        "kind": analysis.kind,
        "corrected_delta_t": _qty(analysis, "corrected_delta_t"),
        "heat": _qty(analysis, "heat"),
        main: _qty(analysis, main),
        "expanded_uncertainty": _num(analysis.gum.expanded_uncertainty),
        "coverage_factor": _num(analysis.gum.coverage_factor),
        "method": analysis.delta_t.method,
        "budget": [b.as_dict() for b in analysis.gum.budget],
        "mixing_time": _mixing_record(analysis),
        "periods": {
            "fore_s": list(analysis.periods.fore),
            "after_s": list(analysis.periods.after),
            "main_end_s": _num(analysis.periods.main_end),
        },
        "rejected_readings": [dict(r) for r in analysis.rejected],
        "gaps_s": [list(g) for g in analysis.gaps],
        "warnings": list(analysis.warnings),
        "checks": [c.as_dict() for c in analysis.checks],
        **(
            {"heat_capacity_total": _qty(analysis, "heat_capacity_total")}
            if "heat_capacity_total" in analysis.gum.values
            else {}
        ),
        "comparison": verdict_record(verdict(analysis.comparison)),
    }


def _mixing_record(analysis: Analysis) -> dict[str, Any]:
    p = analysis.periods
    return {
        "value": _num(p.mixing_time),
        "standard_uncertainty": _num(p.u_mixing_time),
        "unit": "s",
        "detected": bool(p.mixing_time_detected),
    }


def error_record(input_path: str, message: str) -> dict[str, Any]:
    """Return the JSON record of a run that could not be analyzed."""
    return {"input": input_path, "error": message}


def format_value(value: float, u: float, unit: str, sig: int = 2) -> str:
    """Return ``value ± u unit`` rounded to ``sig`` significant digits of ``u`` (calc.formatting)."""
    return fmt.measured(value, u, unit, digits=sig)


def entered_units(analysis: Analysis) -> dict[str, str]:
    """Return the unit each run-file field was written in, by dotted name ("warm_water.temperature")."""
    out: dict[str, str] = {}
    for section, fields in analysis.spec.sections.items():
        if not isinstance(fields, dict):
            continue
        for name, field in fields.items():
            unit = getattr(field, "unit", None)
            if isinstance(unit, str):
                out[f"{section}.{name}"] = unit
    return out


def format_input(value: float, u: float, unit: str, entered: str | None) -> str:
    """Return a budget input ± u with its unit; an absolute temperature in the unit entered."""
    if unit == "K" and entered and fmt.unit_text(entered) in ("°C", "°F"):
        return fmt.temperature(value, u, entered)
    return fmt.measured(value, u, unit)


def format_report(analysis: Analysis, input_path: str) -> str:
    """Return the human-readable report of one run."""
    lines = _head_lines(analysis, input_path)
    lines.append("")
    lines.extend(_result_lines(analysis))
    lines.append("")
    lines.extend(_budget_lines(analysis))
    lines.extend(_reference_lines(analysis))
    lines.extend(_property_lines(analysis))
    if analysis.checks:
        lines.append("")
        lines.append("plausibility checks:")
        for c in analysis.checks:
            lines.append(f"  {'!' if c.severity == 'warning' else 'i'} [{c.code}] {c.message}")
    if analysis.warnings:
        lines.append("")
        lines.append("warnings:")
        for w in analysis.warnings:
            lines.append(f"  ! {w}")
    lines.append("")
    lines.extend(format_cautions(analysis))
    return "\n".join(lines)


def _head_lines(analysis: Analysis, input_path: str) -> list[str]:
    """The heading, who and where, the periods, rejected readings, the method and other events."""
    spec = analysis.spec
    lines: list[str] = []
    title = get_kind(spec.kind).title
    info = spec.sections.get("info", {})
    head = f"{input_path} — {title}"
    if info.get("title"):
        head += f": {info['title']}"
    lines.append(head)
    lines.append("=" * min(len(head), 78))
    who = ", ".join(f"{k} {info[k]}" for k in ("operator", "bench", "date") if info.get(k))
    if who:
        lines.append(who)
    p = analysis.periods
    dt = analysis.delta_t
    mix = "detected" if p.mixing_time_detected else "from run file"
    lines.append(
        f"periods: fore {p.fore[0]:.0f}–{p.fore[1]:.0f} s, mixing at {p.mixing_time:.1f} s ({mix}), "
        f"after {p.after[0]:.0f}–{p.after[1]:.0f} s"
    )
    if p.mixing_time_detected:
        lines.append(
            f"mixing time: {p.mixing_time:.1f} ± {p.u_mixing_time:.1f} s, detected from the log "
            "(give mixing_time in the run file if you noted it)"
        )
    if analysis.rejected:
        lines.append("readings rejected as spikes (left out of every fit and of the integral):")
        for r in analysis.rejected[:20]:
            where = f"line {r['line']}" if r.get("line") is not None else "—"
            lines.append(f"  {where}: {r['time_s']:g} s, {r['temperature_K'] - 273.15:.4g} °C")
        if len(analysis.rejected) > 20:
            lines.append(f"  … {len(analysis.rejected) - 20} more")
    lines.append(f"method: {dt.method}")
    shared = dt.construction if isinstance(dt.construction, SharedFitConstruction) else None
    events = shared.events if shared else ()
    d_index = next((i for i, ev in enumerate(events) if ev["name"] == "dissolution"), 0)
    for i, ev in enumerate(events):
        if ev["name"] != "dissolution":
            assert shared is not None  # the events are the shared fit's
            lines.append(
                f"{ev['name'].replace('_', ' ')}: on at {ev['start']:.1f} s, drift window from "
                f"{ev['main_end']:.0f} s; ΔT {ev['delta_t']:.4f} K (u from the shared drift fits "
                f"{ev['u_fit']:.2g} K, correlation with the dissolution's "
                f"{shared.correlation[d_index][i]:+.2f})"
            )
    return lines


def _result_lines(analysis: Analysis) -> list[str]:
    """ΔT, the heat, the main result ± U with k and ν_eff, its basis, and the Monte Carlo check."""
    lines: list[str] = []
    v, u, unit = analysis.value("corrected_delta_t")
    lines.append(f"  corrected ΔT      {format_value(v, u, unit)}")
    v, u, unit = analysis.value("heat")
    lines.append(f"  heat              {format_value(v, u, unit)}")
    if "heat_capacity_total" in analysis.gum.values:
        v, u, unit = analysis.value("heat_capacity_total")
        lines.append(f"  C (cup+contents)  {format_value(v, u, unit)}  from the heater")
    main = analysis.main
    v, u, unit = analysis.value(main)
    g = analysis.gum
    label = "ΔH" if main == "molar_enthalpy" else "C_cal"
    U = g.expanded_uncertainty
    lines.append(
        f"  {label:<17} {fmt.measured(v, U, unit)}  (U at 95 %, k = {fmt.fixed(g.coverage_factor, 2)}, "
        f"ν_eff = {fmt.dof(g.dof_eff)}; u_c = {fmt.uncertainty(u, unit)})"
    )
    if analysis.model.amount_note:
        lines.append(f"                    {analysis.model.amount_note}")
    if analysis.model.reference_temperature:
        t_ref = analysis.model.reference_temperature - 273.15
        mol = analysis.model.molality
        extra = f", final molality {fmt.number(mol, 'mol/kg')}" if mol else ""
        lines.append(f"                    at {fmt.fixed(t_ref, 2, '°C')}{extra}")
    mc = analysis.monte_carlo
    if mc is not None:
        mc_word = "agrees with" if mc.agrees else "DIFFERS from"
        lines.append(
            f"  Monte Carlo       95 % interval {fmt.interval(mc.low, mc.high, unit, u=U)} "
            f"({mc.trials} trials) {mc_word} the GUM interval"
        )
    return lines


def _budget_lines(analysis: Analysis) -> list[str]:
    """The largest lines of the uncertainty budget, the rest summed."""
    g = analysis.gum
    lines = ["uncertainty budget (largest first):"]
    entered = entered_units(analysis)
    lines.append(f"  {'share':>7}  {'value ± u':<30} input")
    for b in g.budget[:TOP_BUDGET_LINES]:
        if b.share <= 0:
            continue
        shown = format_input(b.value, b.standard_uncertainty, b.unit, entered.get(b.name))
        lines.append(f"  {fmt.percent(b.share):>7}  {shown:<30} {b.label or b.name}")
    rest = [b for b in g.budget[TOP_BUDGET_LINES:] if b.share > 0]
    if rest:
        lines.append(f"  … {len(rest)} more inputs, {fmt.percent(sum(b.share for b in rest))} together")
    return lines


def _reference_lines(analysis: Analysis) -> list[str]:
    """The reference as published and the verdict of the comparison (none: no lines)."""
    cmp_ = analysis.comparison
    if cmp_ is None:
        return []
    ref = cmp_.reference
    lines = [
        "",
        f"reference as published: {fmt.measured(ref.value, ref.u, ref.unit)} ({ref.quantity}, "
        f"{fmt.temperature(ref.temperature_K)}) — {ref.source}",
    ]
    v = verdict(cmp_)
    if v is not None:
        lines.extend(f"  {line}" for line in verdict_lines(v))
    for n in cmp_.notes:
        lines.append(f"  note: {n}")
    return lines


def _property_lines(analysis: Analysis) -> list[str]:
    """The properties the model took from the property models, with their sources."""
    props = [(k, v) for k, v in analysis.properties.values.items() if v[3] != "run file"]
    if not props:
        return []
    lines = ["", "properties not in the run file:"]
    for k, (val, unc, unit, src) in props:
        lines.append(f"  {k}: {format_value(val, unc, unit)} ({src})")
    return lines


def format_cautions(analysis: Analysis) -> list[str]:
    """Return the safety lines for the substances of a run."""
    out = ["safety:"]
    try:
        from calc.refdata.hazards import general_caution
    except ImportError:  # pragma: no cover - hazards module ships with calc
        general = (
            "Wear eye protection. Follow your lab's safety rules, local regulations and the supplier's "
            "safety data sheet."
        )
    else:
        general = general_caution()
    for c in analysis.cautions:
        if c.substance == "general":
            continue  # printed once, last
        statements = "; ".join(c.hazard_statements) if c.hazard_statements else "no GHS classification on file"
        pict = f" [{', '.join(c.pictograms)}]" if c.pictograms else ""
        sig = f"{c.signal_word}: " if c.signal_word else ""
        out.append(f"  {c.substance}: {sig}{statements}{pict}")
        if c.note:
            out.append(f"    {c.note}")
    out.extend(f"  {caution}" for caution in get_kind(analysis.spec.kind).procedure_cautions)
    out.append(f"  {general}")
    return out
