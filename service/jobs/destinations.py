"""Where notifications may go: the rules of ``callback_url``, checked on every address.

A callback URL is refused unless

- its scheme is ``https``; ``http`` only to loopback (where loopback is allowed) or with
  ``HAARLINE_WEBHOOK_HTTP=1``;
- it has a host and no user name or password, and is at most :data:`MAX_URL_CHARS` long;
- **every** address its host resolves to is allowed: a public (globally routable) address;
  a loopback address in development mode or with ``HAARLINE_WEBHOOK_LOOPBACK=1``; or an
  address inside a network of ``HAARLINE_WEBHOOK_NETWORKS``. Private, link-local (cloud
  metadata services live there), shared, reserved, multicast and unspecified addresses
  are refused otherwise, IPv4-mapped IPv6 addresses as the IPv4 address they carry.

The check runs when a job is submitted (a refusal is a 422 naming ``callback_url``) and
again before each attempt, whose connection then goes to the address that was checked (a
name that resolves elsewhere a moment later, DNS rebinding, gains nothing). Redirects are
not followed.
"""

from __future__ import annotations

import ipaddress
import socket
from dataclasses import dataclass
from urllib.parse import urlsplit

from haarline.service.errors import CallbackRefused
from haarline.service.settings import Settings

__all__ = ["MAX_URL_CHARS", "CallbackRefused", "Destination", "allowed_text", "check_destination"]

MAX_URL_CHARS = 2000
"""Longest callback URL."""

Address = ipaddress.IPv4Address | ipaddress.IPv6Address


@dataclass(frozen=True)
class Destination:
    """A checked callback: where to connect, and what to call the host (TLS, ``Host``)."""

    scheme: str
    host: str
    port: int
    path: str
    addresses: tuple[str, ...]


def allowed_text(settings: Settings) -> str:
    """What the settings allow, in words, for the refusal's message.

    Examples
    --------
    >>> from haarline.service.settings import Settings
    >>> allowed_text(Settings(dev_mode=True))
    'https to public addresses; http or https to loopback (development mode)'
    """
    parts = ["http or https" if settings.webhook_http else "https"]
    parts[0] += " to public addresses"
    if settings.callback_loopback:
        why = "development mode" if settings.dev_mode else "HAARLINE_WEBHOOK_LOOPBACK"
        parts.append(f"http or https to loopback ({why})")
    if settings.webhook_networks:
        scheme = "http or https" if settings.webhook_http else "https"
        parts.append(f"{scheme} to {', '.join(settings.webhook_networks)}")
    return "; ".join(parts)


def _plain(address: Address) -> Address:
    if isinstance(address, ipaddress.IPv6Address) and address.ipv4_mapped is not None:
        return address.ipv4_mapped
    return address


def _verdict(address: Address, settings: Settings) -> str | None:
    """Why ``address`` is refused, or ``None`` when it is allowed."""
    plain = _plain(address)
    if any(plain in network for network in settings.callback_networks):
        return None
    if plain.is_loopback:
        return None if settings.callback_loopback else "a loopback address"
    if plain.is_global and not plain.is_multicast:
        return None
    if plain.is_link_local:
        return "a link-local address"
    if plain.is_private:
        return "a private address"
    return "not a public address"


def _resolve(host: str, port: int) -> tuple[str, ...]:
    try:
        infos = socket.getaddrinfo(host, port, type=socket.SOCK_STREAM)
    except (socket.gaierror, UnicodeError) as exc:
        raise OSError(f"the host {host!r} does not resolve ({exc})") from None
    found: list[str] = []
    for _, _, _, _, sockaddr in infos:
        text = str(sockaddr[0]).split("%", 1)[0]
        if text not in found:
            found.append(text)
    return tuple(found)


def check_destination(url: str, settings: Settings) -> Destination:
    """Check ``url`` against the rules; return where to connect.

    Resolves the host (a blocking DNS look-up: call it off the event loop).

    Raises
    ------
    CallbackRefused
        Naming the value, the reason and what is allowed.
    """
    allowed = allowed_text(settings)
    if len(url) > MAX_URL_CHARS:
        raise CallbackRefused(url[:80] + "…", f"longer than {MAX_URL_CHARS} characters")
    try:
        parts = urlsplit(url)
        port = parts.port
    except ValueError as exc:
        raise CallbackRefused(url, f"not a URL ({exc}); allowed: {allowed}") from None
    scheme = parts.scheme.lower()
    if scheme not in ("http", "https") or not parts.hostname:
        raise CallbackRefused(url, f"not an http(s) URL with a host; allowed: {allowed}")
    if parts.username is not None or parts.password is not None:
        raise CallbackRefused(url, "a callback URL may not carry a user name or password")
    host = parts.hostname
    port = port or (443 if scheme == "https" else 80)
    try:
        literal: Address | None = ipaddress.ip_address(host)
    except ValueError:
        literal = None
    try:
        addresses = (str(literal),) if literal is not None else _resolve(host, port)
    except OSError as exc:
        raise CallbackRefused(url, f"{exc}; allowed: {allowed}") from None
    loopback = True
    for text in addresses:
        address = ipaddress.ip_address(text)
        why = _verdict(address, settings)
        if why is not None:
            named = "" if literal is not None else f"{host!r} resolves to "
            raise CallbackRefused(url, f"{named}{text}, {why}; allowed: {allowed}")
        loopback = loopback and _plain(address).is_loopback
    if scheme == "http" and not (settings.webhook_http or loopback):
        raise CallbackRefused(url, f"plain http to a non-loopback address; allowed: {allowed}")
    path = parts.path or "/"
    if parts.query:
        path += "?" + parts.query
    return Destination(scheme, host, port, path, addresses)
