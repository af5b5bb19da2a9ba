"""Write calc/refdata/data/phi_L_wide_range.csv: φ_L of NaCl, KCl and HCl from pytzer's wide-range models.

Run once, by hand, when the table is to be remade (docs/methods.md §4.6):

    python tests/tools/make_phi_L.py

It needs the ``test`` extra (pytzer and jax); calc never imports this script, pytzer or jax: it reads
the CSV and interpolates it (``calc/refdata/dilution.py``).

What is tabulated, per salt, molality and temperature:

* ``phi_L_sr`` — the short-range part of φ_L in kJ/mol from the adopted wide-range model: the model's
  full φ_L = −R T² ∂(Gex/(w RT))/∂T / m (jax's automatic derivative at constant molality, 1 atm)
  minus the model's own Debye–Hückel term (A_H/b) ln(1 + b√m), A_H = 4RT² ∂A_φ/∂T from the same A_φ
  (Archer & Wang 1990, pytzer's ``Aosm_AW90``). calc adds its own Debye–Hückel term back.
* ``u_spread`` — standard uncertainty in kJ/mol from the disagreement of the other Pitzer models pytzer
  carries for that salt: the largest |φ_L(other) − φ_L(adopted)| taken as the half-width of a
  rectangular distribution (÷√3), over (a) every other model with a fitted temperature dependence
  that pytzer flags valid at that temperature, and (b) at every temperature, the disagreement at
  25 °C of the Silvester & Pitzer (1978) first-derivative model (calc's earlier term; at 25 °C it is a
  genuine fit, away from 25 °C it lacks the heat-capacity term, so it is only used at 25 °C).
  Models whose parameters do not change with temperature give no enthalpy term and are skipped.
  The half-width at a molality is never taken smaller than at any lower molality of the same
  temperature (two models that cross agree there by accident, not because φ_L is known better).
"""

from __future__ import annotations

import math
from pathlib import Path

import jax
import jax.numpy as jnp
import numpy as np
import pytzer as pz
from pytzer import debyehueckel, parameters, unsymmetrical
from pytzer.libraries import Library

jax.config.update("jax_enable_x64", True)  # derivatives of sums of nearly equal terms

OUT = Path(__file__).resolve().parents[2] / "calc" / "refdata" / "data" / "phi_L_wide_range.csv"
R_GAS = 8.314462618  # J/(mol K), CODATA 2018
P_DBAR = 10.1325  # 1 atm in pytzer's pressure unit
B = 1.2  # kg^1/2 mol^-1/2, Pitzer's b
T_GRID = np.arange(273.15, 323.15 + 0.01, 1.0)  # 0–50 °C every 1 K, calc's range for φ_L
SQRT_M_STEP = 0.1  # grid in √m: the short-range part is smooth in √m

#: salt: (cation, anion, adopted model key, largest molality tabulated in mol/kg, alternatives)
SALTS = {
    "NaCl": ("Na", "Cl", "A92ii", 6.0, ("M88", "SRRJ87", "JESS")),
    "KCl": ("K", "Cl", "A99", 4.5, ("GM89", "HM83", "SRRJ87", "ZD17", "JESS")),
    "HCl": ("H", "Cl", "CMR93", 4.5, ("JESS",)),
}
SOURCES = {
    "A92ii": "Archer, D. G. J. Phys. Chem. Ref. Data 21, 793 (1992)",
    "A99": "Archer, D. G. J. Phys. Chem. Ref. Data 28, 1 (1999)",
    "CMR93": "Campbell, D. M.; Millero, F. J.; Roy, R. et al. Mar. Chem. 44, 221 (1993)",
    "M88": "Møller, N. Geochim. Cosmochim. Acta 52, 821 (1988)",
    "GM89": "Greenberg, J. P.; Møller, N. Geochim. Cosmochim. Acta 53, 2503 (1989)",
    "HM83": "Holmes, H. F.; Mesmer, R. E. J. Phys. Chem. 87, 1242 (1983)",
    "ZD17": "Zezin, D.; Driesner, T. Fluid Phase Equilib. 453, 24 (2017)",
    "SRRJ87": "(publication not identified here; pytzer's key SRRJ87)",
    "JESS": "parameters of the JESS database as carried by pytzer",
    "SP78": "Silvester, L. F.; Pitzer, K. S. J. Solution Chem. 7, 327 (1978)",
}


