"""Adding a person to a test or benchmark notebook: one call a person, with a cheap password hash.

The tests and the benchmarks sign people in; they do not test the hash (tests/webapp/test_auth.py checks the
default cost), so every account made here uses ``FAST_HASH``.
"""

from __future__ import annotations

from typing import Any

#: a cheap scrypt cost for test accounts
FAST_HASH = "scrypt:1024:8:1"


def add_person(
    session: Any,
    email: str,
    name: str,
    role: str,
    *,
    password: str,
    group: Any = None,
    password_method: str = FAST_HASH,
) -> Any:
    """Create and commit a person (webapp.services.people.create_person) and return it."""
    from webapp.services.people import create_person

    return create_person(
        session, email=email, name=name, role=role, password=password, group=group, password_method=password_method
    )
