"""CAP 1.2 alerts: rule checks (validate_cap) and the transcribed XSD (xmlschema) must both pass.

Sources: OASIS CAP v1.2 (2010) §3 element list, enumerations and the §3.3.2 DateTime form (from
memory, as summarised in docs/formats.md §3); RFC 7946 §3.1.1 position order [lon, lat].
"""

from __future__ import annotations

import re
import xml.etree.ElementTree as ET
from datetime import UTC, datetime, timedelta, timezone

import pytest
import xmlschema

from app.errors import BadInput
from app.formats.cap import (
    CAP_NS,
    CAP_XSD_PATH,
    CAUTION,
    AlertSpec,
    CapReference,
    build_cap,
    cap_datetime,
    validate_cap,
)

NS = {"cap": CAP_NS}
SENT = datetime(2026, 3, 24, 10, 50, tzinfo=UTC)
# A fictional point on the demo coast: lat 10.0 N, lon 20.5 E (lon != lat so order errors show).
LAT, LON = 10.0, 20.5


@pytest.fixture(scope="module")
def schema() -> xmlschema.XMLSchema:
    return xmlschema.XMLSchema(CAP_XSD_PATH)


def spec(**over) -> AlertSpec:
    base = dict(
        identifier="shoalcast-spot-brindlewick-ledge-20260324T1050",
        sender="alerts@shoalcast.example",
        sent=SENT,
        event="High surf",
        urgency="Expected",
        severity="Moderate",
        certainty="Likely",
        area_desc="Brindlewick Ledge (fictional)",
        onset=SENT + timedelta(hours=3),
        expires=SENT + timedelta(hours=12),
        headline="Large sets expected at Brindlewick Ledge",
        description="Set breaker heights near 3.1 m from a long-period swell.",
        instruction="Stay out of the water at exposed breaks.",
        circle=(LAT, LON, 2.5),
        polygon=((10.01, 20.49), (10.01, 20.51), (9.99, 20.51), (9.99, 20.49)),
        parameters={"hazard_level": "2", "set_breaker_height_m": "3.1"},
        web="https://shoalcast.example/v1/spots/brindlewick-ledge",
    )
    base.update(over)
    return AlertSpec(**base)


def update_spec(msg_type: str) -> AlertSpec:
    ref = CapReference("alerts@shoalcast.example", "shoalcast-spot-brindlewick-ledge-20260324T1050", SENT)
    return spec(identifier=f"shoalcast-spot-brindlewick-ledge-20260324T1350-{msg_type.lower()}",
                sent=SENT + timedelta(hours=3), msg_type=msg_type, references=(ref,))


@pytest.mark.parametrize("make", [lambda: spec(), lambda: update_spec("Update"), lambda: update_spec("Cancel")],
                         ids=["Alert", "Update", "Cancel"])
def test_alert_update_cancel_validate_rules_and_xsd(make, schema):
    xml = build_cap(make())
    assert validate_cap(xml) == []
    schema.validate(xml)  # raises on any structural violation


def test_references_are_sender_identifier_sent_triples():
    root = ET.fromstring(build_cap(update_spec("Update")))
    refs = root.find("cap:references", NS).text
    assert refs == "alerts@shoalcast.example,shoalcast-spot-brindlewick-ledge-20260324T1050,2026-03-24T10:50:00-00:00"


def test_utc_is_written_minus_zero_never_z():
    # CAP 1.2 §3.3.2 (from memory): numeric offset required, UTC as -00:00.
    assert cap_datetime(SENT) == "2026-03-24T10:50:00-00:00"
    plus2 = datetime(2026, 3, 24, 12, 50, 30, 999, tzinfo=timezone(timedelta(hours=2)))
    assert cap_datetime(plus2) == "2026-03-24T10:50:30-00:00"
    xml = build_cap(spec()).decode()
    stamps = re.findall(r"<(sent|onset|expires)>([^<]+)<", xml)
    assert len(stamps) == 3 and all(v.endswith("-00:00") for _, v in stamps)
    assert "Z<" not in xml


def test_naive_datetime_is_refused_naming_the_field():
    with pytest.raises(BadInput, match="`onset`"):
        build_cap(spec(onset=datetime(2026, 3, 24, 12)))


def test_validator_catches_z_offset(schema):
    bad = build_cap(spec()).replace(b"2026-03-24T10:50:00-00:00", b"2026-03-24T10:50:00Z")
    assert any("sent" in p and "-00:00" in p for p in validate_cap(bad))
    assert not schema.is_valid(bad)


