"""Reading request parameters; every problem is an Invalid naming the field."""

from __future__ import annotations

import functools
import math
from collections.abc import Callable
from typing import Any, TypeVar

from flask import current_app, g, request

from calc import limits
from calc.errors import InputError
from calc.limits import require_number
from webapp.models import MAX_ID, Person
from webapp.services.access import require_coordinator
from webapp.services.analysis import AnalysisOptions
from webapp.services.errors import Invalid
from webapp.services.jsontext import (
    checked_json,  # noqa: F401  (used by the views)
    load_json,
)

_View = TypeVar("_View", bound=Callable[..., Any])


def expected_version(data: dict[str, Any] | None = None, *, required: bool = False) -> int | None:
    """Return the version a write is based on: the ``If-Match`` header (``"3"``, ``W/"3"``), else
    ``version`` in the JSON body (removed from ``data``). ``If-Match: *`` names none on purpose.

    :raise VersionRequired: (428) when ``required`` and neither is given
    :raise Invalid: for a version that is not a whole number, or two that disagree
    """
    from webapp.services.errors import VersionRequired

    header = request.headers.get("If-Match")
    body_version = data.pop("version", None) if isinstance(data, dict) else None
    version: int | None = None
    if header is not None:
        tags = [t.strip() for t in header.split(",") if t.strip()]
        if tags == ["*"]:
            return None
        if len(tags) != 1:
            raise Invalid('expected one version in If-Match, like "3"', field="If-Match")
        tag = tags[0][2:] if tags[0].startswith("W/") else tags[0]
        version = as_int(tag.strip('"'), "If-Match", low=1, high=2**31 - 1)
    if body_version is not None:
        from_body = as_int(body_version, "version", low=1, high=2**31 - 1)
        if version is not None and from_body != version:
            raise Invalid(f"If-Match names version {version} but the body version {from_body}", field="version")
        version = from_body
    if version is None and required:
        raise VersionRequired(
            "say which version you change: send the ETag you read as If-Match "
            '(or "version" in the body); If-Match: * overwrites whatever is stored',
            field="If-Match",
        )
    return version


def actor() -> Person:
    """Return the person calling the API."""
    return g.api_person


def coordinators_only(what: str) -> Callable[[_View], _View]:
    """Refuse (403) anyone but a coordinator before the request body is read.

    The service checks the role again; this makes the refusal the same whatever the body holds
    (a student sending an empty body is told they may not, not what the body lacks).
    """

    def wrap(view: _View) -> _View:
        @functools.wraps(view)
        def checked(*args: Any, **kwargs: Any) -> Any:
            require_coordinator(actor(), what)
            return view(*args, **kwargs)

        return checked  # type: ignore[return-value]

    return wrap


def json_object() -> dict[str, Any]:
    """Return the JSON object of the request body."""
    data = load_json(request.get_data(cache=True)) if request.is_json else None
    if not isinstance(data, dict):
        raise Invalid("expected a JSON object in the request body (Content-Type: application/json)", field="body")
    return data


def body() -> dict[str, Any]:
    """Return the parameters of a JSON body or a form (multipart or urlencoded)."""
    if request.is_json:
        return json_object()
    return {k: v for k, v in request.form.items()}


def as_int(value: Any, field: str, *, low: int | None = None, high: int | None = None) -> int | None:
    """Return ``value`` as an int (None stays None; text is parsed); a field named ``*_id`` must hold an id."""
    if value is None or value == "":
        return None
    if isinstance(value, bool):
        raise Invalid("expected a whole number", field=field)
    if isinstance(value, str):
        text = value.strip()
        if not (text.isascii() and text.lstrip("+-").isdigit()) or len(text) > limits.get("number_digits"):
            raise Invalid(
                f"expected a whole number (digits 0-9, at most {limits.get('number_digits'):g}), "
                f"got {limits.shorten(repr(value))}",
                field=field,
            )
        value = int(text)
    if isinstance(value, float) and math.isfinite(value) and value.is_integer():
        value = int(value)
    if not isinstance(value, int):
        raise Invalid("expected a whole number", field=field)
    shown = value if abs(value) < 10**30 else "a number of more than 30 digits"
    if (low is not None and value < low) or (high is not None and value > high):
        raise Invalid(f"expected a number from {low} to {high}, got {shown}", field=field)
    if field.endswith("_id") and not 0 < value <= MAX_ID:
        raise Invalid(f"expected an id from 1 to {MAX_ID}, got {shown}", field=field)
    return value


