"""Speed and memory of the command line.

Figures to reach (issue "Calculation core"): ≥ 300 runs/s per core for `analyze --json` without
Monte Carlo on 600-point logs; Monte Carlo with 10⁵ trials ≤ 50 ms per run; peak memory flat
(≤ 200 MB) over 10,000 runs in one process.
"""

from __future__ import annotations

import statistics
import subprocess
import sys
import time
from pathlib import Path

import numpy as np
import psutil
import pytest

from calc.analysis import analyze_run
from calc.simulation.simulator import simulate_dissolution, simulate_neutralization, write_run
from calc.uncertainty.gum import monte_carlo

N_FILES = 1000


@pytest.fixture(scope="module")
def run_files(tmp_path_factory) -> list[Path]:
    d = tmp_path_factory.mktemp("speed")
    rng = np.random.default_rng(7)
    paths = []
    for i in range(N_FILES):
        opts = dict(fore_s=180.0, after_s=420.0, dt=1.0, noise=0.005, resolution=0.01, perturb_inputs=True)
        if i % 2:
            sim = simulate_neutralization(rng, **opts)
        else:
            sim = simulate_dissolution(rng, tau_r=float(rng.uniform(10, 40)), **opts)
        paths.append(write_run(sim, d, f"r{i:05d}"))
    n_points = [len(p.with_suffix(".csv").read_text().splitlines()) - 1 for p in paths[:20]]
    assert 590 <= statistics.median(n_points) <= 610
    return paths


def _cli(args: list[str]) -> subprocess.Popen:
    return subprocess.Popen(
        [sys.executable, "-m", "calc.cli", "analyze", *args], stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True
    )


def test_throughput_of_analyze_json(run_files):
    # process start-up (imports) measured on one file, then the whole batch
    t0 = time.perf_counter()
    p = _cli(["--json", "--monte-carlo", "0", str(run_files[0])])
    p.communicate()
    startup = time.perf_counter() - t0
    t0 = time.perf_counter()
    p = _cli(["--json", "--monte-carlo", "0", *map(str, run_files)])
    out, err = p.communicate()
    total = time.perf_counter() - t0
    assert p.returncode == 0, err[:500]
    assert len(out.splitlines()) == len(run_files)
    rate_total = len(run_files) / total
    rate_steady = (len(run_files) - 1) / max(total - startup, 1e-9)
    print(
        f"\nanalyze --json --monte-carlo 0: {len(run_files)} runs of 600 points in {total:.2f} s "
        f"(one process, one core): {rate_total:.0f} runs/s including start-up ({startup:.2f} s), "
        f"{rate_steady:.0f} runs/s after start-up"
    )
    assert rate_steady >= 300


def test_monte_carlo_time_per_run(run_files):
    times = []
    for path in run_files[:20]:
        a = analyze_run(path)
        t0 = time.perf_counter()
        monte_carlo(a.model.inputs, a.model.model, a.model.main, a.gum, trials=100_000, seed=1)
        times.append(time.perf_counter() - t0)
    med = statistics.median(times) * 1e3
    print(f"\nMonte Carlo 10^5 trials: median {med:.1f} ms per run, max {max(times) * 1e3:.1f} ms")
    assert med <= 50


def test_memory_is_flat_over_10000_runs(run_files):
    args = ["--json", "--monte-carlo", "0", *map(str, run_files * (10_000 // len(run_files)))]
    samples = []  # (lines read, rss MB)
    n = 0
    # the context closes the pipe (an open one is a ResourceWarning, an error under filterwarnings)
    with subprocess.Popen(
        [sys.executable, "-m", "calc.cli", "analyze", *args],
        stdout=subprocess.PIPE,
        stderr=subprocess.DEVNULL,
        text=True,
    ) as p:
        proc = psutil.Process(p.pid)
        assert p.stdout is not None
        for _line in p.stdout:
            n += 1
            if n % 500 == 0:
                try:
                    samples.append((n, proc.memory_info().rss / 2**20))
                except psutil.NoSuchProcess:
                    break
    assert n == 10_000
    peak = max(r for _, r in samples)
    early = statistics.mean(r for k, r in samples if 1000 <= k <= 2000)
    late = statistics.mean(r for k, r in samples if k >= 9000)
    print(f"\nRSS over 10,000 runs: {early:.0f} MB after 1–2k runs, {late:.0f} MB after 9–10k, peak {peak:.0f} MB")
    assert peak <= 200
    assert late - early <= 20
