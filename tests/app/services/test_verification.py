"""Verification and calibration of a spot's outlook (app.services.verification, .calibration).

Sources: observations made as c × forecast × (1 + noise) must give back c within two standard
errors (least squares through the origin, White 1980 HC standard error; see
tests/models/test_verification.py for the scores by hand after Wilks 2011 §8.3); bias and RMSE
written out by hand on the same pairs; a nearshore station over straight parallel contours at
normal incidence sees the offshore spectrum shoaled by linear theory, E(f) × Cg0/Cg(f, h)
(energy flux conservation, e.g. Dean & Dalrymple 1991, Water Wave Mechanics, §4.8; dispersion
ω² = gk tanh kh solved here with scipy's brentq); no look-ahead: a forecast ingested after an
observation time must not be used for it (the rule of a fair hindcast, common practice).
"""

from __future__ import annotations

import importlib.util
import math
import sys
from datetime import UTC, datetime, timedelta
from pathlib import Path

import numpy as np
import pytest
from scipy.optimize import brentq
from sqlalchemy import select, update

from app.db.session import session_scope
from app.db.tables import Bathymetry, BreakPoint, Observation, Source, Spot, TransferTableRow
from app.errors import BadInput, NotFound
from app.formats.records import ParseResult, SpectrumRecord
from app.ingest.store import store_result
from app.services import calibration, outlook_cache, outlooks, verification
from models.constants import G
from models.geodesy import to_lonlat

_spec = importlib.util.spec_from_file_location("_outlook_fixtures", Path(__file__).with_name("_outlook_fixtures.py"))
fx = importlib.util.module_from_spec(_spec)
sys.modules.setdefault("_outlook_fixtures", fx)
_spec.loader.exec_module(fx)

T0 = datetime(2030, 1, 1, tzinfo=UTC)
# the station table's options (small and quick, as the fixtures' tables)
MODEL = {"period_min_s": 8.0, "period_max_s": 16.0, "period_count": 5, "launch_spacing_deg": 1.0, "smoothing_m": 0.0}


def _spot(session, spot_id: str, sources: list[str]) -> None:
    grid = fx.grid_of("beach")
    spot = Spot(id=spot_id, name=spot_id.title(), latitude=0.0, longitude=0.0, faces_deg=270.0,
                profile={"model": MODEL}, profile_sha256="0" * 64, sources=sources)  # fmt: skip
    spot.bathymetry = Bathymetry(
        depth=grid.depth, nx=grid.shape[1], ny=grid.shape[0], x0=grid.x0, y0=grid.y0, dx=grid.dx, dy=grid.dy,
        origin_latitude=0.0, origin_longitude=0.0, datum="MSL", source_file="synthetic", source_format="esri-ascii",
        sha256="1" * 64,
    )  # fmt: skip
    for i, y in enumerate((0.0, 400.0)):
        x = fx.break_x("beach", y)
        bp = BreakPoint(position=i, name=f"p{i}", x=x, y=y, latitude=0.0, longitude=0.0, depth_m=2.0,
                        reference_depth_m=10.0)  # fmt: skip
        bp.table = TransferTableRow(spot_id=spot_id, input_hash=f"h{i}", engine_version="test",
                                    arrays=fx.table_npz(fx.table_for("beach", x, y)), meta={})  # fmt: skip
        spot.break_points.append(bp)
    session.add(spot)
    session.flush()


def _source(session, source_id: str, lat: float = 0.0, lon: float = 0.0) -> Source:
    src = Source(id=source_id, name=source_id, format="cf-netcdf", latitude=lat, longitude=lon, depth_m=None,
                 urls=[], config={})  # fmt: skip
    session.add(src)
    session.flush()
    return src


def _records(times, efths, *, issue=None, density=None) -> ParseResult:
    recs = tuple(
        SpectrumRecord(station="st", time=t, issue_time=issue, frequency=fx.FREQ,
                       density=(e * np.radians(2.0)).sum(axis=1) if density is None else density[i],
                       directions_deg=fx.DIRS, efth=e)  # fmt: skip
        for i, (t, e) in enumerate(zip(times, efths, strict=True))
    )
    return ParseResult(records=recs)


def _event(n: int) -> list[np.ndarray]:
    """A swell that rises and falls over n hours (heights 0.6..2.1 m, 10..14 s, from the west)."""
    out = []
    for h in range(n):
        a = math.sin(math.pi * h / (n - 1))
        out.append(fx.swell(0.6 + 1.5 * a, 10.0 + 4.0 * a, 270.0 + 10.0 * math.cos(h / 5.0)))
    return out


