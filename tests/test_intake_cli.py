"""The intake on the command line: kinds by a file's position in `realbasis deflate`,
sheets of the series and index workbooks, missing periods marked the same way in CSV,
JSON and the workbook, `realbasis check` printing the reading note and bounded problem
lists, zip-bomb workbooks refused with exit 2, and the preview of first rows raising only
coded errors. The files are invented and illustrative (plumbing tests)."""

from __future__ import annotations

import io
import json
import resource
import subprocess
import sys
import time
import zipfile
from pathlib import Path

import numpy as np
import openpyxl
import pandas as pd
import pytest
from conftest import DATA, ROOT
from hypothesis import HealthCheck, example, given, settings
from hypothesis import strategies as st

from pipeline.cli import main
from pipeline.errors import RealbasisError
from pipeline.ingest import preview

OUT = DATA / "intake" / "generated"
COLUMNS = ["series", "deflator", "period", "nominal", "deflator_index", "real", "status"]


@pytest.fixture(scope="module", autouse=True)
def _folder() -> None:
    OUT.mkdir(parents=True, exist_ok=True)


def run(capsys, *args: str) -> tuple[int, str, str]:
    code = main(list(args))
    out = capsys.readouterr()
    return code, out.out, out.err


def write(name: str, text: str) -> str:
    path = OUT / name
    path.write_text(text, encoding="utf-8")
    return str(path)


def index_csv() -> str:
    return write("index.csv", "period,Illustrative price index\n2024-01,100\n2024-02,101\n"
                 "2024-03,102\n2024-04,103\n")


# --- kinds by position ------------------------------------------------------------------

def test_series_file_columns_are_money_even_when_one_equals_100(capsys):
    # was CL251: a revenue column equal to 100 in one period was guessed an index
    series = write("hundred.csv", "period,Store takings\n2024-01,100\n2024-02,120\n2024-03,130\n")
    code, out, err = run(capsys, "deflate", series, "--index", index_csv(), "--base", "2024-01")
    assert code == 0, err
    table = pd.read_csv(io.StringIO(out))
    assert list(table.columns) == COLUMNS and table["nominal"].tolist() == [100, 120, 130]
    stock = write("stock.csv", "period,Cash balance\n2024-01,100\n2024-02,120\n")
    code, out, err = run(capsys, "deflate", stock, "--index", index_csv(), "--base", "2024-01",
                         "--kind", "Cash balance=stock")
    assert code == 0, err


def test_sdmx_index_file_with_an_index_unit_is_a_deflator(capsys):
    # was CL252: an SDMX-CSV key whose UNIT_MEASURE is an index was guessed a flow
    sdmx = write("sdmx_index.csv", "FREQ,REF_AREA,INDICATOR,TIME_PERIOD,OBS_VALUE,UNIT_MEASURE\n"
                 "M,ZZ,PX,2024-01,1000,IX\nM,ZZ,PX,2024-02,1010,IX\nM,ZZ,PX,2024-03,1020,IX\n")
    series = write("money.csv", "period,Fares\n2024-01,50\n2024-02,60\n2024-03,70\n")
    code, out, err = run(capsys, "deflate", series, "--index", sdmx, "--base", "2024-01")
    assert code == 0, err
    assert pd.read_csv(io.StringIO(out))["deflator"].tolist() == ["M.ZZ.PX"] * 3
    # a column of the index file told to be money is not a deflator
    code, out, err = run(capsys, "deflate", series, "--index", sdmx, "--base", "2024-01",
                         "--kind", "M.ZZ.PX=flow")
    assert code == 2 and "[CL252]" in err


def test_index_columns_in_the_series_file_are_said_and_not_deflated(capsys):
    series = write("mixed.csv", "period,Fares (USD),Local index (2024-01=100)\n"
                   "2024-01,50,100\n2024-02,60,101\n")
    code, out, err = run(capsys, "deflate", series, "--index", index_csv(), "--base", "2024-01")
    assert code == 0 and "[CL257]" in err
    assert set(pd.read_csv(io.StringIO(out))["series"]) == {"Fares"}


def test_sheet_options_for_the_series_and_each_index_workbook(capsys):
    wb = openpyxl.Workbook()
    wb.active.title = "Cover"
    wb.active.append(["Illustrative workbook"])
    a = wb.create_sheet("Money")
    for r in (["period", "Fares"], ["2024-01", 50], ["2024-02", 60]):
        a.append(r)
    b = wb.create_sheet("Prices")
    for r in (["period", "Fare index"], ["2024-01", 100], ["2024-02", 104]):
        b.append(r)
    path = OUT / "two_sheets.xlsx"
    wb.save(path)
    code, out, err = run(capsys, "deflate", str(path), "--sheet", "Money", "--index", str(path),
                         "--index-sheet", "Prices", "--base", "2024-01")
    assert code == 0, err
    table = pd.read_csv(io.StringIO(out))
    assert table["deflator"].tolist() == ["Fare index"] * 2
    assert table["real"].iloc[1] == pytest.approx(60 * 100 / 104)
    code, _, err = run(capsys, "deflate", str(path), "--index-sheet", "Prices",
                       "--index", str(path), "--base", "2024-01")
    assert code == 2 and "[CL255]" in err


