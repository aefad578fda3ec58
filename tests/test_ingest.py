"""Intake (pipeline.ingest): accepted formats, layouts, number styles, and one file per
failure mode under tests/data/intake/ asserting the code AND the location."""

from __future__ import annotations

import io

import numpy as np
import openpyxl
import pandas as pd
import pytest
from conftest import DATA
from hypothesis import HealthCheck, example, given, settings
from hypothesis import strategies as st

from pipeline.errors import RealbasisError
from pipeline.ingest import (
    Intake,
    Table,
    detect_decimal,
    list_sheets,
    parse_numbers,
    read_file,
    read_table,
)
from pipeline.model import Frequency
from pipeline.settings import Settings

INTAKE = DATA / "intake"


def f(name: str):
    return INTAKE / name


def codes(intake: Intake) -> list[str]:
    return [p.code for p in intake.problems]


# --- accepted formats -----------------------------------------------------------------

def test_wide_comma_csv_with_units_in_headers_and_number_styles():
    r = read_file(f("wide_comma.csv"))
    assert (r.layout, r.format, r.delimiter, r.decimal, r.encoding) == (
        "wide", "csv", "comma", ".", "utf-8")
    assert r.problems == ()
    rev = r.get("Revenue")
    assert rev.unit == "USD thousands" and rev.kind == "flow"
    assert rev.frequency == Frequency("M")
    # "1,234.50" thousands separator; "(1,234)" accounting negative (common practice);
    # n/a is missing
    assert rev.values.tolist()[:2] == [1234.5, -1000.0]
    assert np.isnan(rev.values.iloc[2])
    sp = r.get("Spending")
    assert sp.unit == "$m" and sp.values.tolist()[:2] == [12.0, 13.0]  # "$12", "€13"
    cpi = r.get("Consumer price index")
    assert cpi.kind == "index" and cpi.reference == "2024"
    assert cpi.notes[0] == "kind 'index' from the unit '2024=100'"  # the unit decides


def test_semicolon_decimal_comma_month_names():
    r = read_file(f("wide_semicolon_decimal_comma.csv"))
    assert (r.delimiter, r.decimal) == ("semicolon", ",")
    assert r.get("Revenue").values.tolist()[:2] == [1234.5, 2000.25]  # 1.234,5 and 2.000,25
    assert r.get("Cost").values.tolist() == [12.5, 13.0, 14.75]
    assert r.get("Revenue").index[0] == pd.Period("2024-01", "M")


def test_tab_separated_quarters():
    r = read_file(f("wide_tab.csv"))
    assert r.delimiter == "tab"
    s = r.get("Revenue")
    assert s.frequency == Frequency("Q") and s.kind == "flow"  # 'revenue' is a flow word
    assert s.values.tolist() == [100.0, 110.0, 120.0]


def test_utf8_bom_and_cp1252():
    r = read_file(f("utf8_bom.csv"))
    assert r.encoding == "utf-8-sig" and r.series[0].name == "Revenue"
    c = read_file(f("cp1252.csv"))
    assert c.encoding == "cp1252"
    s = c.series[0]
    assert s.name == "Café sales" and s.unit == "£" and s.values.tolist() == [1.0, 2.0]


def test_utf16_with_bom_from_spreadsheet_unicode_text():
    text = "period\tRevenue\n2024-01\t5\n2024-02\t6\n"
    r = read_file(text.encode("utf-16"), filename="export.txt")
    assert r.encoding == "utf-16" and r.get("Revenue").values.tolist() == [5.0, 6.0]


def test_long_layout_with_unit_status_vintage():
    r = read_file(f("long.csv"))
    assert r.layout == "long" and r.problems == ()
    idx = r.get("Fixed-basket consumer index")
    assert idx.kind == "index" and idx.unit == "index" and idx.vintage == "2025-03-15"
    assert idx.reference is None  # the unit 'index' names no reference period
    assert idx.status.tolist() == ["final", "preliminary", "projected"]
    assert idx.stretches() == {"preliminary": ("2024-02", "2024-02"),
                               "projected": ("2024-03", "2024-03")}
    rev = r.get("Revenue")
    assert rev.frequency == Frequency("Q") and rev.unit == "USD" and rev.status is None


