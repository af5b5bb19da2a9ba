"""The PostgreSQL test set-up: skip with an install hint on a user's machine, fail under CI."""

from __future__ import annotations

import pytest

from tests.webapp import conftest, postgres


def test_missing_binaries_skip_with_what_to_install(monkeypatch: pytest.MonkeyPatch) -> None:
    monkeypatch.setattr(postgres, "find_bindir", lambda: None)
    monkeypatch.setattr(conftest, "start_server", postgres.start_server)
    monkeypatch.delenv("CUPCAL_REQUIRE_POSTGRES", raising=False)
    with pytest.raises(pytest.skip.Exception, match="apt-get install postgresql"):
        conftest.start_or_skip()


def test_missing_binaries_fail_when_postgres_is_required(monkeypatch: pytest.MonkeyPatch) -> None:
    monkeypatch.setattr(postgres, "find_bindir", lambda: None)
    monkeypatch.setattr(conftest, "start_server", postgres.start_server)
    monkeypatch.setenv("CUPCAL_REQUIRE_POSTGRES", "1")
    with pytest.raises(pytest.fail.Exception, match="CUPCAL_REQUIRE_POSTGRES=1"):
        conftest.start_or_skip()
