"""The services index (``webapp/services/__init__.py``) names every services module, once, and nothing else.

Source of truth: the module files themselves (common practice, no source).
"""

from __future__ import annotations

import re
from pathlib import Path

import webapp.services

SERVICES = Path(webapp.services.__file__).resolve().parent
_ENTRY = re.compile(r"^- ``(\w+)``: \S", re.M)


def _indexed(doc: str) -> list[str]:
    return _ENTRY.findall(doc)


def test_the_index_is_read_as_written() -> None:
    assert _indexed("x\n\n- ``runs``: record\n- ``audit``: the trail\nnot - ``a``: b\n") == ["runs", "audit"]


def test_every_services_module_is_in_the_index_once() -> None:
    modules = sorted(p.stem for p in SERVICES.glob("*.py") if p.stem != "__init__")
    indexed = _indexed(webapp.services.__doc__ or "")
    assert len(modules) > 30  # the glob found the package
    assert sorted(set(modules) - set(indexed)) == [], "services modules missing from the index"
    assert sorted(set(indexed) - set(modules)) == [], "the index names modules that do not exist"
    assert len(indexed) == len(set(indexed)), "a module is in the index twice"
