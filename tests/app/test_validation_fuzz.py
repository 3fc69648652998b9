"""Hostile input to the validators: every input either validates or is refused with our own error
(ProfileError / BadInput for profiles, sources and agencies; InvalidInput for hazard policies;
GridError for bathymetry text) whose message names a field or a line — never another exception.
Plus path-escape attempts that `load_profile` must refuse.

Inputs are a valid document with random mutations (keys dropped, values replaced by any TOML value,
unknown keys added) written out as TOML text, and plain random text. The defects this fuzzing found
(loopback in inet_aton spellings, an unbalanced IPv6 bracket, an infinite policy level, soundings
beyond the float range, "line 0" for an empty grid file) are fixed and pinned by the regression
tests at the end.
"""

from __future__ import annotations

import json
import math
import os
import tempfile
from pathlib import Path

import numpy as np
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from app.errors import BadInput, ProfileError
from app.formats.grids import GridData, GridError, parse_esri_ascii, parse_xyz
from app.ingest.sources import check_remote_url, load_source_toml
from app.schemas.agencies import AgencyConfig
from app.schemas.profile import SpotProfile
from app.schemas.sources import SourceConfig
from app.services.agencies import load_agency_toml
from app.services.spots import load_profile, parse_profile_text
from models.errors import InvalidInput
from models.hazard import HazardPolicy

# bounded in the suite; SHOALCAST_FUZZ_EXAMPLES=2000 (say) for a longer opt-in run
FUZZ = settings(max_examples=int(os.environ.get("SHOALCAST_FUZZ_EXAMPLES", "80")), deadline=None,
                suppress_health_check=[HealthCheck.too_slow])

# ------------------------------------------------------------------------------ TOML text from data


def toml_value(v) -> str:
    if isinstance(v, bool):
        return "true" if v else "false"
    if isinstance(v, int):
        return str(v)
    if isinstance(v, float):
        if math.isnan(v):
            return "nan"
        if math.isinf(v):
            return "inf" if v > 0 else "-inf"
        return repr(v)
    if isinstance(v, str):
        return json.dumps(v, ensure_ascii=False)
    if isinstance(v, list):
        return "[" + ", ".join(toml_value(x) for x in v) + "]"
    if isinstance(v, dict):
        return "{" + ", ".join(f"{toml_value(str(k))} = {toml_value(x)}" for k, x in v.items()) + "}"
    raise TypeError(type(v))


def to_toml(doc: dict) -> str:
    """Every key at the top level with inline tables and arrays (valid TOML 1.0)."""
    return "".join(f"{toml_value(str(k))} = {toml_value(v)}\n" for k, v in doc.items())


SCALARS = st.one_of(
    st.booleans(),
    st.integers(-(2**63), 2**63 - 1),
    st.floats(allow_nan=True, allow_infinity=True),
    st.text(max_size=12),
    st.sampled_from(["", "UTC", "esri-ascii", "xyz", "../grid.asc", "/etc/passwd", "buoy-a", "file:///x",
                     "http://127.0.0.1/x", "Etc/GMT+2", "lonlat", "depth", "-1", "1e999"]),
)
VALUES = st.one_of(SCALARS, st.lists(SCALARS, max_size=3), st.dictionaries(st.text(max_size=6), SCALARS, max_size=3))


def _paths(doc, prefix=()):
    """All paths to values in a nested dict/list document."""
    items = doc.items() if isinstance(doc, dict) else enumerate(doc)
    for k, v in items:
        yield (*prefix, k)
        if isinstance(v, dict | list) and v:
            yield from _paths(v, (*prefix, k))


@st.composite
def mutated(draw, base: dict, *, exclude=lambda path, value: False):
    doc = json.loads(json.dumps(base))
    for _ in range(draw(st.integers(1, 4))):
        paths = list(_paths(doc))
        if not paths:
            break
        path = draw(st.sampled_from(paths))
        parent = doc
        for k in path[:-1]:
            parent = parent[k]
        action = draw(st.sampled_from(["replace", "replace", "delete", "unknown"]))
        if action == "delete":
            del parent[path[-1]]
        elif action == "unknown" and isinstance(parent, dict):
            parent[draw(st.text(min_size=1, max_size=8))] = draw(VALUES)
        else:
            value = draw(VALUES)
            if exclude(path, value):
                continue
            parent[path[-1]] = value
    return doc


def names_field_or_line(message: str) -> bool:
    # a field path, or tomllib's position: "(at line 3, column 7)" / "(at end of document)"
    return "field `" in message or "line" in message or "end of document" in message


# ------------------------------------------------------------------------------ spot profiles