def as_float(value: Any, field: str) -> float | None:
    """Return ``value`` as a finite float (None stays None)."""
    if value is None or value == "":
        return None
    if isinstance(value, str):
        text = value.strip()
        if not text.isascii() or len(text) > limits.get("number_digits"):
            raise Invalid(f"expected a number, got {limits.shorten(repr(value))}", field=field)
        try:
            value = float(text)
        except ValueError:
            raise Invalid(f"expected a number, got {limits.shorten(repr(value))}", field=field) from None
    try:
        return require_number(value, "expected a finite number", field=field)
    except InputError as exc:
        raise Invalid(exc.message, field=field) from None


def as_text(value: Any, field: str, *, required: bool = False) -> str | None:
    """Return ``value`` as text."""
    if value is None:
        if required:
            raise Invalid("missing", field=field)
        return None
    if not isinstance(value, str):
        raise Invalid("expected text", field=field)
    if required and not value.strip():
        raise Invalid("must not be empty", field=field)
    return value


def period(data: dict[str, Any], which: str) -> tuple[float, float] | None:
    """Return a period given as ``[a, b]`` or as ``<which>_start``/``<which>_end`` (seconds)."""
    value = data.get(which)
    if value is not None:
        if not isinstance(value, (list, tuple)) or len(value) != 2:
            raise Invalid("expected two times in seconds, like [0, 170]", field=which)
        a, b = as_float(value[0], which), as_float(value[1], which)
    else:
        a, b = (
            as_float(data.get(f"{which}_start"), f"{which}_start"),
            as_float(data.get(f"{which}_end"), f"{which}_end"),
        )
        if a is None and b is None:
            return None
    if a is None or b is None:
        raise Invalid("give both ends of the period, in seconds", field=which)
    return (a, b)


def analysis_options(data: dict[str, Any]) -> AnalysisOptions:
    """Return the analysis options of a request (method, fore, after, monte_carlo, seed)."""
    trials = as_int(data.get("monte_carlo"), "monte_carlo", low=0, high=int(limits.get("monte_carlo_trials")))
    return AnalysisOptions(
        method=as_text(data.get("method"), "method") or None,
        fore=period(data, "fore"),
        after=period(data, "after"),
        monte_carlo_trials=int(current_app.config["MONTE_CARLO_TRIALS"]) if trials is None else trials,
        seed=as_int(data.get("seed"), "seed", low=0, high=2**32 - 1),
        mixing_time=_mixing_time(data),
    ).checked()


def _mixing_time(data: dict[str, Any]) -> tuple[float, float] | None:
    """Return (mixing time, standard uncertainty) in s from ``mixing_time`` (a number or [value, u])."""
    raw = data.get("mixing_time")
    if raw is None:
        return None
    if isinstance(raw, bool) or not isinstance(raw, (int, float, list)):
        raise Invalid("expected the mixing time in seconds, like 180 or [180, 1]", field="mixing_time")
    if isinstance(raw, list):
        if len(raw) != 2 or not all(isinstance(x, (int, float)) and not isinstance(x, bool) for x in raw):
            raise Invalid("expected the mixing time in seconds, like 180 or [180, 1]", field="mixing_time")
        return float(raw[0]), float(raw[1])
    return float(raw), 1.0


def page_args() -> tuple[int, int]:
    """Return (page, per_page) from the query string."""
    page = as_int(request.args.get("page"), "page", low=1, high=10**9) or 1
    limit = int(current_app.config["API_MAX_PAGE_SIZE"])
    per_page = as_int(request.args.get("per_page"), "per_page", low=1, high=limit)
    return page, per_page or int(current_app.config["API_PAGE_SIZE"])
