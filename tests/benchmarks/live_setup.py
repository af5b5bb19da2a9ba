"""Set-up of the live-run benchmarks: a seeded notebook served by gunicorn (gthread workers, as
``cupcal serve --workers N`` runs it), signed-in page sessions and a Server-Sent Events reader."""

from __future__ import annotations

import contextlib
import json
import os
import re
import subprocess
import threading
import time
from collections.abc import Callable, Iterator
from pathlib import Path
from typing import Any

import requests

from tests.benchmarks.load_test import GUNICORN, REPO, free_port, served
from tests.webapp.people_helpers import add_person
from webapp.serving import GTHREAD_THREADS

PASSWORD = "live bench password"
COORDINATOR = "coord@live.example"


def seed(url: str, runs: int) -> dict[str, Any]:
    """Migrate; make a coordinator, one section with ``runs`` benches and groups, a student with a "live"
    token per bench; return the section id and each bench's (name, token)."""
    from webapp import create_app
    from webapp.db import get_engine, new_session
    from webapp.migrate import upgrade
    from webapp.services.classes import create_bench, create_section
    from webapp.services.people import create_course, create_group
    from webapp.services.tokens import issue_scoped_token

    upgrade(url)
    app = create_app({"DATABASE_URL": url, "SECRET_KEY": "live bench"})
    s = new_session(app)
    try:
        coord = add_person(s, COORDINATOR, "Coordinator Live", "coordinator", password=PASSWORD)
        course = create_course(s, coord, name="Live bench course (invented)")
        section = create_section(s, coord, course_id=course.id, name="Room 3B")
        benches = []
        for i in range(runs):
            group = create_group(s, coord, name=f"Live group {i + 1:02d}")
            group.section_id = section.id
            s.commit()
            create_bench(s, coord, section_id=section.id, name=f"Bench {i + 1:02d}")
            student = add_person(
                s, f"student{i:02d}@live.example", f"Student {i:02d}", "student", password=PASSWORD, group=group
            )
            benches.append((f"Bench {i + 1:02d}", issue_scoped_token(s, student, "recorder", "live")[1]))
        return {"section_id": section.id, "benches": benches}
    finally:
        s.close()
        get_engine(app).dispose()


@contextlib.contextmanager
def gunicorn(url: str, workers: int, tmp: Path) -> Iterator[tuple[Any, str]]:
    """Serve the notebook with gthread workers (``GTHREAD_THREADS`` threads each); yield (process, base URL)."""
    port = free_port()
    log = tmp / f"gunicorn-{port}.log"
    env = {**os.environ, "DATABASE_URL": url, "CUPCAL_SECRET_KEY": "live bench", "PYTHONPATH": str(REPO)}
    proc = subprocess.Popen(
        [
            str(GUNICORN),
            "--workers",
            str(workers),
            "--worker-class",
            "gthread",
            "--threads",
            str(GTHREAD_THREADS),
            "--bind",
            f"127.0.0.1:{port}",
            "--chdir",
            str(REPO),
            "--timeout",
            "120",
            "--error-logfile",
            str(log),
            "webapp:create_app()",
        ],
        env=env,
        cwd=str(tmp),
        start_new_session=True,
    )
    base = f"http://127.0.0.1:{port}"
    with served(proc, log, base + "/auth/login", workers):
        yield proc, base


def signed_in(base: str, email: str) -> requests.Session:
    """Return a requests session signed in through the form (with its CSRF token)."""
    s = requests.Session()
    page = s.get(base + "/auth/login", timeout=30).text
    token = re.search(r'name="csrf_token" type="hidden" value="([^"]+)"', page).group(1)
    r = s.post(base + "/auth/login", data={"email": email, "password": PASSWORD, "csrf_token": token}, timeout=30)
    r.raise_for_status()
    return s


class StreamReader(threading.Thread):
    """Reads a page's event stream, reconnecting as a browser does (Last-Event-ID), until stopped.

    ``on_event(name, data, t)`` is called with each event and the monotonic time it arrived.
    """

    def __init__(
        self,
        session: requests.Session,
        url: str,
        on_event: Callable[[str, dict[str, Any], float], None],
        first_id: str | None = None,
    ) -> None:
        super().__init__(daemon=True)
        self.session, self.url, self.on_event = session, url, on_event
        self.last_id = first_id
        self.stop = threading.Event()
        self.reconnects = 0
        self.errors: list[str] = []

    def run(self) -> None:
        while not self.stop.is_set():
            headers = {"Accept": "text/event-stream"}
            if self.last_id is not None:
                headers["Last-Event-ID"] = self.last_id
            try:
                with self.session.get(self.url, headers=headers, stream=True, timeout=(10, 30)) as r:
                    r.raise_for_status()
                    self._read(r)
            except requests.RequestException as exc:
                self.errors.append(str(exc)[:200])
                time.sleep(1.0)
            self.reconnects += 1

    def _read(self, r: requests.Response) -> None:
        name, data = None, None
        for line in r.iter_lines(decode_unicode=True, chunk_size=None):
            if self.stop.is_set():
                return
            if line.startswith("event: "):
                name = line[7:]
            elif line.startswith("data: "):
                data = line[6:]
            elif line.startswith("id: "):
                self.last_id = line[4:]
            elif line == "" and name and data is not None:
                self.on_event(name, json.loads(data), time.monotonic())
                name, data = None, None
