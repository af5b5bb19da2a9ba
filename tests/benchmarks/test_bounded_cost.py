"""Bounded cost: every accepted input to /api/plan, /api/runs, /api/packages and the command line
finishes in ≤ 5 s and ≤ 300 MB.

Run: .venv/bin/python -m pytest -q -s tests/benchmarks/test_bounded_cost.py -p no:cacheprovider -o addopts=""

The inputs are a hypothesis sample of the allowed ranges (calc/limits.py, the planner's bounds)
plus their extremes: the largest readings file the limits let through (rows and bytes), the most
Monte Carlo trials, the finest resolution under the greatest noise, the longest periods. Time is
the wall time of the request (Flask test client, SQLite, the default settings but the database);
memory is the peak resident memory of the whole process: each input runs in a child forked from the
warmed-up test process (libraries loaded, nothing left over from other inputs), whose ru_maxrss
is read at the end, so it includes everything the process holds, not only the request. Refused inputs
are timed too (they must be cheap) but the figure is for the accepted ones.
"""

from __future__ import annotations

import io
import json
import os
import resource
import time
from collections.abc import Callable
from pathlib import Path
from typing import Any

import numpy as np
import pytest
from click.testing import CliRunner
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from calc import limits
from calc.simulation.kinds import simulate_dissolution
from calc.simulation.run import write_run
from tests.calc.plan_args import KCL_DISSOLUTION
from tests.webapp.conftest import FAST_HASH
from webapp import create_app
from webapp.db import get_engine, new_session
from webapp.migrate import upgrade

SECONDS, MEGABYTES = 5.0, 300.0
RESULTS: list[tuple[str, int, float, float, str]] = []  # (what, status, s, MB, the input)


def _rss_mb() -> float:
    with open("/proc/self/statm", encoding="ascii") as fh:
        return int(fh.read().split()[1]) * os.sysconf("SC_PAGE_SIZE") / 2**20


def measure(what: str, fn: Callable[[], Any], detail: Any = "") -> int:
    """Run ``fn`` once in a forked child (warm imports, no state from other inputs); record its wall time
    and the child's peak resident memory (the whole process, not only the request); return its status."""
    read_end, write_end = os.pipe()
    pid = os.fork()
    if pid == 0:  # the child: its own database connections, then the request, then its figures
        os.close(read_end)
        code = 0
        try:
            if WORLD.get("app") is not None:
                get_engine(WORLD["app"]).dispose(close=False)
            start = time.perf_counter()
            out = fn()
            took = time.perf_counter() - start
            status = getattr(out, "status_code", None)
            if status is None:
                status = 200 if getattr(out, "exit_code", 0) == 0 else 400
                if "internal error" in getattr(out, "output", ""):
                    status = 500
            peak = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024
            os.write(write_end, json.dumps([status, took, peak]).encode())
        except BaseException as exc:  # noqa: BLE001 - reported to the parent
            os.write(write_end, json.dumps([599, 0.0, 0.0, repr(exc)[:300]]).encode())
            code = 1
        finally:
            os._exit(code)
    os.close(write_end)
    with os.fdopen(read_end, "rb") as fh:
        data = json.loads(fh.read() or b"[599, 0, 0]")
    os.waitpid(pid, 0)
    status, took, peak = data[0], data[1], data[2]
    RESULTS.append((what, status, took, peak, str(detail)[:300] + (" " + data[3] if len(data) > 3 else "")))
    return int(status)


WORLD: dict[str, Any] = {}


@pytest.fixture(scope="module")
def world(tmp_path_factory: pytest.TempPathFactory) -> Any:
    d = tmp_path_factory.mktemp("bounded")
    url = f"sqlite:///{d / 'cupcal.sqlite3'}"
    upgrade(url)
    app = create_app({"DATABASE_URL": url, "SECRET_KEY": "bench", "PASSWORD_METHOD": FAST_HASH})
    app.instance_path = str(d / "instance")
    from webapp.services.people import create_person, issue_token

    s = new_session(app)
    coord = create_person(
        s, email="c@lab.example", name="C", role="coordinator", password="x" * 12, password_method=FAST_HASH
    )
    token = issue_token(s, coord, "bench")[1]
    s.close()
    WORLD["app"] = app
    print(f"\nresident memory of the test process before the inputs: {_rss_mb():.0f} MB")
    yield {"app": app, "client": app.test_client(), "auth": {"Authorization": f"Bearer {token}"}, "dir": d}
    get_engine(app).dispose()
    _report()


