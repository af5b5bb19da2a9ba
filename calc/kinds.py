"""The run kinds: one frozen :class:`RunKind` per kind, the one place every layer asks about a kind.

Each entry names the kind, its one title (the report's heading and the web form's), the sections
a run file of the kind must have, whether a second solution is poured in, its main output, and
where the code of the kind lives: the *hooks*, ``"module:attribute"`` paths imported on first use
(so this module imports nothing of calc and sits at the bottom of the layers; a hook may live in
any layer, and the layer that calls it is the one that imports it):

``model``
    ``(spec, dt, props) -> ModelSpec``, the measurement model (:mod:`calc.uncertainty.measurement_models`).
``properties``
    ``(spec, props, T0, pm) -> None``, adds the densities the model needs (:mod:`calc.composition`).
``composition``
    ``(spec, props) -> (solutes g, water g)``, the final solution (:mod:`calc.composition`).
``warnings``
    ``(spec) -> list[str]``, the kind's own warnings (:mod:`calc.run_warnings`).
``analyze``
    replaces the whole single-event analysis (the in-situ kind, :mod:`calc.insitu_analysis`).
``reference``
    ``(formula=, acid=, base=, equation=) -> ReferenceValue | None``, the published value a result is
    compared with (:mod:`calc.refdata.reference`).
``plan_sections``
    ``(p, amount, measured, T0, u_read) -> (sections, substances)``, the planned amounts
    (:mod:`calc.plan_kinds`); a kind without it cannot be planned.
``simulate``
    the simulator of one run with a known truth (:mod:`calc.simulation`).
``scenario``
    ``(draw) -> SimulatedRun``, one run with parameters drawn from docs/methods.md §7.2
    (:mod:`calc.simulation.scenarios`).

Adding a kind: one module with its hooks, and one entry in :data:`REGISTRY` (DEVELOPERS.md,
"Adding a run kind").
"""

from __future__ import annotations

import importlib
from collections.abc import Callable, Mapping
from dataclasses import dataclass, field
from types import MappingProxyType
from typing import Any, cast

__all__ = [
    "RunKind",
    "REGISTRY",
    "get_kind",
    "kind_names",
    "calibration_kinds",
    "plannable_kinds",
    "CALIBRATION_OUTPUT",
]

#: The main output of a calibration: the calorimeter's heat capacity.
CALIBRATION_OUTPUT = "calorimeter_heat_capacity"


@dataclass(frozen=True)
class RunKind:
    """One kind of run and where its code lives."""

    name: str
    title: str
    summary: str  # one sentence: what a run of this kind measures
    required_sections: tuple[str, ...]
    main_output: str
    main_unit: str
    two_solution: bool = False  # a second solution is poured in at the mixing time
    #: the after period starts once ``[heater]`` is off (its ``duration`` after the mixing time)
    timed_heater: bool = False
    #: the kind whose reference values this kind's result is compared with (default: its own)
    reference_kind: str | None = None
    #: cautions of the procedure itself, printed with the substances' (report, plan)
    procedure_cautions: tuple[str, ...] = ()
    #: planning: the (section, field) amounts scaled together, and a typical release time constant (s)
    plan_scaled: tuple[tuple[str, str], ...] = ()
    release_s: float = 60.0
    hooks: Mapping[str, str] = field(default_factory=dict)

    def __post_init__(self) -> None:
        object.__setattr__(self, "hooks", MappingProxyType(dict(self.hooks)))

    @property
    def is_calibration(self) -> bool:
        """True when the run measures the calorimeter's heat capacity."""
        return self.main_output == CALIBRATION_OUTPUT

    @property
    def is_two_solution(self) -> bool:
        """True when a second solution is poured in (two drift lines meet at the mixing time)."""
        return self.two_solution

    @property
    def needs_heat_capacity(self) -> bool:
        """True when the model needs the calorimeter's heat capacity (``[calorimeter]`` is required)."""
        return "calorimeter" in self.required_sections

    @property
    def plannable(self) -> bool:
        """True when ``cupcal plan`` and the Plan page can plan a run of this kind."""
        return "plan_sections" in self.hooks

    @property
    def compared_with(self) -> str:
        """The kind whose reference values this kind's result is compared with."""
        return self.reference_kind or self.name

    def has(self, hook: str) -> bool:
        """True when the kind provides ``hook``."""
        return hook in self.hooks

    def hook(self, name: str) -> Callable[..., Any] | None:
        """Return the callable of hook ``name`` (imported on first use), or None when the kind has none."""
        target = self.hooks.get(name)
        if target is None:
            return None
        module, _, attribute = target.partition(":")
        return cast("Callable[..., Any] | None", getattr(importlib.import_module(module), attribute))


_MM = "calc.uncertainty.measurement_models"
_CO = "calc.composition"
_RW = "calc.run_warnings"
_PK = "calc.plan_kinds"
_SK = "calc.simulation.kinds"
_SC = "calc.simulation.scenarios"
_RF = "calc.refdata.reference"

_HEATER_CAUTION = "mains-free low-voltage supply only; keep the heater immersed while it is on"

