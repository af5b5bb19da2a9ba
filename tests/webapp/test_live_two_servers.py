"""Two app servers on one database (issue 15, item 4): readings posted to server A reach the live
page's event stream and the room view's on server B, every one, in order, within 2 s.

Updates travel through the database only: PostgreSQL's LISTEN/NOTIFY, or polling on SQLite (two
gunicorn processes share nothing else). docs/methods.md §9 and webapp/README.md describe the streams.
"""

from __future__ import annotations

import os
import threading
import time
from pathlib import Path
from typing import Any

import pytest
import requests

from tests.benchmarks.live_bench import start_runs
from tests.benchmarks.live_setup import COORDINATOR, StreamReader, gunicorn, seed, signed_in
from tests.webapp.conftest import create_database
from tests.webapp.live_helpers import demo_rows

pytestmark = pytest.mark.slow

N_READINGS = 20
LIMIT_S = 2.0  # issue 15: a reading reaches the pages within 2 s


@pytest.fixture(params=["sqlite", "postgresql"])
def shared_url(request: pytest.FixtureRequest, tmp_path: Path) -> str:
    """An empty database of its own (both servers migrate nothing: seed() does it)."""
    if request.param == "sqlite":
        return f"sqlite:///{tmp_path / 'shared.sqlite3'}"
    server = request.getfixturevalue("pg_server")
    return create_database(server, f"cupcal_two_{os.getpid()}")


class Arrivals:
    """The readings of one live run seen on one stream: seq -> arrival time, and their order."""

    def __init__(self, live_id: int) -> None:
        self.live_id, self.at, self.order = live_id, {}, []
        self.lock = threading.Lock()

    def __call__(self, name: str, data: dict[str, Any], t: float) -> None:
        items = data.get("items", [data]) if name in ("room", "update") else []
        with self.lock:
            for item in items:
                if item.get("id") != self.live_id:
                    continue
                for r in item.get("readings", []):
                    if r[0] not in self.at:
                        self.at[r[0]] = t
                        self.order.append(r[0])


def post_readings(base: str, token: str, live_id: int, n: int) -> dict[int, float]:
    """POST ``n`` readings one at a time, 0.5 s apart, to ``base``; return seq -> time just before its POST."""
    rows, sent = demo_rows(), {}
    with requests.Session() as s:
        s.headers["Authorization"] = f"Bearer {token}"
        for seq in range(n):
            sent[seq] = time.monotonic()
            s.post(
                f"{base}/api/live-runs/{live_id}/readings",
                json={"readings": [[seq, rows[seq][0], rows[seq][1]]]},
                timeout=30,
            ).raise_for_status()
            time.sleep(0.5)
    return sent


def check(name: str, seen: Arrivals, sent: dict[int, float]) -> list[float]:
    """Every reading arrived, in order, each within LIMIT_S; return the latencies."""
    missing = sorted(set(sent) - set(seen.at))
    assert not missing, f"{name}: readings {missing} never arrived on server B"
    assert seen.order == sorted(seen.order), f"{name}: readings out of order: {seen.order}"
    late = {k: seen.at[k] - sent[k] for k in sent}
    assert max(late.values()) <= LIMIT_S, f"{name}: latencies over {LIMIT_S} s: {late}"
    return sorted(late.values())


def test_readings_posted_to_one_server_reach_the_pages_of_another(shared_url: str, tmp_path: Path) -> None:
    setup = seed(shared_url, 1)
    with gunicorn(shared_url, 1, tmp_path) as (_a, base_a), gunicorn(shared_url, 1, tmp_path) as (_b, base_b):
        assert base_a != base_b
        token = setup["benches"][0][1]
        (live_id,) = start_runs(base_a, setup["benches"], 0)
        viewer = signed_in(base_b, COORDINATOR)
        page, room = Arrivals(live_id), Arrivals(live_id)
        readers = [
            StreamReader(viewer, f"{base_b}/live/{live_id}/events?after=-1", page),
            StreamReader(viewer, f"{base_b}/classes/sections/{setup['section_id']}/live/events", room),
        ]
        for r in readers:
            r.start()
        time.sleep(2.0)  # both streams are open before the first reading
        sent = post_readings(base_a, token, live_id, N_READINGS)
        time.sleep(LIMIT_S + 1.0)
        for r in readers:
            r.stop.set()
    for r in readers:
        r.join(35)
    lat = check("live page", page, sent) + check("room view", room, sent)
    print(
        f"\n{shared_url.split(':')[0].split('+')[0]}: server A -> server B, {len(lat)} arrivals, "
        f"median {sorted(lat)[len(lat) // 2]:.3f} s, max {max(lat):.3f} s"
    )
