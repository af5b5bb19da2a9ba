"""Server-Sent Events of live runs: a bounded stream that reads the tables whenever they may have changed.

A stream lasts at most ``LIVE_STREAM_SECONDS`` (default 50 s), then ends; the browser's
EventSource reconnects by itself (``retry: 1000``) and sends the last event's id, from which the
stream resumes. So a server thread is never held for long, and a worker restart loses nothing.
"""

from __future__ import annotations

import json
import time
from collections.abc import Callable, Iterator
from typing import Any

import sqlalchemy.orm as so
from flask import Flask, Response, current_app

from webapp.db import get_engine, new_session
from webapp.services.live_events import Waiter

#: a stream's longest life, s (the browser reconnects)
STREAM_SECONDS = 50.0
#: a comment is sent when nothing else was for this long, s (the page knows the stream is alive)
PING_S = 2.0

#: reads the tables and returns the events to send now (each ``(name, data, id)``)
Reader = Callable[[so.Session], list[tuple[str, dict[str, Any], str | None]]]


def event_text(name: str, data: dict[str, Any], event_id: str | None = None) -> str:
    """Return one event in the text/event-stream format."""
    head = f"id: {event_id}\n" if event_id is not None else ""
    return f"{head}event: {name}\ndata: {json.dumps(data, separators=(',', ':'), allow_nan=False)}\n\n"


def _events(app: Flask, read: Reader, seconds: float, live_id: int | None) -> Iterator[str]:
    session = new_session(app)
    waiter = Waiter(get_engine(app), live_id)
    end = time.monotonic() + seconds
    last_sent = 0.0
    try:
        yield "retry: 1000\n\n"
        while True:
            session.rollback()  # a new snapshot: see what was committed since
            sent = [event_text(*e) for e in read(session)]
            session.rollback()
            now = time.monotonic()
            if not sent and now - last_sent >= PING_S:
                sent = [event_text("ping", {"t": round(time.time(), 1)})]
            if sent:
                last_sent = now
                yield "".join(sent)
            if now >= end:
                return
            waiter.wait(min(PING_S, end - now))
    finally:
        session.close()


def event_stream(read: Reader, live_id: int | None = None) -> Response:
    """Return the streaming response of ``read``'s events (woken by changes of ``live_id``; None: any run)."""
    app = current_app._get_current_object()  # type: ignore[attr-defined]
    seconds = float(app.config.get("LIVE_STREAM_SECONDS", STREAM_SECONDS))
    response = Response(_events(app, read, seconds, live_id), mimetype="text/event-stream")
    response.headers["Cache-Control"] = "no-store"
    response.headers["X-Accel-Buffering"] = "no"  # a proxy in front must not hold the events back
    return response


def parse_cursor(text: str | None) -> tuple[int, int | None]:
    """Return (readings seen, advice seen) from ``"<last_seq>.<advice_seq>"`` (bad or none: nothing seen)."""
    seq_text, _, advice_text = (text or "").partition(".")
    try:
        seq = max(-1, int(seq_text))
    except ValueError:
        return -1, None
    try:
        return seq, int(advice_text)
    except ValueError:
        return seq, None
