"""Transfer tables in the database: built once, skipped when nothing changed, rebuilt when the
bathymetry or the profile changes, identical from a process pool and a Dask cluster, and a failed
build leaves the old table in use. The planar-slope case is checked against Snell's law."""

from __future__ import annotations

import json
from pathlib import Path

import numpy as np
import pytest
from sqlalchemy import select

from app.cli import main
from app.db.session import session_scope
from app.db.tables import TransferTableRow
from app.services import tables as svc
from models import breaking
from models.errors import InvalidInput
from models.waves import shoaling_coefficient

SLOPE = 1 / 30


def write_beach(
    folder: Path, *, depth_offset: float = 0.0, reference_depth: float = 8.0, method: str = "rays",
    periods: tuple[float, float, int] = (8.0, 14.0, 3),
) -> Path:
    """A west-facing planar beach, 3 km x 2 km at 50 m: depth = (x_shore - x)·slope, land east of x = 1400 m."""
    xs = -1575.0 + 50.0 * np.arange(60)
    depth = (1400.0 - xs) * SLOPE + depth_offset
    rows = "\n".join(" ".join(f"{v:.3f}" for v in depth) for _ in range(40))
    (folder / "beach.asc").write_text(f"ncols 60\nnrows 40\nxllcorner -1600\nyllcorner -1000\ncellsize 50\n{rows}\n")
    profile = folder / "beach.toml"
    profile.write_text(f"""
id = "plane-beach"
name = "Plane Beach"
latitude = 10.0
longitude = 20.0
faces_deg = 270
[bathymetry]
file = "beach.asc"
format = "esri-ascii"
[[break_points]]
name = "north"
x = 1300.0
y = 300.0
[[break_points]]
name = "south"
x = 1300.0
y = -300.0
[model]
method = "{method}"
reference_depth_m = {reference_depth}
period_min_s = {periods[0]}
period_max_s = {periods[1]}
period_count = {periods[2]}
launch_spacing_deg = 1.0
direction_bin_deg = 5.0
smoothing_m = 0.0
""")
    return profile


def build(url: str, **kw) -> svc.BuildReport:  # type: ignore[no-untyped-def]
    return svc.build_tables(url, **kw)


@pytest.fixture
def beach(migrated_db: str, tmp_path: Path) -> Path:
    profile = write_beach(tmp_path)
    assert main(["spot", "add", str(profile)]) == 0
    return profile


def hashes(url: str) -> dict[int, tuple[str, str]]:
    with session_scope(url) as s:
        return {r.break_point_id: (r.input_hash, r.built_at.isoformat()) for r in s.scalars(select(TransferTableRow))}


def test_build_once_then_nothing(beach: Path, migrated_db: str) -> None:
    first = build(migrated_db, executor=None)
    assert len(first.built) == 2 and first.failed == []
    again = build(migrated_db, executor=None)
    assert again.built == [] and again.skipped == 2


def test_profile_or_bathymetry_change_rebuilds(beach: Path, migrated_db: str, tmp_path: Path) -> None:
    build(migrated_db)
    before = hashes(migrated_db)
    write_beach(tmp_path, reference_depth=9.0)  # a profile field that changes the result
    assert main(["spot", "add", str(beach)]) == 0
    assert len(build(migrated_db).built) == 2
    after_profile = hashes(migrated_db)
    assert {h for h, _ in after_profile.values()}.isdisjoint({h for h, _ in before.values()})
    write_beach(tmp_path, reference_depth=9.0, depth_offset=0.5)  # the bathymetry changes
    assert main(["spot", "add", str(beach)]) == 0
    assert len(build(migrated_db).built) == 2
    assert {h for h, _ in hashes(migrated_db).values()}.isdisjoint({h for h, _ in after_profile.values()})


def test_failed_build_keeps_the_old_table(beach: Path, migrated_db: str, monkeypatch: pytest.MonkeyPatch) -> None:
    build(migrated_db)
    before = hashes(migrated_db)

    def boom(*a, **k):  # type: ignore[no-untyped-def]
        raise InvalidInput("simulated failure half-way")

    monkeypatch.setattr(svc.transfer, "build_tables", boom)
    report = build(migrated_db, force=True)
    assert len(report.failed) == 2 and report.built == []
    assert hashes(migrated_db) == before  # old tables still in use


def test_planar_slope_table_matches_snell(beach: Path, migrated_db: str) -> None:
    build(migrated_db)
    with session_scope(migrated_db) as s:
        row = s.scalars(select(TransferTableRow)).first()
        assert row is not None
        table = svc.load_table(row)
    # Snell + shoaling from deep water to the reference depth (docs/check-values.md §2; refract_and_shoal is
    # checked against the worked example 2.0925 m / 12.518° in tests/models/test_breaking.py)
    i = 1  # 10.583 s (geometric 8..14)
    j = int(np.argmin(np.abs(table.directions_deg - 250.0)))  # 20° from the shore normal
    period = table.periods_s[i]
    expect = breaking.refract_and_shoal(1.0, period, 20.0, np.inf, table.reference_depth_m)
    assert table.coefficient[i, j] == pytest.approx(float(expect.height), rel=0.02)
    near_from = 270.0 - float(expect.angle_deg)
    assert table.nearshore_direction_deg[i, j] == pytest.approx(near_from, abs=0.5)
    assert table.coefficient[:, np.abs(((table.directions_deg - 90.0 + 180) % 360) - 180) < 60].max() == 0.0  # from land


