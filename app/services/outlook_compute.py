"""One spot's outlook computed from the database (no cache): inputs -> arrays -> steps.

`app.services.outlook_inputs` gathers the break points and the offshore inputs,
`app.services.conditions` the water level and wind per step (`SpotConditions`, whose
`.conditions` is the `models.conditions.StepConditions` the breaking computation receives),
`models.surf.compute_spots` turns each input into breaker arrays, `app.services.outlook_steps`
into steps. The cached entry point is `app.services.outlook_cache.get_outlook`.
"""

from __future__ import annotations

from datetime import timedelta
from typing import Any

from sqlalchemy.orm import Session

from app.db.tables import utcnow
from app.schemas.outlooks import OutlookBody, Step
from app.schemas.outlooks import OutlookOptions as OptionsBody
from app.services import conditions as cond
from app.services import outlook_inputs as inputs
from app.services.calibration import active_calibration, steps_with_calibration
from app.services.outlook_inputs import OutlookOptions
from app.services.outlook_steps import cautions_for
from models.surf import compute_spots

OUTLOOK_VERSION = "outlook-6"  # part of every cache key: bump when the computation changes (5: surf-zone model, tide and wind; 6: wind on the breaker type)


def compute_outlook(session: Session, spot_id: str, options: OutlookOptions | None = None, **fields: Any) -> OutlookBody:
    """Compute a spot's outlook from [start, start + hours] (`OutlookOptions`, or its fields as
    keywords; start None: the current hour)."""
    from app.services.spots import get_spot

    opts = OutlookOptions.of(options, **fields)
    hours, units, water_level_m = opts.hours, opts.units, opts.water_level_m
    spot = get_spot(session, spot_id)
    t0 = opts.first_hour(utcnow())
    end = t0 + timedelta(hours=hours)
    notes: list[str] = []
    points = inputs.spot_points(spot, notes)
    policy = inputs.policy_of(session, opts.agency_id, spot.id)
    found = inputs.batches(session, spot, inputs.candidates(session, spot, t0, end), t0, end, notes)
    if not spot.sources:
        notes.append("the spot has no sources: no steps")
    cal = active_calibration(session, spot.id)
    if cal is not None:
        notes.append(f"heights calibrated: x{cal.factor:.3f} (version {cal.version}, by {cal.created_by}, "
                     f"{cal.created_at:%Y-%m-%d %H:%M} UTC); raw heights in raw_breaker_height_*")  # fmt: skip
    steps: list[Step] = []
    ci = cond.load_condition_inputs(session, spot, t0, end)
    for batch in inputs.select_inputs(found):
        given = None if water_level_m is None else inputs.water_level_at(water_level_m, batch.times)
        sc = cond.spot_conditions(ci, batch.times, given=given)
        c = sc.conditions
        arr = compute_spots(batch, [points], water_level_m=c.water_level_m, wind_speed_m_s=c.wind_speed_m_s,
                            wind_from_deg=c.wind_from_deg)[0]  # fmt: skip
        steps.extend(steps_with_calibration(batch, points, arr, policy, units, cal, conditions=sc))
    steps.sort(key=lambda s: s.time)
    return OutlookBody(
        spot_id=spot.id, name=spot.name, units=units, cautions=cautions_for(policy), computed_at=utcnow(), start=t0,
        hours=hours, policy=policy.name, policy_is_default=policy.is_default, break_points=[p.name for p in points],
        notes=notes, steps=steps,
        options=OptionsBody(hours=hours, start=opts.start, units=units, agency_id=opts.agency_id,
                            water_level_m=water_level_m if isinstance(water_level_m, float) else None),
    )  # fmt: skip


__all__ = ["OUTLOOK_VERSION", "compute_outlook"]
