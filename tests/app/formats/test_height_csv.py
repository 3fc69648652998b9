"""Observed breaker heights as CSV (app.formats.height_csv).

Sources: RFC 3339 §5.6 (date-time with an offset; the NOTE allowing a space for "T"); the
international foot = 0.3048 m exactly (1959 agreement, from memory); damaged rows rejected with
file, line and reason while the rest are used (common practice, as the other readers here).
"""

from __future__ import annotations

from datetime import UTC, datetime

import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from app.formats.height_csv import parse_height_csv, parse_rfc3339

GOOD = """time,breaker_height_m,point,observer
2030-01-01T06:00:00Z,1.2,north,tower 2
2030-01-01T07:00:00+02:00,1.4,,
"""


def test_good_rows_metres_points_observers_and_offsets() -> None:
    p = parse_height_csv(GOOD, name="log.csv", points=["north", "south"])
    assert not p.rejects and p.units == "m"
    a, b = p.observations
    # 07:00+02:00 is 05:00Z, so it sorts first
    assert a.time == datetime(2030, 1, 1, 5, tzinfo=UTC) and a.point is None and a.height_m == 1.4 and a.line == 3
    assert b.time == datetime(2030, 1, 1, 6, tzinfo=UTC) and b.point == "north" and b.observer == "tower 2"


def test_feet_column_is_converted_with_the_international_foot() -> None:
    p = parse_height_csv("time,breaker_height_ft\n2030-01-01 06:00:00Z,5\n", name="ft.csv")
    assert p.units == "ft" and p.observations[0].height_m == pytest.approx(5 * 0.3048)


def test_damaged_rows_are_rejected_with_file_line_and_reason_the_rest_used() -> None:
    text = "\n".join([
        "time,breaker_height_m,point",
        "2030-01-01T06:00:00Z,1.0,north",   # 2 good
        "2030-01-01T06:00:00,1.0,north",    # 3 no offset
        "yesterday,1.0,north",              # 4 not a time
        "2030-01-01T07:00:00Z,-0.5,north",  # 5 negative
        "2030-01-01T08:00:00Z,big,north",   # 6 not a number
        "2030-01-01T09:00:00Z,1.0,nowhere", # 7 unknown point
        "2030-01-01T10:00:00Z,1.0",         # 8 too few fields
        "2030-01-01T11:00:00Z,nan,north",   # 9 not finite
        "2030-01-01T06:00:00Z,1.1,north",   # 10 repeat of line 2
        "2030-01-01T12:00:00Z,45,north",    # 11 implausible
        "2030-01-01T13:00:00Z,0.8,south",   # 12 good
    ])  # fmt: skip
    p = parse_height_csv(text, name="damaged.csv", points=["north", "south"])
    assert [o.line for o in p.observations] == [2, 12]
    got = {r.line: (r.file, r.field, r.reason) for r in p.rejects}
    assert sorted(got) == [3, 4, 5, 6, 7, 8, 9, 10, 11]
    assert all(f == "damaged.csv" for f, _, _ in got.values())
    assert got[3][1] == "time" and "RFC 3339" in got[3][2]
    assert got[4][1] == "time"
    assert got[5][1] == "breaker_height_m" and ">= 0" in got[5][2]
    assert got[6][1] == "breaker_height_m" and "not a number" in got[6][2]
    assert got[7][1] == "point" and "nowhere" in got[7][2] and "north" in got[7][2]
    assert got[8][1] == "row"
    assert got[9][1] == "breaker_height_m"
    assert got[10][1] == "time" and "repeats" in got[10][2]
    assert got[11][1] == "breaker_height_m" and "implausible" in got[11][2]
    assert str(p.rejects[0]).startswith("damaged.csv:3: time:")


@pytest.mark.parametrize(
    "header",
    ["when,breaker_height_m", "time,height", "time,breaker_height_m,breaker_height_ft", "time,breaker_height_m,extra"],
)
def test_a_bad_header_rejects_the_file_naming_line_1(header: str) -> None:
    p = parse_height_csv(header + "\n2030-01-01T06:00:00Z,1.0\n", name="h.csv")
    assert not p.observations and len(p.rejects) == 1
    assert p.rejects[0].line == 1 and p.rejects[0].field == "header"


def test_empty_file() -> None:
    p = parse_height_csv(b"", name="empty.csv")
    assert not p.observations and p.rejects[0].field == "header"


@settings(max_examples=80, deadline=None)
@given(st.text(alphabet=st.characters(codec="utf-8"), max_size=300))
def test_arbitrary_text_never_raises(text: str) -> None:
    p = parse_height_csv("time,breaker_height_m,point\n" + text, name="fuzz.csv", points=["a"])
    for o in p.observations:
        assert o.height_m >= 0 and o.time.tzinfo is not None


@given(st.datetimes(min_value=datetime(1970, 1, 2), max_value=datetime(2200, 1, 1), timezones=st.just(UTC)))
def test_rfc3339_round_trip(t: datetime) -> None:
    t = t.replace(microsecond=0)
    assert parse_rfc3339(t.strftime("%Y-%m-%dT%H:%M:%SZ")) == t
