"""Benchmark: seasonal adjustment of many series (not collected by pytest).

    python tests/benchmarks/bench_seasonal.py [--series 1000] [--months 240]

1. Batch STL: the cached linear operator of non-robust STL (one matrix product for all
   series) against the baseline in the same run, statsmodels' STL fitted series by
   series. Both decompose the same log series; ``max_abs_diff`` is the largest absolute
   difference between the two in any seasonal, trend or remainder value.
   ``batch_ratio`` = loop time / batch time (median of 5 runs) with the operator built; the one-off build
   time (n statsmodels runs on unit vectors) is printed separately, as is the time of the
   whole engine call ``adjust_many`` (checks, diagnostics and result objects included).
2. Robust STL: ``adjust_many(..., "stl-robust")`` serially (one worker, no pool)
   against the process pool over all cores; ``robust_pool_efficiency`` =
   serial time / (pool time x cores). Pool time includes starting the pool. Wall-clock
   figures need an otherwise idle machine; the CPU-seconds ratio (serial CPU / CPU of the
   parent and all workers) is printed too, as the pool's own overhead.

The series are synthetic (trend x seasonal x noise, seeded), for timing only.
The last line holds the figures as key=value.
"""

from __future__ import annotations

import argparse
import os
import sys
import time
from pathlib import Path

import numpy as np
import pandas as pd

sys.path.insert(0, str(Path(__file__).resolve().parents[2]))

from statsmodels.tsa.seasonal import STL

from pipeline.model import MONTHLY, Series
from pipeline.seasonal import adjust_many
from pipeline.seasonal_batch import OPERATORS, default_workers, stl_batch


def make_series(k: int, n: int, seed: int = 7) -> np.ndarray:
    rng = np.random.default_rng(seed)
    t = np.arange(n)
    level = 1000 * np.exp(np.cumsum(rng.normal(0.002, 0.01, size=(k, n)), axis=1))
    amp = rng.uniform(0.02, 0.15, size=(k, 1))
    phase = rng.uniform(0, 2 * np.pi, size=(k, 1))
    season = np.exp(amp * np.sin(2 * np.pi * t / 12 + phase))
    noise = np.exp(rng.normal(0, 0.01, size=(k, n)))
    return level * season * noise


def main() -> None:
    ap = argparse.ArgumentParser()
    ap.add_argument("--series", type=int, default=1000)
    ap.add_argument("--months", type=int, default=240)
    ap.add_argument("--robust-series", type=int, default=None,
                    help="series for the robust part (default: --series)")
    args = ap.parse_args()
    k, n = args.series, args.months
    k_rob = args.robust_series or k
    cores = default_workers()
    values = make_series(k, n)
    z = np.log(values)

    # --- 1. batch STL against the statsmodels loop
    OPERATORS.clear()
    t0 = time.perf_counter()
    stl_batch(z[:1], 12)  # builds and caches the operator for (n, 12, defaults)
    build = time.perf_counter() - t0

    runs = []
    for _ in range(5):
        t0 = time.perf_counter()
        batch = stl_batch(z, 12)
        runs.append(time.perf_counter() - t0)
    t_batch = float(np.median(runs))

    t0 = time.perf_counter()
    seas = np.empty_like(z)
    trend = np.empty_like(z)
    resid = np.empty_like(z)
    for i in range(k):
        res = STL(z[i], period=12).fit()
        seas[i], trend[i], resid[i] = res.seasonal, res.trend, res.resid
    t_loop = time.perf_counter() - t0
    max_abs_diff = max(np.abs(batch.seasonal - seas).max(), np.abs(batch.trend - trend).max(),
                       np.abs(batch.remainder - resid).max())

    idx = pd.period_range("2005-01", periods=n, freq="M")
    series = [Series(f"s{i:04d}", pd.Series(values[i], index=idx), MONTHLY) for i in range(k)]
    t0 = time.perf_counter()
    adjust_many(series, "stl")
    t_engine = time.perf_counter() - t0

    # --- 2. robust STL: serial against the pool
    rob = series[:k_rob]
    c0 = time.process_time()
    t0 = time.perf_counter()
    serial = adjust_many(rob, "stl-robust", max_workers=1)
    t_serial = time.perf_counter() - t0
    cpu_serial = time.process_time() - c0
    c0, k0 = time.process_time(), os.times()
    t0 = time.perf_counter()
    pooled = adjust_many(rob, "stl-robust", max_workers=cores)
    t_pool = time.perf_counter() - t0
    k1 = os.times()
    cpu_pool = (time.process_time() - c0 + (k1.children_user - k0.children_user)
                + (k1.children_system - k0.children_system))
    same = all(np.allclose(a.adjusted.values, b.adjusted.values, rtol=0, atol=1e-9)
               for a, b in zip(serial, pooled, strict=True))
    efficiency = t_serial / (t_pool * cores)

    load = os.getloadavg()[0] if hasattr(os, "getloadavg") else float("nan")
    print(f"series={k} months={n} cores={cores} load_average_1min={load:.2f} "
          "(other work on the machine lowers the pool figure)")
    print(f"operator_build_s={build:.3f} batch_s={t_batch:.5f} loop_s={t_loop:.3f} "
          f"engine_adjust_many_s={t_engine:.3f}")
    print(f"robust_series={k_rob} robust_serial_s={t_serial:.3f} robust_pool_s={t_pool:.3f} "
          f"pool_equals_serial={same}")
    # CPU seconds of all processes: the pool's overhead, whatever else runs on the machine
    print(f"robust_serial_cpu_s={cpu_serial:.3f} robust_pool_cpu_s={cpu_pool:.3f} "
          f"robust_pool_cpu_ratio={cpu_serial / cpu_pool:.3f}")
    print(f"batch_ratio={t_loop / t_batch:.1f} max_abs_diff={max_abs_diff:.3e} "
          f"robust_pool_efficiency={efficiency:.3f}")


if __name__ == "__main__":
    main()
