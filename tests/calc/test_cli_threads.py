"""`cupcal` asks numpy's and scipy's BLAS for one thread unless the user chose a number (issue 14).

OpenBLAS reads OPENBLAS_NUM_THREADS, then GOTO_NUM_THREADS, then OMP_NUM_THREADS when it loads and
starts that many threads less one (OpenBLAS's documented variables; the thread count is
common practice, no source). The process's threads are counted in /proc (Linux).
"""

from __future__ import annotations

import os
import subprocess
import sys
from pathlib import Path

import pytest

from calc.cli.commands import BLAS_THREAD_VARIABLES, single_threaded_blas


def test_one_thread_is_asked_for_only_when_the_user_chose_none():
    env: dict[str, str] = {"PATH": "/usr/bin"}
    single_threaded_blas(env)
    assert env == {"PATH": "/usr/bin", "OPENBLAS_NUM_THREADS": "1"}
    for name in BLAS_THREAD_VARIABLES:
        chosen = {name: "3"}
        single_threaded_blas(chosen)
        assert chosen == {name: "3"}


# the command runs, then the process counts its own threads with numpy and scipy.special loaded
_COUNT_THREADS = """
import os, sys
sys.argv = ["cupcal", "methods"]
from calc.cli.commands import main
try:
    main()
except SystemExit:
    pass
import numpy, scipy.special
print(len(os.listdir("/proc/self/task")))
"""


def _threads(**chosen: str) -> int:
    env = {k: v for k, v in os.environ.items() if k not in BLAS_THREAD_VARIABLES} | chosen
    out = subprocess.run([sys.executable, "-c", _COUNT_THREADS], env=env, capture_output=True, text=True, check=True)
    return int(out.stdout.split()[-1])


@pytest.mark.skipif(not Path("/proc/self/task").is_dir() or (os.cpu_count() or 1) < 2, reason="needs Linux, 2 CPUs")
def test_command_line_starts_no_blas_threads_unless_asked():
    assert _threads() < _threads(OPENBLAS_NUM_THREADS="2")
