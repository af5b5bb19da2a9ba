"""When the live advisor says "you can stop now": is the result then good enough, and how much time is saved?

Figure of issue 15 ("Live runs … know when to stop"), docs/methods.md §9.4. Over ≥ 200 simulated live
runs (dissolution, neutralization, electrical calibration; thermometer resolution 0.01 and 0.1 K;
bench artefacts on; parameters drawn over the wide ranges of calc.simulation.realistic) each log is
replayed reading by reading (the advice asked every 5 readings). The person stops REACTION_S after
the first "you can stop" advice; the run is then analyzed again from files (run file and CSV written
and read back, like an uploaded run) on the log up to that moment, independently of the advice's
own call. Reported:

* of the runs stopped with the target met: the share whose final U ≤ target (must be ≥ 95 %), the
  share whose final 95 % interval holds the simulator's truth, against the same runs analyzed with a
  fixed 10-minute after period, and the median time saved against that fixed period;
* the issue's figure read strictly: of ALL runs told "you can stop", the share whose final U ≤ target
  (a target out of reach has its own status, "U ≤ x cannot be reached: …", which does not say "you can
  stop"); and of the runs whose fixed 10 minutes reached the
  target, how many were told it cannot be reached (too pessimistic). CUPCAL_STOP_DUMP=file.json
  writes every run's outcome;
* runs stopped because the target cannot be reached, and runs that never got "you can stop";
* how the first after-period forecast ("N min more") compared with when the run could really stop.

The final U can exceed the target only through what the advice did not see: the readings of the
reaction time, which may move the after period's start (found afresh from the longer log), the
mixing time and the drift fits. With the same readings the two analyses are identical (checked by
tests/calc/live/test_advisor_phases.py), so this figure tests the stability of the decision, not
the uncertainty model; the coverage of the truth is the figure that tests the model.

Truth: calc.simulation (docs/methods.md §7.1). Targets: U of the fixed 10-minute analysis times a
factor drawn from 0.8–1.6, so some targets are reached early, some late and some never.
"""

from __future__ import annotations

import os
import statistics
import time
from dataclasses import dataclass

import numpy as np
import pytest

from calc.analysis import analyze_run
from calc.errors import CupcalError
from calc.live.advisor import advise
from calc.simulation.realistic import realistic_scenario
from calc.simulation.run import SimulatedRun, write_run

N_RUNS = int(os.environ.get("CUPCAL_STOP_RUNS", "210"))
KINDS = ("dissolution", "neutralization", "electrical-calibration")
RESOLUTIONS = (0.01, 0.1)
STEP = 5  # the advice is asked every 5 readings
REACTION_S = 10.0  # the person stops this long after the advice says so (invented, a typical reaction)
FIXED_AFTER_S = 600.0  # the fixed rule compared with: 10 minutes of after period


@dataclass
class Replay:
    kind: str
    resolution: float
    outcome: str  # "stopped", "unreachable", "never", "error"
    final_u: float | None = None
    target: float | None = None
    u_fixed: float | None = None  # U with the fixed 10-minute after period
    covered_stop: bool | None = None
    covered_fixed: bool | None = None
    saved_s: float | None = None
    forecast_s: float | None = None  # the first after-period forecast of the wait
    waited_s: float | None = None  # how long it really took from that advice to "you can stop"
    calls: int = 0
    slowest_s: float = 0.0
    raised: set = None  # warning codes raised at any call (no simulated run has its probe out)


def _truth(sim: SimulatedRun) -> float:
    tr = sim.truth
    return tr.molar_enthalpy_kJ_mol if tr.molar_enthalpy_kJ_mol is not None else tr.calorimeter_heat_capacity_J_K


def _cut(sim: SimulatedRun, end_s: float) -> SimulatedRun:
    m = sim.time_s <= end_s + 1e-9
    return SimulatedRun(sim.time_s[m], sim.reading_C[m], sim.run, sim.truth)


def _final(sim: SimulatedRun, end_s: float, folder, stem: str):
    return analyze_run(write_run(_cut(sim, end_s), folder, stem), with_reference=False)