def test_process_pool_and_dask_give_the_same_tables(beach: Path, migrated_db: str) -> None:
    from distributed import LocalCluster

    with svc.executor_for(2) as pool:
        build(migrated_db, executor=pool)
    with session_scope(migrated_db) as s:
        local = {r.break_point_id: svc.load_table(r).coefficient for r in s.scalars(select(TransferTableRow))}
    with LocalCluster(n_workers=1, threads_per_worker=1, processes=False, dashboard_address=None) as cluster:
        with svc.executor_for(dask_address=cluster.scheduler_address) as ex:
            report = build(migrated_db, executor=ex, force=True)
    assert len(report.built) == 2
    with session_scope(migrated_db) as s:
        dask = {r.break_point_id: svc.load_table(r).coefficient for r in s.scalars(select(TransferTableRow))}
    assert local.keys() == dask.keys()
    for k in local:
        np.testing.assert_array_equal(local[k], dask[k])


def test_window_json_shape(beach: Path, migrated_db: str, capsys: pytest.CaptureFixture[str]) -> None:
    assert main(["tables", "build", "--workers", "1"]) == 0
    capsys.readouterr()
    assert main(["window", "plane-beach", "--json"]) == 0
    body = json.loads(capsys.readouterr().out)
    assert body["spot_id"] == "plane-beach"
    p = body["points"][0]
    for key in ("name", "reference_depth_m", "periods_s", "directions_deg", "coefficient", "nearshore_direction_deg", "open_arcs_deg"):
        assert key in p
    assert len(p["coefficient"]) == len(p["periods_s"]) == len(p["open_arcs_deg"])
    assert len(p["coefficient"][0]) == len(p["directions_deg"])
    # blocked directions (from land, east) are null, open ones are numbers; arcs lie in the west half
    east = int(np.argmin(np.abs(np.array(p["directions_deg"]) - 90.0)))
    assert p["nearshore_direction_deg"][0][east] is None
    for a, b in p["open_arcs_deg"][0]:  # within the seaward half (one bin of grazing slack)
        assert 175.0 <= a < 360.0 and 175.0 < b <= 365.0


def test_refraction_diffraction_switch_rebuilds_into_the_same_table(beach: Path, migrated_db: str, tmp_path: Path) -> None:
    # `[model] method` is part of the input hash; the refraction-diffraction table has the ray
    # table's layout, and over this planar beach K at normal incidence is the shoaling coefficient
    # (linear theory, SPM 1984 Vol. II App. C; deep-water normalised, as the grid starts above it)
    periods = (12.0, 14.0, 2)  # long waves: a small local grid keeps the test quick
    write_beach(tmp_path, periods=periods)
    assert main(["spot", "add", str(beach)]) == 0
    build(migrated_db)
    before = hashes(migrated_db)
    with session_scope(migrated_db) as s:
        rows = list(s.scalars(select(TransferTableRow)))
        shape = svc.load_table(rows[0]).coefficient.shape
        opts = {k: v for k, v in rows[0].meta["options"].items() if k not in ("break_x", "break_y")}
    assert opts["method"] == "rays"
    write_beach(tmp_path, periods=periods, method="refraction-diffraction")
    assert main(["spot", "add", str(beach)]) == 0
    labels: list[str] = []
    report = build(migrated_db, executor=None, progress=lambda label, done, total: labels.append(label))
    assert len(report.built) == 2 and {b["method"] for b in report.built} == {"refraction-diffraction"}
    assert any(lb.endswith("rays") for lb in labels)  # progress per stage and per component
    assert any(" T 12 s (" in lb for lb in labels) and any(" T 14 s (" in lb for lb in labels)
    after = hashes(migrated_db)
    assert {h for h, _ in after.values()}.isdisjoint({h for h, _ in before.values()})
    with session_scope(migrated_db) as s:
        for row in s.scalars(select(TransferTableRow)):
            t = svc.load_table(row)
            mine = {k: v for k, v in row.meta["options"].items() if k not in ("break_x", "break_y")}
            assert mine == dict(opts, method="refraction-diffraction")  # the only change
            assert t.meta["method"] == "refraction-diffraction"
            assert t.coefficient.shape == shape
            j = int(np.flatnonzero(t.directions_deg == 270.0)[0])
            assert j in t.meta["refraction_diffraction_mask"][0]
            ks = shoaling_coefficient(1.0 / t.periods_s, t.reference_depth_m)
            assert t.coefficient[:, j] == pytest.approx(ks, rel=0.01)
