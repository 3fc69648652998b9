"""Which offshore spectra an outlook uses, and the spot's break points with their contours.

Each of the spot's sources: model forecast spectra (with an issue time) from the latest issue are
used directly ("model-forecast"). Observations from a station are carried to the spot by each
component's signed deep-water group delay (`models.propagation.shift_to_spot`; a component that passes
the spot before the station is read from the station's later observation), a short-range forecast
("arrival-forecast"; "observed" when the station is at the spot). Where several inputs cover a
time, observed > arrival-forecast > model-forecast. Buoy coefficients become E(f, θ) on 5° bins by
`models.directional.estimate_directional` (docs/directional.md): each printed coefficient read as an
interval of ± half its resolution, inconsistent sets moved into the admissible region, a cos-2s
fitted to the moments where one peak fits the data (a narrow swell stays narrow, so sheltering by a
headland or an island is not smeared into the open part of the window) and maximum entropy (Lygre
& Krogstad 1986) only where the data show two peaks. Each step names its estimate
(`directional_estimate`); projected and interpolated bands are summed up in the notes.
"""

from __future__ import annotations

import hashlib
import json
import math
from collections.abc import Sequence
from dataclasses import dataclass, replace
from datetime import UTC, datetime, timedelta
from typing import Any

import numpy as np
from numpy.typing import NDArray
from sqlalchemy import select
from sqlalchemy.orm import Session

from app.db.tables import Observation, Source, Spot
from app.errors import BadInput, Conflict
from app.services.tables import load_table
from models.directional import DirectionalEstimate, estimate_directional
from models.hazard import HazardPolicy
from models.offshore import OffshoreBatch, prepare_offshore
from models.propagation import great_circle_distance, initial_bearing, shift_to_spot
from models.surf import PointSetup

COEFFICIENT_DIRECTIONS_DEG = np.arange(0.0, 360.0, 5.0)
GIVEN_ESTIMATE = "given"  # the source's own E(f, θ)
MIN_SLOPE = 0.005  # a flat bottom at a break point uses this slope (Weggel's fit needs m > 0)
# An arrival step is used only when its spectrum is (nearly) whole: at least this share of the latest
# observation's arriving energy lies in components whose emission time is inside the observed span.
# A partial spectrum (e.g. the fast long-period part not yet observed) would read as a real drop in
# the surf, so such hours fall back to the model forecast (or are left out) and a note says so.
ARRIVAL_MIN_ENERGY_COVERAGE = 0.9
OBSERVED_DISTANCE_M = 1000.0  # a station closer than this to the spot observes the spot itself
OBSERVATION_LOOKBACK_H = 48.0
PRIORITY = {"observed": 0, "arrival-forecast": 1, "model-forecast": 2}
MAX_HOURS = 24 * 16

WaterLevel = float | Sequence[tuple[datetime, float]]


# --------------------------------------------------------------------------- options at the edge


def floor_hour(t: datetime) -> datetime:
    return t.astimezone(UTC).replace(minute=0, second=0, microsecond=0)


def aware(t: datetime, what: str) -> datetime:
    """`t` in UTC; BadInput naming `what` when it has no timezone."""
    if t.tzinfo is None or t.utcoffset() is None:
        raise BadInput(f"`{what}` must be timezone-aware (UTC), got {t.isoformat()}", field=what)
    return t.astimezone(UTC)


def check_options(hours: int, units: str) -> None:
    if not (isinstance(hours, int) and 1 <= hours <= MAX_HOURS):
        raise BadInput(f"`hours` must be a whole number of hours within 1..{MAX_HOURS}, got {hours!r}", field="hours")
    if units not in ("metric", "imperial"):
        raise BadInput(f"`units` must be 'metric' or 'imperial', got {units!r}", field="units")


