"""Benchmark: intake of a 1,000,000-row long CSV (500 series x 2,000 months).

Writes the file to a temporary folder, then times, in the same run:
  baseline: plain ``pandas.read_csv`` of the same file (no cleaning, no checks);
  intake:   ``pipeline.ingest.read_file`` (parse, clean, build series, validate).
Prints figures last as key=value; the last line is ``intake_s=...`` (target <= 5 s on a
2-core machine). Run: ``python tests/benchmarks/bench_intake.py``.
"""

from __future__ import annotations

import tempfile
import time
from pathlib import Path

import numpy as np
import pandas as pd

from pipeline.ingest import read_file
from pipeline.settings import load_settings

N_SERIES = 500
N_MONTHS = 2000


def make_file(folder: Path) -> Path:
    rng = np.random.default_rng(7)
    periods = pd.period_range("1850-01", periods=N_MONTHS, freq="M").strftime("%Y-%m")
    names = np.array([f"Illustrative series {i:03d}" for i in range(N_SERIES)], dtype=object)
    values = np.round(rng.uniform(50, 5000, N_SERIES * N_MONTHS), 2)
    frame = pd.DataFrame({
        "series": np.repeat(names, N_MONTHS),
        "period": np.tile(np.asarray(periods, dtype=object), N_SERIES),
        "value": values,
        "unit": "USD",
    })
    path = folder / "long_1m.csv"
    frame.to_csv(path, index=False)
    return path


def main() -> None:
    with tempfile.TemporaryDirectory() as tmp:
        path = make_file(Path(tmp))
        size = path.stat().st_size
        settings = load_settings({"max_upload_bytes": 10 * size})
        t0 = time.perf_counter()
        base = pd.read_csv(path)
        baseline_s = time.perf_counter() - t0
        t0 = time.perf_counter()
        intake = read_file(path, settings=settings)
        intake_s = time.perf_counter() - t0
        assert len(base) == N_SERIES * N_MONTHS
        assert len(intake.series) == N_SERIES, len(intake.series)
        assert not intake.problems, intake.problems[:3]
        print(f"rows={len(base)} series={len(intake.series)} file_mb={size / 1e6:.1f}")
        print(f"baseline_read_csv_s={baseline_s:.2f}")
        print(f"ratio={intake_s / baseline_s:.1f}")
        print(f"intake_s={intake_s:.2f}")


if __name__ == "__main__":
    main()