def _model(cat: str, ani: str, key: str):
    """Return (φ_L(T, m) in kJ/mol vectorised, valid(T)) for one c–a parameter function of pytzer."""
    fn = getattr(parameters, f"bC_{cat}_{ani}_{key}")
    lib = Library(name=f"cupcal-phi-L-{cat}{ani}-{key}")
    lib.update_Aphi(debyehueckel.Aosm_AW90)
    lib.update_func_J(unsymmetrical.P75_eq47)
    lib.update_ca(cat, ani, fn)
    model = pz.set_library(pz, lib).model
    d_dT = jax.grad(lambda T, m: model.Gibbs_nRT({cat: m, ani: m}, T, P_DBAR))
    d_dT = jax.jit(jax.vmap(jax.vmap(d_dT, in_axes=(None, 0)), in_axes=(0, None)))

    def phi(T: np.ndarray, m: np.ndarray) -> np.ndarray:
        g = np.asarray(d_dT(jnp.asarray(T), jnp.asarray(m)))  # shape (nT, nm)
        return -R_GAS * T[:, None] ** 2 * g / m[None, :] / 1000.0

    def valid(T: np.ndarray) -> np.ndarray:
        return np.array([bool(fn(float(t), P_DBAR)[-1]) for t in T])

    changes = abs(float(fn(288.15, P_DBAR)[0]) - float(fn(308.15, P_DBAR)[0])) > 0
    return phi, valid, changes


def _debye_huckel(T: np.ndarray, m: np.ndarray) -> np.ndarray:
    """(A_H/b) ln(1 + b√m) in kJ/mol with A_H = 4RT² ∂A_φ/∂T from pytzer's Archer & Wang (1990) A_φ."""
    dA = jax.vmap(jax.grad(lambda T: debyehueckel.Aosm_AW90(T, P_DBAR)[0]))(jnp.asarray(T))
    A_H = 4.0 * R_GAS * T**2 * np.asarray(dA)
    return A_H[:, None] / B * np.log1p(B * np.sqrt(m))[None, :] / 1000.0


def main() -> None:
    rows = []
    for salt, (cat, ani, key, m_max, others) in SALTS.items():
        s = np.arange(0.0, math.sqrt(m_max) + 1e-9, SQRT_M_STEP)
        s = np.unique(np.append(s, math.sqrt(m_max)))
        m = np.maximum(s**2, 1e-9)  # φ_L/m form: evaluate at a tiny molality instead of 0
        adopted, ok, _ = _model(cat, ani, key)
        assert ok(T_GRID).all(), f"{key} not valid over the grid"
        ref = adopted(T_GRID, m)
        short = ref - _debye_huckel(T_GRID, m)
        dev = np.zeros_like(ref)
        for other in others:
            phi, valid, changes = _model(cat, ani, other)
            assert changes, other
            d = np.abs(phi(T_GRID, m) - ref)  # evaluated now, before the next model is loaded
            dev = np.maximum(dev, np.where(valid(T_GRID)[:, None], d, 0.0))
        sp78, _, _ = _model(cat, ani, "SP78")  # (pytzer reloads in place: evaluate each model at once)
        i25 = int(np.argmin(np.abs(T_GRID - 298.15)))
        dev25 = np.abs(sp78(T_GRID[i25 : i25 + 1], m)[0] - ref[i25])
        # never smaller than at a lower molality: where two models cross they agree by accident
        u = np.maximum.accumulate(np.maximum(dev, dev25[None, :]), axis=1) / math.sqrt(3.0)
        for i, T in enumerate(T_GRID):
            for j, mj in enumerate(s**2):
                sr = 0.0 if mj == 0 else short[i, j]
                rows.append(f"{salt},{T - 273.15:.0f},{s[j]:.4f},{mj:.4f},{sr:.5f},{(0.0 if mj == 0 else u[i, j]):.5f}")
        for mq in (0.1, 0.5, 1.0, 2.0, 3.0, m_max):
            j = int(np.argmin(np.abs(s**2 - mq)))
            print(salt, key, f"m={s[j] ** 2:.2f}", "u(0,15,25,40,50 C):", np.round(u[[0, 15, 25, 40, 50], j], 3))
    models = "; ".join(f"{k}: {v}" for k, v in SOURCES.items())
    header = [
        "# φ_L of NaCl, KCl and HCl in water at 1 atm from wide-range Pitzer models, generated by tests/tools/make_phi_L.py",
        f"# with pytzer {pz.__version__} (Humphreys & Schiller, doi:10.5281/zenodo.2637914) and jax {jax.__version__}; do not edit by hand.",
        "# adopted models (pytzer's c-a functions): NaCl bC_Na_Cl_A92ii, KCl bC_K_Cl_A99, HCl bC_H_Cl_CMR93;",
        "# A_phi of Archer & Wang, J. Phys. Chem. Ref. Data 19, 371 (1990) (pytzer's Aosm_AW90).",
        "# phi_L_sr: kJ/mol, the model's phi_L minus its own Debye-Hueckel term (A_H/1.2) ln(1 + 1.2 sqrt(m)).",
        "# u_spread: kJ/mol, standard uncertainty from the other models (see the script's docstring, docs/methods.md §4.6).",
        f"# publications by pytzer key (from memory, not re-checked against the papers): {models}",
    ]
    OUT.write_text("\n".join(header + ["formula,t_C,sqrt_m,m,phi_L_sr,u_spread"] + rows) + "\n", encoding="utf-8")
    print("wrote", OUT, len(rows), "rows")
    pz.set_library(pz, "CWTD23")  # pytzer's default library back


if __name__ == "__main__":
    main()
