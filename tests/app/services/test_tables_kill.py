"""Fault: a table build killed with SIGKILL half-way leaves every stored table whole (the old one or
the new one, never a broken one), the old tables stay in use, and the next build redoes only what
is still stale."""

from __future__ import annotations

import os
import signal
import subprocess
import sys
import time
from pathlib import Path

import pytest
from sqlalchemy import select

from app.cli import main
from app.db.session import session_scope
from app.db.tables import TransferTableRow
from app.services import tables as svc

pytestmark = pytest.mark.slow

ROW = " ".join(f"{(1400.0 - x) / 30.0:.3f}" for x in (-1575.0 + 50.0 * i for i in range(60)))


def write_spot(folder: Path, spot_id: str, *, reference_depth: float, slow: bool) -> Path:
    (folder / f"{spot_id}.asc").write_text(
        "ncols 60\nnrows 40\nxllcorner -1600\nyllcorner -1000\ncellsize 50\n" + "\n".join([ROW] * 40) + "\n"
    )
    model = "period_count = 24\nlaunch_spacing_deg = 0.1" if slow else "period_count = 2\nlaunch_spacing_deg = 2.0"
    p = folder / f"{spot_id}.toml"
    p.write_text(f"""
id = "{spot_id}"
name = "{spot_id}"
latitude = 10.0
longitude = 20.0
faces_deg = 270
[bathymetry]
file = "{spot_id}.asc"
format = "esri-ascii"
[[break_points]]
name = "p"
x = 1300.0
y = 0.0
[model]
reference_depth_m = {reference_depth}
direction_bin_deg = 5.0
smoothing_m = 0.0
{model}
""")
    return p


def table_hashes(url: str) -> dict[str, str]:
    with session_scope(url) as s:
        rows = s.scalars(select(TransferTableRow)).all()
        for r in rows:
            svc.load_table(r)  # every stored table is whole
        return {r.spot_id: r.input_hash for r in rows}


def test_killed_build_keeps_whole_tables_and_resumes(migrated_db: str, tmp_path: Path) -> None:
    a = write_spot(tmp_path, "a-fast", reference_depth=8.0, slow=False)
    b = write_spot(tmp_path, "b-slow", reference_depth=8.0, slow=False)
    assert main(["spot", "add", str(a), str(b)]) == 0
    assert main(["tables", "build", "--workers", "1"]) == 0
    old = table_hashes(migrated_db)

    # change both profiles: the fast spot builds first (ids are built in order), the slow one takes long
    write_spot(tmp_path, "a-fast", reference_depth=9.0, slow=False)
    write_spot(tmp_path, "b-slow", reference_depth=9.0, slow=True)
    assert main(["spot", "add", str(a), str(b)]) == 0
    assert table_hashes(migrated_db) == old  # re-adding keeps the tables in use until rebuilt
    env = dict(os.environ, SHOALCAST_DATABASE_URL=migrated_db)
    proc = subprocess.Popen([sys.executable, "-m", "app.cli", "tables", "build", "--workers", "1"], env=env,
                            stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL)
    try:
        deadline = time.monotonic() + 60
        while table_hashes(migrated_db)["a-fast"] == old["a-fast"]:
            assert proc.poll() is None, "the build finished before it could be killed"
            assert time.monotonic() < deadline
            time.sleep(0.05)
        os.kill(proc.pid, signal.SIGKILL)
    finally:
        proc.wait(timeout=30)
    mid = table_hashes(migrated_db)
    assert mid["a-fast"] != old["a-fast"]  # rebuilt and stored whole
    assert mid["b-slow"] == old["b-slow"]  # the old table is still there and in use
    report = svc.build_tables(migrated_db, executor=None)
    assert [b["spot"] for b in report.built] == ["b-slow"] and report.skipped == 1  # only what was left
    final = table_hashes(migrated_db)
    assert final["a-fast"] == mid["a-fast"]
