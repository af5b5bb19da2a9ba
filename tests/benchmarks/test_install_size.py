"""Install size of ``pip install cupcal`` without extras: the calculation library and the command line.

Figure to reach (issue 14): a fresh virtual environment holding cupcal and its base dependencies takes at
most 300 MB on disk, and in it ``import calc`` and ``calc.analyze_run`` of a demo run work while the web
notebook's libraries (flask, sqlalchemy) are absent. The project is installed from a copy of the source
tree (non-editable, so nothing is built inside the working tree); pip's download cache may be used.
The size is the disk usage of the whole venv (allocated blocks, as ``du`` counts them), interpreter
links, pip and setuptools included; the largest distributions are printed beside it.

Measured once (2026-12-05, Python 3.11, this 2-core machine, pip's cache warm): 267.1 MB, of which
scipy 118.2 MB + scipy.libs 30.9 MB, numpy 46.9 MB + numpy.libs 28.5 MB, pip 16.9 MB, setuptools 7.0 MB,
pint 3.4 MB, webapp 3.4 MB (its code ships in the base wheel; its libraries do not); 185 s in all.
"""

from __future__ import annotations

import json
import os
import shutil
import subprocess
import sys
import venv
from pathlib import Path

ROOT = Path(__file__).resolve().parents[2]
LIMIT_MB = 300.0
DEMO_RUN = "fixtures/demo/diss-kcl-01.toml"
#: what is not part of the source distribution (checkouts, caches, local databases)
_NOT_SOURCE = shutil.ignore_patterns(
    ".git",
    ".venv",
    "venv",
    "instance",
    "build",
    "dist",
    "*.egg-info",
    "__pycache__",
    ".pytest_cache",
    ".mypy_cache",
    ".ruff_cache",
    "node_modules",
)

_CHECK = """
import importlib.util, json, sys
import calc
analysis = calc.analyze_run(sys.argv[1])
value, u, unit = analysis.value(analysis.main)
print(json.dumps({"calc": calc.__file__, "result": [analysis.main, value, u, unit],
                  "flask": importlib.util.find_spec("flask") is not None,
                  "sqlalchemy": importlib.util.find_spec("sqlalchemy") is not None}))
"""


def _disk_usage(path: Path) -> int:
    """Return the bytes allocated to the files below ``path`` (each inode counted once)."""
    seen, total = set(), 0
    for dirpath, _dirs, files in os.walk(path):
        for name in [*files, "."]:
            st = os.lstat(os.path.join(dirpath, name))
            if (st.st_dev, st.st_ino) not in seen:
                seen.add((st.st_dev, st.st_ino))
                total += st.st_blocks * 512
    return total


def _site_packages(env: Path) -> Path:
    return next(env.glob("lib/python*/site-packages"))


def _largest(site: Path, n: int = 8) -> list[tuple[str, float]]:
    sizes = [(p.name, _disk_usage(p) / 1e6) for p in site.iterdir() if p.is_dir() and not p.name.endswith("-info")]
    return sorted(sizes, key=lambda s: -s[1])[:n]


def _run(cmd: list[str], **kwargs) -> subprocess.CompletedProcess:
    env = {k: v for k, v in os.environ.items() if k not in ("PYTHONPATH", "PYTHONHOME", "VIRTUAL_ENV")}
    done = subprocess.run(cmd, env=env, capture_output=True, text=True, **kwargs)
    assert done.returncode == 0, f"{' '.join(cmd[:4])} … failed:\n{done.stderr[-3000:]}"
    return done


def test_base_install_is_small_and_has_no_web_libraries(tmp_path: Path) -> None:
    source = tmp_path / "src"
    shutil.copytree(ROOT, source, ignore=_NOT_SOURCE)
    env = tmp_path / "venv"
    venv.EnvBuilder(with_pip=True, symlinks=True).create(env)
    python = str(env / "bin" / "python")
    _run([python, "-m", "pip", "install", "--quiet", "--disable-pip-version-check", str(source)], timeout=1800)

    check = json.loads(_run([python, "-c", _CHECK, str(ROOT / DEMO_RUN)], cwd=tmp_path, timeout=300).stdout)
    size_mb = _disk_usage(env) / 1e6
    site = _site_packages(env)
    print(
        f"\nbase install (Python {sys.version_info.major}.{sys.version_info.minor}): venv {size_mb:.1f} MB on "
        f"disk, site-packages {_disk_usage(site) / 1e6:.1f} MB; largest: "
        + ", ".join(f"{name} {mb:.1f} MB" for name, mb in _largest(site))
    )
    main, value, u, unit = check["result"]
    print(f"analyze_run({DEMO_RUN}) in the venv: {main} = {value:.3f} (u {u:.3f}) {unit}")

    assert Path(check["calc"]).resolve().is_relative_to(site.resolve()), "calc was imported from outside the venv"
    # KCl dissolves endothermically, ΔsolH° = +17.2 kJ/mol at infinite dilution (CRC Handbook, from memory)
    assert main == "molar_enthalpy" and unit == "kJ/mol" and 15.0 < value < 20.0 and 0 < u < 1.0
    assert not check["flask"] and not check["sqlalchemy"], "a base install must not bring the web libraries"
    assert size_mb <= LIMIT_MB, f"the base install takes {size_mb:.1f} MB, over {LIMIT_MB:.0f} MB"
