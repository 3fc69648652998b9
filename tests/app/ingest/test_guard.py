"""Sources added through the API reach only public addresses, checked at fetch time (app.ingest.guard).

Address classes are those of the IANA special-purpose address registries (RFC 6890 and updates: RFC 1918
private, RFC 3927 link-local, RFC 6598 shared/CGNAT, RFC 5737 documentation, RFC 4193 unique-local,
RFC 4291 loopback and IPv4-mapped). The resolver is ours, so DNS answers (and a rebinding name that
answers differently the second time) are under the test's control; no test touches the real network.
"""

from __future__ import annotations

import httpx
import pytest

from app.ingest.fetch import fetch_source
from app.ingest.guard import PUBLIC_ONLY, GuardedTransport, NonPublicAddress, is_public_address

# Public unicast addresses of large public DNS resolvers (facts of the address registries); nothing connects.
PUBLIC_V4, PUBLIC_V6 = "8.8.4.4", "2001:4860:4860::8844"


@pytest.mark.parametrize(
    "address",
    [
        "127.0.0.1", "127.8.9.10",          # loopback 127/8 (RFC 1122)
        "10.1.2.3", "172.16.0.1", "192.168.1.1",  # private (RFC 1918)
        "169.254.169.254",                   # link-local (RFC 3927): cloud metadata services live here
        "100.64.0.1",                        # shared address space (RFC 6598)
        "0.0.0.0",                           # "this host" (RFC 1122)
        "192.0.2.10", "198.51.100.7",        # documentation (RFC 5737)
        "224.0.0.1", "239.1.1.1",            # multicast (RFC 5771)
        "::1", "::", "fe80::1", "fc00::1", "fd12:3456::1",  # IPv6 loopback, unspecified, link-local, ULA
        "::ffff:127.0.0.1", "::ffff:10.0.0.1",  # IPv4-mapped (RFC 4291 §2.5.5.2): judged by the IPv4 inside
        "ff02::1",                           # IPv6 multicast
    ],
)
def test_special_purpose_addresses_are_not_public(address: str) -> None:
    assert not is_public_address(address)


@pytest.mark.parametrize("address", [PUBLIC_V4, "1.1.1.1", PUBLIC_V6, "::ffff:8.8.4.4"])
def test_public_unicast_addresses_are_public(address: str) -> None:
    assert is_public_address(address)


class Resolver:
    """name -> list of answers; a list of lists answers in turn (a rebinding name)."""

    def __init__(self, table: dict[str, list]) -> None:
        self.table = table
        self.calls: list[str] = []

    def __call__(self, host: str, port: int) -> list[str]:
        self.calls.append(host)
        answers = self.table[host]
        if answers and isinstance(answers[0], list):
            return answers.pop(0) if len(answers) > 1 else answers[0]
        return answers


def _client(resolver: Resolver, handler) -> httpx.Client:  # type: ignore[no-untyped-def]
    transport = GuardedTransport(httpx.MockTransport(handler), resolver=resolver)
    return httpx.Client(transport=transport, follow_redirects=True)


def _seen(requests: list[httpx.Request]):  # type: ignore[no-untyped-def]
    def handler(request: httpx.Request) -> httpx.Response:
        requests.append(request)
        if request.url.path == "/hop":
            return httpx.Response(302, headers={"Location": "http://inside.example/secret"})
        return httpx.Response(200, content=b"ok")

    return handler


def test_public_name_is_pinned_to_the_checked_address_with_host_kept() -> None:
    seen: list[httpx.Request] = []
    resolver = Resolver({"feed.example": [PUBLIC_V4]})
    with _client(resolver, _seen(seen)) as c:
        r = c.get("http://feed.example:8080/data.txt", extensions={PUBLIC_ONLY: True})
    assert r.status_code == 200
    [req] = seen
    assert req.url.host == PUBLIC_V4 and req.url.port == 8080  # connected to what was checked
    assert req.headers["Host"] == "feed.example:8080"  # virtual hosting still works


def test_https_keeps_the_name_for_tls() -> None:
    seen: list[httpx.Request] = []
    with _client(Resolver({"feed.example": [PUBLIC_V6]}), _seen(seen)) as c:
        c.get("https://feed.example/data.txt", extensions={PUBLIC_ONLY: True})
    [req] = seen
    assert req.url.host == PUBLIC_V6
    assert req.extensions["sni_hostname"] == "feed.example"  # certificate checked against the name


@pytest.mark.parametrize("answers", [["127.0.0.1"], ["10.0.0.7"], [PUBLIC_V4, "169.254.169.254"], ["::ffff:127.0.0.1"]])
def test_names_resolving_to_non_public_addresses_are_refused(answers: list[str]) -> None:
    seen: list[httpx.Request] = []
    with _client(Resolver({"feed.example": answers}), _seen(seen)) as c, pytest.raises(NonPublicAddress, match="public"):
        c.get("http://feed.example/data.txt", extensions={PUBLIC_ONLY: True})
    assert seen == []  # nothing was sent anywhere


def test_ip_literals_in_any_spelling_are_checked() -> None:
    seen: list[httpx.Request] = []
    with _client(Resolver({}), _seen(seen)) as c:
        for url in ("http://127.0.0.1/x", "http://[::1]/x", "http://[::ffff:10.0.0.1]/x"):
            with pytest.raises(NonPublicAddress):
                c.get(url, extensions={PUBLIC_ONLY: True})
    assert seen == []


