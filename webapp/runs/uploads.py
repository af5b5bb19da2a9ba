"""Files of the new-run forms, kept from the preview to the save without storing anything.

A file chosen in a form is sent once; the preview page carries its bytes on in a hidden
field (zlib, then base64), so "Save" stores exactly the bytes that were previewed, with
no server-side state. A new file chosen in the form replaces the carried one.
"""

from __future__ import annotations

import base64
import binascii
import hashlib
import zlib
from dataclasses import dataclass

from flask import current_app, request

from webapp.services.errors import Invalid


@dataclass(frozen=True)
class Carried:
    """A file as sent: its name and bytes."""

    name: str
    data: bytes

    @property
    def packed(self) -> str:
        """Return the bytes packed for a hidden field."""
        return pack(self.data)


def pack(data: bytes) -> str:
    """Return ``data`` compressed and base64-encoded (ASCII, safe in an attribute)."""
    return base64.b64encode(zlib.compress(data, 6)).decode("ascii")


def unpack(text: str, field: str, limit: int) -> bytes:
    """Return the bytes of a packed field, at most ``limit`` of them.

    :raise Invalid: when the field is not what :func:`pack` wrote, or unpacks too large
    """
    try:
        raw = base64.b64decode(text.encode("ascii"), validate=True)
        inflater = zlib.decompressobj()
        data = inflater.decompress(raw, limit + 1)
    except (ValueError, binascii.Error, zlib.error):
        raise Invalid("the file kept from the preview is damaged; choose the file again", field=field) from None
    if len(data) > limit or inflater.unconsumed_tail:
        raise Invalid(f"the file is larger than the limit of {limit // 1024} KiB", field=field)
    return data


def file_from_request(field: str) -> Carried | None:
    """Return the file sent in ``field``, else the one carried from the preview, else None.

    The carried file comes in ``<field>_packed`` and ``<field>_name``.
    """
    sent = request.files.get(field)
    if sent is not None and sent.filename:
        return Carried(_base_name(sent.filename), sent.read())
    packed = request.form.get(f"{field}_packed", "")
    if packed:
        limit = int(current_app.config.get("MAX_CONTENT_LENGTH") or 4 * 1024 * 1024)
        return Carried(
            _base_name(request.form.get(f"{field}_name", "")) or f"{field}.txt", unpack(packed, field, limit)
        )
    return None


def digest(*parts: str | bytes | None) -> str:
    """Return a short fingerprint of what a preview showed (to save only what was previewed)."""
    h = hashlib.sha256()
    for p in parts:
        b = b"" if p is None else (p if isinstance(p, bytes) else p.encode("utf-8"))
        h.update(len(b).to_bytes(8, "big"))
        h.update(b)
    return h.hexdigest()[:32]


def _base_name(name: str) -> str:
    return (name or "").strip().replace("\\", "/").rsplit("/", 1)[-1][:255]
