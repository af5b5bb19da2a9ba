"""Races between two requests on one run, shared by the fast tests and the 200-trial benchmark.

A *caller* sends one API request: ``call(method, path, token, json=None, if_match=None)`` returns
``(status, body)``. The fast tests call the app in-process from two threads; the benchmark calls
gunicorn over HTTP. Each trial releases both requests together (a barrier), then reads the
database directly: the signed run must be unchanged since its lock (what ``cupcal db check``
proves: content hash, signed result, nothing written after the lock entry), and the answers must
agree with what is stored (a change answered 200 is stored, one after the lock was refused).
"""

from __future__ import annotations

import dataclasses
import datetime as dt
import threading
from collections import Counter
from collections.abc import Callable
from pathlib import Path
from typing import Any

import sqlalchemy as sa

from webapp.models import AuditEntry, Run

DEMO = Path(__file__).resolve().parents[2] / "fixtures" / "demo"
Caller = Callable[..., tuple[int, Any]]


def all_past_the_check(monkeypatch: Any, module: Any, name: str, calls: list[Callable[[], Any]]) -> list[Any]:
    """Run ``calls`` from threads of their own, each held at ``module.name`` (the write that follows a check for a
    duplicate) until all have reached it, so that every one has passed the check before any writes; return their
    answers in the order they finished."""
    barrier = threading.Barrier(len(calls), timeout=30)
    real = getattr(module, name)

    def held(*args: Any, **kwargs: Any) -> Any:
        barrier.wait()
        return real(*args, **kwargs)

    monkeypatch.setattr(module, name, held)
    answers: list[Any] = []
    threads = [threading.Thread(target=lambda fn=fn: answers.append(fn())) for fn in calls]
    for t in threads:
        t.start()
    for t in threads:
        t.join(120)
    return answers


def both(first: Callable[[], Any], second: Callable[[], Any]) -> tuple[Any, Any]:
    """Run two calls released together from two threads; return their answers."""
    barrier = threading.Barrier(2)
    out: list[Any] = [None, None]

    def go(i: int, fn: Callable[[], Any]) -> None:
        barrier.wait()
        try:
            out[i] = fn()
        except Exception as exc:  # noqa: BLE001 - reported as the answer of that request
            out[i] = (599, {"error": repr(exc)})

    threads = [threading.Thread(target=go, args=(i, fn)) for i, fn in enumerate((first, second))]
    for t in threads:
        t.start()
    for t in threads:
        t.join(120)
    return out[0], out[1]


@dataclasses.dataclass
class Tally:
    """Counts over the trials of one race."""

    trials: int = 0
    changes_after_lock: int = 0  # problems cupcal db check's lock rules find, over all trials
    disagreements: list[str] = dataclasses.field(default_factory=list)  # answers that contradict the database
    answers: Counter = dataclasses.field(default_factory=Counter)

    def as_dict(self) -> dict[str, Any]:
        return {
            "trials": self.trials,
            "changes_after_lock": self.changes_after_lock,
            "disagreements": len(self.disagreements),
            "first_disagreements": self.disagreements[:5],
            "answers": dict(self.answers),
        }


def lock_problems(engine: sa.Engine, run_id: int) -> list[str]:
    """Return what ``cupcal db check`` finds wrong with one locked run."""
    import sqlalchemy.orm as so

    from webapp.services.integrity_locks import _run_problems

    with so.Session(engine) as s:
        run = s.get(Run, run_id)
        if not run.locked:
            return [f"run {run_id} is not locked"]
        if run.locked_hash is None:
            return [f"run {run_id}: its lock recorded no content hash"]
        return _run_problems(s, run)


def audit_order(engine: sa.Engine, run_id: int) -> list[tuple[int, str]]:
    with engine.connect() as c:
        return [
            (i, f)
            for i, f in c.execute(
                sa.select(AuditEntry.id, AuditEntry.field)
                .where(AuditEntry.entity == "run", AuditEntry.entity_id == run_id)
                .order_by(AuditEntry.id)
            )
        ]