def water_level_at(water_level: WaterLevel, times: Sequence[datetime]) -> NDArray[np.float64]:
    """The water level [m] at `times`: a constant, or linear between (time, level) pairs."""
    if isinstance(water_level, int | float):
        out = np.full(len(times), float(water_level))
    else:
        pts = sorted((aware(t, "water_level time").timestamp(), float(v)) for t, v in water_level)
        if not pts:
            return np.zeros(len(times))
        ts, vs = np.array([p[0] for p in pts]), np.array([p[1] for p in pts])
        out = np.interp([t.timestamp() for t in times], ts, vs)
    if not np.all(np.isfinite(out)):
        raise BadInput("`water_level_m` must be finite", field="water_level_m")
    return out


def water_key(water_level: WaterLevel | None) -> Any:
    """The water level as JSON (part of cache keys); None = from the tide profile and sources."""
    if water_level is None:
        return None
    if isinstance(water_level, int | float):
        return float(water_level)
    return [[aware(t, "water_level time").isoformat(), float(v)] for t, v in water_level]


@dataclass(frozen=True)
class OutlookOptions:
    """What an outlook is asked for, checked once: the one place its options are named, keyed and
    hashed (`compute_outlook`, `outlook_key` and `get_outlook` take it, or its fields as keywords).

    `start`: the first hour (None: the current hour), in UTC; `water_level_m`: one level for every
    step, or (time, level) pairs, instead of the spot's tide profile and observed levels."""

    hours: int = 72
    start: datetime | None = None
    units: str = "metric"
    agency_id: str | None = None
    water_level_m: float | tuple[tuple[datetime, float], ...] | None = None

    def __post_init__(self) -> None:
        check_options(self.hours, self.units)
        if self.start is not None:
            object.__setattr__(self, "start", aware(self.start, "start"))
        wl = self.water_level_m
        if isinstance(wl, int | float):
            object.__setattr__(self, "water_level_m", float(wl))
        elif wl is not None:  # pairs, as a tuple so the options hash
            object.__setattr__(self, "water_level_m", tuple((aware(t, "water_level time"), float(v)) for t, v in wl))

    @classmethod
    def of(cls, options: OutlookOptions | None = None, **fields: Any) -> OutlookOptions:
        """`options`, or options from keywords (hours=..., start=...), or `options` with some replaced."""
        if options is None:
            return cls(**fields)
        return replace(options, **fields) if fields else options

    def first_hour(self, now: datetime) -> datetime:
        """The outlook's first step: `start`, or the hour `now` is in."""
        return floor_hour(now) if self.start is None else self.start

    def key(self, first_hour: datetime | None = None) -> list[Any]:
        """The options as JSON, in the order the cache keys hash them: [hours, start, units,
        agency_id, water level]; with `first_hour` in place of a start of None (the outlook's key)."""
        t = first_hour if self.start is None else self.start
        return [self.hours, None if t is None else t.isoformat(), self.units, self.agency_id, water_key(self.water_level_m)]

    def variant(self) -> str:
        """The options part of a cached outlook's identity (one stored row per spot and variant)."""
        return hashlib.sha256(json.dumps(self.key()).encode()).hexdigest()[:40]


def policy_of(session: Session, agency_id: str | None, spot_id: str) -> HazardPolicy:
    """The hazard policy an outlook uses (NotFound for an unknown agency)."""
    from app.services.agencies import get_agency, policy_for

    if agency_id is not None:
        get_agency(session, agency_id)
    return policy_for(session, agency_id, spot_id)


# --------------------------------------------------------------------------- break points


