"""OASIS Common Alerting Protocol 1.2: build alert XML and check it against the standard's rules.

`build_cap(spec)` turns an `AlertSpec` into CAP 1.2 XML bytes; `validate_cap(xml)` lists every
problem it finds (element order, required elements, enumerations, the numeric-offset datetime rule,
identifier characters, polygon/circle syntax and ranges, references). The XSD transcribed beside this
module (`cap-1.2.xsd`, see `CAP_XSD_PATH`) checks structure independently; tests run both.

Traps this module exists to avoid (docs/formats.md §3):
- CAP datetimes carry a numeric offset and UTC is written `-00:00`; `Z` is forbidden. This is the
  opposite of RFC 3339 JSON, where we write `Z` (keep one serializer per format).
- CAP polygons and circles are `lat,lon` (GeoJSON is `[lon, lat]`).
"""

from __future__ import annotations

import math
import re
import xml.etree.ElementTree as ET
from dataclasses import dataclass, field
from datetime import UTC, datetime
from pathlib import Path

from app.errors import BadInput

__all__ = [
    "CAP_MEDIA_TYPE",
    "CAP_NS",
    "CAP_XSD_PATH",
    "CAUTION",
    "AlertSpec",
    "CapReference",
    "build_cap",
    "cap_datetime",
    "validate_cap",
]

CAP_NS = "urn:oasis:names:tc:emergency:cap:1.2"
CAP_MEDIA_TYPE = "application/cap+xml"
CAP_XSD_PATH = Path(__file__).with_name("cap-1.2.xsd")

# Every alert carries this text in its description and instruction (team safety rule).
CAUTION = (
    "Guidance only: conditions change quickly. Follow lifeguards, official warnings and local rules."
)

STATUS = ("Actual", "Exercise", "System", "Test", "Draft")
MSG_TYPE = ("Alert", "Update", "Cancel", "Ack", "Error")
SCOPE = ("Public", "Restricted", "Private")
CATEGORY = ("Geo", "Met", "Safety", "Security", "Rescue", "Fire", "Health", "Env", "Transport", "Infra",
            "CBRNE", "Other")
RESPONSE_TYPE = ("Shelter", "Evacuate", "Prepare", "Execute", "Avoid", "Monitor", "Assess", "AllClear",
                 "None")
URGENCY = ("Immediate", "Expected", "Future", "Past", "Unknown")
SEVERITY = ("Extreme", "Severe", "Moderate", "Minor", "Unknown")
CERTAINTY = ("Observed", "Likely", "Possible", "Unlikely", "Unknown")

# CAP 1.2 §3.3.2 datetime form: no fractional seconds, numeric offset, never Z.
_DATETIME_RE = re.compile(r"^\d{4}-\d{2}-\d{2}T\d{2}:\d{2}:\d{2}[-+]\d{2}:\d{2}$")
_FORBIDDEN_ID_CHARS = re.compile(r"[\s,<&]")
_NUMBER = r"[-+]?\d+(?:\.\d+)?"
_PAIR_RE = re.compile(rf"^({_NUMBER}),({_NUMBER})$")
_CIRCLE_RE = re.compile(rf"^({_NUMBER}),({_NUMBER}) ({_NUMBER})$")


@dataclass(frozen=True)
class CapReference:
    """An earlier alert referred to by an Update or Cancel."""

    sender: str
    identifier: str
    sent: datetime


@dataclass(frozen=True)
class AlertSpec:
    """One CAP alert with one info block and one area.

    Datetimes must be timezone-aware; `circle` is (lat, lon, radius_km); `polygon` is a sequence of
    (lat, lon) pairs (closed automatically if the last pair differs from the first).
    """

    identifier: str
    sender: str
    sent: datetime
    event: str
    urgency: str
    severity: str
    certainty: str
    area_desc: str
    msg_type: str = "Alert"
    references: tuple[CapReference, ...] = ()
    status: str = "Actual"
    scope: str = "Public"
    categories: tuple[str, ...] = ("Safety",)
    response_types: tuple[str, ...] = ("Monitor",)
    onset: datetime | None = None
    expires: datetime | None = None
    headline: str | None = None
    description: str | None = None
    instruction: str | None = None
    sender_name: str | None = None
    web: str | None = None
    circle: tuple[float, float, float] | None = None
    polygon: tuple[tuple[float, float], ...] | None = None
    parameters: dict[str, str] = field(default_factory=dict)
    language: str = "en-US"
    note: str | None = None


