"""Webhooks stay outside: only public addresses, no redirects, a timeout and a cap on the answer.

A webhook URL names a host; before each delivery the host is resolved and *every* address it
resolves to must be a public unicast address (not loopback, private, shared, link-local,
multicast, reserved, unspecified, documentation, nor IPv4 inside IPv6 such as ``::ffff:127.0.0.1``,
6to4 or NAT64 of such an address). The connection then goes to the address that was checked (a
second lookup could answer otherwise), with the host name kept for TLS and the Host header. An
address written in a legacy form (``2130706433``, ``0x7f000001``, ``0177.0.0.1``, ``127.1``) is
read as the C library reads it (``inet_aton``), so it is refused as what it is.

Redirects are not followed (the status is logged as a failure), the receiver has
``webhook_timeout_s`` seconds, at most ``webhook_response_bytes`` of its answer are read (and
dropped): the log keeps the status code, never the body. ``https`` is required when
``require_https`` (the production configuration: ``CUPCAL_HTTPS`` on, or
``WEBHOOK_REQUIRE_HTTPS``).
"""

from __future__ import annotations

import http.client
import ipaddress
import socket
import ssl
import time
from dataclasses import dataclass
from typing import Any
from urllib.parse import urlsplit

from calc import limits
from webapp.services.errors import Invalid

Address = ipaddress.IPv4Address | ipaddress.IPv6Address

_NAT64 = ipaddress.ip_network("64:ff9b::/96")
_BLOCKED_NAMES = ("localhost", "localhost.localdomain", "ip6-localhost", "ip6-loopback")


@dataclass(frozen=True)
class Guard:
    """What a delivery may reach: ``allow_private`` only in tests (a local receiver)."""

    require_https: bool = False
    allow_private: bool = False


def guard_from_config(config: Any) -> Guard:
    """Return the guard of an app's configuration (``WEBHOOK_REQUIRE_HTTPS``, else ``CUPCAL_HTTPS``)."""
    need = config.get("WEBHOOK_REQUIRE_HTTPS")
    if need is None:
        need = config.get("CUPCAL_HTTPS") not in (None, False, "", "0", 0)
    return Guard(require_https=bool(need), allow_private=bool(config.get("WEBHOOK_ALLOW_PRIVATE")))


def literal_address(host: str) -> Address | None:
    """Return the address written in ``host`` in any textual form, or None for a name."""
    text = host.strip().strip("[]").split("%", 1)[0]
    try:
        return ipaddress.ip_address(text)
    except ValueError:
        pass
    try:  # decimal, hex, octal and short IPv4 forms, as the C library reads them
        return ipaddress.IPv4Address(socket.inet_aton(text))
    except (OSError, ValueError):
        return None


def refusal(addr: Address) -> str | None:
    """Return why ``addr`` may not be reached (None for a public unicast address)."""
    if isinstance(addr, ipaddress.IPv6Address):
        embedded = addr.ipv4_mapped or addr.sixtofour or (addr.teredo[1] if addr.teredo else None)
        if embedded is None and addr in _NAT64:
            embedded = ipaddress.IPv4Address(int(addr) & 0xFFFFFFFF)
        if embedded is not None:
            inner = refusal(embedded)
            return f"carries the IPv4 address {embedded}, which {inner}" if inner else None
    for name, flag in (
        ("loopback", addr.is_loopback),
        ("private", addr.is_private),
        ("link-local", addr.is_link_local),
        ("multicast", addr.is_multicast),
        ("reserved", addr.is_reserved),
        ("unspecified", addr.is_unspecified),
    ):
        if flag:
            return f"is a {name} address"
    if not addr.is_global:
        return "is not a public address"
    return None