def upload_run(
    call: Caller, token: str, name: str = "diss-kcl-01", *, toml: str | None = None, calorimeter_id: int | None = None
) -> int:
    """Record a demo run through the API (no Monte Carlo); return its id."""
    text = toml if toml is not None else (DEMO / f"{name}.toml").read_text("utf-8")
    body = {"run_toml": text, "readings_csv": (DEMO / f"{name}.csv").read_text("utf-8"), "monte_carlo": 0}
    if calorimeter_id is not None:
        body["calorimeter_id"] = calorimeter_id
    status, answer = call("POST", "/api/runs", token, body)
    assert status == 201, answer
    return int(answer["id"])


def version_of(call: Caller, token: str, run_id: int) -> int:
    status, answer = call("GET", f"/api/runs/{run_id}", token)
    assert status == 200, answer
    return int(answer["version"])


def lock_vs_patch(call: Caller, engine: sa.Engine, tokens: dict[str, str], tally: Tally, n: int) -> None:
    """The author locks while a coordinator changes the title (with the version both read)."""
    for i in range(n):
        run_id = upload_run(call, tokens["author"])
        v = version_of(call, tokens["author"], run_id)
        lock, patch = both(
            lambda: call("POST", f"/api/runs/{run_id}/lock", tokens["author"]),
            lambda: call("PATCH", f"/api/runs/{run_id}", tokens["other"], {"title": f"race {i}"}, if_match=v),
        )
        _judge(engine, run_id, lock, patch, "title", tally)


def lock_vs_reanalysis(call: Caller, engine: sa.Engine, tokens: dict[str, str], tally: Tally, n: int) -> None:
    """The author locks while a coordinator analyses the run again with another method."""
    for _ in range(n):
        run_id = upload_run(call, tokens["author"])
        lock, again = both(
            lambda: call("POST", f"/api/runs/{run_id}/lock", tokens["author"]),
            lambda: call(
                "POST", f"/api/runs/{run_id}/analyses", tokens["other"], {"method": "naive", "monte_carlo": 0}
            ),
        )
        _judge(engine, run_id, lock, again, "result", tally)


def lock_vs_calibration(
    call: Caller,
    engine: sa.Engine,
    tokens: dict[str, str],
    tally: Tally,
    n: int,
    calorimeter_id: int,
    toml_without_c: str,
) -> None:
    """The author locks a run while the technician re-analyses the runs of the calibration it used."""
    today = dt.date.today().isoformat()
    for i in range(n):
        old = _enter(call, tokens["tech"], calorimeter_id, f"{18 + (i % 7) * 0.1:.1f} ± 0.4 J/K", today)
        run_id = upload_run(call, tokens["author"], toml=toml_without_c, calorimeter_id=calorimeter_id)
        _enter(call, tokens["tech"], calorimeter_id, f"{25 + (i % 5) * 0.1:.1f} ± 0.4 J/K", today)
        lock, switch = both(
            lambda: call("POST", f"/api/runs/{run_id}/lock", tokens["author"]),
            lambda: call("POST", f"/api/calibrations/{old}/reanalyze-runs", tokens["tech"]),
        )
        status, body = switch
        if status == 200:  # the action answers 200 and lists the run as re-analyzed or as locked
            changed = run_id in body["reanalyzed"]
            switch = (200 if changed else 409, body)
        _judge(engine, run_id, lock, switch, "calibration", tally)


def _enter(call: Caller, token: str, cup: int, value: str, day: str) -> int:
    status, body = call(
        "POST",
        f"/api/calorimeters/{cup}/calibrations",
        token,
        {"heat_capacity": value, "measured_on": day, "confirm": True, "restart": True},
    )
    assert status == 201, body
    return int(body["id"])