def cap_datetime(value: datetime, *, name: str = "datetime") -> str:
    """Format an aware datetime in CAP form: seconds precision, UTC written as `-00:00`."""
    if not isinstance(value, datetime):
        raise BadInput(f"`{name}` must be a datetime, got {type(value).__name__}", field=name)
    if value.tzinfo is None or value.utcoffset() is None:
        raise BadInput(f"`{name}` must be timezone-aware, got naive {value.isoformat()}", field=name)
    utc = value.astimezone(UTC).replace(microsecond=0)
    return utc.strftime("%Y-%m-%dT%H:%M:%S") + "-00:00"


def _check_id(value: str, name: str) -> str:
    if not isinstance(value, str) or not value:
        raise BadInput(f"`{name}` must be a non-empty string", field=name)
    if _FORBIDDEN_ID_CHARS.search(value):
        raise BadInput(f"`{name}` must not contain spaces, commas, '<' or '&': {value!r}", field=name)
    return value


def _check_enum(value: str, allowed: tuple[str, ...], name: str) -> str:
    if value not in allowed:
        raise BadInput(f"`{name}` must be one of {', '.join(allowed)}; got {value!r}", field=name)
    return value


def _check_latlon(lat: float, lon: float, name: str) -> tuple[float, float]:
    lat, lon = float(lat), float(lon)
    if not (math.isfinite(lat) and -90.0 <= lat <= 90.0):
        raise BadInput(f"`{name}` latitude must be within -90..90, got {lat}", field=name)
    if not (math.isfinite(lon) and -180.0 <= lon <= 180.0):
        raise BadInput(f"`{name}` longitude must be within -180..180, got {lon}", field=name)
    return lat, lon


def _num(x: float) -> str:
    # Up to 6 decimals (about 0.1 m), trailing zeros trimmed; never exponent notation.
    text = f"{x:.6f}".rstrip("0").rstrip(".")
    return "0" if text in ("-0", "") else text


def _with_caution(text: str | None) -> str:
    text = (text or "").strip()
    if CAUTION in text:
        return text
    return f"{text} {CAUTION}".strip()


