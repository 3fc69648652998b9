"""Spot outlooks: breaking over straight contours, peel, sheltering, arrival, hazard, caching.

Outside values: Weggel (1972) breaker index and Snell + linear shoaling as implemented (and checked
against their sources) in models.breaking; Komar & Gaudiano (1975) likewise; deep-water group speed
Cg = gT/4π (Munk 1947, from memory); surfers' left/right convention (common practice: seen by a
surfer riding toward shore); closeout below a 20° peel angle (common practice, models.peel).
"""

from __future__ import annotations

import dataclasses
import importlib.util
import json
import math
import sys
from datetime import UTC, datetime, timedelta
from pathlib import Path

import numpy as np
import pytest

from app.db.session import session_scope
from app.db.tables import Bathymetry, BreakPoint, Observation, OutlookCache, Source, Spot, TransferTableRow
from app.formats.records import ParseResult, SpectrumRecord
from app.ingest.store import store_result
from app.services import outlook_cache, outlooks
from models import surf_peel
from models.breaking import shoal_to_breaking
from models.constants import G
from models.hazard import DEFAULT_POLICY, HazardLevel, HazardPolicy
from models.spectra import bin_widths
from models.waves import phase_speed

_spec = importlib.util.spec_from_file_location(
    "_outlook_fixtures", Path(__file__).with_name("_outlook_fixtures.py")
)
fx = importlib.util.module_from_spec(_spec)
sys.modules.setdefault("_outlook_fixtures", fx)
_spec.loader.exec_module(fx)

T0 = datetime(2030, 1, 1, tzinfo=UTC)


def run(
    kind: str, ys: tuple[float, ...], efth: np.ndarray, *, policy: HazardPolicy = DEFAULT_POLICY, water=0.0,
    profile: bool = False,
):  # fmt: skip
    pts = fx.points_for(kind, ys, profile=profile)
    e = np.asarray(efth)
    e = e[None] if e.ndim == 2 else e
    batch = outlooks.prepare_offshore(
        fx.hours(T0, e.shape[0]), fx.FREQ, fx.DIRS, e, source="test", kind="model-forecast"
    )
    arr = outlooks.compute_spots(batch, [pts], water_level_m=water)[0]
    return pts, arr, outlooks.build_steps(batch, pts, arr, policy, "metric")


# --------------------------------------------------------------------------- breaking


@pytest.mark.parametrize("from_deg", [270.0, 290.0])
def test_straight_contours_breaker_matches_weggel_snell_shoaling(from_deg: float) -> None:
    hs, tp = 1.2, 12.0
    pts, arr, steps = run("beach", (0.0,), fx.swell(hs, tp, from_deg))
    # the reference: one monochromatic wave of height Hs shoaled and refracted from deep water
    # (500 m, beyond the wave base) over straight parallel contours to Weggel breaking (models.breaking)
    ref = shoal_to_breaking(hs, tp, from_deg - 270.0, 500.0, slope=fx.SLOPE)
    hb, db = arr.hb[0, 0, 0], arr.db[0, 0, 0]
    # tolerance 5 %: the table (2° bins, interpolated in period) and the narrow spectrum versus one wave
    assert hb == pytest.approx(float(ref.height), rel=0.05)
    assert db == pytest.approx(float(ref.depth), rel=0.05)
    lo, hi = sorted([float(ref.height), float(ref.komar_gaudiano_height)])
    assert lo * 0.95 <= hb <= hi * 1.05  # within the Weggel .. Komar & Gaudiano spread
    # Snell: sin θ / C constant from deep water (C0 = gT/2π) to the breaking depth
    sin_b = (
        math.sin(math.radians(from_deg - 270.0)) * float(phase_speed(1 / tp, db)) / (G * tp / (2 * math.pi))
    )
    assert arr.angle_b[0, 0, 0] == pytest.approx(math.degrees(math.asin(sin_b)), abs=1.0)
    step = steps[0]
    assert step.breaker_height_m.typical == pytest.approx(round(hb, 1))
    assert step.breaker_height_m.typical < step.breaker_height_m.sets < step.breaker_height_m.largest
    assert step.breaker_type == str(ref.breaker_type)
    assert step.period_s == pytest.approx(tp, abs=0.6)


def test_water_level_moves_the_break_shoreward_depth_up() -> None:
    _, low, _ = run("beach", (0.0,), fx.swell(1.0, 10.0, 270.0))
    _, high, _ = run("beach", (0.0,), fx.swell(1.0, 10.0, 270.0), water=1.5)
    assert high.db[0, 0, 0] == pytest.approx(low.db[0, 0, 0], rel=0.05)  # breaks at the same water depth
    assert np.all(high.water_level == 1.5)


# --------------------------------------------------------------------------- surf-zone path


