"""app.services.outlook_inputs: the choice of offshore inputs and the options at the edge.

Facts of the trade: an observation at the spot is better than an arrival forecast carried from a
distant station, which is better than a model forecast (common practice: the nearer in time and
place the measurement, the more it is trusted). Linear interpolation of water levels is numpy.interp
(reference library). Bad options are refused with the field named (the project's error rule).
"""

from __future__ import annotations

from datetime import UTC, datetime, timedelta
from types import SimpleNamespace

import numpy as np
import pytest

from app.errors import BadInput
from app.services import outlook_inputs as inputs
from models.offshore import prepare_offshore
from models.spectra import cos2s, jonswap, spectrum_mean_direction

T0 = datetime(2031, 1, 1, tzinfo=UTC)
F = np.linspace(0.05, 0.25, 21)
D = np.arange(0.0, 360.0, 10.0)


def _batch(kind: str, hours: list[int], source: str = "s", hs: float = 1.0):  # type: ignore[no-untyped-def]
    e = jonswap(F, hs=hs, tp=10.0)[:, None] * cos2s(D, mean_dir_deg=270.0, s=10.0)[None, :]
    return prepare_offshore([T0 + timedelta(hours=h) for h in hours], F, D, np.stack([e] * len(hours)),
                            source=source, kind=kind)  # fmt: skip


def test_one_input_per_time_observed_then_arrival_then_model() -> None:
    model = _batch("model-forecast", [0, 1, 2, 3], hs=1.0)
    arrival = _batch("arrival-forecast", [1, 2], hs=2.0)
    observed = _batch("observed", [2], hs=3.0)
    chosen = inputs.select_inputs([model, arrival, observed])
    by_time = {t: b.kind for b in chosen for t in b.times}
    assert by_time == {
        T0: "model-forecast", T0 + timedelta(hours=1): "arrival-forecast",
        T0 + timedelta(hours=2): "observed", T0 + timedelta(hours=3): "model-forecast",
    }  # fmt: skip
    for b in chosen:  # each picked step keeps its own spectrum
        want = {"model-forecast": 1.0, "arrival-forecast": 2.0, "observed": 3.0}[b.kind]
        np.testing.assert_allclose(b.hm0, want, rtol=0.05)


def test_same_kind_keeps_the_first_source() -> None:
    a, b = _batch("model-forecast", [0, 1], source="a"), _batch("model-forecast", [1, 2], source="b")
    chosen = inputs.select_inputs([a, b])
    assert [(x.source, len(x.times)) for x in chosen] == [("a", 2), ("b", 1)]


def test_water_level_constant_or_interpolated_and_checked() -> None:
    times = [T0 + timedelta(minutes=30 * k) for k in range(3)]
    np.testing.assert_array_equal(inputs.water_level_at(0.4, times), [0.4, 0.4, 0.4])
    tide = [(T0, 0.0), (T0 + timedelta(hours=1), 1.0)]
    np.testing.assert_allclose(inputs.water_level_at(tide, times), np.interp([0, 1800, 3600], [0, 3600], [0, 1]))
    assert inputs.water_key(tide) == [[T0.isoformat(), 0.0], [(T0 + timedelta(hours=1)).isoformat(), 1.0]]
    with pytest.raises(BadInput, match="timezone-aware") as e:
        inputs.water_level_at([(datetime(2031, 1, 1), 0.0)], times)
    assert e.value.field == "water_level time"
    with pytest.raises(BadInput, match="finite"):
        inputs.water_level_at(float("nan"), times)


@pytest.mark.parametrize(("hours", "units", "field"), [(0, "metric", "hours"), (385, "metric", "hours"),
                                                       (2.5, "metric", "hours"), (3, "feet", "units")])  # fmt: skip
def test_bad_options_name_their_field(hours, units, field) -> None:  # type: ignore[no-untyped-def]
    with pytest.raises(BadInput) as e:
        inputs.check_options(hours, units)
    assert e.value.field == field


def test_hours_are_floored_and_naive_times_refused() -> None:
    assert inputs.floor_hour(T0 + timedelta(minutes=59, seconds=3)) == T0
    with pytest.raises(BadInput, match="`start`"):
        inputs.aware(datetime(2031, 1, 1), "start")


def test_buoy_coefficients_become_a_directional_spectrum_with_their_mean_direction() -> None:
    # alpha1 is the mean direction waves come FROM (NDBC's buoy convention, from memory): 250°
    f = np.array([0.08, 0.1, 0.12])
    rec = SimpleNamespace(efth=None, directions_deg=None, frequency=f, density=np.array([1.0, 2.0, 1.0]),
                          r1=np.full(3, 0.8), r2=np.full(3, 0.5), alpha1_deg=np.full(3, 250.0),
                          alpha2_deg=np.full(3, 250.0))  # fmt: skip
    d, e = inputs.efth_of(rec)
    np.testing.assert_array_equal(d, inputs.COEFFICIENT_DIRECTIONS_DEG)
    assert float(spectrum_mean_direction(f, e, d)) == pytest.approx(250.0, abs=2.0)
    assert inputs.efth_of(SimpleNamespace(efth=None, directions_deg=None, r1=None)) is None


def test_records_on_another_grid_are_left_out_with_a_note() -> None:
    def rec(nf: int):  # type: ignore[no-untyped-def]
        return (SimpleNamespace(frequency=np.linspace(0.05, 0.25, nf)), D, np.zeros((nf, D.size)))

    notes: list[str] = []
    kept = inputs.one_grid([rec(10), rec(21), rec(21)], "buoy", notes)
    assert len(kept) == 2 and "1 spectra on another frequency/direction grid" in notes[0]
