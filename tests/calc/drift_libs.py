"""Drift windows with spikes and a known true line, fitted by calc and by statsmodels, for comparison.

Shared by tests/calc/test_drift_reference.py and tests/benchmarks/test_robust_drift_libraries.py
(docs/methods.md §8.7).

A window is the fore period (start of the log to the true mixing time) or the last 300 s of a log
from calc.simulation.realistic, with 0–4 extra wild readings (1–2 readings wide, 0.1–2 K, either
sign, quantised to the thermometer) put into each window, so every fit meets spikes. The truth is
the least-squares line through the noise-free probe temperature at the same times; each fit is
reported as its value at the window's centre time t̄ (intercept) and its slope, with the standard
uncertainties it states.

Fits compared on the same readings:

* calc: the spike screen of calc/deltat/logprep.py over the whole log, then
  calc/deltat/drift.py::fit_line (ordinary least squares with the AR(1) inflation of §8.4), its
  uncertainties as the fit states them and with the resolution terms the budget adds (§8.2);
* ordinary least squares on the raw window (no screen), calc's fit_line;
* statsmodels RLM with HuberT and with TukeyBiweight on the raw window, standard errors as the
  library states them (independent residuals assumed);
* statsmodels RLM TukeyBiweight with calc's AR(1) inflation applied to its standard errors;
* statsmodels OLS with Newey–West (HAC) standard errors on the screened window: the library's
  own allowance for correlated noise, against calc's AR(1) inflation.
"""

from __future__ import annotations

import math
import time
import warnings
from dataclasses import dataclass

import numpy as np
import statsmodels.api as sm
from statsmodels.tools.sm_exceptions import ConvergenceWarning

from calc.deltat.base import resolution_term
from calc.deltat.budget_terms import slope_floor
from calc.deltat.drift import fit_line, inflation, lag1_autocorrelation
from calc.deltat.logprep import prepare_log
from calc.simulation.realistic import realistic_scenario

KINDS = ("dissolution", "neutralization", "electrical-calibration", "mixing-calibration", "reaction")
RESOLUTIONS = (0.001, 0.01, 0.1)
AFTER_S = 300.0


@dataclass
class Window:
    """One drift window: raw readings, the screened log, and the true line."""

    seed: int
    which: str  # "fore" or "after"
    resolution: float
    t: np.ndarray  # raw window (with spikes)
    y: np.ndarray
    t_clean: np.ndarray  # the same window after calc's spike screen (over the whole log)
    y_clean: np.ndarray
    t_bar: float
    a_true: float  # K at t_bar
    b_true: float  # K/s
    n_spikes: int


@dataclass
class Fit:
    """One method's line on one window."""

    method: str
    a: float
    b: float
    u_a: float
    u_b: float
    seconds: float


def _add_spikes(gen: np.random.Generator, y: np.ndarray, idx: np.ndarray, q: float) -> int:
    k = int(gen.integers(0, 5))
    for _ in range(k):
        i = int(gen.choice(idx[2:-3]))
        width = int(gen.integers(1, 3))
        size = gen.uniform(0.1, 2.0) * gen.choice([-1.0, 1.0])
        y[i : i + width] = q * np.round((y[i : i + width] + size) / q)
    return k


