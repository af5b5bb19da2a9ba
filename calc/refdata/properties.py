"""Property models for water and aqueous solutions.

Water
    IAPWS-95 density and heat capacity, the static dielectric constant and the Debye–Hückel slopes
    come from :mod:`calc.refdata.water` (import them from there).

Aqueous electrolyte solutions
    Density from the Laliberté & Cooper model (J. Chem. Eng. Data 49, 1141 (2004)) and
    heat capacity from the Laliberté model (J. Chem. Eng. Data 54, 1725 (2009)), computed by
    :mod:`calc.refdata.laliberte` from the papers' coefficient table
    (``calc/refdata/data/laliberte2009.tsv``, as distributed with the ``chemicals`` package); the
    tests compare it with the ``thermo`` package's implementation. The table tells which solutes
    and ranges are covered; a solute outside it takes the fallback below.

    Stated standard uncertainties (cupcal's choice, checked against handbook densities in
    the tests): 5e-4 relative for density and 3e-3 relative for c_p.

Fallback
    When a solute is not in the Laliberté table, or the composition or temperature lies
    outside the fitted range, the water value is used with an extra relative standard
    uncertainty that grows with the total solute mass fraction ``w``:
    ``u_rel(rho) = 1.25 w / sqrt(3)`` and ``u_rel(c_p) = 1.75 w / sqrt(3)``. Basis: over
    the solutes of the Laliberté table at 25 degC and w <= 0.2 the ratio
    ``(x_solution / x_water - 1) / w`` lies within [-0.42, 1.22] for density and within
    [-1.73, 1.29] for c_p (computed from the table; see the tests); the fallback treats
    the unknown deviation as rectangular with half-width 1.25 w resp. 1.75 w.
"""

from __future__ import annotations

import math
from functools import lru_cache
from typing import Any

from calc.errors import InputError
from calc.refdata import laliberte
from calc.refdata.arguments import as_number, non_negative
from calc.refdata.formula import element_composition, molar_mass, split_hydrate
from calc.refdata.water import ModelledProperty, _check_T, water_density, water_specific_heat

__all__ = ["solution_properties"]

LALIBERTE_MODEL = "Laliberté (2004, 2009)"
FALLBACK_MODEL = "water fallback"

U_REL_LALIBERTE_DENSITY = 5e-4
U_REL_LALIBERTE_CP = 3e-3
FALLBACK_HALF_WIDTH_DENSITY = 1.25
FALLBACK_HALF_WIDTH_CP = 1.75


# ----------------------------------------------------------------------- Laliberté


@lru_cache(maxsize=1)
def _laliberte_table() -> dict[tuple[tuple[str, int], ...], laliberte.LaliberteRow | None]:
    """Rows of the Laliberté table by element composition; None where two rows share one."""
    table: dict[tuple[tuple[str, int], ...], laliberte.LaliberteRow | None] = {}
    for row in laliberte.laliberte_rows():
        key = element_composition(row.formula)
        table[key] = None if key in table else row  # two rows with one composition: refuse to guess
    return table


def _laliberte_row(formula: str) -> laliberte.LaliberteRow | None:
    return _laliberte_table().get(element_composition(formula))


@lru_cache(maxsize=4096)
def _laliberte(kind: str, T_K: float, fractions: tuple[tuple[laliberte.LaliberteRow, float], ...]) -> float:
    """Return the Laliberté density (kg/m3) or heat capacity (J/(kg K)), cached on rounded inputs.

    Far outside the model (no water left, found by command-line fuzzing) the equations divide by zero
    or overflow: that gives no value (NaN) and the caller falls back, never an internal error.
    """
    t_c = T_K - 273.15
    try:
        if kind == "density":
            return laliberte.density(t_c, dict(fractions))
        return laliberte.specific_heat(t_c, dict(fractions), 1000.0 * water_specific_heat(T_K).value)
    except (ArithmeticError, ValueError):
        return math.nan


def _laliberte_call(
    kind: str, T_K: float, mass_fractions: dict[str, float], rows: dict[str, laliberte.LaliberteRow | None]
) -> float:
    fractions = []
    for formula in sorted(mass_fractions):
        row = rows[formula]
        assert row is not None
        fractions.append((row, round(mass_fractions[formula], 7)))
    return _laliberte(kind, round(T_K, 2), tuple(fractions))


def _fallback(water: ModelledProperty, w_total: float, half_width: float, reason: str) -> ModelledProperty:
    u_extra = water.value * half_width * w_total / math.sqrt(3.0)
    return ModelledProperty(
        water.value,
        math.hypot(water.u, u_extra),
        water.unit,
        f"{FALLBACK_MODEL} ({reason})",
    )


