"""Live run pages: one run growing as it records (``/live/<id>``), the list (``/live/``), and a
section's room view for the coordinator (``/classes/sections/<id>/live``); updates by Server-Sent
Events, with a JSON poll when a browser cannot keep a stream."""

from __future__ import annotations

from webapp.live import (
    room,  # noqa: F401
    views,  # noqa: F401  (registers the routes)
)
from webapp.live.blueprint import bp

__all__ = ["bp"]