def test_profile_path_on_the_straight_beach_is_depth_limited_with_set_up_and_run_up() -> None:
    from models.breaking import komar_gaudiano, weggel_breaker_height

    hs, tp = 1.2, 12.0
    pts, arr, steps = run("beach", (0.0,), fx.swell(hs, tp, 270.0), profile=True)
    assert pts[0].table.profile is not None and arr.method == ("surf-zone",)
    typical, sets, largest = arr.hb[0, 0, :3]
    db = arr.db[0, 0, 1]
    # never past breaking: Weggel (1972; SPM 1984 eqs 2-92..2-94) at the breaking depth and slope
    assert typical < sets < largest <= float(weggel_breaker_height(db, tp, fx.SLOPE)) + 1e-9
    # the random sea's typical .. sets heights bracket Komar & Gaudiano's (1975) regular breaker
    kg = float(komar_gaudiano(hs, tp))
    assert 0.6 * kg < typical < kg < 1.3 * sets
    assert 0.02 < arr.setup[0, 0] < 0.4 * hs  # order of Guza & Thornton (1981): 0.17 Hs0 (from memory)
    assert arr.runup[0, 0] > arr.setup[0, 0]
    z = steps[0].surf_zone
    assert z is not None and z.model == "surf-zone" and z.runup_2pct_m is not None
    assert z.foreshore_slope == pytest.approx(fx.SLOPE, abs=0.002)  # the fixture's 1:50 foreshore
    assert steps[0].points[0].surf_model == "surf-zone"


def test_profile_path_water_level_moves_the_break_shoreward() -> None:
    _, low, _ = run("beach", (0.0,), fx.swell(1.0, 10.0, 270.0), profile=True)
    _, high, _ = run("beach", (0.0,), fx.swell(1.0, 10.0, 270.0), water=1.5, profile=True)
    # the same sea breaks at about the same total depth, 1.5 m / slope further along the profile
    assert high.db[0, 0, 1] == pytest.approx(low.db[0, 0, 1], rel=0.1)
    shift = high.break_distance[0, 0] - low.break_distance[0, 0]
    assert shift == pytest.approx(1.5 / fx.SLOPE, rel=0.25)


def test_single_wave_path_steps_carry_no_surf_zone_values() -> None:
    _, arr, steps = run("beach", (0.0,), fx.swell(1.0, 10.0, 270.0))
    assert arr.method == ("single-wave",) and steps[0].surf_zone is None
    assert steps[0].points[0].surf_model is None


# --------------------------------------------------------------------------- peel


@pytest.mark.parametrize(("from_deg", "sweep", "first"), [(290.0, "right", "p0"), (250.0, "left", "p2")])
def test_oblique_swell_on_a_straight_beach_sweeps_the_crest_way_and_is_a_closeout(
    from_deg, sweep, first
) -> None:
    # points north (p0) to south (p2); the beach faces west. From WNW the crest reaches the north end
    # first and breaking runs south, to the right of a surfer riding east (common practice).
    _, _, steps = run("beach", (300.0, 0.0, -300.0), fx.swell(1.0, 10.0, from_deg))
    peel = steps[0].peel
    assert peel.method == "break-times"
    assert peel.sweep == sweep and peel.first_point == first
    assert peel.direction == "closeout"  # refraction leaves a small breaking angle (< 20°)
    assert 0 < peel.angle_deg < 20 and peel.peel_rate_m_s is None


def test_single_point_peel_from_breaking_angle() -> None:
    _, arr, steps = run("beach", (0.0,), fx.swell(1.0, 10.0, 300.0))
    assert steps[0].peel.method == "breaking-angle"
    assert steps[0].peel.sweep == "right"
    assert steps[0].peel.angle_deg == pytest.approx(abs(arr.angle_b[0, 0, 0]), abs=1.0)


def test_normal_incidence_is_a_closeout() -> None:
    _, _, steps = run("beach", (300.0, 0.0, -300.0), fx.swell(1.0, 10.0, 270.0))
    assert steps[0].peel.direction == "closeout"
    assert steps[0].peel.angle_deg < 2


def test_symmetric_ridge_at_normal_incidence_breaks_first_on_its_crest_and_runs_both_ways() -> None:
    # a reef spur (bed raised up to 8 m near shore, nothing beyond the 10 m contour, width 120 m):
    # the crest arrives straight at the reference depth and the breaking contour bulges seaward about
    # y = 0, faster than refraction can turn the crest, so it peaks: both ways, at >= 20° each side
    # (the closeout threshold, common practice), symmetric
    _, _, steps = run("reef", (-150.0, -75.0, 0.0, 75.0, 150.0), fx.swell(1.0, 12.0, 270.0))
    peel = steps[0].peel
    assert (peel.first_point, peel.sweep, peel.direction) == ("p2", "both", "both")
    assert peel.angle_deg >= 20 and peel.method == "break-times"
    r = _peel_result("reef", (-150.0, -75.0, 0.0, 75.0, 150.0), 270.0)
    assert r.left_angle_deg == pytest.approx(r.right_angle_deg, abs=0.5)


def test_a_broad_spur_breaks_first_on_its_axis_with_the_run_to_the_breaking_position() -> None:
    # a gentler spur (5 m, 200 m): the reference points of the flank points lie off to the side of
    # their break points' normals, so the crest's run must go from the reference point to the
    # breaking position (timing it along the local normal made a flank point break first)
    _, _, steps = run("broad-reef", (-200.0, -100.0, 0.0, 100.0, 200.0), fx.swell(1.0, 12.0, 270.0))
    assert (steps[0].peel.first_point, steps[0].peel.sweep) == ("p2", "both")