def test_long_layout_several_vintages_of_one_index():
    text = ("series,period,value,vintage,unit\n"
            "Idx,2024-01,100,2025-01-15,index 2024-01=100\nIdx,2024-02,101,2025-01-15,\n"
            "Idx,2024-01,100,2025-04-15\nIdx,2024-02,101.3,2025-04-15\n")
    r = read_file(text.encode(), filename="v.csv")
    assert r.problems == ()
    assert r.series[0].reference == "2024-01"
    assert sorted((s.name, s.vintage, s.values.iloc[1]) for s in r.series) == [
        ("Idx", "2025-01-15", 101.0), ("Idx", "2025-04-15", 101.3)]


def test_sdmx_csv_keys_units_and_observation_status():
    # SDMX-CSV (SDMX 2.1 CSV format): one row per observation, dimensions before
    # TIME_PERIOD, OBS_VALUE, then attributes. OBS_STATUS P = provisional, F = forecast
    # (code list CL_OBS_STATUS, from memory).
    r = read_file(f("sdmx.csv"))
    assert r.layout == "sdmx" and r.problems == ()
    px = r.get("M.ZZ.PX")
    assert px.frequency == Frequency("M") and px.unit == "IX"
    assert px.status.tolist() == ["final", "final", "preliminary"]
    sp = r.get("Q.ZZ.SP")
    assert sp.frequency == Frequency("Q") and sp.unit == "USD x10^6"
    assert sp.status.tolist() == ["final", "projected"]


def test_fiscal_span_column_and_transposed_budget_table():
    r = read_file(f("fiscal_span.csv"), fy_start=7)
    s = r.series[0]
    # 2021-22 with a July start is FY2022 (labelled by the year it ends; common practice)
    assert s.frequency == Frequency("FY", 7)
    assert s.frequency.labels(s.index) == ["FY2022", "FY2023", "FY2024"]
    assert s.unit == "$m"
    t = read_file(f("transposed_fy.csv"), fy_start=10)
    assert t.layout == "wide"
    bus = t.get("Bus operations")
    assert bus.frequency == Frequency("FY", 10)
    assert bus.frequency.labels(bus.index) == ["FY2023", "FY2024", "FY2025"]
    assert bus.values.tolist() == [10.0, 11.0, 12.0]


def test_xlsx_sheets_dates_and_choice():
    assert list_sheets(f("workbook.xlsx")) == ("About", "Monthly", "Annual")
    r = read_file(f("workbook.xlsx"))  # first sheet with data rows
    assert (r.format, r.sheet, r.sheets) == ("xlsx", "Monthly", ("About", "Monthly", "Annual"))
    sales = r.get("Store sales")
    assert sales.unit == "USD" and sales.frequency == Frequency("M")
    assert sales.values.iloc[:2].tolist() == [1200.5, 1310.25]
    a = read_file(f("workbook.xlsx"), sheet="Annual")
    assert a.get("Payroll").frequency == Frequency("A")
    assert a.get("Payroll").values.tolist() == [5000.0, 5200.0]


def test_xlsx_from_bytes_row_numbers_are_sheet_rows():
    wb = openpyxl.Workbook()
    ws = wb.active
    ws.title = "Data"
    ws.append(["Illustrative"])  # title row above the table
    ws.append([])
    ws.append(["period", "Revenue"])
    ws.append(["2024-01", 1])
    ws.append(["2024-02", "oops"])
    buf = io.BytesIO()
    wb.save(buf)
    r = read_file(buf.getvalue(), filename="b.xlsx")
    (p,) = r.errors
    assert (p.code, p.where.row, p.where.column, p.where.sheet) == ("IN011", 5, "Revenue", "Data")


