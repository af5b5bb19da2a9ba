"""Webhooks stay outside: every local, private or special address is refused in every textual form.

No traffic leaves loopback here: the address checks run on literals (no DNS lookup), and the
delivery tests use receivers on 127.0.0.1 reached only with the check relaxed (a test guard),
or refused before any connection is made.

Address ranges: IANA IPv4 and IPv6 Special-Purpose Address Registries (RFC 6890), IPv4-mapped
IPv6 (RFC 4291 §2.5.5.2), 6to4 (RFC 3056), NAT64 (RFC 6052), Teredo (RFC 4380); legacy IPv4
forms as read by inet_aton (POSIX; common practice, no source).
"""

from __future__ import annotations

import threading
from http.server import BaseHTTPRequestHandler, ThreadingHTTPServer
from typing import Any

import pytest

from webapp.services.errors import Invalid
from webapp.services.webhook_guard import Guard, check_url, literal_address, post, refusal

REFUSED_HOSTS = [
    "127.0.0.1",  # loopback
    "127.1",  # short form of 127.0.0.1
    "2130706433",  # decimal 127.0.0.1
    "0x7f000001",  # hex 127.0.0.1
    "0x7f.0.0.1",  # hex first part
    "0177.0.0.1",  # octal 127.0.0.1
    "017700000001",  # octal whole number
    "0",  # 0.0.0.0, unspecified
    "0.0.0.0",
    "10.0.0.1",  # private
    "172.16.5.4",
    "192.168.1.1",
    "169.254.169.254",  # link-local (cloud metadata)
    "2852039166",  # decimal 169.254.169.254
    "100.64.0.1",  # shared address space (RFC 6598)
    "224.0.0.1",  # multicast
    "239.255.255.250",
    "240.0.0.1",  # reserved
    "255.255.255.255",  # broadcast
    "192.0.2.10",  # documentation
    "[::1]",  # IPv6 loopback
    "[::]",  # IPv6 unspecified
    "[0:0:0:0:0:0:0:1]",  # long form of ::1
    "[::ffff:127.0.0.1]",  # IPv4-mapped loopback
    "[::ffff:7f00:1]",  # the same in hex
    "[::ffff:169.254.169.254]",
    "[fe80::1]",  # IPv6 link-local
    "[fe80::1%25eth0]",  # with a zone
    "[fc00::1]",  # unique local
    "[fd12:3456::1]",
    "[ff02::1]",  # IPv6 multicast
    "[2002:7f00:1::]",  # 6to4 of 127.0.0.1
    "[64:ff9b::a9fe:a9fe]",  # NAT64 of 169.254.169.254
    "[2001:db8::1]",  # documentation
    "localhost",
    "LOCALHOST.",
    "api.localhost",
]


@pytest.mark.parametrize("host", REFUSED_HOSTS)
def test_every_local_private_or_special_address_is_refused(host: str) -> None:
    for scheme in ("http", "https"):
        with pytest.raises(Invalid) as err:
            check_url(f"{scheme}://{host}:8080/hook", Guard())
        assert err.value.field == "url"


def test_the_table_is_large_enough_and_reads_legacy_forms_as_the_c_library_does() -> None:
    assert len(REFUSED_HOSTS) >= 15
    assert str(literal_address("2130706433")) == "127.0.0.1"
    assert str(literal_address("0x7f.1")) == "127.0.0.1"
    assert str(literal_address("0177.0.0.1")) == "127.0.0.1"
    assert literal_address("hooks.example.org") is None


@pytest.mark.parametrize("host", ["93.184.215.14", "8.8.8.8", "[2606:4700:4700::1111]", "hooks.example.org"])
def test_public_addresses_and_names_pass_the_url_check(host: str) -> None:
    # only checked, never contacted; a name is resolved (and checked again) at delivery
    assert check_url(f"https://{host}/hook", Guard(require_https=True))[1]


def test_production_requires_https_and_urls_carry_no_credentials() -> None:
    with pytest.raises(Invalid):
        check_url("http://hooks.example.org/x", Guard(require_https=True))
    for bad in (
        "ftp://hooks.example.org/x",
        "https://user:pw@hooks.example.org/x",
        "https:///x",
        "https://hooks.example.org:99999/x",
        "javascript:alert(1)",
    ):
        with pytest.raises(Invalid):
            check_url(bad, Guard())


def test_refusal_explains_embedded_addresses() -> None:
    import ipaddress

    why = refusal(ipaddress.ip_address("::ffff:10.1.2.3"))
    assert why and "10.1.2.3" in why
    assert refusal(ipaddress.ip_address("8.8.8.8")) is None


class _Server:
    """A local receiver: answers ``status`` with ``body`` and ``Location`` when redirecting."""

    def __init__(self, status: int, body: bytes = b"", location: str | None = None) -> None:
        self.hits = 0
        owner = self

        class Handler(BaseHTTPRequestHandler):
            def do_POST(self) -> None:  # noqa: N802
                self.rfile.read(int(self.headers["Content-Length"]))
                owner.hits += 1
                self.send_response(status)
                if location:
                    self.send_header("Location", location)
                self.send_header("Content-Length", str(len(body)))
                self.end_headers()
                self.wfile.write(body)

            def log_message(self, *args: Any) -> None:
                pass

        self.server = ThreadingHTTPServer(("127.0.0.1", 0), Handler)
        self.url = f"http://127.0.0.1:{self.server.server_address[1]}/hook"
        threading.Thread(target=self.server.serve_forever, daemon=True).start()

    def close(self) -> None:
        self.server.shutdown()
        self.server.server_close()


def test_a_delivery_to_a_local_address_is_refused_before_connecting() -> None:
    server = _Server(204)
    try:
        with pytest.raises(OSError, match="refused"):
            post(server.url, b"{}", {}, Guard())
        assert server.hits == 0
    finally:
        server.close()


def test_redirects_are_not_followed_and_long_answers_are_cut() -> None:
    target = _Server(204)
    redirect = _Server(302, location=target.url)
    big = _Server(200, body=b"x" * 1_000_000)
    try:
        assert post(redirect.url, b"{}", {}, Guard(allow_private=True)) == 302
        assert target.hits == 0  # the redirect was not followed
        assert post(big.url, b"{}", {}, Guard(allow_private=True)) == 200  # its body is cut and dropped
    finally:
        for s in (target, redirect, big):
            s.close()


def test_a_slow_receiver_times_out() -> None:
    import socket

    listener = socket.socket()
    listener.bind(("127.0.0.1", 0))
    listener.listen(1)  # accepts the connection, never answers
    try:
        with pytest.raises(OSError):
            post(f"http://127.0.0.1:{listener.getsockname()[1]}/x", b"{}", {}, Guard(allow_private=True), timeout=0.5)
    finally:
        listener.close()


def test_the_api_refuses_a_local_webhook_and_requires_https_in_production(client: Any, lab: Any, app: Any) -> None:
    for url in ("http://169.254.169.254/latest", "http://2130706433/x", "http://[::ffff:127.0.0.1]/x"):
        r = client.post("/api/webhooks", json={"url": url}, headers=lab.auth("coord"))
        assert r.status_code == 400 and r.get_json()["field"] == "url", url
    app.config["CUPCAL_HTTPS"] = True
    r = client.post("/api/webhooks", json={"url": "http://hooks.example.org/x"}, headers=lab.auth("coord"))
    assert r.status_code == 400 and "https://" in r.get_json()["error"]
    assert (
        client.post("/api/webhooks", json={"url": "https://hooks.example.org/x"}, headers=lab.auth("coord")).status_code
        == 201
    )