def test_a_broad_promontory_at_normal_incidence_breaks_first_on_its_axis() -> None:
    # the shoreline juts 400 m out at every depth: refraction wraps the crest on the way in, so at the
    # flanks it breaks within ~7-11° of the contours (Snell, the single-point angles) and the peel
    # from break times agrees (a closeout by the 20° rule); it still breaks first on the axis
    pts, arr, steps = run("ridge", (-500.0, -250.0, 0.0, 250.0, 500.0), fx.swell(1.0, 12.0, 270.0))
    peel = steps[0].peel
    assert (peel.first_point, peel.sweep) == ("p2", "both")
    flank = float(np.max(np.abs(arr.angle_b[:, 0, 0])))
    assert abs(peel.angle_deg - flank) <= 6.0


def test_a_point_where_the_contours_wrap_gives_a_large_peel_angle() -> None:
    # break points round the south side of a headland's round tip (2 m contour, 190°-270° about its
    # centre); a westerly swell breaks first at the tip and runs round it: to the right of a surfer
    # riding toward shore (heading east), with a peel angle above the 20° closeout threshold, while
    # the same swell on the straight beach is a closeout (0°)
    pts = fx.points_at("point", fx.point_xy(2.0, (190.0, 210.0, 230.0, 250.0, 270.0)))
    e = fx.swell(1.0, 12.0, 270.0)[None]
    batch = outlooks.prepare_offshore(fx.hours(T0, 1), fx.FREQ, fx.DIRS, e, source="test", kind="model-forecast")
    arr = outlooks.compute_spots(batch, [pts])[0]
    peel = outlooks.build_steps(batch, pts, arr, DEFAULT_POLICY, "metric")[0].peel
    assert (peel.first_point, peel.direction, peel.method) == ("p0", "right", "break-times")
    assert peel.angle_deg >= 20
    _, _, beach = run("beach", (-200.0, 0.0, 200.0), fx.swell(1.0, 12.0, 270.0))
    assert beach[0].peel.angle_deg < 5


def _peel_result(kind: str, ys: tuple[float, ...], from_deg: float):  # type: ignore[no-untyped-def]
    """The models.peel result behind a step's peel (both side angles)."""
    import unittest.mock as mock

    from models import peel as peel_mod

    seen = []
    real = peel_mod.peel_from_break_times

    def spy(*a, **k):  # type: ignore[no-untyped-def]
        seen.append(real(*a, **k))
        return seen[-1]

    with mock.patch.object(surf_peel, "peel_from_break_times", spy):
        run(kind, ys, fx.swell(1.0, 12.0, from_deg))
    return seen[0]


# --------------------------------------------------------------------------- sheltering


def test_a_sheltered_point_gets_nothing_from_the_blocked_swell_and_all_of_the_open_one() -> None:
    # the jetty north of the point blocks swell from the north-west; from the south-west it is open
    blocked = fx.swell(1.5, 14.0, 320.0)
    open_ = fx.swell(1.0, 9.0, 245.0)
    _, arr, steps = run("jetty", (0.0,), blocked + open_)
    trains = {round(s.direction_deg): s for s in steps[0].swells}
    nw = next(s for d, s in trains.items() if 310 <= d <= 330)
    sw = next(s for d, s in trains.items() if 235 <= d <= 255)
    assert nw.breaker_height_m is None or nw.breaker_height_m < 0.1 * sw.breaker_height_m
    # the open swell alone, on the same point
    _, alone, _ = run("jetty", (0.0,), open_)
    assert sw.breaker_height_m == pytest.approx(round(alone.hb[0, 0, 0], 1), abs=0.11)
    json.dumps(steps[0].model_dump(mode="json"), allow_nan=False)  # no NaN reaches JSON


def test_an_island_shadow_holds_under_a_narrow_swell_from_buoy_coefficients() -> None:
    # Goda's s_max = 75 (swell with a long decay distance; Goda 1985): 1.5 m 14 s from 320°, inside the
    # geometric shadow of the land strip north of the point (from the point it covers ~280°..20°), given
    # as the agency files print it (r to two decimals: 0.99 / 0.95 near the peak, no distribution has
    # them). The sheltered point's typical breaker height stays under 0.35 of the open beach's.
    from types import SimpleNamespace

    from app.services import outlook_inputs as inputs
    from models import spectra as sp
    from models.directional import COS2S

    d_fine = np.arange(0.0, 360.0, 0.5)
    e_fine = sp.jonswap(fx.FREQ, hs=1.5, tp=14.0)[:, None] * sp.cos2s(d_fine, mean_dir_deg=320.0, s=75.0)[None, :]
    n = sp.fourier_to_ndbc(*sp.coefficients_from_spectrum(e_fine, d_fine))
    printed = dict(r1=np.round(n.r1, 2), r2=np.round(n.r2, 2), alpha1_deg=np.round(n.alpha1_deg) % 360,
                   alpha2_deg=np.round(n.alpha2_deg) % 360)  # fmt: skip
    density = sp.frequency_spectrum(e_fine, d_fine)
    rec = SimpleNamespace(efth=None, directions_deg=None, frequency=fx.FREQ, density=density, **printed)
    d, e, label, est = inputs.estimate_of(rec)
    assert label == COS2S and est.projected.any()

    def typical(kind: str, efth: np.ndarray) -> float:
        pts = fx.points_for(kind, (0.0,))
        batch = outlooks.prepare_offshore(fx.hours(T0, 1), fx.FREQ, d, efth[None], source="t", kind="observed")
        return float(np.nan_to_num(outlooks.compute_spots(batch, [pts])[0].hb[0, 0, 0]))

    open_beach = typical("beach", e)
    assert open_beach > 0.5
    assert typical("jetty", e) < 0.35 * open_beach
    # the former estimate (maximum entropy, the weighted series where it has no solution) spread the
    # swell over ~47° and the shadow leaked: the same check fails with it
    old = sp.directional_spectrum_from_coefficients(fx.FREQ, density, d, **printed, method="mem")
    assert typical("jetty", old) > 0.35 * typical("beach", old)


