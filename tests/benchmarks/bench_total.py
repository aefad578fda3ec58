"""Benchmark: a chained Fisher total of 200 parts x 240 months, each part deflated by its
own deflator, with the contributions of every part (synthetic random data, generated here).

engine: pipeline.totals.fisher_chain on the deflated parts (one vectorised pass over
periods x parts: the Fisher links, the chain, the BEA contributions), scaled to the base
period and turned into percentage points, as total_of_parts does.
loop: the same arithmetic written straightforwardly, period by period and part by part in
plain Python (the way a spreadsheet is filled in row by row), on the same deflated parts.
Both start from the same deflation (pipeline.deflate through total_of_parts), timed
separately as deflate_s; end_to_end_s is one whole total_of_parts call with its table.

Target: ratio = loop_s / total_s >= 20. Run:
    python tests/benchmarks/bench_total.py
The last line is ``total_s=... loop_s=... ratio=...``.
"""

from __future__ import annotations

import math
import sys
import time
from pathlib import Path

import numpy as np
import pandas as pd

sys.path.insert(0, str(Path(__file__).resolve().parents[2]))

from pipeline.model import MONTHLY, Series
from pipeline.totals import fisher_chain, total_of_parts

N_PARTS, N_MONTHS = 200, 240
BASE = "2015-01"
START = "2005-01"


def make_data(seed: int = 3) -> tuple[list[Series], list[Series], dict[str, str]]:
    rng = np.random.default_rng(seed)
    idx = pd.period_range(START, periods=N_MONTHS, freq="M")
    parts, deflators = [], []
    for j in range(N_PARTS):
        level = rng.uniform(100, 10_000) * np.exp(np.cumsum(rng.normal(0.003, 0.02, N_MONTHS)))
        price = 100 * np.exp(np.cumsum(rng.normal(0.002, 0.01, N_MONTHS)))
        parts.append(Series(f"segment {j:03d}", pd.Series(level, index=idx), MONTHLY))
        deflators.append(Series(f"index {j:03d}", pd.Series(price, index=idx), MONTHLY,
                                kind="index"))
    return parts, deflators, {p.name: d.name for p, d in zip(parts, deflators, strict=True)}


def engine(price: np.ndarray, real: np.ndarray, nominal: np.ndarray,
           b: int) -> tuple[np.ndarray, np.ndarray]:
    core = fisher_chain(price / 100.0, real)
    scale = nominal[b].sum() / core.level[b]
    level = core.level * scale
    contrib = np.full(real.shape, np.nan)
    contrib[1:] = 100.0 * core.changes[1:] * scale / level[:-1, None]
    return level, contrib


def loop(price: list[list[float]], real: list[list[float]], nominal: list[list[float]],
         b: int) -> tuple[list[float], list[list[float]]]:
    t_n, n = len(real), len(real[0])
    q = [1.0]
    contrib: list[list[float]] = [[math.nan] * n]
    for t in range(1, t_n):
        p0 = [v / 100.0 for v in price[t - 1]]
        p1 = [v / 100.0 for v in price[t]]
        x0, x1 = real[t - 1], real[t]
        v00 = v01 = v10 = v11 = 0.0
        for i in range(n):
            v00 += p0[i] * x0[i]
            v01 += p0[i] * x1[i]
            v10 += p1[i] * x0[i]
            v11 += p1[i] * x1[i]
        qf = math.sqrt((v01 / v00) * (v11 / v10))
        pf = (v11 / v00) / qf
        den = 0.0
        for i in range(n):
            den += (p0[i] + p1[i] / pf) * x0[i]
        contrib.append([100.0 * (p0[i] + p1[i] / pf) * (x1[i] - x0[i]) / den
                        for i in range(n)])
        q.append(q[-1] * qf)
    scale = sum(nominal[b]) / q[b]
    return [v * scale for v in q], contrib


def best(fn, repeat: int) -> tuple[float, object]:
    times, out = [], None
    for _ in range(repeat):
        t0 = time.perf_counter()
        out = fn()
        times.append(time.perf_counter() - t0)
    return min(times), out


def main() -> None:
    parts, deflators, pairs = make_data()
    t0 = time.perf_counter()
    res = total_of_parts(parts, deflators, pairs, BASE, chain="fisher")
    table = res.table()
    end_to_end = time.perf_counter() - t0
    t0 = time.perf_counter()
    additive = total_of_parts(parts, deflators, pairs, BASE, chain="none")
    deflate_s = time.perf_counter() - t0  # the additive total is little more than deflation
    b = int(np.flatnonzero(res.period_labels == BASE)[0])
    price, real, nominal = res.price, res.real, res.nominal
    total_s, (level, contrib) = best(lambda: engine(price, real, nominal, b), 20)
    lists = (price.tolist(), real.tolist(), nominal.tolist())
    loop_s, (level_l, contrib_l) = best(lambda: loop(*lists, b), 3)
    diff_level = float(np.max(np.abs(level - np.array(level_l)) / level))
    diff_contrib = float(np.nanmax(np.abs(contrib - np.array(contrib_l))))
    engine_vs_result = float(np.max(np.abs(level - res.total_real) / level))
    adds_up = float(np.nanmax(np.abs(np.nansum(contrib[1:], axis=1)
                                     - 100 * (level[1:] / level[:-1] - 1))))
    print(f"parts={N_PARTS} months={N_MONTHS} deflators={len(deflators)} "
          f"table_rows={len(table)}")
    print(f"end_to_end_s={end_to_end:.3f} deflate_s={deflate_s:.3f} "
          f"(additive total_of_parts, {len(additive.part_names)} separate deflations)")
    print(f"max_rel_diff_level={diff_level:.3g} max_abs_diff_contrib_pp={diff_contrib:.3g} "
          f"engine_vs_total_of_parts={engine_vs_result:.3g} contributions_add_up={adds_up:.3g}")
    print(f"total_s={total_s:.5f} loop_s={loop_s:.4f} ratio={loop_s / total_s:.1f}")


if __name__ == "__main__":
    main()
