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


RULES = """
id = "beach-patrol"
name = "Beach Patrol"
spots = ["reef-a"]
[policy]
levels = [
  {{level = 0, label = "green"}},
  {{level = 1, label = "yellow", set_height_m = 1.0, rules = [{{rip_likelihood = 0.5}}]}},
  {{level = 2, label = "red", set_height_m = 2.0, rules = [
    {{shore_break = true, water_level_m = 1.4}},
    {{wind_relative = {wind}, wind_speed_m_s = 10}},
  ]}},
  {{level = 3, label = "closed", set_height_m = 3.0}},
]
"""


def test_policy_rules_on_nearshore_inputs_are_stored_and_read(migrated_db: str, tmp_path: Path) -> None:
    f = tmp_path / "p.toml"
    f.write_text(RULES.format(wind='"onshore"'))
    assert main(["agency", "add", str(f)]) == 0
    with session_scope(migrated_db) as s:
        p = policy_for(s, "beach-patrol", "reef-a")
    assert p.levels[1].rules[0].rip_likelihood == 0.5
    sb, wind = p.levels[2].rules
    assert (sb.shore_break, sb.water_level_m) == (True, 1.4)
    assert (wind.wind_relative, wind.wind_speed_m_s) == (("onshore",), 10.0)


def test_a_bad_rule_is_refused_naming_the_file_and_field(
    migrated_db: str, tmp_path: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    f = tmp_path / "p.toml"
    f.write_text(RULES.format(wind='"seaward"'))
    assert main(["agency", "add", str(f)]) == 2
    err = capsys.readouterr().err
    assert "p.toml" in err and "policy.levels.2.rules.1.wind_relative" in err
    f.write_text(RULES.format(wind='"onshore"').replace("wind_speed_m_s = 10", "wind_speed = 10"))
    assert main(["agency", "add", str(f)]) == 2
    assert "rules.1.wind_speed" in capsys.readouterr().err


def test_a_spot_policy_keeps_its_basis(migrated_db: str, tmp_path: Path) -> None:
    f = tmp_path / "a.toml"
    f.write_text(AGENCY.format(l2=2.0).replace('spot = "reef-b"', 'spot = "reef-b"\nbasis = "offshore"'))
    assert main(["agency", "add", str(f)]) == 0
    with session_scope(migrated_db) as s:
        assert policy_for(s, "harbour-guards", "reef-b").basis == "offshore"


def test_the_agency_file_in_the_docs_is_valid(migrated_db: str, tmp_path: Path) -> None:
    # docs/policies.md §1 shows an agency file; its [policy] part must be what the code accepts
    text = (Path(__file__).parents[3] / "docs" / "policies.md").read_text(encoding="utf-8")
    block = text.split("```toml\n", 1)[1].split("```", 1)[0].split("[[spot_policies]]")[0]
    f = tmp_path / "guards.toml"
    f.write_text(block.replace('spots = ["example-ledge"]', 'spots = []'))
    assert main(["agency", "add", str(f)]) == 0
    with session_scope(migrated_db) as s:
        p = policy_for(s, "north-shore-guards", "any-spot")
    assert [len(lv.rules) for lv in p.levels] == [0, 1, 3, 0]