def _judge(
    engine: sa.Engine, run_id: int, lock: tuple[int, Any], change: tuple[int, Any], field: str, tally: Tally
) -> None:
    tally.trials += 1
    tally.answers[f"lock {lock[0]}, change {change[0]}"] += 1
    if lock[0] != 200:
        tally.disagreements.append(f"run {run_id}: the lock answered {lock[0]} {lock[1]}")
        return
    problems = lock_problems(engine, run_id)
    tally.changes_after_lock += len(problems)
    tally.disagreements.extend(problems)
    ok = change[0] in (200, 201)
    order = audit_order(engine, run_id)
    lock_at = next(i for i, f in order if f == "locked")
    changed = [i for i, f in order if f == field]
    if ok and not (changed and changed[-1] < lock_at):
        tally.disagreements.append(f"run {run_id}: the change answered 200 but is not stored before the lock")
    if not ok and changed:
        tally.disagreements.append(f"run {run_id}: the change answered {change[0]} but was stored")
    if change[0] not in (200, 201, 409):
        tally.disagreements.append(f"run {run_id}: the change answered {change[0]} {change[1]}")


def lost_updates(call: Caller, engine: sa.Engine, tokens: list[str], run_id: int, per_client: int) -> dict[str, Any]:
    """Clients each read the run and PATCH its title with the version read, ``per_client`` times, at once."""
    answers: list[tuple[int, int, str, int]] = []  # (client, version sent, title, status)
    lock = threading.Lock()
    barrier = threading.Barrier(len(tokens))

    def client(k: int) -> None:
        barrier.wait()
        for j in range(per_client):
            v = version_of(call, tokens[k], run_id)
            title = f"client {k} edit {j}"
            status, _ = call("PATCH", f"/api/runs/{run_id}", tokens[k], {"title": title}, if_match=v)
            with lock:
                answers.append((k, v, title, status))

    threads = [threading.Thread(target=client, args=(k,)) for k in range(len(tokens))]
    for t in threads:
        t.start()
    for t in threads:
        t.join(600)
    from webapp.services.integrity import check_database

    with engine.connect() as c:
        entries = c.execute(
            sa.select(AuditEntry.old, AuditEntry.new)
            .where(AuditEntry.entity == "run", AuditEntry.entity_id == run_id, AuditEntry.field == "title")
            .order_by(AuditEntry.id)
        ).all()
        title = c.scalar(sa.select(Run.title).where(Run.id == run_id))
    accepted = [a for a in answers if a[3] == 200]
    based_on = sorted(a[1] for a in accepted)
    chain_breaks = sum(1 for p, e in zip(entries, entries[1:]) if e.old != p.new)
    report = check_database(engine)
    return {
        "requests": len(answers),
        "accepted_200": len(accepted),
        "refused_409": sum(a[3] == 409 for a in answers),
        "other": sum(a[3] not in (200, 409) for a in answers),
        "audit_entries": len(entries),
        "chain_breaks": chain_breaks,
        # each accepted write was based on a different version, one after the other: none was lost
        "accepted_on_distinct_versions": len(set(based_on)) == len(based_on)
        and based_on == list(range(based_on[0], based_on[0] + len(based_on)))
        if based_on
        else True,
        "accepted_titles_in_chain": [e.new for e in entries] == [a[2] for a in sorted(accepted, key=lambda a: a[1])],
        "final_title_is_last_accepted": bool(entries) and title == entries[-1].new,
        "db_check_problems": [p for p in report.problems if "audit" in p],
    }


def in_process_caller(app: Any) -> Caller:
    """Return a caller of ``app`` in this process (one test client per call; safe from threads)."""

    def call(method: str, path: str, token: str, json: Any = None, if_match: int | None = None) -> tuple[int, Any]:
        headers = {"Authorization": f"Bearer {token}"}
        if if_match is not None:
            headers["If-Match"] = f'"{if_match}"'
        r = app.test_client().open(path, method=method, headers=headers, json=json)
        return r.status_code, r.get_json(silent=True)

    return call
