"""A synthetic offshore feed for the demo coast: one station, two distant swells and a local wind sea.

Everything here is invented (station, storms, numbers). The physics that makes it convincing:

* **Dispersion.** A swell from a storm at distance Δ reaches the station frequency by frequency:
  a component of frequency f travels at the deep-water group speed Cg = g/(4πf), so it arrives at
  t = t0 + 4πfΔ/g and the frequency seen at the station rises linearly in time with slope
  df/dt = g/(4πΔ) (Munk 1947; Snodgrass et al. 1966). At each time the swell occupies a narrow band
  (Gaussian, width ``band_hz``) about that frequency, and its height is the storm's source spectrum
  sampled there — it rises while the periods near the storm's peak arrive, then falls.
* **Directions.** cos-2s spreading (Longuet-Higgins, Cartwright & Smith 1963): narrow for swell
  (s = 40-60, long-travelled), broad for the wind sea (s = 6); the main swell veers a few degrees.
* **Wind sea.** JONSWAP (Hasselmann et al. 1973, γ = 3.3) scaled to a prescribed Hs that varies
  slowly through the day.

Timeline about ``now`` (hours): the main west swell (from ~262-270°, 4200 km away, peak ~15 s)
builds to its peak near now+12 h and fades; a north-west swell (from ~320°, 2600 km away, peak
~13 s) takes over from about now+30 h, peaking near now+42 h. So a spot sheltered from the west
(the demo bay) is small for the first and open to the second inside the demo window.

Shore conditions (docs/tide-wind.md): a sea breeze on a daily cycle in local solar time (the coast
lies at 127.3° W: UTC − 8.5 h): a light land breeze from the east through the night and morning
(offshore at the west-facing breaks), turning through the south about midday and blowing onshore
from the west-north-west in the afternoon, strongest about 15:00 local, easing in the evening; and
the water level from the coast's invented tide table (`app.demo.coast.DEMO_TIDE`) with a small surge.

Products: the agency real-time text set (observations up to ``now``; density, r1, r2, α1, α2 per
band on the 47-band buoy grid, computed from E(f, θ) by direct integration of the first-five
Fourier coefficients) and a CF NetCDF forecast (E(f, θ) from the model cycle before ``now``); a
shore station's met text file (observed wind, TIDE in feet above mean sea level) up to ``now``; a
CF NetCDF wind forecast (`wind_speed`, `wind_from_direction`) from the same model cycle.
"""

from __future__ import annotations

import math
import os
import tempfile
from dataclasses import dataclass, field
from datetime import UTC, datetime, timedelta
from pathlib import Path

import numpy as np

from app.formats.records import SpectrumRecord
from models.constants import G
from models.spectra import cos2s, jonswap

__all__ = [
    "MODEL_DIRECTIONS_DEG",
    "MODEL_FREQUENCIES_HZ",
    "MODEL_ID",
    "NDBC_FREQUENCIES_HZ",
    "SHORE_ID",
    "STATION_ID",
    "WIND_ID",
    "FeedFiles",
    "Scenario",
    "Swell",
    "WindSea",
    "default_scenario",
    "directional_moments",
    "efth",
    "forecast_records",
    "sea_breeze",
    "shore_met_text",
    "observation_records",
    "write_feed",
    "write_source_profiles",
]

STATION_ID = "demo-offshore-1"
MODEL_ID = "demo-model-1"
SHORE_ID = "demo-shore-1"  # shore met station: wind and water level (observed)
WIND_ID = "demo-wind-1"  # wind forecast (CF NetCDF)
SHORE_LATITUDE, SHORE_LONGITUDE = -41.740, -127.285  # on the coast, between the spots (nominal)
LOCAL_SOLAR_OFFSET_H = -127.30 / 15.0  # local solar time = UTC + this (−8.49 h)
SURGE_M = 0.08  # the observed level stands this much above the tide table (a small surge)
STATION_LATITUDE = -41.740
STATION_LONGITUDE = -127.800  # ~41 km west of the demo coast (nominal, open ocean)
STATION_DEPTH_M = 2800.0

