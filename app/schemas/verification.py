"""Verification reports and calibration versions, as JSON (the API and `shoalcast verify --json`).

Shape (fields may be added, never renamed): see docs/verification.md §5. Scores are null when
they are undefined (no pairs; one pair for r and the standard error); times are RFC 3339 Z.
"""

from __future__ import annotations

from typing import Any

from pydantic import BaseModel, ConfigDict, Field


class _Model(BaseModel):
    model_config = ConfigDict(extra="forbid")


class Scores(_Model):
    n: int
    bias_m: float | None = Field(description="mean(observed − forecast) [m]")
    rmse_m: float | None
    scatter_index: float | None = Field(description="RMSE / mean(observed)")
    correlation: float | None = Field(description="Pearson r")
    calibration_factor: float | None = Field(description="least squares through the origin: observed ≈ c × forecast")
    calibration_factor_stderr: float | None = Field(description="heteroscedasticity-consistent (HC1) standard error")
    mean_observed_m: float | None = None
    mean_forecast_m: float | None = None


class VerificationPair(_Model):
    time: str
    observed_m: float | None
    forecast_m: float | None = Field(description="raw (uncalibrated); null when no input was known in time")
    point: str | None
    observer: str | None
    line: int | None = Field(description="line in the uploaded file")
    step_time: str | None = Field(description="the outlook step the observation is paired with")
    input: str | None = Field(description="observed | arrival-forecast | model-forecast")
    source: str | None
    issued: str | None = Field(description="issue time of the model forecast used")
    observed_at: str | None = Field(description="station observation an arrival forecast came from")
    known_at: str | None = Field(description="only inputs stored by this time were used")
    offshore_direction_deg: float | None
    offshore_period_s: float | None
    sector: str | None
    period_band: str | None
    note: str | None


class RejectedRow(_Model):
    file: str
    line: int | None
    field: str
    reason: str


class CalibrationVersion(_Model):
    spot_id: str
    version: int
    factor: float
    factor_stderr: float | None
    created_by: str
    created_at: str | None
    removed_by: str | None
    removed_at: str | None
    active: bool
    verification_id: int | None
    metrics: dict[str, Any]


class Calibrations(_Model):
    spot_id: str
    active: CalibrationVersion | None = Field(description="null: outlooks carry raw heights")
    versions: list[CalibrationVersion]


class VerificationReport(Scores):
    spot_id: str
    observations: str = Field(description="file name or nearshore station id")
    compared: str
    by_sector: dict[str, Scores] = Field(description="by offshore peak direction sector (45°)")
    by_period_band: dict[str, Scores] = Field(description="by offshore peak period band")
    inputs_used: dict[str, int] = Field(description="pairs per source:input kind")
    unpaired: int
    rejected: int
    rejects: list[RejectedRow]
    pairs: list[VerificationPair]
    cautions: list[str]
    verification_id: int | None = None
    window: dict[str, str | None] | None = None
    units_in_file: str | None = None
    station: dict[str, Any] | None = None
    calibration: CalibrationVersion | None = Field(default=None, description="the version stored by this run (apply)")
    notes: list[str] = Field(default_factory=list, description="e.g. why a factor was not applied")


__all__ = ["CalibrationVersion", "Calibrations", "RejectedRow", "Scores", "VerificationPair", "VerificationReport"]