def test_kinds_override_and_guesses():
    r = read_file(f("wide_comma.csv"), kinds={"Revenue": "stock"})
    assert r.get("Revenue").kind == "stock"
    assert r.get("Revenue").notes == ("kind 'stock' given by the user",)
    text = "period,Cash balance,Deflator,Visitors\n2024-01,5,99,7\n2024-02,6,100,8\n"
    g = read_file(text.encode(), filename="k.csv")
    assert [s.kind for s in g.series] == ["stock", "index", "flow"]
    with pytest.raises(RealbasisError) as e:
        read_file(f("wide_comma.csv"), kinds={"Revenue": "level"})  # type: ignore[dict-item]
    assert e.value.code == "IN021"
    w = read_file(f("wide_comma.csv"), kinds={"Nope": "flow"})
    assert codes(w) == ["IN022"] and w.problems[0].severity == "warning"


def test_wide_status_column_applies_to_every_series():
    text = "period,Idx,status\n2024-01,100,final\n2024-02,101,p\n"
    s = read_file(text.encode(), filename="s.csv").get("Idx")
    assert s.status.tolist() == ["final", "preliminary"]


def test_iso_dates_at_quarter_starts_are_quarters():
    text = "date,Revenue\n2024-01-01,1\n2024-04-01,2\n2024-07-01,3\n"
    s = read_file(text.encode(), filename="d.csv").series[0]
    assert s.frequency == Frequency("Q")


# --- numbers --------------------------------------------------------------------------

@pytest.mark.parametrize(
    ("text", "decimal", "value"),
    [
        ("1,234.5", ".", 1234.5), ("1234.5", ".", 1234.5), ("(1,234)", ".", -1234.0),
        ("$1,234", ".", 1234.0), ("-$1,234.50", ".", -1234.5), ("$-12", ".", -12.0),
        ("USD 12", ".", 12.0), ("12 EUR", ".", 12.0), ("£7.4", ".", 7.4), ("¥1,000", ".", 1000.0),
        ("€ 3", ".", 3.0), ("1e3", ".", 1000.0), (" 42 ", ".", 42.0), ("1 234.5", ".", 1234.5),
        ("1.234,5", ",", 1234.5), ("12,5", ",", 12.5), ("(1.234,50)", ",", -1234.5),
        ("1 234,5", ",", 1234.5), ("1'234.5", ".", 1234.5), ("US$5", ".", 5.0),
    ],
)
def test_number_styles(text, decimal, value):
    out, bad = parse_numbers(pd.Series([text], dtype=str), decimal)
    assert not bad[0] and out[0] == pytest.approx(value)


@pytest.mark.parametrize("text", ["", "n/a", "N/A", "NA", "-", "--", "..", "null", "NaN"])
def test_missing_markers(text):
    out, bad = parse_numbers(pd.Series([text], dtype=str))
    assert np.isnan(out[0]) and not bad[0]


@pytest.mark.parametrize("text", ["abc", "12..5", "1,2,3", "inf", "1.2.3", "$", "5%", "1,23,4.5"])
def test_not_numbers(text):
    out, bad = parse_numbers(pd.Series([text], dtype=str))
    assert bad[0] and np.isnan(out[0])


def test_decimal_detection_per_file():
    # decimal comma with '.' or space for thousands, and ';' as the field separator where
    # the comma is the decimal mark (common practice in continental European exports)
    assert detect_decimal(pd.Series(["1.234,5", "12"], dtype=str)) == ","
    assert detect_decimal(pd.Series(["1,234.5", "12"], dtype=str)) == "."
    # 1,234 alone is ambiguous: point, unless the file is semicolon-separated
    assert detect_decimal(pd.Series(["1,234"], dtype=str)) == "."
    assert detect_decimal(pd.Series(["1,234"], dtype=str), "semicolon") == ","


# --- one file per failure mode: code and location --------------------------------------

