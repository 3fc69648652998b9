"""Verification of a spot's outlook against what the water did: hindcast pairs, scores, calibration.

**Hindcast without look-ahead.** For each observation at time t the outlook's step at the nearest
hour is recomputed from the inputs as they were stored and known at t: rows ingested at or before
t (`Observation.ingested_at`, set by `app.ingest.store` when a record is stored or corrected),
forecasts issued at or before t (the latest such issue, as `outlook_inputs.candidates` picks it
now), and station observations measured at or before t (carried to the spot as an arrival
forecast). Nothing that came later is used, so an ingest after t never changes t's pair. Each pair
reports the input it used (source, kind, issue time, observation it came from).

**What is compared.** Observed breaker heights (a log, a camera) against the raw, uncalibrated
typical breaker height (Hm0 at breaking) of the step, at the point the observation names, else at
the point where the sets are largest (as the outlook shows). Visual estimates of wave height track
the significant wave height (Sverdrup & Munk 1947, U.S. Hydrographic Office Pub. 601; Hm0 ≈ H1/3 in
deep water), hence "typical". A nearshore spectral station inside the spot's grid is compared by its
own Hm0 = 4√m0 against the offshore inputs carried to its position by a transfer table built on
demand for that point (no breaking: the station measures unbroken waves).

Scores and the calibration factor: `models.verification`.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass
from datetime import UTC, datetime, timedelta
from functools import lru_cache
from typing import Any

import numpy as np
from sqlalchemy import and_, or_, select
from sqlalchemy.orm import Session

from app.cautions import GENERAL as CAUTIONS
from app.db.tables import Observation, Source, Spot, Verification
from app.errors import BadInput, NotFound
from app.formats.height_csv import HeightObservation, HeightParse, parse_height_csv
from app.formats.records import hm0 as record_hm0
from app.services import outlook_inputs as inputs
from app.services.outlook_inputs import Candidate
from models import verification as mv
from models.geodesy import to_local
from models.nearshore import nearshore_many
from models.offshore import OffshoreBatch
from models.surf import PointSetup, compute_spots
from models.transfer import TransferTable, build_table

__all__ = [
    "HEIGHT_CLASSES",
    "MAX_OBSERVATIONS",
    "Pair",
    "hindcast_input",
    "known_candidates",
    "latest_verification",
    "run_verification",
    "station_table",
    "store_verification",
    "verify_csv",
    "verify_station",
]

HEIGHT_CLASSES = {"typical": 0, "sets": 1, "largest": 2}
MAX_OBSERVATIONS = 5000  # per run: each one is a hindcast
PAIR_TOLERANCE = timedelta(minutes=30)  # an observation is paired with the step at the nearest hour


@dataclass
class Pair:
    time: datetime
    observed_m: float
    forecast_m: float | None
    point: str | None = None
    observer: str | None = None
    line: int | None = None
    step_time: datetime | None = None
    input: str | None = None
    source: str | None = None
    issued: datetime | None = None
    observed_at: datetime | None = None
    offshore_direction_deg: float | None = None
    offshore_period_s: float | None = None
    note: str | None = None

    def as_dict(self) -> dict[str, Any]:
        def z(t: datetime | None) -> str | None:
            return None if t is None else t.astimezone(UTC).strftime("%Y-%m-%dT%H:%M:%SZ")

        def r(v: float | None, d: int = 3) -> float | None:
            return None if v is None or not math.isfinite(v) else round(float(v), d)

        return {
            "time": z(self.time), "observed_m": r(self.observed_m), "forecast_m": r(self.forecast_m),
            "point": self.point, "observer": self.observer, "line": self.line, "step_time": z(self.step_time),
            "input": self.input, "source": self.source, "issued": z(self.issued), "observed_at": z(self.observed_at),
            "known_at": z(self.time), "offshore_direction_deg": r(self.offshore_direction_deg, 1),
            "offshore_period_s": r(self.offshore_period_s, 2), "sector": mv.sector_of(self.offshore_direction_deg),
            "period_band": mv.period_band(self.offshore_period_s), "note": self.note,
        }  # fmt: skip


# --------------------------------------------------------------------------- inputs known at a time


def known_candidates(
    session: Session, spot: Spot, start: datetime, end: datetime, as_of: datetime, *, exclude: Sequence[str] = ()
) -> list[Candidate]:
    """`outlook_inputs.candidates` as it would have answered at `as_of`: only rows ingested by then,
    forecasts issued by then (the latest such issue) and observations measured by then."""
    sources = [s for s in (spot.sources or []) if s not in set(exclude)]
    if not sources:
        return []
    lookback = start - timedelta(hours=inputs.OBSERVATION_LOOKBACK_H)
    cols = (Observation.id, Observation.content_sha256, Observation.source_id, Observation.time,
            Observation.issue_time)  # fmt: skip
    rows = [
        Candidate(*r)
        for r in session.execute(
            select(*cols).where(
                Observation.source_id.in_(sources),
                Observation.kind == "spectrum",
                Observation.time >= lookback,
                Observation.time <= end,
                Observation.ingested_at <= as_of,
                or_(
                    and_(Observation.issue_time.is_(None), Observation.time <= as_of),
                    Observation.issue_time <= as_of,
                ),
            )
        )
    ]
    latest: dict[str, datetime] = {}
    for r in rows:
        if r.issue_time is not None and (r.source_id not in latest or r.issue_time > latest[r.source_id]):
            latest[r.source_id] = r.issue_time
    keep = [r for r in rows if r.issue_time is None or (r.issue_time == latest[r.source_id] and start <= r.time <= end)]
    return sorted(keep, key=lambda r: (r.source_id, r.issue_time is not None, r.time, r.id))


Memo = dict[tuple[Any, ...], Any]


def hindcast_input(
    session: Session, spot: Spot, t: datetime, *, exclude: Sequence[str] = (), memo: Memo | None = None,
) -> tuple[OffshoreBatch | None, list[str]]:
    """The one-step offshore input the outlook, computed at `t`, would have had for the step
    nearest `t` (within half an hour; on the hour for forecasts, at its own stamp for a station at
    the spot), from the inputs known at `t`. None when nothing was known. `memo` reuses the inputs
    for another observation that knew exactly the same rows."""
    notes: list[str] = []
    hour = _nearest_hour(t)
    start, end = hour - timedelta(hours=1), hour + timedelta(hours=1)
    cands = known_candidates(session, spot, start, end, t, exclude=exclude)
    key = (start, tuple((c.id, c.sha) for c in cands))
    if memo is not None and key in memo:
        chosen = memo[key]
    else:
        chosen = inputs.select_inputs(inputs.batches(session, spot, cands, start, end, notes))
        if memo is not None:
            memo[key] = chosen
    best: tuple[float, int, int, int] | None = None
    for b, batch in enumerate(chosen):
        for j, tt in enumerate(batch.times):
            gap = abs((tt - t).total_seconds())
            cand = (gap, inputs.PRIORITY[batch.kind], b, j)
            if gap <= PAIR_TOLERANCE.total_seconds() and (best is None or cand < best):
                best = cand
    if best is None:
        return None, notes
    return chosen[best[2]].subset([best[3]]), notes


def _describe(pair: Pair, batch: OffshoreBatch) -> None:
    pair.step_time = batch.times[0]
    pair.input, pair.source, pair.issued = batch.kind, batch.source, batch.issued
    pair.observed_at = batch.observed_at[0] if batch.observed_at else None
    pair.offshore_direction_deg = float(batch.peak_dir[0])
    pair.offshore_period_s = float(batch.tp[0])


def _nearest_hour(t: datetime) -> datetime:
    h = inputs.floor_hour(t)
    return h + timedelta(hours=1) if t - h > timedelta(minutes=30) else h


# --------------------------------------------------------------------------- observed breaker heights


def _window(obs: Sequence[HeightObservation], start: datetime | None, end: datetime | None) -> list[HeightObservation]:
    return [o for o in obs if (start is None or o.time >= start) and (end is None or o.time <= end)]


def csv_pairs(
    session: Session, spot: Spot, obs: Sequence[HeightObservation], *, height_class: str = "typical"
) -> list[Pair]:
    """One pair per observation (forecast None with a note when nothing was known in time)."""
    if height_class not in HEIGHT_CLASSES:
        raise BadInput(f"`height_class` must be one of {', '.join(HEIGHT_CLASSES)}", field="height_class")
    cls = HEIGHT_CLASSES[height_class]
    points: list[PointSetup] = inputs.spot_points(spot, [])
    index = {p.name: i for i, p in enumerate(points)}
    out = []
    memo: Memo = {}
    for o in obs:
        pair = Pair(o.time, o.height_m, None, o.point, o.observer, o.line)
        if o.point is not None and o.point not in index:
            pair.note = f"break point {o.point!r} has no transfer table"
            out.append(pair)
            continue
        batch, _ = hindcast_input(session, spot, o.time, memo=memo)
        if batch is None:
            pair.note = "no input was known at this time"
            out.append(pair)
            continue
        _describe(pair, batch)
        arr = compute_spots(batch, [points])[0]
        hb = arr.hb[:, 0, :3]
        if o.point is not None:
            v = float(hb[index[o.point], cls])
        else:  # as the outlook shows it: at the point where the sets are largest
            sets = hb[:, 1]
            v = float(hb[int(np.nanargmax(sets)), cls]) if np.isfinite(sets).any() else 0.0
        pair.forecast_m = v if math.isfinite(v) else 0.0  # nothing breaking = flat (0 m)
        out.append(pair)
    return out


# --------------------------------------------------------------------------- a nearshore station


@lru_cache(maxsize=16)
def _cached_table(key: tuple[Any, ...], depth: bytes, shape: tuple[int, int], geo: tuple[float, float, float, float],
                  x: float, y: float, opts: tuple[tuple[str, Any], ...]) -> TransferTable:  # fmt: skip
    from models.bathymetry import DepthGrid

    grid = DepthGrid(depth=np.frombuffer(depth, dtype=float).reshape(shape), x0=geo[0], y0=geo[1], dx=geo[2],
                     dy=geo[3])  # fmt: skip
    kw = dict(opts)
    return build_table(grid, x, y, **kw)


def station_table(spot: Spot, source: Source) -> tuple[TransferTable, float, float]:
    """A transfer table at the station's own position (built on demand, kept per process)."""
    from app.services.spots import depth_grid_of

    b = spot.bathymetry
    if b is None:
        raise NotFound(f"spot {spot.id!r} has no bathymetry")
    x, y = (float(v) for v in to_local(source.latitude, source.longitude, b.origin_latitude, b.origin_longitude))
    grid = depth_grid_of(spot)
    if not bool(grid.contains(x, y)):
        raise BadInput(
            f"source {source.id!r} at x={x:.0f} m, y={y:.0f} m is outside spot {spot.id!r}'s grid {grid.extent}: "
            "only a nearshore station inside the grid can be verified by Hm0 at its position",
            field="observations",
        )
    depth = float(grid.depth_at(x, y))
    if not (math.isfinite(depth) and depth > 0.5):
        raise BadInput(f"source {source.id!r} is on land or too shallow in the grid (depth {depth:.2f} m)",
                       field="observations")  # fmt: skip
    m = dict(spot.profile.get("model") or {})
    periods = np.round(np.geomspace(m.get("period_min_s", 4.0), m.get("period_max_s", 25.0),
                                    int(m.get("period_count", 32))), 3)  # fmt: skip
    opts = (("periods_s", tuple(periods.tolist())), ("direction_bin_deg", float(m.get("direction_bin_deg", 2.0))),
            ("launch_spacing_deg", float(m.get("launch_spacing_deg", 0.25))), ("smoothing_m", m.get("smoothing_m")))  # fmt: skip
    d = np.ascontiguousarray(grid.depth, dtype=float)
    table = _cached_table((b.sha256,), d.tobytes(), d.shape, (grid.x0, grid.y0, grid.dx, grid.dy), x, y, opts)
    return table, x, y


