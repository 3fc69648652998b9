"""The pages through HTTP (TestClient, SQLite and PostgreSQL): each renders with the cautions, the
hourly table has one row per outlook step with the JSON outlook's numbers, ETag/304 (RFC 9110
§13.1.2) on pages and the board fragment, HTML 404 and 400 pages, never a 500."""

from __future__ import annotations

import re

import pytest

from tests.app.web.conftest import AGENCY_ID, SPOT_ID, ZONE, Api, grid_text, profile_text

PAGES = ["/", f"/spots/{SPOT_ID}", f"/agencies/{AGENCY_ID}", "/sources"]


def html(r, status: int = 200) -> str:  # type: ignore[no-untyped-def]
    assert r.status_code == status, r.text[:2000]
    assert r.headers["content-type"].startswith("text/html")
    return r.text


@pytest.mark.parametrize("path", PAGES)
def test_page_renders_with_cautions_before_the_data(site: Api, path: str) -> None:
    text = html(site.client.get(path))
    assert text.startswith("<!doctype html>") and '<html lang="en">' in text
    assert "Follow lifeguards, official warnings and local rules." in text
    assert text.index('class="cautions"') < text.index("<table")  # under the heading, above any number
    assert re.search(r"<th scope=\"col\"", text) and "<caption" in text


def test_spot_page_has_one_row_per_step_with_the_json_numbers(site: Api) -> None:
    c = site.client
    outlook = c.get(f"/v1/spots/{SPOT_ID}/outlook", params={"hours": 24}).json()
    text = html(c.get(f"/spots/{SPOT_ID}", params={"hours": 24}))
    rows = re.findall(r'<tr(?: class="current")? data-time="([^"]+)">', text)
    assert len(rows) == len(outlook["steps"]) > 0
    assert [s["time"][:16] + "Z" for s in outlook["steps"]] == rows
    first = outlook["steps"][0]["breaker_height_m"]
    cells = re.search(r'data-time="[^"]+">(.*?)</tr>', text, re.S).group(1)
    nums = re.findall(r'<td class="num">([^<]+)</td>', cells)
    assert nums[:3] == [f"{first['typical']:.1f}", f"{first['sets']:.1f}", f"{first['largest']:.1f}"]
    assert f"Time ({ZONE} (UTC-03:00))" in text and ">UTC</th>" in text  # spot time and UTC side by side
    assert 'scope="colgroup" colspan="3">Breaker height (m)' in text
    assert "Tide (" not in text and ">Wind</th>" not in text  # this outlook has neither: no columns
    assert f'/v1/spots/{SPOT_ID}/outlook.svg?hours=24&amp;units=metric' in text and 'alt="Chart of the breaker' in text
    assert f"/v1/spots/{SPOT_ID}/window.svg?point=peak" in text
    assert "Swell trains" in text and "Train 1" in text


def test_spot_page_in_feet_and_utc_first(site: Api) -> None:
    c = site.client
    outlook = c.get(f"/v1/spots/{SPOT_ID}/outlook", params={"hours": 6, "units": "imperial"}).json()
    text = html(c.get(f"/spots/{SPOT_ID}", params={"hours": 6, "units": "imperial", "tz": "utc"}))
    assert "Breaker height (ft)" in text and "Time (UTC)" in text
    typical = outlook["steps"][0]["breaker_height_ft"]["typical"]
    assert f'<td class="num">{typical:.1f}</td>' in text


def test_pages_answer_304_while_nothing_changed(site: Api) -> None:
    c = site.client
    for path in (f"/spots/{SPOT_ID}?hours=6", f"/agencies/{AGENCY_ID}/board", f"/agencies/{AGENCY_ID}", "/sources"):
        r = c.get(path)
        etag = r.headers["etag"]
        again = c.get(path, headers={"If-None-Match": etag})
        assert again.status_code == 304 and again.content == b"" and again.headers["etag"] == etag, path
    assert c.get(f"/agencies/{AGENCY_ID}/board").headers["cache-control"] == "no-cache"  # pollers revalidate


def test_board_fragment_is_the_table_alone(site: Api) -> None:
    text = html(site.client.get(f"/agencies/{AGENCY_ID}/board"))
    assert text.lstrip().startswith("<table") and "data-version=" in text
    assert f'href="/spots/{SPOT_ID}?agency={AGENCY_ID}"' in text  # the spot page with the agency's own levels
    page = html(site.client.get(f"/agencies/{AGENCY_ID}"))
    assert 'data-src="/agencies/harbour-guard/board"' in page and "/static/board.js" in page