# The 47-band grid of the agency's current buoys (docs/formats.md §1.5): 0.02; 0.0325-0.0925 by
# 0.005; 0.10-0.35 by 0.01; 0.365-0.485 by 0.02 [Hz].
NDBC_FREQUENCIES_HZ = np.round(np.concatenate([
    [0.02], 0.0325 + 0.005 * np.arange(13), 0.10 + 0.01 * np.arange(26), 0.365 + 0.02 * np.arange(7),
]), 4)
# A wave-model grid: geometric frequencies (ratio 1.1, common practice in spectral wave models) and
# 5° direction bins (nautical FROM, bin centres).
MODEL_FREQUENCIES_HZ = np.round(0.035 * 1.1 ** np.arange(29), 6)
MODEL_DIRECTIONS_DEG = np.arange(0.0, 360.0, 5.0)
_FINE_DIRECTIONS_DEG = np.arange(0.5, 360.0, 1.0)  # for the coefficient integrals
_MIN_DENSITY = 0.0005  # [m²/Hz] below this a band prints as 0.000 and its coefficients as missing


@dataclass(frozen=True)
class Swell:
    """A swell from a distant storm, as seen at the station."""

    name: str
    distance_m: float  # storm -> station (great-circle in nature; invented here)
    f_at_now_hz: float  # frequency arriving at `now` (fixes the storm time t0)
    source_fp_hz: float  # the storm's peak frequency (the swell is largest when it arrives)
    source_width_hz: float  # Gaussian width of Hs against arriving frequency
    peak_hs_m: float
    dir_start_deg: float  # mean direction (FROM) at the start of the window ...
    dir_end_deg: float  # ... and at its end (linear in between: the storm track moves)
    spreading_s: float
    band_hz: float = 0.006  # instantaneous bandwidth at the station (finite storm duration and size)

    @property
    def dispersion_slope_hz_per_s(self) -> float:
        """df/dt = g/(4πΔ) (Munk 1947)."""
        return G / (4.0 * math.pi * self.distance_m)

    def frequency_at(self, hours_from_now):
        """Frequency arriving at the station [Hz] (meaningful where > 0: the swell has begun)."""
        return self.f_at_now_hz + self.dispersion_slope_hz_per_s * 3600.0 * np.asarray(hours_from_now, float)

    def hs_at(self, hours_from_now):
        fc = self.frequency_at(hours_from_now)
        hs = self.peak_hs_m * np.exp(-0.25 * ((fc - self.source_fp_hz) / self.source_width_hz) ** 2)
        return np.where(fc > 0.02, hs, 0.0)


@dataclass(frozen=True)
class WindSea:
    """A local wind sea: JONSWAP with slowly varying Hs (a daily cycle of the breeze)."""

    hs_m: float = 0.7
    hs_daily_amplitude_m: float = 0.25
    tp_s: float = 6.0
    gamma: float = 3.3
    dir_deg: float = 205.0
    spreading_s: float = 6.0

    def hs_at(self, hours_from_now):
        return self.hs_m + self.hs_daily_amplitude_m * np.sin(2 * np.pi * np.asarray(hours_from_now, float) / 24.0)


@dataclass(frozen=True)
class Scenario:
    now: datetime
    past_hours: int = 36
    future_hours: int = 72
    obs_minute: int = 40  # buoys stamp their spectra a little before the hour
    cycle_hours: int = 6  # model issue times are multiples of this
    swells: tuple[Swell, ...] = field(default_factory=tuple)
    wind_sea: WindSea | None = None
    noise: float = 0.08  # relative std of buoy band-density sampling noise (0 = none)
    seed: int = 47


def default_scenario(now: datetime) -> Scenario:
    """The demo's weather about `now` (a UTC-aware datetime)."""
    west = Swell(name="west swell", distance_m=4.2e6, f_at_now_hz=0.059, source_fp_hz=0.067,
                 source_width_hz=0.008, peak_hs_m=2.6, dir_start_deg=262.0, dir_end_deg=270.0, spreading_s=55.0)
    northwest = Swell(name="north-west swell", distance_m=2.6e6, f_at_now_hz=0.030, source_fp_hz=0.075,
                      source_width_hz=0.010, peak_hs_m=2.0, dir_start_deg=324.0, dir_end_deg=319.0,
                      spreading_s=35.0)
    return Scenario(now=now, swells=(west, northwest), wind_sea=WindSea())


# ---------------------------------------------------------------- spectra (plain arrays)