def _csv(rows: list[tuple[datetime, float]], extra: str = "") -> str:
    lines = ["time,breaker_height_m,observer"] + [f"{t:%Y-%m-%dT%H:%M:%SZ},{h:.4f},tower" for t, h in rows]
    return "\n".join(lines) + "\n" + extra


def test_factor_recovered_bias_rmse_by_hand_and_apply_remove(migrated_db: str) -> None:
    n = 36
    times = fx.hours(T0, n)
    with session_scope(migrated_db) as s:
        src = _source(s, "model")
        _spot(s, "beach-v", ["model"])
        store_result(s, src, _records(times, _event(n), issue=T0 - timedelta(hours=6)), files=["a"])
        raw = outlooks.compute_outlook(s, "beach-v", hours=n - 1, start=T0)
        fc = {st.time: st.breaker_height_m.typical for st in raw.steps}
    assert len(fc) == n and all(v and v > 0 for v in fc.values())
    c_true = 1.25
    rng = np.random.default_rng(3)
    # observed 10 minutes after each step (paired with that step), c × forecast × (1 + noise)
    obs = [(t + timedelta(minutes=10), c_true * fc[t] * (1 + 0.1 * rng.standard_normal())) for t in times]
    with session_scope(migrated_db) as s:
        body, parsed = verification.verify_csv(s, "beach-v", _csv(obs), name="log.csv")
    assert body["n"] == n and body["unpaired"] == 0 and not parsed.rejects
    pairs = body["pairs"]
    assert all(p["input"] == "model-forecast" and p["source"] == "model" for p in pairs)
    assert all(p["issued"] == "2029-12-31T18:00:00Z" for p in pairs)
    o = [p["observed_m"] for p in pairs]
    f = [p["forecast_m"] for p in pairs]
    # the pair's forecast is the outlook's typical height at its step (the outlook rounds to 0.1 m)
    assert all(abs(p["forecast_m"] - fc[datetime.fromisoformat(p["step_time"])]) <= 0.051 for p in pairs)
    assert abs(body["calibration_factor"] - c_true) < 2 * body["calibration_factor_stderr"]
    bias = sum(oi - fi for oi, fi in zip(o, f, strict=True)) / n
    rmse = math.sqrt(sum((oi - fi) ** 2 for oi, fi in zip(o, f, strict=True)) / n)
    assert body["bias_m"] == pytest.approx(bias, abs=2e-4)  # pairs are printed to 1 mm
    assert body["rmse_m"] == pytest.approx(rmse, abs=2e-4)
    assert body["by_sector"] and sum(v["n"] for v in body["by_sector"].values()) == n
    assert sum(v["n"] for v in body["by_period_band"].values()) == n
    assert body["cautions"]

    with session_scope(migrated_db) as s:
        key_raw = outlook_cache.outlook_key(s, "beach-v", hours=4, start=T0)
        row = verification.store_verification(s, body, who="tester")
        cal = calibration.apply_factor(s, "beach-v", body["calibration_factor"], stderr=body["calibration_factor_stderr"],
                                       who="tester", metrics={"n": n}, verification_id=row.id)  # fmt: skip
        assert cal.version == 1
        key_cal = outlook_cache.outlook_key(s, "beach-v", hours=4, start=T0)
        calibrated = outlooks.get_outlook(s, "beach-v", hours=4, start=T0)
    assert key_cal != key_raw
    c = body["calibration_factor"]
    for st, rs in zip(calibrated.steps, raw.steps[:5], strict=True):
        d = st.model_dump(mode="json")
        assert d["calibrated"] is True and d["calibration_factor"] == pytest.approx(c, abs=1e-3)
        assert d["raw_breaker_height_m"] == rs.model_dump(mode="json")["breaker_height_m"]
        assert d["breaker_height_m"]["typical"] == pytest.approx(c * rs.breaker_height_m.typical, abs=0.1)
    assert any("calibrated" in note for note in calibrated.notes)
    with session_scope(migrated_db) as s:
        calibration.remove_calibration(s, "beach-v", who="tester")
        assert outlook_cache.outlook_key(s, "beach-v", hours=4, start=T0) == key_raw
        back = outlooks.get_outlook(s, "beach-v", hours=4, start=T0)
        with pytest.raises(NotFound):
            calibration.remove_calibration(s, "beach-v", who="tester")
        assert [h.version for h in calibration.history(s, "beach-v")] == [1]
    d = back.steps[0].model_dump(mode="json")
    assert "calibrated" not in d and "raw_breaker_height_m" not in d
    assert d["breaker_height_m"] == raw.steps[0].model_dump(mode="json")["breaker_height_m"]