def spot_points(spot: Spot, notes: list[str] | None = None) -> list[PointSetup]:
    """Break points with a table, in order along the break, with the local contours at each."""
    from app.services.spots import depth_grid_of

    notes = notes if notes is not None else []
    grid = depth_grid_of(spot)
    use_zone = bool((spot.profile or {}).get("model", {}).get("surf_zone", True))
    smoothed: dict[float, Any] = {}
    out = []
    for bp in spot.break_points:
        if bp.table is None:
            notes.append(
                f"break point {bp.name!r} has no transfer table (run `shoalcast tables build {spot.id}`)"
            )
            continue
        table = load_table(bp.table)
        sm = float(table.meta.get("smoothing_m", 0.0) or 0.0)
        if sm not in smoothed:  # the contours the rays saw
            smoothed[sm] = grid.smoothed(sm) if sm > 0 else grid
        geo = smoothed[sm].contour_geometry(bp.x, bp.y)
        slope, normal = float(geo.slope), float(geo.normal_deg)
        if not (math.isfinite(slope) and slope >= MIN_SLOPE and math.isfinite(normal)):
            notes.append(
                f"break point {bp.name!r}: bottom nearly flat; slope {MIN_SLOPE} and the spot's facing used"
            )
            slope, normal = max(slope if math.isfinite(slope) else 0.0, MIN_SLOPE), float(spot.faces_deg)
        depth = float(geo.depth) if math.isfinite(float(geo.depth)) else float(bp.depth_m)
        out.append(PointSetup(bp.name, float(bp.x), float(bp.y), table, depth, slope, normal % 360.0, use_zone))
    if not out:
        raise Conflict(
            f"spot {spot.id!r} has no transfer tables yet: build them with `shoalcast tables build {spot.id}` "
            f"or POST /v1/spots/{spot.id}/tables"
        )
    return out


# --------------------------------------------------------------------------- offshore spectra


@dataclass(frozen=True)
class Candidate:
    """An observation row an outlook may use (no arrays)."""

    id: int
    sha: str
    source_id: str
    time: datetime
    issue_time: datetime | None


def candidates(session: Session, spot: Spot, start: datetime, end: datetime) -> list[Candidate]:
    """Observation rows an outlook over [start, end] may use (ids and hashes only, no arrays):
    every observation of the lookback and horizon, and each source's latest forecast issue."""
    if not spot.sources:
        return []
    lookback = start - timedelta(hours=OBSERVATION_LOOKBACK_H)
    cols = (
        Observation.id,
        Observation.content_sha256,
        Observation.source_id,
        Observation.time,
        Observation.issue_time,
    )
    rows = [
        Candidate(*r)
        for r in session.execute(
            select(*cols).where(
                Observation.source_id.in_(spot.sources),
                Observation.kind == "spectrum",
                Observation.time >= lookback,
                Observation.time <= end,
            )
        )
    ]
    latest: dict[str, datetime] = {}
    for r in rows:
        if r.issue_time is not None and (r.source_id not in latest or r.issue_time > latest[r.source_id]):
            latest[r.source_id] = r.issue_time
    keep = [
        r
        for r in rows
        if (r.issue_time is None) or (r.issue_time == latest[r.source_id] and start <= r.time <= end)
    ]
    return sorted(keep, key=lambda r: (r.source_id, r.issue_time is not None, r.time, r.id))


def estimate_of(
    rec: Any,
) -> tuple[NDArray[np.float64], NDArray[np.float64], str, DirectionalEstimate | None] | None:
    """(directions, efth, estimate label, estimate) of a record: its own E(f, θ) ("given"), else the
    directional estimate from its buoy coefficients; None when it has neither."""
    if rec.efth is not None and rec.directions_deg is not None:
        d = np.asarray(rec.directions_deg, dtype=float)
        return d, np.clip(np.asarray(rec.efth, dtype=float), 0.0, None), GIVEN_ESTIMATE, None
    if rec.r1 is None:
        return None
    d = COEFFICIENT_DIRECTIONS_DEG
    est = estimate_directional(
        rec.frequency, d, r1=rec.r1, r2=rec.r2, alpha1_deg=rec.alpha1_deg, alpha2_deg=rec.alpha2_deg
    )
    e = np.asarray(rec.density, dtype=float)[:, None] * est.D
    return d, e, est.label, est