def efth(scenario: Scenario, hours_from_now: float, frequency_hz, directions_deg) -> np.ndarray:
    """E(f, θ) [m²/Hz/rad] at the station `hours_from_now` on nautical FROM `directions_deg` (uniform)."""
    f = np.asarray(frequency_hz, float)
    total = np.zeros((f.size, len(directions_deg)))
    span = scenario.past_hours + scenario.future_hours
    frac = (hours_from_now + scenario.past_hours) / span
    for sw in scenario.swells:
        hs = float(sw.hs_at(hours_from_now))
        if hs <= 0.0:
            continue
        fc = float(sw.frequency_at(hours_from_now))
        band = np.exp(-0.5 * ((f - fc) / sw.band_hz) ** 2) / (sw.band_hz * math.sqrt(2 * math.pi))
        mean_dir = sw.dir_start_deg + (sw.dir_end_deg - sw.dir_start_deg) * frac
        spread = cos2s(directions_deg, mean_dir_deg=mean_dir, s=sw.spreading_s)
        total += (hs / 4.0) ** 2 * band[:, None] * spread[None, :]
    ws = scenario.wind_sea
    if ws is not None:
        s_f = jonswap(f, hs=float(ws.hs_at(hours_from_now)), tp=ws.tp_s, gamma=ws.gamma)
        total += s_f[:, None] * cos2s(directions_deg, mean_dir_deg=ws.dir_deg, s=ws.spreading_s)[None, :]
    return total


def directional_moments(e, directions_deg):
    """Per-frequency density and buoy-style coefficients from E(f, θ) by direct integration.

    With A the nautical FROM direction and D = E/S: c_n = ∫ D e^{inA} dA; r1 = |c1|, α1 = arg c1,
    r2 = |c2|, α2 = ½ arg c2 taken on the side (±180°) nearer α1, as the agency does
    (docs/formats.md §1.6). In this frame the buoy's D(A) = (1/π)(½ + r1 cos(A-α1) + r2 cos 2(A-α2)).
    Returns (density, r1, r2, alpha1_deg, alpha2_deg); coefficients NaN where the band is empty.
    """
    e = np.asarray(e, float)
    a = np.radians(np.asarray(directions_deg, float))
    step = 2.0 * math.pi / a.size
    density = e.sum(axis=1) * step
    with np.errstate(invalid="ignore", divide="ignore"):
        c1 = (e * np.exp(1j * a)).sum(axis=1) * step / density
        c2 = (e * np.exp(2j * a)).sum(axis=1) * step / density
    r1 = np.clip(np.abs(c1), 0.0, 1.0)
    r2 = np.clip(np.abs(c2), 0.0, 1.0)
    alpha1 = np.mod(np.degrees(np.angle(c1)), 360.0)
    alpha2 = np.mod(0.5 * np.degrees(np.angle(c2)), 360.0)
    flip = np.abs((alpha2 - alpha1 + 180.0) % 360.0 - 180.0) > 90.0
    alpha2 = np.mod(np.where(flip, alpha2 + 180.0, alpha2), 360.0)
    empty = ~(density >= _MIN_DENSITY)
    for arr in (r1, r2, alpha1, alpha2):
        arr[empty] = np.nan
    return density, r1, r2, alpha1, alpha2


# ---------------------------------------------------------------- records

def _utc(now: datetime) -> datetime:
    if not isinstance(now, datetime) or now.tzinfo is None:
        raise ValueError(f"`now` must be a timezone-aware datetime, got {now!r}")
    return now.astimezone(UTC)


def observation_times(scenario: Scenario) -> list[datetime]:
    """Hourly buoy stamps (minute `obs_minute`) from `past_hours` before `now` up to `now`."""
    now = _utc(scenario.now)
    last = now.replace(minute=scenario.obs_minute, second=0, microsecond=0)
    if last > now:
        last -= timedelta(hours=1)
    return [last - timedelta(hours=k) for k in range(scenario.past_hours, -1, -1)]


def issue_time(scenario: Scenario) -> datetime:
    """The latest model cycle at or before `now` (multiples of `cycle_hours` UTC)."""
    now = _utc(scenario.now)
    base = now.replace(minute=0, second=0, microsecond=0)
    return base - timedelta(hours=base.hour % scenario.cycle_hours)


def _hours(t: datetime, now: datetime) -> float:
    return (t - now).total_seconds() / 3600.0