# --- missing periods in outputs ---------------------------------------------------------

def test_missing_periods_keep_their_row_empty_in_csv_json_and_workbook(tmp_path, capsys):
    series = write("gap_money.csv", "period,Fares\n2024-01,50\n2024-02,\n2024-03,70\n")
    code, out, err = run(capsys, "deflate", series, "--index", index_csv(), "--base", "2024-01")
    assert code == 0
    assert "[IN032]" in err and "[DF011]" in err and "missing 2024-02" in err
    table = pd.read_csv(io.StringIO(out), dtype={"period": str})
    assert list(table.columns) == COLUMNS
    assert table["period"].tolist() == ["2024-01", "2024-02", "2024-03"]
    assert np.isnan(table["nominal"].iloc[1]) and np.isnan(table["real"].iloc[1])
    j = tmp_path / "r.json"
    assert main(["deflate", series, "--index", index_csv(), "--base", "2024-01",
                 "--out", str(j)]) == 0
    doc = json.loads(j.read_text())
    feb = next(r for r in doc["records"] if r["period"] == "2024-02")
    assert feb["nominal"] is None and feb["real"] is None
    assert any(w["code"] == "DF011" for w in doc["warnings"])
    x = tmp_path / "r.xlsx"
    assert main(["deflate", series, "--index", index_csv(), "--base", "2024-01",
                 "--out", str(x)]) == 0
    capsys.readouterr()
    book = openpyxl.load_workbook(x, read_only=True)
    sheet = book["Real terms"]
    rows = [r for r in sheet.iter_rows(values_only=True)]
    book.close()
    head = next(i for i, r in enumerate(rows) if r and "period" in r)
    cols = list(rows[head])
    feb_row = next(r for r in rows[head + 1:] if r[cols.index("period")] == "2024-02")
    assert feb_row[cols.index("nominal")] in (None, "") and feb_row[cols.index("real")] in (None, "")


# --- check ------------------------------------------------------------------------------

def test_check_prints_the_reading_note_and_missing_values(capsys):
    path = write("titled.csv", "Illustrative fares report\nUSD thousands\n\nperiod,Fares,Tolls\n"
                 "2024-01,1,5\n2024-02,n/a,6\n2024-03,3,7\n\nSource: invented for this test\n")
    code, out, _ = run(capsys, "check", path)
    assert code == 0
    assert "Reading note:" in out and "below the table skipped (footnotes)" in out
    assert "Problems: 0 error(s), 3 warning(s)" in out  # IN026, IN029, IN032
    assert "[IN032] a value is missing" in out and "period 2024-02" in out


def test_check_bounds_the_problem_list_and_counts_every_code(capsys):
    cells = ",".join(["bad"] * 50)
    lines = "".join(f"{p},{cells}\n" for p in pd.period_range("2000-01", periods=100, freq="M")
                    .strftime("%Y-%m"))
    path = write("many_bad.csv", "period," + ",".join(f"C{j}" for j in range(50)) + "\n" + lines)
    code, out, _ = run(capsys, "check", path)
    assert code == 2
    assert "Problems: 5,000 error(s), 0 warning(s) (201 listed" in out
    assert out.count("error [IN011]") == 200 and "[IN033]" in out


def test_check_markers_and_daily_options(capsys):
    path = write("letters.csv", "period,Fares\n2024-01,5\n2024-02,6x\n")
    code, out, _ = run(capsys, "check", path, "--marker", "x=projected")
    assert code == 0 and "projected 2024-02..2024-02" in out
    code, _, err = run(capsys, "check", path, "--marker", "x=perhaps")
    assert code == 2 and "[CL001]" in err
    days = write("days.csv", "date,Card sales\n2024-01-01,1\n2024-01-02,2\n2024-02-01,4\n")
    code, _, err = run(capsys, "check", days)
    assert code == 2 and err.startswith("[IN031]")
    code, out, _ = run(capsys, "check", days, "--daily-to-months")
    assert code == 0 and "Dates finer than months aggregated" in out


# --- zip bombs --------------------------------------------------------------------------