def test_precomputed_transfer_weights_equal_transfer_apply() -> None:
    # exact identity (same maths, reordered): the memoised weights applied as one product give
    # models.transfer.apply's density and per-frequency mean direction; frequencies beyond the
    # table's periods (clamped) and a direction grid other than the table's included
    from models.transfer import apply

    rng = np.random.default_rng(5)
    f = np.linspace(0.03, 0.3, 31)  # the tables span 8-16 s only
    d = np.arange(2.5, 360.0, 5.0)
    e = rng.gamma(0.5, 1.0, (4, 2, f.size, d.size)) * (rng.random((4, 2, f.size, d.size)) < 0.6)
    for p in fx.points_for("ridge", (-250.0, 0.0)) + fx.points_for("jetty", (0.0,)):
        w = outlooks.transfer_weights(p.table, f, d)
        assert outlooks.transfer_weights(p.table, f, d) is w  # memoised per (table, grid)
        ref = apply(p.table, f, d, e)
        dens, vx, vy = (np.einsum("...fj,fj->...f", e, w.w[i]) for i in range(3))
        np.testing.assert_allclose(dens, ref.density, rtol=1e-10, atol=1e-12)
        ok = dens > 1e-9 * dens.max()
        mdir = (90.0 - np.degrees(np.arctan2(vy, vx))) % 360.0
        diff = (mdir - ref.mean_direction_deg + 180.0) % 360.0 - 180.0
        np.testing.assert_allclose(diff[ok], 0.0, atol=1e-8)
        # the outlook's nearshore summary from the weights equals the one from apply's spectrum
        batch = outlooks.prepare_offshore(fx.hours(T0, 4), f, d, e[:, 0], source="t", kind="model-forecast")
        hs, _, _, _ = outlooks.nearshore_points(batch, [p])
        near = apply(p.table, f, d, batch.stack).density  # (T, 1 + K, nf)
        np.testing.assert_allclose(hs[0], 4.0 * np.sqrt(np.sum(near * bin_widths(f), axis=-1)), rtol=1e-10)


def test_nothing_arriving_gives_nulls_not_nan() -> None:
    _, _, steps = run("jetty", (0.0,), fx.swell(1.0, 12.0, 330.0, s=2000.0))
    data = steps[0].model_dump(mode="json")
    json.dumps(data, allow_nan=False)
    assert data["peel"]["direction"] is None or data["breaker_height_m"]["typical"] < 0.2


# --------------------------------------------------------------------------- hazard


def test_hazard_levels_switch_at_the_set_breaker_thresholds() -> None:
    policy = HazardPolicy(
        name="test policy",
        levels=(
            HazardLevel(0, "calm"),
            HazardLevel(1, "care", set_height_m=1.0),
            HazardLevel(2, "danger", set_height_m=2.0),
            HazardLevel(3, "closed", set_height_m=3.0),
        ),
    )
    e = np.stack([fx.swell(h, 10.0, 270.0) for h in (0.3, 0.6, 0.9, 1.2, 1.5, 1.8)])
    _, arr, steps = run("beach", (0.0,), e, policy=policy)
    sets = arr.hb[0, :, 1]
    expected = [sum(sets[i] >= t for t in (1.0, 2.0, 3.0)) for i in range(len(steps))]
    assert [s.hazard.level for s in steps] == expected
    assert len(set(expected)) >= 3  # the ramp crosses at least two thresholds
    assert [s.hazard.label for s in steps] == [policy.label(v) for v in expected]


@pytest.mark.parametrize("profile", [False, True])
def test_a_sheltered_spot_is_not_raised_by_offshore_energy_its_window_blocks(profile: bool) -> None:
    # a big long-period swell from the north-west, which the jetty blocks, and a small open one:
    # offshore power is large, yet the default policy (nearshore inputs only) and an agency policy
    # with a power threshold stay at level 0; the same policy on offshore values would be raised
    blocked = fx.swell(3.0, 16.0, 320.0)
    open_ = fx.swell(0.4, 9.0, 245.0)
    powerful = HazardPolicy(
        name="power policy",
        levels=(
            HazardLevel(0, "calm"),
            HazardLevel(1, "care", set_height_m=1.5, power_kw_m=30.0),
            HazardLevel(2, "danger", set_height_m=2.5, power_kw_m=60.0),
            HazardLevel(3, "closed", set_height_m=4.0, power_kw_m=120.0),
        ),
    )
    for policy in (DEFAULT_POLICY, powerful):
        _, arr, steps = run("jetty", (0.0,), blocked + open_, policy=policy, profile=profile)
        assert steps[0].offshore.wave_power_kw_m > 60.0  # ρg²Hm0²Te/(64π): about 70 kW/m offshore
        assert steps[0].hazard.level == 0, policy.name
        assert steps[0].hazard.inputs == "nearshore"
        assert steps[0].hazard.rip_current_likelihood < 0.1
    offshore = dataclasses.replace(powerful, basis="offshore")
    _, _, steps = run("jetty", (0.0,), blocked + open_, policy=offshore, profile=profile)
    assert steps[0].hazard.level >= 2 and steps[0].hazard.inputs == "offshore"


