"""Helpers of the page tests: the new-run form filled as a person would, hidden fields, row counts."""

from __future__ import annotations

import io
import re
import tomllib
from typing import Any

import sqlalchemy as sa

from calc.io.runfile import SCHEMA
from tests.webapp.conftest import DEMO, csrf_token
from webapp.models import Result, Run

_MEASURED = re.compile(r"^\s*(?P<v>[^±\s]+)\s*(?:±\s*(?P<u>\S+)\s*)?(?P<unit>.*?)\s*$")


def counts(session: Any) -> tuple[int, int]:
    """Return the numbers of stored runs and results."""
    session.expire_all()
    return (
        session.scalar(sa.select(sa.func.count()).select_from(Run)),
        session.scalar(sa.select(sa.func.count()).select_from(Result)),
    )


def form_from_demo(name: str, calorimeter_id: int | None = None) -> dict[str, Any]:
    """Return the form fields a person would type for a demo run file (value, ± u, unit apart)."""
    data = tomllib.loads((DEMO / f"{name}.toml").read_text(encoding="utf-8"))
    form: dict[str, Any] = {}
    for key, value in data.items():
        if key == "mixing_time":
            m = _MEASURED.match(value)
            assert m
            form.update({"mixing_time": m["v"], "mixing_time.u": m["u"] or "", "mixing_time.unit": m["unit"]})
        if not isinstance(value, dict):
            continue
        for field, v in value.items():
            dotted = f"{key}.{field}"
            if dotted == "calorimeter.name":
                continue
            kind = SCHEMA[data["kind"]][key][field][0]
            if kind in ("q", "dq", "n"):
                m = _MEASURED.match(str(v))
                assert m, v
                form[dotted] = m["v"]
                if kind != "dq":
                    form[dotted + ".u"] = m["u"] or ""
                if kind != "n":
                    form[dotted + ".unit"] = m["unit"]
            else:
                form[dotted] = str(v)
    if calorimeter_id is not None:
        form["calorimeter_id"] = str(calorimeter_id)
    return form


def post_form(
    client: Any,
    kind: str,
    fields: dict[str, Any],
    *,
    csv: bytes | None,
    csv_name: str = "run.csv",
    action: str = "preview",
    extra: dict[str, str] | None = None,
) -> Any:
    token = csrf_token(client.get(f"/runs/new/{kind}").get_data(as_text=True))
    data: dict[str, Any] = {**fields, "csrf_token": token, "action": action, **(extra or {})}
    if csv is not None:
        data["readings"] = (io.BytesIO(csv), csv_name)
    return client.post(f"/runs/new/{kind}", data=data, content_type="multipart/form-data")


def hidden(html: str, name: str) -> str:
    m = re.search(rf'name="{re.escape(name)}" value="([^"]*)"', html)
    assert m, f"no hidden field {name}"
    return m.group(1)


def carried(html: str, *more: str) -> dict[str, str]:
    """Return what a preview page carries into its save: the hidden ``previewed`` and ``submit_token`` fields,
    and the ``more`` named (the packed files of a preview that is saved without sending them again)."""
    return {name: hidden(html, name) for name in ("previewed", "submit_token", *more)}


def field_row(html: str, html_id: str) -> str:
    """Return the HTML of one field's row (its inputs, hint and error)."""
    start = html.index(f'id="{html_id}-row"')
    end = html.find('class="field-row', start + 10)
    return html[start : end if end > 0 else len(html)]
