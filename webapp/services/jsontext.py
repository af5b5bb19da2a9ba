"""JSON from callers: parsed with every failure as an Invalid that names the field.

Nesting deeper than the limit ``json_depth`` (calc.limits) is refused, and so is text holding
NUL (PostgreSQL cannot store it) or text that is not Unicode (a lone surrogate such as ``"\\ud800"`` is valid JSON but cannot be encoded as
UTF-8, so it could be neither stored nor shown).
"""

from __future__ import annotations

import json
from typing import Any

from calc import limits
from webapp.services.errors import Invalid


def checked_json(data: Any, where: str = "body") -> Any:
    """Return parsed JSON after refusing nesting deeper than the limit ``json_depth`` and text that is
    not Unicode (a lone surrogate such as ``"\\ud800"`` cannot be stored or encoded), naming the field."""
    depth_limit = int(limits.get("json_depth"))
    stack: list[tuple[Any, str, int]] = [(data, where, 0)]
    while stack:
        item, path, depth = stack.pop()
        if depth > depth_limit:
            raise Invalid(f"nested deeper than the limit json_depth = {depth_limit} levels", field=path)
        if isinstance(item, str):
            _unicode(item, path)
        elif isinstance(item, dict):
            for key, value in item.items():
                _unicode(key, path)
                name = limits.shorten(key)
                stack.append((value, name if path == "body" else f"{path}.{name}", depth + 1))
        elif isinstance(item, list):
            stack.extend((value, path, depth + 1) for value in item)
    return data


def required_text(value: object, *, field: str, missing: str, what: str, limit: int) -> str:
    """Return ``value`` with the white space around it stripped.

    :raise Invalid: naming ``field``: with ``missing`` when it is not text or is blank; when it is longer
        than ``limit`` characters, saying that ``what`` is too long and by how much
    """
    if not isinstance(value, str) or not value.strip():
        raise Invalid(missing, field=field)
    text = value.strip()
    if len(text) > limit:
        raise Invalid(f"{what} is too long: at most {limit} characters (it has {len(text)})", field=field)
    return text


def _unicode(text: str, field: str) -> None:
    try:
        text.encode("utf-8")
    except UnicodeEncodeError as exc:
        raise Invalid(f"character {exc.start + 1} is a lone surrogate, not Unicode text", field=field) from None
    if "\x00" in text:  # PostgreSQL cannot store it in text, and no field of ours needs it
        raise Invalid(f"character {text.index(chr(0)) + 1} is NUL (U+0000), which text may not hold", field=field)


def refuse_nul_in_form(values: Any) -> None:
    """Refuse (400) a form or query value holding NUL (U+0000), naming the field."""
    for name, value in values.items(multi=True):
        name = name if isinstance(name, str) else ""  # a multipart part may come with no name at all
        if "\x00" in name or (isinstance(value, str) and "\x00" in value):
            raise Invalid("NUL (U+0000) is not allowed in text", field=limits.shorten(name.replace("\x00", "?")))


def load_json(raw: bytes | str, field: str = "body") -> Any:
    """Parse JSON text from a caller; every failure (syntax, nesting, a 5000-digit number) is an Invalid."""
    try:
        data = json.loads(raw)
    except RecursionError:
        raise Invalid(
            f"nested deeper than the limit json_depth = {limits.get('json_depth'):g} levels", field=field
        ) from None
    except (ValueError, UnicodeDecodeError) as exc:  # JSONDecodeError, or an int of over 4300 digits
        raise Invalid(f"not valid JSON: {limits.shorten(str(exc))}", field=field) from None
    return checked_json(data, field)
