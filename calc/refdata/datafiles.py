"""Open the data files shipped in calc/refdata/data/ as text for the csv module (UTF-8, newline="")."""

from __future__ import annotations

import io
from importlib import resources
from typing import TextIO


def open_data(name: str) -> TextIO:
    """Return ``calc/refdata/data/<name>`` opened for reading as UTF-8 text with csv's ``newline=""``.

    The package resource is opened in binary and wrapped, because a resource need not be a plain file
    (a zip import), and only ``open("rb")`` is promised for every kind of resource.
    """
    raw = (resources.files("calc.refdata") / "data" / name).open("rb")
    return io.TextIOWrapper(raw, encoding="utf-8", newline="")