def build_cap(spec: AlertSpec) -> bytes:
    """Serialise `spec` as a CAP 1.2 alert (UTF-8 XML bytes with declaration).

    Raises `app.errors.BadInput` naming the field when the spec breaks a CAP rule.
    """
    _check_id(spec.identifier, "identifier")
    _check_id(spec.sender, "sender")
    _check_enum(spec.status, STATUS, "status")
    _check_enum(spec.msg_type, MSG_TYPE, "msg_type")
    _check_enum(spec.scope, SCOPE, "scope")
    if spec.scope != "Public":
        raise BadInput("only `scope` Public is supported (Restricted/Private need restriction/addresses)",
                       field="scope")
    if not spec.categories:
        raise BadInput("`categories` needs at least one CAP category", field="categories")
    for c in spec.categories:
        _check_enum(c, CATEGORY, "categories")
    for r in spec.response_types:
        _check_enum(r, RESPONSE_TYPE, "response_types")
    _check_enum(spec.urgency, URGENCY, "urgency")
    _check_enum(spec.severity, SEVERITY, "severity")
    _check_enum(spec.certainty, CERTAINTY, "certainty")
    for name in ("event", "area_desc"):
        if not getattr(spec, name) or not str(getattr(spec, name)).strip():
            raise BadInput(f"`{name}` is required", field=name)
    if spec.msg_type in ("Update", "Cancel") and not spec.references:
        raise BadInput(f"`references` is required for msg_type {spec.msg_type}", field="references")
    if spec.circle is None and not spec.polygon:
        raise BadInput("the area needs a `circle` or a `polygon`", field="circle")

    q = lambda tag: f"{{{CAP_NS}}}{tag}"  # noqa: E731 - local shorthand for qualified names
    alert = ET.Element(q("alert"))

    def sub(parent: ET.Element, tag: str, text: str | None) -> ET.Element | None:
        if text is None:
            return None
        el = ET.SubElement(parent, q(tag))
        el.text = text
        return el

    sub(alert, "identifier", spec.identifier)
    sub(alert, "sender", spec.sender)
    sub(alert, "sent", cap_datetime(spec.sent, name="sent"))
    sub(alert, "status", spec.status)
    sub(alert, "msgType", spec.msg_type)
    sub(alert, "scope", spec.scope)
    sub(alert, "note", spec.note)
    if spec.references:
        triples = []
        for i, ref in enumerate(spec.references):
            where = f"references[{i}]"
            _check_id(ref.sender, f"{where}.sender")
            _check_id(ref.identifier, f"{where}.identifier")
            triples.append(f"{ref.sender},{ref.identifier},{cap_datetime(ref.sent, name=f'{where}.sent')}")
        sub(alert, "references", " ".join(triples))

    info = ET.SubElement(alert, q("info"))
    sub(info, "language", spec.language)
    for c in spec.categories:
        sub(info, "category", c)
    sub(info, "event", spec.event)
    for r in spec.response_types:
        sub(info, "responseType", r)
    sub(info, "urgency", spec.urgency)
    sub(info, "severity", spec.severity)
    sub(info, "certainty", spec.certainty)
    if spec.onset is not None:
        sub(info, "onset", cap_datetime(spec.onset, name="onset"))
    if spec.expires is not None:
        sub(info, "expires", cap_datetime(spec.expires, name="expires"))
    sub(info, "senderName", spec.sender_name)
    sub(info, "headline", spec.headline)
    sub(info, "description", _with_caution(spec.description))
    sub(info, "instruction", _with_caution(spec.instruction))
    sub(info, "web", spec.web)
    for name, value in spec.parameters.items():
        p = ET.SubElement(info, q("parameter"))
        sub(p, "valueName", str(name))
        sub(p, "value", str(value))

    area = ET.SubElement(info, q("area"))
    sub(area, "areaDesc", spec.area_desc)
    if spec.polygon:
        pts = [_check_latlon(lat, lon, f"polygon[{i}]") for i, (lat, lon) in enumerate(spec.polygon)]
        if pts[0] != pts[-1]:
            pts.append(pts[0])
        if len(pts) < 4:
            raise BadInput(f"`polygon` needs at least 3 distinct points, got {len(pts) - 1}", field="polygon")
        sub(area, "polygon", " ".join(f"{_num(lat)},{_num(lon)}" for lat, lon in pts))
    if spec.circle is not None:
        lat, lon, radius = spec.circle
        lat, lon = _check_latlon(lat, lon, "circle")
        if not (math.isfinite(radius) and radius >= 0):
            raise BadInput(f"`circle` radius_km must be finite and >= 0, got {radius}", field="circle")
        sub(area, "circle", f"{_num(lat)},{_num(lon)} {_num(radius)}")

    return ET.tostring(alert, encoding="utf-8", xml_declaration=True, default_namespace=CAP_NS)


# ---------------------------------------------------------------------------------------------
# Rule checks (independent of the builder: they read the XML as any consumer would)

# (element, minOccurs, maxOccurs or None for unbounded), in the XSD sequence order.
_ALERT_SEQ = [("identifier", 1, 1), ("sender", 1, 1), ("sent", 1, 1), ("status", 1, 1), ("msgType", 1, 1),
              ("source", 0, 1), ("scope", 1, 1), ("restriction", 0, 1), ("addresses", 0, 1),
              ("code", 0, None), ("note", 0, 1), ("references", 0, 1), ("incidents", 0, 1),
              ("info", 0, None)]