def test_spot_page_with_an_agencys_levels(site: Api) -> None:
    c = site.client
    outlook = c.get(f"/v1/spots/{SPOT_ID}/outlook", params={"hours": 6, "agency": AGENCY_ID}).json()
    text = html(c.get(f"/spots/{SPOT_ID}", params={"hours": 6, "agency": AGENCY_ID}))
    assert f"Hazard levels: {outlook['policy']}." in text
    assert f"outlook.svg?hours=6&amp;units=metric&amp;agency={AGENCY_ID}" in text
    assert f"units=imperial&amp;tz=spot&amp;hours=6&amp;agency={AGENCY_ID}" in text  # switches keep the agency


@pytest.mark.parametrize("path", ["/spots/nowhere", "/agencies/nobody", "/agencies/nobody/board",
                                  "/static/nothing.css", "/spots/nowhere/more", f"/spots/{SPOT_ID}?agency=nobody",
                                  "/?agency=nobody"])
def test_unknown_ids_give_an_html_404(site: Api, path: str) -> None:
    text = html(site.client.get(path), 404)
    assert "<h1>404" in text and "Follow lifeguards" in text and 'href="/"' in text


def test_unknown_paths_html_for_browsers_problem_json_for_the_api(site: Api) -> None:
    c = site.client
    assert "<h1>404" in html(c.get("/no/such/page", headers={"Accept": "text/html,*/*"}), 404)
    r = c.get("/v1/spots/nowhere", headers={"Accept": "text/html"})
    assert r.status_code == 404 and r.headers["content-type"].startswith("application/problem+json")


@pytest.mark.parametrize("path, field", [
    (f"/spots/{SPOT_ID}?units=furlongs", "units"), (f"/spots/{SPOT_ID}?hours=abc", "hours"),
    (f"/spots/{SPOT_ID}?hours=9999", "hours"), (f"/spots/{SPOT_ID}?tz=mars", "tz"), ("/?units=", "units"),
    (f"/agencies/{AGENCY_ID}?refresh=0", "refresh"), (f"/spots/{SPOT_ID}?agency=Not%20An%20Id", "agency"), (f"/agencies/{AGENCY_ID}?refresh=soon", "refresh"),
])
def test_bad_query_values_give_an_html_400_naming_the_parameter(site: Api, path: str, field: str) -> None:
    text = html(site.client.get(path), 400)
    assert "<h1>400" in text and f"query parameter `{field}`" in text


def test_spot_without_tables_explains_instead_of_failing(site: Api) -> None:
    c = site.client
    profile = profile_text("bare-spot").replace('name = "Test Slope"', 'name = "Bare <b>Spot</b>"')
    r = c.put("/v1/spots/bare-spot", headers=site.auth, files={
        "profile": ("p.toml", profile.encode(), "application/toml"), "bathymetry": ("g.asc", grid_text().encode(), "text/plain")})
    assert r.status_code == 201, r.text
    text = html(c.get("/spots/bare-spot"))
    assert "No outlook yet" in text and "Swell window" not in text
    assert "Bare &lt;b&gt;Spot&lt;/b&gt;" in text and "<b>Spot</b>" not in text  # names are escaped
    index = html(c.get("/"))
    assert "Bare &lt;b&gt;Spot&lt;/b&gt;" in index and index.count('<th scope="row">') == 2


def test_profile_time_zone_is_validated(site: Api) -> None:
    # zoneinfo knows the IANA names; anything else is refused naming the field
    profile = profile_text("zoned").replace('sources = ["buoy-t"]', 'timezone = "Mars/Olympus"')
    r = site.client.put("/v1/spots/zoned", headers=site.auth, files={
        "profile": ("p.toml", profile.encode(), "application/toml"), "bathymetry": ("g.asc", grid_text().encode(), "text/plain")})
    assert r.status_code == 422 and "timezone" in r.text


