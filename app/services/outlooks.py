"""Spot outlooks: offshore spectra x transfer tables -> breaker heights, peel, swell trains, hazard.

The entry points other code imports, gathered from the modules that hold them (one job each;
imports run one way, top to bottom):

- `models.offshore`: an input's spectra partitioned into swell trains (`prepare_offshore`).
- `models.nearshore`: transfer tables applied to many points at once (`transfer_weights`).
- `models.surf`: height classes shoaled to breaking at every break point (`compute_spots`).
- `models.surf_peel`: a step's peel from break times or the breaking angle (`step_peel`).
- `app.services.outlook_inputs`: which spectra an outlook uses, the break points' contours, and
  the options asked for (`OutlookOptions`: checked, keyed and hashed in one place).
- `app.services.outlook_numbers`: rounding for JSON.
- `app.services.outlook_steps`: the steps of an outlook, rounded and validated (`build_steps`).
- `app.services.outlook_compute`: one outlook from the database (`compute_outlook`).
- `app.services.outlook_cache`: stored outlooks, keys and single flight (`get_outlook`).

Pipeline per spot and time step: inputs (observed > arrival-forecast > model-forecast);
E(f, θ) (given, or the directional estimate from buoy coefficients, docs/directional.md); swell trains (at most `MAX_TRAINS`); per break
point the table application on the whole spectrum and each train; breaking of each height class
(typical = Hm0, sets = H1/10, largest = expected largest in an hour) by Weggel (1972); peel;
hazard on the set breaker height where it is largest (`models.hazard`).
"""

from __future__ import annotations

from app.services.outlook_cache import get_or_compute, get_outlook, outlook_key, refresh_stale
from app.services.outlook_compute import OUTLOOK_VERSION, compute_outlook
from app.services.outlook_inputs import OutlookOptions, WaterLevel, spot_points
from app.services.outlook_steps import CAUTIONS, build_steps, cautions_for
from models.nearshore import TransferWeights, transfer_weights
from models.offshore import MAX_TRAINS, OffshoreBatch, prepare_offshore
from models.surf import PointSetup, SpotArrays, compute_spots, nearshore_points

__all__ = [
    "CAUTIONS", "MAX_TRAINS", "OUTLOOK_VERSION", "OffshoreBatch", "OutlookOptions", "PointSetup", "SpotArrays", "TransferWeights",
    "WaterLevel", "build_steps", "cautions_for", "compute_outlook", "compute_spots", "get_or_compute", "get_outlook",
    "nearshore_points", "outlook_key", "prepare_offshore", "refresh_stale", "spot_points", "transfer_weights",
]  # fmt: skip
