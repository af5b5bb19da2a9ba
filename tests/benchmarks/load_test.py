"""Load test of the notebook (issue 7): gunicorn, SQLite (WAL) or PostgreSQL, concurrent clients.

    .venv/bin/python -m tests.benchmarks.load_test --db sqlite|postgresql [--clients 16] [--runs 2000]
        [--duration 120] [--workers 2] [--ceiling]

Makes a fresh database (a SQLite file in a temporary folder, or a database on a throwaway
PostgreSQL server from tests/webapp/postgres.py), migrates it, seeds a coordinator, a technician
and one student per client (groups of four, each with an API token of scope write), starts
``gunicorn --workers N 'webapp:create_app()'`` on 127.0.0.1 with the server's default settings,
and lets the clients (one process each, tests/benchmarks/load_clients.py) create the runs as fast
as they can, each upload followed by reads, then read only until the duration has passed.
Afterwards the database is checked directly: no lost, duplicated or unacknowledged run, each with
one current result. Prints a table and writes ``bench-results/load-<db>.json``. ``--ceiling``
also measures a minimal Flask endpoint on the same stack (``bench-results/load-ceiling.json``).
Exits 1 on any error, lost or duplicated run. Traffic goes to 127.0.0.1 only; every loop is
bounded by ``--max-seconds``.
"""

from __future__ import annotations

import argparse
import contextlib
import hashlib
import importlib.metadata
import json
import multiprocessing
import os
import platform
import queue
import secrets
import signal
import socket
import sqlite3
import subprocess
import sys
import tempfile
import threading
import time
import urllib.request
from collections import Counter
from collections.abc import Iterator
from pathlib import Path
from typing import Any

import psutil
import sqlalchemy as sa

from tests.benchmarks.load_clients import ClientPlan, ClientReport, run_client, summarize, table
from tests.webapp.people_helpers import add_person  # a cheap hash: sign-in happens before the measured window

REPO = Path(__file__).resolve().parents[2]
RESULTS = REPO / "bench-results"
GUNICORN = Path(sys.executable).parent / "gunicorn"
DEMO = REPO / "fixtures" / "demo"
DEMO_RUNS = (
    "diss-kcl-01",
    "neut-hcl-naoh-01",
    "react-mg-hcl-01",
    "diss-nh4no3-01",
    "cal-electrical-01",
    "cal-mixing-01",
)
CALORIMETER = "Cup TH-07 (two nested foam cups, lid)"  # named by the demo run files
PASSWORD = "load test password"
GUNICORN_TEXT = f"{importlib.metadata.version('gunicorn')}, {{}} sync workers, default settings"


def parse_args(argv: list[str] | None) -> argparse.Namespace:
    p = argparse.ArgumentParser(prog="python -m tests.benchmarks.load_test", description=__doc__.split("\n")[0])
    p.add_argument("--db", choices=("sqlite", "postgresql"), help="database of the notebook run")
    p.add_argument("--clients", type=int, default=16)
    p.add_argument("--runs", type=int, default=2000, help="runs to create in all")
    p.add_argument("--duration", type=float, default=120.0, help="seconds to go on at least")
    p.add_argument("--workers", type=int, default=2, help="gunicorn workers")
    p.add_argument("--ceiling", action="store_true", help="also measure a minimal Flask endpoint")
    p.add_argument("--ceiling-duration", type=float, default=20.0)
    p.add_argument("--max-seconds", type=float, default=1800.0, help="hard stop of the clients")
    args = p.parse_args(argv)
    if not args.db and not args.ceiling:
        p.error("give --db sqlite|postgresql, --ceiling, or both")
    return args


# ----------------------------------------------------------------- database


@contextlib.contextmanager
def fresh_database(kind: str, tmp: Path) -> Iterator[tuple[str, str, int | None]]:
    """Yield (URL, description, server pid or None) of a new empty database; a server is stopped afterwards."""
    if kind == "sqlite":
        yield f"sqlite:///{tmp / 'cupcal.sqlite3'}", f"SQLite {sqlite3.sqlite_version}, WAL journal", None
        return
    from tests.webapp.conftest import create_database
    from tests.webapp.postgres import start_server

    server = start_server()
    try:
        url = create_database(server, "cupcal_load")
        version = subprocess.run(
            [str(server.bindir / "postgres"), "--version"], capture_output=True, text=True
        ).stdout.strip()
        pid = int((server.data / "postmaster.pid").read_text().split()[0])
        yield url, f"{version}, throwaway server of tests/webapp/postgres.py (fsync=off, synchronous_commit=off)", pid
    finally:
        server.stop()


