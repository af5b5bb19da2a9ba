"""Live runs under load (issue 15): readings POSTed at a steady rate by one recorder per bench, followed
on the pages' Server-Sent Events streams, on one gunicorn server (gthread workers).

- ``--runs 1 --page``: one live run, its live page's stream open: the latency from a reading's POST to
  its arrival on the stream (median, p95, max).
- ``--runs 30``: 30 live runs at once with the section's room view open: no reading lost (every
  acknowledged reading arrives on the room stream and is stored once), p95 latency, and the CPU the
  gunicorn processes used (psutil, over the measured window) and the database server's (PostgreSQL).
- ``--servers 2``: the readings go to one gunicorn, the stream is read from a second one on the same
  database (several app servers behind one database: the updates cross through it only); the CPU
  reported is the first server's.

Latency = arrival on the stream − the moment just before the POST was sent, both on this process's
monotonic clock. The clients run on the same machine as the server and share its cores.
``python -m tests.benchmarks.live_bench --db postgresql --runs 30 --duration 120``
"""

from __future__ import annotations

import argparse
import contextlib
import json
import re
import statistics
import tempfile
import threading
import time
from pathlib import Path
from typing import Any

import requests

from tests.benchmarks.live_setup import COORDINATOR, StreamReader, gunicorn, seed, signed_in
from tests.benchmarks.load_test import RESULTS, fresh_database, tree_cpu_s
from tests.webapp.live_helpers import demo_rows, live_run_file


def parse_args(argv: list[str] | None) -> argparse.Namespace:
    p = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    p.add_argument("--db", choices=("sqlite", "postgresql"), default="sqlite")
    p.add_argument("--runs", type=int, default=30, help="live runs recording at once")
    p.add_argument("--rate", type=float, default=1.0, help="readings per second per run")
    p.add_argument("--duration", type=float, default=120.0, help="seconds of recording")
    p.add_argument("--workers", type=int, default=2)
    p.add_argument("--page", action="store_true", help="follow run 1's live page (else the room view)")
    p.add_argument(
        "--servers",
        type=int,
        choices=(1, 2),
        default=1,
        help="2: a second gunicorn on the same database serves the followed stream (updates cross "
        "processes only through the database)",
    )
    p.add_argument(
        "--preload",
        type=int,
        default=0,
        help="readings each run holds before the measured window (the advisor's cost grows with them)",
    )
    return p.parse_args(argv)


class Recorder(threading.Thread):
    """One bench's recorder: a reading every 1/rate s, POSTed at once (retried: the API is idempotent)."""

    def __init__(
        self,
        base: str,
        token: str,
        live_id: int,
        rate: float,
        t0: float,
        until: float,
        sent: dict[tuple[int, int], float],
    ) -> None:
        super().__init__(daemon=True)
        self.base, self.live_id, self.rate, self.t0, self.until, self.sent = base, live_id, rate, t0, until, sent
        self.session = requests.Session()
        self.session.headers["Authorization"] = f"Bearer {token}"
        self.acked: list[int] = []
        self.failures: list[str] = []
        self.post_s: list[float] = []
        self.first_seq = 0

    def run(self) -> None:
        rows = demo_rows()
        seq = self.first_seq
        while True:
            due = self.t0 + (seq - self.first_seq) / self.rate
            if due > self.until:
                return
            time.sleep(max(0.0, due - time.monotonic()))
            temp = rows[seq % len(rows)][1]
            self.sent[(self.live_id, seq)] = time.monotonic()
            for attempt in range(3):
                try:
                    start = time.monotonic()
                    r = self.session.post(
                        f"{self.base}/api/live-runs/{self.live_id}/readings",
                        json={"readings": [[seq, float(seq), temp]]},
                        timeout=30,
                    )
                    self.post_s.append(time.monotonic() - start)
                    if r.status_code == 200:
                        self.acked.append(seq)
                        break
                    self.failures.append(f"{r.status_code} {r.text[:120]}")
                except requests.RequestException as exc:
                    self.failures.append(str(exc)[:120])
                time.sleep(0.2 * (attempt + 1))
            seq += 1