def _report() -> None:
    accepted = [r for r in RESULTS if r[1] < 400]
    refused = [r for r in RESULTS if r[1] >= 400]
    print(f"\nbounded cost: {len(RESULTS)} inputs, {len(accepted)} accepted, {len(refused)} refused")
    for kind in sorted({r[0] for r in RESULTS}):
        rows = [r for r in accepted if r[0] == kind]
        bad = [r for r in refused if r[0] == kind]
        if rows:
            print(
                f"  {kind:22s} accepted {len(rows):4d}: max {max(r[2] for r in rows):6.2f} s, "
                f"max {max(r[3] for r in rows):7.1f} MB; refused {len(bad)} (max {max([r[2] for r in bad] or [0]):.2f} s)"
            )
        else:
            print(f"  {kind:22s} accepted    0; refused {len(bad)} (max {max([r[2] for r in bad] or [0]):.2f} s)")


def _check(kind: str) -> None:
    rows = [r for r in RESULTS if r[0] == kind]
    over = [r for r in rows if r[2] > SECONDS or r[3] > MEGABYTES]
    for r in over:
        print("  over:", r)
    assert rows and not over, over


def _log_uniform(low: float, high: float) -> st.SearchStrategy[float]:
    return st.one_of(st.sampled_from([low, high]), st.floats(np.log10(low), np.log10(high)).map(lambda e: float(10**e)))


# ----------------------------------------------------------------- /api/plan


def plan_inputs() -> st.SearchStrategy[dict[str, Any]]:
    from calc.plan import _NUMBER_BOUNDS

    def num(name: str) -> st.SearchStrategy[float]:
        lo, hi = _NUMBER_BOUNDS[name]
        return _log_uniform(max(lo, 1e-9), hi)

    fields = {
        k: num(k)
        for k in (
            "thermometer_resolution",
            "thermometer_noise",
            "interval",
            "fore",
            "after",
            "release_time",
            "probe_time",
        )
    }
    fields["temperature"] = st.floats(250, 400)
    fields["noise_correlation"] = st.floats(0, 0.94)
    return st.fixed_dictionaries(
        {
            "kind": st.sampled_from(["dissolution", "neutralization"]),
            "calorimeter_heat_capacity": st.sampled_from(["18 ± 2 J/K", "0.001 ± 0.0001 J/K", "999999 ± 1 J/K"]),
            "formula": st.sampled_from(["KCl", "NH4NO3", "CaCl2", "CuSO4.5H2O"]),
            "mass": st.sampled_from(["3 g", "0.0001 g", "9999 g"]),
            "water_volume": st.sampled_from(["100 mL", "1 mL", "99999 mL"]),
            "acid": st.just("HCl"),
            "base": st.just("NaOH"),
            "acid_concentration": st.just("1 mol/L"),
            "base_concentration": st.sampled_from(["1 mol/L", "99 mol/L"]),
            "acid_volume": st.just("50 mL"),
            "base_volume": st.just("50 mL"),
        },
        optional=fields,
    )


def test_plan(world: Any) -> None:
    client, auth = world["client"], world["auth"]
    warm = {
        "kind": "dissolution",
        "calorimeter_heat_capacity": "18 ± 2 J/K",
        "formula": "KCl",
        "mass": "3 g",
        "water_volume": "100 mL",
        "thermometer_resolution": 0.01,
    }
    client.post("/api/plan", json=warm, headers=auth)  # loads the property models once (not a request's cost)

    @settings(max_examples=120, deadline=None, derandomize=True, database=None, suppress_health_check=list(HealthCheck))
    @given(plan_inputs())
    def one(body: dict[str, Any]) -> None:
        assert measure("POST /api/plan", lambda: client.post("/api/plan", json=body, headers=auth), body) < 500

    one()
    extremes = {
        "thermometer_resolution": 1e-9,
        "thermometer_noise": 10.0,
        "interval": 1e-3,
        "fore": 1e6,
        "after": 1e6,
        "release_time": 1e5,
        "probe_time": 1e5,
    }
    body = {
        "kind": "dissolution",
        "calorimeter_heat_capacity": "18 ± 2 J/K",
        "formula": "KCl",
        "mass": "3 g",
        "water_volume": "100 mL",
        **extremes,
    }
    measure("POST /api/plan", lambda: client.post("/api/plan", json=body, headers=auth))
    _check("POST /api/plan")


