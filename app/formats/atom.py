"""Atom 1.0 (RFC 4287) index feed of CAP alerts: one <entry> per alert, linking the full CAP XML.

Each entry has id, updated (RFC 3339, `Z`), title, summary and a
`<link rel="alternate" type="application/cap+xml" href=...>`; a few `cap:`-prefixed summary elements
(event, severity, expires, areaDesc) in the CAP 1.2 namespace let pollers filter without fetching.
Note the two datetime styles side by side: Atom uses RFC 3339 (`Z`), the `cap:expires` copy uses CAP's
`-00:00` form.
"""

from __future__ import annotations

import xml.etree.ElementTree as ET
from collections.abc import Sequence
from dataclasses import dataclass
from datetime import UTC, datetime

from app.errors import BadInput
from app.formats.cap import CAP_MEDIA_TYPE, CAP_NS, CAUTION, AlertSpec, cap_datetime

__all__ = ["ATOM_MEDIA_TYPE", "ATOM_NS", "FeedEntry", "build_atom_feed", "entry_for_alert", "rfc3339"]

ATOM_NS = "http://www.w3.org/2005/Atom"
ATOM_MEDIA_TYPE = "application/atom+xml"


@dataclass(frozen=True)
class FeedEntry:
    id: str                       # an IRI, stable per alert (e.g. the alert's absolute URL or a urn)
    title: str
    updated: datetime
    href: str                     # where the CAP XML is served
    summary: str = ""
    event: str | None = None
    severity: str | None = None
    expires: datetime | None = None
    area_desc: str | None = None


def rfc3339(value: datetime, *, name: str = "datetime") -> str:
    """RFC 3339 UTC with `Z`, seconds precision (the JSON/Atom form; CAP has its own)."""
    if value.tzinfo is None or value.utcoffset() is None:
        raise BadInput(f"`{name}` must be timezone-aware, got naive {value.isoformat()}", field=name)
    return value.astimezone(UTC).replace(microsecond=0).strftime("%Y-%m-%dT%H:%M:%SZ")


def entry_for_alert(spec: AlertSpec, href: str, *, entry_id: str | None = None) -> FeedEntry:
    """The feed entry of one alert; `entry_id` defaults to a urn built from sender and identifier."""
    title = spec.headline or f"{spec.event}: {spec.area_desc}"
    if spec.msg_type != "Alert":
        title = f"{spec.msg_type}: {title}"
    return FeedEntry(
        id=entry_id or f"urn:shoalcast:alert:{spec.sender}:{spec.identifier}",
        title=title,
        updated=spec.sent,
        href=href,
        summary=f"{spec.severity} {spec.event} for {spec.area_desc}. {CAUTION}",
        event=spec.event,
        severity=spec.severity,
        expires=spec.expires,
        area_desc=spec.area_desc,
    )


def build_atom_feed(
    entries: Sequence[FeedEntry],
    *,
    feed_id: str,
    title: str,
    self_href: str,
    updated: datetime | None = None,
    author: str = "shoalcast",
) -> bytes:
    """Serialise an Atom feed (newest entry first); `updated` defaults to the newest entry or now."""
    items = sorted(entries, key=lambda e: e.updated, reverse=True)
    if updated is None:
        updated = max((e.updated for e in items), default=datetime.now(UTC))

    # Namespaces are declared as literal attributes (Atom default, `cap:` prefix): ElementTree's
    # default_namespace option refuses the unqualified attributes Atom links need.
    a = lambda tag: tag  # noqa: E731 - Atom is the default namespace
    c = lambda tag: f"cap:{tag}"  # noqa: E731

    def sub(parent: ET.Element, tag: str, text: str | None = None, **attrib: str) -> ET.Element:
        el = ET.SubElement(parent, tag, attrib)
        if text is not None:
            el.text = text
        return el

    feed = ET.Element("feed", {"xmlns": ATOM_NS, "xmlns:cap": CAP_NS})
    sub(feed, a("id"), feed_id)
    sub(feed, a("title"), title)
    sub(feed, a("updated"), rfc3339(updated, name="updated"))
    sub(sub(feed, a("author")), a("name"), author)
    sub(feed, a("link"), rel="self", type="application/atom+xml", href=self_href)
    sub(feed, a("subtitle"), CAUTION)
    for i, e in enumerate(items):
        entry = sub(feed, a("entry"))
        sub(entry, a("id"), e.id)
        sub(entry, a("title"), e.title)
        sub(entry, a("updated"), rfc3339(e.updated, name=f"entries[{i}].updated"))
        sub(entry, a("summary"), e.summary or e.title)
        sub(entry, a("link"), rel="alternate", type=CAP_MEDIA_TYPE, href=e.href)
        if e.event:
            sub(entry, c("event"), e.event)
        if e.severity:
            sub(entry, c("severity"), e.severity)
        if e.expires is not None:
            sub(entry, c("expires"), cap_datetime(e.expires, name=f"entries[{i}].expires"))
        if e.area_desc:
            sub(entry, c("areaDesc"), e.area_desc)
    return ET.tostring(feed, encoding="utf-8", xml_declaration=True)
