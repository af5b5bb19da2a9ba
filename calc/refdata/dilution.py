"""Compute the relative apparent molar enthalpy φ_L of a strong electrolyte at a molality.

ΔsolH(m) = ΔsolH° + φ_L(m). Pitzer's equation with the enthalpy parameters of
``calc/refdata/data/pitzer_enthalpy.csv``, else the Debye–Hückel term alone for a dilute 1:1 electrolyte;
:func:`phi_L` states the models and their uncertainty.
"""

from __future__ import annotations

import csv
import math
from dataclasses import dataclass
from functools import lru_cache
from importlib import resources

from calc.errors import InputError
from calc.refdata.formula import element_composition
from calc.refdata.properties import R_GAS, debye_huckel_slopes
from calc.refdata.solutes import dissolution_products, strip_state
from calc.refdata.species import T_REF_K, citation

__all__ = [
    "PhiL",
    "phi_L",
    "model_spread_u",
]


@dataclass(frozen=True)
class PhiL:
    """Relative apparent molar enthalpy φ_L (kJ/mol) with its model and source."""

    value: float
    u: float
    model: str
    source: str


@lru_cache(maxsize=1)
def _pitzer_rows() -> tuple[dict[str, str], ...]:
    path = resources.files("calc.refdata") / "data" / "pitzer_enthalpy.csv"
    with path.open(encoding="utf-8", newline="") as fh:
        return tuple(csv.DictReader(fh))


_B = 1.2  # kg^1/2 mol^-1/2, Pitzer
_BL_MAX = 1.5e-3  # kg/(mol K): bound on |B^L| of 1:1 salts, for the DH fallback's u


#: Half-width (kJ/mol) of the disagreement between this Pitzer term and wide-range models at 1 mol/kg:
#: for KCl this code gives φ_L = +0.007 kJ/mol where wide-range models give −0.11 to −0.17 kJ/mol
#: (as reported in the project's issue 11). Re-checked with pytzer (tests/calc/test_dilution_reference.py,
#: docs/methods.md §8.7): KCl at 1 mol/kg, 25 °C, −0.06 to −0.23 kJ/mol over the six wide-range
#: parameter sets pytzer carries, Archer's −0.105; NaCl (Archer) −0.088.
MODEL_SPREAD_AT_1_MOLAL = 0.18
MODEL_SPREAD_SOURCE = (
    "model-spread term from the disagreement with wide-range models at 1 mol/kg (KCl: −0.11 to −0.17 kJ/mol "
    "against +0.007 here)"
)


def model_spread_u(molality: float) -> float:
    """Return the standard uncertainty (kJ/mol) for the spread between Pitzer models at ``molality``.

    Rectangular with half-width :data:`MODEL_SPREAD_AT_1_MOLAL` from 0.5 mol/kg up to 1 mol/kg,
    rising linearly from zero at 0.1 mol/kg (where the models agree within the fit term) to
    0.5 mol/kg, and in proportion to the molality above 1 mol/kg (the short-range term that
    the models disagree on grows like m).
    """
    m = float(molality)
    if m <= 0.1:
        return 0.0
    scale = min(1.0, (m - 0.1) / 0.4) if m <= 1.0 else m
    return MODEL_SPREAD_AT_1_MOLAL * scale / math.sqrt(3.0)


def phi_L(formula: str, molality: float, T_K: float = T_REF_K) -> PhiL | None:
    """Return φ_L of a strong electrolyte at a molality, or None when no model applies.

    Pitzer's equation with the tabulated enthalpy parameters (NaCl, KCl, HCl; 0 to 50
    degC; u = 3 % of φ_L plus up to 0.02 kJ/mol, and 2 % of φ_L per K away from
    25 degC, cupcal's estimates, plus :func:`model_spread_u` from 0.1 mol/kg); else, for a 1:1 electrolyte
    at m <= 0.1 mol/kg, the Debye–Hückel term alone with u = 2RT² m·1.5e-3 kg/(mol K)
    (the neglected short-range term for |B^L| up to 1.5e-3).
    """
    try:
        m = float(molality)
    except (TypeError, ValueError):
        raise InputError(f"molality must be a number in mol/kg, got {molality!r}") from None
    if m < 0 or math.isnan(m):
        raise InputError(f"molality must not be negative, got {molality!r}")
    T = float(T_K)
    if not (273.15 <= T <= 323.15):
        return None
    base = strip_state(formula)[0]
    try:
        comp = element_composition(base)
    except InputError:
        return None
    if m == 0.0:
        return PhiL(0.0, 0.0, "infinite dilution", "definition")
    _, A_H = debye_huckel_slopes(T)
    for row in _pitzer_rows():
        if element_composition(row["formula"]) != comp or m > float(row["m_max"]):
            continue
        nup, num = int(row["nu_plus"]), int(row["nu_minus"])
        zp, zm = int(row["z_plus"]), int(row["z_minus"])
        nu = nup + num
        I = 0.5 * m * (nup * zp * zp + num * zm * zm)
        sI = math.sqrt(I)
        alpha = float(row["alpha"])
        b0, b1, cphi = float(row["beta0_L"]), float(row["beta1_L"]), float(row["Cphi_L"])
        x = alpha * sI
        BL = b0 + 2.0 * b1 / (alpha * alpha * I) * (1.0 - (1.0 + x) * math.exp(-x))
        CL = cphi / (2.0 * math.sqrt(abs(zp * zm)))
        long_range = nu * abs(zp * zm) * A_H / (2.0 * _B) * math.log(1.0 + _B * sI)
        short = -2.0 * nup * num * R_GAS * T * T * (m * BL + m * m * nup * zp * CL)
        value = (long_range + short) / 1000.0
        # cupcal's estimate: 3 % of φ_L plus up to 0.02 kJ/mol for the fit's scatter
        # (reached at 0.1 mol/kg), plus 2 % of φ_L per K away from 25 degC.
        u = math.hypot(0.03 * value, 0.02 * min(1.0, m / 0.1))
        u = math.hypot(u, 0.02 * abs(value) * abs(T - T_REF_K))
        u = math.hypot(u, model_spread_u(m))
        return PhiL(value, u, "Pitzer", citation(row["source"]) + "; " + MODEL_SPREAD_SOURCE)
    products = dissolution_products(base)
    if products is None or len(products) != 2 or m > 0.1:
        return None
    (n1, e1), (n2, e2) = products
    if {n1, n2} != {1} or {abs(e1.species.charge), abs(e2.species.charge)} != {1}:
        return None
    value = A_H / _B * math.log(1.0 + _B * math.sqrt(m)) / 1000.0
    u = 2.0 * R_GAS * T * T * m * _BL_MAX / 1000.0
    return PhiL(value, u, "Debye–Hückel (long-range term only)", citation("DH_LIMIT"))
