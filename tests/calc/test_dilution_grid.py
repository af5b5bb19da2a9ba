"""The interpolation of the wide-range φ_L table (calc/refdata/dilution.py) against scipy.interpolate.

calc evaluates the table with a few lines of numpy (a tensor-product not-a-knot cubic spline for the
short-range part, bilinear for the model spread) so that `cupcal analyze` does not import
scipy.interpolate (issue 14; docs/methods.md §4.6). The reference here is the general-purpose library
itself: scipy's ``RegularGridInterpolator`` with ``method="cubic"`` (a not-a-knot tensor-product
B-spline) and ``method="linear"``, at many points off the grid over the whole table. scipy's default
solver for "cubic" is iterative (``gcrotmk``) and leaves up to 1e-4 kJ/mol of residual on this table
(measured); the exact reference is the same interpolant with a direct sparse solver (``spsolve``).
"""

from __future__ import annotations

import subprocess
import sys

import numpy as np
import pytest
from scipy.interpolate import RegularGridInterpolator
from scipy.sparse.linalg import spsolve

from calc.refdata.dilution import U_INTERPOLATION, _spline_moments, _Table, _weights, _wide_range_tables
from calc.refdata.formula import element_composition

SALTS = ("NaCl", "KCl", "HCl")


def _table(salt: str) -> _Table:
    return _wide_range_tables()[element_composition(salt)][1]


def _points(table: _Table, n: int, seed: int) -> np.ndarray:
    rng = np.random.default_rng(seed)
    return np.column_stack([rng.uniform(0.0, table.s[-1], n), rng.uniform(table.t[0], table.t[-1], n)])


@pytest.mark.parametrize("salt", SALTS)
def test_short_range_part_is_scipys_cubic_interpolant(salt):
    table = _table(salt)
    pts = _points(table, 1500, seed=14)
    got = np.array([table.at(s, t)[0] for s, t in pts])
    exact = RegularGridInterpolator((table.s, table.t), table.short, method="cubic", solver=spsolve)(pts)
    assert np.abs(got - exact).max() <= 1e-10  # kJ/mol; the table spans several kJ/mol
    # and scipy's default (iterative) solve: within its residual, far inside the budget's term
    default = RegularGridInterpolator((table.s, table.t), table.short, method="cubic")(pts)
    assert np.abs(got - default).max() <= 0.2 * U_INTERPOLATION


@pytest.mark.parametrize("salt", SALTS)
def test_model_spread_is_scipys_linear_interpolant(salt):
    table = _table(salt)
    pts = _points(table, 1500, seed=41)
    got = np.array([table.at(s, t)[1] for s, t in pts])
    ref = RegularGridInterpolator((table.s, table.t), table.u, method="linear")(pts)
    assert np.abs(got - ref).max() <= 1e-12


@pytest.mark.parametrize("salt", SALTS)
def test_grid_edges_and_nodes_give_the_tabulated_values(salt):
    table = _table(salt)
    for i in (0, 1, table.s.size // 2, table.s.size - 2, table.s.size - 1):
        for j in (0, 1, 25, table.t.size - 1):
            short, u = table.at(float(table.s[i]), float(table.t[j]))
            assert short == pytest.approx(table.short[i, j], abs=1e-12)
            assert u == pytest.approx(table.u[i, j], abs=1e-12)


def test_spline_reproduces_a_cubic_on_an_uneven_grid():
    # a not-a-knot cubic spline reproduces any cubic polynomial exactly (common practice, no source);
    # the grid ends in a short step, like the table's last √m
    x = np.array([0.0, 0.1, 0.2, 0.35, 0.5, 0.6, 0.7, 0.75])
    f = lambda v: 2.0 - v + 3.0 * v**2 - 5.0 * v**3  # noqa: E731
    K = _spline_moments(x)
    for x0 in np.linspace(0.0, 0.75, 41):
        assert _weights(x, float(x0), K) @ f(x) == pytest.approx(f(x0), abs=1e-12)


def test_kcl_phi_L_does_not_import_scipy_interpolate():
    # like tests/calc/test_layering.py: the analyze path up to φ_L, in a fresh interpreter
    code = (
        "import sys, calc.analysis\n"
        "from calc.refdata.dilution import phi_L\n"
        "assert phi_L('KCl', 0.5, 295.0).model.startswith('Pitzer wide-range')\n"
        "print('scipy.interpolate' in sys.modules)\n"
    )
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True)
    assert out.stdout.strip() == "False"


def test_a_hole_in_the_grid_is_named(monkeypatch):
    import io

    from calc.errors import InputError
    from calc.refdata import dilution

    with dilution.open_data("phi_L_wide_range.csv") as fh:
        lines = fh.read().splitlines(keepends=True)
    hole = next(i for i, line in enumerate(lines) if line.startswith("KCl,17,1.2000,"))
    text = "".join(lines[:hole] + lines[hole + 1 :])
    monkeypatch.setattr(dilution, "open_data", lambda name: io.StringIO(text))
    with pytest.raises(InputError, match=r"phi_L_wide_range\.csv: the grid of KCl has holes"):
        dilution._wide_range_tables.__wrapped__()