def observation_records(scenario: Scenario) -> list[SpectrumRecord]:
    """Buoy records (density + r1, r2, α1, α2 on the 47-band grid), oldest first.

    Band densities carry multiplicative sampling noise (lognormal, `scenario.noise`), seeded by the
    record time so the same stamp always gets the same values; the coefficients are exact.
    """
    now = _utc(scenario.now)
    out = []
    for t in observation_times(scenario):
        h = _hours(t, now)
        e = efth(scenario, h, NDBC_FREQUENCIES_HZ, _FINE_DIRECTIONS_DEG)
        density, r1, r2, a1, a2 = directional_moments(e, _FINE_DIRECTIONS_DEG)
        if scenario.noise > 0:
            rng = np.random.default_rng([scenario.seed, int(t.timestamp())])
            density = density * np.exp(scenario.noise * rng.standard_normal(density.size) - 0.5 * scenario.noise**2)
        sep = None
        if scenario.wind_sea is not None:
            sep = round(0.75 / scenario.wind_sea.tp_s, 3)  # a rough swell / wind-sea split, like the agency's
        out.append(SpectrumRecord(
            station=STATION_ID, time=t, frequency=NDBC_FREQUENCIES_HZ, density=density,
            r1=r1, r2=r2, alpha1_deg=a1, alpha2_deg=a2, separation_frequency=sep,
        ))
    return out


def forecast_records(scenario: Scenario, *, step_hours: int = 1) -> list[SpectrumRecord]:
    """Model records E(f, θ) from the cycle at or before `now` to `future_hours` ahead, oldest first."""
    now = _utc(scenario.now)
    issued = issue_time(scenario)
    end = now + timedelta(hours=scenario.future_hours)
    out = []
    t = issued
    while t <= end:
        e = efth(scenario, _hours(t, now), MODEL_FREQUENCIES_HZ, MODEL_DIRECTIONS_DEG)
        density = e.sum(axis=1) * math.radians(5.0)
        out.append(SpectrumRecord(
            station=MODEL_ID, time=t, issue_time=issued, frequency=MODEL_FREQUENCIES_HZ, density=density,
            directions_deg=MODEL_DIRECTIONS_DEG, efth=e,
        ))
        t += timedelta(hours=step_hours)
    return out


# ---------------------------------------------------------------- wind and water level

def sea_breeze(t: datetime) -> tuple[float, float]:
    """(speed m/s, FROM direction deg) of the demo's wind at `t`: a land breeze from the east by night,
    veering through the south about midday to a west-north-west sea breeze in the afternoon."""
    local_h = ((t - datetime(1970, 1, 1, tzinfo=UTC)).total_seconds() / 3600.0 + LOCAL_SOLAR_OFFSET_H) % 24.0
    # the sea breeze's share of the day: 0 at night, 1 about 15:00 local (a smooth bump 10:00-21:00)
    sea = math.exp(-(((local_h - 15.0) / 3.2) ** 2))
    speed = 2.5 + 5.0 * sea
    direction = (90.0 + 195.0 * min(1.0, sea * 1.6)) % 360.0  # E -> S -> WNW (285°) as it sets in
    return round(speed, 1), round(direction)


def shore_levels(times: list[datetime]) -> np.ndarray:
    """The shore station's water level [m above mean sea level]: the tide table plus the surge."""
    from app.demo.coast import DEMO_TIDE
    from models.tide import Constituent, predict

    return predict(times, [Constituent(*c) for c in DEMO_TIDE]) + SURGE_M


def shore_met_text(scenario: Scenario) -> str:
    """The shore station's standard met text file (realtime layout, newest row first): WDIR/WSPD and
    TIDE in feet above mean sea level, the rest missing (MM)."""
    last = _utc(scenario.now).replace(minute=0, second=0, microsecond=0)  # hourly, on the hour, up to now
    times = [last - timedelta(hours=k) for k in range(scenario.past_hours, -1, -1)]
    levels = shore_levels(times) / 0.3048
    rows = ["#YY  MM DD hh mm WDIR WSPD GST  WVHT   DPD   APD MWD   PRES  ATMP  WTMP  DEWP  VIS PTDY  TIDE",
            "#yr  mo dy hr mn degT m/s  m/s     m   sec   sec degT   hPa  degC  degC  degC  nmi  hPa    ft"]
    for t, ft in sorted(zip(times, levels, strict=True), reverse=True):
        speed, direction = sea_breeze(t)
        rows.append(f"{t:%Y %m %d %H %M} {direction:4.0f} {speed:4.1f}   MM    MM    MM    MM  MM     MM    MM    MM"
                    f"    MM   MM   MM {ft:+5.2f}")
    return "\n".join(rows) + "\n"