def _replay(i: int, folder) -> Replay:
    rng = np.random.default_rng(90_000 + i)
    kind, res = KINDS[i % len(KINDS)], RESOLUTIONS[(i // len(KINDS)) % len(RESOLUTIONS)]
    sim = realistic_scenario(
        kind, rng, resolution=res, mixing_given=bool(rng.uniform() < 0.5), longer_s=FIXED_AFTER_S + 300.0
    )
    rep = Replay(kind, res, "error", raised=set())
    try:
        full = analyze_run(write_run(sim, folder, f"full{i}"), with_reference=False)
        fixed_end = min(full.periods.main_end + FIXED_AFTER_S, float(sim.time_s[-1]))
        fixed = _final(sim, fixed_end, folder, f"fixed{i}")
    except CupcalError:
        return rep
    truth = _truth(sim)
    rep.u_fixed = fixed.gum.expanded_uncertainty
    rep.target = rep.u_fixed * float(rng.uniform(0.8, 1.6))
    rep.covered_fixed = abs(fixed.gum.values[fixed.main] - truth) <= fixed.gum.expanded_uncertainty
    text = write_run(sim, folder, f"live{i}").read_text(encoding="utf-8")
    t, y = sim.time_s, sim.reading_C
    last = int(np.searchsorted(t, full.periods.main_end + 2 * FIXED_AFTER_S))
    first_after = None
    for n in range(10, min(last, t.size) + 1, STEP):
        t0 = time.perf_counter()
        a = advise(text, t[:n], y[:n], target_u=rep.target, now_s=float(t[n - 1]))
        rep.slowest_s = max(rep.slowest_s, time.perf_counter() - t0)
        rep.calls += 1
        rep.raised |= {w.code for w in a.warnings}
        if a.phase == "after" and first_after is None and a.seconds_more is not None:
            first_after = (float(t[n - 1]), a.seconds_more)
        if a.phase in ("can_stop", "out_of_reach"):  # the person stops: done, or more readings no longer help
            reached = a.phase == "can_stop"
            rep.outcome = "stopped" if reached else "unreachable"
            stop = float(t[n - 1]) + REACTION_S
            try:
                final = _final(sim, stop, folder, f"stop{i}")
            except CupcalError:
                rep.outcome = "error"
                return rep
            rep.final_u = final.gum.expanded_uncertainty
            rep.covered_stop = abs(final.gum.values[final.main] - truth) <= rep.final_u
            rep.saved_s = fixed_end - stop
            if first_after is not None and reached:
                rep.forecast_s, rep.waited_s = first_after[1], float(t[n - 1]) - first_after[0]
            return rep
    rep.outcome = "never"
    return rep


def _share(flags) -> str:
    flags = [f for f in flags if f is not None]
    return f"{100.0 * sum(flags) / len(flags):5.1f} % of {len(flags)}" if flags else "—"


def _table(reps: list[Replay]) -> None:
    print(
        f"\nlive stop advice over {len(reps)} simulated runs (advice every {STEP} readings, "
        f"stop {REACTION_S:g} s after it)"
    )
    print(
        f"{'cell':32s} {'runs':>4s} {'stopped':>7s} {'unreach':>7s} {'never':>5s} {'err':>3s} "
        f"{'U≤target':>16s} {'truth in, stop':>16s} {'truth in, 10 min':>16s} {'saved (med)':>11s}"
    )
    cells = [(k, r) for k in KINDS for r in RESOLUTIONS] + [("all", None)]
    for kind, res in cells:
        sub = [x for x in reps if kind == "all" or (x.kind == kind and x.resolution == res)]
        st = [x for x in sub if x.outcome == "stopped"]
        saved = [x.saved_s for x in st]
        name = "all" if kind == "all" else f"{kind} {res:g} K"
        print(
            f"{name:32s} {len(sub):4d} {len(st):7d} {sum(x.outcome == 'unreachable' for x in sub):7d} "
            f"{sum(x.outcome == 'never' for x in sub):5d} {sum(x.outcome == 'error' for x in sub):3d} "
            f"{_share([x.final_u <= x.target for x in st]):>16s} {_share([x.covered_stop for x in st]):>16s} "
            f"{_share([x.covered_fixed for x in st]):>16s} "
            f"{(f'{statistics.median(saved):.0f} s' if saved else '—'):>11s}"
        )
    _strict(reps)
    unreach = [x for x in reps if x.outcome == "unreachable"]
    print(
        f"'cannot be reached' in {len(unreach)} runs; in {sum(x.u_fixed > x.target for x in unreach)} of them "
        "the fixed 10-minute after period did not reach the target either; truth in the final interval "
        f"{_share([x.covered_stop for x in unreach])} at the stop, {_share([x.covered_fixed for x in unreach])} "
        "with the fixed 10 minutes"
    )
    fc = [(x.forecast_s, x.waited_s) for x in reps if x.forecast_s]
    if fc:
        ratio = [w / f for f, w in fc if f > 0]
        print(
            f"first after-period forecast: median real wait / forecast wait = {statistics.median(ratio):.2f} "
            f"(quartiles {np.percentile(ratio, 25):.2f}–{np.percentile(ratio, 75):.2f}, {len(ratio)} runs)"
        )
    codes = ("fore_drift", "spike", "probe_out", "readings_stopped", "fore_short", "too_noisy")
    print(
        "runs with each warning at least once: "
        + ", ".join(f"{c} {sum(c in (x.raised or ()) for x in reps)}" for c in codes)
        + " (no run has its probe out or its readings stopped)"
    )
    calls = sum(x.calls for x in reps)
    print(f"advice calls: {calls}; slowest call {max(x.slowest_s for x in reps) * 1000:.0f} ms")


def _strict(reps: list[Replay]) -> None:
    """The issue's figure read strictly: every "you can stop" (both variants), and the pessimistic "cannot"."""
    said = [x for x in reps if x.outcome == "stopped"]
    print(
        f"strict: of all {len(said)} runs told 'you can stop', final U ≤ target in "
        f"{_share([x.final_u <= x.target for x in said])} (a target out of reach is its own status, "
        "\"out_of_reach\", which never says 'you can stop')"
    )
    reachable = [x for x in reps if x.u_fixed is not None and x.u_fixed <= x.target]
    wrong = [x for x in reachable if x.outcome == "unreachable"]
    n_un = sum(x.outcome == "unreachable" for x in reps)
    print(
        f"strict: of {len(reachable)} runs whose fixed 10 minutes reached the target, told 'cannot be reached' "
        f"in {len(wrong)} ({len(wrong)} of the {n_un} 'cannot be reached' runs were too pessimistic)"
    )
    dump = os.environ.get("CUPCAL_STOP_DUMP")
    if dump:
        import json

        rows = [
            {k: (sorted(v) if isinstance(v, set) else v) for k, v in vars(x).items()} | {"i": i}
            for i, x in enumerate(reps)
        ]
        with open(dump, "w", encoding="utf-8") as fh:
            json.dump(rows, fh, indent=1)


@pytest.mark.slow
# a provisional Newtonian fit of a few minutes of a wild log can overflow its covariance (calc/deltat/drift.py);
# the advisor then answers without an estimate or with a wide one, which this figure is about, not the warning
@pytest.mark.filterwarnings(
    "ignore:overflow encountered:RuntimeWarning", "ignore:invalid value encountered:RuntimeWarning"
)
def test_stop_advice(tmp_path):
    reps = [_replay(i, tmp_path) for i in range(N_RUNS)]
    _table(reps)
    stopped = [x for x in reps if x.outcome == "stopped"]
    assert len(stopped) >= 0.5 * len(reps), "fewer than half the runs got a 'you can stop' with the target met"
    met = sum(x.final_u <= x.target for x in stopped) / len(stopped)
    assert met >= 0.95
    covered = sum(bool(x.covered_stop) for x in stopped) / len(stopped)
    assert covered >= 0.90  # 95 % nominal; the runs' own coverage figure is docs/methods.md §8.6


def test_advice_on_1500_readings_is_fast(tmp_path):
    """One call on 1500 readings takes ≤ 0.3 s (issue 15), in every phase a long log can be in."""
    times = []
    for i, kind in enumerate(KINDS * 2):
        sim = realistic_scenario(kind, 70_000 + i, resolution=RESOLUTIONS[i % 2], mixing_given=False, longer_s=3000.0)
        text = write_run(sim, tmp_path, f"speed{i}").read_text(encoding="utf-8")
        t, y = sim.time_s[:1500], sim.reading_C[:1500]
        assert t.size == 1500
        best = []
        for _ in range(3):
            t0 = time.perf_counter()
            advise(text, t, y, now_s=float(t[-1]))
            best.append(time.perf_counter() - t0)
        times.append(min(best))  # best of three: the machine is shared, the other two measure the neighbours
    print(
        f"\nadvise() on 1500 readings (best of 3 per log): median {statistics.median(times) * 1000:.0f} ms, "
        f"slowest log {max(times) * 1000:.0f} ms over {len(times)} logs"
    )
    assert max(times) <= 0.3