PROFILE = {
    "id": "fuzz-reef",
    "name": "Fuzz Reef",
    "latitude": 10.0,
    "longitude": 20.0,
    "faces_deg": 270.0,
    "timezone": "UTC",
    "sources": ["buoy-a"],
    "bathymetry": {"file": "grid.asc", "format": "esri-ascii", "values": "depth", "crs": "local"},
    "break_points": [{"name": "peak", "x": -50.0, "y": 0.0}, {"name": "inside", "latitude": 10.0, "longitude": 20.0}],
    "model": {"reference_depth_m": 8.0, "period_min_s": 5.0, "period_max_s": 20.0},
}


def _profile_outcome(text: str):
    try:
        return parse_profile_text(text, where="fuzz.toml")
    except ProfileError as exc:
        assert str(exc).startswith("fuzz.toml: ")
        assert names_field_or_line(str(exc)), str(exc)
        return exc


def test_the_base_documents_are_valid():
    assert isinstance(parse_profile_text(to_toml(PROFILE), where="p.toml"), SpotProfile)
    assert SourceConfig.model_validate(SOURCE).id == "buoy-a"
    assert AgencyConfig.model_validate(AGENCY).policy is not None
    assert HazardPolicy.from_mapping(POLICY).levels[3].set_height_m == 3.0


@FUZZ
@given(mutated(PROFILE))
def test_mutated_profiles_validate_or_name_the_field(doc):
    got = _profile_outcome(to_toml(doc))
    if isinstance(got, ProfileError) and "not valid TOML" not in str(got):
        assert got.field, "a validation error carries the field it names"
        assert f"field `{got.field}`" in str(got)


@FUZZ
@given(st.text(max_size=200))
def test_random_text_profiles_are_refused_with_a_line_or_field(text):
    assert isinstance(_profile_outcome(text), ProfileError)  # no valid profile is this short and random


@FUZZ
@given(st.lists(st.sampled_from(to_toml(PROFILE).splitlines()), max_size=12), st.integers(0, 60))
def test_shuffled_or_cut_profile_lines(lines, cut):
    text = "\n".join(lines)
    _profile_outcome(text[: len(text) - cut] if cut < len(text) else text)


# ------------------------------------------------------------------------------ sources

SOURCE = {
    "id": "buoy-a",
    "name": "Offshore buoy A",
    "format": "spectral-text-realtime",
    "latitude": 10.2,
    "longitude": 19.5,
    "depth_m": 120.0,
    "urls": ["https://feeds.example/buoy-a.data_spec"],
    "paths": ["feeds/buoy-a.swdir"],
    "poll_minutes": 30.0,
}


@pytest.fixture(scope="module")
def scratch():
    with tempfile.TemporaryDirectory() as d:
        yield Path(d)


def _load(loader, scratch: Path, text: str):
    path = scratch / "doc.toml"
    path.write_text(text, encoding="utf-8")
    try:
        return loader(path)
    except BadInput as exc:
        assert str(exc).startswith("doc.toml: ")
        assert names_field_or_line(str(exc)), str(exc)
        return exc


@FUZZ
@given(doc=mutated(SOURCE))
def test_mutated_sources_validate_or_name_the_field(scratch, doc):
    got = _load(load_source_toml, scratch, to_toml(doc))
    if isinstance(got, SourceConfig):
        assert got.urls and not got.paths  # paths became file:// URLs beside the file
        assert all(u.lower().startswith(("http://", "https://", "file://")) for u in got.urls)


# Hosts a resolver maps to loopback even though they do not look like 127.0.0.1 (inet_aton forms).
_ODD_IPV4 = st.sampled_from(["127.1", "2130706433", "0x7f000001", "0", "127.0.0.1."])
URLS = st.one_of(
    st.text(max_size=40),
    st.builds(lambda s, h, p: f"{s}://{h}{p}", st.sampled_from(["http", "https", "file", "ftp", "HTTP", "gopher"]),
              st.one_of(st.sampled_from(["localhost", "127.0.0.1", "10.0.0.7", "[::1]", "169.254.169.254",
                                         "feeds.example", "a.localhost", "[fe80::1]", "224.0.0.1", "0.0.0.0",
                                         "user:pw@feeds.example", "feeds.example:8080"]),
                        st.text(alphabet="abc.:-@%0123456789", max_size=12)),
              st.sampled_from(["", "/", "/x?y=1", "#f"])),
)


@FUZZ
@given(st.one_of(URLS, _ODD_IPV4.map(lambda h: f"http://{h}/feed")))
def test_remote_url_check_refuses_or_allows_never_crashes(url):
    try:
        check_remote_url(url)
    except BadInput as exc:
        assert exc.field == "urls" and "URL" in str(exc)
        return
    # allowed: http(s) with a host that is not loopback, private, link-local or multicast
    from urllib.parse import urlsplit
    parts = urlsplit(url)
    assert parts.scheme in ("http", "https") and parts.hostname
    assert parts.hostname not in ("localhost", "127.0.0.1", "0.0.0.0", "10.0.0.7", "169.254.169.254", "224.0.0.1")