def test_rip_likelihood_rises_with_the_breakers_that_arrive() -> None:
    e = np.stack([fx.swell(h, 10.0, 270.0) for h in (0.5, 1.5, 2.5)])
    _, _, steps = run("beach", (0.0,), e, profile=True)
    rips = [s.hazard.rip_current_likelihood for s in steps]
    assert rips == sorted(rips) and rips[0] < rips[-1]
    assert all(s.hazard.shore_break is False for s in steps)  # a 1:50 foreshore is not steep


# --------------------------------------------------------------------------- the database side


def _spot(
    session, spot_id: str, sources: list[str], kind: str = "beach", ys=(0.0,), lat=0.0, lon=0.0
) -> None:
    grid = fx.grid_of(kind)
    spot = Spot(
        id=spot_id, name=spot_id.title(), latitude=lat, longitude=lon, faces_deg=270.0, profile={},
        profile_sha256="0" * 64, sources=sources,
    )  # fmt: skip
    spot.bathymetry = Bathymetry(
        depth=grid.depth, nx=grid.shape[1], ny=grid.shape[0], x0=grid.x0, y0=grid.y0, dx=grid.dx, dy=grid.dy,
        origin_latitude=lat, origin_longitude=lon, datum="MSL", source_file="synthetic", source_format="esri-ascii",
        sha256="1" * 64,
    )  # fmt: skip
    for i, y in enumerate(ys):
        x = fx.break_x(kind, y)
        bp = BreakPoint(
            position=i,
            name=f"p{i}",
            x=x,
            y=y,
            latitude=lat,
            longitude=lon,
            depth_m=2.0,
            reference_depth_m=10.0,
        )
        table = fx.table_for(kind, x, y)
        bp.table = TransferTableRow(
            spot_id=spot_id, input_hash=f"h{i}", engine_version="test", arrays=fx.table_npz(table), meta={}
        )
        spot.break_points.append(bp)
    session.add(spot)
    session.flush()


def _source(session, source_id: str, lat: float = 0.0, lon: float = 0.0) -> Source:
    src = Source(
        id=source_id,
        name=source_id,
        format="cf-netcdf",
        latitude=lat,
        longitude=lon,
        depth_m=None,
        urls=[],
        config={},
    )
    session.add(src)
    session.flush()
    return src


def _records(times, efths, *, issue=None, station="st") -> ParseResult:
    recs = tuple(
        SpectrumRecord(
            station=station,
            time=t,
            issue_time=issue,
            frequency=fx.FREQ,
            density=(e * np.radians(2.0)).sum(axis=1),
            directions_deg=fx.DIRS,
            efth=e,
        )  # fmt: skip
        for t, e in zip(times, efths, strict=True)
    )
    return ParseResult(records=recs)


def test_model_forecast_steps_are_used_directly_and_json_is_clean(migrated_db: str) -> None:
    with session_scope(migrated_db) as s:
        src = _source(s, "model")
        _spot(s, "beach-a", ["model"])
        old, new = T0 - timedelta(hours=12), T0 - timedelta(hours=6)
        store_result(
            s, src, _records(fx.hours(T0, 4), [fx.swell(1.0, 10.0, 270.0)] * 4, issue=old), files=["a"]
        )
        store_result(
            s, src, _records(fx.hours(T0, 4), [fx.swell(2.0, 12.0, 280.0)] * 4, issue=new), files=["b"]
        )
        body = outlooks.compute_outlook(s, "beach-a", hours=3, start=T0, units="imperial")
    data = body.model_dump(mode="json")
    text = json.dumps(data, allow_nan=False)
    assert [st["time"] for st in data["steps"]] == [f"2030-01-01T0{h}:00:00Z" for h in range(4)]
    st = data["steps"][0]
    assert st["input"] == "model-forecast" and st["issued"] == "2029-12-31T18:00:00Z"  # the latest issue
    assert st["offshore"]["hm0_m"] == pytest.approx(2.0, abs=0.1)
    assert "breaker_height_ft" in st and "breaker_height_m" not in st
    assert st["breaker_height_ft"]["typical"] * 2 == round(
        st["breaker_height_ft"]["typical"] * 2
    )  # 0.5 ft steps
    assert set(st) >= {
        "time",
        "source",
        "period_s",
        "nearshore_direction_deg",
        "breaker_type",
        "peel",
        "hazard",
        "swells",
    }
    assert set(st["peel"]) >= {"direction", "angle_deg", "first_point"}
    assert set(st["swells"][0]) >= {"height_m", "period_s", "direction_deg", "breaker_height_m"}
    assert data["cautions"] and "lifeguards" in text and data["policy_is_default"] is True