@pytest.mark.parametrize(
    ("name", "code", "row", "column"),
    [
        ("empty.csv", "IN003", None, None),
        ("header_only.csv", "IN003", 1, None),
        ("unknown_encoding.csv", "IN004", None, None),
        ("legacy.xls", "IN027", None, None),  # read by calamine; this one is junk
        ("ragged.csv", "IN007", 4, None),
        ("no_period.csv", "IN009", None, None),
        ("duplicate_columns.csv", "IN017", 1, "revenue"),
        ("no_value_columns.csv", "IN018", None, None),
        ("sdmx_no_obs_value.csv", "IN019", None, None),
        ("corrupt.xlsx", "IN027", None, None),
        ("mixed_frequency_wide.csv", "PE103", 5, "period"),
        ("fiscal_without_start.csv", "PE102", None, "period"),
        ("fiscal_span.csv", "PE102", None, "Fiscal year"),
    ],
)
def test_structural_failures_stop_at_once(name, code, row, column):
    with pytest.raises(RealbasisError) as e:
        read_file(f(name))
    p = e.value.problems[0]
    assert p.code == code
    assert p.where.file == name
    assert (p.where.row, p.where.column) == (row, column)
    assert p.expected and p.found and p.fix


@pytest.mark.parametrize(
    ("name", "code", "severity", "locations"),
    [
        ("bad_period.csv", "IN010", "error", [(4, "period")]),
        ("bad_number.csv", "IN011", "error", [(3, "Revenue"), (4, "Cost")]),  # all collected
        ("duplicate_period.csv", "IN012", "error", [(4, "period")]),
        ("mixed_frequency_long.csv", "IN014", "error", [(4, "period")]),
        ("nonpositive_index.csv", "IN015", "error",
         [(3, "Price index (2024-01=100)"), (4, "Price index (2024-01=100)")]),
        ("bad_status.csv", "IN016", "error", [(3, "status")]),
        ("missing_series_name.csv", "IN020", "error", [(3, "series")]),
        ("bad_vintage.csv", "IN023", "error", [(3, "vintage")]),
        ("gap.csv", "IN013", "warning", [(None, None)]),
        ("several_units.csv", "IN024", "warning", [(None, None)]),
        ("title_lines.csv", "IN026", "warning", [(1, None)]),
        ("blank_header.csv", "IN028", "warning", [(1, "column 3")]),
    ],
)
def test_cell_problems_are_all_collected(name, code, severity, locations):
    r = read_file(f(name))
    mine = [p for p in r.problems if p.code == code]
    assert [(p.where.row, p.where.column) for p in mine] == locations
    assert all(p.severity == severity and p.where.file == name for p in mine)
    if severity == "error":
        with pytest.raises(RealbasisError) as e:
            r.raise_for_errors()
        assert code in e.value.codes
    else:
        r.raise_for_errors()  # warnings never raise


def test_gap_warning_names_missing_periods_and_values_stay_on_full_range():
    r = read_file(f("gap.csv"))
    (p,) = r.problems
    assert p.where.series == "Revenue" and p.where.period == "2024-03"
    assert "2024-03, 2024-04" in p.found
    s = r.series[0]
    assert len(s.values) == 6 and s.values.isna().sum() == 2


def test_duplicate_keeps_first_and_mixed_series_is_left_out():
    d = read_file(f("duplicate_period.csv")).series[0]
    assert d.values.tolist() == [1.0, 2.0, 4.0]
    m = read_file(f("mixed_frequency_long.csv"))
    assert [s.name for s in m.series] == ["Cost"]


def test_size_and_row_limits_refuse_clearly():
    with pytest.raises(RealbasisError) as e:
        read_file(f("long.csv"), settings=Settings(max_upload_bytes=50))
    assert e.value.code == "IN001" and "max_upload_bytes" in e.value.problems[0].expected
    with pytest.raises(RealbasisError) as e:
        read_file(f("long.csv"), settings=Settings(max_rows=3))
    assert e.value.code == "IN002" and "max_rows" in e.value.problems[0].expected
    assert read_file(f("long.csv"), settings=Settings(max_rows=5)).rows == 5