# ------------------------------------------------------------------------------ agencies and policies

POLICY = {
    "name": "p",
    "combine": "any",
    "levels": [
        {"level": 0, "label": "calm"},
        {"level": 1, "label": "watch", "set_height_m": 1.0},
        {"level": 2, "label": "warn", "set_height_m": 2.0, "period_s": 15.0},
        {"level": 3, "label": "closed", "set_height_m": 3.0, "power_kw_m": 80.0},
    ],
}
AGENCY = {
    "id": "harbour-guards",
    "name": "Harbour Guards",
    "spots": ["reef-a", "reef-b"],
    "alert_level": 2,
    "contact": "duty desk",
    "policy": {"combine": "any", "levels": POLICY["levels"]},
    "spot_policies": [{"spot": "reef-b", "combine": "all", "levels": POLICY["levels"]}],
}


@FUZZ
@given(doc=mutated(AGENCY))
def test_mutated_agencies_validate_or_name_the_field(scratch, doc):
    got = _load(load_agency_toml, scratch, to_toml(doc))
    if isinstance(got, AgencyConfig):  # then the policies pass the hazard model's own checks or say why
        for spec in [got.policy, *got.spot_policies]:
            if spec is None:
                continue
            data = {"combine": spec.combine, "levels": [lv.model_dump(exclude_none=True) for lv in spec.levels]}
            try:
                HazardPolicy.from_mapping(data)
            except InvalidInput as exc:
                assert "`policy." in str(exc)


@FUZZ
@given(mutated(POLICY))
def test_mutated_policies_build_or_raise_invalid_input(doc):
    try:
        policy = HazardPolicy.from_mapping(doc)
    except InvalidInput as exc:
        assert "`policy" in str(exc), str(exc)
        return
    assert [lv.level for lv in policy.levels] == [0, 1, 2, 3]
    heights = [lv.set_height_m for lv in policy.levels[1:]]
    assert heights == sorted(heights)  # thresholds never decrease with level


# ------------------------------------------------------------------------------ bathymetry text

ASC = ("ncols 4\nnrows 3\nxllcorner -100\nyllcorner -50\ncellsize 50\nNODATA_value -9999\n"
       "1 2 3 4\n5 6 -9999 8\n9 10 11 12\n")
XYZ = "".join(f"{x} {y} {5 + 0.01 * x}\n" for x in (0.0, 50.0, 100.0, 150.0) for y in (0.0, 50.0, 100.0))
TOKENS = st.sampled_from(["ncols", "NROWS", "xllcenter", "yllcorner", "cellsize", "dx", "dy", "nodata_value",
                          "0", "-1", "2.5", "1e308", "-1e308", "nan", "inf", "1e-320", "abc", ",", "3", "#",
                          "4.0", "99999999999"])


@st.composite
def damaged_text(draw, clean: str):
    lines = clean.splitlines()
    for _ in range(draw(st.integers(1, 4))):
        i = draw(st.integers(0, len(lines) - 1))
        toks = lines[i].split()
        op = draw(st.sampled_from(["swap", "insert", "drop", "dup_line", "drop_line"]))
        j = draw(st.integers(0, max(len(toks) - 1, 0)))
        if op == "swap" and toks:
            toks[j] = draw(TOKENS)
        elif op == "insert":
            toks.insert(j, draw(TOKENS))
        elif op == "drop" and toks:
            del toks[j]
        elif op == "dup_line":
            lines.insert(i, lines[i])
            continue
        elif op == "drop_line" and len(lines) > 1:
            del lines[i]
            continue
        lines[i] = " ".join(toks)
    return "\n".join(lines) + "\n"


def _grid_outcome(fn, text: str):
    try:
        got = fn(text)
    except GridError as exc:
        assert str(exc).startswith("fuzz.grid")
        assert exc.reason
        return exc
    assert isinstance(got, GridData)
    finite = got.values[np.isfinite(got.values)]
    assert np.all(np.isfinite(got.x)) and np.all(np.isfinite(got.y)) and finite.size > 0
    return got


@FUZZ
@given(st.one_of(damaged_text(ASC), st.text(max_size=120)))
def test_esri_ascii_text_parses_or_raises_grid_error(text):
    got = _grid_outcome(lambda t: parse_esri_ascii(t, name="fuzz.grid"), text)
    if isinstance(got, GridError) and got.line is not None:  # a line it names exists in the text
        n_lines = len(text.splitlines())
        assert 1 <= got.line <= n_lines
        assert str(got).startswith(f"fuzz.grid:{got.line}: ")


