"""Atom 1.0 index feed of CAP alerts: parses back with xml.etree and every link resolves.

Sources: RFC 4287 §4.1 (feed/entry required elements: id, title, updated; from memory); CAP index
feed layout as in docs/formats.md §3 (link type application/cap+xml).
"""

from __future__ import annotations

import re
import xml.etree.ElementTree as ET
from datetime import UTC, datetime, timedelta

from app.formats.atom import ATOM_NS, build_atom_feed, entry_for_alert
from app.formats.cap import CAP_NS, AlertSpec, CapReference, build_cap, validate_cap

A = {"a": ATOM_NS, "cap": CAP_NS}
SENT = datetime(2026, 3, 24, 10, 50, tzinfo=UTC)
RFC3339_Z = re.compile(r"^\d{4}-\d{2}-\d{2}T\d{2}:\d{2}:\d{2}Z$")


def alerts() -> dict[str, bytes]:
    """Generated alerts keyed by the URL they would be served at (a stand-in for the API)."""
    out: dict[str, tuple[AlertSpec, bytes]] = {}
    specs = []
    for i, (spot, lat, lon) in enumerate([("gullwing-point", 10.0, 20.5), ("tiller-bank", 10.2, 20.4)]):
        specs.append(AlertSpec(
            identifier=f"sc-{spot}-1", sender="alerts@shoalcast.example", sent=SENT + timedelta(minutes=i),
            event="High surf", urgency="Expected", severity="Moderate", certainty="Likely",
            area_desc=f"{spot} (fictional)", circle=(lat, lon, 2.0), expires=SENT + timedelta(hours=6)))
    first = specs[0]
    specs.append(AlertSpec(
        identifier="sc-gullwing-point-2", sender=first.sender, sent=SENT + timedelta(hours=2),
        msg_type="Cancel", references=(CapReference(first.sender, first.identifier, first.sent),),
        event="High surf", urgency="Past", severity="Minor", certainty="Observed",
        area_desc=first.area_desc, circle=first.circle))
    for s in specs:
        out[f"https://shoalcast.example/v1/alerts/{s.identifier}"] = (s, build_cap(s))
    return out


def test_feed_parses_and_links_resolve_to_valid_cap():
    served = alerts()
    entries = [entry_for_alert(spec, href) for href, (spec, _) in served.items()]
    feed_xml = build_atom_feed(entries, feed_id="urn:shoalcast:agency:north-patrol:alerts",
                               title="Surf alerts: North Patrol (fictional)",
                               self_href="https://shoalcast.example/v1/agencies/north-patrol/alerts.atom")
    root = ET.fromstring(feed_xml)
    assert root.tag == f"{{{ATOM_NS}}}feed"
    for tag in ("id", "title", "updated"):  # RFC 4287 §4.1.1 required feed children
        assert root.find(f"a:{tag}", A) is not None
    assert RFC3339_Z.match(root.find("a:updated", A).text)
    got = root.findall("a:entry", A)
    assert len(got) == 3
    # newest first: the Cancel (sent +2 h) leads
    assert got[0].find("a:title", A).text.startswith("Cancel:")
    ids = set()
    for entry in got:
        ids.add(entry.find("a:id", A).text)
        assert RFC3339_Z.match(entry.find("a:updated", A).text)
        assert entry.find("a:summary", A).text
        links = entry.findall("a:link[@rel='alternate'][@type='application/cap+xml']", A)
        assert len(links) == 1
        href = links[0].get("href")
        assert href in served  # the link resolves
        cap_xml = served[href][1]
        assert validate_cap(cap_xml) == []
        # the entry's cap: summary matches the alert it links to
        alert = ET.fromstring(cap_xml)
        assert entry.find("cap:event", A).text == alert.find("cap:info/cap:event", A).text
        assert entry.find("cap:severity", A).text == alert.find("cap:info/cap:severity", A).text
    assert len(ids) == 3


def test_feed_has_no_stray_namespace_prefixes():
    spec, _ = next(iter(alerts().values()))
    xml = build_atom_feed([entry_for_alert(spec, "https://x.example/a")], feed_id="urn:x", title="t",
                          self_href="https://x.example/feed").decode()
    assert '<feed xmlns="http://www.w3.org/2005/Atom"' in xml
    assert 'xmlns:cap="urn:oasis:names:tc:emergency:cap:1.2"' in xml
    assert "ns0:" not in xml and "ns1:" not in xml
    # Atom copies of CAP times keep CAP's -00:00 form, Atom's own times use Z
    assert "<cap:expires>2026-03-24T16:50:00-00:00</cap:expires>" in xml
    assert "<updated>2026-03-24T10:50:00Z</updated>" in xml


def test_empty_feed_is_still_valid_atom():
    root = ET.fromstring(build_atom_feed([], feed_id="urn:x", title="none", self_href="https://x.example/f",
                                         updated=SENT))
    assert root.findall("a:entry", A) == []
    assert root.find("a:updated", A).text == "2026-03-24T10:50:00Z"
