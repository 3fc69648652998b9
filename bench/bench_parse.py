"""Parse speed of the realtime spectral set: a synthetic 45-day set (~1,000 records x 47 bands x 5
files, written by our writer) through `parse_realtime_set`, side by side with `numpy.loadtxt` on the
same numbers as pre-cleaned text (parentheses and Sep_Freq stripped)."""

from __future__ import annotations

import io
import re
import time
from datetime import UTC, datetime, timedelta

import numpy as np

from app.formats.ndbc_realtime import parse_realtime_set, write_realtime_set
from app.formats.records import SpectrumRecord

F47 = np.array([0.02] + [0.0325 + 0.005 * i for i in range(13)] + [0.10 + 0.01 * i for i in range(26)]
               + [0.365 + 0.02 * i for i in range(7)])


def _records(n: int) -> list[SpectrumRecord]:
    rng = np.random.default_rng(5)
    t0 = datetime(2031, 1, 1, tzinfo=UTC)
    out = []
    for i in range(n):
        dens = np.round(rng.gamma(2.0, 0.3, F47.size), 3)
        out.append(SpectrumRecord(
            station="b1", time=t0 + timedelta(minutes=65 * i), frequency=F47, density=dens,
            separation_frequency=0.12, r1=np.round(rng.uniform(0, 1, F47.size), 2),
            r2=np.round(rng.uniform(0, 1, F47.size), 2), alpha1_deg=np.round(rng.uniform(0, 360, F47.size), 1),
            alpha2_deg=np.round(rng.uniform(0, 360, F47.size), 1)))
    return out


def _best(fn, repeat: int) -> float:
    best = float("inf")
    for _ in range(repeat):
        t = time.perf_counter()
        fn()
        best = min(best, time.perf_counter() - t)
    return best


def run(quick: bool = False) -> list[dict]:
    n = 200 if quick else 1000
    files = {f"b1.{k}": v for k, v in write_realtime_set(_records(n)).items()}
    cleaned = {}
    for name, text in files.items():
        body = [ln for ln in text.splitlines() if not ln.startswith("#")]
        cleaned[name] = "\n".join(re.sub(r"[()]", " ", ln) for ln in body) + "\n"
    repeat = 1 if quick else 3
    got = parse_realtime_set(files)
    assert len(got.records) == n and not got.rejects
    ours = _best(lambda: parse_realtime_set(files), repeat)
    ref = _best(lambda: [np.loadtxt(io.StringIO(t)) for t in cleaned.values()], repeat)
    return [{
        "benchmark": f"parse realtime spectral set ({n} records x 47 bands x 5 files)",
        "result": f"{n / ours:,.0f} records/s ({ours * 1e3:.0f} ms); numpy.loadtxt {ref * 1e3:.0f} ms",
        "ratio": ours / ref,
        "ratio_of": "parse_realtime_set time / numpy.loadtxt time on the same numbers as pre-cleaned text",
        "target": "correctness first; within ~10x of loadtxt",
    }]


if __name__ == "__main__":
    from bench.common import print_rows

    print_rows(run())