def test_assets_are_served_by_shoalcast(site: Api) -> None:
    c = site.client
    page = html(c.get(f"/spots/{SPOT_ID}"))
    assets = re.findall(r'(?:href|src)="(/static/[^"?]+)', page)
    assert {"/static/site.css", "/static/print.css", "/static/palette.css", "/static/icon.svg"} <= set(assets)
    for a in assets:
        assert c.get(a).status_code == 200, a
    assert not re.search(r'(?:href|src)="(?:https?:)?//', page)  # nothing from elsewhere
    assert "@media" not in c.get("/static/print.css").text.split("\n", 1)[0] and 'media="print"' in page


def test_spot_page_is_rendered_once_per_etag(site: Api, monkeypatch: pytest.MonkeyPatch) -> None:
    """A reload within the same ETag (data version, hour, preferences) is answered from the rendered
    bytes, as the JSON outlook is: the stored outlook is not read again; other preferences render."""
    from app.services import outlooks

    calls: list[str] = []
    real = outlooks.get_outlook

    def counting(session, spot_id, *args, **kw):  # type: ignore[no-untyped-def]
        calls.append(spot_id)
        return real(session, spot_id, *args, **kw)

    monkeypatch.setattr(outlooks, "get_outlook", counting)
    c = site.client
    first = c.get(f"/spots/{SPOT_ID}", params={"hours": 9})
    again = c.get(f"/spots/{SPOT_ID}", params={"hours": 9})
    assert first.status_code == again.status_code == 200
    assert again.headers["etag"] == first.headers["etag"]  # the same hour (the ETag holds it)
    assert calls == [SPOT_ID] and again.content == first.content
    other = c.get(f"/spots/{SPOT_ID}", params={"hours": 9, "units": "imperial"})
    assert other.headers["etag"] != first.headers["etag"] and calls == [SPOT_ID, SPOT_ID]
    assert "Breaker height (ft)" in other.text


def test_board_shows_rip_likelihood_and_shore_break_with_their_caution(site: Api) -> None:
    from markupsafe import escape

    from app.cautions import RIP_CAUTION

    c = site.client
    summary = c.get(f"/v1/agencies/{AGENCY_ID}/hazards").json()
    text = html(c.get(f"/agencies/{AGENCY_ID}/board"))
    assert text.count("<th scope=\"col\"") == 3  # still three columns (phones): the nearshore lines sit in them
    assert str(escape(RIP_CAUTION)) in text  # beside the numbers, in the fragment the page swaps in
    shown = [s for s in summary["spots"] if s["rip_current_likelihood"] is not None]
    assert shown  # the fixture's spot has an outlook
    for s in shown:
        now, top = (round(s[k] * 100) for k in ("rip_current_likelihood", "max_rip_current_likelihood"))
        assert f'rip currents {now}\u00a0%<a href="#rip-note">*</a>' in text  # no-break space: "%" stays
        assert f'rip currents up to {top}\u00a0%<a href="#rip-note">*</a>' in text
        assert ("shore-break now" if s["shore_break"] else "no shore-break") in text
    page = html(c.get(f"/agencies/{AGENCY_ID}"))
    assert str(escape(RIP_CAUTION)) in page[: page.index("<table")]  # also among the page's cautions


def test_shore_break_text_now_ahead_none_and_no_outlook() -> None:
    from zoneinfo import ZoneInfo

    from app.web.views import percent, shore_break_text

    assert shore_break_text(True, "2030-06-01T10:00:00Z") is None  # said in the "now" cell
    assert shore_break_text(False, "2030-06-01T14:00:00Z") == "shore-break from Sat 01 14:00 UTC"
    assert shore_break_text(False, "2030-06-01T14:00:00Z", ZoneInfo("America/Sao_Paulo")).endswith(
        "UTC, 11:00 America/Sao_Paulo (UTC-03:00)"
    )  # spot time beside UTC; São Paulo has kept UTC-3 all year since 2019 (IANA tz database)
    assert shore_break_text(False, None) == "no shore-break ahead"
    assert shore_break_text(None, None) is None  # no outlook: nothing to say
    assert (percent(0.354), percent(None)) == ("35\u00a0%", "–")


def test_a_breaker_type_the_wind_moved_is_marked() -> None:
    from app.web.views import breaker_text

    assert breaker_text("spilling", {"breaker_type_without_wind": "plunging"}) == "spilling (wind)"
    assert breaker_text("plunging", {"breaker_type_without_wind": "plunging"}) == "plunging"
    assert breaker_text("plunging", None) == "plunging" and breaker_text(None, None) == "–"
