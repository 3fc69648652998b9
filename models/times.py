"""Times at the kernels' edge: aware datetimes, numpy datetime64 or plain seconds -> float seconds."""

from __future__ import annotations

import math
from collections.abc import Sequence
from datetime import UTC, datetime
from typing import Any

import numpy as np
from numpy.typing import ArrayLike, NDArray

from models.errors import InvalidInput

__all__ = ["to_seconds"]

_EPOCH = datetime(1970, 1, 1, tzinfo=UTC)


def to_seconds(
    times: Sequence[Any] | ArrayLike, name: str, *, allow_empty: bool = False
) -> tuple[NDArray[np.float64], list[Any]]:
    """Seconds since 1970-01-01 UTC for each item, and the items as given.

    Datetimes must be timezone-aware (naive ones are refused: their zone is unknown); datetime64
    values are taken as UTC; anything else must be a finite number of seconds.
    """
    items = list(np.ravel(times)) if isinstance(times, np.ndarray) else list(times)  # type: ignore[arg-type]
    if not items and not allow_empty:
        raise InvalidInput(f"`{name}` must not be empty")
    out = np.empty(len(items))
    for i, v in enumerate(items):
        if isinstance(v, datetime):
            if v.tzinfo is None or v.utcoffset() is None:
                raise InvalidInput(f"`{name}[{i}]` must be timezone-aware (UTC), got naive {v!r}")
            out[i] = (v - _EPOCH).total_seconds()
        elif isinstance(v, np.datetime64):
            out[i] = v.astype("datetime64[ns]").astype(np.int64) / 1e9
        else:
            try:
                out[i] = float(v)
            except (TypeError, ValueError):
                raise InvalidInput(f"`{name}[{i}]` must be an aware datetime or seconds, got {v!r}") from None
        if not math.isfinite(out[i]):
            raise InvalidInput(f"`{name}[{i}]` must be finite, got {v!r}")
    return out, items
