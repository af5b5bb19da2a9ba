"""The construction of each ΔT method: what it fitted, as a typed record that draws its own curves.

Every method returns one of these in :attr:`DeltaT.construction <calc.deltat.base.DeltaT>`.
``curves(t0, t1)`` gives the method's drift model as named curves ``name → (t / s, T / K)``
(the plots only draw them); ``to_dict()`` gives the JSON-ready mapping stored with a result and
written to exports (its keys and values are part of the stored format: do not change them).

Curve names: ``fore`` and ``after`` (drift lines or Newtonian drifts), ``model`` (the fitted
probe reading of ``model-fit``), ``start`` and ``extreme`` (the two levels of ``naive``).
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Any

import numpy as np

from calc.deltat.curves import grid, line_values, newton_values, probe_reading

__all__ = [
    "Curves",
    "Line",
    "Construction",
    "SpanConstruction",
    "NewtonianConstruction",
    "JointNewtonConstruction",
    "AfterNewtonConstruction",
    "LineConstruction",
    "EqualAreaConstruction",
    "ModelFitConstruction",
    "NaiveConstruction",
    "SharedFitConstruction",
]

#: Named curves: name → (times / s, temperatures / K).
Curves = dict[str, tuple[np.ndarray, np.ndarray]]
#: A straight drift line (value at the centre time a / K, slope b / K s⁻¹, centre time / s).
Line = tuple[float, float, float]


@dataclass(frozen=True)
class Construction:
    """A construction with nothing to draw (a planned ΔT, or a method that records nothing)."""

    def curves(self, t0: float, t1: float, n: int = 240) -> Curves:
        """Return the drift model as named curves over the log from ``t0`` to ``t1`` (s)."""
        return {}

    def to_dict(self) -> dict[str, Any]:
        """Return the stored (JSON-ready) form."""
        return {}

    @property
    def delta_t_time(self) -> float | None:
        """Return the time at which ΔT is read off the construction (s), None when there is none."""
        return None


@dataclass(frozen=True)
class SpanConstruction(Construction):
    """A construction over a main period from t_i (mixing) to t_f (start of the after period)."""

    t_i: float
    t_f: float

    def to_dict(self) -> dict[str, Any]:
        return {"t_i": self.t_i, "t_f": self.t_f}

    @property
    def delta_t_time(self) -> float | None:
        return self.t_i


@dataclass(frozen=True)
class NewtonianConstruction(SpanConstruction):
    """Common part of the Newtonian Regnault–Pfaundler constructions (docs/methods.md §2.3)."""

    k_per_s: float
    u_k_per_s: float
    convergence_temperature_K: float
    fore_line: Line
    after_line: Line
    autocorrelation: float
    residual_sd_K: float

    def _law(self) -> dict[str, tuple[float, ...]]:
        raise NotImplementedError

    def to_dict(self) -> dict[str, Any]:
        return {
            "k_per_s": self.k_per_s,
            "u_k_per_s": self.u_k_per_s,
            "convergence_temperature_K": self.convergence_temperature_K,
            **self._law(),
            "fore_line": self.fore_line,
            "t_i": self.t_i,
            "t_f": self.t_f,
            "after_line": self.after_line,
            "autocorrelation": self.autocorrelation,
            "residual_sd_K": self.residual_sd_K,
        }


@dataclass(frozen=True)
class JointNewtonConstruction(NewtonianConstruction):
    """One Newtonian drift law g = g_i + k (y_i − T) fitted to the fore and after periods together.

    ``newton_joint`` is (y_i, y_f, g_i, k): the levels at t_i and t_f, the drift at y_i and the
    exchange constant.
    """

    newton_joint: tuple[float, float, float, float]

    def _law(self) -> dict[str, tuple[float, ...]]:
        return {"newton_joint": self.newton_joint}

    def drift(self, temperature: np.ndarray | float) -> np.ndarray | float:
        """Return the drift rate g(T) = g_i + k (y_i − T) in K/s."""
        y_i, _y_f, g_i, k = self.newton_joint
        return g_i + k * (y_i - np.asarray(temperature, dtype=float))

    def curves(self, t0: float, t1: float, n: int = 240) -> Curves:
        """``fore``: the law through (t_i, y_i) up to t_f; ``after``: the law through (t_f, y_f) from t_i."""
        y_i, y_f, g_i, k = self.newton_joint
        g_f = g_i + k * (y_i - y_f)
        tf = grid(t0, self.t_f, self.t_i, n=n)
        ta = grid(self.t_i, t1, self.t_f, n=n)
        return {
            "fore": (tf, newton_values(y_i, g_i, k, self.t_i, tf)),
            "after": (ta, newton_values(y_f, g_f, k, self.t_f, ta)),
        }


@dataclass(frozen=True)
class AfterNewtonConstruction(NewtonianConstruction):
    """Two solutions: the final system's Newtonian law from the after period alone, start level from the fore line.

    ``after_newton`` is (y_f, g_f, k, t_f). ``fore_bend`` is (q0, q1, q2): the Newtonian fore drift's
    departure q0 + q1 u + q2 u² (u = t − t_i) from the straight fore line, q0 the correction of the start
    level at mixing (docs/methods.md §8.8).
    """

    after_newton: tuple[float, float, float, float]
    fore_bend: tuple[float, float, float] = (0.0, 0.0, 0.0)

    def _law(self) -> dict[str, tuple[float, ...]]:
        return {"after_newton": self.after_newton, "fore_bend": self.fore_bend}

    def curves(self, t0: float, t1: float, n: int = 240) -> Curves:
        """``fore``: the other system's bent fore drift up to mixing (through the start level at t_i);
        ``after``: the after law from t_i."""
        y_f, g_f, k, t_f = self.after_newton
        q0, q1, q2 = self.fore_bend
        tf = grid(t0, self.t_i, n=n)
        u = tf - self.t_i
        fore = line_values(*self.fore_line, tf) + q0 + u * (q1 + u * q2)
        ta = grid(self.t_i, t1, t_f, n=n)
        return {"fore": (tf, fore), "after": (ta, newton_values(y_f, g_f, k, t_f, ta))}


@dataclass(frozen=True)
class LineConstruction(SpanConstruction):
    """Straight fore and after drift lines read at the time t_x (docs/methods.md §2.1)."""

    fore_line: Line
    after_line: Line
    t_x: float

    def to_dict(self) -> dict[str, Any]:
        return {
            "fore_line": self.fore_line,
            "after_line": self.after_line,
            "t_x": self.t_x,
            "t_i": self.t_i,
            "t_f": self.t_f,
        }

    @property
    def delta_t_time(self) -> float | None:
        return self.t_x

    def curves(self, t0: float, t1: float, n: int = 240) -> Curves:
        """``fore`` up to t_x and ``after`` from t_x, the two straight lines."""
        tf = grid(t0, self.t_x, n=n)
        ta = grid(self.t_x, t1, n=n)
        return {"fore": (tf, line_values(*self.fore_line, tf)), "after": (ta, line_values(*self.after_line, ta))}


@dataclass(frozen=True)
class EqualAreaConstruction(LineConstruction):
    """Straight drift lines read at the equal-area time t_x (docs/methods.md §2.2)."""

    sixty_percent_time: float | None

    def to_dict(self) -> dict[str, Any]:
        return {**super().to_dict(), "sixty_percent_time": self.sixty_percent_time}


@dataclass(frozen=True)
class ModelFitConstruction(SpanConstruction):
    """The fitted explicit model (docs/methods.md §2.4).

    ``params`` are (T∞, k, T_m, D, ln k_r, ln s), or (T∞, k, D, ln k_r, ln s) for two solutions,
    whose start level T_m (the fore line at mixing) is ``start_level``.
    """

    k_per_s: float
    release_time_constant_s: float
    probe_time_constant_s: float
    convergence_temperature_K: float
    params: tuple[float, ...]
    two_solution: bool
    start_level: float

    def to_dict(self) -> dict[str, Any]:
        return {
            "k_per_s": self.k_per_s,
            "release_time_constant_s": self.release_time_constant_s,
            "probe_time_constant_s": self.probe_time_constant_s,
            "convergence_temperature_K": self.convergence_temperature_K,
            "t_i": self.t_i,
            "t_f": self.t_f,
            "params": list(self.params),
            "two_solution": self.two_solution,
        }

    def curves(self, t0: float, t1: float, n: int = 240) -> Curves:
        """``model``: the fitted probe reading (from mixing only for two solutions)."""
        if self.two_solution:
            T_inf, k, D, lkr, ls = self.params
            T_m = self.start_level
            tt = grid(self.t_i, t1, n=n)
        else:
            T_inf, k, T_m, D, lkr, ls = self.params
            tt = grid(t0, t1, self.t_i, n=n)
        u = tt - self.t_i
        post = probe_reading(np.maximum(u, 0.0), T_inf, k, T_m, D, math.exp(lkr), math.exp(ls))
        pre = T_inf + (T_m - T_inf) * np.exp(-k * np.minimum(u, 0.0))
        return {"model": (tt, np.where(u < 0, pre, post))}


@dataclass(frozen=True)
class NaiveConstruction(SpanConstruction):
    """The naive levels: the mean of the last fore readings and the extreme reading (docs/methods.md §2.5)."""

    fore_start: float
    start_level: float
    extreme_level: float

    def curves(self, t0: float, t1: float, n: int = 240) -> Curves:
        """``start`` over the fore period up to mixing, ``extreme`` from mixing to the end of the log."""
        return {
            "start": (np.array([self.fore_start, self.t_i]), np.full(2, self.start_level)),
            "extreme": (np.array([self.t_i, t1]), np.full(2, self.extreme_level)),
        }


@dataclass(frozen=True)
class SharedFitConstruction(SpanConstruction):
    """Several events in one log with one shared drift fit (the in-situ calibration kind); draws nothing yet."""

    k_per_s: float
    shared_windows: tuple[tuple[float, float], ...]
    events: tuple[dict[str, Any], ...]  # name, start, main_end, delta_t, u_fit
    correlation: tuple[tuple[float, ...], ...]
    residual_sd_K: float
    autocorrelation: float

    def to_dict(self) -> dict[str, Any]:
        return {
            "t_i": self.t_i,
            "t_f": self.t_f,
            "k_per_s": self.k_per_s,
            "shared_windows": [list(w) for w in self.shared_windows],
            "events": [dict(e) for e in self.events],
            "correlation": [list(r) for r in self.correlation],
            "residual_sd_K": self.residual_sd_K,
            "autocorrelation": self.autocorrelation,
        }