def verify_station_pairs(
    session: Session, spot: Spot, source: Source, *, start: datetime | None, end: datetime | None
) -> tuple[list[Pair], dict[str, Any]]:
    """Pairs of the station's own Hm0 and the hindcast Hm0 at its position."""
    from app.ingest.store import record_from_observation

    table, x, y = station_table(spot, source)
    q = select(Observation).where(Observation.source_id == source.id, Observation.kind == "spectrum",
                                  Observation.issue_time.is_(None))  # fmt: skip
    if start is not None:
        q = q.where(Observation.time >= start)
    if end is not None:
        q = q.where(Observation.time <= end)
    rows = list(session.scalars(q.order_by(Observation.time).limit(MAX_OBSERVATIONS)))
    out = []
    memo: Memo = {}
    for row in rows:
        rec = record_from_observation(row)
        h_obs = record_hm0(rec.frequency, rec.density, rec.bandwidth)
        pair = Pair(row.time, h_obs, None, None, source.id, None)
        if not math.isfinite(h_obs):
            continue
        batch, _ = hindcast_input(session, spot, row.time, exclude=[source.id], memo=memo)
        if batch is None:
            pair.note = "no input was known at this time"
            out.append(pair)
            continue
        _describe(pair, batch)
        near = nearshore_many(batch.frequency, batch.directions, batch.stack, [table])
        pair.forecast_m = float(np.nan_to_num(near.hs[0, 0, 0]))
        out.append(pair)
    where = {"station": source.id, "x_m": round(x, 1), "y_m": round(y, 1),
             "depth_m": round(float(table.reference_depth_m), 2)}  # fmt: skip
    return out, where


