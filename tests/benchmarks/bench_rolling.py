"""Benchmark: rolling-year chained Fisher and Törnqvist over 5,000 items x 120 months.

Each (item, month) is a separate item, so every year window holds 60,000 item cells; the
windows are gathered a chunk at a time. The baseline in the same run is the ordinary
chained month-to-month index on the same price table (``compute_index``). The last lines
are ``rolling_s=<seconds>`` (both rolling-year indexes, price table already built) and
``peak_mb=<MB>`` (Python-tracked peak memory of that step). Targets: rolling_s <= 2 s,
peak_mb <= 150 on 2 cores.

Run: python tests/benchmarks/bench_rolling.py
"""

from __future__ import annotations

import sys
import time
import tracemalloc
from pathlib import Path

sys.path.insert(0, str(Path(__file__).resolve().parents[2]))
sys.path.insert(0, str(Path(__file__).resolve().parent))

from bench_index import make_frame

from pipeline.indexnum import compute_index, compute_rolling_year, price_table


def main() -> None:
    table = price_table(make_frame())
    print(f"items={len(table.items)} months={len(table.periods)}")
    t0 = time.perf_counter()
    for f in ("fisher", "tornqvist"):
        compute_index(table, f, chained=True)
    base_s = time.perf_counter() - t0
    print(f"baseline_monthly_chain_s={base_s:.3f}")
    best = float("inf")
    for _ in range(3):
        t0 = time.perf_counter()
        for f in ("fisher", "tornqvist"):
            res = compute_rolling_year(table, f, chained=True, base="2015")
        best = min(best, time.perf_counter() - t0)
    tracemalloc.start()
    for f in ("fisher", "tornqvist"):
        compute_rolling_year(table, f, chained=True, base="2015")
    peak = tracemalloc.get_traced_memory()[1] / 1e6
    tracemalloc.stop()
    print(f"matched_pairs_min={int(res.matched.min())} windows={len(res.values)}")
    print(f"ratio_to_monthly_chain={best / base_s:.1f}")
    print(f"rolling_s={best:.3f}")
    print(f"peak_mb={peak:.0f}")


if __name__ == "__main__":
    main()
