"""Automatic feedback per group from its runs' budgets and flags, and the flags' meanings.

What every group would be told (the same largest uncertainty source, the same flag) is said once
for all groups; each group reads only what is specific to it (:func:`split_feedback`).
"""

from __future__ import annotations

from collections import Counter, defaultdict
from typing import TYPE_CHECKING

if TYPE_CHECKING:
    from webapp.services.dashboard_rows import Row

FLAGS: dict[str, str] = {
    "En": "|En| > 1 (the verdict against the reference)",
    "outlier": "Grubbs outlier in the section (α = 0.05)",
    "small-dT": "|ΔT| under 10 × the thermometer resolution",
    "drift": "large drift",
    "short-after": "short after period",
    "no-calibration": "no calibration of the calorimeter on record",
    "check": "a plausibility check flagged the run (not yet accepted by staff)",
    "overdue": "the calorimeter's calibration was overdue on the run's date",
}


_ADVICE: list[tuple[str, str]] = [
    (
        "calorimeter.heat_capacity",
        "calibrate the cup yourself (an electrical or mixing calibration, repeated) so its "
        "heat capacity is known better, or use more solution so the cup takes a smaller share of the heat",
    ),
    (
        "delta_t.fit",
        "record steady fore and after periods (3–5 minutes before mixing, 5–10 minutes after), keep the lid on "
        "and stir at a constant rate, so the drift lines are well defined",
    ),
    (
        "delta_t.resolution",
        "use a thermometer with a finer resolution, or more substance for a larger temperature change",
    ),
    ("delta_t.mixing_time", "note the exact time you add the substance (or pour), and add it in one go"),
    ("delta_t.method", "keep the temperature change moderate and the log long enough after the change"),
    (
        "mixture.specific_heat_capacity",
        "give the solution's specific heat capacity with a smaller uncertainty "
        "(a measured value, or leave it out so the property model supplies it)",
    ),
    ("mass", "weigh on a balance with a finer reading, or use a larger sample"),
    ("volume", "measure the volumes with a volumetric pipette or a burette instead of a measuring cylinder"),
    ("concentration", "use standardised solutions and state their concentration with its uncertainty"),
    ("density", "give the densities with a smaller uncertainty (or leave them to the property models)"),
    ("purity", "use a purer reagent or state its purity from the supplier's certificate"),
    ("heater", "measure the heater's voltage, current and time with better meters"),
    ("temperature", "read the second solution's temperature with the same calibrated thermometer just before pouring"),
]
_FLAG_ADVICE = {
    "En": "Your result differs from the reference value by more than the uncertainties explain (|En| > 1): check the "
    "masses, volumes and calorimeter constant you entered, and look for heat lost before the lid was on.",
    "outlier": "One of your results lies far from the rest of the section (Grubbs test): look for a mistake in that run "
    "before repeating it.",
    "small-dT": "Your temperature change was under 10 × the thermometer's resolution: use more substance or a finer "
    "thermometer.",
    "drift": "The temperature drifted strongly before or after the change: let the solutions reach room temperature "
    "first, use the lid and check that the stirrer does not heat.",
    "short-after": "The log after the change was too short: keep recording for at least 5 minutes after the temperature "
    "has settled.",
    "no-calibration": "The calorimeter you used has no calibration on record: calibrate it (or have it calibrated) and "
    "name it in the run file.",
    "check": "A plausibility check flagged a run: look at the run page's checks and correct what was entered wrongly. "
    "The run stays out of the section's statistics until staff accept it.",
    "overdue": "The calorimeter's calibration was overdue when you measured: have it calibrated, then re-analyze.",
}


def _advice(name: str) -> str:
    for key, text in _ADVICE:
        if name == key or name.startswith(key) or name.endswith("." + key) or key in name.split(".")[-1]:
            return text
    return "give this input with a smaller uncertainty"


def _feedback_items(members: list[Row]) -> list[tuple[tuple[str, ...], str, str]]:
    """Return a group's feedback as (key, what every group would read, what is specific to this group)."""
    items: list[tuple[tuple[str, ...], str, str]] = []
    tops = Counter(m.top_input for m in members if m.top_input)
    if tops:
        name, count = tops.most_common(1)[0]
        ex = next(m for m in members if m.top_input == name)
        shares = [m.top_share for m in members if m.top_input == name]
        label = ex.top_label or name
        items.append(
            (
                ("top", name),
                f"The largest part of the uncertainty came from the {label}. Next time: {_advice(name)}.",
                f"In {count} of your {len(members)} run(s) the largest part of the uncertainty came from the "
                f"{label} (about {100 * sum(shares) / len(shares):.0f} % of the variance). "
                f"Next time: {_advice(name)}.",
            )
        )
    flags = Counter(f for m in members for f in m.flags)
    for flag in FLAGS:
        if flags.get(flag):
            runs = ", ".join(f"#{m.run_id}" for m in members if flag in m.flags)
            items.append((("flag", flag), _FLAG_ADVICE[flag], f"{_FLAG_ADVICE[flag]} (run {runs})"))
    if not flags:
        items.append(
            (
                ("clean",),
                "No flags: the runs agree with the reference and with the section.",
                "No flags: your runs agree with the reference and with the section.",
            )
        )
    return items


def split_feedback(rows: list[Row]) -> tuple[list[str], dict[str, list[str]]]:
    """Return the feedback said to every group (once) and, per group, only what is specific to it.

    A point that every group of two or more gets (the same largest uncertainty source, the same
    flag) goes to the shared list in its general form; a group keeps only its own points. Withdrawn
    runs give no feedback.
    """
    by: dict[str, list[Row]] = defaultdict(list)
    for r in rows:
        if r.status != "withdrawn":
            by[r.group].append(r)
    per = {g: _feedback_items(m) for g, m in sorted(by.items())}
    shared: list[tuple[str, ...]] = []
    if len(per) >= 2:
        keys = [{k for k, _, _ in items} for items in per.values()]
        first = next(iter(per.values()))
        shared = [k for k, _, _ in first if all(k in ks for ks in keys)]
    common = [general for k, general, _ in next(iter(per.values()), []) if k in shared]
    out: dict[str, list[str]] = {}
    for group, items in per.items():
        own = [specific for k, _, specific in items if k not in shared]
        out[group] = own or ["Nothing beyond the points for every group above."]
    return common, out


def group_feedback(rows: list[Row]) -> dict[str, list[str]]:
    """Return plain-words feedback per group: only what is specific to it (see :func:`split_feedback`)."""
    return split_feedback(rows)[1]
