"""The pages in a real browser (pytest-playwright driving Debian's Chromium) against a real uvicorn
server: each page renders with its cautions and no console errors, the hourly table has its rows,
the lifeguard board updates itself after a new ingest without a reload (conditional fetches, 304
while nothing changed), Tab reaches every link, the board fits a phone, and print hides the
navigation (a daily briefing sheet)."""

from __future__ import annotations

import re
from datetime import UTC, datetime

import pytest

from tests.app.web.conftest import AGENCY_ID, HOURS, SPOT_ID, Live, ingest_forecast, storm_scenario

pytestmark = pytest.mark.slow

PAGES = {
    "spots": "/",
    "spot": f"/spots/{SPOT_ID}?hours={HOURS}",
    "board": f"/agencies/{AGENCY_ID}",
    "sources": "/sources",
}


def watch(page):  # type: ignore[no-untyped-def]
    """Collect console errors, uncaught page errors and failed requests."""
    problems: list[str] = []
    page.on("console", lambda m: problems.append(f"console {m.type}: {m.text}") if m.type in ("error", "warning") else None)
    page.on("pageerror", lambda e: problems.append(f"page error: {e}"))
    page.on("requestfailed", lambda r: problems.append(f"request failed: {r.url} {r.failure}"))
    page.on("response", lambda r: problems.append(f"HTTP {r.status}: {r.url}") if r.status >= 400 else None)
    return problems


@pytest.mark.parametrize("name", sorted(PAGES))
def test_page_renders_with_cautions_and_no_console_errors(live: Live, page, name: str) -> None:
    problems = watch(page)
    page.goto(live.base + PAGES[name], wait_until="load")
    cautions = page.locator("section.cautions")
    assert cautions.is_visible()
    assert "Follow lifeguards, official warnings and local rules." in cautions.inner_text()
    box = cautions.bounding_box()
    assert box is not None and box["y"] < page.viewport_size["height"]  # on the first screen
    assert page.locator("h1").count() == 1 and page.title().endswith("· shoalcast")
    for img in page.locator("img").all():  # every picture loaded and has a text alternative
        assert img.get_attribute("alt")
        assert img.evaluate("i => i.complete && i.naturalWidth > 0"), img.get_attribute("src")
    for svg in page.locator("svg[role=img]").all():
        assert svg.locator("title").count() == 1
    assert problems == []


def test_hourly_table_has_the_rows(live: Live, page) -> None:
    import httpx

    steps = httpx.get(f"{live.base}/v1/spots/{SPOT_ID}/outlook", params={"hours": HOURS}).json()["steps"]
    page.goto(live.base + PAGES["spot"])
    rows = page.locator("table.hourly tbody tr")
    assert rows.count() == len(steps) > 0
    assert rows.locator("th[scope=row]").count() == len(steps)
    assert page.locator("table.hourly tbody tr.current").count() == 1
    first = rows.nth(0).locator("td.num").all_inner_texts()[:3]
    h = steps[0]["breaker_height_m"]
    assert first == [f"{h['typical']:.1f}", f"{h['sets']:.1f}", f"{h['largest']:.1f}"]
    page.get_by_role("link", name="feet").click()  # the unit switch is a plain link
    page.wait_for_url(re.compile(r"units=imperial"))
    assert "Breaker height (ft)" in page.locator("table.hourly thead").inner_text()


@pytest.mark.parametrize("name", sorted(PAGES))
def test_tab_reaches_every_link(live: Live, page, name: str) -> None:
    page.goto(live.base + PAGES[name])
    links = page.eval_on_selector_all("a[href]", "els => els.map(e => e.outerHTML)")
    assert links
    reached: set[str] = set()
    for _ in range(len(links) + 20):  # also passes the scrollable table regions (tabindex=0)
        page.keyboard.press("Tab")
        html = page.evaluate("document.activeElement && document.activeElement.outerHTML")
        if html in links:
            reached.add(html)
            ring = page.evaluate("getComputedStyle(document.activeElement).outlineStyle")
            assert ring != "none", f"no visible focus on {html}"
        if reached == set(links):
            break
    assert reached == set(links), set(links) - reached


def test_skip_link_moves_to_the_content(live: Live, page) -> None:
    page.goto(live.base + PAGES["spot"])
    page.keyboard.press("Tab")
    assert page.evaluate("document.activeElement.textContent") == "Skip to the content"
    assert page.locator("a.skip").is_visible()  # shown while focused
    page.keyboard.press("Enter")
    assert page.evaluate("document.activeElement.id") == "main"


def test_board_fits_a_phone(live: Live, browser) -> None:
    context = browser.new_context(viewport={"width": 360, "height": 740}, device_scale_factor=2, is_mobile=True)
    page = context.new_page()
    page.goto(f"{live.base}/agencies/{AGENCY_ID}")
    assert page.evaluate("document.documentElement.scrollWidth <= window.innerWidth")  # no sideways scrolling
    size = page.evaluate("parseFloat(getComputedStyle(document.querySelector('#board table')).fontSize)")
    assert size >= 16  # common practice: 16 CSS px body text on phones
    context.close()


def test_print_hides_navigation_and_keeps_cautions(live: Live, page) -> None:
    page.goto(live.base + PAGES["spot"])
    page.emulate_media(media="print")
    assert not page.locator("header.site").is_visible() and not page.locator("nav.switches").is_visible()
    assert page.locator("section.cautions").is_visible() and page.locator("table.hourly").is_visible()
    pdf = page.pdf(format="A4")
    assert pdf.startswith(b"%PDF")


# last in the module: the one test that writes (a new ingest) to the shared live site
def test_board_updates_after_a_new_ingest_without_a_reload(live: Live, page) -> None:
    problems = watch(page)
    statuses: list[int] = []
    page.on("response", lambda r: statuses.append(r.status) if r.url.endswith(f"/agencies/{AGENCY_ID}/board") else None)
    page.goto(f"{live.base}/agencies/{AGENCY_ID}?refresh=1")
    before = page.locator("#board table").get_attribute("data-version")
    now_before = page.locator("#board tbody tr td").first.inner_text()
    page.evaluate("window.__notReloaded = true")
    page.wait_for_function("document.getElementById('board-status').textContent.includes('no new data')", timeout=15000)
    assert statuses and set(statuses) == {304}  # nothing new yet: conditional requests, no bodies

    report = ingest_forecast(live.url, storm_scenario(datetime.now(UTC)))  # the worker's ingest path
    assert report["stored"] + report["replaced"] > 0, report
    page.wait_for_function(
        f"document.querySelector('#board table').dataset.version !== {before!r}", timeout=20000)
    assert page.evaluate("window.__notReloaded") is True  # same document: swapped in, not reloaded
    assert 200 in statuses
    now_after = page.locator("#board tbody tr td").first.inner_text()
    assert now_before != now_after and "level 3" in now_after, (now_before, now_after)
    assert "Updated" in page.locator("#board-status").inner_text()
    assert problems == []
