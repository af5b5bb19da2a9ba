"""The final solution of a run and the properties its model needs.

:func:`resolve_properties` supplies the densities and the heat capacity a kind's measurement model
uses (a value in the run file always wins, else the property models of :mod:`calc.refdata.properties`);
:func:`final_composition` gives the solutes and water of the final solution (for the heat capacity
and the concentration check).
"""

from __future__ import annotations

import math
from typing import Any

from calc.deltat.base import DeltaT
from calc.io.runfile import RunSpec
from calc.kinds import get_kind
from calc.refdata.solutes import STRONG_ACIDS
from calc.uncertainty.measurement_models import EQUIVALENTS, RunProperties

__all__ = ["resolve_properties", "final_composition"]


def _property_models() -> Any:
    """Return :mod:`calc.refdata.properties` (imported on first use: IAPWS-95 and the solution models)."""
    import importlib

    return importlib.import_module("calc.refdata.properties")


def resolve_properties(spec: RunSpec, dt: DeltaT) -> RunProperties:
    """Return the densities and heat capacity the model needs.

    A value in the run file always wins; otherwise the property models of
    :mod:`calc.refdata.properties` supply it and the source is recorded. The densities come from
    the kind's ``properties`` hook (:mod:`calc.kinds`), the solution's heat capacity from its final
    composition (the ``composition`` hook; water when it has none).
    """
    props = RunProperties()
    T0 = dt.start_temperature
    T_mean = T0 + 0.5 * dt.value
    kind = get_kind(spec.kind)
    densities = kind.hook("properties")
    if densities is not None:
        densities(spec, props, T0)
    if _explicit(spec, props, "mixture", "specific_heat_capacity", "J/(g*K)"):
        return props
    solutes, water_g = final_composition(spec, props)
    pm = _property_models()
    if solutes:
        _dens, cp = pm.solution_properties(solutes, water_g, T_mean)
    else:
        cp = pm.water_specific_heat(T_mean)
    props.add("mixture.specific_heat_capacity", cp.value, cp.u, "J/(g*K)", f"{cp.model} at {T_mean - 273.15:.1f} °C")
    if "fallback" in cp.model.lower() and solutes:
        props.warnings.append(
            "no solution model covers " + ", ".join(solutes) + ": the heat capacity of water was used with a "
            "larger uncertainty; give [mixture] specific_heat_capacity for a better result"
        )
    return props


def _explicit(spec: RunSpec, props: RunProperties, section: str, name: str, unit: str) -> bool:
    """Record ``[section] name`` from the run file when it is there; return whether it was."""
    m = spec.get(section, name)
    if m is None:
        return False
    props.add(f"{section}.{name}", m.m_as(unit), m.u_as(unit), unit, "run file")
    return True


def _water_density(props: RunProperties, key: str, T: float) -> None:
    pv = _property_models().water_density(T)
    props.add(key, pv.value, pv.u, "g/mL", f"{pv.model} at {T - 273.15:.1f} °C")


# ------------------------------------------------------------------ the kinds' ``properties`` hooks


def water_properties(spec: RunSpec, props: RunProperties, T0: float) -> None:
    """Water in the cup: its density at the start temperature."""
    if not _explicit(spec, props, "water", "density", "g/mL"):
        _water_density(props, "water.density", T0)


def warm_water_properties(spec: RunSpec, props: RunProperties, T0: float) -> None:
    """Cool water in the cup and warm water poured in: each one's density at its own temperature."""
    water_properties(spec, props, T0)
    if not _explicit(spec, props, "warm_water", "density", "g/mL"):
        _water_density(props, "warm_water.density", spec.get("warm_water", "temperature").m_as("K"))


def reaction_solution_properties(spec: RunSpec, props: RunProperties, T0: float) -> None:
    """A solution of unstated composition: its density (else water's, with a warning)."""
    if not _explicit(spec, props, "solution", "density", "g/mL"):
        _water_density(props, "solution.density", T0)
        props.warnings.append("solution density not given: the density of water was used; give [solution] density")
    if spec.get("mixture", "specific_heat_capacity") is None and spec.sections.get("solute") is None:
        props.warnings.append(
            "specific heat capacity of the final solution not given: that of water was used; "
            "give [mixture] specific_heat_capacity"
        )