# ----------------------------------------------------------------- /api/runs, /api/packages, command line


def _run_files(d: Path, rows: int, seed: int) -> tuple[str, bytes, Path]:
    total = 840.0
    sim = simulate_dissolution(np.random.default_rng(seed), fore_s=240.0, after_s=600.0, dt=total / rows, noise=0.003)
    stem = f"r{rows}-{seed}"
    toml_path = write_run(sim, d, stem)
    return toml_path.read_text(encoding="utf-8"), (d / f"{stem}.csv").read_bytes(), toml_path


def test_runs_packages_and_command_line(world: Any) -> None:
    client, auth, d = world["client"], world["auth"], world["dir"]
    most_rows = int(limits.DEFAULTS["readings_rows"]) - 10
    most_trials = int(limits.DEFAULTS["monte_carlo_trials"])
    cases = [
        (most_rows, most_trials, "regnault-pfaundler"),
        (most_rows, 0, "equal-area"),
        (20_000, most_trials, None),
        (420, most_trials, None),
        (420, 0, None),
    ]

    @settings(max_examples=8, deadline=None, derandomize=True, database=None, suppress_health_check=list(HealthCheck))
    @given(st.integers(100, most_rows), st.integers(0, most_trials), st.sampled_from([None, "equal-area"]))
    def sample(rows: int, trials: int, method: str | None) -> None:
        cases.append((rows, trials, method))

    sample()
    for i, (rows, trials, method) in enumerate(cases):
        toml, csv, path = _run_files(d, rows, i)
        data: dict[str, Any] = {
            "run_file": (io.BytesIO(toml.encode()), path.name),
            "readings": (io.BytesIO(csv), path.with_suffix(".csv").name),
            "monte_carlo": str(trials),
            "seed": "7",
        }
        if method:
            data["method"] = method
        status = measure(
            "POST /api/runs",
            lambda: client.post("/api/runs", data=data, headers=auth, content_type="multipart/form-data"),
            (rows, trials, method),
        )
        assert status < 500
        args = ["analyze", str(path), "--monte-carlo", str(trials), "--seed", "7"] + (
            ["--method", method] if method else []
        )
        assert measure("cupcal analyze", lambda: CliRunner().invoke(_cli(), args), args) < 500
    # a run over the limits is refused, cheaply
    big_toml, big_csv, _p = _run_files(d, int(limits.DEFAULTS["readings_rows"]) + 1000, 99)
    measure(
        "POST /api/runs",
        lambda: client.post(
            "/api/runs",
            headers=auth,
            content_type="multipart/form-data",
            data={"run_file": (io.BytesIO(big_toml.encode()), "x.toml"), "readings": (io.BytesIO(big_csv), "x.csv")},
        ),
    )
    ids = [r["id"] for r in client.get("/api/runs?per_page=4", headers=auth).get_json()["items"]]
    for run_id in ids:
        doc = client.get(f"/api/runs/{run_id}/export/json", headers=auth).get_data()
        crate = client.get(f"/api/runs/{run_id}/export/ro-crate", headers=auth).get_data()
        for body, ctype in ((doc, "application/json"), (crate, "application/zip")):
            status = measure(
                "POST /api/packages",
                lambda: client.post("/api/packages", data=body, content_type=ctype, headers=auth),
                (run_id, ctype),
            )
            assert status in (201, 400, 409)
    for extra in (
        ["--resolution", "0.000000001 K", "--noise", "10 K"],
        ["--interval", "0.001 s", "--after", "1000000 s"],
    ):
        args = [*KCL_DISSOLUTION, *extra]
        measure("cupcal plan", lambda: CliRunner().invoke(_cli(), args))
    print(json.dumps({"cases": [(r, t, m) for r, t, m in cases]}))
    for kind in ("POST /api/runs", "POST /api/packages", "cupcal analyze", "cupcal plan"):
        _check(kind)


def _cli() -> Any:
    from calc.cli.commands import cli

    return cli
