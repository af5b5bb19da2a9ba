"""``cupcal`` commands of the notebook.

``cupcal db upgrade|downgrade|current|check``, ``cupcal load-demo``, ``cupcal serve``, ``cupcal import``,
``cupcal backup OUT`` and ``cupcal restore IN``. The
database is the one :func:`webapp.create_app` configures (instance folder, or
``DATABASE_URL``).
"""

from __future__ import annotations

import sys
from collections.abc import Callable
from pathlib import Path

import click

from webapp.command_support import command_app, find_section
from webapp.services.demo import DEMO_DIR


def _url(app) -> str:  # type: ignore[no-untyped-def]
    return str(app.config["DATABASE_URL"])


def _shown(url: str) -> str:
    """Return the URL without a password."""
    from sqlalchemy.engine import make_url

    return make_url(url).render_as_string(hide_password=True)


@click.group()
def db() -> None:
    """Manage the notebook's database (Alembic migrations)."""


@db.command()
@click.argument("revision", default="head")
def upgrade(revision: str) -> None:
    """Apply the migrations up to REVISION (default: the newest)."""
    from webapp.migrate import upgrade as do_upgrade

    app = command_app()
    do_upgrade(_url(app), revision)
    click.echo(f"database {_shown(_url(app))} is at revision {revision}")


@db.command()
@click.argument("revision")
def downgrade(revision: str) -> None:
    """Revert the migrations down to REVISION ('base' removes every table)."""
    from webapp.migrate import downgrade as do_downgrade

    app = command_app()
    do_downgrade(_url(app), revision)
    click.echo(f"database {_shown(_url(app))} is at revision {revision}")


@db.command()
def current() -> None:
    """Show the revision the database is at."""
    from webapp.migrate import current_revision, head_revision

    app = command_app()
    rev = current_revision(_url(app))
    click.echo(f"{_shown(_url(app))}: {rev or 'no schema'} (newest: {head_revision()})")


@db.command()
def check() -> None:
    """Check the database: its own integrity check and that every run is complete.

    Reads only; safe while the notebook serves. Exit status 2 when a problem is found.
    """
    import sqlalchemy as sa

    from webapp.db import get_engine
    from webapp.services.integrity import check_database

    app = command_app()
    try:
        report = check_database(get_engine(app))
    except sa.exc.DBAPIError as exc:
        raise _Refused(f"{_shown(_url(app))} cannot be read: {str(exc.orig).strip()}") from None
    click.echo(f"{_shown(_url(app))}: " + report.summary())
    if not report.ok:
        raise SystemExit(2)


def _print_sign_ins(sign_ins) -> None:  # type: ignore[no-untyped-def]
    click.echo(f"Demo sign-ins (invented people; password for all: {sign_ins[0].password}):")
    for s in sign_ins:
        click.echo(f"  {s.role:<12} {s.email:<45} {s.name}")


def _load_demo(app, demo_dir: Path) -> bool:  # type: ignore[no-untyped-def]
    """Load the demo into an empty database; return whether it was loaded."""
    from webapp.db import new_session
    from webapp.services.demo import is_empty, load_demo
    from webapp.services.errors import ServiceError

    with app.app_context():
        session = new_session(app)
        try:
            if not is_empty(session):
                return False
            load_demo(
                session,
                demo_dir,
                password_method=app.config["PASSWORD_METHOD"],
                monte_carlo_trials=int(app.config["MONTE_CARLO_TRIALS"]),
            )
            return True
        except ServiceError as exc:
            raise click.ClickException(f"the demo could not be loaded: {exc}") from None
        finally:
            session.close()


@click.command("load-demo")
@click.option(
    "--fixtures",
    "demo_dir",
    type=click.Path(file_okay=False, exists=True, path_type=Path),
    default=DEMO_DIR,
    show_default=True,
    help="Folder of demo run files and readings.",
)
def load_demo_command(demo_dir: Path) -> None:
    """Load the invented demo lab into an empty database (after `cupcal db upgrade`)."""
    from webapp.services.demo import demo_sign_ins

    app = command_app()
    if _load_demo(app, demo_dir):
        click.echo(f"demo loaded into {_shown(_url(app))}")
        _print_sign_ins(demo_sign_ins())
    else:
        raise click.ClickException("the database is not empty; the demo is loaded only into an empty one")


@click.command()
@click.option("--host", default="127.0.0.1", show_default=True, help="Address to listen on.")
@click.option("--port", default=5000, show_default=True, type=click.IntRange(1, 65535))
@click.option("--demo/--no-demo", default=True, show_default=True, help="Load the demo into an empty database.")
@click.option(
    "--workers",
    default=1,
    show_default=True,
    type=click.IntRange(1, 64),
    help="Worker processes; more than 1 serves with gunicorn (for a lab, not one desk).",
)
def serve(host: str, port: int, demo: bool, workers: int) -> None:
    """Apply migrations, load the demo into an empty database, and serve the notebook.

    The port is checked first: a busy port stops here with a clear message (exit status 2),
    before anything is migrated or printed as served.
    """
    from webapp.serving import port_problem

    problem = port_problem(host, port)
    if problem:
        click.echo(f"cupcal serve: error: {problem}", err=True)
        sys.exit(2)
    from webapp.db import new_session
    from webapp.migrate import upgrade as do_upgrade
    from webapp.services.demo import demo_sign_ins, has_demo

    app = command_app()
    do_upgrade(_url(app), "head")
    click.echo(f"database {_shown(_url(app))} is up to date")
    if demo and _load_demo(app, DEMO_DIR):
        click.echo("demo lab loaded")
    with app.app_context():
        session = new_session(app)
        try:
            show = has_demo(session)
        finally:
            session.close()
    if show:
        _print_sign_ins(demo_sign_ins())
    from webapp.serving import serve_app

    click.echo(
        f"serving on http://{host}:{port} with {workers} worker process{'es' if workers > 1 else ''} (Ctrl-C stops)"
    )
    if not app.config.get("SESSION_COOKIE_SECURE"):
        click.echo("the session cookie is not marked Secure (plain http); behind HTTPS set CUPCAL_HTTPS=1")
    try:
        serve_app(app, host, port, workers, click.echo)
    except OSError as exc:  # taken between the check and the start
        click.echo(f"cupcal serve: error: cannot listen on {host}:{port}: {exc.strerror or exc}", err=True)
        sys.exit(2)


