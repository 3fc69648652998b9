"""Refuse fetches to non-public addresses for sources added through the API (server-side request forgery).

Checking the URL when the source is added is not enough: a DNS name can resolve to 127.0.0.1 or to
a cloud metadata address later (or only for the second lookup, "DNS rebinding"), and a public server
can redirect to a private one. So at fetch time, for a request marked `PUBLIC_ONLY`, the transport
resolves the host once, refuses unless every answer is a public unicast address, and connects to
the checked address itself (the Host header and the TLS server name stay the original host name, so
virtual hosting and certificate checks work as before). httpx sends every redirect hop through the
transport again, so each hop is checked the same way.

Address blocks: Python's `ipaddress.is_global`, which follows the IANA special-purpose address
registries (RFC 6890 and its updates: loopback, RFC 1918 private, link-local, CGNAT 100.64/10,
documentation, benchmarking, unique-local fc00::/7, ...); multicast is refused too, and IPv4-mapped
IPv6 addresses (::ffff:a.b.c.d) are judged by the IPv4 address they carry.
"""

from __future__ import annotations

import ipaddress
import socket
from collections.abc import Callable, Sequence

import httpx

__all__ = ["PUBLIC_ONLY", "GuardedTransport", "NonPublicAddress", "Resolver", "is_public_address", "system_resolver"]

# request extension that asks the transport to check the target
PUBLIC_ONLY = "shoalcast.public_only"

Resolver = Callable[[str, int], Sequence[str]]
IPAddress = ipaddress.IPv4Address | ipaddress.IPv6Address


class NonPublicAddress(httpx.ConnectError):
    """The target resolves to an address that API-added sources may not reach."""


def system_resolver(host: str, port: int) -> list[str]:
    """Every address the system resolver gives for `host` (IPv4 and IPv6, TCP)."""
    infos = socket.getaddrinfo(host, port, type=socket.SOCK_STREAM)
    return list(dict.fromkeys(info[4][0] for info in infos))


def is_public_address(address: str | IPAddress) -> bool:
    """True for a globally reachable unicast address (IANA special-purpose registries)."""
    ip = ipaddress.ip_address(address) if isinstance(address, str) else address
    if isinstance(ip, ipaddress.IPv6Address) and ip.ipv4_mapped is not None:
        ip = ip.ipv4_mapped
    return ip.is_global and not ip.is_multicast


def _literal(host: str) -> IPAddress | None:
    try:
        return ipaddress.ip_address(host.strip("[]"))
    except ValueError:
        return None


class GuardedTransport(httpx.BaseTransport):
    """Wraps a transport; requests carrying the `PUBLIC_ONLY` extension go only to public addresses."""

    def __init__(self, inner: httpx.BaseTransport | None = None, *, resolver: Resolver = system_resolver) -> None:
        self.inner = inner or httpx.HTTPTransport()
        self.resolver = resolver

    def handle_request(self, request: httpx.Request) -> httpx.Response:
        if not request.extensions.get(PUBLIC_ONLY):
            return self.inner.handle_request(request)
        return self.inner.handle_request(self._pinned(request))

    def _pinned(self, request: httpx.Request) -> httpx.Request:
        url = request.url
        host = url.host
        port = url.port or (443 if url.scheme == "https" else 80)
        literal = _literal(host)
        if literal is not None:
            addresses = [str(literal)]
        else:
            try:
                addresses = list(self.resolver(host, port))
            except OSError as exc:
                raise httpx.ConnectError(f"cannot resolve {host!r}: {exc}", request=request) from exc
        if not addresses:
            raise httpx.ConnectError(f"{host!r} resolves to no address", request=request)
        bad = [a for a in addresses if not is_public_address(a)]
        if bad:
            raise NonPublicAddress(
                f"{host!r} resolves to {', '.join(bad)}: sources added through the API may only reach public "
                "addresses (loopback, private, link-local and other special-purpose blocks are refused)",
                request=request,
            )
        chosen = addresses[0]
        if chosen == host:  # an IP literal already: nothing to pin
            return request
        pinned_host = f"[{chosen}]" if ":" in chosen else chosen
        extensions = dict(request.extensions)
        if url.scheme == "https":
            extensions["sni_hostname"] = host  # certificate checked against the name, not the address
        headers = httpx.Headers(request.headers)
        headers["Host"] = request.headers.get("Host", url.netloc.decode("ascii"))
        return httpx.Request(
            request.method,
            url.copy_with(host=pinned_host.strip("[]")),
            headers=headers,
            stream=request.stream,
            extensions=extensions,
        )

    def close(self) -> None:
        self.inner.close()
