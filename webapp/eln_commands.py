"""``cupcal export --format eln`` and the ``.eln`` half of ``cupcal import``."""

from __future__ import annotations

from pathlib import Path

import click


class _Refused(click.ClickException):
    """A one-line error (exit status 2)."""

    exit_code = 2


def _person(session, email: str):  # type: ignore[no-untyped-def]
    import sqlalchemy as sa

    from webapp.models import Person

    person = session.scalar(sa.select(Person).where(sa.func.lower(Person.email) == email.strip().lower()))
    if person is None:
        raise _Refused(f"--as: nobody has the e-mail address {email!r}")
    return person


def _calorimeter_id(session, text: str) -> int:  # type: ignore[no-untyped-def]
    from webapp.services.calorimeters import find_calorimeter

    if text.strip().isdigit():
        return int(text)
    cal = find_calorimeter(session, text)
    if cal is None:
        raise _Refused(f"--calorimeter: no calorimeter {text!r} (give its id or its name)")
    return cal.id


@click.command("export")
@click.option(
    "--format",
    "fmt",
    type=click.Choice(["eln"]),
    default="eln",
    show_default=True,
    help="Archive format (an .eln archive: RO-Crate with one folder per run).",
)
@click.option("--run", "run_ids", type=int, multiple=True, help="A run id (repeat for a selection).")
@click.option("--section", "section_text", help="Every run of a section: its id or COURSE/SECTION.")
@click.option("--calorimeter", "calorimeter", help="A calorimeter (id or name) with its calibrations.")
@click.option("--all", "everything", is_flag=True, help="Every calorimeter and every run.")
@click.option("--as", "email", required=True, help="E-mail of the person exporting (what they may see).")
@click.option("-o", "--out", type=click.Path(path_type=Path), help="File or folder to write (default: here).")
def export_command(
    fmt: str,
    run_ids: tuple[int, ...],
    section_text: str | None,
    calorimeter: str | None,
    everything: bool,
    email: str,
    out: Path | None,
) -> None:
    """Write an .eln archive of runs, a section, a calorimeter or the whole notebook."""
    from webapp.command_support import command_app, find_section
    from webapp.db import new_session
    from webapp.services import eln
    from webapp.services.errors import ServiceError

    if sum(map(bool, (run_ids, section_text, calorimeter, everything))) != 1:
        raise _Refused("say what to export: --run ID (repeatable), --section, --calorimeter or --all")
    app = command_app()
    with app.app_context():
        session = new_session(app)
        try:
            actor = _person(session, email)
            report = eln.report_renderer(pdf=len(set(run_ids)) == 1)
            if run_ids:
                name, data = eln.export_runs(session, actor, list(run_ids), report)
            elif section_text:
                name, data = eln.export_section(session, actor, find_section(session, section_text).id, report)
            elif calorimeter:
                name, data = eln.export_calorimeter(session, actor, _calorimeter_id(session, calorimeter), report)
            else:
                name, data = eln.export_notebook(session, actor, report)
        except (ServiceError, click.BadParameter) as exc:
            raise _Refused(getattr(exc, "message", None) or str(exc)) from None
        finally:
            session.close()
    target = out / name if out is not None and out.is_dir() else (out or Path(name))
    target.write_bytes(data)
    click.echo(f"wrote {target} ({len(data)} bytes)")


def import_eln_file(path: Path, email: str) -> None:
    """Import the .eln archive at ``path`` as ``email``; print the report (exit status 2 on refusal or errors)."""
    from webapp.command_support import command_app
    from webapp.db import new_session
    from webapp.services.eln_import import import_eln
    from webapp.services.errors import ServiceError

    app = command_app()
    with app.app_context():
        session = new_session(app)
        try:
            actor = _person(session, email)
            try:
                report = import_eln(
                    session, actor, path.read_bytes(), source=path.name, password_method=app.config["PASSWORD_METHOD"]
                )
            except ServiceError as exc:
                raise _Refused(exc.message) from None
        finally:
            session.close()
    for item in report.items:
        click.echo(f"{item.outcome:<9} {item.file}: {item.message}")
    click.echo(report.summary)
    if report.count("error"):
        raise SystemExit(2)
