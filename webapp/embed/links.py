"""Signed, expiring links to a run's result card (itsdangerous, keyed by the app's secret).

A link carries the run id and the person who issued it; it is valid for ``max_age`` seconds
and only while that person may still see the run. :data:`clock` is the time source of the
signatures (seconds since the epoch); tests replace it to check expiry.
"""

from __future__ import annotations

import time
from collections.abc import Callable
from typing import Any

from itsdangerous import BadSignature, SignatureExpired, TimestampSigner, URLSafeTimedSerializer

from webapp.services.errors import Forbidden

SALT = "cupcal-embed-link"
#: the time source of the signatures; tests assign another
clock: Callable[[], float] = time.time


class _ClockSigner(TimestampSigner):
    def get_timestamp(self) -> int:
        return int(clock())


def _serializer(secret: str) -> URLSafeTimedSerializer:
    return URLSafeTimedSerializer(secret, salt=SALT, signer=_ClockSigner)


def issue(secret: str, run_id: int, person_id: int) -> str:
    """Return a signed link token for ``run_id`` issued by ``person_id``."""
    return str(_serializer(secret).dumps({"run": run_id, "by": person_id}))


def verify(secret: str, token: str, run_id: int, max_age: int) -> int:
    """Return the id of the person who issued ``token`` for ``run_id``.

    :raise Forbidden: when the link is damaged, for another run, or older than ``max_age`` s
    """
    try:
        data: Any = _serializer(secret).loads(token, max_age=max_age)
    except SignatureExpired:
        raise Forbidden("this link has expired; ask for a new one") from None
    except BadSignature:
        raise Forbidden("this link is not valid") from None
    if not isinstance(data, dict) or data.get("run") != run_id or not isinstance(data.get("by"), int):
        raise Forbidden("this link is not valid for this run")
    return int(data["by"])
