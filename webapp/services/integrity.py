"""The notebook's integrity check (``cupcal db check``): after a crash, a full disk or a restore.

Two layers:

- the database's own check. SQLite: ``PRAGMA integrity_check`` (pages, indexes, records).
  PostgreSQL: ``bt_index_check`` on every B-tree index of the schema when the ``amcheck``
  extension is installed in the database (``CREATE EXTENSION amcheck``, by a superuser);
  otherwise the report says that check was not made.
- the notebook's own rules, on both databases: every foreign key points at a row that
  exists, and every run is complete: its run file and readings, a parsed series of
  ``points`` values in each of its two columns, exactly one current result, and (for runs
  imported in bulk) a content hash that matches the files stored.
- signed runs unchanged since their lock, and the audit chain whole
  (:mod:`webapp.services.integrity_locks`).

Nothing is written; the check reads in chunks, so it runs while the notebook serves.
"""

from __future__ import annotations

import dataclasses

import sqlalchemy as sa

from webapp.models import Base, Result, Run

#: more problems than this of one kind are counted, not listed
MAX_LISTED = 20


@dataclasses.dataclass
class IntegrityReport:
    """What was checked, how much, and every problem found (empty: the database is sound)."""

    dialect: str
    checks: list[str] = dataclasses.field(default_factory=list)
    problems: list[str] = dataclasses.field(default_factory=list)
    runs: int = 0
    results: int = 0

    @property
    def ok(self) -> bool:
        return not self.problems

    def summary(self) -> str:
        """Return the report as lines of text."""
        head = (
            f"{'ok' if self.ok else 'PROBLEMS FOUND'}: {self.runs} runs and {self.results} results "
            f"checked on {self.dialect}"
        )
        lines = [head, *(f"  checked: {c}" for c in self.checks)]
        lines += [f"  problem: {p}" for p in self.problems]
        return "\n".join(lines)


def check_database(engine: sa.Engine) -> IntegrityReport:
    """Check the database behind ``engine``; return the report (nothing is changed)."""
    report = IntegrityReport(engine.dialect.name)
    with engine.connect() as conn:
        if report.dialect == "sqlite":
            _sqlite_pages(conn, report)
        elif report.dialect == "postgresql":
            _postgres_indexes(conn, report)
        _foreign_keys(conn, report)
        _runs_complete(conn, report)
        _content_hashes(conn, report)
        from webapp.services.integrity_locks import check_audit_chain, check_locks

        check_locks(conn, report, _listed)
        check_audit_chain(conn, report, _listed)
        conn.rollback()
    return report


def _listed(report: IntegrityReport, problems: list[str], what: str) -> None:
    report.problems.extend(problems[:MAX_LISTED])
    if len(problems) > MAX_LISTED:
        report.problems.append(f"… and {len(problems) - MAX_LISTED} more {what}")


def _sqlite_pages(conn: sa.Connection, report: IntegrityReport) -> None:
    rows = [r[0] for r in conn.exec_driver_sql("PRAGMA integrity_check")]
    report.checks.append("SQLite integrity_check (pages, indexes, records)")
    if rows != ["ok"]:
        _listed(report, [f"SQLite integrity_check: {r}" for r in rows], "integrity_check messages")


def _postgres_indexes(conn: sa.Connection, report: IntegrityReport) -> None:
    has_amcheck = conn.scalar(sa.text("SELECT count(*) FROM pg_extension WHERE extname = 'amcheck'"))
    if not has_amcheck:
        report.checks.append(
            "PostgreSQL index structure: not checked (the amcheck extension is not installed in this database)"
        )
        return
    names = conn.scalars(
        sa.text(
            "SELECT c.oid::regclass::text FROM pg_index i JOIN pg_class c ON c.oid = i.indexrelid "
            "JOIN pg_am a ON a.oid = c.relam JOIN pg_namespace n ON n.oid = c.relnamespace "
            "WHERE a.amname = 'btree' AND n.nspname = current_schema()"
        )
    ).all()
    bad = []
    for name in names:
        try:
            with conn.begin_nested():
                conn.execute(sa.text("SELECT bt_index_check(CAST(:n AS regclass))"), {"n": name})
        except sa.exc.DBAPIError as exc:
            bad.append(f"PostgreSQL index {name}: {str(exc.orig).strip().splitlines()[0]}")
    report.checks.append(f"PostgreSQL index structure (amcheck bt_index_check, {len(names)} indexes)")
    _listed(report, bad, "index problems")