def test_arrivals_from_an_upstream_station_come_long_periods_first(migrated_db: str) -> None:
    # station 200 km due west of the spot on the equator; a swell event of two trains (16 s and 8 s,
    # both from the west) reaches the station at t_e. Delay = distance / (gT/4π) (deep water).
    dist_deg = 200_000.0 / (math.pi / 180.0 * 6_371_008.8)
    t_first = T0 - timedelta(hours=30)
    t_e = t_first + timedelta(hours=20)
    times = fx.hours(t_first, 40)
    background = fx.swell(0.05, 6.0, 270.0, gamma=1.0, s=2.0)
    event = fx.swell(1.0, 16.0, 270.0) + fx.swell(0.8, 8.0, 270.0)
    efths = [background + (event if t >= t_e else 0.0) for t in times]
    with session_scope(migrated_db) as s:
        src = _source(s, "buoy", lat=0.0, lon=-dist_deg)
        _spot(s, "beach-b", ["buoy"], lat=0.0, lon=0.0)
        store_result(s, src, _records(times, efths), files=["obs"])
        start = t_e
        body = outlooks.compute_outlook(s, "beach-b", hours=14, start=start)
    assert body.steps and all(st.input == "arrival-forecast" for st in body.steps)

    def first_with(lo: float, hi: float) -> datetime:
        return next(
            st.time
            for st in body.steps
            if any(lo <= w.period_s <= hi and w.height_m > 0.3 for w in st.swells)
        )

    for period, (lo, hi) in ((16.0, (14.0, 18.5)), (8.0, (7.0, 9.0))):
        delay = timedelta(seconds=200_000.0 / (G * period / (4 * math.pi)))
        # linear interpolation between hourly observations: the train shows within an hour of t_e + delay
        got = first_with(lo, hi)
        assert t_e + delay - timedelta(hours=1) < got <= t_e + delay + timedelta(hours=1), (period, got)
    assert first_with(14.0, 18.5) < first_with(7.0, 9.0)


def test_partial_arrival_spectra_are_not_issued_and_the_model_forecast_fills_in(migrated_db: str) -> None:
    # steady westerly swell (16 s 1.0 m + 8 s 0.8 m) seen by a station 200 km west until t_last. Past
    # t_last + 4.4 h (the 16 s delay, distance / (gT/4π)) the fast 16 s part is unobserved: a spectrum
    # from the rest would read as a drop of about 40 % in height. Such hours must come from the model
    # forecast (here a distinct 2 m 12 s sea) and the arrival steps issued keep >= 90 % of the energy.
    dist_deg = 200_000.0 / (math.pi / 180.0 * 6_371_008.8)
    steady = fx.swell(1.0, 16.0, 270.0) + fx.swell(0.8, 8.0, 270.0)
    obs_times = fx.hours(T0 - timedelta(hours=30), 40)  # last at T0 + 9 h
    with session_scope(migrated_db) as s:
        buoy = _source(s, "buoy", lat=0.0, lon=-dist_deg)
        model = _source(s, "model")
        _spot(s, "beach-c", ["buoy"], lat=0.0, lon=0.0)
        _spot(s, "beach-d", ["buoy", "model"], lat=0.0, lon=0.0)
        store_result(s, buoy, _records(obs_times, [steady] * 40), files=["obs"])
        store_result(s, model, _records(fx.hours(T0, 20), [fx.swell(2.0, 12.0, 270.0)] * 20, issue=T0), files=["m"])
        alone = outlooks.compute_outlook(s, "beach-c", hours=18, start=T0)
        mixed = outlooks.compute_outlook(s, "beach-d", hours=18, start=T0)
    full = 4.0 * math.sqrt(float(np.sum((steady * np.radians(2.0)).sum(axis=1) * np.gradient(fx.FREQ))))
    t_16 = T0 + timedelta(hours=9) + timedelta(seconds=200_000.0 / (G * 16.0 / (4 * math.pi)))
    arrivals = [st for st in alone.steps if st.input == "arrival-forecast"]
    assert arrivals and all(st.time <= t_16 for st in arrivals)
    assert all(st.arrival_coverage >= 0.9 for st in arrivals)
    assert all(st.offshore.hm0_m >= 0.94 * full for st in arrivals)  # sqrt(0.9) = 0.949: no false drop
    assert [st.time for st in alone.steps] == fx.hours(T0, len(alone.steps))  # later hours left out, no gap
    assert len(alone.steps) < 19 and any("arrival hour(s) left out" in n for n in alone.notes)
    # with a model forecast: arrivals while whole, then the model's steps, one per hour throughout
    assert [st.time for st in mixed.steps] == fx.hours(T0, 19)
    kinds = [st.input for st in mixed.steps]
    k = kinds.index("model-forecast")
    assert set(kinds[:k]) == {"arrival-forecast"} and set(kinds[k:]) == {"model-forecast"}
    assert all(st.offshore.hm0_m == pytest.approx(2.0, abs=0.1) for st in mixed.steps[k:])
    assert all(st.arrival_coverage is None for st in mixed.steps[k:])