def efth_of(rec: Any) -> tuple[NDArray[np.float64], NDArray[np.float64]] | None:
    """(directions, efth) of a record (see `estimate_of`)."""
    got = estimate_of(rec)
    return None if got is None else (got[0], got[1])


Record = tuple[Any, NDArray[np.float64], NDArray[np.float64], str]  # (record, directions, efth, estimate)


class _EstimateTally:
    """Per source: which directional estimates were used and how many bands were repaired."""

    def __init__(self) -> None:
        self.labels: dict[str, int] = {}
        self.projected = self.within = self.interpolated = self.spectra_interp = 0

    def add(self, label: str, est: DirectionalEstimate | None) -> None:
        if est is None:
            return
        self.labels[label] = self.labels.get(label, 0) + 1
        self.projected += int(est.projected.sum())
        self.within += int((est.projected & est.within_resolution).sum())
        n = int(est.interpolated.sum())
        self.interpolated += n
        self.spectra_interp += int(n > 0)

    def notes(self, source_id: str) -> list[str]:
        if not self.labels:
            return []
        used = ", ".join(f"{k} in {v} spectra" for k, v in self.labels.items())
        out = [f"source {source_id!r}: directional estimate from buoy coefficients (docs/directional.md): {used}"]
        if self.projected:
            out.append(
                f"source {source_id!r}: {self.projected} band(s) with coefficients no distribution has "
                f"(r2 < 2·r1² − 1 and the like) moved to the nearest admissible set, {self.within} of them "
                "within the printed resolution (± half the last digit)"
            )
        if self.interpolated:
            out.append(
                f"source {source_id!r}: {self.interpolated} band(s) with missing coefficients in "
                f"{self.spectra_interp} spectra interpolated from the neighbouring bands"
            )
        return out


def records(session: Session, ids: Sequence[int], notes: list[str], source_id: str | None = None) -> list[Record]:
    """The stored spectra `ids` in time order; one that cannot be read is left out with a note.
    With `source_id`, a note sums up the directional estimates used."""
    from app.ingest.store import record_from_observation

    out = []
    tally = _EstimateTally()
    for obs in session.scalars(
        select(Observation).where(Observation.id.in_(list(ids))).order_by(Observation.time)
    ):
        try:
            rec = record_from_observation(obs)
            de = estimate_of(rec)
        except (ValueError, BadInput) as exc:
            notes.append(f"observation {obs.id} ({obs.source_id} {obs.time.isoformat()}) left out: {exc}")
            continue
        if de is None:
            notes.append(
                f"observation {obs.id} ({obs.source_id} {obs.time.isoformat()}) has no directions: left out"
            )
            continue
        tally.add(de[2], de[3])
        out.append((rec, de[0], de[1], de[2]))
    if source_id is not None:
        notes.extend(tally.notes(source_id))
    return out


def one_grid(recs: list[Record], source_id: str, notes: list[str]) -> list[Record]:
    """Keep the records on the grid of the latest one (a batch needs one (f, θ) grid)."""
    if not recs:
        return recs
    ref = recs[-1]
    same = [r for r in recs if r[0].frequency.shape == ref[0].frequency.shape and r[1].shape == ref[1].shape
            and np.allclose(r[0].frequency, ref[0].frequency) and np.allclose(r[1], ref[1])]  # fmt: skip
    if len(same) < len(recs):
        notes.append(
            f"source {source_id!r}: {len(recs) - len(same)} spectra on another frequency/direction grid left out"
        )
    return same