def solution_properties(
    solutes: dict[str, float], water_mass_g: float, T_K: float
) -> tuple[ModelledProperty, ModelledProperty]:
    """Return the density (g/mL) and specific heat capacity (J/(g K)) of a solution.

    Parameters
    ----------
    solutes:
        Formula -> mass in g dissolved in ``water_mass_g`` of water (the final solution).
        Hydrates (``"CuSO4.5H2O"``) are split into the anhydrous salt and water.
    water_mass_g:
        Mass of water in g (excluding water of crystallisation of hydrates).
    T_K:
        Temperature in kelvin.

    Returns
    -------
    tuple of ModelledProperty
        (density, specific heat). Each records the model used: Laliberté when the table
        covers every solute within its fitted range, else the water fallback with an
        extra uncertainty ``1.25 w/sqrt(3)`` (density) or ``1.75 w/sqrt(3)`` (c_p)
        relative, w being the total solute mass fraction. Pure water gives IAPWS-95.

    Raises
    ------
    InputError
        For a negative mass, no water, an unreadable formula or a temperature out of range.
    """
    T = _check_T(T_K)
    m_water, anhydrous = _anhydrous(solutes, water_mass_g)
    rho_w = water_density(T)
    cp_w = water_specific_heat(T)
    if not anhydrous:
        return rho_w, cp_w
    total = m_water + sum(anhydrous.values())
    w_solutes = sum(anhydrous.values()) / total
    rows = {f: _laliberte_row(f) for f in anhydrous}
    fractions = {f: m / total for f, m in anhydrous.items()}
    model = (T, w_solutes, fractions, rows)
    return (
        _solution_value("density", model, U_REL_LALIBERTE_DENSITY, rho_w, FALLBACK_HALF_WIDTH_DENSITY),
        _solution_value("heat capacity", model, U_REL_LALIBERTE_CP, cp_w, FALLBACK_HALF_WIDTH_CP),
    )


def _solution_value(
    quantity: str, model: tuple[Any, ...], u_rel: float, water: ModelledProperty, half_width: float
) -> ModelledProperty:
    """Return Laliberté's ``quantity`` (kg/m³ or J/(kg K), given in g/mL or J/(g K)), or the water fallback."""
    T, w_solutes, fractions, rows = model
    value, why = _laliberte_value(quantity, T, w_solutes, fractions, rows)
    if why is not None:
        return _fallback(water, w_solutes, half_width, why)
    value /= 1000.0
    return ModelledProperty(value, u_rel * value, water.unit, LALIBERTE_MODEL)


def _anhydrous(solutes: dict[str, float], water_mass_g: float) -> tuple[float, dict[str, float]]:
    """Return the water (g, with the water of crystallisation of hydrates) and the anhydrous solutes (g)."""
    m_water = as_number(water_mass_g, "water mass", " of grams")
    if not m_water > 0.0:
        raise InputError(f"water mass must be positive, got {water_mass_g!r} g")
    anhydrous: dict[str, float] = {}
    for formula, mass in solutes.items():
        m = non_negative(mass, f"mass of {formula!r}", " of grams", " g")
        if m == 0.0:
            continue
        base, n_water = split_hydrate(formula)
        if n_water:
            m_base = m * molar_mass(base) / molar_mass(formula)
            m_water += m - m_base
            m = m_base
        if base == "H2O":
            m_water += m
            continue
        anhydrous[base] = anhydrous.get(base, 0.0) + m
    return m_water, anhydrous


def _laliberte_value(
    kind: str, T: float, w_solutes: float, fractions: dict[str, float], rows: dict[str, laliberte.LaliberteRow | None]
) -> tuple[float, str | None]:
    """Return the Laliberté density (kg/m3) or heat capacity (J/(kg K)) and None, else (nan, why not)."""
    t = T - 273.15
    missing = [f for f, r in rows.items() if r is None]
    if missing:
        return math.nan, "no Laliberté data for " + ", ".join(missing)
    for f, r in rows.items():
        assert r is not None
        coeffs = r.density if kind == "density" else r.cp
        t_min, t_max, w_max = r.density_range if kind == "density" else r.cp_range
        if coeffs is None:
            return math.nan, f"no Laliberté {kind} data for {f}"
        if not (t_min <= t <= t_max):
            return math.nan, f"{t:.1f} degC is outside the Laliberté {kind} range of {f} ({t_min:g} to {t_max:g} degC)"
        if w_solutes > w_max:
            return (
                math.nan,
                f"solute mass fraction {w_solutes:.3f} exceeds the Laliberté {kind} range of {f} ({w_max:.3f})",
            )
    value = _laliberte_call(kind, T, fractions, rows)
    if not math.isfinite(value):
        return math.nan, f"no finite Laliberté {kind} for " + ", ".join(fractions)
    return value, None
