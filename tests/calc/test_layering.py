"""calc/ is a leaf package: importing it never pulls in the web or database layers."""

from __future__ import annotations

import subprocess
import sys


def test_calc_imports_no_web_or_database_code():
    code = (
        "import sys, calc.cli.main, calc.analysis, calc.simulation.simulator, calc.report\n"
        "bad = [m for m in ('flask', 'sqlalchemy', 'alembic', 'webapp') if m in sys.modules]\n"
        "print(','.join(bad))\n"
    )
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True)
    assert out.stdout.strip() == ""


def test_demo_runs_analyse_without_error():
    # `make run` analyses these; they must all work (invented demo data, see fixtures/demo/README.md)
    from pathlib import Path

    from calc.analysis import analyze_run

    runs = sorted(Path(__file__).resolve().parents[2].joinpath("fixtures", "demo").glob("*.toml"))
    assert len(runs) >= 6
    for path in runs:
        a = analyze_run(path)
        assert a.gum.expanded_uncertainty > 0