@click.command("import")
@click.argument("path", type=click.Path(exists=True, path_type=Path))
@click.option("--section", "section_text", help="Section: its id or COURSE/SECTION (not for an .eln archive).")
@click.option(
    "--mapping",
    type=click.Path(exists=True, dir_okay=False, path_type=Path),
    help="CSV mapping run files to groups: columns file, group[, bench].",
)
@click.option("--as", "email", required=True, help="E-mail of the coordinator or technician importing.")
@click.option(
    "--create-groups",
    is_flag=True,
    help="Create the groups that [info] group (or the mapping) names and the section lacks.",
)
def import_command(path: Path, section_text: str | None, mapping: Path | None, email: str, create_groups: bool) -> None:
    """Import a section's runs from a zip or a folder of run files (.toml) and logs (.csv), or an .eln archive.

    Each run is stored all-or-nothing; importing the same files again changes nothing.
    Runs are analyzed without Monte Carlo (re-analyze a run for the check). An .eln archive
    written by cupcal comes back exactly; see ``webapp/README.md``.
    """
    if path.suffix.lower() == ".eln" and path.is_file():
        from webapp.eln_commands import import_eln_file

        return import_eln_file(path, email)
    if not section_text:
        raise click.UsageError("give --section (its id or COURSE/SECTION) to import run files")
    import sqlalchemy as sa

    from webapp.db import new_session
    from webapp.models import Person
    from webapp.services.errors import ServiceError
    from webapp.services.imports import files_from_folder, files_from_zip, import_files, runs_in

    app = command_app()
    with app.app_context():
        session = new_session(app)
        try:
            actor = session.scalar(sa.select(Person).where(Person.email == email.strip().lower()))
            if actor is None:
                raise click.BadParameter(f"nobody has the e-mail address {email!r}", param_hint="--as")
            section = find_section(session, section_text)
            try:
                files = (
                    files_from_folder(path) if path.is_dir() else files_from_zip(path.read_bytes(), source=str(path))
                )
                text = mapping.read_text(encoding="utf-8-sig") if mapping else None
                with click.progressbar(length=runs_in(files), label="importing runs", file=sys.stderr) as bar:
                    report = import_files(
                        session,
                        actor,
                        section.id,
                        files,
                        mapping=text,
                        progress=lambda _p: bar.update(1),
                        create_groups=create_groups,
                    )
            except ServiceError as exc:
                raise click.ClickException(exc.message) from None
        finally:
            session.close()
    for item in report.items:
        if item.outcome != "ignored" or item.message:
            click.echo(f"{item.outcome:<9} {item.file}: {item.message}")
    click.echo(report.summary)
    if report.count("error"):
        raise SystemExit(2)


class _Refused(click.ClickException):
    """A one-line error of backup/restore (exit status 2)."""

    exit_code = 2


@click.command("backup")
@click.argument("out", type=click.Path(dir_okay=False, path_type=Path))
@click.option("--force", is_flag=True, help="Replace OUT when it exists.")
def backup_command(out: Path, force: bool) -> None:
    """Back up the database to the file OUT (safe while the notebook is serving).

    SQLite: a copy made with SQLite's online backup API. PostgreSQL: a pg_dump
    custom-format archive (needs pg_dump on this machine).
    """
    from webapp.backup import backup

    click.echo(f"backed up {_on_database(backup, out, force)} to {out}")


@click.command("restore")
@click.argument("source", metavar="IN", type=click.Path(exists=True, dir_okay=False, path_type=Path))
@click.option("--force", is_flag=True, help="Replace the contents of a database that holds data.")
def restore_command(source: Path, force: bool) -> None:
    """Restore the database from IN, a file made by `cupcal backup`.

    Only an empty database is restored into, unless --force. Stop the notebook first.
    """
    from webapp.backup import restore

    click.echo(f"restored {_on_database(restore, source, force)} from {source}")


def _on_database(step: Callable[..., None], path: Path, force: bool) -> str:
    """Run ``step`` (backup or restore) on the notebook's database and the file ``path``; return the database as shown.

    :raise _Refused: with the one-line reason when the step refuses
    """
    from webapp.backup import BackupError

    app = command_app()
    try:
        step(_url(app), path, force=force)
    except BackupError as exc:
        raise _Refused(str(exc)) from None
    return _shown(_url(app))
