"""The wheel carries everything the notebook needs at run time, migrations included.

Built with pip from this checkout (no download beyond the build requirements pip already
caches), unpacked, and used from a folder outside the repository: `cupcal db upgrade` must find
the migrations inside the package (webapp/_migrations, copied by setup.py), not beside it.
"""

from __future__ import annotations

import subprocess
import sys
import zipfile
from pathlib import Path

ROOT = Path(__file__).resolve().parents[2]

SCRIPT = """
import sys
sys.path.insert(0, {site!r})
import webapp.migrate as m
assert m.__file__.startswith({site!r}), m.__file__
assert m.MIGRATIONS_DIR == __import__("pathlib").Path({site!r}) / "webapp" / "_migrations", m.MIGRATIONS_DIR
m.upgrade({url!r})
print(m.current_revision({url!r}), m.head_revision())
"""


def test_the_wheel_carries_the_migrations_and_data(tmp_path: Path) -> None:
    done = subprocess.run(
        [sys.executable, "-m", "pip", "wheel", "--no-deps", "-q", "-w", str(tmp_path), str(ROOT)],
        capture_output=True,
        text=True,
        timeout=600,
    )
    assert done.returncode == 0, done.stderr
    wheel = next(tmp_path.glob("cupcal-*.whl"))
    names = set(zipfile.ZipFile(wheel).namelist())
    versions = sorted(p.name for p in (ROOT / "migrations" / "versions").glob("*.py"))
    assert {"webapp/_migrations/env.py", "webapp/_migrations/script.py.mako"} <= names
    assert {f"webapp/_migrations/versions/{v}" for v in versions} <= names
    assert any(n.startswith("calc/refdata/data/") for n in names) and any(
        n.startswith("webapp/templates/") for n in names
    )

    site = tmp_path / "site"
    zipfile.ZipFile(wheel).extractall(site)
    url = f"sqlite:///{tmp_path / 'fresh.sqlite3'}"
    run = subprocess.run(
        [sys.executable, "-c", SCRIPT.format(site=str(site), url=url)],
        cwd=tmp_path,
        capture_output=True,
        text=True,
        timeout=120,
    )
    assert run.returncode == 0, run.stderr
    current, head = run.stdout.split()
    assert current == head
