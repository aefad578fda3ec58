"""Benchmark: intake of a long and of a wide file, each against a bare pandas.read_csv of
the same file in the same run.

* long: a 1,000,000-row long CSV (500 series x 2,000 months); target ``intake_s`` <= 5 s.
* wide: 10,000 series x 240 months (one column per series, as a finance system exports a
  store or cost-centre ledger); ``read_file`` (parse, clean, build and validate every
  series) against ``pandas.read_csv`` (parse only); targets ``wide_ratio`` <= 4 and
  ``peak_mb`` <= 400 (the peak resident memory a fresh process adds while reading).
* unbounded work: 288,000 bad cells (1,200 months x 240 columns of text) and 500,000
  daily dates (10 series x 50,000 days) must give bounded problem lists in bounded time
  and memory (``bad_s``, ``bad_peak_mb``, ``daily_s``, ``daily_peak_mb``; the problems
  listed stay at 201 and one IN031).
* workbook: the same wide table, 1,000 series x 240 months, as .xlsx, read by the
  intake (python-calamine) against ``openpyxl`` in read-only mode (``xlsx_ratio`` is
  openpyxl's time over the intake's).

Each measurement runs in a fresh process (so peak memory is its own). Prints figures last
as key=value; the last line is ``…wide_s=… read_s=… wide_ratio=… peak_mb=…``. Run:
``python tests/benchmarks/bench_intake.py``.
"""

from __future__ import annotations

import json
import subprocess
import sys
import tempfile
import textwrap
from pathlib import Path

import numpy as np
import pandas as pd

ROOT = Path(__file__).resolve().parents[2]
N_SERIES, N_MONTHS = 500, 2000
WIDE_SERIES, WIDE_MONTHS = 10_000, 240
XLSX_SERIES = 1_000


def make_long(folder: Path) -> Path:
    rng = np.random.default_rng(7)
    periods = pd.period_range("1850-01", periods=N_MONTHS, freq="M").strftime("%Y-%m")
    names = np.array([f"Illustrative series {i:03d}" for i in range(N_SERIES)], dtype=object)
    frame = pd.DataFrame({
        "series": np.repeat(names, N_MONTHS),
        "period": np.tile(np.asarray(periods, dtype=object), N_SERIES),
        "value": np.round(rng.uniform(50, 5000, N_SERIES * N_MONTHS), 2),
        "unit": "USD",
    })
    path = folder / "long_1m.csv"
    frame.to_csv(path, index=False)
    return path


def wide_frame(series: int) -> pd.DataFrame:
    rng = np.random.default_rng(11)
    periods = pd.period_range("2005-01", periods=WIDE_MONTHS, freq="M").strftime("%Y-%m")
    values = np.round(rng.uniform(50, 5000, (WIDE_MONTHS, series)), 2)
    frame = pd.DataFrame(values, columns=[f"Illustrative store {i:05d} sales" for i in range(series)])
    frame.insert(0, "period", np.asarray(periods, dtype=object))
    return frame


def make_wide(folder: Path) -> Path:
    path = folder / "wide_10k.csv"
    wide_frame(WIDE_SERIES).to_csv(path, index=False)
    return path


def make_bad(folder: Path) -> Path:
    periods = pd.period_range("1900-01", periods=1200, freq="M").strftime("%Y-%m")
    line = ",".join(["oops"] * 240)
    path = folder / "bad_288k.csv"
    path.write_text("period," + ",".join(f"Illustrative centre {j}" for j in range(240)) + "\n"
                    + "".join(f"{p},{line}\n" for p in periods), encoding="utf-8")
    return path


def make_daily(folder: Path) -> Path:
    dates = pd.date_range("1900-01-01", periods=50_000, freq="D").strftime("%Y-%m-%d")
    frame = pd.DataFrame({"series": np.repeat([f"Illustrative {i}" for i in range(10)],
                                              len(dates)),
                          "date": np.tile(np.asarray(dates, dtype=object), 10), "value": 1.0})
    path = folder / "daily_500k.csv"
    frame.to_csv(path, index=False)
    return path


def make_xlsx(folder: Path) -> Path:
    path = folder / "wide_1k.xlsx"
    with pd.ExcelWriter(path, engine="openpyxl") as xl:
        wide_frame(XLSX_SERIES).to_excel(xl, index=False, sheet_name="Ledger")
    return path


