"""Mixing-time detection by the general-purpose change-point library ruptures, for comparison.

Shared by tests/calc/test_changepoint_reference.py and tests/benchmarks/test_changepoint_libraries.py
(docs/methods.md §8.7). Each detector takes the prepared log (calc's spike screen already run, as in
the analysis) and returns the time of the first change point in seconds, or None when it finds none.

The library is used as it comes: its own search methods (Dynp, Binseg, Pelt) and its own costs
("linear": least-squares line per segment, with time as the covariate so that dropped rows and
jittered stamps are handled; "l2": a constant per segment). Logs longer than ``COARSE_POINTS``
readings are searched first on every j-th reading, then again at full resolution in a window
around the coarse answer, because a full-resolution dynamic programme over a three-hour log at
1 s would take minutes.
"""

from __future__ import annotations

import math
import time
from dataclasses import dataclass

import numpy as np
import ruptures as rpt

from calc.deltat.logprep import prepare_log
from calc.deltat.periods import detect_mixing_time
from calc.errors import InputError

#: Largest number of readings searched in one pass.
COARSE_POINTS = 300
#: Half-width of the refining window beyond the coarse step, s.
REFINE_MARGIN_S = 60.0


def _noise_sd(y: np.ndarray) -> float:
    d2 = np.diff(y, 2)
    return float(np.median(np.abs(d2 - np.median(d2)))) * 1.4826 / math.sqrt(6.0)


def _signal(t: np.ndarray, y: np.ndarray) -> np.ndarray:
    # "linear" cost: the first column is the signal, the others the covariates (1, t)
    tc = (t - t[0]) / max(t[-1] - t[0], 1.0)
    return np.column_stack([y, np.ones_like(t), tc])


def _first_break(algo: str, t: np.ndarray, y: np.ndarray, pen: float | None) -> int | None:
    """Return the index of the first reading after the first change point (None: no change found)."""
    sig = _signal(t, y)
    if algo == "dynp":
        bk = rpt.Dynp(model="linear", min_size=4, jump=1).fit(sig).predict(n_bkps=2)
    elif algo == "binseg":
        bk = rpt.Binseg(model="linear", min_size=4, jump=1).fit(sig).predict(n_bkps=2)
    elif algo == "pelt":
        bk = rpt.Pelt(model="linear", min_size=4, jump=1).fit(sig).predict(pen=pen)
    else:  # pragma: no cover
        raise ValueError(algo)
    bk = [b for b in bk if b < t.size]
    return bk[0] if bk else None


def _bic_penalty(t: np.ndarray, y: np.ndarray) -> float:
    """Return a BIC penalty, σ² ln n per added parameter (two line coefficients and the break).

    σ² is the residual variance of a line through the first 60 s (the shortest fore period),
    inflated by the AR(1) factor (1 + ρ)/(1 − ρ) of those residuals: with σ from successive
    differences alone, correlated stirring noise made Pelt cut the fore drift into pieces (first
    break 50–180 s early in most logs of a trial run).
    """
    w = t <= t[0] + 60.0
    if w.sum() < 8:
        w = np.arange(t.size) < 8
    X = np.column_stack([np.ones(w.sum()), t[w] - t[w].mean()])
    beta, *_ = np.linalg.lstsq(X, y[w], rcond=None)
    r = y[w] - X @ beta
    s2 = max(float(np.dot(r, r)) / max(r.size - 2, 1), _noise_sd(y) ** 2, 1e-12)
    r = r - r.mean()
    rho = float(np.dot(r[:-1], r[1:]) / max(np.dot(r, r), 1e-300)) if r.size > 3 else 0.0
    rho = min(max(rho, 0.0), 0.95)
    return 3.0 * s2 * (1 + rho) / (1 - rho) * math.log(t.size)


def ruptures_linear(t: np.ndarray, y: np.ndarray, algo: str) -> float | None:
    """Return the first change point of a piecewise-linear fit (two stages for long logs)."""
    j = max(1, math.ceil(t.size / COARSE_POINTS))
    pen = _bic_penalty(t[::j], y[::j]) if algo == "pelt" else None
    k = _first_break(algo, t[::j], y[::j], pen)
    if k is None:
        return None
    if j == 1:
        return 0.5 * (t[k - 1] + t[k])
    tc = t[::j][k]
    step = t[::j][1] - t[::j][0]
    w = (t >= tc - 2 * step - REFINE_MARGIN_S) & (t <= tc + 2 * step + REFINE_MARGIN_S)
    tw, yw = t[w], y[w]
    kw = _first_break(algo, tw, yw, _bic_penalty(tw, yw) if algo == "pelt" else None)
    if kw is None:
        return None
    return 0.5 * (tw[kw - 1] + tw[kw])


def ruptures_l2(t: np.ndarray, y: np.ndarray) -> float | None:
    """Return the single change point of a piecewise-constant fit (Binseg, "l2" cost)."""
    bk = rpt.Binseg(model="l2", min_size=4, jump=1).fit(y.reshape(-1, 1)).predict(n_bkps=1)
    bk = [b for b in bk if b < t.size]
    return 0.5 * (t[bk[0] - 1] + t[bk[0]]) if bk else None


#: The detectors compared: name → function(t, y, resolution) → (time or None, u or None).
def _calc(t, y, q):
    try:
        return detect_mixing_time(t, y, q)
    except InputError:
        return None, None


DETECTORS = {
    "calc (segmented fit)": _calc,
    "ruptures Dynp, linear, 2 breaks": lambda t, y, q: (ruptures_linear(t, y, "dynp"), None),
    "ruptures Binseg, linear, 2 breaks": lambda t, y, q: (ruptures_linear(t, y, "binseg"), None),
    "ruptures Pelt, linear, BIC penalty": lambda t, y, q: (ruptures_linear(t, y, "pelt"), None),
    "ruptures Binseg, l2, 1 break": lambda t, y, q: (ruptures_l2(t, y), None),
}


@dataclass
class Outcome:
    """One detector on one log."""

    detector: str
    seed: int
    truth_s: float
    found_s: float | None
    u_s: float | None
    seconds: float

    @property
    def error_s(self) -> float | None:
        return None if self.found_s is None else self.found_s - self.truth_s


def prepared_log(sim, resolution: float):
    """Return (t, y) after calc's spike screen, as the analysis sees the log."""
    prep = prepare_log(sim.time_s, sim.reading_C + 273.15, resolution=resolution)
    return prep.t, prep.y


def run_all(sim, resolution: float, seed: int, names=None) -> list[Outcome]:
    """Run every detector (or those named) on one simulated log."""
    t, y = prepared_log(sim, resolution)
    out = []
    for name, fn in DETECTORS.items():
        if names is not None and name not in names:
            continue
        t0 = time.perf_counter()
        found, u = fn(t, y, resolution)
        out.append(Outcome(name, seed, sim.truth.t_m_s, found, u, time.perf_counter() - t0))
    return out