# --------------------------------------------------------------------------- the report


def report(spot: Spot, pairs: Sequence[Pair], *, observations: str, compared: str, rejects: Sequence[Any] = (),
           extra: dict[str, Any] | None = None) -> dict[str, Any]:  # fmt: skip
    """The verification body (`shoalcast verify --json`, the API): scores overall, by offshore
    direction sector and by period band, the pairs, the rejects."""
    used = [p for p in pairs if p.forecast_m is not None]
    o = np.array([p.observed_m for p in used], dtype=float)
    f = np.array([p.forecast_m for p in used], dtype=float)
    overall = mv.scores(o, f)
    sectors = [mv.sector_of(p.offshore_direction_deg) for p in used]
    bands = [mv.period_band(p.offshore_period_s) for p in used]
    by_sector = {k: v.as_dict() for k, v in mv.scores_by(o, f, sectors).items()}
    by_band = {k: v.as_dict() for k, v in mv.scores_by(o, f, bands).items()}
    inputs_used: dict[str, int] = {}
    for p in used:
        k = f"{p.source}:{p.input}"
        inputs_used[k] = inputs_used.get(k, 0) + 1
    body: dict[str, Any] = {
        "spot_id": spot.id,
        "observations": observations,
        "compared": compared,
        **overall.as_dict(),
        "by_sector": {k: by_sector[k] for k in mv.SECTORS if k in by_sector},
        "by_period_band": by_band,
        "inputs_used": inputs_used,
        "unpaired": len(pairs) - len(used),
        "rejected": len(rejects),
        "rejects": [{"file": r.file, "line": r.line, "field": r.field, "reason": r.reason} for r in rejects[:200]],
        "pairs": [p.as_dict() for p in pairs],
        "cautions": list(CAUTIONS),
    }
    if extra:
        body.update(extra)
    return body