def stock_properties(spec: RunSpec, props: RunProperties, T0: float) -> None:
    """An acid stock in the cup and a base stock poured in: each one's density at its own temperature."""
    for sec in ("acid", "base"):
        if not _explicit(spec, props, sec, "density", "g/mL"):
            T = T0 if sec == "acid" else spec.get("base", "temperature").m_as("K")
            pv = _stock_density(_property_models(), spec, sec, T)
            props.add(f"{sec}.density", pv.value, pv.u, "g/mL", f"{pv.model} at {T - 273.15:.1f} °C")


def _stock_density(pm: Any, spec: RunSpec, sec: str, T: float) -> Any:
    from calc.refdata.formula import molar_mass

    formula = spec.get(sec, "formula")
    c = spec.get(sec, "concentration").m_as("mol/L")
    M = molar_mass(formula)
    rho = pm.water_density(T)
    # iterate: mass of solute per litre is c·M; water mass per litre is 1000ρ − cM
    for _ in range(4):
        water_g = 1000.0 * rho.value - c * M
        if water_g <= 0:
            break
        rho, _cp = pm.solution_properties({formula: c * M}, water_g, T)
    return rho


#: Cation of each strong base; anions come from calc.refdata.solutes.STRONG_ACIDS and ion charges
#: from calc.uncertainty.measurement_models.EQUIVALENTS (H⁺ or OH⁻ per formula unit).
_CATIONS = {"NaOH": "Na", "KOH": "K", "LiOH": "Li", "Ba(OH)2": "Ba", "Ca(OH)2": "Ca"}


def final_composition(spec: RunSpec, props: RunProperties) -> tuple[dict[str, float], float]:
    """Return the solutes (formula → g) and water mass (g) of the final solution (none: water alone)."""
    composition = get_kind(spec.kind).hook("composition")
    return composition(spec, props) if composition is not None else ({}, 0.0)


# ------------------------------------------------------------------ the kinds' ``composition`` hooks


def dissolution_composition(spec: RunSpec, props: RunProperties) -> tuple[dict[str, float], float]:
    """The solute weighed in and the water in the cup."""
    rho = props.values["water.density"][0]
    water_g = spec.get("water", "volume").m_as("mL") * rho
    return {spec.get("solute", "formula"): spec.get("solute", "mass").m_as("g")}, water_g


def reaction_composition(spec: RunSpec, props: RunProperties) -> tuple[dict[str, float], float]:
    """The solute, when the run file names one, in the solution; else unknown (water alone)."""
    sol = spec.sections.get("solute")
    if sol is None:
        return {}, 0.0
    rho = props.values["solution.density"][0]
    return {sol["formula"]: sol["mass"].m_as("g")}, spec.get("solution", "volume").m_as("mL") * rho


def neutralization_composition(spec: RunSpec, props: RunProperties) -> tuple[dict[str, float], float]:
    """The salt formed and the excess acid or base (a strong acid and a known base), else the two stocks."""
    from calc.refdata.formula import molar_mass

    acid, base = spec.get("acid", "formula"), spec.get("base", "formula")
    na = spec.get("acid", "concentration").m_as("mol/L") * spec.get("acid", "volume").m_as("mL") / 1000
    nb = spec.get("base", "concentration").m_as("mol/L") * spec.get("base", "volume").m_as("mL") / 1000
    total = (
        spec.get("acid", "volume").m_as("mL") * props.values["acid.density"][0]
        + spec.get("base", "volume").m_as("mL") * props.values["base.density"][0]
    )
    if not (acid in STRONG_ACIDS and base in _CATIONS):
        return (
            {acid: na * molar_mass(acid), base: nb * molar_mass(base)},
            total - na * molar_mass(acid) - nb * molar_mass(base),
        )
    an, za = STRONG_ACIDS[acid], _eq(acid)
    cat, zb = _CATIONS[base], _eq(base)
    # salt formula with charge balance, e.g. Na2SO4, BaCl2
    g = math.gcd(za, zb)
    ncat, nan = za // g, zb // g
    salt = (cat if ncat == 1 else f"{cat}{ncat}") + (an if nan == 1 else f"({an}){nan}")
    h = na * _eq(acid)
    oh = nb * _eq(base)
    xi = min(h, oh)
    n_salt = xi / (ncat * zb)
    solutes = {salt: n_salt * molar_mass(salt)}
    if h > oh:
        solutes[acid] = (h - oh) / _eq(acid) * molar_mass(acid)
    elif oh > h:
        solutes[base] = (oh - h) / _eq(base) * molar_mass(base)
    return solutes, total - sum(solutes.values())


def _eq(formula: str) -> int:
    return EQUIVALENTS.get(formula, 1)
