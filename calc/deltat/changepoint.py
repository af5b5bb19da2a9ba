"""Find the mixing time anywhere in a temperature log, with its own uncertainty.

Two steps:

1. **Where is the change?** An edge statistic over the whole log: the difference of the mean
   of the next h readings and the mean of the previous h readings (h ≈ 30 s).
   Its largest magnitude marks the main change; the first reading where it reaches
   half that magnitude, t_s, lies just after the start of the change.
2. **When did it start?** A segmented least-squares fit on the readings from up to 4 minutes
   (FORE_WINDOW_S) before t_s to shortly after it: a straight line (the fore drift) that, from a breakpoint τ on,
   gains a cubic in (t − τ). τ is scanned over every reading and mid-point in the search
   window; the residual sum of squares RSS(τ) gives a profile likelihood
   L(τ) ∝ RSS(τ)^(−n_eff/2), n_eff the number of independent readings (lag-1 autocorrelation of
   the residuals). The mixing time is the most likely τ, its standard uncertainty the standard
   deviation of L normalised over τ.

Refusals (an :class:`InputError` naming ``mixing_time``): a change that is small against the
noise (likelihood ratio of the segmented fit against a plain line, or a swing under 6 noise
standard deviations), two separate changes of about the same size in the log, and two separate
breakpoints of about equal likelihood.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import cast

import numpy as np

from calc.errors import InputError

__all__ = ["MixingTime", "detect_mixing_time"]

#: Half-width of the edge statistic, s.
EDGE_HALF_S = 30.0
#: Longest stretch of fore drift used by the segmented fit, s.
FORE_WINDOW_S = 240.0
#: Smallest likelihood-ratio statistic 2·ln(L_segmented/L_line) accepted as a real change.
MIN_LR = 12.0
#: A second local maximum of the likelihood at least this high (relative) makes the detection ambiguous.
AMBIGUOUS_RATIO = 0.5

#: Length of the post-change part of the segmented fit, in edge half-widths.
POST_SPANS = 1.0

_ASK = "give mixing_time in the run file (or in the form)"


@dataclass(frozen=True)
class MixingTime:
    """A detected mixing time."""

    time: float
    u: float
    lr: float  # 2 ln likelihood ratio of the change against no change
    swing_sigmas: float


def _edge(t: np.ndarray, y: np.ndarray, h: int) -> np.ndarray:
    """Return (mean of next h − mean of previous h readings) at each reading (0 near the ends)."""
    n = y.size
    c = np.concatenate([[0.0], np.cumsum(y)])
    out = np.zeros(n)
    i = np.arange(h, n - h)
    nxt = (c[i + h + 1] - c[i + 1]) / h
    prv = (c[i] - c[i - h]) / h
    out[i] = nxt - prv
    return out


#: Powers of (t − τ) in the hinge after the breakpoint.
HINGE_POWERS = (1, 2, 3)


def _design(tw: np.ndarray, tau: float | np.ndarray, scale: float) -> np.ndarray:
    """Return the design [1, x, u^p…] (x = (t − τ)/scale, u = max(x, 0)); batched over τ."""
    x = (tw[None, :] - np.atleast_1d(tau)[:, None]) / scale
    u = np.maximum(x, 0.0)
    cols = [np.ones_like(x), x] + [u**p for p in HINGE_POWERS]
    return np.stack(cols, axis=-1)


def _rss_scan(tw: np.ndarray, yw: np.ndarray, taus: np.ndarray, scale: float) -> np.ndarray:
    """Return RSS of line + polynomial hinge at each breakpoint τ (normal equations, batched)."""
    X = _design(tw, taus, scale)
    A = np.einsum("mni,mnj->mij", X, X)
    b = np.einsum("mni,n->mi", X, yw)
    A += np.eye(A.shape[-1])[None] * 1e-12 * np.trace(A, axis1=1, axis2=2)[:, None, None]
    beta = np.linalg.solve(A, b[..., None])[..., 0]
    r = yw[None, :] - np.einsum("mni,mi->mn", X, beta)
    return cast(np.ndarray, np.einsum("mn,mn->m", r, r))


def _lag1(r: np.ndarray) -> float:
    r = r - r.mean()
    den = float(np.dot(r, r))
    if den <= 0 or r.size < 4:
        return 0.0
    return min(max(float(np.dot(r[:-1], r[1:])) / den, 0.0), 0.95)


def detect_mixing_time(t: np.ndarray, y: np.ndarray, resolution: float, *, min_fore_points: int = 8) -> MixingTime:
    """Return the detected mixing time (see the module docstring).

    Raises
    ------
    InputError
        When the change is small against the noise or two candidates are about equally likely.
    """
    n = t.size
    dt = float(np.median(np.diff(t)))
    h = int(min(max(round(EDGE_HALF_S / dt), 3), max(n // 8, 3)))
    if n < 2 * min_fore_points + 2 * h:
        raise InputError(f"the log is too short to find the mixing time ({n} readings); {_ASK}", field="mixing_time")
    t_s = _change_onset(t, y, h)
    sigma = _noise_sd(y, resolution)
    w, cand_t = _search_window(t, t_s, h * dt, dt, min_fore_points)
    tw, yw = t[w], y[w]
    scale = max(float(tw[-1] - tw[0]), 1.0)
    taus, rss = _scan(tw, yw, cand_t, scale)
    j = int(np.argmin(rss))
    tau = float(taus[j])
    lr, swing_sig, rss1, n_eff, floor = _strength(tw, yw, tau, scale, float(rss[j]), resolution, sigma)
    if lr < MIN_LR or swing_sig < 6.0:
        raise InputError(
            f"no clear start of the temperature change was found (the change near {t_s:.0f} s is "
            f"{swing_sig:.1f} noise standard deviations); {_ASK}",
            field="mixing_time",
        )
    p, u_tau = _likelihood(taus, rss, floor, rss1, n_eff, dt)
    _check_ambiguous(taus, p, tau, u_tau, dt)
    return MixingTime(time=tau, u=u_tau, lr=lr, swing_sigmas=swing_sig)


def _change_onset(t: np.ndarray, y: np.ndarray, h: int) -> float:
    """Return t_s: the first reading where the edge statistic reaches half its largest magnitude."""
    n = t.size
    e = _edge(t, y, h)
    inner = slice(h, n - h)
    # no drift is taken off: a long heater pulse can fill most of the log, so a median of e
    # would be the change itself; the drift is far smaller than any change worth analyzing
    ee = np.zeros(n)
    ee[inner] = e[inner]
    i_max = int(np.argmax(np.abs(ee)))
    peak = ee[i_max]
    _check_separate_changes(t, ee, i_max)
    above = np.flatnonzero(np.sign(peak) * ee[: i_max + 1] >= 0.5 * abs(peak))
    i_s = int(above[0]) if above.size else i_max
    return float(t[i_s])


def _noise_sd(y: np.ndarray, resolution: float) -> float:
    """Return the noise SD from second differences (robust; spikes were screened before)."""
    d2 = np.diff(y, 2)
    sigma = float(np.median(np.abs(d2 - np.median(d2)))) * 1.4826 / math.sqrt(6.0)
    return max(sigma, resolution / math.sqrt(12.0), 1e-6)


def _search_window(
    t: np.ndarray, t_s: float, span: float, dt: float, min_fore_points: int
) -> tuple[np.ndarray, np.ndarray]:
    """Return the mask of the fitted readings (fore drift before t_s, the early change after it) and the candidate τ."""
    n = t.size
    lo = max(float(t[0]), t_s - FORE_WINDOW_S)
    hi = min(float(t[-1]), t_s + POST_SPANS * span)
    w = (t >= lo) & (t <= hi)
    t_first_ok = float(t[min(min_fore_points, n - 1)])
    s_lo = max(t_s - 3.0 * span - 30.0, t_first_ok, lo + 2 * dt)
    s_hi = min(t_s + 0.5 * span, hi - 3 * dt)
    cand_t = t[(t >= s_lo) & (t <= s_hi)]
    if cand_t.size < 2 or np.count_nonzero(w) < 12:
        raise InputError(
            f"the temperature change near {t_s:.0f} s starts too close to the start of the log to find "
            f"the mixing time; {_ASK}",
            field="mixing_time",
        )
    return w, cand_t


def _scan(tw: np.ndarray, yw: np.ndarray, cand_t: np.ndarray, scale: float) -> tuple[np.ndarray, np.ndarray]:
    """Return the breakpoints τ tried (the readings, then the mid-points next to the best one) and their RSS."""
    rss_c = _rss_scan(tw, yw, cand_t, scale)
    jc = int(np.argmin(rss_c))
    mids = 0.5 * (cand_t[1:] + cand_t[:-1])
    near = mids[max(jc - 3, 0) : jc + 3]
    taus = np.concatenate([cand_t, near])
    order = np.argsort(taus)
    return taus[order], np.concatenate([rss_c, _rss_scan(tw, yw, near, scale)])[order]


def _strength(
    tw: np.ndarray, yw: np.ndarray, tau: float, scale: float, rss_best: float, resolution: float, sigma: float
) -> tuple[float, float, float, float, float]:
    """Return (2 ln likelihood ratio against a plain line, swing in noise SDs, RSS floored, n_eff, RSS floor)."""
    # residuals of the best fit give n_eff
    X = _design(tw, tau, scale)[0]
    x = X[:, 1]
    beta, *_ = np.linalg.lstsq(X, yw, rcond=None)
    resid = yw - X @ beta
    rho = _lag1(resid)
    n_eff = max(tw.size * (1 - rho) / (1 + rho), 5.0)
    # plain line for the likelihood ratio
    X0 = X[:, :2]
    b0, *_ = np.linalg.lstsq(X0, yw, rcond=None)
    r0 = yw - X0 @ b0
    floor = tw.size * (resolution**2 / 12.0 + 1e-12)
    rss1 = max(rss_best, floor)
    rss0 = max(float(np.dot(r0, r0)), floor)
    lr = n_eff * math.log(rss0 / rss1)
    swing = abs(float(yw[-1] - (beta[0] + beta[1] * x[-1])))
    sigma = max(sigma, math.sqrt(rss1 / tw.size))
    return lr, swing / max(sigma, 1e-12), rss1, n_eff, floor


def _likelihood(
    taus: np.ndarray, rss: np.ndarray, floor: float, rss1: float, n_eff: float, dt: float
) -> tuple[np.ndarray, float]:
    """Return the relative likelihood of each τ and the standard deviation of the normalised likelihood."""
    loglik = -0.5 * n_eff * np.log(np.maximum(rss, floor) / rss1)
    p = np.exp(np.maximum(loglik, -700.0))
    wts = np.gradient(taus)
    post = p * wts
    post /= post.sum()
    mean = float(np.dot(post, taus))
    sd = math.sqrt(max(float(np.dot(post, (taus - mean) ** 2)), 0.0))
    return p, max(sd, dt / math.sqrt(12.0))


def _check_separate_changes(t: np.ndarray, ee: np.ndarray, i_max: int) -> None:
    """Refuse when the log holds two separate changes of about the same size (either sign).

    Stretches where |edge| exceeds half the largest value are the changes; two stretches with
    |edge| under a quarter of it between them are separate, and a second one reaching 70 % of the
    largest makes the choice of "the" mixing time a guess.
    """
    a = np.abs(ee)
    top = a[i_max]
    if top <= 0:
        return
    high = a >= 0.5 * top
    low = a < 0.25 * top
    idx = np.flatnonzero(high)
    for j in idx.tolist():
        if abs(j - i_max) < 2 or a[j] < 0.7 * top:
            continue
        lo, hi = sorted((j, i_max))
        if low[lo:hi].any():
            raise InputError(
                f"the log holds two temperature changes of about the same size (near {t[min(j, i_max)]:.0f} s "
                f"and {t[max(j, i_max)]:.0f} s); {_ASK}",
                field="mixing_time",
            )


def _check_ambiguous(taus: np.ndarray, p: np.ndarray, tau: float, u_tau: float, dt: float) -> None:
    """Refuse when a second, separate local maximum of the likelihood is about as high as the best."""
    far = np.abs(taus - tau) > max(4.0 * u_tau, 5.0 * dt, 10.0)
    if not far.any():
        return
    interior = np.zeros_like(p, dtype=bool)
    interior[1:-1] = (p[1:-1] >= p[:-2]) & (p[1:-1] >= p[2:])
    cand = far & interior
    if cand.any():
        k = int(np.argmax(np.where(cand, p, -1.0)))
        if p[k] >= AMBIGUOUS_RATIO:
            raise InputError(
                f"two mixing times are about equally likely ({tau:.0f} s and {taus[k]:.0f} s); {_ASK}",
                field="mixing_time",
            )