_INFO_SEQ = [("language", 0, 1), ("category", 1, None), ("event", 1, 1), ("responseType", 0, None),
             ("urgency", 1, 1), ("severity", 1, 1), ("certainty", 1, 1), ("audience", 0, 1),
             ("eventCode", 0, None), ("effective", 0, 1), ("onset", 0, 1), ("expires", 0, 1),
             ("senderName", 0, 1), ("headline", 0, 1), ("description", 0, 1), ("instruction", 0, 1),
             ("web", 0, 1), ("contact", 0, 1), ("parameter", 0, None), ("resource", 0, None),
             ("area", 0, None)]
_AREA_SEQ = [("areaDesc", 1, 1), ("polygon", 0, None), ("circle", 0, None), ("geocode", 0, None),
             ("altitude", 0, 1), ("ceiling", 0, 1)]
_PAIR_SEQ = [("valueName", 1, 1), ("value", 1, 1)]
_RESOURCE_SEQ = [("resourceDesc", 1, 1), ("mimeType", 1, 1), ("size", 0, 1), ("uri", 0, 1),
                 ("derefUri", 0, 1), ("digest", 0, 1)]
_ENUMS = {"status": STATUS, "msgType": MSG_TYPE, "scope": SCOPE, "category": CATEGORY,
          "responseType": RESPONSE_TYPE, "urgency": URGENCY, "severity": SEVERITY, "certainty": CERTAINTY}
_DATETIMES = ("sent", "effective", "onset", "expires")
_XMLDSIG_NS = "http://www.w3.org/2000/09/xmldsig#"


def _local(tag: str) -> tuple[str | None, str]:
    if tag.startswith("{"):
        ns, _, name = tag[1:].partition("}")
        return ns, name
    return None, tag


def _check_sequence(parent: ET.Element, seq: list, where: str, problems: list[str]) -> None:
    """Children must follow `seq` in order, within their occurrence bounds."""
    order = {name: i for i, (name, _, _) in enumerate(seq)}
    counts = dict.fromkeys(order, 0)
    last = -1
    for child in parent:
        ns, name = _local(child.tag)
        if where == "alert" and ns == _XMLDSIG_NS:
            continue  # the XSD allows signatures at the end of <alert>
        if ns != CAP_NS:
            problems.append(f"{where}: element {child.tag} is not in the CAP 1.2 namespace")
            continue
        if name not in order:
            problems.append(f"{where}: unexpected element <{name}>")
            continue
        if order[name] < last:
            problems.append(f"{where}: <{name}> is out of order (CAP 1.2 sequence)")
        last = max(last, order[name])
        counts[name] += 1
    for name, lo, hi in seq:
        if counts[name] < lo:
            problems.append(f"{where}: required element <{name}> is missing")
        if hi is not None and counts[name] > hi:
            problems.append(f"{where}: <{name}> appears {counts[name]} times (at most {hi})")


def _children(parent: ET.Element, name: str) -> list[ET.Element]:
    return parent.findall(f"{{{CAP_NS}}}{name}")


def _text(parent: ET.Element, name: str) -> str | None:
    el = parent.find(f"{{{CAP_NS}}}{name}")
    return None if el is None else (el.text or "")


def _check_pair(lat_s: str, lon_s: str, where: str, problems: list[str]) -> None:
    lat, lon = float(lat_s), float(lon_s)
    if not -90 <= lat <= 90:
        problems.append(f"{where}: latitude {lat} outside -90..90 (CAP order is lat,lon)")
    if not -180 <= lon <= 180:
        problems.append(f"{where}: longitude {lon} outside -180..180")


