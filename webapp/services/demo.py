"""The demo scenario: an invented teaching lab ("Tern Hollow, room 3B") with its people and runs.

Everything here is invented. The runs are the checked-in ``fixtures/demo/*.toml`` and
``.csv`` files (made by ``fixtures/generate_demo.py``), stored and analyzed like uploads.
"""

from __future__ import annotations

import dataclasses
import datetime as dt
import tomllib
from pathlib import Path
from typing import Any

import sqlalchemy as sa
import sqlalchemy.orm as so

from webapp.models import Calibration, Person, utcnow
from webapp.services.analysis import AnalysisOptions
from webapp.services.calorimeters import create_calorimeter, find_calorimeter
from webapp.services.people import create_course, create_group, create_person
from webapp.services.runs import RunUpload, record_run

DEMO_DIR = Path(__file__).resolve().parents[2] / "fixtures" / "demo"
DEMO_PASSWORD = "tern-hollow-demo"
COURSE = ("Solution calorimetry practical", "spring term (invented)")
#: (name, e-mail, role, group); the students are the operators named in the demo runs
PEOPLE = (
    ("Odile Brackwater", "odile.brackwater@ternhollow.example", "coordinator", None),
    ("Kasper Lindqvist-Mayo", "kasper.lindqvist-mayo@ternhollow.example", "technician", None),
    ("Mira Okonjo-Lind", "mira.okonjo-lind@ternhollow.example", "student", "Heron A"),
    ("Tomas Vesterby-Quail", "tomas.vesterby-quail@ternhollow.example", "student", "Heron A"),
    ("Priya Stenhammar-Oduya", "priya.stenhammar-oduya@ternhollow.example", "student", "Heron B"),
    ("Lucan Ferreira-Holt", "lucan.ferreira-holt@ternhollow.example", "student", "Kestrel A"),
    ("Saoirse Adebayo-Klint", "saoirse.adebayo-klint@ternhollow.example", "student", "Kestrel B"),
)
#: the course's two sections and their groups
SECTIONS = (("Tuesday morning", ("Heron A", "Heron B")), ("Thursday afternoon", ("Kestrel A", "Kestrel B")))
#: staff comments of the demo: (group, or run file stem, text)
COMMENTS = (
    ("Heron A", "Both KCl runs have clean, flat drift lines. Next time note the room temperature on the sheet too."),
    (
        "Kestrel A",
        "Your two runs agree within their uncertainties; write down the balance's last digit as you read it.",
    ),
    ("Kestrel B", "Run 2 needs a look: see the comment on the run."),
    (
        "kestrel-b-kcl-2",
        "The mass reads 0.378 g, ten times less than your other run: check the balance reading "
        "in your notebook before you repeat it.",
    ),
)
#: the class run the demo coordinator excluded from the statistics, with the reason
EXCLUDED = ("kestrel-b-kcl-2", "mass written with the decimal point one place off (0.378 g for 3.780 g)")
#: a second, invented cup whose last calibration is old, so the home page shows one due
SPARE_CUP = ("Cup TH-09 (single foam cup, card lid)", "21.0 ± 3.0 J/K", 120)
_ORDER = {"electrical-calibration": 0, "mixing-calibration": 1}


@dataclasses.dataclass
class SignIn:
    """A demo sign-in to print."""

    email: str
    role: str
    name: str
    password: str = DEMO_PASSWORD


def demo_sign_ins() -> list[SignIn]:
    """Return the demo sign-ins (whether or not they are loaded)."""
    return [SignIn(email, role, name) for name, email, role, _group in PEOPLE]


def is_empty(session: so.Session) -> bool:
    """Return whether the database holds no people yet."""
    return session.scalar(sa.select(sa.func.count()).select_from(Person)) == 0


def has_demo(session: so.Session) -> bool:
    """Return whether the demo people are in the database."""
    return session.scalar(sa.select(Person.id).where(Person.email == PEOPLE[0][1])) is not None


def load_demo(
    session: so.Session,
    demo_dir: Path = DEMO_DIR,
    *,
    password_method: str = "scrypt",
    monte_carlo_trials: int = 100_000,
) -> list[SignIn]:
    """Create the demo people, groups and calorimeters and record every demo run; return the sign-ins."""
    runs = sorted(demo_dir.glob("*.toml"), key=lambda p: (_ORDER.get(_kind(p), 2), p.name))
    if not runs:
        raise FileNotFoundError(f"no demo runs (*.toml) in {demo_dir}")
    coordinator, course_id, groups, people = _people(session, password_method)
    _calorimeters(session, coordinator, runs)
    technician = next(people[name] for name, _e, role, _g in PEOPLE if role == "technician")
    for path in runs:
        operator = tomllib.loads(path.read_text(encoding="utf-8")).get("info", {}).get("operator")
        author = people.get(operator, people[PEOPLE[1][0]])
        record_run(
            session, author, _upload(path, AnalysisOptions(monte_carlo_trials=monte_carlo_trials, seed=20250311))
        )
        _approve_proposals(session, technician)
    _load_class(session, coordinator, course_id, groups, people, demo_dir / "class")
    return demo_sign_ins()