@FUZZ
@given(st.one_of(damaged_text(XYZ), st.text(alphabet="0123456789 .,-e\n#x", max_size=120)))
def test_xyz_text_grids_or_raises_grid_error(text):
    got = _grid_outcome(lambda t: parse_xyz(t, name="fuzz.grid"), text)
    if isinstance(got, GridData):
        for rej in got.rejects:  # bad lines left out are named by line and reason
            assert rej.line >= 1 and rej.reason


# ------------------------------------------------------------------------------ profile path escapes


def _asc_with_water() -> str:
    # 6 x 4 cells of 50 m about the origin, depth 5..10 m everywhere (all water)
    rows = "\n".join(" ".join(f"{5 + c:.1f}" for c in range(6)) for _ in range(4))
    return "ncols 6\nnrows 4\nxllcorner -150\nyllcorner -100\ncellsize 50\n" + rows + "\n"


def _profile(folder: Path, file: str) -> Path:
    doc = json.loads(json.dumps(PROFILE))
    doc["bathymetry"]["file"] = file
    doc["break_points"] = [{"name": "peak", "x": 0.0, "y": 0.0}]
    p = folder / "spot.toml"
    p.write_text(to_toml(doc), encoding="utf-8")
    return p


@pytest.fixture
def spot_folder(tmp_path):
    inside = tmp_path / "spots"
    inside.mkdir()
    (inside / "grid.asc").write_text(_asc_with_water())
    (inside / "sub").mkdir()
    (inside / "sub" / "grid.asc").write_text(_asc_with_water())
    (tmp_path / "outside.asc").write_text(_asc_with_water())  # a valid grid, but not the profile's
    return inside


def test_a_profile_inside_its_folder_loads(spot_folder):
    for file in ("grid.asc", "sub/grid.asc", "sub/../grid.asc", "./grid.asc"):
        loaded = load_profile(_profile(spot_folder, file))
        assert loaded.points[0].depth_m > 0


@pytest.mark.parametrize("file", ["../outside.asc", "sub/../../outside.asc", "..", "../spots/../outside.asc",
                                  "ABSOLUTE", "sub/../../../../../../etc/hostname"])
def test_paths_leaving_the_folder_are_refused(spot_folder, file):
    if file == "ABSOLUTE":
        file = str(spot_folder.parent / "outside.asc")
    with pytest.raises(ProfileError) as err:
        load_profile(_profile(spot_folder, file))
    assert err.value.field == "bathymetry.file"
    assert "bathymetry.file" in str(err.value)


@pytest.mark.skipif(not hasattr(os, "symlink"), reason="needs symlinks")
def test_symlinks_out_of_the_folder_are_refused(spot_folder):
    (spot_folder / "link.asc").symlink_to(spot_folder.parent / "outside.asc")
    (spot_folder / "linkdir").symlink_to(spot_folder.parent, target_is_directory=True)
    (spot_folder / "inner.asc").symlink_to(spot_folder / "grid.asc")
    for file in ("link.asc", "linkdir/outside.asc"):
        with pytest.raises(ProfileError, match="leaves the profile's folder") as err:
            load_profile(_profile(spot_folder, file))
        assert err.value.field == "bathymetry.file"
    assert load_profile(_profile(spot_folder, "inner.asc")).points  # a link that stays inside is fine


def test_a_folder_or_missing_file_is_refused_by_name(spot_folder):
    for file in ("sub", "nope.asc"):
        with pytest.raises(ProfileError, match="bathymetry.file"):
            load_profile(_profile(spot_folder, file))


# ------------------------------------------------------------------------------ regressions (defects found by the fuzz)


def test_regression_unbalanced_bracket_url():
    with pytest.raises(BadInput):
        check_remote_url("http://[::1/x")


@given(_ODD_IPV4)
@settings(max_examples=5, deadline=None)
def test_regression_loopback_in_other_spellings(host):
    with pytest.raises(BadInput):
        check_remote_url(f"http://{host}/feed")


def test_regression_infinite_level():
    doc = json.loads(json.dumps(POLICY))
    doc["levels"][1]["level"] = math.inf
    with pytest.raises(InvalidInput):
        HazardPolicy.from_mapping(doc)


def test_regression_soundings_spanning_the_float_range():
    import warnings

    with pytest.raises(GridError), warnings.catch_warnings():
        warnings.simplefilter("ignore", RuntimeWarning)  # as in the service (no warnings-as-errors)
        parse_xyz("-1e308 0 5\n1e308 0 5\n0 1e308 5\n", name="fuzz.grid")


def test_regression_empty_esri_text_says_line_0():
    with pytest.raises(GridError) as err:
        parse_esri_ascii("", name="fuzz.grid")
    assert err.value.line is None
