"""Finishing a live run: the log is analyzed and stored like any uploaded run.

The raw log stored is the recorder's CSV exactly as sent; without one, a CSV made from the stored
readings (``time_s,temperature_c``, numbers written with Python's ``repr``, which reads back to
the same float). The run is recorded by :func:`webapp.services.runs.record_run` with the one-time
token ``live-<id>``, so a finish that is sent again (a recorder's retry, two tabs) stores one run.
"""

from __future__ import annotations

import sqlalchemy.orm as so

from webapp.models import LiveRun, Person, Run, utcnow
from webapp.services.access import can_steer_live_run
from webapp.services.concurrency import begin_write, lock_row
from webapp.services.errors import Conflict, Forbidden, Invalid
from webapp.services.live import get_live_run
from webapp.services.live_advice import readings_of
from webapp.services.live_events import notify
from webapp.services.live_runfile import RUN_FILE_NAME, readings_name, with_readings_key
from webapp.services.runs import RunUpload, record_run, run_for_submit_token

CSV_HEADER = "time_s,temperature_c"


def csv_of_readings(rows: list[tuple[int, float, float]]) -> str:
    """Return the readings as the recorder writes them: a header, then one ``time,temperature`` row each."""
    return "".join([CSV_HEADER + "\n"] + [f"{t!r},{c!r}\n" for _s, t, c in rows])


def submit_token(live_id: int) -> str:
    """Return the one-time token the run made from live run ``live_id`` carries."""
    return f"live-{live_id}"


def finish_live_run(session: so.Session, actor: Person, live_id: int, readings_csv: str | None = None) -> Run:
    """Analyze and store the live run as a run (owned by who recorded it) and mark it finished.

    :raise Invalid: no readings, or the analysis refuses the log (calc's message)
    :raise Conflict: the live run was abandoned
    """
    live = get_live_run(session, actor, live_id)
    if not can_steer_live_run(actor, live):
        raise Forbidden("only the live run's owner, their group or staff may finish it")
    if live.state == "abandoned":
        raise Conflict(f"live run {live.id} was abandoned; it cannot be stored", field="state")
    if readings_csv is not None and (not isinstance(readings_csv, str) or not readings_csv.strip()):
        raise Invalid("expected the recorder's CSV text, or leave the field out", field="readings_csv")
    run = run_for_submit_token(session, submit_token(live.id))
    if run is None:
        run = _record(session, live, readings_csv)
    begin_write(session)
    live = lock_row(session, LiveRun, live_id)
    if live.state != "finished":
        live.state = "finished"
        live.run_id = run.id
        live.updated_at = utcnow()
        notify(session, live.id)
    session.commit()
    return run


def _record(session: so.Session, live: LiveRun, readings_csv: str | None) -> Run:
    if readings_csv is None:
        rows = readings_of(session, live.id)
        if not rows:
            raise Invalid(f"live run {live.id} has no readings yet; nothing to analyze", field="readings")
        readings_csv = csv_of_readings(rows)
    name = readings_name(live.run_file, live.id)
    owner = live.owner
    upload = RunUpload(
        run_toml=with_readings_key(live.run_file, name),
        run_file_name=RUN_FILE_NAME.format(id=live.id),
        readings=readings_csv.encode("utf-8"),
        readings_name=name,
        calorimeter_id=live.calorimeter_id,
        group_id=None if owner.role == "student" else live.group_id,
        submit_token=submit_token(live.id),
    )
    try:
        return record_run(session, owner, upload)
    except Conflict:  # a finish sent twice at once: the other stored it
        session.rollback()
        run = run_for_submit_token(session, submit_token(live.id))
        if run is None:
            raise
        return run