def check_url(url: str, guard: Guard) -> tuple[str, str, int]:
    """Return (scheme, host, port) of a webhook URL that may be used, or raise Invalid (field ``url``).

    Only the URL itself is checked here (scheme, a literal address, a local name); the
    addresses a name resolves to are checked by :func:`resolve` before each delivery.
    """
    parts = urlsplit(url)
    allowed = ("https",) if guard.require_https else ("http", "https")
    if parts.scheme not in allowed or not parts.hostname or len(url) > 2000:
        raise Invalid(f"expected an {' or '.join(s + '://' for s in allowed)} URL", field="url")
    if parts.username or parts.password:
        raise Invalid("a webhook URL may not carry a user name or password", field="url")
    try:
        port = parts.port or (443 if parts.scheme == "https" else 80)
    except ValueError:
        raise Invalid("the port is not a number from 1 to 65535", field="url") from None
    host = parts.hostname
    if not guard.allow_private:
        addr = literal_address(host)
        if addr is not None and (why := refusal(addr)):
            raise Invalid(f"the host {host} {why}; webhooks may only reach public addresses", field="url")
        if addr is None and (host.rstrip(".").lower() in _BLOCKED_NAMES or host.rstrip(".").endswith(".localhost")):
            raise Invalid(f"the host {host} is this machine; webhooks may only reach public addresses", field="url")
    return parts.scheme, host, port


def resolve(host: str, port: int, guard: Guard) -> str:
    """Resolve ``host`` and return an address to connect to; every address it has must be public."""
    addr = literal_address(host)
    if addr is not None:
        found = [addr]
    else:
        try:
            infos = socket.getaddrinfo(host, port, type=socket.SOCK_STREAM)
        except (OSError, UnicodeError) as exc:
            raise OSError(f"cannot resolve {host}: {exc}") from None
        found = [ipaddress.ip_address(info[4][0].split("%", 1)[0]) for info in infos]
    if not found:
        raise OSError(f"{host} has no address")
    if not guard.allow_private:
        for a in found:
            if why := refusal(a):
                raise OSError(f"refused: {host} resolves to {a}, which {why}")
    return str(found[0])


def post(url: str, body: bytes, headers: dict[str, str], guard: Guard, timeout: float | None = None) -> int:
    """POST ``body`` to ``url`` through the guard and return the status code (no redirect is followed).

    :raise OSError: for a refused address, a connection failure, a timeout or a too-long answer
    """
    try:
        scheme, host, port = check_url(url, guard)
    except Invalid as exc:
        raise OSError(f"refused: {exc.message}") from None
    timeout = float(timeout if timeout is not None else limits.get("webhook_timeout_s"))
    ip = resolve(host, port, guard)
    parts = urlsplit(url)
    target = (parts.path or "/") + (f"?{parts.query}" if parts.query else "")
    conn: http.client.HTTPConnection
    if scheme == "https":
        conn = http.client.HTTPSConnection(host, port, timeout=timeout, context=ssl.create_default_context())
    else:
        conn = http.client.HTTPConnection(host, port, timeout=timeout)
    conn._create_connection = lambda _addr, *a, **k: socket.create_connection((ip, port), *a, **k)  # type: ignore[attr-defined]
    deadline = time.monotonic() + timeout
    try:
        conn.request("POST", target, body=body, headers=headers)
        response = conn.getresponse()
        _drain(response, int(limits.get("webhook_response_bytes")), deadline)
        return int(response.status)
    except http.client.HTTPException as exc:
        raise OSError(f"not an HTTP answer ({type(exc).__name__})") from None
    finally:
        conn.close()


def _drain(response: http.client.HTTPResponse, cap: int, deadline: float) -> None:
    """Read and drop at most ``cap`` bytes of the answer (nothing of it is kept), within the deadline."""
    read = 0
    while read <= cap:
        if time.monotonic() > deadline:
            raise OSError("the receiver took longer than the limit webhook_timeout_s")
        chunk = response.read(min(4096, cap + 1 - read))
        if not chunk:
            return
        read += len(chunk)
    # more than the cap: the rest is not read (the connection is closed); the status stands
