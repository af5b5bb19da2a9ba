"""Compute the relative apparent molar enthalpy φ_L of a strong electrolyte at a molality.

ΔsolH(m) = ΔsolH° + φ_L(m). For NaCl, KCl and HCl the short-range part of φ_L(m, T) is interpolated in
``calc/refdata/data/phi_L_wide_range.csv`` (tabulated once from wide-range Pitzer models by
``tests/tools/make_phi_L.py``); else Pitzer's equation with the 25 °C enthalpy parameters of
``calc/refdata/data/pitzer_enthalpy.csv``; else the Debye–Hückel term alone for a dilute 1:1
electrolyte. :func:`phi_L` states the models and their uncertainty (docs/methods.md §4.6).
"""

from __future__ import annotations

import csv
import math
from dataclasses import dataclass
from functools import lru_cache

import numpy as np

from calc.errors import InputError
from calc.refdata.arguments import non_negative
from calc.refdata.datafiles import open_data
from calc.refdata.formula import element_composition
from calc.refdata.solutes import dissolution_products, strip_state
from calc.refdata.species import T_REF_K, citation
from calc.refdata.water import R_GAS, debye_huckel_slopes

__all__ = [
    "WIDE_RANGE_MODEL",
    "PhiL",
    "model_spread_u",
    "phi_L",
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
    with open_data("pitzer_enthalpy.csv") as fh:
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


#: Source id (``sources.toml``) of each salt's wide-range table.
WIDE_RANGE_SOURCES = {"NaCl": "PHIL_A92", "KCl": "PHIL_A99", "HCl": "PHIL_CMR93"}
WIDE_RANGE_MODEL = "Pitzer wide-range model, tabulated"
#: Interpolation term, kJ/mol: the cubic interpolant in (√m, t) was at most 0.0002 kJ/mol from the
#: models themselves at 176–200 points per salt between the grid lines (0.5–49.5 °C, 0.0025–5.9
#: mol/kg; tests/tools/check_phi_L_interpolation.py, docs/methods.md §4.6); rounded up to 0.001.
U_INTERPOLATION = 0.001
#: Relative standard uncertainty of calc's Debye–Hückel term (A_H from IAPWS-95) where the table's
#: models used Archer & Wang's (1990) A_φ: the two A_H differ by up to 3.3 % over 0–50 °C (measured),
#: taken as the half-width of a rectangular distribution.
U_REL_LONG_RANGE = 0.02


def _spline_moments(x: np.ndarray) -> np.ndarray:
    """Return K with K @ y = the second derivatives at ``x`` of the not-a-knot cubic spline through y.

    The classical moment equations (continuous first derivative at the inner knots) with not-a-knot
    ends (continuous third derivative at x[1] and x[-2]); needs at least 4 points. A few lines of numpy
    instead of scipy.interpolate, whose import costs 0.15–0.3 s of a `cupcal analyze` (issue 14);
    checked against scipy's RegularGridInterpolator(method="cubic") in tests/calc/test_dilution_grid.py.
    """
    n, h = x.size, np.diff(x)
    A, D = np.zeros((n, n)), np.zeros((n, n))
    for i in range(1, n - 1):
        A[i, i - 1 : i + 2] = h[i - 1], 2.0 * (h[i - 1] + h[i]), h[i]
        D[i, i - 1 : i + 2] = 6.0 / h[i - 1], -6.0 / h[i - 1] - 6.0 / h[i], 6.0 / h[i]
    A[0, :3] = h[1], -(h[0] + h[1]), h[0]
    A[-1, -3:] = h[-1], -(h[-2] + h[-1]), h[-2]
    return np.linalg.solve(A, D)


def _weights(x: np.ndarray, x0: float, K: np.ndarray | None) -> np.ndarray:
    """Return w with w @ y = the interpolant through (x, y) at x0: linear, or the cubic spline of moments K @ y."""
    i = min(max(int(np.searchsorted(x, x0, side="right")) - 1, 0), x.size - 2)
    h = float(x[i + 1] - x[i])
    a = (float(x[i + 1]) - x0) / h
    b = 1.0 - a
    w = np.zeros(x.size)
    w[i], w[i + 1] = a, b
    if K is not None:
        w += h * h / 6.0 * ((a**3 - a) * K[i] + (b**3 - b) * K[i + 1])
    return w


@dataclass(frozen=True)
class _Table:
    s: np.ndarray  # √m grid, (mol/kg)^1/2
    t: np.ndarray  # t grid, °C
    short: np.ndarray  # short-range part of φ_L on the grid (√m × t), kJ/mol; interpolated cubically
    u: np.ndarray  # model-spread standard uncertainty on the grid, kJ/mol; interpolated linearly
    k_s: np.ndarray  # spline moments along √m (:func:`_spline_moments`)
    k_t: np.ndarray  # spline moments along t
    m_max: float
    t_range: tuple[float, float]

    def at(self, s0: float, t0: float) -> tuple[float, float]:
        """Return (short-range part, u_spread) at (√m, t/°C): tensor-product cubic spline, bilinear."""
        short = _weights(self.s, s0, self.k_s) @ self.short @ _weights(self.t, t0, self.k_t)
        u = _weights(self.s, s0, None) @ self.u @ _weights(self.t, t0, None)
        return float(short), float(u)


_WIDE_RANGE_FILE = "phi_L_wide_range.csv"


@lru_cache(maxsize=1)
def _wide_range_tables() -> dict[tuple[tuple[str, int], ...], tuple[str, _Table]]:
    with open_data(_WIDE_RANGE_FILE) as fh:
        rows = list(csv.DictReader(line for line in fh if not line.startswith("#")))
    out = {}
    for salt, source in WIDE_RANGE_SOURCES.items():
        mine = [r for r in rows if r["formula"] == salt]
        rows_s, rows_t = (np.array([float(r[c]) for r in mine]) for c in ("sqrt_m", "t_C"))
        s, t = np.unique(rows_s), np.unique(rows_t)
        short = np.full((s.size, t.size), np.nan)
        u = np.full((s.size, t.size), np.nan)
        i, j = np.searchsorted(s, rows_s), np.searchsorted(t, rows_t)  # all rows at once: 3680 rows
        short[i, j] = [float(r["phi_L_sr"]) for r in mine]
        u[i, j] = [float(r["u_spread"]) for r in mine]
        if np.isnan(short).any():
            raise InputError(
                f"calc/refdata/data/{_WIDE_RANGE_FILE}: the grid of {salt} has holes (expected every √m × t_C)"
            )
        table = _Table(
            s,
            t,
            short,
            u,
            _spline_moments(s),
            _spline_moments(t),
            max(float(r["m"]) for r in mine),
            (float(t[0]), float(t[-1])),
        )
        out[element_composition(salt)] = (source, table)
    return out


def _long_range(m: float, A_H: float) -> float:
    """Pitzer's long-range term of φ_L for a 1:1 electrolyte, (A_H/b) ln(1 + b√m), in kJ/mol."""
    return A_H / _B * math.log(1.0 + _B * math.sqrt(m)) / 1000.0


def _from_wide_range(comp: tuple[tuple[str, int], ...], m: float, T: float, A_H: float) -> PhiL | None:
    hit = _wide_range_tables().get(comp)
    if hit is None:
        return None
    source, table = hit
    t = T - 273.15
    if m > table.m_max * (1 + 1e-9) or not (table.t_range[0] <= t <= table.t_range[1]):
        return None
    short, u_spread = table.at(min(math.sqrt(m), float(table.s[-1])), t)  # the last √m is rounded in the file
    long_range = _long_range(m, A_H)
    value = long_range + short
    u = math.hypot(u_spread, U_REL_LONG_RANGE * long_range, U_INTERPOLATION)
    return PhiL(value, u, WIDE_RANGE_MODEL, citation(source))


def _pitzer_25C(row: dict[str, str], m: float, T: float, A_H: float) -> PhiL:
    """Pitzer's equation with the enthalpy parameters of 25 °C held fixed (no heat-capacity term)."""
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


def phi_L(formula: str, molality: float, T_K: float = T_REF_K, *, wide_range: bool = True) -> PhiL | None:
    """Return φ_L of a strong electrolyte at a molality, or None when no model applies.

    In order (docs/methods.md §4.6):

    1. NaCl, KCl, HCl (unless ``wide_range`` is False): calc's Debye–Hückel term plus the short-range
       part interpolated in the wide-range table (0–50 °C, up to its largest molality); u combines
       the table's model spread, 2 % of the Debye–Hückel term and :data:`U_INTERPOLATION`.
    2. Pitzer's equation with the tabulated 25 °C enthalpy parameters (0 to 50 degC; u = 3 % of
       φ_L plus up to 0.02 kJ/mol, 2 % of φ_L per K away from 25 degC, cupcal's estimates, plus
       :func:`model_spread_u` from 0.1 mol/kg).
    3. For a 1:1 electrolyte at m <= 0.1 mol/kg, the Debye–Hückel term alone with
       u = 2RT² m·1.5e-3 kg/(mol K) (the neglected short-range term for |B^L| up to 1.5e-3).
    """
    m = non_negative(molality, "molality", " in mol/kg")
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
    if wide_range:
        found = _from_wide_range(comp, m, T, A_H)
        if found is not None:
            return found
    for row in _pitzer_rows():
        if element_composition(row["formula"]) == comp and m <= float(row["m_max"]):
            return _pitzer_25C(row, m, T, A_H)
    products = dissolution_products(base)
    if products is None or len(products) != 2 or m > 0.1:
        return None
    (n1, e1), (n2, e2) = products
    if {n1, n2} != {1} or {abs(e1.species.charge), abs(e2.species.charge)} != {1}:
        return None
    u = 2.0 * R_GAS * T * T * m * _BL_MAX / 1000.0
    return PhiL(_long_range(m, A_H), u, "Debye–Hückel (long-range term only)", citation("DH_LIMIT"))