def write_wind_forecast(path: Path, scenario: Scenario) -> int:
    """The wind forecast as CF NetCDF (NetCDF3: `wind_speed`, `wind_from_direction`, one station)."""
    from scipy.io import netcdf_file

    issued = issue_time(scenario)
    end = _utc(scenario.now) + timedelta(hours=scenario.future_hours)
    times = []
    t = issued
    while t <= end:
        times.append(t)
        t += timedelta(hours=1)
    wind = [sea_breeze(t) for t in times]
    epoch = datetime(1970, 1, 1, tzinfo=UTC)
    with netcdf_file(str(path), "w", version=2) as f:
        f.title = b"Skellmarrow coast wind forecast (synthetic demo data)"
        f.station_id = WIND_ID.encode()
        f.createDimension("time", len(times))
        v = f.createVariable("time", "f8", ("time",))
        v[:] = [(x - epoch).total_seconds() for x in times]
        v.units, v.standard_name, v.calendar = b"seconds since 1970-01-01 00:00:00Z", b"time", b"standard"
        v = f.createVariable("forecast_reference_time", "f8", ())
        v[()] = (issued - epoch).total_seconds()
        v.units, v.standard_name = b"seconds since 1970-01-01 00:00:00Z", b"forecast_reference_time"
        v = f.createVariable("wind_speed", "f8", ("time",))
        v[:] = [w[0] for w in wind]
        v.units, v.standard_name = b"m s-1", b"wind_speed"
        v = f.createVariable("wind_from_direction", "f8", ("time",))
        v[:] = [w[1] for w in wind]
        v.units, v.standard_name = b"degree", b"wind_from_direction"
    return len(times)


# ---------------------------------------------------------------- files

@dataclass(frozen=True)
class FeedFiles:
    directory: Path
    realtime: dict[str, Path]  # suffix -> path
    forecast: Path | None  # None while the CF writer is not available
    issue_time: datetime
    observations: int
    forecast_steps: int


def _write_text(path: Path, text: str) -> None:
    """Atomic replace, so a poll never sees half a file; untouched when the bytes are equal
    (keeps ETag/Last-Modified stable for conditional GET)."""
    data = text.encode()
    if path.exists() and path.read_bytes() == data:
        return
    fd, tmp = tempfile.mkstemp(dir=path.parent, prefix=f".{path.name}.")
    with os.fdopen(fd, "wb") as fh:
        fh.write(data)
    os.chmod(tmp, 0o644)
    os.replace(tmp, path)


def _same_cf_content(a: Path, b: Path) -> bool:
    """Same records in both files? (The CF writer stamps `history` with the clock, so bytes differ.)"""
    from app.formats.cf_spectra import read_cf_spectra

    try:
        ra, rb = read_cf_spectra(a), read_cf_spectra(b)
    except (OSError, ValueError):  # an unreadable old file is simply replaced
        return False
    return [r.content_hash() for r in ra.records] == [r.content_hash() for r in rb.records]


def write_feed(directory: str | os.PathLike, *, now: datetime, scenario: Scenario | None = None) -> FeedFiles:
    """Write the station's real-time text set and the model's CF forecast into `directory`.

    File names: ``demo-offshore-1.data_spec`` (and ``.swdir .swdir2 .swr1 .swr2``) and
    ``demo-model-1.nc``. Deterministic in `now`; pass `now` rounded (e.g. to the hour) so a rerun
    within that hour rewrites nothing.
    """
    scenario = scenario or default_scenario(now)
    out = Path(directory)
    out.mkdir(parents=True, exist_ok=True)
    obs = observation_records(scenario)
    from app.formats.ndbc_realtime import write_realtime_set

    realtime = {}
    for suffix, text in write_realtime_set(obs).items():
        path = out / f"{STATION_ID}.{suffix}"
        _write_text(path, text)
        realtime[suffix] = path
    fc = forecast_records(scenario)
    forecast_path = None
    try:
        from app.formats.cf_spectra import write_cf_spectra
    except ImportError:  # the CF writer lands separately; the text feed works without it
        write_cf_spectra = None
    if write_cf_spectra is not None:
        forecast_path = out / f"{MODEL_ID}.nc"
        with tempfile.TemporaryDirectory(dir=out) as tmp:
            tmp_path = Path(tmp) / forecast_path.name
            write_cf_spectra(tmp_path, fc, title="Skellmarrow offshore model forecast (synthetic demo data)",
                             positions={MODEL_ID: (STATION_LATITUDE, STATION_LONGITUDE)},
                             comment="Invented data for the shoalcast demo; not a real forecast.")
            if not (forecast_path.exists() and _same_cf_content(forecast_path, tmp_path)):
                os.chmod(tmp_path, 0o644)
                os.replace(tmp_path, forecast_path)
    _write_text(out / f"{SHORE_ID}.txt", shore_met_text(scenario))
    wind_path = out / f"{WIND_ID}.nc"
    with tempfile.TemporaryDirectory(dir=out) as tmp:
        tmp_path = Path(tmp) / wind_path.name
        write_wind_forecast(tmp_path, scenario)
        if not (wind_path.exists() and wind_path.read_bytes() == tmp_path.read_bytes()):
            os.chmod(tmp_path, 0o644)
            os.replace(tmp_path, wind_path)
    return FeedFiles(directory=out, realtime=realtime, forecast=forecast_path, issue_time=issue_time(scenario),
                     observations=len(obs), forecast_steps=len(fc))


