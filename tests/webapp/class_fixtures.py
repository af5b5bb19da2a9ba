"""Shared helpers of the class tests: a section with groups, and simulated runs written to a folder.

The runs are simulated (calc.simulation.simulator, invented data); their files are written once per test
process and reused.
"""

from __future__ import annotations

import io
import shutil
import zipfile
from dataclasses import dataclass
from pathlib import Path
from typing import Any

import numpy as np

from calc.simulation.simulator import simulate_dissolution, write_run

ROSTER = (
    "course,section,group,name,email,role\n"
    "Thermo Lab,Mon AM,M01,Ada Quillfeather,ada@lab.example,student\n"
    "Thermo Lab,Mon AM,M02,Bo Tindlewick,bo@lab.example,student\n"
    "Thermo Lab,Mon AM,M03,Cy Ambervale,cy@lab.example,student\n"
    "Thermo Lab,Mon AM,M04,Di Fernsworth,di@lab.example,student\n"
    "Thermo Lab,Tue PM,T01,Ed Lowmarsh,ed@lab.example,student\n"
)
_CACHE: dict[tuple[Any, ...], Path] = {}


def simulated_run(folder: Path, stem: str, seed: int, **kw: Any) -> Path:
    """Write a simulated KCl dissolution run ``stem.toml``/``stem.csv`` into ``folder`` (cached by arguments)."""
    key = (stem, seed, tuple(sorted(kw.items())))
    if key not in _CACHE:
        import tempfile

        d = Path(tempfile.mkdtemp(prefix="cupcal-sim-"))
        opts = {"c_cal": 15.0, "noise": 0.003, "fore_s": 240.0, "after_s": 600.0, "dt": 2.0, **kw}
        write_run(simulate_dissolution(np.random.default_rng(seed), **opts), d, stem)
        _CACHE[key] = d
    folder.mkdir(parents=True, exist_ok=True)
    for suffix in (".toml", ".csv"):
        shutil.copyfile(_CACHE[key] / f"{stem}{suffix}", folder / f"{stem}{suffix}")
    return folder / f"{stem}.toml"


def zip_folder(folder: Path) -> bytes:
    """Return a zip of every file under ``folder`` (relative paths)."""
    buf = io.BytesIO()
    with zipfile.ZipFile(buf, "w", zipfile.ZIP_DEFLATED) as zf:
        for p in sorted(folder.rglob("*")):
            if p.is_file():
                zf.write(p, p.relative_to(folder).as_posix())
    return buf.getvalue()


@dataclass
class ClassLab:
    """A course with two sections (ids) from the test roster."""

    section_id: int
    other_section_id: int
    course_id: int


def make_class(session: Any, coordinator_id: int) -> ClassLab:
    """Import the test roster as the coordinator and return the ids."""
    import sqlalchemy as sa

    from tests.webapp.conftest import FAST_HASH
    from webapp.models import Person, Section
    from webapp.services.classes import import_roster

    coord = session.get(Person, coordinator_id)
    import_roster(session, coord, ROSTER, password_method=FAST_HASH)
    mon = session.scalar(sa.select(Section).where(Section.name == "Mon AM"))
    tue = session.scalar(sa.select(Section).where(Section.name == "Tue PM"))
    return ClassLab(mon.id, tue.id, mon.course_id)


def build_section(session: Any, lab: Any, tmp_path: Path) -> Any:
    """Import a crafted section: 6 ordinary KCl runs, one with ΔH far off, one with a tiny ΔT.

    Shared by the dashboard tests.
    """
    cl = make_class(session, lab.ids["coord"])
    d = tmp_path / "crafted"
    for i, g in enumerate(["M01", "M01", "M02", "M02", "M03", "M03"]):
        simulated_run(d, f"{g}-run{i}", 100 + i, calorimeter_name="Spare cup" if i == 0 else "simulated cup")
    # a Grubbs outlier among 17.2 kJ/mol, yet within the 15 % the ΔT plausibility check allows
    simulated_run(d, "M04-far", 200, molar_enthalpy_kJ_mol=19.0)
    simulated_run(d, "M04-tiny", 201, solute_mass_g=0.40, resolution=0.05)  # |ΔT| ≈ 0.3 K < 10 × 0.05 K
    from webapp.models import Person
    from webapp.services.imports import files_from_folder, import_files

    report = import_files(session, session.get(Person, lab.ids["coord"]), cl.section_id, files_from_folder(d))
    assert report.count("stored") == 8, report.as_dict()
    return cl, {i.file: i.run_id for i in report.items}
