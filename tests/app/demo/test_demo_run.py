"""End to end: `shoalcast demo --no-serve` on the invented coast, then its outlooks checked spot by spot.

One run (tables built in a process pool, the feed polled over loopback HTTP) is shared by the
tests in this module; a second run must reuse everything. Expectations are the named behaviours
of each spot kind (issue 8), read from the outlook JSON of the outlook service.
"""

from __future__ import annotations

import io
from datetime import UTC, datetime

import pytest

pytestmark = pytest.mark.slow

NOW = datetime(2026, 12, 1, 0, tzinfo=UTC)  # fixed: the feed and the outlook window are reproducible


@pytest.fixture(scope="module")
def demo(tmp_path_factory):
    from app.config import get_settings

    root = tmp_path_factory.mktemp("demo")
    mp = pytest.MonkeyPatch()
    mp.setenv("SHOALCAST_DATA_DIR", str(root / "var"))
    mp.delenv("SHOALCAST_DATABASE_URL", raising=False)
    get_settings.cache_clear()
    from app.demo.run import run_demo

    first, second = io.StringIO(), io.StringIO()
    assert run_demo(root / "demo", serve=False, feed_port=0, out=first, err=io.StringIO(), now=NOW) == 0
    assert run_demo(root / "demo", serve=False, feed_port=0, out=second, err=io.StringIO(), now=NOW) == 0
    from app.commands.common import ready_database
    from app.db.session import session_scope
    from app.demo.run import AGENCY_ID, OUTLOOK_HOURS
    from app.services.outlooks import get_outlook

    bodies = {}
    with session_scope(ready_database()) as session:
        for sid in ("vorrel-point", "quenning-ridge", "quillance-bay", "ostravel-strand"):
            bodies[sid] = get_outlook(session, sid, hours=OUTLOOK_HOURS, start=NOW, agency_id=AGENCY_ID)
    yield {"first": first.getvalue(), "second": second.getvalue(), "outlooks": bodies}
    mp.undo()
    get_settings.cache_clear()


def _steps_from(body, lo, hi):
    return [s for s in body.steps if s.offshore.direction_deg is not None and lo <= s.offshore.direction_deg <= hi
            and s.breaker_height_m is not None]


def test_first_run_builds_ingests_and_prints_cautions(demo):
    out = demo["first"]
    assert "tables    14 built, 0 up to date" in out
    assert "demo-offshore-1: 37 new" in out or "demo-offshore-1:" in out and " new," in out
    for spot in ("Vorrel Point", "Quenning Ridge", "Quillance Bay", "Ostravel Strand"):
        assert spot in out
    # the cautions the safety rule asks for (guidance only; conditions change; follow lifeguards ...)
    assert "Guidance only" in out and "Conditions change" in out and "Follow lifeguards, official warnings and local rules" in out


def test_second_run_reuses_tables_spots_and_feed(demo):
    out = demo["second"]
    assert "tables    0 built, 14 up to date" in out
    assert "0 imported, 4 unchanged" in out
    assert " 0 new" in out or "not modified" in out  # nothing ingested twice


def _train(step, lo, hi):
    """The step's largest swell train from [lo, hi] degrees (FROM), or None."""
    trains = [w for w in step.swells if lo <= w.direction_deg <= hi and w.period_s >= 9.0]
    return max(trains, key=lambda w: w.height_m, default=None)


