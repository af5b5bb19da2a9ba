"""Send readings to the notebook's live-run API as they are recorded (standard library only).

:class:`NotebookClient` speaks the API (``POST /api/live-runs``, ``…/readings``, ``…/finish``; JSON,
``Authorization: Bearer <token>``). :class:`Streamer` runs it in a background thread: the recorder
hands it every reading with its ``seq``; the thread creates (or, with the same ``client_key``, finds
again) the live run, then posts every reading after the notebook's ``last_seq`` in batches of at
most :data:`BATCH`. Network trouble never blocks the recorder: a failed request is retried with a
growing pause (up to :data:`MAX_PAUSE_S`), and the next post resends from the notebook's
``last_seq``. A refusal that retrying cannot mend (a bad token, a run file the notebook refuses)
stops the streaming with one message; the CSV log goes on.
"""

from __future__ import annotations

import json
import threading
import time
import urllib.error
import urllib.request
from collections.abc import Callable, Sequence
from typing import Any

from calc.errors import CupcalError

__all__ = ["NotebookClient", "Streamer", "Refused", "Unreachable", "BATCH", "MAX_PAUSE_S"]

BATCH = 1000
"""Readings per POST (the API's limit)."""
MAX_PAUSE_S = 10.0
"""The longest pause between retries."""


class Unreachable(CupcalError):
    """The notebook could not be reached or answered with a temporary error (retry later)."""


class Refused(CupcalError):
    """The notebook refused the request for a reason retrying will not mend."""


class Conflict(Refused):
    """The notebook answered 409: its state differs from what the request assumed."""


class NotebookClient:
    """A client of the notebook's live-run API."""

    def __init__(self, base_url: str, token: str, *, timeout_s: float = 10.0) -> None:
        self.base = base_url.rstrip("/")
        self.token = token
        self.timeout_s = timeout_s

    def _post(self, path: str, body: dict[str, Any]) -> dict[str, Any]:
        request = urllib.request.Request(
            self.base + path,
            data=json.dumps(body).encode("utf-8"),
            method="POST",
            headers={
                "Content-Type": "application/json",
                "Accept": "application/json",
                "Authorization": f"Bearer {self.token}",
            },
        )
        try:
            with urllib.request.urlopen(request, timeout=self.timeout_s) as response:  # noqa: S310
                answer = json.loads(response.read() or b"{}")
        except urllib.error.HTTPError as exc:
            message = _error_text(exc)
            if exc.code in (408, 429) or exc.code >= 500:
                raise Unreachable(f"the notebook answered {exc.code} ({message})") from None
            refusal = Conflict if exc.code == 409 else Refused
            raise refusal(f"the notebook refused {path} with {exc.code}: {message}") from None
        except (urllib.error.URLError, OSError, ValueError) as exc:  # refused, timed out, reset, bad JSON
            reason = getattr(exc, "reason", exc)
            raise Unreachable(f"cannot reach the notebook at {self.base} ({reason})") from None
        if not isinstance(answer, dict):
            raise Unreachable(f"the notebook at {self.base} answered {path} with JSON that is not an object")
        return answer

    def create_live_run(self, run_text: str, client_key: str, target_u: float | None) -> tuple[int, int, str]:
        """Create the live run, or find it again by ``client_key``; return (id, last_seq, state)."""
        answer = self._post("/api/live-runs", {"run_file": run_text, "client_key": client_key, "target_u": target_u})
        try:
            return int(answer["id"]), int(answer.get("last_seq", -1)), str(answer.get("state", "recording"))
        except (KeyError, TypeError, ValueError):
            raise Unreachable(f"the notebook's answer has no live-run id ({str(answer)[:80]})") from None

    def post_readings(self, live_id: int, rows: list[list[float]]) -> int:
        """Post ``[[seq, time_s, temperature_c], …]``; return the notebook's last_seq."""
        answer = self._post(f"/api/live-runs/{live_id}/readings", {"readings": rows})
        return int(answer["last_seq"])

    def finish(self, live_id: int, csv_text: str | None) -> dict[str, Any]:
        """Finish the live run (the notebook analyses and stores it); return its answer."""
        return self._post(f"/api/live-runs/{live_id}/finish", {} if csv_text is None else {"readings_csv": csv_text})


def _error_text(exc: urllib.error.HTTPError) -> str:
    try:
        data = json.loads(exc.read() or b"{}")
        return str(data.get("error") or exc.reason)
    except (ValueError, AttributeError, OSError):
        return str(exc.reason)


