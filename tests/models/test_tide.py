"""models.tide: harmonic predictions with nodal corrections, against `utide` (Codiga 2011, a PyPI
reference library: Foreman's 1977 satellite sums, an independent computation of f, u and V).

utide's `reconstruct` is given the constituents as a hand-made coefficient set (amplitude, Greenwich
phase lag, its own constituent frequencies and indices), with nodal corrections at every time
(nodsatlint/gwchlint off), so its prediction is h = Z0 + Σ F A cos(2π(U + V) − g) as ours.
"""

from __future__ import annotations

from datetime import UTC, datetime, timedelta

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from models.errors import InvalidInput
from models.tide import (
    CONSTITUENTS,
    Constituent,
    nodal_corrections,
    predict,
    predict_rate,
    tide_extremes,
)

utide = pytest.importorskip("utide")
from utide._ut_constants import constit_index_dict, ut_constants  # noqa: E402
from utide.utilities import Bunch  # noqa: E402

SET = [Constituent("M2", 1.1, 212.0), Constituent("S2", 0.4, 250.0), Constituent("K1", 0.3, 100.0),
       Constituent("O1", 0.2, 80.0)]  # fmt: skip


def utide_predict(
    times: list[datetime], cons: list[Constituent], mean: float = 0.0, nodal: bool = True
) -> np.ndarray:
    names = [c.name for c in cons]
    lind = np.array([constit_index_dict[n] for n in names])
    opt = Bunch(twodim=False, nodiagn=True, nodsatlint=False, nodsatnone=not nodal, gwchlint=False, gwchnone=False,
                prefilt=[], notrend=True)  # fmt: skip
    coef = Bunch(
        name=np.array(names), A=np.array([c.amplitude_m for c in cons]), g=np.array([c.phase_deg for c in cons]),
        mean=mean, aux=Bunch(opt=opt, frq=ut_constants.const.freq[lind], lind=lind, lat=45.0, reftime=737000.0),
    )  # fmt: skip
    t = np.array([x.replace(tzinfo=None) for x in times], dtype="datetime64[s]")
    return utide.reconstruct(t, coef, verbose=False, min_SNR=0, min_PE=0).h


def half_hours(year: int, days: int = 30) -> list[datetime]:
    t0 = datetime(year, 3, 1, tzinfo=UTC)
    return [t0 + timedelta(minutes=30 * i) for i in range(48 * days)]


@pytest.mark.parametrize("year", [1992, 2001, 2006, 2015, 2026, 2034])  # all through a nodal cycle (18.6 y)
def test_m2_s2_k1_o1_within_2_cm_of_utide(year: int) -> None:
    times = half_hours(year)
    ours = predict(times, SET, mean_level_m=0.7)
    ref = utide_predict(times, SET, mean=0.7)
    assert np.max(np.abs(ours - ref)) < 0.02  # the bar; measured: under 0.6 cm


def test_the_check_can_fail_without_nodal_corrections() -> None:
    # the nodal factor of M2 moves its amplitude by up to ±3.7 % (4 cm of a 1.1 m tide; Pugh 1987 Table 4.3,
    # from memory): in 2015 (node near 180°, f largest) utide itself without them is off by more than 2 cm
    times = half_hours(2015)
    f, _ = nodal_corrections([times[0].timestamp()], ["M2"])
    assert f[0, 0] == pytest.approx(1.037, abs=0.002)
    without = utide_predict(times, SET, nodal=False)
    assert np.max(np.abs(predict(times, SET) - without)) > 0.03


@pytest.mark.parametrize("name", CONSTITUENTS)
def test_every_constituent_agrees_with_utide_per_metre_of_amplitude(name: str) -> None:
    # Schureman's single-term f, u against Foreman's satellite sums: they differ most for Q1 and MU2
    # (measured 2.7 and 2.1 cm per metre), well under 1 cm per metre for the large constituents
    times = [datetime(2028, 3, 1, tzinfo=UTC) + timedelta(hours=h) for h in range(24 * 400)]
    one = [Constituent(name, 1.0, 40.0)]
    err = np.max(np.abs(predict(times, one) - utide_predict(times, one)))
    assert err < (0.03 if name in ("Q1", "MU2", "P1") else 0.01)


def test_rate_is_the_derivative_of_the_level() -> None:
    t = np.array([datetime(2031, 5, 2, 3, tzinfo=UTC).timestamp() + 1800.0 * i for i in range(50)])
    h = 30.0
    fd = (predict(t + h, SET) - predict(t - h, SET)) / (2 * h)
    np.testing.assert_allclose(predict_rate(t, SET), fd, atol=2e-8)  # m/s; f, u are slow (years)


def test_extremes_are_where_utide_peaks_and_m2_highs_are_one_lunar_half_day_apart() -> None:
    t0 = datetime(2031, 5, 2, tzinfo=UTC)
    ext = tide_extremes(t0.timestamp(), t0.timestamp() + 3 * 86400.0, SET, mean_level_m=0.5)
    assert len(ext.high_times) >= 5 and len(ext.low_times) >= 5
    for te, level in zip(ext.high_times, ext.high_levels, strict=True):  # utide on a 1-minute grid around it
        around = [datetime.fromtimestamp(te, UTC) + timedelta(minutes=m) for m in range(-30, 31)]
        ref = utide_predict(around, SET, mean=0.5)
        assert abs(int(np.argmax(ref)) - 30) <= 2  # within 2 minutes
        assert level == pytest.approx(ref.max(), abs=0.02)
    m2 = tide_extremes(t0.timestamp(), t0.timestamp() + 3 * 86400.0, SET[:1])
    # M2 speed 28.9841042 °/h (Schureman 1958 Table 2, from memory): 12.4206 h between highs
    np.testing.assert_allclose(np.diff(m2.high_times) / 3600.0, 360.0 / 28.9841042, atol=0.01)


@settings(max_examples=30, deadline=None)
@given(amp=st.floats(0.0, 5.0), phase=st.floats(0.0, 360.0), mean=st.floats(-3.0, 3.0),
       t=st.floats(0.0, 2.0e9))  # fmt: skip
def test_level_stays_within_the_nodally_corrected_amplitude(
    amp: float, phase: float, mean: float, t: float
) -> None:
    cons = [Constituent("M2", amp, phase), Constituent("K1", amp / 3, phase)]
    f, _ = nodal_corrections([t], ["M2", "K1"])
    h = predict([t], cons, mean_level_m=mean)[0]
    assert abs(h - mean) <= amp * f[0, 0] + amp / 3 * f[1, 0] + 1e-9


def test_bad_constituents_are_named() -> None:
    with pytest.raises(InvalidInput, match="unknown tide constituent 'X9'"):
        predict([0.0], [("X9", 1.0, 0.0)])
    with pytest.raises(InvalidInput, match="constituents\\[0\\]"):
        predict([0.0], [("M2", -1.0, 0.0)])
    np.testing.assert_array_equal(predict([0.0, 1.0], [], mean_level_m=0.3), [0.3, 0.3])
