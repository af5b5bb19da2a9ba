"""Start-up time of the command line, measured as whole processes.

Figures to reach (issue 14, "Faster start"): `cupcal --help` ≤ 0.3 s and `cupcal analyze` of one demo
run (fixtures/demo/diss-kcl-01.toml, the command's defaults, Monte Carlo included) ≤ 0.6 s. Each command
runs once to warm the disk cache and write the bytecode (as an installed package has it), then REPEATS
times. The CPU time of the process (user + system, from the OS) is held to the figure on every run of
the benchmark; the wall time too when the machine is not overloaded (load average below the number of
CPUs): on a shared machine the wall clock measures the neighbours as well. The best run counts; the
median is printed.
"""

from __future__ import annotations

import os
import resource
import shutil
import statistics
import subprocess
import sys
import time
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parents[2]
DEMO_RUN = ROOT / "fixtures" / "demo" / "diss-kcl-01.toml"
REPEATS = 7


def _command() -> list[str]:
    script = shutil.which("cupcal", path=str(Path(sys.executable).parent))
    return [script] if script else [sys.executable, "-m", "calc.cli"]


def _environment() -> dict[str, str]:
    env = dict(os.environ)
    env.pop("PYTHONDONTWRITEBYTECODE", None)  # an installed package has its bytecode
    env["PYTHONPATH"] = os.pathsep.join(p for p in (str(ROOT), env.get("PYTHONPATH", "")) if p)
    return env


def _time(args: list[str]) -> tuple[list[float], list[float]]:
    """Return the wall and CPU seconds of REPEATS runs of ``cupcal args`` (after one warm-up)."""
    cmd, env = _command() + args, _environment()
    subprocess.run(cmd, env=env, capture_output=True, check=True)
    walls, cpus = [], []
    for _ in range(REPEATS):
        before = resource.getrusage(resource.RUSAGE_CHILDREN)
        t0 = time.perf_counter()
        subprocess.run(cmd, env=env, capture_output=True, check=True)
        walls.append(time.perf_counter() - t0)
        after = resource.getrusage(resource.RUSAGE_CHILDREN)
        cpus.append(after.ru_utime - before.ru_utime + after.ru_stime - before.ru_stime)
    return walls, cpus


@pytest.mark.parametrize(
    ("args", "limit"), [(["--help"], 0.3), (["analyze", str(DEMO_RUN)], 0.6)], ids=["help", "analyze"]
)
def test_start_up_time(args, limit):
    walls, cpus = _time(args)
    load, cpus_here = os.getloadavg()[0], os.cpu_count() or 1
    print(
        f"\ncupcal {' '.join(a if a != str(DEMO_RUN) else DEMO_RUN.name for a in args)}: wall best "
        f"{min(walls):.3f} s, median {statistics.median(walls):.3f} s; CPU best {min(cpus):.3f} s, median "
        f"{statistics.median(cpus):.3f} s ({REPEATS} runs; load average {load:.1f} on {cpus_here} CPUs)"
    )
    assert min(cpus) <= limit
    if load < cpus_here:
        assert min(walls) <= limit
    else:
        print(f"wall time not judged: load average {load:.1f} on {cpus_here} CPUs")
