"""Measure how far calc's interpolation of phi_L_wide_range.csv is from the models between the grid lines.

Run by hand (needs the ``test`` extra: pytzer, jax) after remaking the table or changing the
interpolation in ``calc/refdata/dilution.py``; its result is the figure quoted for
``U_INTERPOLATION`` (docs/methods.md §4.6):

    python tests/tools/check_phi_L_interpolation.py

For each salt the short-range part of φ_L from the adopted model (as ``make_phi_L.py`` tabulates it)
is evaluated at the midpoints of every √m interval and at eight temperatures off the whole-degree grid,
and compared with calc's interpolant there. The table's values are rounded to 1e-5 kJ/mol.
"""

from __future__ import annotations

import numpy as np
from make_phi_L import SALTS, _debye_huckel, _model  # the script beside this one

from calc.refdata.dilution import U_INTERPOLATION, _wide_range_tables
from calc.refdata.formula import element_composition

T_OFF_GRID_C = np.array([0.5, 7.5, 15.5, 17.3, 24.5, 33.5, 41.5, 49.5])


def main() -> None:
    tables = _wide_range_tables()
    for salt, (cat, ani, key, _, _) in SALTS.items():
        table = tables[element_composition(salt)][1]
        s_mid = (table.s[:-1] + table.s[1:]) / 2.0
        T, m = T_OFF_GRID_C + 273.15, s_mid**2
        phi, _, _ = _model(cat, ani, key)
        model = phi(T, m) - _debye_huckel(T, m)  # (temperatures, molalities)
        calc = np.array([[table.at(float(s), float(t))[0] for s in s_mid] for t in T_OFF_GRID_C])
        err = np.abs(calc - model)
        i, j = np.unravel_index(int(err.argmax()), err.shape)
        print(
            f"{salt} ({key}): {err.size} points, largest |interpolant - model| {err.max():.5f} kJ/mol "
            f"at {T_OFF_GRID_C[i]} °C, {m[j]:.4f} mol/kg; above the first √m interval {err[:, 1:].max():.5f}; "
            f"U_INTERPOLATION {U_INTERPOLATION}"
        )


if __name__ == "__main__":
    main()
