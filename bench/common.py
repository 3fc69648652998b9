"""Shared bench helpers: a best-of-N timer and the table printer."""

from __future__ import annotations

import platform
import time
from collections.abc import Callable
from typing import Any


def best_of(fn: Callable[[], Any], *, repeat: int = 5, number: int = 1) -> float:
    """Best wall time per call [s] over `repeat` rounds of `number` calls."""
    best = float("inf")
    for _ in range(repeat):
        t0 = time.perf_counter()
        for _ in range(number):
            fn()
        best = min(best, (time.perf_counter() - t0) / number)
    return best


def machine() -> str:
    import os

    return f"{platform.machine()}, {os.cpu_count()} cores, Python {platform.python_version()}"


def print_rows(rows: list[dict[str, Any]]) -> None:
    headers = ["benchmark", "result", "ratio", "ratio of", "target"]
    table = [
        [
            str(r.get("benchmark", "")),
            str(r.get("result", "")),
            "" if r.get("ratio") is None else f"{r['ratio']:.3g}",
            str(r.get("ratio_of", "")),
            str(r.get("target", "")),
        ]
        for r in rows
    ]
    widths = [max(len(h), *(len(t[i]) for t in table)) if table else len(h) for i, h in enumerate(headers)]
    print("| " + " | ".join(h.ljust(w) for h, w in zip(headers, widths, strict=True)) + " |")
    print("|" + "|".join("-" * (w + 2) for w in widths) + "|")
    for t in table:
        print("| " + " | ".join(v.ljust(w) for v, w in zip(t, widths, strict=True)) + " |")


__all__ = ["best_of", "machine", "print_rows"]