class Streamer:
    """Post readings from a background thread (see the module docstring)."""

    def __init__(
        self,
        client: NotebookClient,
        run_text: str,
        client_key: str,
        *,
        target_u: float | None = None,
        on_live_id: Callable[[int], None] | None = None,
        on_message: Callable[[str], None] | None = None,
    ) -> None:
        self.client, self.run_text, self.client_key, self.target_u = client, run_text, client_key, target_u
        self.live_id: int | None = None
        self.state = "recording"
        self._synced = False  # whether acked holds the notebook's last_seq
        self.on_live_id = on_live_id or (lambda live_id: None)
        self.on_message = on_message or (lambda text: None)
        self.rows: list[list[float]] = []  # every reading, by seq
        self.acked = -1  # the notebook's last_seq
        self.refused: str | None = None
        self.last_problem: str | None = None
        self._wake = threading.Condition()
        self._stopping = False
        self._hurry = threading.Event()
        self._thread = threading.Thread(target=self._loop, name="cupcal-notebook-stream", daemon=True)

    def start(self, existing: Sequence[tuple[float, float]] = ()) -> None:
        """Start the thread; ``existing`` are the log's rows from before a restart (seq 0…)."""
        self.rows = [[seq, t, c] for seq, (t, c) in enumerate(existing)]
        self._thread.start()

    def add(self, seq: int, time_s: float, temperature_c: float) -> None:
        """Queue one reading (never blocks on the network)."""
        with self._wake:
            self.rows.append([seq, time_s, temperature_c])
            self._wake.notify()

    def ensure_live_run(self) -> int:
        """Create the live run, or find it again by client_key and learn its last_seq; return its id.

        Posted once at the start (after a restart too: the notebook answers with the same id and the
        readings it already has, so only the missing ones are sent) and again after a 409.
        """
        if not self._synced or self.live_id is None:
            self.live_id, self.acked, self.state = self.client.create_live_run(
                self.run_text, self.client_key, self.target_u
            )
            self._synced = True
            self.on_live_id(self.live_id)
        return self.live_id

    def _step(self) -> bool:
        """Do one request if there is work; return whether there was any."""
        if not self._synced:
            self.ensure_live_run()
            return True
        with self._wake:
            pending = self.rows[self.acked + 1 : self.acked + 1 + BATCH]
        if not pending:
            return False
        if self.state != "recording":  # finished or abandoned in the notebook meanwhile
            raise Refused(f"the live run {self.live_id} is {self.state} in the notebook and takes no more readings")
        before = self.acked
        assert self.live_id is not None  # set whenever _synced is (ensure_live_run)
        try:
            self.acked = self.client.post_readings(self.live_id, pending)
        except Conflict:  # the notebook holds other readings than we think: ask it again
            self._synced = False
            raise Unreachable("the notebook's readings differ from ours (409); asking it for its last_seq") from None
        if self.acked <= before:  # stored none: do not post the same batch again at once
            raise Unreachable(f"the notebook stored none of {len(pending)} readings (last_seq {self.acked})")
        return True

    def _loop(self) -> None:
        pause = 0.5
        while self.refused is None:
            try:
                worked = self._step()
                if self.last_problem is not None:
                    self.on_message("the notebook answers again; sending the readings it missed")
                self.last_problem, pause = None, 0.5
            except Unreachable as exc:
                if self.last_problem is None:
                    self.on_message(f"{exc}; recording goes on, will retry")
                self.last_problem, worked = str(exc), False
                # new readings do not cut the pause short (that would retry at the reading rate); close() does
                if not self._hurry.wait(pause):
                    pause = min(MAX_PAUSE_S, pause * 2)
                else:
                    time.sleep(0.2)
                if self._stopping:
                    return
                continue
            except Refused as exc:
                self.refused = str(exc)
                self.on_message(f"{exc}; streaming stopped, the CSV log goes on")
                return
            with self._wake:
                if not worked:
                    if self._stopping:
                        return
                    if len(self.rows) - 1 <= self.acked:  # nothing came in since the last look
                        self._wake.wait(1.0)

    @property
    def pending(self) -> int:
        """How many readings the notebook has not acknowledged yet."""
        return len(self.rows) - 1 - self.acked

    def close(self, *, wait_s: float = 10.0) -> bool:
        """Send what is left (for at most ``wait_s``), stop the thread; return whether all was sent."""
        deadline = time.monotonic() + wait_s
        self._hurry.set()  # cut a retry pause short
        with self._wake:
            self._wake.notify()
        while self._thread.is_alive() and self.pending > 0 and self.refused is None and time.monotonic() < deadline:
            time.sleep(0.05)
        with self._wake:
            self._stopping = True
            self._wake.notify()
        self._thread.join(timeout=max(0.1, deadline - time.monotonic()))
        return self.pending == 0 and self.live_id is not None
