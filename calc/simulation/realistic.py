"""Draw simulated runs that carry what real benches produce, for the coverage figures.

:func:`realistic_scenario` starts from :func:`calc.simulation.scenarios.random_scenario` and adds, over wide
ranges: spikes from a loose contact, stirring noise correlated over 5–30 s, a room temperature
drifting by up to ±1 K/h, dropped rows, jittered sampling times, fore periods from 60 s, long
logs (up to about three hours) and slow endothermic dissolutions. The thermometer resolution and
whether the run file states the mixing time are chosen by the caller (they are the cells of the
figures).
"""

from __future__ import annotations

from typing import Any

import numpy as np

from calc.simulation.run import SimulatedRun
from calc.simulation.scenarios import random_scenario

__all__ = ["realistic_scenario"]


def realistic_scenario(
    kind: str,
    rng: np.random.Generator | int | None,
    *,
    resolution: float,
    mixing_given: bool,
    artefacts: bool = True,
    longer_s: float = 0.0,
) -> SimulatedRun:
    """Simulate one run of ``kind`` at thermometer ``resolution`` (K) with bench artefacts.

    ``artefacts=False`` gives a near noise-free log (noise 0.0002 K, no spikes, no drift, no
    dropped rows) at the same resolution, for the trueness figure. ``longer_s`` records that many
    seconds more after the change (the live-advice figure compares with a fixed 10-minute after period).
    """
    gen = rng if isinstance(rng, np.random.Generator) else np.random.default_rng(rng)
    uni = gen.uniform
    extra: dict[str, Any] = {"resolution": resolution, "omit_mixing_time": not mixing_given, "fore_s": uni(60, 300)}
    if artefacts:
        extra.update(
            noise=uni(0.001, 0.02),
            stir_tau_s=uni(5, 30) if uni() < 0.5 else 0.0,
            phi=uni(0, 0.6),
            room_drift_K_per_h=uni(-1, 1),
            spikes=int(gen.integers(0, 4)),
            spike_K=uni(0.1, 2.0),
            drop_fraction=uni(0, 0.05) if uni() < 0.5 else 0.0,
            jitter_s=uni(0, 0.3) if uni() < 0.5 else 0.0,
        )
        if uni() < 0.1:
            extra["after_add_s"] = uni(1800, 9000)  # long logs, up to about three hours
    else:
        extra.update(noise=0.0002, phi=0.0)
    if longer_s:
        extra["after_add_s"] = extra.get("after_add_s", 0.0) + longer_s
    if kind == "dissolution" and uni() < 0.3:
        extra.update(salt=str(gen.choice(["KCl", "NH4NO3", "NH4Cl"])), tau_r=uni(60, 240))
    return random_scenario(kind, gen, noisy=artefacts, extra=extra)