def validate_cap(xml_bytes: bytes | str) -> list[str]:
    """Return the CAP 1.2 rule violations found in `xml_bytes` (empty list = valid)."""
    problems: list[str] = []
    try:
        root = ET.fromstring(xml_bytes)
    except ET.ParseError as exc:
        return [f"not well-formed XML: {exc}"]
    if root.tag != f"{{{CAP_NS}}}alert":
        return [f"root element must be <alert> in {CAP_NS}, got {root.tag}"]

    _check_sequence(root, _ALERT_SEQ, "alert", problems)
    blocks = [("alert", root)]
    for i, info in enumerate(_children(root, "info")):
        _check_sequence(info, _INFO_SEQ, f"info[{i}]", problems)
        blocks.append((f"info[{i}]", info))
        for kind, seq in (("eventCode", _PAIR_SEQ), ("parameter", _PAIR_SEQ), ("resource", _RESOURCE_SEQ)):
            for j, el in enumerate(_children(info, kind)):
                _check_sequence(el, seq, f"info[{i}].{kind}[{j}]", problems)
        for j, area in enumerate(_children(info, "area")):
            where = f"info[{i}].area[{j}]"
            _check_sequence(area, _AREA_SEQ, where, problems)
            for k, el in enumerate(_children(area, "geocode")):
                _check_sequence(el, _PAIR_SEQ, f"{where}.geocode[{k}]", problems)
            for k, poly in enumerate(_children(area, "polygon")):
                pw = f"{where}.polygon[{k}]"
                pairs = (poly.text or "").split()
                matches = [_PAIR_RE.match(p) for p in pairs]
                if not pairs or not all(matches):
                    problems.append(f"{pw}: must be space-separated lat,lon pairs")
                    continue
                if len(pairs) < 4:
                    problems.append(f"{pw}: needs at least 4 pairs, got {len(pairs)}")
                if [float(v) for v in matches[0].groups()] != [float(v) for v in matches[-1].groups()]:
                    problems.append(f"{pw}: not closed (first pair must equal the last)")
                for m in matches:
                    _check_pair(m.group(1), m.group(2), pw, problems)
            for k, circ in enumerate(_children(area, "circle")):
                cw = f"{where}.circle[{k}]"
                m = _CIRCLE_RE.match((circ.text or "").strip())
                if not m:
                    problems.append(f"{cw}: must be 'lat,lon radius_km', got {circ.text!r}")
                    continue
                _check_pair(m.group(1), m.group(2), cw, problems)
                if float(m.group(3)) < 0:
                    problems.append(f"{cw}: negative radius")

    for where, block in blocks:
        for name, allowed in _ENUMS.items():
            for el in _children(block, name):
                if (el.text or "") not in allowed:
                    problems.append(f"{where}.{name}: {el.text!r} is not one of {', '.join(allowed)}")
        for name in _DATETIMES:
            for el in _children(block, name):
                value = el.text or ""
                if not _DATETIME_RE.match(value):
                    problems.append(f"{where}.{name}: {value!r} needs a numeric offset (UTC is -00:00, never Z)")

    for name in ("identifier", "sender"):
        value = _text(root, name)
        if value is not None and (not value or _FORBIDDEN_ID_CHARS.search(value)):
            problems.append(f"alert.{name}: {value!r} must be non-empty without spaces, commas, '<' or '&'")

    msg_type, refs = _text(root, "msgType"), _text(root, "references")
    if msg_type in ("Update", "Cancel") and not refs:
        problems.append(f"alert.references: required for msgType {msg_type}")
    for triple in (refs or "").split():
        parts = triple.split(",")
        if len(parts) != 3 or not all(parts) or not _DATETIME_RE.match(parts[2]):
            problems.append(f"alert.references: {triple!r} is not sender,identifier,sent")
    scope = _text(root, "scope")
    if scope == "Restricted" and not _text(root, "restriction"):
        problems.append("alert.restriction: required when scope is Restricted")
    if scope == "Private" and not _text(root, "addresses"):
        problems.append("alert.addresses: required when scope is Private")
    return problems
