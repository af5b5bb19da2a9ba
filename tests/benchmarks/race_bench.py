"""The race figures of issue 12 under gunicorn with 2 workers, on SQLite and on PostgreSQL.

    .venv/bin/python -m tests.benchmarks.race_bench --db sqlite|postgresql [--trials 200] [--edits 50]

Starts ``gunicorn --workers 2 'webapp:create_app()'`` on a fresh database (the helpers of
tests/benchmarks/load_test.py), then, over HTTP on 127.0.0.1, runs ``--trials`` trials each of a
lock against a PATCH, a re-analysis and a calibration change (tests/webapp/race_trials.py), and
2 clients × ``--edits`` concurrent PATCHes of one field. The database is read directly after each
trial. Prints the counts and writes ``bench-results/races-<db>.json``; exit status 1 when any
change after a lock, any answer that contradicts the database, or any lost update is found.
"""

from __future__ import annotations

import argparse
import datetime as dt
import json
import secrets
import sys
import tempfile
import time
import urllib.error
import urllib.request
from pathlib import Path
from typing import Any

from tests.benchmarks.load_test import PASSWORD, RESULTS, fresh_database, gunicorn, seeded
from tests.webapp.people_helpers import add_person
from tests.webapp.race_trials import (
    DEMO,
    Tally,
    lock_vs_calibration,
    lock_vs_patch,
    lock_vs_reanalysis,
    lost_updates,
    upload_run,
)

CUP = "Cup TH-07 (two nested foam cups, lid)"  # the cup the demo run files name


def seed(url: str) -> tuple[dict[str, str], int, int]:
    """Migrate and seed: a coordinator, a technician, two students of one group (tokens), two cups."""
    from webapp.services.calorimeters import create_calorimeter
    from webapp.services.people import create_group, issue_token

    with seeded(url, "race") as (_app, s, coord, tech):
        group = create_group(s, coord, name="Race group")
        a1 = add_person(s, "a1@race.example", "Student One", "student", password=PASSWORD, group=group)
        a2 = add_person(s, "a2@race.example", "Student Two", "student", password=PASSWORD, group=group)
        cup = create_calorimeter(
            s,
            coord,
            name=CUP,
            parts="two nested foam cups, lid",
            heat_capacity="18.6 ± 0.6 J/K",
            measured_on=dt.date.today().isoformat(),
        )
        other = create_calorimeter(s, coord, name="Race cup for calibration changes", parts="one foam cup")
        tokens = {
            k: issue_token(s, p, "races", scope="write")[1]
            for k, p in (("author", a1), ("peer", a2), ("other", coord), ("tech", tech))
        }
        return tokens, cup.id, other.id


def http_caller(port: int) -> Any:
    """Return a caller that sends JSON over HTTP to 127.0.0.1:port."""

    def call(method: str, path: str, token: str, json_body: Any = None, if_match: int | None = None) -> tuple[int, Any]:
        headers = {"Authorization": f"Bearer {token}", "Accept": "application/json"}
        data = None
        if json_body is not None:
            data = json.dumps(json_body).encode("utf-8")
            headers["Content-Type"] = "application/json"
        if if_match is not None:
            headers["If-Match"] = f'"{if_match}"'
        req = urllib.request.Request(f"http://127.0.0.1:{port}{path}", data=data, headers=headers, method=method)
        try:
            with urllib.request.urlopen(req, timeout=60) as r:
                return r.status, json.loads(r.read() or b"null")
        except urllib.error.HTTPError as exc:
            body = exc.read()
            try:
                return exc.code, json.loads(body or b"null")
            except ValueError:
                return exc.code, {"error": body[:200].decode("utf-8", "replace")}

    return call


def main(argv: list[str] | None = None) -> int:
    p = argparse.ArgumentParser(prog="python -m tests.benchmarks.race_bench", description=__doc__.split("\n")[0])
    p.add_argument("--db", choices=("sqlite", "postgresql"), required=True)
    p.add_argument("--trials", type=int, default=200)
    p.add_argument("--edits", type=int, default=50, help="PATCHes per client in the lost-update test")
    args = p.parse_args(argv)
    from webapp.db import make_engine

    out: dict[str, Any] = {"database": args.db, "gunicorn_workers": 2, "trials": args.trials}
    with tempfile.TemporaryDirectory(prefix="cupcal-races-") as d, fresh_database(args.db, Path(d)) as (url, text, _):
        tokens, cup, other = seed(url)
        out["database_text"] = text
        env = {
            "DATABASE_URL": url,
            "CUPCAL_SECRET_KEY": secrets.token_hex(32),
            "CUPCAL_INSTANCE_PATH": str(Path(d) / "instance"),
        }
        engine = make_engine(url)
        with gunicorn("webapp:create_app()", env, 2, Path(d), "/auth/login") as (_proc, port):
            call = http_caller(port)
            toml = "\n".join(
                line
                for line in (DEMO / "diss-kcl-01.toml").read_text("utf-8").splitlines()
                if not line.startswith("heat_capacity = ")
            ).replace(CUP, "Race cup for calibration changes")
            for name, fn, extra in (
                ("lock_vs_patch", lock_vs_patch, ()),
                ("lock_vs_reanalysis", lock_vs_reanalysis, ()),
                ("lock_vs_calibration_change", lock_vs_calibration, (other, toml)),
            ):
                tally, t0 = Tally(), time.perf_counter()
                fn(call, engine, tokens, tally, args.trials, *extra)
                out[name] = {**tally.as_dict(), "wall_s": round(time.perf_counter() - t0, 1)}
                print(name, out[name], flush=True)
            run_id = upload_run(call, tokens["author"])
            t0 = time.perf_counter()
            lost = lost_updates(call, engine, [tokens["author"], tokens["peer"]], run_id, args.edits)
            out["lost_updates"] = {**lost, "wall_s": round(time.perf_counter() - t0, 1)}
            print("lost_updates", out["lost_updates"], flush=True)
        engine.dispose()
    RESULTS.mkdir(exist_ok=True)
    (RESULTS / f"races-{args.db}.json").write_text(json.dumps(out, indent=2, default=str), encoding="utf-8")
    bad = [
        k
        for k in ("lock_vs_patch", "lock_vs_reanalysis", "lock_vs_calibration_change")
        if out[k]["changes_after_lock"] or out[k]["disagreements"] or out[k]["trials"] != args.trials
    ]
    lu = out["lost_updates"]
    if (
        lu["other"]
        or lu["chain_breaks"]
        or not lu["accepted_on_distinct_versions"]
        or not lu["accepted_titles_in_chain"]
        or lu["audit_entries"] != lu["accepted_200"]
        or lu["db_check_problems"]
    ):
        bad.append("lost_updates")
    print("races: " + ("PASSED" if not bad else f"FAILED ({', '.join(bad)})"))
    return 0 if not bad else 1


if __name__ == "__main__":
    sys.exit(main())