def _people(session: so.Session, password_method: str) -> tuple[Person, int, dict[str, Any], dict[str, Person]]:
    """Create the coordinator, the course, its groups and the other people; return them (course by id)."""
    people: dict[str, Person] = {}
    coordinator_spec = PEOPLE[0]
    coordinator = create_person(
        session,
        email=coordinator_spec[1],
        name=coordinator_spec[0],
        role=coordinator_spec[2],
        password=DEMO_PASSWORD,
        password_method=password_method,
    )
    course = create_course(session, coordinator, name=COURSE[0], term=COURSE[1])
    groups = {}
    for _name, _email, _role, group in PEOPLE:
        if group and group not in groups:
            groups[group] = create_group(session, coordinator, name=group, course_id=course.id)
    people[coordinator_spec[0]] = coordinator
    for name, email, role, group in PEOPLE[1:]:
        people[name] = create_person(
            session,
            email=email,
            name=name,
            role=role,
            password=DEMO_PASSWORD,
            group=groups.get(group) if group else None,
            password_method=password_method,
        )
    return coordinator, course.id, groups, people


def _calorimeters(session: so.Session, coordinator: Person, runs: list[Path]) -> None:
    """Create the calorimeters the demo runs name, and the spare cup with its entered heat capacity."""
    for path in runs:
        cal_name = tomllib.loads(path.read_text(encoding="utf-8")).get("calorimeter", {}).get("name")
        if cal_name and find_calorimeter(session, cal_name) is None:
            create_calorimeter(
                session, coordinator, name=cal_name, location="Tern Hollow, room 3B (invented)", parts=cal_name
            )
    create_calorimeter(
        session,
        coordinator,
        name=SPARE_CUP[0],
        location="Tern Hollow, room 3B (invented)",
        parts="single foam cup, card lid, no stirrer",
        heat_capacity=SPARE_CUP[1],
        measured_on=(utcnow() - dt.timedelta(days=SPARE_CUP[2])).date().isoformat(),
    )


def _upload(path: Path, options: AnalysisOptions, group_id: int | None = None) -> RunUpload:
    """Return a demo run file and the log beside it (same name, ``.csv``) as an upload."""
    csv = path.with_suffix(".csv")
    return RunUpload(
        run_toml=path.read_text(encoding="utf-8"),
        run_file_name=path.name,
        readings=csv.read_bytes(),
        readings_name=csv.name,
        group_id=group_id,
        options=options,
    )


def _approve_proposals(session: so.Session, technician: Person) -> None:
    """The technician approves the students' calibrations (measured on their runs' dates), as in the lab."""
    from webapp.services.calibrations import approve_calibration

    for cal_id in session.scalars(sa.select(Calibration.id).where(Calibration.status == "proposed")).all():
        approve_calibration(session, technician, cal_id, confirm=True)


def _load_class(
    session: so.Session,
    coordinator: Person,
    course_id: int,
    groups: dict[str, Any],
    people: dict[str, Person],
    class_dir: Path,
) -> None:
    """Put the groups into the course's two sections and record the class practical's runs.

    The class runs are analyzed without the Monte Carlo check, as a bulk import does; staff
    comments are added and the run with a typing slip is excluded from the statistics.
    """
    from webapp.services.classes import create_section
    from webapp.services.comments import add_group_comment, add_run_comment
    from webapp.services.review import review_run

    for name, members in SECTIONS:
        section = create_section(session, coordinator, course_id=course_id, name=name)
        for g in members:
            groups[g].section_id = section.id
    session.commit()
    stems: dict[str, int] = {}
    for path in sorted(class_dir.glob("*.toml")):
        info = tomllib.loads(path.read_text(encoding="utf-8")).get("info", {})
        author = people.get(info.get("operator"), coordinator)
        run = record_run(
            session, author, _upload(path, AnalysisOptions(monte_carlo_trials=0), groups[info["group"]].id)
        )
        stems[path.stem] = run.id
    for target, text in COMMENTS:
        if target in groups:
            add_group_comment(session, coordinator, groups[target].id, text)
        elif target in stems:
            add_run_comment(session, coordinator, stems[target], text)
    if EXCLUDED[0] in stems:
        review_run(session, coordinator, stems[EXCLUDED[0]], "exclude", EXCLUDED[1])


def _kind(path: Path) -> str:
    return str(tomllib.loads(path.read_text(encoding="utf-8")).get("kind", ""))
