"""The cautions shown wherever a breaker height or a hazard level is shown (API, CLI, pages, pictures).

One place for the wording, so every view says the same thing.
"""

from __future__ import annotations

from models.hazard import CAUTION as HAZARD_CAUTION
from models.hazard import RIP_CAUTION

GENERAL = (
    "Guidance only: computed from offshore spectra and a seabed model; conditions change quickly.",
    "Follow lifeguards, official warnings and local rules.",
)

# for views of hazard levels and thresholds (agencies, policies, the hazards board, outlooks: every
# step's hazard carries the rip-current likelihood)
HAZARD = (*GENERAL, HAZARD_CAUTION, RIP_CAUTION)

__all__ = ["GENERAL", "HAZARD", "HAZARD_CAUTION", "RIP_CAUTION"]