def start_runs(base: str, benches: list[tuple[str, str]], preload: int) -> list[int]:
    """Create one live run per bench (through the API, as `cupcal record` does) holding ``preload``
    readings already; return their ids."""
    ids = []
    text = live_run_file()
    for i, (bench, token) in enumerate(benches):
        run_file = re.sub(r"(?m)^bench = .*$", f'bench = "{bench}"', text)
        r = requests.post(
            f"{base}/api/live-runs",
            json={"run_file": run_file, "client_key": f"bench-{i}"},
            headers={"Authorization": f"Bearer {token}"},
            timeout=60,
        )
        r.raise_for_status()
        ids.append(r.json()["id"])
        rows = demo_rows()
        for start in range(0, preload, 1000):
            batch = [[k, float(k), rows[k % len(rows)][1]] for k in range(start, min(preload, start + 1000))]
            requests.post(
                f"{base}/api/live-runs/{ids[-1]}/readings",
                json={"readings": batch},
                headers={"Authorization": f"Bearer {token}"},
                timeout=120,
            ).raise_for_status()
    return ids


def percentile(values: list[float], q: float) -> float:
    """Return the q-quantile (0..1) of ``values`` (statistics.quantiles, inclusive method)."""
    if len(values) < 2:
        return values[0] if values else float("nan")
    return statistics.quantiles(values, n=100, method="inclusive")[max(0, min(98, round(q * 100) - 1))]


def measure(args: argparse.Namespace, url: str, db_pid: int | None, tmp: Path) -> dict[str, Any]:
    setup = seed(url, args.runs)
    arrived: dict[tuple[int, int], float] = {}
    sent: dict[tuple[int, int], float] = {}
    lock = threading.Lock()

    def on_event(name: str, data: dict[str, Any], t: float) -> None:
        items = data.get("items", [data]) if name in ("room", "update") else []
        with lock:
            for item in items:
                for r in item.get("readings", []):
                    arrived.setdefault((item["id"], r[0]), t)

    with contextlib.ExitStack() as servers:
        proc, base = servers.enter_context(gunicorn(url, args.workers, tmp))
        view_base = base if args.servers == 1 else servers.enter_context(gunicorn(url, args.workers, tmp))[1]
        ids = start_runs(base, setup["benches"], args.preload)
        viewer = signed_in(view_base, COORDINATOR)
        path = (
            f"/live/{ids[0]}/events?after=-1" if args.page else f"/classes/sections/{setup['section_id']}/live/events"
        )
        reader = StreamReader(viewer, view_base + path, on_event)
        reader.start()
        time.sleep(2.0)  # the stream is open before the first reading
        t0 = time.monotonic() + 0.5
        until = t0 + args.duration
        recorders = [
            Recorder(base, tok, lid, args.rate, t0 + i / (args.rate * len(ids)), until, sent)
            for i, ((_b, tok), lid) in enumerate(zip(setup["benches"], ids))
        ]
        cpu0, db0, w0 = tree_cpu_s(proc.pid), tree_cpu_s(db_pid), time.monotonic()
        for rec in recorders:
            rec.first_seq = args.preload
            rec.start()
        for rec in recorders:
            rec.join()
        cpu1, db1, w1 = tree_cpu_s(proc.pid), tree_cpu_s(db_pid), time.monotonic()
        time.sleep(3.0)  # the last readings reach the stream
        reader.stop.set()
        reader.join(35)
    acked = {(rec.live_id, s) for rec in recorders for s in rec.acked}
    followed = {ids[0]} if args.page else set(ids)
    latencies = sorted(arrived[k] - sent[k] for k in acked if k in arrived and k[0] in followed)
    lost = sorted(k for k in acked if k[0] in followed and k not in arrived)
    return {
        "acked": len(acked),
        "followed": sum(1 for k in acked if k[0] in followed),
        "lost": len(lost),
        "lost_first": lost[:5],
        "stored": stored_counts(url, ids),
        "acked_by_run": {rec.live_id: args.preload + len(rec.acked) for rec in recorders},
        "latency_s": {
            "median": statistics.median(latencies) if latencies else None,
            "p95": percentile(latencies, 0.95),
            "max": latencies[-1] if latencies else None,
            "n": len(latencies),
        },
        "post_s": {
            "median": statistics.median([x for r in recorders for x in r.post_s]),
            "p95": percentile(sorted(x for r in recorders for x in r.post_s), 0.95),
        },
        "failures": sum(len(r.failures) for r in recorders),
        "failures_first": [f for r in recorders for f in r.failures][:5],
        "stream_reconnects": reader.reconnects,
        "stream_errors": reader.errors[:5],
        "cpu": {
            "window_s": round(w1 - w0, 1),
            "gunicorn_cpu_s": round(cpu1 - cpu0, 1),
            "gunicorn_cores": round((cpu1 - cpu0) / (w1 - w0), 3),
            "database_cores": round((db1 - db0) / (w1 - w0), 3) if db_pid else None,
        },
    }


