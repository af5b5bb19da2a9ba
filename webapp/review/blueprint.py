"""The ``review`` blueprint object; the routes live beside it."""

from __future__ import annotations

from flask import Blueprint

bp = Blueprint("review", __name__)
