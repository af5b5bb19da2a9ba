"""Hostile requests to every route of the notebook, generated with hypothesis.

Used by ``test_fuzz_requests.py`` (a small sample in the default run) and by
``tests/benchmarks/test_fuzz.py`` (at least 10,000 requests). Every route of the app's URL map
is called with its methods: JSON API routes with generated JSON bodies and query strings, page
forms with a valid CSRF token and generated fields and files, ``/oembed`` with generated query
parameters. The values are what issue 12 found breaking: deep nesting, lone surrogates, huge
integers (also as 5000-digit JSON numbers, which ``json.dumps`` cannot write), wrong types,
extreme floats, non-ASCII digits, long text. A response with a status of 500 or more is a failure.
"""

from __future__ import annotations

import io
import json
import re
from collections import Counter
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any
from urllib.parse import quote

from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from tests.webapp.conftest import csrf_token, sign_in, upload
from webapp.api.classes import PLAN_KIND_TEXTS, PLAN_NUMBERS, PLAN_TEXTS

TEMPLATES = Path(__file__).resolve().parents[2] / "webapp" / "templates"

#: every form field name in the templates, and the run form's generated fields
FORM_FIELDS = sorted(
    {
        m
        for p in TEMPLATES.rglob("*.html")
        for m in re.findall(r'name="([A-Za-z_][\w.\-]*)"', p.read_text(encoding="utf-8"))
    }
    | {"email", "password", "label", "scope", "name", "heat_capacity", "notes"}
)

#: JSON field names the API reads (and a few it does not); the planner's from its own tables
JSON_FIELDS = [
    "title",
    "notes",
    "run_toml",
    "readings_csv",
    "run_file_name",
    "readings_name",
    "calorimeter_id",
    "group_id",
    "monte_carlo",
    "seed",
    "method",
    "fore",
    "after",
    "fore_start",
    "fore_end",
    "name",
    "run_ids",
    "url",
    "kind",
    *(f for f in PLAN_NUMBERS if f not in ("fore", "after")),  # those two are named above
    *PLAN_TEXTS,
    *PLAN_KIND_TEXTS,
    "heat_capacity",
    "calibration_interval_days",
    "course_id",
    "section_id",
    "term",
    "thermometer",
    "location",
    "parts",
    "email",
    "role",
    "format",
    "format_version",
    "files",
    "result",
    "run",
    "provenance",
    "scope",
    "label",
    "unknown_field",
]

_HOSTILE_TEXT = [
    "",
    " ",
    "\ud800",
    "a\udfffb",
    "٣",
    "१२",
    "²",
    "9" * 5000,
    "1e308",
    "-1e308",
    "1e-320",
    "nan",
    "inf",
    "-1",
    "0",
    "2147483648",
    str(2**70),
    "../../etc/passwd",
    "/dev/zero",
    "a\x00b",
    "<script>x</script>",
    "' OR 1=1 --",
    "x" * 3000,
    "KCl",
    "K999999999999999999999Cl",
    "3 g",
    "1e308 g",
    "100 mL",
    "0.01 K",
    "yesterday",
    "2025-03-13",
    "http://127.0.0.1/x",
    "dissolution",
    "neutralization",
    "regnault-pfaundler",
]
_HOSTILE_NUMBERS = [
    0,
    -1,
    1,
    2**31,
    2**63,
    2**64 + 1,
    -(2**70),
    10**30,
    1e308,
    -1e308,
    1e-320,
    5e-324,
    1e30,
    0.5,
    3.0,
    1000,
    3000,
]


def scalars() -> st.SearchStrategy[Any]:
    """Hostile JSON scalars."""
    return st.one_of(
        st.sampled_from(_HOSTILE_TEXT),
        st.sampled_from(_HOSTILE_NUMBERS),
        st.booleans(),
        st.none(),
        st.integers(),
        st.floats(allow_nan=False, allow_infinity=False),
        st.text(max_size=20),
    )


