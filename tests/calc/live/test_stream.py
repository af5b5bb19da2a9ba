"""The notebook client: readings arrive once each, in order, through faults; a restart finds its live run."""

from __future__ import annotations

import time

import pytest

from calc.live.stream import NotebookClient, Refused, Streamer, Unreachable
from tests.calc.live.fake_notebook import TOKEN, FakeNotebook

RUN = 'kind = "dissolution"\n'


def _wait(condition, seconds=10.0):
    deadline = time.monotonic() + seconds
    while not condition():
        assert time.monotonic() < deadline, "timed out"
        time.sleep(0.02)


def test_readings_arrive_in_order_and_a_second_streamer_with_the_key_finds_the_same_run():
    with FakeNotebook() as nb:
        messages = []
        first = Streamer(NotebookClient(nb.url, TOKEN), RUN, "key-1", target_u=0.5, on_message=messages.append)
        first.start()
        for seq in range(25):
            first.add(seq, float(seq), 21.0 + seq / 100)
        assert first.close() is True
        run = nb.runs[first.live_id]
        assert [r[0] for r in run.readings] == list(range(25)) and run.target_u == 0.5
        # a restarted recorder: same client_key, the log's 25 rows plus new ones
        second = Streamer(NotebookClient(nb.url, TOKEN), RUN, "key-1")
        second.start([(float(s), 21.0) for s in range(25)])
        for seq in range(25, 30):
            second.add(seq, float(seq), 21.3)
        assert second.close() is True
        assert second.live_id == first.live_id and len(nb.runs) == 1
        assert [r[0] for r in run.readings] == list(range(30))
        assert not messages


def test_a_notebook_that_is_down_delays_readings_but_loses_none():
    with FakeNotebook() as nb:
        messages = []
        streamer = Streamer(NotebookClient(nb.url, TOKEN), RUN, "key-2", on_message=messages.append)
        streamer.start()
        streamer.add(0, 0.0, 21.0)
        _wait(lambda: streamer.acked == 0)
        nb.down = True
        for seq in range(1, 20):
            streamer.add(seq, float(seq), 21.0)
        _wait(lambda: streamer.last_problem is not None)
        assert streamer.pending == 19
        nb.down = False
        assert streamer.close(wait_s=15) is True
        assert [r[0] for r in nb.runs[streamer.live_id].readings] == list(range(20))
        assert "answered 503" in messages[0] and "recording goes on" in messages[0]
        assert messages[-1].startswith("the notebook answers again")


def test_no_notebook_at_the_address_is_a_retry_and_a_wrong_token_a_refusal():
    with FakeNotebook() as nb:
        url = nb.url
    with pytest.raises(Unreachable, match="cannot reach the notebook"):
        NotebookClient(url, TOKEN, timeout_s=2).create_live_run(RUN, "k", None)
    with FakeNotebook() as nb:
        with pytest.raises(Refused, match="401: missing or wrong token"):
            NotebookClient(nb.url, "wrong").create_live_run(RUN, "k", None)
        messages = []
        streamer = Streamer(NotebookClient(nb.url, "wrong"), RUN, "k", on_message=messages.append)
        streamer.start()
        streamer.add(0, 0.0, 21.0)
        assert streamer.close(wait_s=5) is False
        assert streamer.refused and "streaming stopped, the CSV log goes on" in messages[0]


def test_more_than_a_batch_goes_in_several_posts():
    with FakeNotebook() as nb:
        streamer = Streamer(NotebookClient(nb.url, TOKEN), RUN, "key-3")
        streamer.start([(float(s), 21.0) for s in range(2500)])
        assert streamer.close() is True
        posts = [r for r in nb.requests if r[1].endswith("/readings")]
        assert len(nb.runs[streamer.live_id].readings) == 2500
        assert len(posts) == 3 and all(status == 200 for _, _, status in posts)  # 1000 + 1000 + 500


def test_a_conflict_makes_the_streamer_ask_for_the_notebooks_last_seq_and_go_on():
    with FakeNotebook() as nb:
        messages = []
        streamer = Streamer(NotebookClient(nb.url, TOKEN), RUN, "key-4", on_message=messages.append)
        streamer.start([(float(s), 21.0) for s in range(5)])
        _wait(lambda: streamer.acked == 4)
        with nb.lock:  # the notebook lost its last two readings (say, restored from a backup)
            del nb.runs[streamer.live_id].readings[3:]
        for seq in range(5, 8):
            streamer.add(seq, float(seq), 21.0)
        assert streamer.close(wait_s=15) is True
        assert [r[0] for r in nb.runs[streamer.live_id].readings] == list(range(8))
        assert any("409" in m for m in messages) and streamer.refused is None


def test_a_live_run_finished_in_the_notebook_stops_the_streaming_with_a_message():
    with FakeNotebook() as nb:
        messages = []
        streamer = Streamer(NotebookClient(nb.url, TOKEN), RUN, "key-5", on_message=messages.append)
        streamer.start([(0.0, 21.0)])
        _wait(lambda: streamer.acked == 0)
        nb.runs[streamer.live_id].state = "finished"
        streamer.add(1, 1.0, 21.0)
        assert streamer.close(wait_s=10) is False
        assert "is finished in the notebook and takes no more readings" in (streamer.refused or "")


def test_retries_back_off_while_readings_keep_coming():
    with FakeNotebook() as nb:
        nb.down = True
        streamer = Streamer(NotebookClient(nb.url, TOKEN), RUN, "key-6")
        streamer.start()
        for seq in range(40):  # 40 readings over 2 s: retries after 0.5, 1 and 2 s, not one per reading
            streamer.add(seq, float(seq), 21.0)
            time.sleep(0.05)
        attempts = len(nb.requests)
        nb.down = False
        assert streamer.close(wait_s=10) is True
        assert 2 <= attempts <= 4 and len(nb.runs[streamer.live_id].readings) == 40
