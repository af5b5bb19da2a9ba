"""The ``planning`` blueprint object and what the routes share; the routes live beside it."""

from __future__ import annotations

from flask import Blueprint

bp = Blueprint("planning", __name__)