def _foreign_keys(conn: sa.Connection, report: IntegrityReport) -> None:
    bad = []
    count = 0
    for table in Base.metadata.sorted_tables:
        for fk in table.foreign_keys:
            count += 1
            child, parent = fk.parent, fk.column
            p = parent.table.alias("p")
            pcol = p.c[parent.name]
            q = (
                sa.select(table.c.id if "id" in table.c else child, child)
                .select_from(table.outerjoin(p, child == pcol))
                .where(child.is_not(None), pcol.is_(None))
                .limit(MAX_LISTED)
            )
            for row_id, value in conn.execute(q):
                bad.append(f"{table.name} row {row_id}: {child.name} = {value} names no row of {parent.table.name}")
    report.checks.append(f"foreign keys ({count} references)")
    _listed(report, bad, "dangling references")


def _runs_complete(conn: sa.Connection, report: IntegrityReport) -> None:
    r = Run.__table__
    length = sa.func.length
    report.runs = conn.scalar(sa.select(sa.func.count()).select_from(r)) or 0
    report.results = conn.scalar(sa.select(sa.func.count()).select_from(Result.__table__)) or 0
    bad = []
    incomplete = sa.select(
        r.c.id,
        r.c.points,
        length(r.c.run_toml),
        length(r.c.readings_raw),
        length(r.c.series_time_s),
        length(r.c.series_temperature_k),
    ).where(
        sa.or_(
            r.c.points < 1,
            sa.func.coalesce(length(r.c.run_toml), 0) == 0,
            sa.func.coalesce(length(r.c.readings_raw), 0) == 0,
            sa.func.coalesce(length(r.c.series_time_s), 0) != r.c.points * 8,
            sa.func.coalesce(length(r.c.series_temperature_k), 0) != r.c.points * 8,
        )
    )
    for run_id, points, toml_len, raw_len, t_len, temp_len in conn.execute(incomplete):
        bad.append(
            f"run {run_id} is incomplete: {points} points, run file {toml_len or 0} characters, readings "
            f"{raw_len or 0} bytes, series {t_len or 0} and {temp_len or 0} bytes (expected {8 * points} each)"
        )
    res = Result.__table__
    current = (
        sa.select(sa.func.count())
        .where(res.c.run_id == r.c.id, res.c.is_current.is_(True))
        .correlate(r)
        .scalar_subquery()
    )
    for run_id, n in conn.execute(sa.select(r.c.id, current).where(current != 1).order_by(r.c.id)):
        bad.append(f"run {run_id} has {n} current results (expected exactly 1)")
    report.checks.append("every run complete (files, series, one current result)")
    _listed(report, bad, "incomplete runs")


def _content_hashes(conn: sa.Connection, report: IntegrityReport) -> None:
    from webapp.services.import_store import content_hash

    r = Run.__table__
    q = (
        sa.select(r.c.id, r.c.run_toml, r.c.readings_raw, r.c.content_hash)
        .where(r.c.content_hash.is_not(None))
        .order_by(r.c.id)
    )
    bad = []
    checked = 0
    for run_id, toml, raw, digest in conn.execution_options(yield_per=200).execute(q):
        checked += 1
        text, raw = _as_bytes(toml), _as_bytes(raw)
        # the import decodes 'utf-8-sig', so a run file written with a byte-order mark hashed with it
        if digest not in (content_hash(text, raw), content_hash(b"\xef\xbb\xbf" + text, raw)):
            bad.append(f"run {run_id}: its files do not match the content hash recorded when it was imported")
    report.checks.append(f"content hashes of {checked} imported runs")
    _listed(report, bad, "hash mismatches")


def _as_bytes(value: object) -> bytes:
    """Return a stored file as bytes (a damaged SQLite row may hold text where bytes belong)."""
    if value is None:
        return b""
    if isinstance(value, bytes | bytearray | memoryview):
        return bytes(value)
    return str(value).encode("utf-8")
