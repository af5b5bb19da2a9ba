"""The part of a ``*_json`` function that copies attributes under their own names.

Most JSON answers and exports copy a row's or a record's attributes one for one (``"name": b.name``);
:func:`attrs` does that for a list of names, so a ``*_json`` function writes out only the keys that are
renamed or computed. The keys keep the order they are named in.
"""

from __future__ import annotations

from typing import Any


def attrs(obj: object, *names: str) -> dict[str, Any]:
    """Return ``{name: obj.name}`` for each of ``names``, in their order."""
    return {name: getattr(obj, name) for name in names}
