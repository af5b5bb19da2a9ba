"""Command-line fuzzing (hypothesis): no number, path or option gives an "internal error".

``cupcal analyze`` is run on demo run files whose fields are replaced by hostile values (huge,
tiny, non-finite, wrong types, deep nesting, 5000 digits), whose ``readings`` points outside the
folder, at a device, a directory or a NUL byte, with hostile options (``--seed -1``, 10⁹ trials);
``cupcal plan`` and ``cupcal hess`` get hostile option values. Every invocation must end with
status 0 or 2 and never print "internal error" or raise. The benchmark tests/benchmarks/test_fuzz.py
runs 2,000 invocations; the default run a derandomised sample.
"""

from __future__ import annotations

from tests.calc.cli_fuzzing import fuzz_cli


def test_hostile_command_lines_give_no_internal_error() -> None:
    count, internal = fuzz_cli(150)
    assert count >= 100
    assert not internal, "\n".join(internal[:10])