def windows_from_seed(seed: int) -> list[Window]:
    """Return the fore and after windows of one simulated log (kind and resolution cycle with the seed)."""
    kind, q = KINDS[seed % len(KINDS)], RESOLUTIONS[(seed // len(KINDS)) % len(RESOLUTIONS)]
    gen = np.random.default_rng(seed)
    sim = realistic_scenario(kind, gen, resolution=q, mixing_given=False)
    t = sim.time_s
    y = sim.reading_C + 273.15
    probe = sim.probe_C + 273.15
    masks = {"fore": t <= sim.truth.t_m_s, "after": t >= t[-1] - AFTER_S}
    n_sp = {w: _add_spikes(gen, y, np.flatnonzero(m), q) for w, m in masks.items()}
    prep = prepare_log(t, y, resolution=q)
    out = []
    for which, m in masks.items():
        tw, yw = t[m], y[m]
        tb = float(tw.mean())
        X = np.column_stack([np.ones(tw.size), tw - tb])
        (a_true, b_true), *_ = np.linalg.lstsq(X, probe[m], rcond=None)
        keep = (prep.t >= tw[0]) & (prep.t <= tw[-1])
        out.append(
            Window(seed, which, q, tw, yw, prep.t[keep], prep.y[keep], tb, float(a_true), float(b_true), n_sp[which])
        )
    return out


def _calc_line(t, y, tb, q=0.0):
    """calc's line; with ``q`` its uncertainties also carry the budget's resolution terms (§8.2)."""
    f = fit_line(t, y)
    ua2, ub2 = f.var_at(tb), f.var_b
    if q > 0:
        ua2 += resolution_term(q, f.s) ** 2
        ub2 += slope_floor(q, f.s, float(t[-1] - t[0])) ** 2
    return f.at(tb), f.b, math.sqrt(ua2), math.sqrt(ub2)


def _rlm(t, y, tb, norm, ar_inflate=False):
    X = np.column_stack([np.ones(t.size), t - tb])
    with warnings.catch_warnings():
        # on a flat 0.1 K staircase the robust scale is zero: the library warns and states u = 0,
        # which the comparison counts as it stands
        warnings.simplefilter("ignore", ConvergenceWarning)
        warnings.simplefilter("ignore", RuntimeWarning)  # 0/0 in the weights when the scale is zero
        r = sm.RLM(y, X, M=norm).fit()
    ua, ub = (float(v) for v in r.bse)
    if ar_inflate:
        # ρ from the residuals the fit kept (weight over one half: the spikes left out)
        kept = norm.weights(r.resid / r.scale) > 0.5 if r.scale > 0 else np.ones(t.size, dtype=bool)
        f = math.sqrt(inflation(lag1_autocorrelation(r.resid[kept])))
        ua, ub = ua * f, ub * f
    return float(r.params[0]), float(r.params[1]), ua, ub


def _ols_hac(t, y, tb):
    X = np.column_stack([np.ones(t.size), t - tb])
    lags = max(1, int(math.floor(4 * (t.size / 100.0) ** (2.0 / 9.0))))  # Newey & West's rule of thumb
    r = sm.OLS(y, X).fit(cov_type="HAC", cov_kwds={"maxlags": lags})
    return float(r.params[0]), float(r.params[1]), float(r.bse[0]), float(r.bse[1])


METHODS = {
    "calc: spike screen + line (AR(1))": lambda w: _calc_line(w.t_clean, w.y_clean, w.t_bar),
    "calc, u with resolution terms": lambda w: _calc_line(w.t_clean, w.y_clean, w.t_bar, w.resolution),
    "line, no screen": lambda w: _calc_line(w.t, w.y, w.t_bar),
    "statsmodels RLM HuberT": lambda w: _rlm(w.t, w.y, w.t_bar, sm.robust.norms.HuberT()),
    "statsmodels RLM TukeyBiweight": lambda w: _rlm(w.t, w.y, w.t_bar, sm.robust.norms.TukeyBiweight()),
    "RLM TukeyBiweight + AR(1) inflation": lambda w: _rlm(w.t, w.y, w.t_bar, sm.robust.norms.TukeyBiweight(), True),
    "statsmodels OLS + HAC, screened": lambda w: _ols_hac(w.t_clean, w.y_clean, w.t_bar),
}


def fit_all(w: Window, names=None) -> list[Fit]:
    """Fit one window with every method (or those named)."""
    out = []
    for name, fn in METHODS.items():
        if names is not None and name not in names:
            continue
        t0 = time.perf_counter()
        a, b, ua, ub = fn(w)
        out.append(Fit(name, a, b, ua, ub, time.perf_counter() - t0))
    return out
