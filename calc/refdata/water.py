"""Liquid water at 0.101325 MPa: density, heat capacity, dielectric constant, Debye–Hückel slopes.

Water
    Density and isobaric specific heat capacity at 0.101325 MPa from the IAPWS-95
    formulation (Wagner & Pruß, J. Phys. Chem. Ref. Data 31, 387 (2002)) as implemented
    by the ``iapws`` package. One IAPWS-95 call takes a few milliseconds (and importing
    ``iapws`` loads ``scipy.optimize``), so cupcal ships the values on a 0.25 K grid,
    ``calc/refdata/data/iapws95_water_grid.csv`` (written by ``python -m calc.refdata.water``
    from ``iapws``; the tests check every node against ``iapws``), and interpolates them with a
    four-point (cubic) Lagrange polynomial; the interpolation error is below 1e-10 relative
    (measured over 0-90 degC against direct IAPWS-95 calls; the tests require < 1e-6, see
    ``tests/calc/test_properties.py``). The static dielectric constant (IAPWS 1997 release,
    from the node's IAPWS-95 density) is interpolated the same way.

    Stated standard uncertainties (cupcal's choice): the uncertainties that the IAPWS-95
    release gives for liquid water at ambient pressure, taken as standard uncertainties
    (conservative): 1e-6 relative for density and 1e-3 relative for c_p (from memory;
    Wagner & Pruß 2002).

"""

from __future__ import annotations

import math
import warnings
from dataclasses import dataclass
from functools import lru_cache
from typing import cast

from calc.errors import InputError
from calc.refdata.arguments import as_number

__all__ = [
    "ModelledProperty",
    "water_density",
    "water_specific_heat",
    "water_dielectric_constant",
    "debye_huckel_slopes",
    "T_MIN_K",
    "T_MAX_K",
    "R_GAS",
    "GRID_FILE",
    "GRID_NODES",
    "write_grid",
]

IAPWS_MODEL = "IAPWS-95 (iapws package)"

P_MPA = 0.101325
T_MIN_K = 273.15
T_MAX_K = 363.15
_STEP_K = 0.25

U_REL_WATER_DENSITY = 1e-6
U_REL_WATER_CP = 1e-3


@dataclass(frozen=True)
class ModelledProperty:
    """One property (a density or a specific heat capacity) as a named model gives it (IAPWS-95,
    Laliberté, the water fallback), with its standard uncertainty and unit."""

    value: float
    u: float
    unit: str
    model: str


# --------------------------------------------------------------------------- water


#: The shipped grid: nodes ``i`` at T = i · 0.25 K (IAPWS-95 at 0.101325 MPa, from ``iapws``).
GRID_FILE = "iapws95_water_grid.csv"
#: Node range of the shipped grid: 272.5 K to 363.75 K, the model's range plus the nodes that the
#: interpolation and the Debye–Hückel slopes' ±0.25 K differences reach.
GRID_NODES = (1090, 1455)


class _WaterGrid:
    """Table of IAPWS-95 density (g/mL), c_p (J/(g K)) and dielectric constant on a 0.25 K grid.

    The nodes come from the shipped file; a node outside it is computed with ``iapws`` on first use.
    """

    def __init__(self) -> None:
        self._nodes: dict[int, tuple[float, float, float]] | None = None

    def _load(self) -> dict[int, tuple[float, float, float]]:
        import csv

        from calc.refdata.datafiles import open_data

        nodes: dict[int, tuple[float, float, float]] = {}
        with open_data(GRID_FILE) as fh:
            for row in csv.DictReader(line for line in fh if not line.startswith("#")):
                nodes[int(row["node"])] = (
                    float(row["density_g_mL"]),
                    float(row["cp_J_gK"]),
                    float(row["dielectric_constant"]),
                )
        return nodes

    def _node(self, i: int) -> tuple[float, float, float]:
        if self._nodes is None:
            self._nodes = self._load()
        node = self._nodes.get(i)
        if node is None:
            node = iapws_node(i)
            self._nodes[i] = node
        return node

    def values(self, T_K: float) -> tuple[float, float, float]:
        x = T_K / _STEP_K
        i = math.floor(x)
        s = x - i
        n0, n1, n2, n3 = (self._node(i + j) for j in (-1, 0, 1, 2))
        # Lagrange weights on nodes -1, 0, 1, 2 at fractional position s in [0, 1).
        w0 = -s * (s - 1.0) * (s - 2.0) / 6.0
        w1 = (s + 1.0) * (s - 1.0) * (s - 2.0) / 2.0
        w2 = -(s + 1.0) * s * (s - 2.0) / 2.0
        w3 = (s + 1.0) * s * (s - 1.0) / 6.0
        rho, cp, eps = (w0 * a + w1 * b + w2 * c + w3 * d for a, b, c, d in zip(n0, n1, n2, n3))
        return rho, cp, eps


def _iapws_direct(T_K: float) -> tuple[float, float]:
    """Return IAPWS-95 (density g/mL, c_p J/(g K)) at T_K and 0.101325 MPa, uncached."""
    import iapws

    with warnings.catch_warnings():
        # Nodes just below 273.16 K are metastable liquid; iapws warns but the
        # formulation is valid there.
        warnings.simplefilter("ignore")
        state = iapws.IAPWS95(T=T_K, P=P_MPA)
    return float(state.rho) / 1000.0, float(state.cp)


