"""Generated hostile command lines for ``cupcal`` (hypothesis): the demo run files with fields replaced by
hostile values, paths outside the folder, devices, NUL bytes and hostile options.

Used by ``tests/calc/test_cli_fuzz.py`` (a sample in the default run) and
``tests/benchmarks/test_fuzz.py`` (2,000 invocations).
"""

from __future__ import annotations

import re
import tempfile
from pathlib import Path
from typing import Any

from click.testing import CliRunner
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from calc.cli.commands import cli
from tests.calc.plan_args import CUP_AND_PROBE, KCL_SOLUTE

DEMO = Path(__file__).resolve().parents[2] / "fixtures" / "demo"
NAMES = ["diss-kcl-01", "neut-hcl-naoh-01", "cal-electrical-01", "react-mg-hcl-01", "cal-mixing-01"]

_VALUES = [
    '"1e308 g"',
    '"1e-320 g"',
    '"-5 g"',
    '"nan g"',
    '"inf mL"',
    "1e308",
    "-1",
    "0",
    "1e30",
    "9" * 5000,
    '"' + "9" * 5000 + ' g"',
    '"K999999999999999999999Cl"',
    '"yesterday"',
    '"2025-13-45"',
    "[" * 3000 + "]" * 3000,
    "[1, 2]",
    "{a = 1}",
    "true",
    '"٣ g"',
    '"3 ± 1e308 g"',
    '"3 ± -1 g"',
    '"3 kg"',
    '"3 mL"',
    '""',
    '"' + "x" * 500 + '"',
    "2025-03-13",
    "12:00:00",
    '"0.000000001 K"',
    '"100 K"',
    '"5000 degC"',
]
_READINGS = [
    '"../../../../../etc/passwd"',
    '"/dev/zero"',
    '"/etc/passwd"',
    '"."',
    '"a\\u0000b"',
    '""',
    '"nope.csv"',
    '"sub/../../x.csv"',
    '"big.csv"',
    '"longcell.csv"',
    '"link.csv"',
]
_OPTIONS = [
    [],
    ["--seed", "-1"],
    ["--seed", str(2**70)],
    ["--seed", "abc"],
    ["--monte-carlo", "-5"],
    ["--monte-carlo", "1000000000"],
    ["--monte-carlo", "10"],
    ["--method", "nope"],
    ["--json"],
    ["--seed", "1", "--monte-carlo", "0"],
]
_PLAN = [
    "--resolution",
    "--noise",
    "--calorimeter",
    "--mass",
    "--water",
    "--temperature",
    "--interval",
    "--fore",
    "--after",
    "--release-time",
    "--probe-time",
    "--enthalpy",
    "--min-change",
    "--max-change",
    "--noise-correlation",
    "--balance",
    "--glassware",
]
_PLAN_VALUES = [
    "0.000001 K",
    "5 K",
    "1000 K",
    "1e308 K",
    "1e-320 K",
    "-1 K",
    "nan",
    "abc",
    "0",
    "1e308",
    "٣",
    "9" * 5000,
    "3 g",
    "1e308 g",
    "100 mL",
    "0.5",
    "2",
    "18 ± 2 J/K",
    "",
]


def _folder() -> Path:
    d = Path(tempfile.mkdtemp(prefix="cupcal-cli-fuzz-"))
    for name in NAMES:
        for suffix in (".toml", ".csv"):
            (d / f"{name}{suffix}").write_bytes((DEMO / f"{name}{suffix}").read_bytes())
    (d / "big.csv").write_bytes(b"time_s,temperature_C\n" + b"0,20\n" * 1_200_000)  # over readings_bytes
    (d / "longcell.csv").write_text("time_s,temperature_C\n0," + "2" * 100_000 + "\n", encoding="utf-8")
    (d / "link.csv").symlink_to("/dev/zero")
    return d


@st.composite
def analyze_args(draw: Any, folder: Path) -> list[str]:
    name = draw(st.sampled_from(NAMES))
    text = (folder / f"{name}.toml").read_text(encoding="utf-8")
    lines = text.splitlines()
    for _ in range(draw(st.integers(0, 3))):
        idx = [i for i, line in enumerate(lines) if re.match(r"^\w+ = ", line)]
        i = draw(st.sampled_from(idx))
        key = lines[i].split(" = ", 1)[0]
        value = draw(st.sampled_from(_READINGS)) if key == "readings" else draw(st.sampled_from(_VALUES))
        lines[i] = f"{key} = {value}"
    path = folder / f"fuzz-{draw(st.integers(0, 9))}.toml"
    path.write_text("\n".join(lines) + "\n", encoding="utf-8")
    target = draw(
        st.sampled_from(
            [
                str(path),
                str(path),
                str(path),
                str(folder),
                "/dev/zero",
                "a\x00b",
                str(folder / "missing.toml"),
                "x" * 5000,
            ]
        )
    )
    opts = draw(st.sampled_from(_OPTIONS))
    if "--monte-carlo" not in opts:
        opts = [*opts, "--monte-carlo", "0"]
    return ["analyze", target, *opts]


@st.composite
def plan_args(draw: Any) -> list[str]:
    args = [
        "plan",
        draw(st.sampled_from(["dissolution", "neutralization"])),
        *KCL_SOLUTE,
        "--acid",
        "HCl",
        "--base",
        "NaOH",
        "--acid-concentration",
        "1 mol/L",
        "--base-concentration",
        "1 mol/L",
        "--acid-volume",
        "50 mL",
        "--base-volume",
        "50 mL",
        *CUP_AND_PROBE,
    ]
    for _ in range(draw(st.integers(1, 3))):
        args += [draw(st.sampled_from(_PLAN)), draw(st.sampled_from(_PLAN_VALUES))]
    return args


hess_args = st.builds(
    lambda t: ["hess", t],
    st.sampled_from(
        [
            "KCl(s) -> K+(aq) + Cl-(aq)",
            "",
            "->",
            "K999999999999999999999Cl(s) -> K+(aq)",
            "(" * 3000,
            "H+(aq) + OH-(aq) -> H2O(l)",
            "٣ H2O(l) -> ٣ H2O(l)",
            "x" * 5000,
        ]
    ),
)


def fuzz_cli(examples: int) -> tuple[int, list[str]]:
    """Run ``examples`` generated invocations; return (count, the ones with an internal error)."""
    folder = _folder()
    runner = CliRunner()
    internal: list[str] = []
    count = [0]

    @settings(
        max_examples=examples, deadline=None, derandomize=True, database=None, suppress_health_check=list(HealthCheck)
    )
    @given(st.one_of(analyze_args(folder), analyze_args(folder), plan_args(), hess_args))
    def one(args: list[str]) -> None:
        result = runner.invoke(cli, args, catch_exceptions=True)
        count[0] += 1
        out = result.output
        escaped = result.exception is not None and not isinstance(result.exception, SystemExit)
        if escaped or "internal error" in out or result.exit_code not in (0, 2):
            internal.append(
                f"exit {result.exit_code} {[a[:80] for a in args]}: {(out or repr(result.exception))[-300:]}"
            )

    one()
    return count[0], internal