def test_lat_lon_order_is_reverse_of_geojson_for_one_point():
    root = ET.fromstring(build_cap(spec()))
    circle = root.find("cap:info/cap:area/cap:circle", NS).text
    assert circle == "10,20.5 2.5"
    geojson_position = [LON, LAT]  # RFC 7946 §3.1.1: [longitude, latitude]
    cap_lat, cap_lon = (float(v) for v in circle.split()[0].split(","))
    assert [cap_lon, cap_lat] == geojson_position
    first = root.find("cap:info/cap:area/cap:polygon", NS).text.split()[0]
    assert first == "10.01,20.49"


def test_polygon_is_closed_with_four_or_more_pairs():
    root = ET.fromstring(build_cap(spec()))
    pairs = root.find("cap:info/cap:area/cap:polygon", NS).text.split()
    assert len(pairs) == 5 and pairs[0] == pairs[-1]


def test_description_and_instruction_carry_the_caution():
    root = ET.fromstring(build_cap(spec(description=None, instruction="Avoid the north rocks.")))
    for tag in ("description", "instruction"):
        assert CAUTION in root.find(f"cap:info/cap:{tag}", NS).text


@pytest.mark.parametrize(
    "over, field",
    [
        ({"identifier": "has space"}, "identifier"),
        ({"sender": "a,b"}, "sender"),
        ({"urgency": "Soon"}, "urgency"),
        ({"severity": "High"}, "severity"),
        ({"certainty": "Sure"}, "certainty"),
        ({"msg_type": "Update"}, "references"),
        ({"circle": (91.0, 20.0, 1.0), "polygon": None}, "circle"),
        ({"circle": None, "polygon": ((10.0, 200.0), (10.1, 20.0), (10.2, 20.1))}, "polygon[0]"),
        ({"circle": None, "polygon": ((10.0, 20.0), (10.1, 20.0))}, "polygon"),
        ({"circle": None, "polygon": None}, "circle"),
    ],
)
def test_bad_spec_raises_naming_the_field(over, field):
    with pytest.raises(BadInput) as err:
        build_cap(spec(**over))
    assert err.value.field == field


def _swap(xml: bytes, a: str, b: str) -> bytes:
    """Swap the first <a>…</a> and <b>…</b> elements (a before b in the document)."""
    text = xml.decode()
    ma = re.search(rf"<{a}>.*?</{a}>", text)
    mb = re.search(rf"<{b}>.*?</{b}>", text)
    sa, sb = ma.group(0), mb.group(0)
    return (text[: ma.start()] + sb + text[ma.end(): mb.start()] + sa + text[mb.end():]).encode()


@pytest.mark.parametrize(
    "mutate, expect",
    [
        (lambda x: _swap(x, "sender", "sent"), "out of order"),
        (lambda x: _swap(x, "urgency", "severity"), "out of order"),
        (lambda x: re.sub(rb"<status>.*?</status>", b"", x), "<status> is missing"),
        (lambda x: re.sub(rb"<event>.*?</event>", b"", x), "<event> is missing"),
        (lambda x: x.replace(b"<scope>Public<", b"<scope>Everyone<"), "scope"),
        (lambda x: x.replace(b"<category>Safety<", b"<category>Surf<"), "category"),
        (lambda x: x.replace(b"10.01,20.49</polygon>", b"10.02,20.49</polygon>"), "not closed"),
        (lambda x: x.replace(b"<circle>10,20.5", b"<circle>100,20.5"), "latitude"),
    ],
    ids=["alert-order", "info-order", "status-missing", "event-missing", "scope-enum", "category-enum",
         "open-polygon", "lat-range"],
)
def test_validator_finds_each_kind_of_problem(mutate, expect, schema):
    good = build_cap(spec())
    bad = mutate(good)
    assert bad != good
    problems = validate_cap(bad)
    assert any(expect in p for p in problems), problems
    if expect in ("out of order", "<status> is missing", "<event> is missing", "scope", "category"):
        assert not schema.is_valid(bad)  # the XSD sees structure/enumeration faults too


def test_update_without_references_is_flagged():
    xml = re.sub(rb"<references>.*?</references>", b"", build_cap(update_spec("Cancel")))
    assert any("references" in p for p in validate_cap(xml))