def test_a_factor_far_from_one_is_refused(migrated_db: str) -> None:
    with session_scope(migrated_db) as s:
        _spot(s, "beach-f", [])
        with pytest.raises(BadInput, match="outside"):
            calibration.apply_factor(s, "beach-f", 9.0, stderr=0.1, who="t", metrics={})


def test_an_ingest_after_the_observation_time_does_not_change_its_hindcast(migrated_db: str) -> None:
    times = fx.hours(T0, 6)
    t_obs = T0 + timedelta(hours=3)
    with session_scope(migrated_db) as s:
        src = _source(s, "model")
        _spot(s, "beach-n", ["model"])
        store_result(s, src, _records(times, [fx.swell(1.0, 10.0, 270.0)] * 6, issue=T0 - timedelta(hours=12)),
                     files=["a"])  # fmt: skip
        s.execute(update(Observation).values(ingested_at=T0 - timedelta(hours=11)))
    text = _csv([(t_obs, 1.0)])
    with session_scope(migrated_db) as s:
        before, _ = verification.verify_csv(s, "beach-n", text, name="log.csv")
    with session_scope(migrated_db) as s:
        # a later issue (issued before the observation, but stored only after it), with bigger waves
        src = s.get(Source, "model")
        store_result(s, src, _records(times, [fx.swell(2.5, 14.0, 270.0)] * 6, issue=T0), files=["b"])
        s.execute(update(Observation).where(Observation.issue_time == T0).values(ingested_at=t_obs + timedelta(minutes=5)))
        # and an issue made after the observation time
        store_result(s, src, _records(times, [fx.swell(3.0, 15.0, 270.0)] * 6, issue=t_obs + timedelta(hours=1)),
                     files=["c"])  # fmt: skip
        after, _ = verification.verify_csv(s, "beach-n", text, name="log.csv")
        # the outlook computed now does use the newest issue (so the test can tell them apart)
        now = outlooks.compute_outlook(s, "beach-n", hours=1, start=t_obs)
    assert after["pairs"] == before["pairs"]
    assert before["pairs"][0]["issued"] == "2029-12-31T12:00:00Z" and before["pairs"][0]["known_at"] == "2030-01-01T03:00:00Z"
    assert now.steps[0].breaker_height_m.typical > before["pairs"][0]["forecast_m"] + 0.5
    # once it was stored in time, the issue of T0 is the one a hindcast at t_obs uses
    with session_scope(migrated_db) as s:
        s.execute(update(Observation).where(Observation.issue_time == T0).values(ingested_at=T0 + timedelta(minutes=30)))
        later, _ = verification.verify_csv(s, "beach-n", text, name="log.csv")
    assert later["pairs"][0]["issued"] == "2030-01-01T00:00:00Z"


def test_damaged_rows_rejected_with_file_line_reason_and_the_rest_used(migrated_db: str) -> None:
    with session_scope(migrated_db) as s:
        src = _source(s, "model")
        _spot(s, "beach-d", ["model"])
        store_result(s, src, _records(fx.hours(T0, 4), [fx.swell(1.0, 10.0, 270.0)] * 4, issue=T0), files=["a"])
        text = ("time,breaker_height_m,point\n2030-01-01T01:00:00Z,1.0,p0\nsoon,1.0,p0\n2030-01-01T02:00:00Z,-1,p0\n"
                "2030-01-01T02:00:00Z,x,p1\n2030-01-01T02:00:00Z,1.0,rock\n2030-01-01T03:00:00Z,0.9,p1\n")  # fmt: skip
        body, _ = verification.verify_csv(s, "beach-d", text, name="obs.csv")
    assert body["n"] == 2 and body["rejected"] == 4
    assert [(r["file"], r["line"], r["field"]) for r in body["rejects"]] == [
        ("obs.csv", 3, "time"), ("obs.csv", 4, "breaker_height_m"), ("obs.csv", 5, "breaker_height_m"),
        ("obs.csv", 6, "point"),
    ]  # fmt: skip
    assert [p["point"] for p in body["pairs"]] == ["p0", "p1"]


def _shoaled_density(efth: np.ndarray, depth: float) -> np.ndarray:
    """E(f) at depth h for normal incidence on straight contours: E0(f) × Cg0/Cg (linear theory)."""
    out = []
    for f, row in zip(fx.FREQ, (efth * np.radians(2.0)).sum(axis=1), strict=True):
        w = 2 * math.pi * f
        k = brentq(lambda k, w=w: G * k * math.tanh(k * depth) - w * w, 1e-6, 50.0)
        cg = 0.5 * (1 + 2 * k * depth / math.sinh(2 * k * depth)) * w / k
        out.append(row * (G / (2 * w)) / cg)  # Cg0 = g/(2ω)
    return np.array(out)