def batches(
    session: Session, spot: Spot, cands: list[Candidate], start: datetime, end: datetime, notes: list[str]
) -> list[OffshoreBatch]:
    """The partitioned offshore inputs of each source: its latest forecast issue, and its
    observations (at the spot, or carried to it as an arrival forecast)."""
    out = []
    for source_id in dict.fromkeys(c.source_id for c in cands):
        src = session.get(Source, source_id)
        mine = [c for c in cands if c.source_id == source_id]
        fc_ids = [c.id for c in mine if c.issue_time is not None]
        fc = one_grid(records(session, fc_ids, notes, source_id), source_id, notes)
        if fc:
            out.append(
                prepare_offshore(
                    [r[0].time for r in fc], fc[0][0].frequency, fc[0][1], np.stack([r[2] for r in fc]),
                    source=source_id, kind="model-forecast", issued=fc[0][0].issue_time,
                    estimate=[r[3] for r in fc],
                )  # fmt: skip
            )
        ob_ids = [c.id for c in mine if c.issue_time is None]
        ob = one_grid(records(session, ob_ids, notes, source_id), source_id, notes)
        if not ob or src is None:
            continue
        times = [r[0].time for r in ob]
        f, d, e = ob[0][0].frequency, ob[0][1], np.stack([r[2] for r in ob])
        dist = float(great_circle_distance(src.latitude, src.longitude, spot.latitude, spot.longitude))
        if dist < OBSERVED_DISTANCE_M:
            idx = [i for i, t in enumerate(times) if start <= t <= end]
            if idx:
                out.append(prepare_offshore([times[i] for i in idx], f, d, e[idx], source=source_id, kind="observed",
                                            observed_at=[times[i] for i in idx],
                                            estimate=[ob[i][3] for i in idx]))  # fmt: skip
            continue
        bearing = float(initial_bearing(src.latitude, src.longitude, spot.latitude, spot.longitude))
        n = int((end - start).total_seconds() // 3600) + 1
        targets = [start + timedelta(hours=h) for h in range(n)]
        arr = shift_to_spot(times, f, d, e, distance_m=dist, bearing_deg=bearing, target_times=targets)
        whole = arr.energy_coverage >= ARRIVAL_MIN_ENERGY_COVERAGE
        keep = [k for k in range(n) if whole[k] and arr.efth[k].max() > 0]
        partial = int(np.sum(~whole & (arr.energy_coverage > 0)))
        if partial:
            waiting = int(np.sum(~whole & (arr.energy_coverage > 0) & arr.awaiting))
            notes.append(
                f"source {source_id!r}: {partial} arrival hour(s) left out, under "
                f"{ARRIVAL_MIN_ENERGY_COVERAGE:.0%} of the latest observation's energy observed "
                "(the model forecast is used there when there is one)"
                + (f"; {waiting} of them need observations not yet made" if waiting else "")
            )
        if keep:
            out.append(
                prepare_offshore(
                    [targets[k] for k in keep], f, d, arr.efth[keep], source=source_id, kind="arrival-forecast",
                    observed_at=[times[int(arr.dominant_observation[k])] for k in keep],
                    coverage=[float(arr.energy_coverage[k]) for k in keep],
                    estimate=[ob[int(arr.dominant_observation[k])][3] for k in keep],
                )  # fmt: skip
            )
    return out


def select_inputs(found: list[OffshoreBatch]) -> list[OffshoreBatch]:
    """One input per time: observed > arrival-forecast > model-forecast (then the first source)."""
    best: dict[datetime, tuple[int, int, int]] = {}
    for b, batch in enumerate(found):
        for j, t in enumerate(batch.times):
            cand = (PRIORITY[batch.kind], b, j)
            if t not in best or cand < best[t]:
                best[t] = cand
    picks: dict[int, list[int]] = {}
    for _, b, j in sorted(best.values(), key=lambda c: (c[1], c[2])):
        picks.setdefault(b, []).append(j)
    return [found[b].subset(js) for b, js in sorted(picks.items())]


__all__ = [
    "Candidate", "OutlookOptions", "WaterLevel", "aware", "batches", "candidates", "check_options", "efth_of", "estimate_of", "floor_hour",
    "one_grid", "policy_of", "records", "select_inputs", "spot_points", "water_key", "water_level_at",
]  # fmt: skip
