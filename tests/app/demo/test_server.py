"""The loopback feed server: 200 with validators, then 304 on If-None-Match / If-Modified-Since."""

from __future__ import annotations

import os

import httpx
import pytest

from app.demo.server import FeedServer


@pytest.fixture
def served(tmp_path):
    (tmp_path / "st.data_spec").write_text("#YY  MM DD hh mm Sep_Freq  < spec_1 (freq_1) ... >\n")
    (tmp_path / ".hidden").write_text("secret-ish\n")
    with FeedServer(tmp_path) as server, httpx.Client(base_url=server.url, timeout=5.0) as client:
        yield tmp_path, server, client


def test_binds_loopback_on_a_free_port(served):
    _, server, _ = served
    assert server.url.startswith("http://127.0.0.1:") and server.port > 0


def test_200_then_304_with_if_none_match(served):
    _, server, client = served
    first = client.get("/st.data_spec")
    assert first.status_code == 200
    assert first.text.startswith("#YY")
    etag = first.headers["ETag"]
    assert etag.startswith('"') and etag.endswith('"')  # a strong ETag, quotes included (RFC 9110 §8.8.3)
    assert first.headers["Last-Modified"].endswith("GMT")
    again = client.get("/st.data_spec", headers={"If-None-Match": etag})
    assert again.status_code == 304 and again.content == b""
    assert again.headers["ETag"] == etag
    # weak comparison and lists (RFC 9110 §13.1.2)
    assert client.get("/st.data_spec", headers={"If-None-Match": f'"other", W/{etag}'}).status_code == 304
    assert client.get("/st.data_spec", headers={"If-None-Match": '"other"'}).status_code == 200
    assert [s for p, s in server.requests if p == "/st.data_spec"] == [200, 304, 304, 200]


def test_if_modified_since(served):
    _, _, client = served
    lm = client.get("/st.data_spec").headers["Last-Modified"]
    assert client.get("/st.data_spec", headers={"If-Modified-Since": lm}).status_code == 304
    old = "Sun, 06 Nov 1994 08:49:37 GMT"
    assert client.get("/st.data_spec", headers={"If-Modified-Since": old}).status_code == 200
    assert client.get("/st.data_spec", headers={"If-Modified-Since": "not a date"}).status_code == 200


def test_a_changed_file_gets_a_new_etag(served):
    root, _, client = served
    etag = client.get("/st.data_spec").headers["ETag"]
    path = root / "st.data_spec"
    path.write_text(path.read_text() + "2026 03 14 08 40 0.125 0.000 (0.020)\n")
    os.utime(path, (path.stat().st_atime, path.stat().st_mtime + 5))
    fresh = client.get("/st.data_spec", headers={"If-None-Match": etag})
    assert fresh.status_code == 200 and fresh.headers["ETag"] != etag


def test_missing_hidden_and_outside_paths_are_404(served):
    _, _, client = served
    assert client.get("/nope.txt").status_code == 404
    assert client.get("/.hidden").status_code == 404
    assert client.get("/%2e%2e/%2e%2e/etc/hostname").status_code == 404
    assert client.head("/st.data_spec").status_code == 200


def test_stop_is_idempotent_and_frees_the_port(tmp_path):
    server = FeedServer(tmp_path).start()
    url = server.url
    server.stop()
    server.stop()
    with pytest.raises(httpx.TransportError):
        httpx.get(url + "/", timeout=1.0)


def test_refuses_a_missing_directory(tmp_path):
    with pytest.raises(ValueError, match="`directory`"):
        FeedServer(tmp_path / "absent")