def verify_csv(
    session: Session,
    spot_id: str,
    data: bytes | str,
    *,
    name: str,
    start: datetime | None = None,
    end: datetime | None = None,
    height_class: str = "typical",
    limit: int = MAX_OBSERVATIONS,
) -> tuple[dict[str, Any], HeightParse]:
    """Parse observed breaker heights and score the hindcast against them (not stored)."""
    from app.services.spots import get_spot

    spot = get_spot(session, spot_id)
    parsed = parse_height_csv(data, name=name, points=[bp.name for bp in spot.break_points])
    obs = _window(parsed.observations, start, end)
    if len(obs) > limit:
        raise BadInput(f"{len(obs)} observations: at most {limit} per run (narrow it with from/to)",
                       field="observations")  # fmt: skip
    pairs = csv_pairs(session, spot, obs, height_class=height_class)
    compared = f"observed breaker height vs raw {height_class} breaker height (Hm0 at breaking)"
    return report(spot, pairs, observations=name, compared=compared, rejects=parsed.rejects,
                  extra={"units_in_file": parsed.units}), parsed  # fmt: skip


def verify_station(
    session: Session, spot_id: str, source_id: str, *, start: datetime | None = None, end: datetime | None = None
) -> dict[str, Any]:
    """Score the hindcast Hm0 at a nearshore station's position against the station's own Hm0."""
    from app.services.spots import get_spot

    spot = get_spot(session, spot_id)
    source = session.get(Source, source_id)
    if source is None:
        raise NotFound(f"no source with id {source_id!r}")
    pairs, where = verify_station_pairs(session, spot, source, start=start, end=end)
    return report(spot, pairs, observations=source_id, compared="station Hm0 vs hindcast Hm0 at its position",
                  extra={"station": where})  # fmt: skip


