"""Laliberté's models of aqueous electrolyte solutions: density and specific heat capacity.

Density: Laliberté & Cooper, J. Chem. Eng. Data 49, 1141 (2004). Each solute i has an apparent
density ``ρ_app,i(t, w_w)`` from five coefficients c0…c4; the solution's density follows from the
specific volumes, ``1/ρ = w_w/ρ_w + Σ w_i/ρ_app,i``, with Laliberté's own equation for pure water.

Heat capacity: Laliberté, J. Chem. Eng. Data 54, 1725 (2009). Each solute has an apparent specific
heat capacity ``c_p,app,i(t, w_w)`` from six coefficients a1…a6; the solution's is the mass-weighted
sum ``c_p = w_w c_p,w + Σ w_i c_p,app,i``. Water's c_p is taken from IAPWS-95 (the caller passes it),
where the paper used its own fit of the same data (the difference is below 1e-4 relative from 0 to
90 °C; tests/calc/test_properties.py compares the whole model with the ``thermo`` package).

Coefficients: ``calc/refdata/data/laliberte2009.tsv``, the table of both papers as distributed with
the MIT-licensed ``chemicals`` package (Caleb Bell and contributors), copied unchanged; it is the
one source of Laliberté coefficients in cupcal (docs/methods.md §4.3).
"""

from __future__ import annotations

import csv
import math
from collections.abc import Mapping
from dataclasses import dataclass
from functools import lru_cache
from importlib import resources
from typing import cast

__all__ = ["LaliberteRow", "laliberte_rows", "density", "specific_heat", "water_density"]


@dataclass(frozen=True)
class LaliberteRow:
    """One solute of the table: density coefficients c0…c4 and c_p coefficients a1…a6 with ranges.

    A range is (lowest t in °C, highest t in °C, highest solute mass fraction).
    """

    name: str
    formula: str
    cas: str
    density: tuple[float, ...] | None
    density_range: tuple[float, float, float]
    cp: tuple[float, ...] | None
    cp_range: tuple[float, float, float]


def _floats(cells: list[str]) -> tuple[float, ...] | None:
    if any(c.strip() == "" for c in cells):
        return None
    return tuple(float(c) for c in cells)


def _range(cells: list[str]) -> tuple[float, float, float]:
    values = _floats(cells)
    return (values[0], values[1], values[2]) if values else (0.0, 0.0, 0.0)


@lru_cache(maxsize=1)
def laliberte_rows() -> tuple[LaliberteRow, ...]:
    """Return every row of the coefficient table, in file order."""
    path = resources.files("calc.refdata") / "data" / "laliberte2009.tsv"
    rows = []
    with path.open(encoding="utf-8") as fh:
        reader = csv.reader(fh, delimiter="\t")
        next(reader)
        for cells in reader:
            cells = cells + [""] * (33 - len(cells))
            formula = cells[2].strip()
            rows.append(
                LaliberteRow(
                    name=cells[0].strip(),
                    formula="C12H22O11" if formula == "Sucrose" else formula,
                    cas=cells[1].strip(),
                    density=_floats(cells[4:9]),
                    density_range=_range(cells[9:12]),
                    cp=_floats(cells[23:29]),
                    cp_range=_range(cells[29:32]),
                )
            )
    return tuple(rows)


def water_density(t_c: float) -> float:
    """Return the density of pure water in kg/m³ by Laliberté & Cooper's equation (t in °C)."""
    num = (
        (((-2.8054253e-10 * t_c + 1.0556302e-7) * t_c - 4.6170461e-5) * t_c - 0.0079870401) * t_c + 16.945176
    ) * t_c + 999.83952
    return num / (1.0 + 0.01687985 * t_c)


def _apparent_density(c: tuple[float, ...], t_c: float, w_solutes: float) -> float:
    c0, c1, c2, c3, c4 = c
    return (c0 * w_solutes + c1) * math.exp(1e-6 * (t_c + c4) ** 2) / (w_solutes + c2 + c3 * t_c)


def _apparent_cp(a: tuple[float, ...], t_c: float, w_solutes: float) -> float:
    a1, a2, a3, a4, a5, a6 = a
    alpha = a2 * t_c + a3 * math.exp(0.01 * t_c) + a4 * w_solutes
    return cast(float, 1000.0 * (a1 * math.exp(alpha) + a5 * w_solutes**a6))


def density(t_c: float, fractions: Mapping[LaliberteRow, float]) -> float:
    """Return the solution density in kg/m³ for solute mass fractions (rows with density data)."""
    w_solutes = sum(fractions.values())
    volume = (1.0 - w_solutes) / water_density(t_c)
    for row, w in fractions.items():
        assert row.density is not None
        volume += w / _apparent_density(row.density, t_c, w_solutes)
    return 1.0 / volume


def specific_heat(t_c: float, fractions: Mapping[LaliberteRow, float], cp_water: float) -> float:
    """Return the solution's c_p in J/(kg K); ``cp_water`` is pure water's c_p in J/(kg K)."""
    w_solutes = sum(fractions.values())
    cp = (1.0 - w_solutes) * cp_water
    for row, w in fractions.items():
        assert row.cp is not None
        cp += w * _apparent_cp(row.cp, t_c, w_solutes)
    return cp