def bomb_xlsx(path: Path, megabytes: int = 150) -> int:
    """An .xlsx whose one sheet is ``megabytes`` of the same row repeated (honest sizes),
    packed to a few hundred kB; returns the file size."""
    row = ('<row><c t="inlineStr"><is><t>illustrative</t></is></c><c><v>1</v></c></row>'
           * 1000).encode()
    head = (b'<?xml version="1.0" encoding="UTF-8"?><worksheet xmlns="http://schemas.'
            b'openxmlformats.org/spreadsheetml/2006/main"><sheetData>')
    with zipfile.ZipFile(path, "w", zipfile.ZIP_DEFLATED, compresslevel=9) as z:
        z.writestr("[Content_Types].xml", '<?xml version="1.0"?><Types xmlns="http://schemas.'
                   'openxmlformats.org/package/2006/content-types"/>')
        z.writestr("xl/workbook.xml", '<?xml version="1.0"?><workbook xmlns="http://schemas.'
                   'openxmlformats.org/spreadsheetml/2006/main"><sheets><sheet name="Data" '
                   'sheetId="1"/></sheets></workbook>')
        with z.open("xl/worksheets/sheet1.xml", "w", force_zip64=True) as fh:
            fh.write(head)
            for _ in range(megabytes * 1024 * 1024 // len(row)):
                fh.write(row)
            fh.write(b"</sheetData></worksheet>")
    return path.stat().st_size


@pytest.mark.slow
def test_zip_bomb_workbook_exits_2_with_a_coded_message_and_bounded_memory(tmp_path):
    path = tmp_path / "bomb.xlsx"
    size = bomb_xlsx(path)
    assert size < 1_000_000  # 150 MB of sheet packed under 1 MB
    t0 = time.perf_counter()
    proc = subprocess.run([sys.executable, "-m", "pipeline.cli", "check", str(path)], cwd=ROOT,
                          capture_output=True, text=True, timeout=300)
    elapsed = time.perf_counter() - t0
    peak_mb = resource.getrusage(resource.RUSAGE_CHILDREN).ru_maxrss / 1024
    assert proc.returncode == 2, proc.stderr
    assert proc.stderr.startswith("[IN034]") and "Traceback" not in proc.stderr
    assert "max_zip_ratio" in proc.stderr
    # generous sanity bounds (the benchmark measures; this only catches a runaway)
    assert peak_mb < 1500, peak_mb
    print(f"bomb: {size / 1e3:.0f} kB, exit 2 in {elapsed:.1f} s, peak {peak_mb:.0f} MB")


# --- the preview of first rows ----------------------------------------------------------

@pytest.mark.parametrize(("data", "name"), [
    (b"", "empty.csv"), (b"\x93\xff", "two.csv"), (("h" * 131_073 + ",x\n1,2\n").encode(), "h.csv"),
    (b"PK\x03\x04" + b"junk" * 50, "junk.xlsx"), (b"\xd0\xcf\x11\xe0" + b"\0" * 100, "old.xls"),
], ids=["empty", "two-bytes", "long-header", "zip-junk", "ole-junk"])
def test_preview_raises_only_coded_errors(data, name):
    try:
        columns, rows = preview(data, name)
    except RealbasisError as e:
        assert e.code.startswith("IN")
    else:
        assert all(len(v) < 240 for r in rows for v in r.values())  # 200 and the length
        assert all(set(r) == set(columns) for r in rows)


def test_preview_shows_rows_as_written_titles_included():
    columns, rows = preview(b"Illustrative title\n\nperiod;Fares\n2024-01;1,5\n", "p.csv")
    assert columns == ["column 1", "column 2"]
    assert [r["column 1"] for r in rows] == ["Illustrative title", "", "period", "2024-01"]
    wb = openpyxl.Workbook()
    wb.active.append(["period", "Fares"])
    wb.active.append(["2024-01", 1.5])
    buf = io.BytesIO()
    wb.save(buf)
    columns, rows = preview(buf.getvalue(), "w.xlsx")
    assert rows == [{"column 1": "period", "column 2": "Fares"},
                    {"column 1": "2024-01", "column 2": "1.5"}]


@settings(max_examples=200, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(st.binary(max_size=400), st.sampled_from(["f.csv", "f.xlsx", "f.ods", "f.xls", "f.txt"]))
@example(b"PK\x03\x04", "f.xlsx")
@example(b"\xff\xfe\x00", "f.csv")
def test_fuzz_preview_any_bytes(data, name):
    try:
        preview(data, name)
    except RealbasisError as e:
        assert e.code[:2] in ("IN", "PE")


@settings(max_examples=60, deadline=None)
@given(st.binary(max_size=300))
def test_fuzz_preview_behind_a_zip_signature(tail):
    for name in ("f.xlsx", "f.ods"):
        try:
            preview(b"PK\x03\x04" + tail, name)
        except RealbasisError as e:
            assert e.code[:2] == "IN"
