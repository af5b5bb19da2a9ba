"""A second generator of truth-known calorimeter logs, written apart from calc's simulator.

It shares no code with calc.simulation.simulator / calc.sim_* and uses different models on purpose, so that
a method tuned (even by accident) to calc's simulator shows up here:

* heat balance integrated numerically with scipy.integrate.solve_ivp (LSODA), piece by piece;
* room temperature drifting nonlinearly: a linear trend plus a slow sinusoid;
* heat release of a Weibull shape (exponent 1.0–1.6: it starts slowly and ends faster than an exponential);
* an electrical heater whose element stores heat (delivered power P·(1 − e^(−u/τ_el)), and the
  stored heat released after switch-off), so the water receives V·I·t exactly but late;
* two liquids mix instantly to their heat-capacity-weighted mean, then react;
* first-order probe lag (0.5–12 s);
* stirring noise that is white, AR(2) (a resonance) or 1/f-like (a sum of AR(1) processes over
  three decades of time scales);
* spikes of varied shape: one reading, two readings, a box of 3–5, a jump with an exponential tail;
* thermometers that round or truncate to the resolution; time stamps jittered, rounded to whole
  seconds (which makes repeated stamps at 2 Hz sampling), rows dropped.

The run file states every input with an uncertainty and the stated value is the truth plus a
normal draw of that uncertainty.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from pathlib import Path

import numpy as np
from scipy.integrate import solve_ivp

CP_WATER = 4.18  # J/(g K) near 20–25 °C (handbook value, rounded; from memory)
MOLAR_MASS = {
    "KCl": 74.551,
    "NH4NO3": 80.043,
    "NaOH": 39.997,
    "Mg": 24.305,
    "LiCl": 42.394,
}  # g/mol (IUPAC atomic weights, from memory)
SALTS = {
    "KCl": 17.2,
    "NH4NO3": 25.7,
    "NaOH": -44.5,
    "LiCl": -37.0,
}  # kJ/mol, order of the handbook values (from memory)


@dataclass
class IndependentLog:
    """One generated log with its truth."""

    kind: str
    times: np.ndarray
    readings: np.ndarray
    run_toml: str
    truth: float
    scale: float
    key: str
    delta_t: float
    stamp_decimals: int
    temp_decimals: int

    def write(self, directory: Path) -> Path:
        """Write ``indep.toml`` and ``indep.csv`` into ``directory``; return the TOML path."""
        directory.mkdir(parents=True, exist_ok=True)
        rows = [f"{t:.{self.stamp_decimals}f},{y:.{self.temp_decimals}f}" for t, y in zip(self.times, self.readings)]
        (directory / "indep.csv").write_text("time_s,temperature_C\n" + "\n".join(rows) + "\n", encoding="utf-8")
        path = directory / "indep.toml"
        path.write_text(self.run_toml, encoding="utf-8")
        return path


def _stated(rng, value: float, u: float, unit: str, places: int) -> str:
    """Return the run-file text of a stated value: the truth plus a normal draw (none when rng is None)."""
    drawn = value + (rng.normal(0, u) if rng is not None else 0.0)
    return f"{drawn:.{places}f} ± {u:.{places}f} {unit}"


def _water(srng, section: str, volume_mL: float, u_vol: float, density: float) -> list[str]:
    """Return the run-file lines of a water section: its stated volume and density (drawn in that order)."""
    return [
        f"[{section}]",
        f'volume = "{_stated(srng, volume_mL, u_vol, "mL", 2)}"',
        f'density = "{_stated(srng, density, 0.001, "g/mL", 4)}"',
    ]


def _room(rng):
    t0 = rng.uniform(18, 25)
    # a trend of up to ±0.8 K/h plus a slow swing (air handling) of up to 0.08 K: the room's rate of
    # change stays within about 1–2 K/h, the range the issue calls realistic
    trend = rng.uniform(-0.8, 0.8) / 3600.0
    amp, period, phase = rng.uniform(0, 0.08), rng.uniform(1800, 7200), rng.uniform(0, 2 * math.pi)
    return lambda t: t0 + trend * t + amp * math.sin(2 * math.pi * t / period + phase), t0


def _weibull_power(q_heat: float, tau: float, beta: float):
    def p(u: float) -> float:
        if u <= 0:
            return 0.0
        x = u / tau
        return q_heat * beta / tau * x ** (beta - 1) * math.exp(-(x**beta))

    return p


def _noise(rng, n: int, sigma: float, dt: float) -> np.ndarray:
    kind = rng.integers(0, 3)
    if kind == 0:
        return rng.normal(0, sigma, n)
    if kind == 1:  # AR(2) with a resonance near 10–40 s
        period, r = rng.uniform(10, 40) / dt, rng.uniform(0.7, 0.95)
        a1, a2 = 2 * r * math.cos(2 * math.pi / max(period, 2.1)), -r * r
        e = rng.normal(0, 1, n + 200)
        x = np.zeros(n + 200)
        for i in range(2, n + 200):
            x[i] = a1 * x[i - 1] + a2 * x[i - 2] + e[i]
        x = x[200:]
    else:  # 1/f-like: AR(1) processes at time scales 2, 20, 200 s with equal variance per decade
        x = np.zeros(n)
        for tc in (2.0, 20.0, 200.0):
            phi = math.exp(-dt / tc)
            e = rng.normal(0, math.sqrt(1 - phi * phi), n)
            y = np.empty(n)
            y[0] = rng.normal()
            for i in range(1, n):
                y[i] = phi * y[i - 1] + e[i]
            x += y
    return sigma * x / max(float(np.std(x)), 1e-12)


def _spikes(rng, y: np.ndarray, size: float) -> None:
    n = y.size
    for _ in range(int(rng.integers(0, 4))):
        i = int(rng.integers(10, n - 10))
        a = size * rng.uniform(0.5, 1.5) * rng.choice([-1, 1])
        shape = rng.integers(0, 4)
        if shape == 0:
            y[i] += a
        elif shape == 1:
            y[i : i + 2] += a
        elif shape == 2:
            y[i : i + int(rng.integers(3, 6))] += a
        else:
            w = np.exp(-np.arange(6) / rng.uniform(0.5, 1.5))
            y[i : i + 6] += a * w[: y[i : i + 6].size]


def _integrate(rhs, t_end: float, breaks: list[float], z0: list[float], t_eval: np.ndarray) -> np.ndarray:
    """Integrate piecewise between breakpoints; return the state at t_eval (columns)."""
    edges = [0.0] + sorted(b for b in breaks if 0 < b < t_end) + [t_end]
    out = np.empty((len(z0), t_eval.size))
    z = np.array(z0, dtype=float)
    for a, b in zip(edges[:-1], edges[1:]):
        last = b == t_end
        sel = np.flatnonzero((t_eval >= a) & ((t_eval <= b) if last else (t_eval < b)))
        te = np.append(t_eval[sel], b) if not sel.size or t_eval[sel[-1]] < b else t_eval[sel]
        if b > a:
            sol = solve_ivp(rhs, (a, b), z, method="LSODA", t_eval=te, rtol=1e-9, atol=1e-10)
            out[:, sel] = sol.y[:, : sel.size]
            z = sol.y[:, -1]
        else:
            out[:, sel] = z[:, None]
        z = rhs.jump(b, z)
    return out


def make_log(kind: str, seed: int, *, resolution: float, mixing_given: bool, artefacts: bool = True) -> IndependentLog:
    """Generate one truth-known run of ``kind`` (see the module docstring)."""
    rng = np.random.default_rng([10_000_019, seed, sum(map(ord, kind))])
    room, t_room0 = _room(rng) if artefacts else ((lambda t, c=rng.uniform(18, 25): c), None)  # noqa: B008 (one constant room temperature, drawn once)
    t0 = room(0.0) + (rng.uniform(-1.5, 1.5) if artefacts else rng.uniform(-1, 1))
    srng = rng if artefacts else None  # near noise-free logs state the true inputs exactly
    c_cal = rng.uniform(5, 60)
    tau_h = rng.uniform(20, 180) * 60
    tau_p = rng.uniform(0.5, 12)
    p_stir = rng.uniform(0, 0.004)
    dt = float(rng.choice([0.5, 1.0, 2.0, 5.0] if artefacts else [1.0, 2.0]))
    t_m = rng.uniform(60, 360)
    vol = rng.uniform(50, 150)
    u_vol, u_mass = 0.1, 0.0002
    body: list[str] = []
    jump = None
    c_before = None
    if kind in ("dissolution", "reaction"):
        if kind == "dissolution":
            salt = str(rng.choice(sorted(SALTS)))
            dh = SALTS[salt] * rng.uniform(0.97, 1.03)
        else:
            salt, dh = "Mg", -466.9 * rng.uniform(0.98, 1.02)
        c_water = vol * 0.998 * CP_WATER
        target = rng.uniform(0.8, 5.0) * (c_water + c_cal)  # J released
        n_mol = target / abs(dh * 1000)
        mass = n_mol * MOLAR_MASS[salt]
        c_after = (vol * 0.998 + (mass if kind == "dissolution" else 0.0)) * CP_WATER + c_cal
        c_before = c_after
        q_heat = -dh * 1000 * n_mol
        tau_r = rng.uniform(5, 200) if kind == "dissolution" else rng.uniform(10, 80)
        power = _weibull_power(q_heat, tau_r, rng.uniform(1.0, 1.6))
        rel_end = t_m + tau_r * 12
        dT_true = q_heat / c_after
        truth, scale, key = dh, abs(dh), "molar_enthalpy"
        cal = f'heat_capacity = "{c_cal + (rng.normal(0, 2.0) if artefacts else 0.0):.1f} ± 2.0 J/K"'
        if kind == "dissolution":
            body += [
                *_water(srng, "water", vol, u_vol, 0.998),
                "[solute]",
                f'formula = "{salt}"',
                f'mass = "{_stated(srng, mass, u_mass, "g", 4)}"',
                "[mixture]",
                f'specific_heat_capacity = "{_stated(srng, CP_WATER, 0.010, "J/(g*K)", 3)}"',
            ]
        else:
            stated_mass = _stated(srng, mass, u_mass, "g", 4)
            body += [
                "[solution]",
                f'volume = "{_stated(srng, vol, u_vol, "mL", 2)}"',
                f'density = "{_stated(srng, 0.998, 0.001, "g/mL", 4)}"',
                "[mixture]",
                f'specific_heat_capacity = "{_stated(srng, CP_WATER, 0.010, "J/(g*K)", 3)}"',
                "[reaction]",
                'equation = "Mg(s) + 2 H+(aq) -> Mg2+(aq) + H2(g)"',
                'limiting_reagent = "Mg"',
                f'mass = "{stated_mass}"',
                "coefficient = 1",
            ]
    elif kind == "electrical-calibration":
        c_after = c_before = vol * 0.998 * CP_WATER + c_cal
        volt, amp = rng.uniform(3, 12), rng.uniform(0.5, 2.0)
        t_d = float(np.clip(rng.uniform(0.8, 5.0) * c_after / (volt * amp), 20, 600))
        tau_el = rng.uniform(0.5, 8)
        p_on = volt * amp

        def power(u: float, _z=None) -> float:
            if u <= 0:
                return 0.0
            if u <= t_d:
                return p_on * (1 - math.exp(-u / tau_el))
            stored = p_on * (1 - math.exp(-t_d / tau_el))
            return stored * math.exp(-(u - t_d) / tau_el)

        rel_end = t_m + t_d + 12 * tau_el
        dT_true = p_on * t_d / c_after
        truth, scale, key = c_cal, c_after, "calorimeter_heat_capacity"
        cal = None
        body += [
            *_water(srng, "water", vol, u_vol, 0.998),
            "[heater]",
            f'voltage = "{_stated(srng, volt, 0.005, "V", 3)}"',
            f'current = "{_stated(srng, amp, 0.001, "A", 4)}"',
            f'duration = "{_stated(srng, t_d, 0.1, "s", 2)}"',
            "[mixture]",
            f'specific_heat_capacity = "{_stated(srng, CP_WATER, 0.010, "J/(g*K)", 3)}"',
        ]
    else:  # two liquids
        v_a, v_b = rng.uniform(25, 60), rng.uniform(25, 60)
        c_a, c_b = v_a * 1.0 * CP_WATER, v_b * 1.0 * CP_WATER
        c_before, c_after = c_a + c_cal, c_a + c_b + c_cal
        if kind == "neutralization":
            conc = rng.uniform(0.5, 1.5)
            n_mol = min(conc * v_a, 1.05 * conc * v_b) / 1000  # the limiting reagent's amount
            dh = -57.0 * rng.uniform(0.97, 1.03)
            q_heat = -dh * 1000 * n_mol
            t_b = t0 + rng.uniform(-1.0, 1.0)
            tau_r = rng.uniform(1, 10)
            power = _weibull_power(q_heat, tau_r, rng.uniform(1.0, 1.6))
            rel_end = t_m + 12 * tau_r
            truth, scale, key = dh, abs(dh), "molar_enthalpy"
            cal = f'heat_capacity = "{c_cal + (rng.normal(0, 2.0) if artefacts else 0.0):.1f} ± 2.0 J/K"'
            body += [
                "[acid]",
                'formula = "HCl"',
                f'concentration = "{_stated(srng, conc, 0.005, "mol/L", 4)}"',
                f'volume = "{_stated(srng, v_a, u_vol, "mL", 2)}"',
                f'density = "{_stated(srng, 1.000, 0.001, "g/mL", 4)}"',
                "equivalents = 1",
                "[base]",
                'formula = "NaOH"',
                f'concentration = "{_stated(srng, conc * 1.05, 0.005, "mol/L", 4)}"',
                f'volume = "{_stated(srng, v_b, u_vol, "mL", 2)}"',
                f'density = "{_stated(srng, 1.000, 0.001, "g/mL", 4)}"',
                f'temperature = "{_stated(srng, t_b, 0.05, "degC", 3)}"',
                "equivalents = 1",
            ]
        else:
            t_b = t0 + rng.uniform(15, 25)
            power = lambda u: 0.0  # noqa: E731
            rel_end = t_m + 5
            q_heat = 0.0
            truth, scale, key = c_cal, c_after, "calorimeter_heat_capacity"
            cal = None
            body += [
                *_water(srng, "water", v_a, u_vol, 1.000),
                *_water(srng, "warm_water", v_b, u_vol, 1.000),
                f'temperature = "{_stated(srng, t_b, 0.05, "degC", 3)}"',
            ]
        body += ["[mixture]", f'specific_heat_capacity = "{_stated(srng, CP_WATER, 0.010, "J/(g*K)", 3)}"']
        jump = ("mix", c_b, t_b)
        dT_true = None  # set below from the contents at t_m
    g_after = c_after / tau_h
    g_before = g_after * (c_before / c_after) ** (2 / 3)
    after_len = max(rel_end - t_m, 0) + rng.uniform(300, 900)
    if artefacts and rng.uniform() < 0.1:
        after_len += rng.uniform(1800, 9000)
    t_end = t_m + after_len
    n = int(t_end / dt) + 1
    t_true = np.arange(n) * dt
    if artefacts and rng.uniform() < 0.5:
        t_true = np.sort(np.clip(t_true + rng.uniform(-0.3, 0.3, n) * dt, 0, None))

    def rhs(t, z):
        after = t >= t_m
        c, g = (c_after, g_after) if after else (c_before, g_before)
        p = power(t - t_m) if after else 0.0
        return [(g * (room(t) - z[0]) + p_stir + p) / c, (z[0] - z[1]) / tau_p]

    contents_at_m = {}

    def jump_fn(b, z):
        if abs(b - t_m) < 1e-9:
            contents_at_m["T"] = z[0]
            if jump is not None:
                _, c_b2, t_b2 = jump
                z = z.copy()
                z[0] = (z[0] * (c_after - c_b2) + c_b2 * t_b2) / c_after
        return z

    rhs.jump = jump_fn  # type: ignore[attr-defined]
    # start on the probe's steady track: lag behind the fore drift
    g0 = (g_before * (room(0.0) - t0) + p_stir) / c_before
    z = _integrate(rhs, float(t_true[-1]), [t_m, rel_end], [t0, t0 - g0 * tau_p], t_true)
    probe = z[1]
    t_a = contents_at_m["T"]
    if kind == "neutralization":
        dT_true = (q_heat - c_b * (t_a - t_b)) / c_after
    elif kind == "mixing-calibration":
        dT_true = (c_b * t_b + (c_before) * t_a) / c_after - t_a
    sigma = rng.uniform(0.001, 0.02) if artefacts else 0.0002
    y = probe + (_noise(rng, n, sigma, dt) if artefacts else rng.normal(0, sigma, n))
    if artefacts:
        _spikes(rng, y, rng.uniform(0.1, 2.0))
    y = (np.floor(y / resolution) if rng.uniform() < 0.3 else np.round(y / resolution)) * resolution
    stamps = t_true.copy()
    keep = np.ones(n, dtype=bool)
    if artefacts and rng.uniform() < 0.5:
        keep[1:-1] = rng.uniform(size=n - 2) > rng.uniform(0, 0.05)
    stamp_dec = 1 if dt < 1 else 1
    if artefacts and dt == 0.5 and rng.uniform() < 0.5:
        stamps = np.round(stamps)  # a logger that stamps whole seconds at 2 Hz
    stamps, y = stamps[keep], y[keep]
    temp_dec = max(0, -int(math.floor(math.log10(resolution) + 1e-9)))
    stated_tm = t_m + (rng.normal(0, 0.5) if artefacts else 0.0)
    head = ['kind = "' + kind + '"', 'readings = "indep.csv"']
    if mixing_given:
        head.append(f'mixing_time = "{stated_tm:.2f} ± 0.50 s"')
    head += ["[info]", 'title = "independent generator"', "[calorimeter]", 'name = "independent cup"']
    if cal:
        head.append(cal)
    head += ["[thermometer]", f'resolution = "{resolution:g} K"']
    toml = "\n".join(head + body) + "\n"
    return IndependentLog(kind, stamps, y, toml, truth, scale, key, float(dT_true), stamp_dec, temp_dec)