#: optional hooks named after the kind's stem: hook → (module, suffix of ``{stem}_{suffix}``)
_STEM_HOOKS = {"composition": (_CO, "composition"), "warnings": (_RW, "warnings"), "reference": (_RF, "lookup")}


def _hooks(stem: str, simulated: str, properties: str, *optional: str) -> dict[str, str]:
    """Return the hooks of a plannable kind, whose functions follow one naming rule: ``{stem}_model``,
    ``{stem}_sections``, ``simulate_{simulated}``, ``draw_{simulated}``, ``properties`` as given and each
    ``optional`` hook (of ``_STEM_HOOKS``) as ``{stem}_{suffix}``."""
    hooks = {
        "model": f"{_MM}:{stem}_model",
        "properties": f"{_CO}:{properties}",
        "plan_sections": f"{_PK}:{stem}_sections",
        "simulate": f"{_SK}:simulate_{simulated}",
        "scenario": f"{_SC}:draw_{simulated}",
    }
    for name in optional:
        module, suffix = _STEM_HOOKS[name]
        hooks[name] = f"{module}:{stem}_{suffix}"
    return hooks


REGISTRY: Mapping[str, RunKind] = MappingProxyType(
    {
        k.name: k
        for k in (
            RunKind(
                "dissolution",
                "Dissolution",
                "A solid dissolved in water: ΔH per mole of solute.",
                ("calorimeter", "thermometer", "water", "solute"),
                "molar_enthalpy",
                "kJ/mol",
                plan_scaled=(("solute", "mass"),),
                release_s=60.0,
                hooks=_hooks("dissolution", "dissolution", "water_properties", "composition", "warnings", "reference"),
            ),
            RunKind(
                "neutralization",
                "Neutralization",
                "A base poured into an acid: ΔH per mole of water formed.",
                ("calorimeter", "thermometer", "acid", "base"),
                "molar_enthalpy",
                "kJ/mol",
                two_solution=True,
                plan_scaled=(("acid", "concentration"), ("base", "concentration")),
                release_s=5.0,
                hooks=_hooks(
                    "neutralization", "neutralization", "stock_properties", "composition", "warnings", "reference"
                ),
            ),
            RunKind(
                # the heater's energy spreads over its time on
                "electrical-calibration",
                "Electrical calibration",
                "A heater's known energy: the calorimeter's heat capacity.",
                ("thermometer", "water", "heater"),
                CALIBRATION_OUTPUT,
                "J/K",
                timed_heater=True,
                procedure_cautions=(_HEATER_CAUTION,),
                plan_scaled=(("heater", "duration"),),
                release_s=60.0,
                hooks=_hooks("electrical", "electrical_calibration", "water_properties"),
            ),
            RunKind(
                # a poured warm water mixes in seconds
                "mixing-calibration",
                "Warm-water calibration",
                "Warm water poured into cool water: the calorimeter's heat capacity.",
                ("thermometer", "water", "warm_water"),
                CALIBRATION_OUTPUT,
                "J/K",
                two_solution=True,
                procedure_cautions=("hot water scalds: handle warm water with care",),
                plan_scaled=(("warm_water", "volume"),),
                release_s=5.0,
                hooks=_hooks("mixing", "mixing_calibration", "warm_water_properties"),
            ),
            RunKind(
                "reaction",
                "Reaction",
                "A reaction in solution: ΔH per mole of reaction as written.",
                ("calorimeter", "thermometer", "solution", "reaction"),
                "molar_enthalpy",
                "kJ/mol",
                plan_scaled=(("reaction", "mass"),),
                release_s=60.0,
                hooks=_hooks("reaction", "reaction", "reaction_solution_properties", "composition", "reference"),
            ),
            RunKind(
                "dissolution-with-calibration",
                "Dissolution with in-situ calibration",
                "A solid dissolved, then a heater pulse in the same log: ΔH per mole of solute, the heat capacity of "
                "cup + solution from the heater.",
                ("thermometer", "water", "solute", "heater"),
                "molar_enthalpy",
                "kJ/mol",
                reference_kind="dissolution",
                hooks={
                    "analyze": "calc.insitu_analysis:analyze_insitu",
                    "simulate": "calc.simulation.insitu:simulate_dissolution_with_calibration",
                },
            ),
        )
    }
)


def get_kind(name: str) -> RunKind:
    """Return the kind called ``name``; KeyError naming the known kinds when there is none."""
    try:
        return REGISTRY[name]
    except KeyError:
        raise KeyError(f"unknown run kind {name!r}; expected one of: {', '.join(REGISTRY)}") from None


def kind_names() -> tuple[str, ...]:
    """Return every kind's name, in the registry's order."""
    return tuple(REGISTRY)


def calibration_kinds() -> tuple[str, ...]:
    """Return the kinds that measure the calorimeter's heat capacity."""
    return tuple(k.name for k in REGISTRY.values() if k.is_calibration)


def plannable_kinds() -> tuple[str, ...]:
    """Return the kinds ``cupcal plan`` can plan."""
    return tuple(k.name for k in REGISTRY.values() if k.plannable)