def test_every_redirect_hop_is_checked() -> None:
    seen: list[httpx.Request] = []
    resolver = Resolver({"feed.example": [PUBLIC_V4], "inside.example": ["192.168.0.10"]})
    with _client(resolver, _seen(seen)) as c, pytest.raises(NonPublicAddress, match="inside.example"):
        c.get("http://feed.example/hop", extensions={PUBLIC_ONLY: True})
    assert [r.url.path for r in seen] == ["/hop"]  # the public hop was fetched, the private one never
    assert resolver.calls == ["feed.example", "inside.example"]


def test_a_rebinding_name_is_refused_when_it_turns_private() -> None:
    seen: list[httpx.Request] = []
    resolver = Resolver({"feed.example": [[PUBLIC_V4], ["127.0.0.1"]]})
    with _client(resolver, _seen(seen)) as c:
        assert c.get("http://feed.example/a", extensions={PUBLIC_ONLY: True}).status_code == 200
        with pytest.raises(NonPublicAddress):
            c.get("http://feed.example/a", extensions={PUBLIC_ONLY: True})
    assert len(seen) == 1


def test_unmarked_requests_are_not_checked() -> None:
    """CLI-added sources (trusted by whoever runs the server) may read local feeds."""
    seen: list[httpx.Request] = []
    resolver = Resolver({})
    with _client(resolver, _seen(seen)) as c:
        assert c.get("http://127.0.0.1/x").status_code == 200
    assert resolver.calls == [] and seen[0].url.host == "127.0.0.1"


# -- through fetch_source: the source's flag decides -----------------------------------------------------


def _api_source(url: str, source_id: str, urls: list[str], *, public_only: bool) -> None:
    from app.db.session import session_scope
    from app.ingest.sources import add_source
    from app.schemas.sources import SourceConfig

    config = SourceConfig(id=source_id, name="API source", format="spectral-text-realtime", latitude=10.0,
                          longitude=19.5, urls=urls)
    with session_scope(url) as session:
        add_source(session, config, remote_only=public_only)


def test_api_source_whose_name_resolves_to_loopback_is_refused_at_fetch(migrated_db, server, helpers) -> None:  # type: ignore[no-untyped-def]
    """The name passes the add-time check (it is not an address); the fetch-time check stops it."""
    port = server.base.rsplit(":", 1)[1]
    for name, body in helpers.realtime_files(helpers.make_records(2)).items():
        server.routes["/" + name] = helpers.Static(body)
    urls = [f"http://feed.example:{port}/{name}" for name in helpers.realtime_files(helpers.make_records(2))]
    _api_source(migrated_db, "rebound", urls, public_only=True)
    fetcher = helpers.fast_fetcher(resolver=Resolver({"feed.example": ["127.0.0.1"]}))
    try:
        out = fetch_source(migrated_db, "rebound", fetcher=fetcher)
    finally:
        fetcher.close()
    assert out.status == "error" and "127.0.0.1" in out.error and "public" in out.error
    assert "after" not in out.error  # a policy refusal is not retried
    assert server.requests == []  # the local server never saw a request
    from app.db.session import session_scope
    from app.db.tables import SourceHealth

    with session_scope(migrated_db) as s:
        health = s.get(SourceHealth, "rebound")
        assert health is not None and "public" in (health.last_error or "")


def test_api_source_file_urls_are_refused_at_fetch(migrated_db, helpers, tmp_path) -> None:  # type: ignore[no-untyped-def]
    path = tmp_path / "zz901.data_spec"
    path.write_bytes(b"x")
    from app.db.session import session_scope
    from app.db.tables import Source

    _api_source(migrated_db, "local", ["http://feed.example/zz901.data_spec"], public_only=True)
    with session_scope(migrated_db) as s:  # as if the row had been edited behind the API's back
        src = s.get(Source, "local")
        assert src is not None and src.public_only
        src.urls = [path.as_uri()]
    fetcher = helpers.fast_fetcher()
    try:
        out = fetch_source(migrated_db, "local", fetcher=fetcher)
    finally:
        fetcher.close()
    assert out.status == "error" and "file://" in out.error


def test_public_api_source_is_fetched_through_the_checked_address(migrated_db, helpers) -> None:  # type: ignore[no-untyped-def]
    files = helpers.realtime_files(helpers.make_records(3))
    seen: list[httpx.Request] = []

    def handler(request: httpx.Request) -> httpx.Response:
        seen.append(request)
        return httpx.Response(200, content=files[request.url.path.lstrip("/")])

    _api_source(migrated_db, "open", [f"http://feed.example/{n}" for n in files], public_only=True)
    fetcher = helpers.fast_fetcher(transport=httpx.MockTransport(handler), resolver=Resolver({"feed.example": [PUBLIC_V4]}))
    try:
        out = fetch_source(migrated_db, "open", fetcher=fetcher)
    finally:
        fetcher.close()
    assert out.status == "stored", out.error
    assert out.report is not None and out.report.stored == 3
    assert {r.url.host for r in seen} == {PUBLIC_V4}
    assert {r.headers["Host"] for r in seen} == {"feed.example"}
