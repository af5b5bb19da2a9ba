"""Cells that are safe in a spreadsheet.

Cells that a spreadsheet would run as a formula (text starting with ``=``, ``+``, ``-``, ``@``,
a tab or a carriage return) get a leading apostrophe (OWASP "CSV injection"); numbers are
written as numbers.
"""

from __future__ import annotations

from typing import Any

_DANGEROUS = ("=", "+", "-", "@", "\t", "\r")


def neutralise(value: Any) -> Any:
    """Return ``value`` safe for a spreadsheet: text that starts like a formula gets a leading apostrophe."""
    if isinstance(value, str) and value.startswith(_DANGEROUS):
        return "'" + value
    return value


def csv_cell(v: Any) -> Any:
    """Return ``v`` as a CSV cell: None empty, floats exactly (``repr``), text neutralised."""
    if v is None:
        return ""
    if isinstance(v, float):
        return repr(v)
    return neutralise(v) if isinstance(v, str) else v
