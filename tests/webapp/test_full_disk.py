"""A full disk under the SQLite database: a clear error, nothing half-saved, no corruption, then recovery.

The database lives on a small tmpfs mounted for the test (needs root, as in CI; elsewhere the
tests skip, or fail when ``CUPCAL_REQUIRE_FULL_DISK=1``). The disk is filled with a filler file
until only a little room is left; freeing it must let the same import or upload go through.
"""

from __future__ import annotations

import os
import shutil
import subprocess
import tempfile
from collections.abc import Iterator
from pathlib import Path
from typing import Any

import pytest

from tests.webapp.class_fixtures import make_class
from tests.webapp.conftest import csrf_token, sign_in, upload
from tests.webapp.fault_helpers import assert_sound, count_runs, cupcal, import_args, outcomes, scalar, write_runs

# kill -9 and full-disk tests take about a quarter of the suite's time: marked, still run by default
pytestmark = pytest.mark.slow

DISK_BYTES = 160 * 1024 * 1024  # room for a PostgreSQL server's files (about 60 MiB) and the runs


@pytest.fixture
def small_disk() -> Iterator[Path]:
    """Mount a small tmpfs for the database (open to the PostgreSQL server's user); unmount it afterwards."""
    where = Path(tempfile.mkdtemp(prefix="cupcal-disk-"))
    done = subprocess.run(
        ["mount", "-t", "tmpfs", "-o", f"size={DISK_BYTES},mode=1777", "cupcal-test-disk", str(where)],
        capture_output=True,
        text=True,
    )
    if done.returncode != 0:
        where.rmdir()
        why = f"cannot mount a small tmpfs here: {done.stderr.strip() or done.stdout.strip()}"
        if os.environ.get("CUPCAL_REQUIRE_FULL_DISK") == "1":
            pytest.fail(f"CUPCAL_REQUIRE_FULL_DISK=1 but {why}")
        pytest.skip(why)
    try:
        yield where
    finally:
        subprocess.run(["umount", "-l", str(where)], capture_output=True)
        where.rmdir()


@pytest.fixture(params=["sqlite", "postgresql"])
def database_url(request: pytest.FixtureRequest, small_disk: Path) -> Iterator[str]:
    """A migrated database whose files are on the small disk (overrides conftest's for this module):
    a SQLite file, or a throwaway PostgreSQL server's data folder."""
    if request.param == "sqlite":
        path = small_disk / "cupcal.sqlite3"
        shutil.copyfile(request.getfixturevalue("sqlite_template"), path)
        yield f"sqlite:///{path}"
        return
    from tests.webapp.conftest import create_database, start_or_skip
    from webapp.migrate import upgrade

    # the write-ahead log lives off the small disk, as production set-ups often keep it: a full data
    # disk then fails the one statement ("could not extend file"); PostgreSQL stops altogether
    # (PANIC) when the log itself cannot grow, which is not what this test looks at
    server = start_or_skip(small_disk, wal_parent=Path(tempfile.gettempdir()))
    try:
        url = create_database(server, "cupcal_full")
        upgrade(url)
        yield url
    finally:
        server.stop()


def fill(disk: Path, leave: int) -> Path:
    """Fill ``disk`` with a filler file until about ``leave`` bytes are free; return the filler."""
    filler = disk / "filler"
    free = shutil.disk_usage(disk).free
    with filler.open("wb") as fh:
        fh.write(b"\0" * max(0, free - leave))
    return filler


def test_import_on_a_full_disk_stops_clearly_and_resumes(
    database_url: str, app: Any, lab: Any, session: Any, small_disk: Path, tmp_path: Path
) -> None:
    make_class(session, lab.ids["coord"])
    session.close()
    folder = write_runs(tmp_path / "runs", 30, seed=9000)
    filler = fill(small_disk, 600 * 1024)

    done = cupcal(database_url, *import_args(folder))
    assert done.returncode != 0
    assert "Traceback" not in done.stderr, done.stderr
    assert "disk is full" in done.stderr and "The import stopped at this file" in done.stderr, done.stderr
    stored = count_runs(database_url)
    assert 0 < stored < 30, stored  # some runs went in before the disk filled
    assert_sound(database_url)  # every stored run is whole; the failing one is absent

    filler.unlink()
    again = cupcal(database_url, *import_args(folder))
    assert again.returncode == 0, again.stdout + again.stderr
    assert outcomes(again.stdout) == {"stored": 30 - stored, "unchanged": stored, "error": 0}
    assert count_runs(database_url) == 30
    assert_sound(database_url, command=True)


def test_upload_on_a_full_disk_is_refused_with_507_and_goes_through_later(
    database_url: str, app: Any, client: Any, lab: Any, small_disk: Path
) -> None:
    filler = fill(small_disk, 0)
    r = upload(client, lab.auth("a1"), "diss-kcl-01", calorimeter_id=lab.spare_calorimeter_id)
    assert r.status_code == 507, r.get_data(as_text=True)
    assert "disk is full" in r.get_json()["error"] and "nothing of this was saved" in r.get_json()["error"]
    assert count_runs(database_url) == 0

    filler.unlink()
    r = upload(client, lab.auth("a1"), "diss-kcl-01", calorimeter_id=lab.spare_calorimeter_id)
    assert r.status_code == 201, r.get_json()
    assert count_runs(database_url) == 1
    assert_sound(database_url)


def test_a_page_on_a_full_disk_says_nothing_was_saved(
    database_url: str, app: Any, client: Any, lab: Any, small_disk: Path
) -> None:
    r = upload(client, lab.auth("a1"), "diss-kcl-01", calorimeter_id=lab.spare_calorimeter_id, monte_carlo=0)
    run_id = r.get_json()["id"]
    sign_in(client, "a1@lab.example")
    token = csrf_token(client.get(f"/runs/{run_id}").get_data(as_text=True))
    filler = fill(small_disk, 0)
    r = client.post(f"/runs/{run_id}/reanalyze", data={"csrf_token": token, "method": "naive"})
    page = r.get_data(as_text=True)
    assert r.status_code == 507 and "disk is full" in page and "nothing of this was saved" in page
    assert "Traceback" not in page
    assert scalar(database_url, f"SELECT count(*) FROM results WHERE run_id = {run_id}") == 1
    filler.unlink()
    r = client.post(f"/runs/{run_id}/reanalyze", data={"csrf_token": token, "method": "naive"})
    assert r.status_code == 302
    assert scalar(database_url, f"SELECT count(*) FROM results WHERE run_id = {run_id}") == 2
    assert_sound(database_url)
