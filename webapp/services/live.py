"""Live runs: created by a recorder, fed readings as the thermometer reads, finished into a stored run.

Every operation is idempotent where a recorder may retry it: a create with the same client key
returns the same live run, readings already stored (by sequence number) are ignored, and a
finish that was done already returns the run it made. The readings are committed first; the
advice (:mod:`webapp.services.live_advice`) is computed after, in its own short transaction,
so a slow analysis never holds the database's write lock.
"""

from __future__ import annotations

import dataclasses
import math
import re
from typing import Any

import sqlalchemy as sa
import sqlalchemy.orm as so

from calc.io.readings import CELSIUS_RANGE
from webapp.models import Bench, Calorimeter, Group, LiveReading, LiveRun, Person, utcnow
from webapp.services.access import can_steer_live_run, can_view_live_run
from webapp.services.concurrency import begin_write, lock_row
from webapp.services.errors import Conflict, Forbidden, Invalid, NotFound
from webapp.services.live_advice import refresh_advice
from webapp.services.live_events import notify
from webapp.services.live_runfile import checked_run_file, toml_data
from webapp.services.run_upload import group_for

#: the most readings one POST may carry
MAX_BATCH = 1000
#: the largest target U accepted (any unit): beyond it a target means nothing
MAX_TARGET_U = 1e6
_KEY = re.compile(r"[A-Za-z0-9._:-]{1,64}")
#: the temperatures calc reads as °C (calc.io.readings.CELSIUS_RANGE): the advisor refuses others
T_RANGE_C = CELSIUS_RANGE


@dataclasses.dataclass(frozen=True)
class LiveCreate:
    """What a recorder sends to start (or resume) a live run."""

    run_file: str
    client_key: str
    target_u: float | None = None
    calorimeter_id: int | None = None
    group_id: int | None = None
    bench_id: int | None = None


def checked_target(value: Any, field: str = "target_u") -> float | None:
    """Return a target U (a positive finite number) or None; anything else is Invalid naming ``field``."""
    if value is None:
        return None
    if isinstance(value, bool) or not isinstance(value, (int, float)) or not math.isfinite(value):
        raise Invalid("expected a positive number (the target expanded uncertainty U) or null", field=field)
    if not 0 < value <= MAX_TARGET_U:
        raise Invalid(f"expected a positive number up to {MAX_TARGET_U:g}, got {value!r}", field=field)
    return float(value)


def create_live_run(session: so.Session, actor: Person, data: LiveCreate) -> tuple[LiveRun, bool]:
    """Start a live run, or return the one this owner started with the same client key.

    :return: the live run and whether it is new
    """
    if not isinstance(data.client_key, str) or not _KEY.fullmatch(data.client_key):
        raise Invalid("expected 1 to 64 letters, digits or . _ : - (a UUID chosen by the recorder)", field="client_key")
    old = _by_key(session, actor.id, data.client_key)
    if old is not None:
        return old, False
    target = checked_target(data.target_u)
    info = toml_data(data.run_file).get("info")
    info = info if isinstance(info, dict) else {}
    group = group_for(session, actor, data.group_id, _text(info.get("group")))
    bench = _bench_for(session, data.bench_id, group, _text(info.get("bench")))
    cal_id = _calorimeter_for(session, data.calorimeter_id, bench, data.run_file)
    spec = checked_run_file(session, data.run_file, cal_id)
    live = LiveRun(
        owner=actor,
        client_key=data.client_key,
        run_file=data.run_file,
        target_u=target,
        title=(spec.get("info", "title") or "")[:300],
        group=group,
        section_id=bench.section_id if bench else (group.section_id if group else None),
        bench_id=bench.id if bench else None,
        bench=(bench.name if bench else (spec.get("info", "bench") or ""))[:120],
        calorimeter_id=cal_id,
        state="recording",
        last_seq=-1,
        advice_json="{}",
        advice_seq=-1,
        created_at=utcnow(),
        updated_at=utcnow(),
    )
    session.add(live)
    try:
        session.flush()
        notify(session, live.id)  # sent on commit: the room view shows the new run
        session.commit()
    except sa.exc.IntegrityError:  # the same recorder's retry won the race
        session.rollback()
        old = _by_key(session, actor.id, data.client_key)
        if old is None:
            raise Conflict("the live run could not be stored (it conflicts with stored data)") from None
        return old, False
    refresh_advice(session, live.id)
    return session.get(LiveRun, live.id), True  # type: ignore[return-value]


def _by_key(session: so.Session, owner_id: int, key: str) -> LiveRun | None:
    return session.scalar(sa.select(LiveRun).where(LiveRun.owner_id == owner_id, LiveRun.client_key == key))


def _bench_for(session: so.Session, bench_id: int | None, group: Group | None, name: str | None) -> Bench | None:
    if bench_id is not None:
        bench = session.get(Bench, bench_id)
        if bench is None:
            raise Invalid(f"no bench with id {bench_id}", field="bench_id")
        return bench
    if name and group is not None and group.section_id is not None:
        return session.scalar(sa.select(Bench).where(Bench.section_id == group.section_id, Bench.name == name.strip()))
    return None


def _text(value: Any) -> str | None:
    return value.strip() if isinstance(value, str) and value.strip() else None


def _calorimeter_for(session: so.Session, cal_id: int | None, bench: Bench | None, text: str) -> int | None:
    if cal_id is not None:
        if session.get(Calorimeter, cal_id) is None:
            raise Invalid(f"no calorimeter with id {cal_id}", field="calorimeter_id")
        return cal_id
    if bench is not None and bench.calorimeter_id is not None:
        return bench.calorimeter_id
    from webapp.services.analysis import calorimeter_name_in
    from webapp.services.calorimeters import find_calorimeter

    name = calorimeter_name_in(text)
    cal = find_calorimeter(session, name) if name else None
    return cal.id if cal is not None else None