# one measurement in a fresh interpreter: seconds and the resident memory it added
_PROBE = textwrap.dedent("""
    import json, resource, sys, time
    kind, path = sys.argv[1], sys.argv[2]
    import pandas as pd
    from pipeline.ingest import read_file
    from pipeline.settings import load_settings
    settings = load_settings({"max_upload_bytes": 10**9})
    before = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss
    t0 = time.perf_counter()
    if kind == "read_csv":
        n = len(pd.read_csv(path))
        series = n
    elif kind == "openpyxl":
        import openpyxl
        wb = openpyxl.load_workbook(path, read_only=True, data_only=True)
        n = sum(1 for _ in wb.active.iter_rows(values_only=True))
        wb.close()
        series = n
    elif kind == "problems":
        from pipeline.errors import RealbasisError
        try:
            r = read_file(path, settings=settings)
            n, series = len(r.problems), sum(r.problem_counts.values())
        except RealbasisError as e:
            n, series = len(e.problems), 1
    else:
        r = read_file(path, settings=settings)
        assert not r.errors, r.errors[:3]
        n, series = r.rows, len(r.series)
    seconds = time.perf_counter() - t0
    after = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss
    print(json.dumps({"s": seconds, "peak_mb": (after - before) / 1024, "rows": n,
                      "series": series}))
""")


def probe(kind: str, path: Path) -> dict:
    out = subprocess.run([sys.executable, "-c", _PROBE, kind, str(path)], cwd=ROOT,
                         capture_output=True, text=True, check=True)
    return json.loads(out.stdout.strip().splitlines()[-1])


def main() -> None:
    with tempfile.TemporaryDirectory() as tmp:
        folder = Path(tmp)
        long_path, wide_path, xlsx_path = make_long(folder), make_wide(folder), make_xlsx(folder)
        base = probe("read_csv", long_path)
        intake = probe("intake", long_path)
        assert intake["series"] == N_SERIES, intake
        wide_base = probe("read_csv", wide_path)
        wide = probe("intake", wide_path)
        assert wide["series"] == WIDE_SERIES, wide
        xlsx = probe("intake", xlsx_path)
        assert xlsx["series"] == XLSX_SERIES, xlsx
        opx = probe("openpyxl", xlsx_path)
        bad = probe("problems", make_bad(folder))
        daily = probe("problems", make_daily(folder))
        assert bad["rows"] == 201 and bad["series"] == 288_000, bad
        assert daily["rows"] == 1, daily
        print(f"long: rows={N_SERIES * N_MONTHS} series={N_SERIES} "
              f"file_mb={long_path.stat().st_size / 1e6:.1f} peak_mb={intake['peak_mb']:.0f}")
        print(f"baseline_read_csv_s={base['s']:.2f}")
        print(f"ratio={intake['s'] / base['s']:.1f}")
        print(f"intake_s={intake['s']:.2f}")
        print(f"xlsx: {XLSX_SERIES} series x {WIDE_MONTHS} months, "
              f"file_mb={xlsx_path.stat().st_size / 1e6:.1f}")
        print(f"xlsx_intake_s={xlsx['s']:.2f} openpyxl_rows_s={opx['s']:.2f} "
              f"xlsx_ratio={opx['s'] / xlsx['s']:.1f} xlsx_peak_mb={xlsx['peak_mb']:.0f}")
        print(f"bad cells: problems listed={bad['rows']} counted={bad['series']} "
              f"bad_s={bad['s']:.2f} bad_peak_mb={bad['peak_mb']:.0f}")
        print(f"daily dates: problems={daily['rows']} daily_s={daily['s']:.2f} "
              f"daily_peak_mb={daily['peak_mb']:.0f}")
        print(f"wide: {WIDE_SERIES} series x {WIDE_MONTHS} months, "
              f"file_mb={wide_path.stat().st_size / 1e6:.1f}, read_csv peak_mb="
              f"{wide_base['peak_mb']:.0f}")
        print(f"intake_s={intake['s']:.2f} wide_s={wide['s']:.2f} read_s={wide_base['s']:.2f} "
              f"wide_ratio={wide['s'] / wide_base['s']:.2f} peak_mb={wide['peak_mb']:.0f}")


if __name__ == "__main__":
    main()
