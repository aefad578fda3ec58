"""`realbasis deflate`: the command-line contract (exit codes, exact CSV columns, coded
messages on stderr without a traceback). The files under tests/data/engine/ are invented
and illustrative, for plumbing only; correctness is proven in test_deflate.py."""

from __future__ import annotations

import json
import subprocess
import sys

import pandas as pd
import pytest
from conftest import DATA, ROOT

from pipeline.cli import main

ENGINE = DATA / "engine"
SERIES = str(ENGINE / "revenue_monthly.csv")
INDEX = str(ENGINE / "index_monthly.csv")
SHORT = str(ENGINE / "index_short.csv")
COLUMNS = ["series", "deflator", "period", "nominal", "deflator_index", "real", "status"]


def run_cli(*args: str) -> subprocess.CompletedProcess:
    return subprocess.run([sys.executable, "-m", "pipeline.cli", *args], cwd=ROOT,
                          capture_output=True, text=True, timeout=120)


def test_csv_out_has_exactly_the_contract_columns(tmp_path, capsys):
    out = tmp_path / "real.csv"
    code = main(["deflate", SERIES, "--index", INDEX, "--base", "FY2025", "--to", "FY",
                 "--fiscal-start", "7", "--out", str(out)])
    assert code == 0
    table = pd.read_csv(out, dtype={"period": str})
    assert list(table.columns) == COLUMNS
    assert table["period"].tolist() == ["FY2024", "FY2025", "FY2024", "FY2025"]
    assert table["series"].tolist()[0] == "Store revenue"
    # FY2025 real = sum over July 2024-June 2025 of nominal * 100 / rebased index
    idx = pd.read_csv(INDEX)["value"].to_numpy()
    rev = pd.read_csv(SERIES).iloc[:, 1].to_numpy()
    rebased = 100 * idx / idx[12:].mean()
    expected = (rev[12:] * 100 / rebased[12:]).sum()
    assert table["real"].iloc[1] == pytest.approx(expected, rel=1e-12)
    # the FY2025 base rests on two preliminary months: every value is at least preliminary
    assert set(table["status"]) == {"preliminary"}
    assert "wrote" in capsys.readouterr().err


def test_monthly_periods_are_written_canonically(tmp_path):
    out = tmp_path / "real.csv"
    assert main(["deflate", SERIES, "--index", INDEX, "--base", "2024-01..2024-12",
                 "--out", str(out)]) == 0
    table = pd.read_csv(out, dtype={"period": str})
    assert table["period"].iloc[0] == "2023-07"
    q = tmp_path / "q.csv"
    assert main(["deflate", SERIES, "--index", INDEX, "--base", "2024", "--to", "Q",
                 "--out", str(q)]) == 0
    assert pd.read_csv(q)["period"].iloc[0] == "2023Q3"


def test_no_out_prints_the_table(capsys):
    assert main(["deflate", SERIES, "--index", INDEX, "--base", "2024"]) == 0
    captured = capsys.readouterr()
    lines = captured.out.splitlines()
    assert lines[0] == ",".join(COLUMNS)
    assert len(lines) == 1 + 2 * 24
    assert "# caution:" in captured.err and "Constant 2024 dollars" in captured.err


def test_json_and_xlsx_outputs(tmp_path):
    j = tmp_path / "real.json"
    assert main(["deflate", SERIES, "--index", INDEX, "--base", "2024", "--out", str(j)]) == 0
    data = json.loads(j.read_text())
    assert data["columns"] == COLUMNS and data["base"] == "2024"
    assert data["cautions"] and data["method"] and len(data["records"]) == 48
    x = tmp_path / "real.xlsx"
    assert main(["deflate", SERIES, "--index", INDEX, "--base", "2024", "--out", str(x)]) == 0
    from openpyxl import load_workbook

    wb = load_workbook(x, read_only=True)
    assert wb.sheetnames == ["Summary", "Real terms", "Real - Consumer index", "Indexes used",
                             "Status flags", "Method"]  # the audit workbook (pipeline.workbook)
    header = next(wb["Real terms"].iter_rows(values_only=True))
    assert list(header) == COLUMNS
    wb.close()


def test_bad_base_exits_2_with_a_coded_message_and_no_traceback():
    r = run_cli("deflate", SERIES, "--index", INDEX, "--base", "someday")
    assert r.returncode == 2
    assert r.stderr.startswith("[PE101]") and "Traceback" not in r.stderr
    assert r.stdout == ""


def test_missing_index_periods_exit_2_listing_them(capsys):
    assert main(["deflate", SERIES, "--index", SHORT, "--base", "2024"]) == 2
    err = capsys.readouterr().err
    assert err.startswith("[DF001]") and "Traceback" not in err
    assert "missing 2025-03, 2025-04, 2025-05, 2025-06" in err
    assert "column 'Short index'" in err


def test_fiscal_output_needs_a_start_month(capsys):
    assert main(["deflate", SERIES, "--index", INDEX, "--base", "2024", "--to", "FY"]) == 2
    assert "[CL253]" in capsys.readouterr().err


def test_unknown_output_suffix(tmp_path, capsys):
    assert main(["deflate", SERIES, "--index", INDEX, "--base", "2024",
                 "--out", str(tmp_path / "real.txt")]) == 2
    assert "[EX001]" in capsys.readouterr().err


def test_index_file_without_indexes(capsys):
    assert main(["deflate", SERIES, "--index", SERIES, "--base", "2024"]) == 2
    assert "[CL252]" in capsys.readouterr().err


def test_usage_errors_are_coded():
    r = run_cli("deflate", SERIES, "--base", "2024")
    assert r.returncode == 2 and "[CL001]" in r.stderr and "Traceback" not in r.stderr
    with pytest.raises(SystemExit) as exc:
        main(["deflate", SERIES, "--index", INDEX, "--base", "2024", "--fiscal-start", "13"])
    assert exc.value.code == 2


def test_formula_like_text_is_neutralised_in_csv(tmp_path):
    # Spreadsheet formula injection: text starting with = + - @ tab or CR is prefixed with
    # a single quote (OWASP "CSV Injection", common practice).
    src = tmp_path / "odd.csv"
    src.write_text("period,=HYPERLINK(1) (USD)\n2024-01,10\n2024-02,11\n")
    out = tmp_path / "real.csv"
    assert main(["deflate", str(src), "--index", INDEX, "--base", "2024-01",
                 "--out", str(out)]) == 0
    first = out.read_text().splitlines()[1]
    assert first.startswith("'=HYPERLINK(1)")


def test_interpolated_values_get_a_flag_column_in_exports(tmp_path):
    # Decision (DEVELOPERS notes): interpolation is flagged in its own column, only when used.
    from pipeline.deflate import deflate
    from pipeline.export import write_result
    from pipeline.model import MONTHLY, QUARTERLY, Series

    s = Series("rev", pd.Series([1.0] * 6, index=pd.period_range("2024-01", periods=6, freq="M")),
               MONTHLY)
    d = Series("cpi", pd.Series([100.0, 103.0], index=pd.period_range("2024Q1", periods=2, freq="Q")),
               QUARTERLY, kind="index")
    res = deflate([s], [d], "2024Q1", interpolate=True)
    out = write_result(res, tmp_path / "real.csv")
    table = pd.read_csv(out)
    assert list(table.columns) == [*COLUMNS, "interpolated"]
    assert table["interpolated"].all()
