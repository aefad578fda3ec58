"""Benchmark: deflate + rebase + year-on-year for 10,000 monthly series x 240 months and
6 monthly deflators held in memory (synthetic random data, generated here).

engine: pipeline.deflate.deflate_frame (rebases every deflator to the base, aligns,
deflates all series at once) + pipeline.growth.lagged_ratio_wide (year on year of every
real series under every deflator).
loop: the obvious per-series pandas loop (align each series with its index, rebase,
divide, pct_change(12)), timed on a sample of series and scaled up to 10,000.

Targets on a 2-core machine: engine_s <= 0.5 and ratio >= 40. Run:
    python tests/benchmarks/bench_deflate.py
The last line is ``engine_s=... loop_s=... ratio=...``.
"""

from __future__ import annotations

import sys
import time
from pathlib import Path

import numpy as np
import pandas as pd

sys.path.insert(0, str(Path(__file__).resolve().parents[2]))

from pipeline.deflate import deflate_frame
from pipeline.growth import lagged_ratio_wide
from pipeline.model import MONTHLY, Series

N_SERIES, N_MONTHS, N_DEFL, SAMPLE = 10_000, 240, 6, 200
BASE = "2015-01..2015-12"


def make_data(seed: int = 1) -> tuple[pd.DataFrame, list[Series]]:
    rng = np.random.default_rng(seed)
    idx = pd.period_range("2005-01", periods=N_MONTHS, freq="M")
    nominal = pd.DataFrame(rng.uniform(100.0, 10_000.0, size=(N_MONTHS, N_SERIES)), index=idx,
                           columns=[f"series {i:05d}" for i in range(N_SERIES)])
    deflators = []
    for k in range(N_DEFL):
        level = 80.0 * np.cumprod(1.0 + rng.normal(0.002, 0.003, N_MONTHS))
        deflators.append(Series(f"index {k}", pd.Series(level, index=idx), MONTHLY, kind="index"))
    return nominal, deflators


def engine(nominal: pd.DataFrame, deflators: list[Series]) -> np.ndarray:
    res = deflate_frame(nominal, deflators, BASE, frequency=MONTHLY)
    return lagged_ratio_wide(res.real, 12)


def loop(nominal: pd.DataFrame, deflators: list[Series], columns: list[str]) -> list[pd.Series]:
    out = []
    for col in columns:
        s = nominal[col]
        for d in deflators:
            a, i = s.align(d.values, join="inner")
            rebased = 100.0 * i / i["2015-01":"2015-12"].mean()
            real = a * 100.0 / rebased
            out.append(real.pct_change(12))
    return out


def main() -> None:
    nominal, deflators = make_data()
    engine(nominal.iloc[:, :50], deflators)  # warm imports and caches
    runs = []
    for _ in range(3):
        t0 = time.perf_counter()
        yoy = engine(nominal, deflators)
        runs.append(time.perf_counter() - t0)
    engine_s = min(runs)

    cols = list(nominal.columns[:SAMPLE])
    t0 = time.perf_counter()
    slow = loop(nominal, deflators, cols)
    loop_s = (time.perf_counter() - t0) * N_SERIES / SAMPLE

    # same numbers both ways (first sampled series under every deflator)
    for k in range(N_DEFL):
        np.testing.assert_allclose(yoy[k, :, 0], slow[k].to_numpy(), rtol=1e-9, equal_nan=True)
    print(f"series={N_SERIES} months={N_MONTHS} deflators={N_DEFL} loop_sample={SAMPLE}")
    print(f"engine_s={engine_s:.3f} loop_s={loop_s:.2f} ratio={loop_s / engine_s:.1f}")


if __name__ == "__main__":
    main()
