"""Benchmark: writing the audit workbook of a large deflation result.

Result: 50 monthly money series x 240 months deflated by 4 indexes (48,000 table rows;
synthetic random data, generated here). Timed: the audit workbook (pipeline.workbook:
summary, data, one sheet per deflator, indexes as used, status flags, method) against
the minimal two-sheet workbook (pipeline.export.write_minimal_workbook: data + method) and the
CSV export, all in the same run, with the growth of the peak resident memory during the
audit workbook write (write-only mode streams rows to disk). Baseline in the same run:
``percell_s``, the same audit workbook with the data tables written one xlsxwriter call
per cell (the path before the row-XML writer of ``Sheet.append_columns``).

Every workbook goes through the streaming writer of pipeline.xlsx (xlsxwriter in
constant-memory mode). Targets on a 2-core machine: audit_s <= 2 (issue target for this
size), audit_s <= 4 x minimal_s and peak_mb <= 100; audit_cpu_s is the CPU time of the
same write (less sensitive to other work on the machine). Run:
    python tests/benchmarks/bench_workbook.py
The last line is ``audit_s=... audit_cpu_s=... minimal_s=... csv_s=... ratio=... percell_s=...
percell_cpu_s=... speedup=... cpu_speedup=... peak_mb=... rows=...``.
"""

from __future__ import annotations

import resource
import sys
import tempfile
import time
from pathlib import Path

import numpy as np
import pandas as pd

sys.path.insert(0, str(Path(__file__).resolve().parents[2]))

from pipeline import xlsx
from pipeline.deflate import deflate_frame
from pipeline.export import write_minimal_workbook, write_result
from pipeline.model import MONTHLY, Series
from pipeline.workbook import write_workbook

N_SERIES, N_MONTHS, N_DEFL = 50, 240, 4


def main() -> None:
    rng = np.random.default_rng(3)
    idx = pd.period_range("2005-01", periods=N_MONTHS, freq="M")
    frame = pd.DataFrame(1000 + rng.normal(0, 10, (N_MONTHS, N_SERIES)).cumsum(axis=0),
                         index=idx, columns=[f"series {j}" for j in range(N_SERIES)])
    status = pd.Series(["final"] * (N_MONTHS - 6) + ["preliminary"] * 6, index=idx,
                       dtype=object)
    defl = [Series(f"index {k}", pd.Series(100 * np.cumprod(1 + rng.normal(0.002, 0.001,
                                                                         N_MONTHS)), index=idx),
                   MONTHLY, kind="index", status=status, vintage="2025-01-15")
            for k in range(N_DEFL)]
    result = deflate_frame(frame, defl, "2020", frequency=MONTHLY)
    rows = len(result.table())
    with tempfile.TemporaryDirectory() as tmp:
        rss0 = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss
        t, c = time.perf_counter(), time.process_time()
        write_workbook(result, Path(tmp) / "audit.xlsx", command="bench")
        audit_s, audit_cpu_s = time.perf_counter() - t, time.process_time() - c
        peak_mb = (resource.getrusage(resource.RUSAGE_SELF).ru_maxrss - rss0) / 1e3
        t = time.perf_counter()
        write_minimal_workbook(result, Path(tmp) / "minimal.xlsx", command="bench")
        minimal_s = time.perf_counter() - t
        t = time.perf_counter()
        write_result(result, Path(tmp) / "table.csv")
        csv_s = time.perf_counter() - t
        fast_ok, xlsx._fast_ok = xlsx._fast_ok, lambda ws: False
        try:
            t, c = time.perf_counter(), time.process_time()
            write_workbook(result, Path(tmp) / "percell.xlsx", command="bench")
            percell_s, percell_cpu_s = time.perf_counter() - t, time.process_time() - c
        finally:
            xlsx._fast_ok = fast_ok
        size = (Path(tmp) / "audit.xlsx").stat().st_size / 1e6
    print(f"result: {N_SERIES} series x {N_MONTHS} months x {N_DEFL} deflators; "
          f"audit workbook {size:.1f} MB")
    print(f"audit_s={audit_s:.2f} audit_cpu_s={audit_cpu_s:.2f} minimal_s={minimal_s:.2f} csv_s={csv_s:.2f} "
          f"ratio={audit_s / minimal_s:.2f} percell_s={percell_s:.2f} "
          f"percell_cpu_s={percell_cpu_s:.2f} speedup={percell_s / audit_s:.1f} "
          f"cpu_speedup={percell_cpu_s / audit_cpu_s:.1f} peak_mb={peak_mb:.0f} rows={rows}")


if __name__ == "__main__":
    main()