def test_a_station_downstream_of_the_spot_gives_the_steady_sea(migrated_db: str) -> None:
    # the issue's case: a steady sea from the west (16 s 1.5 m + 8 s 1.2 m, about 2 m) seen by a station
    # 150 km EAST of the spot: the swell passes the spot first. With signed delays (Munk 1947: Δt = d/Cg,
    # negative here) the spot's offshore Hm0 is the station's steady Hm0 (within 5 %); hours that need
    # observations not yet made are left out with a note.
    dist_deg = 150_000.0 / (math.pi / 180.0 * 6_371_008.8)
    steady = fx.swell(1.5, 16.0, 270.0) + fx.swell(1.2, 8.0, 270.0)
    obs_times = fx.hours(T0 - timedelta(hours=30), 40)  # last at T0 + 9 h
    with session_scope(migrated_db) as s:
        buoy = _source(s, "buoy", lat=0.0, lon=dist_deg)
        _spot(s, "beach-e", ["buoy"], lat=0.0, lon=0.0)
        store_result(s, buoy, _records(obs_times, [steady] * 40), files=["obs"])
        body = outlooks.compute_outlook(s, "beach-e", hours=12, start=T0)
    station = 4.0 * math.sqrt(float(np.sum((steady * np.radians(2.0)).sum(axis=1) * bin_widths(fx.FREQ))))
    assert station == pytest.approx(1.92, abs=0.05)
    arrivals = [st for st in body.steps if st.input == "arrival-forecast"]
    assert arrivals, body.notes
    for st in arrivals:
        assert st.offshore.hm0_m == pytest.approx(station, rel=0.05)
        assert st.arrival_coverage >= 0.9
    # the 8 s part needs the station 150 km / 6.2 m/s = 6.7 h later: after T0 + 2.3 h it is not yet observed
    lag_8 = timedelta(seconds=150_000.0 / (G * 8.0 / (4 * math.pi)))
    assert all(st.time + lag_8 <= T0 + timedelta(hours=9, minutes=1) for st in arrivals)
    assert any("need observations not yet made" in n for n in body.notes)


def test_cache_unchanged_inputs_do_no_work_and_new_observations_recompute_only_their_spots(
    migrated_db: str, monkeypatch: pytest.MonkeyPatch
) -> None:
    calls: list[str] = []
    real = outlooks.compute_outlook

    def counting(session, spot_id, **kw):  # type: ignore[no-untyped-def]
        calls.append(spot_id)
        return real(session, spot_id, **kw)

    monkeypatch.setattr(outlook_cache, "compute_outlook", counting)
    issue = T0 - timedelta(hours=6)
    with session_scope(migrated_db) as s:
        a, b = _source(s, "feed-a"), _source(s, "feed-b")
        _spot(s, "spot-a", ["feed-a"])
        _spot(s, "spot-b", ["feed-b"])
        store_result(
            s, a, _records(fx.hours(T0, 3), [fx.swell(1.0, 10.0, 270.0)] * 3, issue=issue), files=["a"]
        )
        store_result(
            s, b, _records(fx.hours(T0, 3), [fx.swell(1.5, 11.0, 265.0)] * 3, issue=issue), files=["b"]
        )
    with session_scope(migrated_db) as s:
        first_a = outlooks.get_outlook(s, "spot-a", hours=2, start=T0)
        outlooks.get_outlook(s, "spot-b", hours=2, start=T0)
    with session_scope(migrated_db) as s:
        again = outlooks.get_outlook(s, "spot-a", hours=2, start=T0)
        outlooks.get_outlook(s, "spot-b", hours=2, start=T0)
        assert outlooks.refresh_stale(s) == []
    assert calls == ["spot-a", "spot-b"]  # the repeat did no work
    assert again.model_dump(mode="json") == first_a.model_dump(mode="json")
    # another unit is another variant: computed once
    with session_scope(migrated_db) as s:
        outlooks.get_outlook(s, "spot-a", hours=2, start=T0, units="imperial")
    assert calls[-1] == "spot-a" and len(calls) == 3
    # a new issue for feed-a marks spot-a's outlooks stale; the refresh recomputes only them
    with session_scope(migrated_db) as s:
        a = s.get(Source, "feed-a")
        new = T0 - timedelta(hours=1)
        store_result(
            s, a, _records(fx.hours(T0, 3), [fx.swell(2.5, 13.0, 275.0)] * 3, issue=new), files=["a2"]
        )
        stale = {(r.spot_id, r.stale) for r in s.query(OutlookCache)}
        assert ("spot-a", True) in stale and ("spot-b", False) in stale
    with session_scope(migrated_db) as s:
        assert outlooks.refresh_stale(s) == ["spot-a"]
        fresh = outlooks.get_outlook(s, "spot-a", hours=2, start=T0)
    assert calls[3:] == ["spot-a", "spot-a"]  # both variants of spot-a, nothing of spot-b
    assert fresh.steps[0].offshore.hm0_m == pytest.approx(2.5, abs=0.1)
    assert fresh.steps[0].issued == new