def stored_counts(url: str, ids: list[int]) -> dict[int, int]:
    """Return how many readings each live run holds in the database."""
    import sqlalchemy as sa

    from webapp.db import make_engine
    from webapp.models import LiveReading

    engine = make_engine(url)
    try:
        with engine.connect() as c:
            return dict(
                c.execute(
                    sa.select(LiveReading.live_run_id, sa.func.count())
                    .where(LiveReading.live_run_id.in_(ids))
                    .group_by(LiveReading.live_run_id)
                ).all()
            )
    finally:
        engine.dispose()


def problems(res: dict[str, Any], limit_s: float) -> list[str]:
    """Return what breaks the targets: a lost or unstored reading, a failed POST, p95 latency over ``limit_s``."""
    out = []
    if res["lost"]:
        out.append(f"{res['lost']} acknowledged readings never reached the stream (first: {res['lost_first']})")
    short = {k: (n, res["stored"].get(k, 0)) for k, n in res["acked_by_run"].items() if res["stored"].get(k, 0) != n}
    if short:
        out.append(f"stored readings differ from acknowledged ones: {dict(list(short.items())[:5])}")
    if res["failures"]:
        out.append(f"{res['failures']} POSTs failed (first: {res['failures_first']})")
    if not res["latency_s"]["n"] or res["latency_s"]["p95"] > limit_s:
        out.append(f"p95 latency {res['latency_s']['p95']} s is over {limit_s} s")
    return out


def main(argv: list[str] | None = None) -> int:
    args = parse_args(argv)
    name = f"live-{'page' if args.page else 'room'}-{args.runs}-{args.db}" + (
        "-two-servers" if args.servers == 2 else ""
    )
    with (
        tempfile.TemporaryDirectory(prefix="cupcal-live-bench-") as tmp,
        fresh_database(args.db, Path(tmp)) as (url, db_text, db_pid),
    ):
        res = measure(args, url, db_pid, Path(tmp))
    res.update(
        config={
            "db": db_text,
            "runs": args.runs,
            "preload": args.preload,
            "rate_per_s": args.rate,
            "duration_s": args.duration,
            "workers": args.workers,
            "followed": "live page of run 1" if args.page else "room view",
            "servers": args.servers,
        }
    )
    limit = 1.0 if args.page and args.servers == 1 else 2.0
    bad = problems(res, limit)
    lat = res["latency_s"]
    print(
        f"{name}: {res['followed']} readings followed, {res['lost']} lost; latency median {lat['median']:.3f} s, "
        f"p95 {lat['p95']:.3f} s, max {lat['max']:.3f} s; POST median {res['post_s']['median']:.3f} s; "
        f"gunicorn CPU {res['cpu']['gunicorn_cores']:.2f} cores"
        + (f", database {res['cpu']['database_cores']:.2f} cores" if res["cpu"]["database_cores"] is not None else "")
    )
    RESULTS.mkdir(exist_ok=True)
    (RESULTS / f"{name}.json").write_text(json.dumps(res, indent=2, default=str), encoding="utf-8")
    for line in bad:
        print("PROBLEM:", line)
    return 1 if bad else 0


if __name__ == "__main__":
    raise SystemExit(main())