def json_values() -> st.SearchStrategy[Any]:
    """Hostile JSON values: scalars, lists and objects, a few levels deep."""
    return st.recursive(
        scalars(),
        lambda inner: st.one_of(
            st.lists(inner, max_size=4), st.dictionaries(st.sampled_from(JSON_FIELDS), inner, max_size=4)
        ),
        max_leaves=12,
    )


def _raw_json(kind: str, key: str, depth: int) -> str:
    if kind == "deep":
        return f'{{"{key}": {"[" * depth}0{"]" * depth}}}'
    if kind == "digits":
        return f'{{"{key}": {"9" * depth}}}'
    if kind == "surrogate":
        return f'{{"{key}": "a\\ud800b"}}'
    return f'{{"{key}": '  # cut short


def bodies() -> st.SearchStrategy[tuple[str, str]]:
    """(content type, body text) of a JSON request: generated objects, or raw text json.dumps cannot write."""
    objects = st.dictionaries(st.sampled_from(JSON_FIELDS), json_values(), max_size=8).map(
        lambda d: ("application/json", json.dumps(d, allow_nan=False))
    )
    raw = st.builds(
        lambda k, key, d: ("application/json", _raw_json(k, key, d)),
        st.sampled_from(["deep", "digits", "surrogate", "cut"]),
        st.sampled_from(JSON_FIELDS),
        st.sampled_from([40, 1000, 5000, 10_000, 100_000]),
    )
    other = st.sampled_from(
        [
            ("application/json", "[]"),
            ("application/json", "null"),
            ("text/plain", "x"),
            ("application/json", "1e999"),
            ("application/json", '"\\ud800"'),
        ]
    )
    return st.one_of(objects, objects, objects, raw, other)


def query_strings() -> st.SearchStrategy[dict[str, str]]:
    """Query parameters with hostile values."""
    names = [
        "page",
        "per_page",
        "kind",
        "calorimeter_id",
        "group_id",
        "run_ids",
        "format",
        "sort",
        "dir",
        "standard",
        "baseline",
        "url",
        "maxwidth",
        "maxheight",
        "link",
        "q",
        "status",
    ]
    return st.dictionaries(
        st.sampled_from(names),
        st.sampled_from(_HOSTILE_TEXT).filter(lambda s: "\ud800" not in s and "\udfff" not in s),
        max_size=4,
    )


#: not fuzzed: the static files, and signing out or revoking a token (which would end the fuzzing
#: session, so that every later request is only refused with 401 or sent to the sign-in page)
SKIPPED_ENDPOINTS = {"static", "auth.logout", "auth.revoke"}


@dataclass
class Targets:
    """The routes to call and the ids that exist (so that some requests reach the handlers)."""

    rules: list[tuple[str, str, list[str]]]  # (rule, method, converter names)
    ids: list[int] = field(default_factory=lambda: [1, 2])


def targets(app: Any) -> Targets:
    """Return every (rule, method) of the app but the static files."""
    out = []
    for rule in app.url_map.iter_rules():
        if rule.endpoint in SKIPPED_ENDPOINTS:
            continue
        for method in sorted(rule.methods - {"HEAD", "OPTIONS"}):
            out.append((rule.rule, method, [a for a in rule.arguments]))
    return Targets(sorted(out))


def _url(rule: str, draw: Any, ids: list[int]) -> str:
    def fill(m: re.Match[str]) -> str:
        conv = m.group(1) or "string"
        if conv == "int":
            return str(draw(st.sampled_from(ids + [0, 2**31 - 1, 2**31, 2**64 + 1, 10**30])))
        return quote(
            draw(
                st.sampled_from(
                    [
                        "json",
                        "csv",
                        "html",
                        "ro-crate",
                        "pdf",
                        "run_file",
                        "readings",
                        "dissolution",
                        "neutralization",
                        "x",
                        "٣",
                        "a" * 300,
                    ]
                )
            ),
            safe="",
        )

    return re.sub(r"<(?:(\w+)(?:\([^)]*\))?:)?\w+>", fill, rule)