def store_verification(session: Session, body: dict[str, Any], *, who: str) -> Verification:
    row = Verification(spot_id=body["spot_id"], observations=str(body["observations"])[:500], created_by=who[:100],
                       body=body)  # fmt: skip
    session.add(row)
    session.flush()
    body["verification_id"] = row.id
    row.body = dict(body)  # a new value, so the JSON column is written again with the id
    session.flush()
    return row


def latest_verification(session: Session, spot_id: str) -> Verification | None:
    return session.scalars(
        select(Verification).where(Verification.spot_id == spot_id).order_by(Verification.id.desc())
    ).first()


def run_verification(
    session: Session,
    spot_id: str,
    *,
    csv_data: bytes | str | None = None,
    station: str | None = None,
    name: str = "<upload>",
    start: datetime | None = None,
    end: datetime | None = None,
    who: str,
    apply: bool = False,
    limit: int = MAX_OBSERVATIONS,
) -> dict[str, Any]:
    """Verify (from a CSV or a nearshore station), store the run, and with `apply` store its factor.

    The body gains `verification_id` and, when applied, `calibration` (the stored version)."""
    if (csv_data is None) == (station is None):
        raise BadInput("give either observed heights (CSV) or a nearshore station id", field="observations")
    if station is not None:
        body = verify_station(session, spot_id, station, start=start, end=end)
    else:
        assert csv_data is not None
        body, _ = verify_csv(session, spot_id, csv_data, name=name, start=start, end=end, limit=limit)
    body["window"] = {"from": None if start is None else start.strftime("%Y-%m-%dT%H:%M:%SZ"),
                      "to": None if end is None else end.strftime("%Y-%m-%dT%H:%M:%SZ")}  # fmt: skip
    body["notes"] = []
    if not body["pairs"]:  # nothing readable (or nothing in the window): reported, not stored
        body["notes"].append("no observations to pair: nothing stored")
        if apply:
            body["notes"].append("no calibration factor applied")
        return body
    row = store_verification(session, body, who=who)
    if apply:
        from app.services.calibration import MAX_FACTOR, MIN_FACTOR

        c = body["calibration_factor"]
        if body["n"] < 2 or c is None:
            body["notes"].append(f"{body['n']} pair(s): at least 2 are needed to apply a calibration factor; "
                                 "none applied")  # fmt: skip
        elif not (MIN_FACTOR <= c <= MAX_FACTOR):
            body["notes"].append(f"factor {c:.3f} is outside {MIN_FACTOR}..{MAX_FACTOR}: not applied (check the "
                                 "observations and the spot's bathymetry before scaling its heights)")  # fmt: skip
        else:
            body["calibration"] = _apply(session, spot_id, body, row.id, who)
        row.body = dict(body)
        session.flush()
    return body


def _apply(session: Session, spot_id: str, body: dict[str, Any], verification_id: int, who: str) -> dict[str, Any]:
    from app.services.calibration import apply_factor, calibration_body

    metrics = {k: body[k] for k in ("n", "bias_m", "rmse_m", "scatter_index", "correlation", "calibration_factor",
                                    "calibration_factor_stderr")}  # fmt: skip
    metrics["observations"] = body["observations"]
    cal = apply_factor(session, spot_id, body["calibration_factor"], stderr=body["calibration_factor_stderr"],
                       who=who, metrics=metrics, verification_id=verification_id)  # fmt: skip
    return calibration_body(cal)
