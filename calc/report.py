"""Turn an :class:`calc.analysis.Analysis` into a readable report or a JSON record.

All rounding of results for people happens here (two significant digits of the
uncertainty, the value to the same decimal place), so the command line and the
web app show the same numbers.
"""

from __future__ import annotations

import math
from typing import Any

from calc.analysis import Analysis

__all__ = ["to_record", "error_record", "format_report", "format_value", "TOP_BUDGET_LINES"]

TOP_BUDGET_LINES = 5

_KIND_TITLES = {
    "dissolution": "Enthalpy of solution",
    "neutralization": "Enthalpy of neutralization",
    "reaction": "Enthalpy of reaction",
    "electrical-calibration": "Electrical calibration",
    "mixing-calibration": "Calibration by mixing warm and cool water",
}


def _num(x: float) -> float | None:
    return float(x) if math.isfinite(x) else None


def _qty(analysis: Analysis, key: str) -> dict[str, Any]:
    v, u, unit = analysis.value(key)
    return {"value": _num(v), "standard_uncertainty": _num(u), "unit": unit}


def to_record(analysis: Analysis, input_path: str) -> dict[str, Any]:
    """Return the JSON record of one analysed run (the keys of the public format)."""
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
        "periods": {"fore_s": list(analysis.periods.fore), "after_s": list(analysis.periods.after),
                    "main_end_s": _num(analysis.periods.main_end)},
        "rejected_readings": [dict(r) for r in analysis.rejected],
        "gaps_s": [list(g) for g in analysis.gaps],
        "warnings": list(analysis.warnings),
    }


def _mixing_record(analysis: Analysis) -> dict[str, Any]:
    p = analysis.periods
    return {"value": _num(p.mixing_time), "standard_uncertainty": _num(p.u_mixing_time), "unit": "s",
            "detected": bool(p.mixing_time_detected)}


def error_record(input_path: str, message: str) -> dict[str, Any]:
    """Return the JSON record of a run that could not be analysed."""
    return {"input": input_path, "error": message}


def _decimals(u: float, sig: int = 2) -> int:
    if u <= 0 or not math.isfinite(u):
        return 4
    return max(0, sig - 1 - math.floor(math.log10(u)))


def format_value(value: float, u: float, unit: str, sig: int = 2) -> str:
    """Return ``value ± u unit`` rounded to ``sig`` significant digits of ``u``."""
    d = _decimals(u, sig)
    return f"{value:.{d}f} ± {u:.{d}f} {unit}"


def format_report(analysis: Analysis, input_path: str) -> str:
    """Return the human-readable report of one run."""
    spec = analysis.spec
    lines: list[str] = []
    title = _KIND_TITLES.get(spec.kind, spec.kind)
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
        lines.append(f"mixing time: {p.mixing_time:.1f} ± {p.u_mixing_time:.1f} s, detected from the log "
                     "(give mixing_time in the run file if you noted it)")
    if analysis.rejected:
        lines.append("readings rejected as spikes (left out of every fit and of the integral):")
        for r in analysis.rejected[:20]:
            where = f"line {r['line']}" if r.get("line") is not None else "—"
            lines.append(f"  {where}: {r['time_s']:g} s, {r['temperature_K'] - 273.15:.4g} °C")
        if len(analysis.rejected) > 20:
            lines.append(f"  … {len(analysis.rejected) - 20} more")
    lines.append(f"method: {dt.method}")
    lines.append("")
    v, u, unit = analysis.value("corrected_delta_t")
    lines.append(f"  corrected ΔT      {format_value(v, u, unit)}")
    v, u, unit = analysis.value("heat")
    lines.append(f"  heat              {format_value(v, u, unit)}")
    main = analysis.main
    v, u, unit = analysis.value(main)
    g = analysis.gum
    label = "ΔH" if main == "molar_enthalpy" else "C_cal"
    d = _decimals(g.expanded_uncertainty)
    dof = "∞" if not math.isfinite(g.dof_eff) else (f"{g.dof_eff:.0f}" if g.dof_eff < 1e4 else "> 10⁴")
    lines.append(
        f"  {label:<17} {v:.{d}f} ± {g.expanded_uncertainty:.{d}f} {unit}  "
        f"(U at 95 %, k = {g.coverage_factor:.2f}, ν_eff = {dof}; u_c = {u:.{_decimals(u)}f} {unit})"
    )
    if analysis.model.amount_note:
        lines.append(f"                    {analysis.model.amount_note}")
    if analysis.model.reference_temperature:
        t_ref = analysis.model.reference_temperature - 273.15
        mol = analysis.model.molality
        extra = f", final molality {mol:.3g} mol/kg" if mol else ""
        lines.append(f"                    at {t_ref:.2f} °C{extra}")
    mc = analysis.monte_carlo
    if mc is not None:
        verdict = "agrees with" if mc.agrees else "DIFFERS from"
        lines.append(
            f"  Monte Carlo       95 % interval [{mc.low:.{d}f}, {mc.high:.{d}f}] {unit} "
            f"({mc.trials} trials) {verdict} the GUM interval"
        )
    lines.append("")
    lines.append("uncertainty budget (largest first):")
    lines.append(f"  {'input':<46} {'value':>12} {'u':>10} {'share':>7}")
    for b in g.budget[:TOP_BUDGET_LINES]:
        if b.share <= 0:
            continue
        lines.append(
            f"  {b.label[:46]:<46} {b.value:>12.6g} {b.standard_uncertainty:>10.3g} {100 * b.share:>6.1f}%"
        )
    rest = [b for b in g.budget[TOP_BUDGET_LINES:] if b.share > 0]
    if rest:
        lines.append(f"  … {len(rest)} more inputs, {100 * sum(b.share for b in rest):.1f} % together")
    cmp_ = analysis.comparison
    if cmp_ is not None:
        lines.append("")
        ref = cmp_.reference
        lines.append(
            f"reference: {ref.value:.2f} ± {ref.u:.2f} {ref.unit} ({ref.quantity}, "
            f"{ref.temperature_K - 273.15:.2f} °C) — {ref.source}"
        )
        verdict = "satisfactory" if cmp_.satisfactory else "NOT satisfactory"
        lines.append(
            f"  difference {cmp_.difference:+.2f} {ref.unit} ({100 * cmp_.relative_difference:+.1f} %), "
            f"En = {cmp_.En:.2f} ({verdict}, |En| ≤ 1)"
        )
        for n in cmp_.notes:
            lines.append(f"  note: {n}")
    props = [
        (k, v) for k, v in analysis.properties.values.items() if v[3] != "run file"
    ]
    if props:
        lines.append("")
        lines.append("properties not in the run file:")
        for k, (val, unc, unit, src) in props:
            lines.append(f"  {k}: {format_value(val, unc, unit)} ({src})")
    if analysis.warnings:
        lines.append("")
        lines.append("warnings:")
        for w in analysis.warnings:
            lines.append(f"  ! {w}")
    lines.append("")
    lines.extend(format_cautions(analysis))
    return "\n".join(lines)


def format_cautions(analysis: Analysis) -> list[str]:
    """Return the safety lines for the substances of a run."""
    out = ["safety:"]
    try:
        from calc.hazards import general_caution
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
    if analysis.spec.kind in ("electrical-calibration",):
        out.append("  mains-free low-voltage supply only; keep the heater immersed while it is on")
    if analysis.spec.kind in ("mixing-calibration",):
        out.append("  hot water scalds: handle warm water with care")
    out.append(f"  {general}")
    return out