@st.composite
def requests(draw: Any, t: Targets) -> dict[str, Any]:
    """One request: method, URL, and body or form, for a route of ``t``."""
    rule, method, _args = draw(st.sampled_from(t.rules))
    url = _url(rule, draw, t.ids)
    req: dict[str, Any] = {"method": method, "path": url, "query_string": draw(query_strings())}
    if rule == "/oembed":
        req["query_string"] = {
            "url": draw(
                st.sampled_from(
                    [f"http://localhost/embed/runs/{i}" for i in t.ids]
                    + ["http://localhost/embed/runs/٣", "x", "", "http://localhost/embed/runs/" + "9" * 5000]
                )
            ),
            "format": draw(st.sampled_from(["json", "xml", ""])),
            **draw(query_strings()),
        }
    if method in ("POST", "PATCH", "PUT", "DELETE"):
        if rule.startswith("/api/"):
            ctype, text = draw(bodies())
            req.update(content_type=ctype, data=text.encode("utf-8", "surrogatepass"))
        else:
            form = draw(
                st.dictionaries(
                    st.sampled_from(FORM_FIELDS),
                    st.sampled_from(_HOSTILE_TEXT).filter(lambda s: "\ud800" not in s and "\udfff" not in s),
                    max_size=8,
                )
            )
            if draw(st.booleans()):
                name = draw(
                    st.sampled_from(["run_file", "readings", "archive", "mapping", "roster", "files", "package"])
                )
                content = draw(
                    st.sampled_from(
                        [
                            b"",
                            b"\x00\xff",
                            b"kind = 'dissolution'\n",
                            b"PK\x03\x04",
                            b"time_s,temperature_C\n" + b"0,1\n" * 50,
                            b"[" * 5000,
                        ]
                    )
                )
                form[name] = (io.BytesIO(content), "x.bin")
            req.update(data=form, content_type="multipart/form-data", csrf=True)
    return req


def send(client: Any, req: dict[str, Any], headers: dict[str, str], csrf_token: str) -> Any:
    """Send a generated request with ``headers`` (an API token) and the session's CSRF token."""
    req = dict(req)
    if req.pop("csrf", False) and isinstance(req.get("data"), dict):
        req["data"] = {**req["data"], "csrf_token": csrf_token}
    return client.open(req.pop("path"), method=req.pop("method"), headers=headers, **req)


def is_server_error(response: Any) -> bool:
    """A 5xx answer, apart from 501 for an oEmbed format other than json (oEmbed 1.0, section 2.3.4)."""
    return response.status_code >= 500 and not (response.status_code == 501 and response.request.path == "/oembed")


def fuzz(
    app: Any, lab: Any, examples: int, who: str = "coord", statuses: Counter[int] | None = None
) -> tuple[int, list[str]]:
    """Send ``examples`` generated requests as ``who`` (token and signed-in session); return (sent, failures).

    ``statuses`` (when given) counts the answers by status code."""
    client = app.test_client()
    r = upload(client, lab.auth("coord"), "diss-kcl-01", calorimeter_id=lab.calorimeter_id)
    assert r.status_code == 201
    sign_in(client, f"{who}@lab.example")
    token = csrf_token(client.get("/runs/upload").get_data(as_text=True))
    t = targets(app)
    t.ids = [1, 2, r.get_json()["id"]]
    failures: list[str] = []
    sent = [0]

    @settings(
        max_examples=examples, deadline=None, derandomize=True, database=None, suppress_health_check=list(HealthCheck)
    )
    @given(requests(t))
    def one(req: dict[str, Any]) -> None:
        response = send(client, req, lab.auth(who), token)
        sent[0] += 1
        if statuses is not None:
            statuses[response.status_code] += 1
        if is_server_error(response):
            failures.append(
                f"{response.status_code} {req['method']} {req['path']} "
                f"{str(req.get('query_string'))[:200]} {str(req.get('data'))[:300]}"
            )

    one()
    return sent[0], failures