def test_missing_file_and_sheet():
    with pytest.raises(RealbasisError) as e:
        read_file(INTAKE / "does-not-exist.csv")
    assert e.value.code == "IN006"
    with pytest.raises(RealbasisError) as e:
        read_file(f("workbook.xlsx"), sheet="Nope")
    assert e.value.code == "IN008" and "'Monthly'" in e.value.problems[0].expected
    with pytest.raises(RealbasisError) as e:
        read_file(f("wide_tab.csv"), sheet="Data")
    assert e.value.code == "IN008"


def test_fy_start_is_checked():
    with pytest.raises(RealbasisError) as e:
        read_file(f("wide_tab.csv"), fy_start=13)
    assert e.value.code == "PE104"


# --- fuzz: every input is an Intake or a coded RealbasisError ---------------------------

def _check(data: bytes, filename: str) -> None:
    try:
        r = read_file(data, filename=filename, fy_start=7)
    except RealbasisError as e:
        assert e.code[:2] in ("IN", "PE")
    else:
        assert isinstance(r, Intake)
        for s in r.series:
            assert s.values.index.is_monotonic_increasing and s.values.index.is_unique


_cell = st.one_of(
    st.sampled_from(["2024-01", "2024Q1", "FY2025", "2024-25", "Jan 2024", "2024", "x", "",
                     "1,234.5", "(12)", "$5", "n/a", "-", "1.234,5", "index", "final", "p",
                     "series", "period", "value", "TIME_PERIOD", "OBS_VALUE", '"', "'", "\t"]),
    st.text(alphabet="0123456789,.;-()$€QMFY/ \"", max_size=8),
)