def test_bay_is_small_for_west_swell_and_open_to_north_west(demo):
    bay, beach = demo["outlooks"]["quillance-bay"], demo["outlooks"]["ostravel-strand"]
    by_time = {s.time: s for s in beach.steps}
    west, north_west = [], []
    for s in bay.steps:
        other = by_time.get(s.time)
        if other is None:
            continue
        for band, into in (((255.0, 275.0), west), ((312.0, 330.0), north_west)):
            ours, theirs = _train(s, *band), _train(other, *band)
            if ours is not None and theirs is not None and theirs.breaker_height_m and theirs.breaker_height_m >= 0.5:
                into.append((ours.breaker_height_m or 0.0) / theirs.breaker_height_m)
    assert len(west) >= 5 and len(north_west) >= 5
    # the same west swell: sheltered by the island, typically a fifth of the open beach's breakers
    # (issue 12's shadow criterion is 0.35 for a swell whose directions the shadow covers). This
    # one (cos-2s, s = 55, from 262-270°) keeps a few per cent of its energy beyond 285°, where the
    # north-west gap opens for long periods: rays leaving the bay's flat 24 m edges go on straight
    # (engine 5; engine 4 blocked most of them on the exit cell's noisy gradient), so that share
    # gets in at K near 1, and for a few hours the ratio rises toward 0.4.
    west.sort()
    assert west[len(west) // 2] < 0.25
    assert west[-1] < 0.45
    # the same north-west swell comes straight in: not small
    assert min(north_west) > 0.5


def test_beach_closes_out_at_normal_incidence(demo):
    beach = demo["outlooks"]["ostravel-strand"]
    square = _steps_from(beach, 262, 278)  # the beach faces 270°
    assert square
    assert all(s.peel.direction == "closeout" for s in square)


def test_ridge_breakers_exceed_the_beach_for_long_period_swell(demo):
    ridge, beach = demo["outlooks"]["quenning-ridge"], demo["outlooks"]["ostravel-strand"]
    by_time = {s.time: s for s in beach.steps}
    long = [s for s in ridge.steps if s.period_s and s.period_s >= 14 and s.time in by_time and s.breaker_height_m]
    assert long
    # the same long-period swell at the same time: larger on the ridge than on the plain beach
    assert all(s.breaker_height_m.sets > by_time[s.time].breaker_height_m.sets for s in long)


def test_ridge_focuses_long_period_swell_and_peels_both_ways(demo):
    ridge, beach = demo["outlooks"]["quenning-ridge"], demo["outlooks"]["ostravel-strand"]
    by_time = {s.time: s for s in beach.steps}
    long = [s for s in ridge.steps if s.period_s and s.period_s >= 14 and s.time in by_time and s.breaker_height_m
            and s.offshore.direction_deg is not None and 255 <= s.offshore.direction_deg <= 285]
    assert long
    assert all(s.breaker_height_m.sets > by_time[s.time].breaker_height_m.sets for s in long)
    assert all(s.peel.direction == "both" for s in long)


def test_point_peels_one_way_with_a_large_angle(demo):
    point = demo["outlooks"]["vorrel-point"]
    west = _steps_from(point, 255, 280)
    assert west
    dirs = {s.peel.direction for s in west}
    # one way all through the west swell, forerunners included
    assert len(dirs) == 1 and dirs <= {"left", "right"}
    # a large peel angle (>= 30°, Hutt, Black & Mead 2001 peel angle, from memory) while the west swell
    # is the main swell: offshore Hm0 at least 75 % of its peak (the first long-period forerunners
    # wrap further round the point and peel at 20-30°: the 17 s one at 74 % of the peak peels at 29°
    # now that long periods leaving the grid short of the wave base are continued, not cut). The demo
    # tide (about ±1 m) moves the angle by 1-2°: the mean over the main swell stays >= 30°, no hour < 28°.
    top = max(s.offshore.hm0_m for s in west)
    main = [s for s in west if s.offshore.hm0_m >= 0.75 * top]
    assert len(main) >= 12
    assert all(s.peel.angle_deg is not None and s.peel.angle_deg >= 28.0 for s in main)
    assert sum(s.peel.angle_deg for s in main) / len(main) >= 30.0


def test_walkthrough_verifies_the_beach_against_its_invented_gauge(demo):
    # The gauge records the offshore truth shoaled by linear theory times SITE_FACTOR (0.9) in height
    # (app.demo.gauge): the fitted factor should come back near it; refraction and breaking-free
    # Hm0 at the gauge's position are the model's, so allow a few per cent either way.
    import re

    from app.demo.gauge import SITE_FACTOR

    out = demo["first"]
    assert "Verification of ostravel-strand against the nearshore gauge demo-gauge-strand" in out
    m = re.search(r"  n (\d+) .* factor (\d\.\d+) ± (\d\.\d+)", out)
    assert m, out[-2000:]
    n, c, se = int(m.group(1)), float(m.group(2)), float(m.group(3))
    block = out[out.index("Verification of"):][:1500]
    # hours whose arrival from the offshore buoy was not whole yet at the time stay unpaired
    assert n >= 5 and se < 0.05, block
    # the model's own shoaling/refraction at the gauge differs from the gauge's linear, normal-incidence
    # invention by some per cent (and changes with the table engine): a factor between the site factor
    # and one, with a margin
    assert SITE_FACTOR - 0.08 < c < 1.08, block
    assert "inputs used: demo-offshore-1:arrival-forecast" in out
