"""Agencies and hazard policies: TOML in, the right policy out per spot, bad policies refused."""

from __future__ import annotations

from pathlib import Path

import pytest

from app.cli import main
from app.db.session import session_scope
from app.services.agencies import policy_for
from models.hazard import DEFAULT_POLICY

AGENCY = """
id = "harbour-guards"
name = "Harbour Guards"
spots = ["reef-a", "reef-b"]
alert_level = 2
[policy]
levels = [
  {{level = 0, label = "green flag"}},
  {{level = 1, label = "amber", set_height_m = 1.2}},
  {{level = 2, label = "red", set_height_m = {l2}, period_s = 15}},
  {{level = 3, label = "no entry", set_height_m = 3.0}},
]
[[spot_policies]]
spot = "reef-b"
levels = [
  {{level = 0, label = "low"}},
  {{level = 1, label = "mid", set_height_m = 0.8}},
  {{level = 2, label = "high", set_height_m = 1.5}},
  {{level = 3, label = "extreme", set_height_m = 2.5}},
]
"""


def test_policies_per_spot_and_default(migrated_db: str, tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    f = tmp_path / "a.toml"
    f.write_text(AGENCY.format(l2=2.0))
    assert main(["agency", "add", str(f)]) == 0
    printed = capsys.readouterr().out
    assert "caution: Guidance only" in printed and "local rules" in printed  # levels shown with cautions
    with session_scope(migrated_db) as s:
        a = policy_for(s, "harbour-guards", "reef-a")
        b = policy_for(s, "harbour-guards", "reef-b")
        other = policy_for(s, None, "reef-a")
    assert [lv.label for lv in a.levels] == ["green flag", "amber", "red", "no entry"]
    assert a.levels[2].period_s == 15
    assert [lv.set_height_m for lv in b.levels] == [None, 0.8, 1.5, 2.5]
    assert other is DEFAULT_POLICY and other.is_default


def test_decreasing_thresholds_are_refused(migrated_db: str, tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    f = tmp_path / "a.toml"
    f.write_text(AGENCY.format(l2=0.5))  # level 2 below level 1
    assert main(["agency", "add", str(f)]) == 2
    err = capsys.readouterr().err
    assert "levels[2].set_height_m" in err and "must not decrease" in err
    capsys.readouterr()
    assert main(["agency", "list", "--json"]) == 0
    assert capsys.readouterr().out.strip() == "[]"