def test_options_as_one_object_or_as_keywords_are_the_same_outlook(migrated_db: str) -> None:
    """`OutlookOptions` or its fields as keywords: the same key, the same stored row, the same body."""
    with session_scope(migrated_db) as s:
        a = _source(s, "feed-o")
        _spot(s, "spot-o", ["feed-o"])
        store_result(s, a, _records(fx.hours(T0, 3), [fx.swell(1.0, 10.0, 270.0)] * 3, issue=T0 - timedelta(hours=6)),
                     files=["o"])  # fmt: skip
    opts = outlooks.OutlookOptions(hours=2, start=T0, units="imperial")
    with session_scope(migrated_db) as s:
        key = outlook_cache.outlook_key(s, "spot-o", opts)
        assert key == outlook_cache.outlook_key(s, "spot-o", hours=2, start=T0, units="imperial")
        assert key != outlook_cache.outlook_key(s, "spot-o", opts, units="metric")
        body, computed = outlook_cache.get_or_compute(s, "spot-o", opts)
        assert computed and body.options.units == "imperial" and body.options.hours == 2
    with session_scope(migrated_db) as s:
        again, computed = outlook_cache.get_or_compute(s, "spot-o", hours=2, start=T0, units="imperial")
        assert not computed  # the row stored under the options object
        assert {r.variant for r in s.query(OutlookCache)} == {opts.variant()}
    assert again.model_dump(mode="json") == body.model_dump(mode="json")


def test_missing_tables_and_unknown_spot_are_clear_errors(migrated_db: str) -> None:
    from app.errors import Conflict, NotFound

    with session_scope(migrated_db) as s:
        with pytest.raises(NotFound, match="no-such-spot"):
            outlooks.compute_outlook(s, "no-such-spot", start=T0)
        _spot(s, "bare", [], ys=())
        with pytest.raises(Conflict, match="tables build bare"):
            outlooks.compute_outlook(s, "bare", start=T0)
        _spot(s, "nofeed", [])
        body = outlooks.compute_outlook(s, "nofeed", start=T0)
        assert body.steps == [] and any("no sources" in n for n in body.notes)
        assert s.query(Observation).count() == 0


def test_outlook_command_prints_a_table_with_cautions_and_json(
    migrated_db: str, capsys: pytest.CaptureFixture[str]
) -> None:
    from app.commands import outlook as cmd

    with session_scope(migrated_db) as s:
        src = _source(s, "model")
        _spot(s, "beach-c", ["model"], ys=(300.0, 0.0, -300.0))
        store_result(
            s, src, _records(fx.hours(T0, 3), [fx.swell(1.0, 10.0, 290.0)] * 3, issue=T0), files=["a"]
        )
    import argparse

    parser = argparse.ArgumentParser()
    cmd.register(parser.add_subparsers())
    args = parser.parse_args(["outlook", "beach-c", "--hours", "2", "--from", "2030-01-01T00:00:00Z"])
    assert args.func(args) == 0
    out = capsys.readouterr().out
    assert "typ/sets/max" in out and "closeout" in out and "lifeguards" in out
    args = parser.parse_args(
        ["outlook", "beach-c", "--hours", "2", "--from", "2030-01-01T00:00:00Z", "--json"]
    )
    assert args.func(args) == 0
    data = json.loads(capsys.readouterr().out)
    assert data["spot_id"] == "beach-c" and len(data["steps"]) == 3 and data["units"] == "metric"


def test_concurrent_requests_for_an_out_of_date_outlook_compute_it_once(
    migrated_db: str, monkeypatch: pytest.MonkeyPatch
) -> None:
    # pollers arriving together right after an ingest: one computes, the rest answer with the
    # previous outlook meanwhile (no stampede of identical computations)
    import threading

    issue = T0 - timedelta(hours=6)
    with session_scope(migrated_db) as s:
        src = _source(s, "feed-x")
        _spot(s, "spot-x", ["feed-x"])
        store_result(s, src, _records(fx.hours(T0, 3), [fx.swell(1.0, 10.0, 270.0)] * 3, issue=issue), files=["x"])
    with session_scope(migrated_db) as s:
        before = outlooks.get_outlook(s, "spot-x", hours=2, start=T0)
    with session_scope(migrated_db) as s:
        src = s.get(Source, "feed-x")
        store_result(s, src, _records(fx.hours(T0, 3), [fx.swell(2.0, 12.0, 270.0)] * 3, issue=T0), files=["y"])

    calls: list[str] = []
    release = threading.Event()
    real = outlooks.compute_outlook

    def slow(session, spot_id, **kw):  # type: ignore[no-untyped-def]
        calls.append(spot_id)
        release.wait(10)
        return real(session, spot_id, **kw)

    monkeypatch.setattr(outlook_cache, "compute_outlook", slow)
    results: list[float] = []

    def poll() -> None:
        with session_scope(migrated_db) as s:
            body = outlooks.get_outlook(s, "spot-x", hours=2, start=T0)
            results.append(body.steps[0].offshore.hm0_m)

    first = threading.Thread(target=poll)
    first.start()
    while not calls:  # the first request is computing
        threading.Event().wait(0.01)
    others = [threading.Thread(target=poll) for _ in range(3)]
    for t in others:
        t.start()
    for t in others:
        t.join(20)
    release.set()
    first.join(20)
    assert calls == ["spot-x"]  # computed once
    old = before.steps[0].offshore.hm0_m
    assert sorted(results) == sorted([old, old, old, results[-1]]) and results[-1] != old
