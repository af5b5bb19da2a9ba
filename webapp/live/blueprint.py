"""The ``live`` blueprint object; the routes live beside it."""

from __future__ import annotations

from flask import Blueprint

bp = Blueprint("live", __name__)
