"""Benchmark: saving and loading a large workspace in the store (SQLite file, WAL).

Workspace: 200 monthly money series x 240 months and 10 price indexes x 3 vintages
(synthetic random data, generated here). Timed: the first save, a second save after one
series changed (payloads are content-addressed, so only the changed one is written),
a load (every payload decoded and checked against its SHA-256) and ``verify``.
Baseline in the same run: pickling the whole workspace to a file with fsync and reading
it back (a plain "dump everything" save with no versions, checks or concurrency control).

Target on a 2-core machine: load_s <= 1.0 and resave_s <= 0.5. Run:
    python tests/benchmarks/bench_store.py
The last line is ``save_s=... resave_s=... load_s=... verify_s=... pickle_save_s=...
pickle_load_s=... db_mb=...``.
"""

from __future__ import annotations

import dataclasses
import os
import pickle
import sys
import tempfile
import time
from pathlib import Path

import numpy as np
import pandas as pd

sys.path.insert(0, str(Path(__file__).resolve().parents[2]))

from pipeline.model import MONTHLY, Series, Workspace
from pipeline.store import WorkspaceStore

N_SERIES, N_MONTHS, N_INDEXES, N_VINTAGES = 200, 240, 10, 3


def build(ws: Workspace) -> Workspace:
    rng = np.random.default_rng(1)
    idx = pd.period_range("2005-01", periods=N_MONTHS, freq="M")
    series = {f"series {i}": Series(f"series {i}", pd.Series(
        1000 + rng.normal(0, 10, N_MONTHS).cumsum(), index=idx), MONTHLY, unit="USD")
        for i in range(N_SERIES)}
    status = pd.Series(["final"] * (N_MONTHS - 6) + ["preliminary"] * 6, index=idx,
                       dtype=object)
    indexes = {f"index {k}": {f"2025-0{v + 1}-15": Series(
        f"index {k}", pd.Series(100 * np.cumprod(1 + rng.normal(0.002, 0.001, N_MONTHS)),
                                index=idx), MONTHLY, kind="index", status=status,
        vintage=f"2025-0{v + 1}-15") for v in range(N_VINTAGES)} for k in range(N_INDEXES)}
    return dataclasses.replace(ws, series=series, indexes=indexes,
                               settings={"base": "2024", "deflators": list(indexes)})


def main() -> None:
    with tempfile.TemporaryDirectory() as tmp:
        db = Path(tmp) / "bench.sqlite"
        store = WorkspaceStore(f"sqlite:///{db}")
        ws = build(store.create("bench"))
        t = time.perf_counter()
        saved = store.save(ws)
        save_s = time.perf_counter() - t
        one = dict(saved.series)
        one["series 0"] = one["series 0"].with_values(one["series 0"].values * 1.01)
        t = time.perf_counter()
        saved = store.save(dataclasses.replace(saved, series=one))
        resave_s = time.perf_counter() - t
        t = time.perf_counter()
        loaded = store.load(saved.id)
        load_s = time.perf_counter() - t
        assert len(loaded.series) == N_SERIES
        t = time.perf_counter()
        store.verify(saved.id)
        verify_s = time.perf_counter() - t
        store.close()
        db_mb = sum(p.stat().st_size for p in Path(tmp).glob("bench.sqlite*")) / 1e6

        path = Path(tmp) / "bench.pickle"
        t = time.perf_counter()
        with open(path, "wb") as fh:
            pickle.dump(ws, fh, protocol=pickle.HIGHEST_PROTOCOL)
            fh.flush()
            os.fsync(fh.fileno())
        pickle_save_s = time.perf_counter() - t
        t = time.perf_counter()
        with open(path, "rb") as fh:
            pickle.load(fh)
        pickle_load_s = time.perf_counter() - t
    print(f"workspace: {N_SERIES} series x {N_MONTHS} months, {N_INDEXES} indexes x "
          f"{N_VINTAGES} vintages")
    print(f"save_s={save_s:.3f} resave_s={resave_s:.3f} load_s={load_s:.3f} "
          f"verify_s={verify_s:.3f} pickle_save_s={pickle_save_s:.3f} "
          f"pickle_load_s={pickle_load_s:.3f} db_mb={db_mb:.2f}")


if __name__ == "__main__":
    main()
