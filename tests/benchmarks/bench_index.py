"""Benchmark: chained Fisher and Törnqvist over 5,000 items x 120 months.

Prints a baseline (a straightforward per-period pandas groupby/merge implementation of the
same two chained indexes) and then the vectorised engine (one pivot into numpy arrays,
all links at once). The last line is ``index_s=<seconds>``: building the price table from
the long frame plus both chained indexes. Target: <= 1 s on 2 cores.

Run: python tests/benchmarks/bench_index.py
"""

from __future__ import annotations

import itertools
import sys
import time
from pathlib import Path

import numpy as np
import pandas as pd

sys.path.insert(0, str(Path(__file__).resolve().parents[2]))

from pipeline.indexnum import compute_index, price_table

N_ITEMS, N_MONTHS = 5_000, 120


def make_frame(seed: int = 7) -> pd.DataFrame:
    rng = np.random.default_rng(seed)
    periods = pd.period_range("2015-01", periods=N_MONTHS, freq="M")
    drift = rng.normal(0.002, 0.004, N_ITEMS)
    steps = rng.normal(drift, 0.02, (N_MONTHS, N_ITEMS))
    prices = 10 * np.exp(np.cumsum(steps, axis=0))
    qty = rng.gamma(2.0, 5.0, (N_MONTHS, N_ITEMS)) * np.exp(-0.5 * (steps.cumsum(axis=0)))
    keep = rng.random((N_MONTHS, N_ITEMS)) > 0.03  # 3 % of cells missing
    t, i = np.nonzero(keep)
    return pd.DataFrame({
        "period": pd.PeriodIndex(periods[t]),
        "item": np.char.add("item", i.astype(str)),
        "price": prices[t, i],
        "quantity": qty[t, i],
    })


def baseline(frame: pd.DataFrame) -> tuple[np.ndarray, np.ndarray]:
    """Per-period pandas: for each pair of adjacent months merge on item, then sum."""
    groups = {p: g.set_index("item")[["price", "quantity"]] for p, g in frame.groupby("period")}
    keys = sorted(groups)
    fisher, torn = [1.0], [1.0]
    for a, b in itertools.pairwise(keys):
        m = groups[a].merge(groups[b], how="inner", left_index=True, right_index=True,
                            suffixes=("0", "1"))
        las = (m.price1 * m.quantity0).sum() / (m.price0 * m.quantity0).sum()
        paa = (m.price1 * m.quantity1).sum() / (m.price0 * m.quantity1).sum()
        fisher.append(fisher[-1] * np.sqrt(las * paa))
        e0, e1 = m.price0 * m.quantity0, m.price1 * m.quantity1
        s = 0.5 * (e0 / e0.sum() + e1 / e1.sum())
        torn.append(torn[-1] * np.exp((s * np.log(m.price1 / m.price0)).sum()))
    return np.array(fisher), np.array(torn)


def main() -> None:
    frame = make_frame()
    print(f"rows={len(frame)} items={N_ITEMS} months={N_MONTHS}")

    t0 = time.perf_counter()
    base_f, base_t = baseline(frame)
    base_s = time.perf_counter() - t0
    print(f"baseline_pandas_groupby_s={base_s:.3f}")

    best = float("inf")
    for _ in range(3):
        t0 = time.perf_counter()
        table = price_table(frame)
        fisher = compute_index(table, "fisher", chained=True)
        torn = compute_index(table, "tornqvist", chained=True)
        best = min(best, time.perf_counter() - t0)
    assert np.allclose(fisher.values.to_numpy() / 100, base_f, rtol=1e-9)
    assert np.allclose(torn.values.to_numpy() / 100, base_t, rtol=1e-9)
    print(f"matched_items_min={int(fisher.matched.min())} dropped_items_max={int(fisher.dropped.max())}")
    print(f"speedup={base_s / best:.1f}")
    print(f"index_s={best:.3f}")


if __name__ == "__main__":
    main()