def test_a_nearshore_station_inside_the_grid_is_verified_by_hm0_at_its_own_position(migrated_db: str) -> None:
    # station on the 10 m contour of the straight beach (x = 300 − 10/0.02 = −200 m), 200 m from the
    # spot: were it not left out of its own hindcast it would be an "observed" input.
    x, y = -200.0, 100.0
    lon, lat = (float(v) for v in to_lonlat(x, y, 0.0, 0.0))
    n = 8
    times = fx.hours(T0, n)
    offshore = [fx.swell(0.8 + 0.15 * h, 10.0 + 0.5 * h, 270.0) for h in range(n)]
    with session_scope(migrated_db) as s:
        model = _source(s, "model")
        station = _source(s, "gauge", lat=lat, lon=lon)
        _spot(s, "beach-s", ["model", "gauge"])
        store_result(s, model, _records(times, offshore, issue=T0 - timedelta(hours=3)), files=["m"])
        dens = [_shoaled_density(e, 10.0) for e in offshore]
        store_result(s, station, _records([t + timedelta(minutes=5) for t in times], offshore, density=dens),
                     files=["g"])  # fmt: skip
        body = verification.verify_station(s, "beach-s", "gauge")
        with pytest.raises(BadInput, match="outside"):
            far = _source(s, "far", lat=0.5, lon=0.5)
            verification.verify_station(s, "beach-s", far.id)
    assert body["station"]["depth_m"] == pytest.approx(10.0, abs=0.2)
    assert body["n"] == n and all(p["input"] == "model-forecast" and p["source"] == "model" for p in body["pairs"])
    for p in body["pairs"]:  # the table (5 periods, 2° bins) against linear shoaling: within 3 %
        assert p["forecast_m"] == pytest.approx(p["observed_m"], rel=0.03)
    assert body["calibration_factor"] == pytest.approx(1.0, abs=0.03)


def test_unknown_spot_and_source(migrated_db: str) -> None:
    with session_scope(migrated_db) as s:
        with pytest.raises(NotFound):
            verification.verify_csv(s, "nope", "time,breaker_height_m\n", name="x.csv")
        _spot(s, "beach-u", [])
        with pytest.raises(NotFound):
            verification.verify_station(s, "beach-u", "nope")
        body, _ = verification.verify_csv(s, "beach-u", "time,breaker_height_m\n2030-01-01T00:00:00Z,1\n", name="x.csv")
        assert body["n"] == 0 and body["unpaired"] == 1 and body["pairs"][0]["note"]
        assert s.scalars(select(Observation)).first() is None


def test_verify_command_prints_scores_with_cautions_json_apply_and_remove(
    migrated_db: str, tmp_path: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    import json

    from app.cli import main

    times = fx.hours(T0, 6)
    with session_scope(migrated_db) as s:
        src = _source(s, "model")
        _spot(s, "beach-c", ["model"])
        store_result(s, src, _records(times, _event(6), issue=T0 - timedelta(hours=1)), files=["a"])
    log = tmp_path / "log.csv"
    log.write_text(_csv([(t, 1.0 + 0.1 * i) for i, t in enumerate(times)], extra="2030-01-01T09:00:00Z,oops,x\n"))
    assert main(["verify", "beach-c", str(log)]) == 0
    out = capsys.readouterr().out
    assert "bias" in out and "factor" in out and "lifeguards" in out
    assert f"rejected: {log}:8: breaker_height_m: not a number" in out
    assert main(["verify", "beach-c", str(log), "--json", "--apply", "--by", "tester",
                 "--from", "2030-01-01T01:00:00Z", "--to", "2030-01-01T04:00:00Z"]) == 0  # fmt: skip
    data = json.loads(capsys.readouterr().out)
    assert {"spot_id", "n", "bias_m", "rmse_m", "scatter_index", "correlation", "calibration_factor",
            "calibration_factor_stderr", "by_sector", "pairs"} <= set(data)  # fmt: skip
    assert data["n"] == 4 and data["calibration"]["version"] == 1 and data["calibration"]["created_by"] == "tester"
    assert main(["calibration", "beach-c", "--json"]) == 0
    assert json.loads(capsys.readouterr().out)["active"]["factor"] == pytest.approx(data["calibration_factor"])
    assert main(["calibration", "beach-c", "--remove"]) == 0
    assert "active: none" in capsys.readouterr().out
    assert main(["verify", "beach-c", "no-such-thing"]) == 2
    assert "neither a file nor a source" in capsys.readouterr().err