def get_live_run(session: so.Session, actor: Person, live_id: int) -> LiveRun:
    """Return a live run ``actor`` may follow, or raise NotFound."""
    live = session.get(LiveRun, live_id)
    if live is None or not can_view_live_run(actor, live):
        raise NotFound(f"no live run with id {live_id}", field="id")
    return live


def checked_rows(raw: Any) -> list[tuple[int, float, float]]:
    """Return the readings of a batch as (seq, time_s, temperature_c), each checked (Invalid names the item)."""
    if not isinstance(raw, list):
        raise Invalid("expected a list of [seq, time_s, temperature_c]", field="readings")
    if len(raw) > MAX_BATCH:
        raise Invalid(
            f"at most {MAX_BATCH} readings in one request, got {len(raw)}; send them in batches", field="readings"
        )
    rows = []
    for i, item in enumerate(raw):
        where = f"readings[{i}]"
        if not isinstance(item, list) or len(item) != 3:
            raise Invalid("expected [seq, time_s, temperature_c]", field=where)
        seq, t, temp = item
        if isinstance(seq, bool) or not isinstance(seq, int) or not 0 <= seq < 2**31 - 1:
            raise Invalid("expected a whole number from 0 (the reading's sequence number)", field=f"{where}[0]")
        for j, v, what in ((1, t, "the time in s"), (2, temp, "the temperature in °C")):
            if isinstance(v, bool) or not isinstance(v, (int, float)) or not math.isfinite(v):
                raise Invalid(f"expected a number ({what})", field=f"{where}[{j}]")
        if not T_RANGE_C[0] <= temp <= T_RANGE_C[1]:
            raise Invalid(
                f"expected a temperature from {T_RANGE_C[0]:g} to {T_RANGE_C[1]:g} °C, got {temp!r}",
                field=f"{where}[2]",
            )
        rows.append((seq, float(t), float(temp)))
    return rows


def add_readings(
    session: so.Session, actor: Person, live_id: int, raw: Any, advice_every_s: float = 0.0
) -> tuple[int, int]:
    """Store the new readings of a batch (those at or below ``last_seq`` are ignored) and commit; then
    advise again, when the newest reading is ``advice_every_s`` or more (log clock) after the last advised.

    :return: how many were new, and the run's last sequence number
    """
    rows = checked_rows(raw)
    get_live_run(session, actor, live_id)  # not yours: 404 before any lock
    begin_write(session)
    live = lock_row(session, LiveRun, live_id)
    _require_steer(actor, live)
    fresh = [(i, r) for i, r in enumerate(rows) if r[0] > live.last_seq]
    new = [r for _i, r in fresh]
    if new and live.state != "recording":
        raise Conflict(f"live run {live.id} is {live.state}; it takes no more readings", field="state")
    last_t = session.scalar(
        sa.select(LiveReading.time_s).where(LiveReading.live_run_id == live.id, LiveReading.seq == live.last_seq)
    )
    expected = live.last_seq + 1
    for i, (seq, t, _temp) in fresh:
        where = f"readings[{i}]"
        if seq != expected:
            raise Invalid(
                f"expected sequence number {expected} (readings are numbered 0, 1, 2, … with no gap), got {seq}",
                field=f"{where}[0]",
            )
        if last_t is not None and t <= last_t:
            raise Invalid(
                f"expected a time after {last_t!r} s (the previous reading's), got {t!r}", field=f"{where}[1]"
            )
        expected, last_t = seq + 1, t
    session.add_all([LiveReading(live_run_id=live.id, seq=s, time_s=t, temperature_c=c) for s, t, c in new])
    if new:
        live.last_seq = new[-1][0]
        live.updated_at = utcnow()
        notify(session, live.id)
    last_seq, advised = live.last_seq, live.advice_seq
    advised_t = (
        session.scalar(
            sa.select(LiveReading.time_s).where(LiveReading.live_run_id == live.id, LiveReading.seq == advised)
        )
        if advised >= 0
        else None
    )
    session.commit()
    if new and (advised_t is None or last_t is None or last_t - advised_t >= advice_every_s):
        refresh_advice(session, live_id)
    return len(new), last_seq


def _require_steer(actor: Person, live: LiveRun) -> None:
    if not can_steer_live_run(actor, live):
        raise Forbidden("only the live run's owner, their group or staff may change it")


def set_target(session: so.Session, actor: Person, live_id: int, value: Any) -> LiveRun:
    """Set a live run's target U (None: the section's, else the advisor's default) and advise again."""
    target = checked_target(value)
    get_live_run(session, actor, live_id)
    begin_write(session)
    live = lock_row(session, LiveRun, live_id)
    _require_steer(actor, live)
    live.target_u = target
    live.advice_seq = -1  # the advice must be made again for the new target
    session.commit()
    refresh_advice(session, live_id)
    return session.get(LiveRun, live_id)  # type: ignore[return-value]


def abandon(session: so.Session, actor: Person, live_id: int) -> LiveRun:
    """Mark a recording live run abandoned (it takes no more readings and is never stored as a run)."""
    get_live_run(session, actor, live_id)
    begin_write(session)
    live = lock_row(session, LiveRun, live_id)
    _require_steer(actor, live)
    if live.state == "finished":
        raise Conflict(f"live run {live.id} is finished already (run {live.run_id})", field="state")
    live.state = "abandoned"
    live.updated_at = utcnow()
    notify(session, live.id)
    session.commit()
    return live