@contextlib.contextmanager
def seeded(url: str, who: str) -> Iterator[tuple[Any, Any, Any, Any]]:
    """Migrate the database at ``url``; yield (app, session, coordinator, technician), both people named
    after ``who`` (``coord@<who>.example``); close the session and the engine afterwards."""
    from webapp import create_app
    from webapp.db import get_engine, new_session
    from webapp.migrate import upgrade

    upgrade(url)
    app = create_app({"DATABASE_URL": url, "SECRET_KEY": "seed"})
    s = new_session(app)
    try:
        coord = add_person(s, f"coord@{who}.example", f"Coordinator {who.title()}", "coordinator", password=PASSWORD)
        tech = add_person(s, f"tech@{who}.example", f"Technician {who.title()}", "technician", password=PASSWORD)
        yield app, s, coord, tech
    finally:
        s.close()
        get_engine(app).dispose()


def seed(url: str, clients: int) -> tuple[list[tuple[str, str]], int]:
    """Migrate and seed the database; return each client's (e-mail, token) and the Monte Carlo trials."""
    from webapp.services.calorimeters import create_calorimeter
    from webapp.services.people import create_group, issue_token

    with seeded(url, "load") as (app, s, coord, _tech):
        create_calorimeter(s, coord, name=CALORIMETER, parts="two nested foam cups, lid")
        groups = [create_group(s, coord, name=f"Load group {g + 1}") for g in range((clients + 3) // 4)]
        out = []
        for i in range(clients):
            email = f"student{i:02d}@load.example"
            p = add_person(s, email, f"Student {i:02d}", "student", password=PASSWORD, group=groups[i // 4])
            out.append((email, issue_token(s, p, "load test", scope="write")[1]))
        return out, int(app.config["MONTE_CARLO_TRIALS"])


def check_database(url: str, created: list[tuple[int, str, int]]) -> dict[str, Any]:
    """Compare the stored runs with the acknowledged ones: lost, unacknowledged, duplicated, results."""
    from webapp.db import make_engine
    from webapp.models import Result, Run
    from webapp.services.integrity import check_database as integrity_check

    engine = make_engine(url)
    try:
        integrity = integrity_check(engine)  # what `cupcal db check` reports
        with engine.connect() as c:
            rows = c.execute(sa.select(Run.id, Run.title, Run.run_toml, Run.readings_raw)).all()
            current = dict(
                c.execute(
                    sa.select(Result.run_id, sa.func.count()).where(Result.is_current.is_(True)).group_by(Result.run_id)
                ).all()
            )
    finally:
        engine.dispose()
    stored = {r.id: r.title for r in rows}
    acked = {run_id: title for _seq, title, run_id in created}
    titles = Counter(r.title for r in rows)
    contents = Counter(hashlib.sha256(r.run_toml.encode() + b"\0" + bytes(r.readings_raw)).hexdigest() for r in rows)
    return {
        "stored": len(stored),
        "acknowledged_201": len(created),
        "acknowledged_ids": len(acked),
        "lost": sorted(i for i in acked if i not in stored),
        "unacknowledged": sorted(i for i in stored if i not in acked),
        "wrong_title": sorted(i for i, t in acked.items() if i in stored and stored[i] != t),
        "duplicated_titles": sorted(t for t, n in titles.items() if n > 1),
        "duplicated_contents": sum(n - 1 for n in contents.values() if n > 1),
        "without_one_current_result": sorted(i for i in stored if current.get(i, 0) != 1),
        "integrity_problems": integrity.problems,
    }


def check_problems(check: dict[str, Any]) -> list[str]:
    """Return what is wrong in a :func:`check_database` result (empty when all is well)."""
    out = []
    if check["stored"] != check["acknowledged_201"] or check["acknowledged_ids"] != check["acknowledged_201"]:
        out.append(
            f"{check['stored']} runs stored, {check['acknowledged_201']} created (201), "
            f"{check['acknowledged_ids']} distinct ids acknowledged"
        )
    for key in (
        "lost",
        "unacknowledged",
        "wrong_title",
        "duplicated_titles",
        "without_one_current_result",
        "integrity_problems",
    ):
        if check[key]:
            out.append(f"{key}: {len(check[key])} (first: {check[key][:5]})")
    if check["duplicated_contents"]:
        out.append(f"duplicated contents: {check['duplicated_contents']}")
    return out


# ----------------------------------------------------------------- server


def free_port() -> int:
    with socket.socket() as s:
        s.bind(("127.0.0.1", 0))
        return int(s.getsockname()[1])


@contextlib.contextmanager
def gunicorn(app_spec: str, env: dict[str, str], workers: int, tmp: Path, ready_path: str) -> Iterator[tuple[Any, int]]:
    """Start gunicorn (sync workers) on 127.0.0.1 and yield (process, port) once it answers; stop it after."""
    if not GUNICORN.exists():
        raise SystemExit(f"{GUNICORN} not found: run `make -C {REPO} .venv/.installed` (gunicorn is a dependency)")
    port = free_port()
    log = tmp / f"gunicorn-{port}.log"
    proc = subprocess.Popen(
        [
            str(GUNICORN),
            "--workers",
            str(workers),
            "--bind",
            f"127.0.0.1:{port}",
            "--chdir",
            str(REPO),
            "--error-logfile",
            str(log),
            app_spec,
        ],
        env={**os.environ, **env},
        cwd=str(tmp),
        start_new_session=True,
    )
    with served(proc, log, f"http://127.0.0.1:{port}{ready_path}", workers):
        yield proc, port


@contextlib.contextmanager
def served(proc: subprocess.Popen, log: Path, ready_url: str, workers: int) -> Iterator[None]:
    """Wait (90 s at most) until gunicorn ``proc`` answers ``ready_url`` with its ``workers`` up; when the
    block ends, stop it and print the error lines of its ``log``."""
    try:
        deadline = time.time() + 90
        while True:
            if proc.poll() is not None:
                raise RuntimeError(f"gunicorn exited with {proc.returncode}:\n{log.read_text()[-3000:]}")
            with contextlib.suppress(OSError):
                with urllib.request.urlopen(ready_url, timeout=5) as r:
                    if r.status == 200 and len(psutil.Process(proc.pid).children()) >= workers:
                        break
            if time.time() > deadline:
                raise RuntimeError(f"gunicorn did not answer in 90 s:\n{log.read_text()[-3000:]}")
            time.sleep(0.3)
        yield
    finally:
        proc.terminate()
        try:
            proc.wait(30)
        except subprocess.TimeoutExpired:
            proc.kill()
            proc.wait(10)
        errors = (
            [
                line
                for line in log.read_text(errors="replace").splitlines()
                if "[ERROR]" in line or "Traceback" in line or "WORKER TIMEOUT" in line
            ]
            if log.exists()
            else []
        )
        if errors:
            print(f"gunicorn log ({log}) has {len(errors)} error lines, first: " + " | ".join(errors[:5]))


def tree_cpu_s(pid: int | None) -> float:
    """Return the CPU seconds of a process, its live children and its reaped children."""
    if pid is None:
        return 0.0
    total = 0.0
    with contextlib.suppress(psutil.Error):
        root = psutil.Process(pid)
        for p in [root, *root.children(recursive=True)]:
            with contextlib.suppress(psutil.Error):
                t = p.cpu_times()
                total += t.user + t.system + t.children_user + t.children_system
    return total


class Monitor(threading.Thread):
    """Samples the RSS of the gunicorn workers every half second; keeps the peaks."""

    def __init__(self, master_pid: int, db_pid: int | None) -> None:
        super().__init__(daemon=True)
        self.master = psutil.Process(master_pid)
        self.db_pid = db_pid
        self.peak_rss: dict[int, int] = {}
        self.stop = threading.Event()

    def workers(self) -> list[psutil.Process]:
        return self.master.children()

    def cpu_s(self) -> tuple[float, float, float]:
        """Return the CPU seconds used so far by gunicorn, the database server and this process."""
        me = psutil.Process().cpu_times()
        return tree_cpu_s(self.master.pid), tree_cpu_s(self.db_pid), me.user + me.system

    def run(self) -> None:
        while not self.stop.wait(0.5):
            for p in self.workers():
                with contextlib.suppress(psutil.Error):
                    self.peak_rss[p.pid] = max(self.peak_rss.get(p.pid, 0), p.memory_info().rss)


# ----------------------------------------------------------------- driving the clients


def collect(procs: list[Any], out: Any, deadline: float) -> list[ClientReport]:
    """Return the clients' reports; one that died without a report, or is late, gets a failed one."""
    reports: dict[int, ClientReport] = {}
    while len(reports) < len(procs) and time.time() < deadline:
        with contextlib.suppress(queue.Empty):
            rep = out.get(timeout=2)
            reports[rep.index] = rep
            continue
        if not any(p.is_alive() for p in procs) and out.empty():
            break
    return [
        reports.get(i) or ClientReport(i, failure="the client process sent no report (died or hung)")
        for i in range(len(procs))
    ]


def drive(plans: list[ClientPlan], runs_total: int, monitor: Monitor) -> dict[str, Any]:
    """Run the client processes to the end; return their records, created runs and CPU figures."""
    ctx = multiprocessing.get_context("fork")
    counter, t0 = ctx.Value("i", 0), ctx.Value("d", 0.0)
    ready, start, out = ctx.Queue(), ctx.Event(), ctx.Queue()
    procs = [
        ctx.Process(target=run_client, args=(p, counter, runs_total, ready, start, t0, out), daemon=True) for p in plans
    ]
    try:
        for p in procs:
            p.start()
        for _ in procs:
            ready.get(timeout=120)
        cpu0, machine0 = monitor.cpu_s(), psutil.cpu_times()
        monitor.start()
        t0.value = time.time()
        start.set()
        reports = collect(procs, out, time.time() + max(pl.max_seconds for pl in plans) + 300)
        end = time.time()
        cpu1, machine1 = monitor.cpu_s(), psutil.cpu_times()
        monitor.stop.set()
        for p in procs:
            p.join(30)
    finally:
        for p in procs:
            if p.is_alive():
                p.terminate()
    busy = sum(getattr(machine1, f) - getattr(machine0, f) for f in ("user", "system", "nice", "irq", "softirq"))
    records = [r for rep in reports for r in rep.records]
    client_cpu = sum(rep.cpu_s for rep in reports)
    server_cpu, db_cpu, parent_cpu = (b - a for a, b in zip(cpu0, cpu1))
    return {
        "records": records,
        "created": [c for rep in reports for c in rep.created],
        "failures": [f"client {rep.index}: {rep.failure}" for rep in reports if rep.failure],
        "wall_s": max([r[3] + r[2] / 1000 for r in records], default=end - t0.value),
        "server_cpu_s": server_cpu,
        "db_server_cpu_s": db_cpu,
        "client_cpu_s": client_cpu,
        "load_test_parent_cpu_s": parent_cpu,
        "machine_busy_cpu_s": busy,
        "other_processes_cpu_s": max(0.0, busy - server_cpu - db_cpu - client_cpu - parent_cpu),
        "peak_worker_rss_mb": sorted(round(v / 2**20, 1) for v in monitor.peak_rss.values()),
    }


def measure(
    args: argparse.Namespace,
    app_spec: str,
    env: dict[str, str],
    tmp: Path,
    ready_path: str,
    plans: list[ClientPlan],
    runs_total: int,
    db_pid: int | None = None,
) -> dict[str, Any]:
    with gunicorn(app_spec, env, args.workers, tmp, ready_path) as (proc, port):
        for p in plans:
            p.port = port
        return drive(plans, runs_total, Monitor(proc.pid, db_pid))


def report(name: str, config: dict[str, Any], res: dict[str, Any], extra: dict[str, Any]) -> tuple[dict, list[str]]:
    """Print the table and the figures of one measurement; return the JSON report and the errors."""
    rows = summarize(res["records"], res["wall_s"])
    errors = res["failures"] + [f"[{r[0]}] status {r[1]} at {r[3]:.1f} s: {r[4]}" for r in res["records"] if r[4]]
    print(f"\n== {name}: " + ", ".join(f"{k} {v}" for k, v in config.items()))
    print(table(rows))
    n = sum(r["count"] for k, r in rows.items() if k != "overall")
    res["server_cpu_ms_per_request"] = 1000 * res["server_cpu_s"] / max(1, n)
    print(
        f"wall {res['wall_s']:.1f} s; CPU seconds in the window: gunicorn {res['server_cpu_s']:.1f} "
        f"({res['server_cpu_ms_per_request']:.1f} ms a request), database server {res['db_server_cpu_s']:.1f}, "
        f"clients {res['client_cpu_s']:.1f}, load-test parent {res['load_test_parent_cpu_s']:.1f}, "
        f"other processes {res['other_processes_cpu_s']:.1f} (machine busy {res['machine_busy_cpu_s']:.1f} "
        f"of {psutil.cpu_count() * res['wall_s']:.0f} on {psutil.cpu_count()} cores)"
    )
    res["requests_in_flight_mean"] = sum(r[2] for r in res["records"]) / 1000 / max(res["wall_s"], 1e-9)
    print(
        f"requests in flight on average: {res['requests_in_flight_mean']:.1f} (latency includes the wait "
        f"for a free worker); peak RSS of the gunicorn workers: {res['peak_worker_rss_mb']} MB"
    )
    for line in errors[:10]:
        print("ERROR", line)
    if len(errors) > 10:
        print(f"... {len(errors) - 10} more errors")
    data = {
        "name": name,
        "config": config,
        "summary": rows,
        "errors": errors[:200],
        "error_count": len(errors),
        **{k: v for k, v in res.items() if k not in ("records", "created")},
        **extra,
    }
    return data, errors


def write_json(name: str, data: dict[str, Any]) -> None:
    RESULTS.mkdir(exist_ok=True)
    path = RESULTS / f"load-{name}.json"
    path.write_text(json.dumps(data, indent=2, default=str), encoding="utf-8")
    print(f"report: {path}")


def notebook_run(args: argparse.Namespace, tmp: Path) -> bool:
    """Measure the notebook on ``args.db``; return whether all went well."""
    with fresh_database(args.db, tmp) as (url, db_text, db_pid):
        accounts, trials = seed(url, args.clients)
        demo = [(n, (DEMO / f"{n}.toml").read_text("utf-8"), (DEMO / f"{n}.csv").read_bytes()) for n in DEMO_RUNS]
        tag = secrets.token_hex(4)
        plans = [
            ClientPlan(i, 0, email, PASSWORD, token, tag, demo, args.duration, args.max_seconds)
            for i, (email, token) in enumerate(accounts)
        ]
        env = {
            "DATABASE_URL": url,
            "CUPCAL_SECRET_KEY": secrets.token_hex(32),
            "CUPCAL_INSTANCE_PATH": str(tmp / "instance"),
        }  # not the developer's instance/config.py
        res = measure(args, "webapp:create_app()", env, tmp, "/auth/login", plans, args.runs, db_pid)
        check = check_database(url, res["created"])
    creates = sorted(r[3] + r[2] / 1000 for r in res["records"] if r[0] == "create" and not r[4])
    config = {
        "database": db_text,
        "clients": args.clients,
        "runs": args.runs,
        "duration_s": args.duration,
        "gunicorn": GUNICORN_TEXT.format(args.workers),
        "monte_carlo_trials": trials,
        "schedule": "runs created as fast as the clients can, each upload followed by 4 reads "
        "(page, plot, API list, API run); then reads only until the duration has passed",
    }
    data, errors = report(args.db, config, res, {"check": check})
    created_in = creates[-1] if creates else 0.0
    data["runs_created"] = len(creates)
    data["creation_wall_s"] = created_in
    print(
        f"runs created: {len(creates)} of {args.runs} in {created_in:.1f} s = "
        f"{len(creates) / created_in if created_in else 0:.1f} runs/s; reads only for the "
        f"{max(0.0, res['wall_s'] - created_in):.1f} s after"
    )
    problems = check_problems(check) + ([] if len(creates) == args.runs else [f"only {len(creates)} runs created"])
    print(
        f"database check: {check['stored']} runs stored, {check['acknowledged_201']} acknowledged; "
        f"lost: {len(check['lost'])}, duplicated: {len(check['duplicated_titles']) + check['duplicated_contents']}; "
        f"cupcal db check: {'ok' if not check['integrity_problems'] else 'PROBLEMS'}"
    )
    for p in problems:
        print("PROBLEM", p)
    data["problems"] = problems
    write_json(args.db, data)
    return not errors and not problems


def ceiling_run(args: argparse.Namespace, tmp: Path) -> bool:
    """Measure the minimal Flask endpoint on the same stack; return whether it had no error."""
    plans = [
        ClientPlan(i, 0, "", "", "", "", [], args.ceiling_duration, args.max_seconds, ping_only=True)
        for i in range(args.clients)
    ]
    res = measure(args, "tests.benchmarks.ceiling_app:create_app()", {}, tmp, "/ping", plans, 0)
    config = {
        "app": "minimal Flask, GET /ping -> 'ok'",
        "clients": args.clients,
        "duration_s": args.ceiling_duration,
        "gunicorn": GUNICORN_TEXT.format(args.workers),
    }
    data, errors = report("ceiling", config, res, {})
    write_json("ceiling", data)
    return not errors


def main(argv: list[str] | None = None) -> int:
    args = parse_args(argv)
    previous = signal.signal(signal.SIGTERM, lambda *_: sys.exit(143))  # runs the clean-up (servers stop)
    print(f"machine: {platform.platform()}, {psutil.cpu_count()} cores, load average {os.getloadavg()}")
    ok = True
    try:
        with tempfile.TemporaryDirectory(prefix="cupcal-load-") as d:
            if args.db:
                ok = notebook_run(args, Path(d)) and ok
            if args.ceiling:
                ok = ceiling_run(args, Path(d)) and ok
    finally:
        signal.signal(signal.SIGTERM, previous)
    print("load test: " + ("PASSED" if ok else "FAILED"))
    return 0 if ok else 1


if __name__ == "__main__":
    sys.exit(main())