def iapws_node(i: int) -> tuple[float, float, float]:
    """Return node ``i`` of the grid from ``iapws``: (density g/mL, c_p J/(g K), dielectric constant)."""
    from iapws._iapws import _Dielectric

    T = i * _STEP_K
    rho, cp = _iapws_direct(T)
    return rho, cp, float(_Dielectric(rho * 1000.0, T))


def write_grid(path: str) -> None:
    """Write the grid file (:data:`GRID_FILE`) from ``iapws``: node, T, density, c_p, dielectric constant."""
    import iapws

    with open(path, "w", encoding="utf-8", newline="\n") as fh:
        fh.write(
            f"# IAPWS-95 liquid water at 0.101325 MPa (Wagner & Pruss 2002) and its static dielectric constant\n"
            f"# (IAPWS 1997 release), computed by the iapws package {iapws.__version__} on a 0.25 K grid;\n"
            "# written by `python -m calc.refdata.water`, checked against iapws by tests/calc/test_properties.py\n"
        )
        fh.write("node,T_K,density_g_mL,cp_J_gK,dielectric_constant\n")
        for i in range(GRID_NODES[0], GRID_NODES[1] + 1):
            rho, cp, eps = iapws_node(i)
            fh.write(f"{i},{i * _STEP_K!r},{rho!r},{cp!r},{eps!r}\n")


_WATER = _WaterGrid()


def _check_T(T_K: float, what: str = "temperature") -> float:
    T = as_number(T_K, what, " in kelvin")
    if not (T_MIN_K <= T <= T_MAX_K):
        raise InputError(
            f"{what} {T:.2f} K is outside the range of cupcal's water model "
            f"({T_MIN_K:.2f} K to {T_MAX_K:.2f} K, i.e. 0 degC to 90 degC)"
        )
    return T


def water_density(T_K: float) -> ModelledProperty:
    """Return the density of liquid water at ``T_K`` (273.15 K to 363.15 K, else :class:`InputError`) and
    0.101325 MPa from IAPWS-95, in g/mL, with a standard uncertainty of 1e-6 relative."""
    rho = _WATER.values(_check_T(T_K))[0]
    return ModelledProperty(rho, U_REL_WATER_DENSITY * rho, "g/mL", IAPWS_MODEL)


def water_specific_heat(T_K: float) -> ModelledProperty:
    """Return the isobaric specific heat capacity of liquid water at ``T_K`` (273.15 K to 363.15 K, else
    :class:`InputError`) from IAPWS-95, in J/(g K), with a standard uncertainty of 1e-3 relative."""
    cp = _WATER.values(_check_T(T_K))[1]
    return ModelledProperty(cp, U_REL_WATER_CP * cp, "J/(g*K)", IAPWS_MODEL)


@lru_cache(maxsize=256)
def water_dielectric_constant(T_K: float) -> float:
    """Return the static relative permittivity of water at T_K and 0.101325 MPa.

    The IAPWS 1997 release on the static dielectric constant (``iapws`` package) at the IAPWS-95
    density, interpolated on the shipped grid like the density (within 1e-9 relative of the
    release at the interpolated density; tests/calc/test_properties.py).
    """
    return float(_WATER.values(_check_T(T_K))[2])


_N_A = 6.02214076e23
_E = 1.602176634e-19
_EPS0 = 8.8541878128e-12
_K_B = 1.380649e-23
R_GAS = 8.314462618


def _a_phi(T_K: float) -> float:
    # density from the interpolated IAPWS-95 grid (a direct IAPWS-95 call costs ~7 ms)
    rho = water_density(T_K).value * 1000.0  # kg/m3
    eps = water_dielectric_constant(T_K)
    # float ** float is typed Any (a negative base gives a complex); the base is positive here
    return cast(
        float, math.sqrt(2.0 * math.pi * _N_A * rho) * (_E**2 / (4.0 * math.pi * _EPS0 * eps * _K_B * T_K)) ** 1.5 / 3.0
    )


def debye_huckel_slopes(T_K: float) -> tuple[float, float]:
    """Return the Debye–Hückel slopes (A_phi, A_H) of water at T_K and 0.101325 MPa.

    ``A_phi`` is the osmotic-coefficient slope in kg^(1/2) mol^(-1/2) and
    ``A_H = 4 R T^2 (dA_phi/dT)_p`` the enthalpy slope in J kg^(1/2) mol^(-3/2)
    (Pitzer's convention), both from IAPWS-95 density and the IAPWS dielectric constant.
    The temperature is rounded to 0.05 K (A_H changes by about 1.5 % per K, so the
    rounding changes φ_L by under 0.04 %), which lets a batch reuse the slopes.
    """
    return _dh_slopes(round(float(_check_T(T_K)) * 20.0) / 20.0)


@lru_cache(maxsize=1024)
def _dh_slopes(T: float) -> tuple[float, float]:
    h = 0.25
    a = _a_phi(T)
    dadT = (_a_phi(T + h) - _a_phi(T - h)) / (2.0 * h)
    return a, 4.0 * R_GAS * T * T * dadT


if __name__ == "__main__":  # pragma: no cover - regenerates the shipped grid
    from importlib import resources

    write_grid(str(resources.files("calc.refdata") / "data" / GRID_FILE))
