"""A simulated class for the scale benchmarks: many groups' dissolution runs, and a notebook with the roster.

The runs are simulated (calc.simulation, invented data with a known truth); the notebook is a fresh
SQLite database holding one coordinator and one section whose groups are G000, G001, ….
"""

from __future__ import annotations

from collections.abc import Callable
from pathlib import Path
from typing import Any

import numpy as np

from calc.simulation.simulator import simulate_dissolution, write_run

#: a cheap password hash: sign-in is not what these benchmarks measure
FAST = "scrypt:1024:8:1"
COORDINATOR = ("coord@bench.example", "benchmark password")


def simulate_class(
    folder: Path,
    groups: int,
    repeats: int,
    seed: int,
    *,
    resolutions: tuple[float, ...] = (0.01,),
    edit: Callable[[Path, int], None] | None = None,
) -> None:
    """Write ``repeats`` dissolution runs of each of ``groups`` groups (``G000-run1.toml``, …) to ``folder``;
    the thermometer resolution is drawn from ``resolutions`` when it offers more than one; ``edit(path,
    group)`` may change each run file afterwards."""
    rng = np.random.default_rng(seed)
    for g in range(groups):
        for k in range(repeats):
            mass = float(rng.uniform(3.0, 4.5))
            resolution = float(rng.choice(resolutions)) if len(resolutions) > 1 else resolutions[0]
            sim = simulate_dissolution(
                rng,
                solute_mass_g=mass,
                noise=0.003,
                fore_s=240.0,
                after_s=600.0,
                dt=2.0,
                perturb_inputs=True,
                resolution=resolution,
            )
            path = write_run(sim, folder, f"G{g:03d}-run{k + 1}")
            if edit is not None:
                edit(path, g)


def class_notebook(database: Path, groups: int) -> tuple[Any, Any, Any, int]:
    """Create the notebook at ``database`` with the class's roster; return (app, session, coordinator,
    section id). The caller closes the session and disposes of the engine."""
    import sqlalchemy as sa

    from webapp import create_app
    from webapp.db import new_session
    from webapp.migrate import upgrade
    from webapp.models import Section
    from webapp.services.classes import import_roster
    from webapp.services.people import create_person

    url = f"sqlite:///{database}"
    upgrade(url)
    app = create_app({"DATABASE_URL": url, "SECRET_KEY": "bench", "MONTE_CARLO_TRIALS": 0, "PASSWORD_METHOD": FAST})
    s = new_session(app)
    coord = create_person(
        s, email=COORDINATOR[0], name="Coordinator", role="coordinator", password=COORDINATOR[1], password_method=FAST
    )
    roster = "course,section,group,name,email,role\n" + "".join(
        f"Bench Course,S1,G{g:03d},Student {g},s{g}@bench.example,student\n" for g in range(groups)
    )
    import_roster(s, coord, roster, password_method=FAST)
    return app, s, coord, s.scalar(sa.select(Section.id))
