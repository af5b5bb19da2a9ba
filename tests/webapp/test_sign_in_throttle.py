"""Sign-in throttling: per account and per address, with a back-off that doubles, logged."""

from __future__ import annotations

import datetime as dt
import logging
from typing import Any

import pytest

from tests.webapp.conftest import PASSWORD, csrf_token


def _try(client: Any, email: str, password: str, address: str = "203.0.113.7") -> Any:
    page = client.get("/auth/login")
    return client.post(
        "/auth/login",
        data={"email": email, "password": password, "csrf_token": csrf_token(page.get_data(as_text=True))},
        environ_base={"REMOTE_ADDR": address},
    )


class Clock:
    """A clock the test moves forward."""

    def __init__(self) -> None:
        self.now = dt.datetime(2030, 1, 1, 8, 0, 0)

    def __call__(self) -> dt.datetime:
        return self.now


@pytest.fixture
def clock(monkeypatch: pytest.MonkeyPatch) -> Clock:
    c = Clock()
    monkeypatch.setattr("webapp.services.throttle._now", c)
    return c


def test_wrong_passwords_make_the_account_wait_even_for_the_right_one(
    client: Any, lab: Any, clock: Clock, caplog: pytest.LogCaptureFixture
) -> None:
    with caplog.at_level(logging.WARNING, logger="cupcal.sign_in"):
        for _ in range(5):
            assert _try(client, "a1@lab.example", "wrong").status_code == 400
        r = _try(client, "a1@lab.example", PASSWORD)
    assert r.status_code == 429 and r.headers["Retry-After"] == "30"
    assert "try again in 30 s" in r.get_data(as_text=True)
    assert sum("sign-in failed" in m for m in caplog.messages) == 5
    assert any("sign-in refused" in m for m in caplog.messages)
    # from another address the account still waits (per account)
    assert _try(client, "a1@lab.example", PASSWORD, address="198.51.100.9").status_code == 429
    clock.now += dt.timedelta(seconds=31)
    assert _try(client, "a1@lab.example", "wrong again").status_code == 400  # allowed to try; fails
    clock.now += dt.timedelta(seconds=31)
    r = _try(client, "a1@lab.example", PASSWORD)
    assert r.status_code == 429 and "try again in 29 s" in r.get_data(as_text=True)  # doubled: 60 s
    clock.now += dt.timedelta(seconds=30)
    assert _try(client, "a1@lab.example", PASSWORD).status_code == 302  # signed in; failures cleared


def test_one_address_trying_many_accounts_waits(client: Any, lab: Any, clock: Clock) -> None:
    for who in ("a1", "a2", "b1", "tech", "nobody"):
        assert _try(client, f"{who}@lab.example", "wrong").status_code == 400
    assert _try(client, "coord@lab.example", PASSWORD).status_code == 429  # per address
    assert _try(client, "coord@lab.example", PASSWORD, address="198.51.100.9").status_code == 302


def test_old_failures_are_forgotten(client: Any, lab: Any, clock: Clock) -> None:
    for _ in range(4):
        _try(client, "a2@lab.example", "wrong")
    clock.now += dt.timedelta(minutes=16)
    _try(client, "a2@lab.example", "wrong")
    assert _try(client, "a2@lab.example", PASSWORD).status_code == 302
