"""The thermometer's sawtooth: what rounding to steps of q leaves in a drift window's residuals.

A reading at resolution q is off from the signal by a sawtooth of the signal, not by noise. Where
the signal sweeps through steps the residuals of a drift fit carry that sawtooth, and an AR(1)
reading of their autocorrelation takes it for noise correlated over many readings. The sawtooth
is predicted from the fitted curve and taken out before the noise is estimated; its effect on the
fitted levels and slopes is carried by the resolution terms (docs/methods.md §8.2).
"""

from __future__ import annotations

import math
from typing import cast

import numpy as np

__all__ = ["predicted_sawtooth", "split_sawtooth", "dither_variance", "DITHERED"]

#: Noise of this many steps dithers the sawtooth away: its first harmonic is damped by
#: exp(−2π²·0.483²) = 0.01, so what is left is under 1e-4 of the q²/12 share and is not predicted.
DITHERED = 0.483


def dither_variance(s: float, q: float) -> float:
    """Return the noise variance a window's residual SD ``s`` proves beyond quantisation (K²).

    Readings of a signal that sits at a step's edge flip between two steps even with almost no
    noise, and scatter by up to q/2. Only scatter beyond that, s² − q²/4, shows noise that dithers
    the quantiser; crediting s² − q²/12 took edge flipping for noise and shrank the resolution
    terms of short windows (docs/methods.md §8.2).
    """
    return max(s * s - q * q / 4.0, 0.0)


def predicted_sawtooth(fitted: np.ndarray, q: float, sigma: float) -> np.ndarray:
    """Return the mean quantisation error E[Q(x + n)] − x at the fitted values x (K).

    Q rounds to steps of q; n is Gaussian noise of standard deviation σ. The expectation is the
    sum over the nearby steps jq of jq·P(reading = jq), P from the normal distribution; at σ = 0
    it is the plain rounding error Q(x) − x.
    """
    x = np.asarray(fitted, dtype=float)
    if sigma <= 1e-9 * q:
        return cast(np.ndarray, np.round(x / q) * q - x)
    if sigma >= DITHERED * q:
        return np.zeros_like(x)
    from scipy.special import ndtr  # noqa: PLC0415 - loaded only when a coarse thermometer needs it

    reach = int(math.ceil(6.0 * sigma / q)) + 1
    j = np.round(x / q)[None, :] + np.arange(-reach, reach + 1)[:, None]
    p = ndtr((j * q + 0.5 * q - x) / sigma) - ndtr((j * q - 0.5 * q - x) / sigma)
    return cast(np.ndarray, (j * q * p).sum(axis=0) - x)


def split_sawtooth(resid: np.ndarray, fitted: np.ndarray, q: float) -> tuple[np.ndarray, float]:
    """Return (residuals less the predicted sawtooth, the sawtooth's variance).

    Only readings that sit on a grid of step q have a sawtooth to predict; otherwise (a stated
    resolution coarser than the readings, or an averaging logger) the residuals are returned as
    they are.
    """
    if q <= 0.0 or resid.size < 4:
        return resid, 0.0
    sigma = math.sqrt(max(float(np.dot(resid, resid)) / resid.size - q * q / 12.0, 0.0))
    if sigma >= DITHERED * q:
        return resid, 0.0
    # the readings sit on the thermometer's grid (in °C, so in kelvin the grid may be offset by q/2)
    readings = fitted + resid
    origin = float(readings[0])
    steps = (readings - origin) / q
    if np.mean(np.abs(steps - np.round(steps)) < 1e-3) < 0.9:
        return resid, 0.0
    saw = predicted_sawtooth(fitted - origin, q, sigma)
    return resid - saw, float(np.dot(saw, saw)) / resid.size
