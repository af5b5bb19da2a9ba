"""How a change to a live run reaches the pages of every server process: through the database.

- PostgreSQL: each write ``NOTIFY``s the channel ``cupcal_live`` (with the live run's id) in its
  own transaction, so the notice is sent when, and only if, it commits. Each server process keeps
  one listening connection (a daemon thread, started on first use, again after a fork); event
  streams wait on it and then read what changed from the tables.
- SQLite has no notices: event streams read the tables every :data:`SQLITE_POLL_S` seconds.

No process's memory is the source of an update: a notice only says "look again".
"""

from __future__ import annotations

import logging
import os
import threading
import time

import sqlalchemy as sa
import sqlalchemy.orm as so

CHANNEL = "cupcal_live"
#: how often an event stream reads the tables on SQLite, s
SQLITE_POLL_S = 0.3
#: the longest a stream waits for a notice before reading the tables anyway (a missed notice costs this)
SAFETY_POLL_S = 5.0
#: the shortest time between two reads of one stream, s: a burst of notices is read once
MIN_GAP_S = 0.1

_log = logging.getLogger(__name__)


def notify(session: so.Session, live_id: int) -> None:
    """Announce, when the session's transaction commits, that live run ``live_id`` changed (PostgreSQL)."""
    if session.get_bind().dialect.name == "postgresql":
        session.execute(
            sa.text("SELECT pg_notify(:channel, :payload)"), {"channel": CHANNEL, "payload": str(int(live_id))}
        )


class _Listener:
    """One process's listening connection: counts the notices and wakes the streams waiting."""

    def __init__(self, dsn: str) -> None:
        self.dsn = dsn
        self.pid = os.getpid()
        self.count = 0
        self.per_run: dict[int, int] = {}  # live run id → the count at its last notice
        self.cond = threading.Condition()
        self.thread = threading.Thread(target=self._run, name="cupcal-live-listen", daemon=True)
        self.thread.start()

    def _bump(self, payload: str | None = None) -> None:
        with self.cond:
            self.count += 1
            if payload is not None and payload.isdigit():
                self.per_run[int(payload)] = self.count
            else:  # (re)connected or lost: every stream must look again
                self.per_run.clear()
                self.per_run[-1] = self.count
            self.cond.notify_all()

    def mark(self, live_id: int | None) -> int:
        """Return the count that tells a stream following ``live_id`` (None: any run) that something changed."""
        if live_id is None:
            return self.count
        return max(self.per_run.get(live_id, 0), self.per_run.get(-1, 0))

    def _run(self) -> None:
        import psycopg

        pause = 0.5
        while True:
            try:
                with psycopg.connect(self.dsn, autocommit=True) as conn:
                    conn.execute(f"LISTEN {CHANNEL}")
                    pause = 0.5
                    self._bump()  # (re)connected: anything may have been missed, look again
                    for notice in conn.notifies():
                        self._bump(notice.payload)
            except Exception as exc:  # noqa: BLE001 - the server went away: reconnect after a pause
                if pause == 0.5:
                    _log.warning("live updates: listening connection lost (%s); reconnecting", exc)
                self._bump()  # streams fall back to reading the tables every SAFETY_POLL_S meanwhile
                time.sleep(pause)
                pause = min(pause * 2, 30.0)

    def wait(self, live_id: int | None, seen: int, timeout: float) -> int:
        """Wait until a notice about ``live_id`` (None: any) arrives after ``seen``, or ``timeout`` s;
        return the mark now."""
        with self.cond:
            self.cond.wait_for(lambda: self.mark(live_id) != seen, timeout)
            return self.mark(live_id)


_listeners: dict[str, _Listener] = {}
_lock = threading.Lock()


def _listener(engine: sa.Engine) -> _Listener:
    dsn = engine.url.set(drivername="postgresql").render_as_string(hide_password=False)
    with _lock:
        found = _listeners.get(dsn)
        if found is None or found.pid != os.getpid():  # a forked worker starts its own
            found = _listeners[dsn] = _Listener(dsn)
        return found


class Waiter:
    """What an event stream waits on between two reads of the tables."""

    def __init__(self, engine: sa.Engine, live_id: int | None = None) -> None:
        self.live_id = live_id
        self.listener = _listener(engine) if engine.dialect.name == "postgresql" else None
        self.seen = self.listener.mark(live_id) if self.listener is not None else 0
        self.last = 0.0

    def wait(self, timeout: float) -> None:
        """Return after a notice about the stream's run (PostgreSQL), after :data:`SQLITE_POLL_S` (SQLite),
        or at ``timeout``; never sooner than :data:`MIN_GAP_S` after the last return."""
        if self.listener is None:  # the poll's own period keeps reads apart
            time.sleep(min(SQLITE_POLL_S, max(timeout, 0.0)))
            return
        gap = MIN_GAP_S - (time.monotonic() - self.last)
        if gap > 0:
            time.sleep(gap)
        timeout = max(timeout - max(gap, 0.0), 0.0)
        self.seen = self.listener.wait(self.live_id, self.seen, min(SAFETY_POLL_S, timeout))
        self.last = time.monotonic()