def write_source_profiles(directory: str | os.PathLike, *, base_url: str, poll_minutes: float = 5.0) -> list[Path]:
    """Source TOMLs (docs/formats.md §7, README "Add a source") for the station and the model, pointing at `base_url`
    (e.g. ``http://127.0.0.1:8765``, where app.demo.server serves the feed directory)."""
    out = Path(directory)
    out.mkdir(parents=True, exist_ok=True)
    base = base_url.rstrip("/")
    suffixes = ("data_spec", "swdir", "swdir2", "swr1", "swr2")
    station_urls = ", ".join(f'"{base}/{STATION_ID}.{s}"' for s in suffixes)
    station = "\n".join([
        "# Synthetic offshore buoy for the fictional demo coast (invented; nominal open-ocean position).",
        f'id = "{STATION_ID}"',
        'name = "Skellmarrow offshore buoy (synthetic)"',
        'format = "spectral-text-realtime"',
        f"latitude = {STATION_LATITUDE:.3f}",
        f"longitude = {STATION_LONGITUDE:.3f}",
        f"depth_m = {STATION_DEPTH_M:.1f}",
        f"urls = [{station_urls}]",
        f"poll_minutes = {poll_minutes:g}",
        "",
    ])
    model = "\n".join([
        "# Synthetic wave-model forecast at the buoy position (invented).",
        f'id = "{MODEL_ID}"',
        'name = "Skellmarrow offshore model forecast (synthetic)"',
        'format = "cf-netcdf"',
        f"latitude = {STATION_LATITUDE:.3f}",
        f"longitude = {STATION_LONGITUDE:.3f}",
        f"depth_m = {STATION_DEPTH_M:.1f}",
        f'urls = ["{base}/{MODEL_ID}.nc"]',
        f"poll_minutes = {poll_minutes:g}",
        "",
    ])
    shore = "\n".join([
        "# Synthetic shore met station on the demo coast: wind and water level (TIDE in feet above mean sea level).",
        f'id = "{SHORE_ID}"',
        'name = "Skellmarrow shore station (synthetic)"',
        'format = "met-text"',
        f"latitude = {SHORE_LATITUDE:.3f}",
        f"longitude = {SHORE_LONGITUDE:.3f}",
        f'urls = ["{base}/{SHORE_ID}.txt"]',
        f"poll_minutes = {poll_minutes:g}",
        "water_level_datum_m = 0.0  # its TIDE zero is mean sea level, the demo grids' datum",
        "",
    ])
    wind = "\n".join([
        "# Synthetic wind forecast for the demo coast (invented).",
        f'id = "{WIND_ID}"',
        'name = "Skellmarrow coast wind forecast (synthetic)"',
        'format = "cf-netcdf"',
        f"latitude = {SHORE_LATITUDE:.3f}",
        f"longitude = {SHORE_LONGITUDE:.3f}",
        f'urls = ["{base}/{WIND_ID}.nc"]',
        f"poll_minutes = {poll_minutes:g}",
        "",
    ])
    paths = [out / f"{STATION_ID}.toml", out / f"{MODEL_ID}.toml", out / f"{SHORE_ID}.toml", out / f"{WIND_ID}.toml"]
    for path, text in zip(paths, (station, model, shore, wind), strict=True):
        _write_text(path, text)
    return paths