@settings(max_examples=150, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(st.lists(st.lists(_cell, min_size=1, max_size=5), min_size=0, max_size=8),
       st.sampled_from([",", ";", "\t"]), st.sampled_from(["utf-8", "cp1252", "utf-8-sig"]))
@example([["OBS_VALUE", "TIME_PERIOD"], ["2024-01"]], ",", "utf-8")  # once crashed: no rows left
def test_fuzz_near_csv_text(rows, sep, encoding):
    text = "\n".join(sep.join(r) for r in rows)
    try:
        data = text.encode(encoding)
    except UnicodeEncodeError:
        data = text.encode("utf-8")
    _check(data, "fuzz.csv")


@settings(max_examples=150, deadline=None)
@given(st.binary(max_size=300), st.sampled_from(["fuzz.csv", "fuzz.xlsx", "fuzz.txt"]))
def test_fuzz_random_bytes(data, filename):
    _check(data, filename)


@settings(max_examples=40, deadline=None)
@given(st.binary(max_size=200))
def test_fuzz_bytes_behind_a_zip_signature(tail):
    _check(b"PK\x03\x04" + tail, "fuzz.xlsx")


def test_date_value_file_takes_its_name_from_the_file_and_long_extras_are_reported():
    r = read_file(b"date,value\n2024-01-31,1\n2024-02-29,2\n", filename="store_sales.csv")
    assert [s.name for s in r.series] == ["store_sales"]
    text = b"series,period,value,comment\nRevenue,2024-01,1,checked\n"
    w = read_file(text, filename="c.csv")
    assert codes(w) == ["IN025"] and w.problems[0].where.column == "comment"


def test_slashed_dates_of_unclear_order_are_refused_with_the_column():
    with pytest.raises(RealbasisError) as e:
        read_file(b"Date,Revenue\n3/4/2024,1\n4/5/2024,2\n", filename="s.csv")
    assert e.value.code == "PE106" and e.value.problems[0].where.column == "Date"
    r = read_file(b"Date,Revenue\n31/1/2024,1\n29/2/2024,2\n", filename="s.csv")
    assert r.series[0].index[1] == pd.Period("2024-02", "M")


def test_row_limit_is_not_fooled_by_blank_lines_or_titles():
    text = "Illustrative title\n\n\nperiod,Revenue\n\n2024-01,1\n\n2024-02,2\n2024-03,3\n2024-04,4\n"
    with pytest.raises(RealbasisError) as e:
        read_file(text.encode(), filename="t.csv", settings=Settings(max_rows=3))
    assert e.value.code == "IN002"
    r = read_file(text.encode(), filename="t.csv", settings=Settings(max_rows=4))
    assert r.rows == 4 and r.series[0].values.tolist() == [1.0, 2.0, 3.0, 4.0]
    wb = openpyxl.Workbook()
    ws = wb.active
    for row in (["Title"], ["Subtitle"], ["period", "Revenue"], ["2024-01", 1], ["2024-02", 2]):
        ws.append(row)
    buf = io.BytesIO()
    wb.save(buf)
    with pytest.raises(RealbasisError) as e:
        read_file(buf.getvalue(), filename="t.xlsx", settings=Settings(max_rows=1))
    assert e.value.code == "IN002"


def test_budget_table_with_amounts_like_years_is_read_across():
    # amounts 2100, 1500 would also parse as years: the header row of fiscal years wins
    text = b"Program,FY2023,FY2024\nBus operations,2100,2200\nRail operations,1500,1600\n"
    r = read_file(text, filename="b.csv", fy_start=7)
    assert [s.name for s in r.series] == ["Bus operations", "Rail operations"]
    assert r.get("Bus operations").values.tolist() == [2100.0, 2200.0]
    # a period column that is not first is still found
    r2 = read_file(b"Segment note,Month,Revenue\nx,2024-01,5\ny,2024-02,6\n", filename="m.csv")
    assert r2.get("Revenue").values.tolist() == [5.0, 6.0]


def test_units_row_under_the_header():
    r = read_file(f("units_row.csv"))
    assert r.rows == 2 and r.problems == ()
    assert r.get("Revenue").unit == "USD thousands"
    idx = r.get("Consumer index")
    assert idx.unit == "index 2020=100" and idx.reference == "2020" and idx.kind == "index"


def test_ragged_row_below_title_lines_is_located_on_its_file_line():
    with pytest.raises(RealbasisError) as e:
        read_file(b"Title line\n\nperiod,Revenue\n2024-01,1\n2024-02,1,3\n", filename="r.csv")
    assert (e.value.code, e.value.problems[0].where.row) == ("IN007", 5)


# --- quoted fields (RFC 4180) and header cells that are names --------------------------
# RFC 4180 ("Common Format and MIME Type for CSV Files", section 2, rules 5-7): a field
# in double quotes may hold the delimiter, line breaks, and quotes written twice ("").
# The same quoting is honoured for semicolon and tab files (common practice).

def test_long_csv_with_quoted_commas_in_series_names():
    r = read_file(f("quoted_long.csv"))
    assert (r.layout, r.delimiter, r.rows, r.problems) == ("long", "comma", 6, ())
    idx = r.get("Producer index, apparel and outdoor goods")
    assert idx.unit == "index 2015=100" and idx.kind == "index" and idx.reference == "2015"
    assert idx.values.tolist() == [101.2, 101.9, 102.4]
    assert idx.status.tolist() == ["final", "final", "preliminary"]
    sales = r.get('Harbourline "Coastal" store, sales')  # "" is one quote
    assert sales.values.tolist() == [1250.5, 1310.0, 1402.25]


def test_semicolon_and_tab_files_with_quoted_delimiters():
    s = read_file(f("quoted_semicolon.csv"))
    assert (s.delimiter, s.decimal, s.rows, s.problems) == ("semicolon", ",", 3, ())
    assert s.get("Fares; buses").unit == "EUR"
    assert s.get("Fares; buses").values.tolist() == [1234.5, 1300.0, 1350.25]
    assert s.get('Fares "rail"').values.tolist() == [2.5, 3.5, 4.0]
    t = read_file(f("quoted_tab.csv"))
    assert (t.delimiter, t.rows, t.problems) == ("tab", 3, ())
    assert t.get("Revenue\tnet").unit == "USD"
    assert t.get("Revenue\tnet").values.tolist() == [100.0, 110.0, 120.0]
    assert t.get("Cost").values.tolist() == [1.0, 2.0, 3.0]


def test_quoted_line_breaks_keep_records_whole_and_rows_on_file_lines():
    r = read_file(f("quoted_line_break.csv"))
    assert r.rows == 3
    fare = r.get("Fare revenue")
    assert fare.unit == "USD thousands" and fare.values.tolist() == [10.0, 11.0, 12.0]
    cost = r.get('Operating cost, "all modes"')
    assert cost.unit == "USD thousands" and np.isnan(cost.values.iloc[1])
    # the title line is skipped; 'oops' sits on file line 7 (header and the first data row
    # each span two or three lines)
    assert [(p.code, p.where.row) for p in r.problems] == [("IN011", 7), ("IN026", 1)]
    assert r.problems[0].where.column == 'Operating cost, "all modes"\n(USD thousands)'


def test_ragged_row_after_a_multi_line_record_is_located_on_its_file_line():
    # lines: 1-2 header (a quoted line break), 3 first data row, 4 the ragged row
    text = b'period,"Revenue\n(USD)"\n2024-01,1\n2024-02,1,3\n'
    with pytest.raises(RealbasisError) as e:
        read_file(text, filename="r.csv")
    assert (e.value.code, e.value.problems[0].where.row) == ("IN007", 4)


def test_formula_like_headers_are_names_kept_whole_and_the_header_row_is_found():
    # quoted header cells holding commas once made a data row look like the header
    # (IN017 on '5' twice); =HYPERLINK(...) is a name, not 'name (unit)'
    r = read_file(f("formula_headers.csv"))
    assert r.problems == () and r.rows == 3
    a = '=HYPERLINK("https://example.org/a","Revenue, north")'
    b = '=HYPERLINK("https://example.org/b","Revenue, south")'
    assert [s.name for s in r.series] == [a, b]
    assert r.get(a).unit is None and r.get(a).values.tolist() == [5.0, 6.0, 7.0]
    one = read_file(b'period,"=HYPERLINK(""x"",""y"")",Cost\n2024-01,1,2\n2024-02,3,4\n',
                    filename="h.csv")
    assert [(s.name, s.unit) for s in one.series] == [('=HYPERLINK("x","y")', None), ("Cost", None)]


@pytest.mark.parametrize(
    ("header", "name", "unit"),
    [
        ("Revenue (USD thousands)", "Revenue", "USD thousands"),
        ("Spending [$m]", "Spending", "$m"),
        ("Share (% of sales)", "Share", "% of sales"),
        ("Fares (USD/trip)", "Fares", "USD/trip"),
        ('=HYPERLINK("x","y")', '=HYPERLINK("x","y")', None),
        ("=SUM(A1,B1)", "=SUM(A1,B1)", None),
        ("@lookup(cost)", "@lookup(cost)", None),
        ("Sales (north (new))", "Sales (north (new))", None),
        ('Cost ("all")', 'Cost ("all")', None),
        ("Cost (; x)", "Cost (; x)", None),
    ],
)
def test_only_a_unit_like_trailing_bracket_group_is_a_unit(header, name, unit):
    text = f'period,"{header.replace(chr(34), chr(34) * 2)}"\n2024-01,1\n2024-02,2\n'
    s = read_file(text.encode(), filename="u.csv").series[0]
    assert (s.name, s.unit) == (name, unit)


def test_read_table_public_reader():
    t = read_table(f("quoted_line_break.csv"))
    assert isinstance(t, Table)
    assert t.header == ("period", "Fare revenue\n(USD thousands)",
                        'Operating cost, "all modes"\n(USD thousands)')
    assert t.cells[1].tolist() == ["10\n", "11", "12"]
    assert t.rows.tolist() == [5, 7, 8] and t.skipped == 1
    assert (t.format, t.delimiter, t.encoding, t.file) == ("csv", "comma", "utf-8",
                                                           "quoted_line_break.csv")
    assert [p.code for p in t.warnings] == ["IN026"]
    w = read_table(f("workbook.xlsx"), sheet="Annual")
    assert (w.format, w.sheet, w.sheets) == ("xlsx", "Annual", ("About", "Monthly", "Annual"))
    with pytest.raises(RealbasisError) as e:
        read_table(f("long.csv"), settings=Settings(max_rows=3))
    assert e.value.code == "IN002"
    with pytest.raises(RealbasisError) as e:
        read_table(f("long.csv"), settings=Settings(max_upload_bytes=50))
    assert e.value.code == "IN001"
    with pytest.raises(RealbasisError) as e:
        read_table(f("duplicate_columns.csv"))
    assert e.value.code == "IN017"


@settings(max_examples=120, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(st.sampled_from([",", ";", "\t"]), st.integers(1, 3), st.data())
def test_rfc4180_quoted_fields_round_trip(sep, width, data):
    # cells written by the standard library's csv writer (quotes only where needed,
    # quotes doubled) come back exactly, on the file lines where their records start
    import csv

    alphabet = "ab Z9.-\"\n" + sep
    cell = st.text(alphabet=alphabet, max_size=6)
    head = data.draw(st.lists(cell.map(lambda c: "h" + c.strip()), min_size=width, max_size=width,
                              unique_by=str.casefold))
    body = data.draw(st.lists(st.lists(cell, min_size=width, max_size=width), min_size=1,
                              max_size=5))
    rows = [["period", *head]] + [[f"2024-{i + 1:02d}", *r] for i, r in enumerate(body)]
    buf = io.StringIO()
    csv.writer(buf, delimiter=sep, lineterminator="\n").writerows(rows)
    lines, line = [], 1
    for r in rows:
        lines.append(line)
        one = io.StringIO()
        csv.writer(one, delimiter=sep, lineterminator="\n").writerow(r)
        line += one.getvalue().count("\n")
    t = read_table(buf.getvalue().encode(), filename="rt.csv")
    assert t.delimiter == {",": "comma", ";": "semicolon", "\t": "tab"}[sep]
    assert list(t.header) == [h.strip() for h in rows[0]]
    assert t.cells.values.tolist() == rows[1:]
    assert t.rows.tolist() == lines[1:]


@settings(max_examples=80, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(st.sampled_from([",", ";", "\t"]), st.data())
def test_unquoted_text_reads_the_same_split_or_through_the_csv_reader(sep, data):
    # few-line files without quotes are split with str.split (fast for wide tables);
    # the result must equal the CSV reader's, short rows padded with blanks
    from pipeline.intake import text as text_stage

    cell = st.text(alphabet="ab Z9.-$ ", max_size=5)
    width = data.draw(st.integers(1, 4))
    rows = data.draw(st.lists(st.lists(cell, min_size=1, max_size=width), min_size=1,
                              max_size=6))
    body = "\n".join(sep.join([f"2024-{i + 1:02d}", *r]) for i, r in enumerate(rows))
    raw = ("period" + "".join(f"{sep}h{j}" for j in range(width)) + "\n" + body + "\n").encode()
    try:
        split = read_table(raw, filename="u.csv")
    except RealbasisError as e:
        split = e.code
    saved = text_stage._PLAIN_LINES
    text_stage._PLAIN_LINES = -1
    try:
        try:
            reader = read_table(raw, filename="u.csv")
        except RealbasisError as e:
            reader = e.code
    finally:
        text_stage._PLAIN_LINES = saved
    if isinstance(split, str) or isinstance(reader, str):
        assert split == reader
    else:
        assert split.header == reader.header and split.rows.tolist() == reader.rows.tolist()
        assert split.values.tolist() == reader.values.tolist()
