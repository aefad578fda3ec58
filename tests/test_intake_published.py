"""Files as organisations and agencies publish them: titles above and footnotes below the
table, status markers beside values, cover sheets, year and quarter columns, months
written 03/2024, a statsmodels dataset exactly as shipped, dates finer than months,
missing values, kinds by the file's role, and bounded problem lists.

Every file is made by code here and written under tests/data/intake/generated/ (ignored
by git), then read through the intake; each test asserts the series, the frequency, the
statuses and the reading note. Agencies' status letters (p preliminary, r revised, e
estimated, f forecast) and their titles and footnotes are common practice; the tables
themselves are invented and illustrative.
"""

from __future__ import annotations

import io
import zipfile
from pathlib import Path

import numpy as np
import openpyxl
import pandas as pd
import pytest
from conftest import DATA

from pipeline.errors import RealbasisError
from pipeline.ingest import read_file, read_table
from pipeline.model import Frequency
from pipeline.settings import Settings

OUT = DATA / "intake" / "generated"


@pytest.fixture(scope="module", autouse=True)
def _folder() -> None:
    OUT.mkdir(parents=True, exist_ok=True)


def codes(r) -> list[str]:
    return [p.code for p in r.problems]


def note_has(r, *words: str) -> bool:
    return any(all(w in line for w in words) for line in r.note)


# --- an agency-style workbook ----------------------------------------------------------

def agency_workbook() -> Path:
    """A cover sheet, then a table under two title rows with markers beside values and
    footnotes (a legend and a source line) under a blank row."""
    wb = openpyxl.Workbook()
    cover = wb.active
    cover.title = "Cover"
    cover.append(["Illustrative consumer index tables (invented; not official statistics)"])
    cover.append(["Contents: Table 1"])
    t = wb.create_sheet("Table 1")
    t.append(["Table 1. Fixed-basket consumer index, all items and two groups (illustrative)"])
    t.append(["Index 2020=100"])
    t.append([])
    t.append(["Month", "All items", "Food", "Energy"])
    rows = [("2024-01", 118.2, 121.0, 130.4), ("2024-02", "118.9r", 121.4, "131.0 r"),
            ("2024-03", "119.4", "122.0", 129.9), ("2024-04", "119.8 p", "122.3p", "130.2(p)"),
            ("2024-05", "120.1(p)", "122.9 (p)", "131.5p"), ("2024-06", "120.6f", "123.0f", "132.0f")]
    for r in rows:
        t.append(list(r))
    t.append([])
    t.append(["p = preliminary; r = revised; f = forecast"])
    t.append(["Source: illustrative figures made for this test."])
    path = OUT / "agency_index.xlsx"
    wb.save(path)
    return path


def test_agency_workbook_titles_markers_footnotes_and_cover_sheet():
    r = read_file(agency_workbook())
    assert (r.format, r.sheet, r.sheets) == ("xlsx", "Table 1", ("Cover", "Table 1"))
    assert [s.name for s in r.series] == ["All items", "Food", "Energy"]
    assert r.errors == ()
    # the cover sheet skipped and said; titles and footnotes skipped and said
    assert {"IN038", "IN026", "IN029"} <= set(codes(r))
    assert note_has(r, "Sheet 'Cover' skipped")
    assert note_has(r, "Row(s) 1–2 above the header skipped", "Table 1. Fixed-basket")
    assert note_has(r, "Row(s) 12–13 below the table skipped (footnotes)", "p = preliminary")
    assert note_has(r, "Marker legend", "p = preliminary", "r = final", "f = projected")
    assert note_has(r, "Status markers beside values", "p (preliminary)", "r (final)")
    allitems = r.get("All items")
    assert allitems.frequency == Frequency("M")
    assert allitems.values.tolist() == [118.2, 118.9, 119.4, 119.8, 120.1, 120.6]
    # r = revised counts as final, p preliminary, f forecast = projected (common practice)
    assert allitems.status.tolist() == ["final", "final", "final", "preliminary", "preliminary",
                                        "projected"]
    assert r.get("Energy").status.tolist() == allitems.status.tolist()
    # the title line's unit applies to every series: indexes, by their unit
    assert allitems.unit == "Index 2020=100" and allitems.reference == "2020"
    assert [s.kind for s in r.series] == ["index"] * 3
    assert allitems.notes == ("kind 'index' from the unit 'Index 2020=100'",)


def test_marker_meaning_can_be_overridden_and_unknown_letters_are_refused():
    path = agency_workbook()
    r = read_file(path, markers={"r": "preliminary"})
    assert r.get("All items").status.tolist()[1] == "preliminary"  # 118.9r
    text = b"period,Revenue\n2024-01,5\n2024-02,6x\n2024-03,7\n"
    bad = read_file(text, filename="x.csv")
    (p,) = bad.errors
    assert (p.code, p.where.row, p.where.column) == ("IN030", 3, "Revenue")
    assert "p (preliminary)" in p.expected
    ok = read_file(text, filename="x.csv", markers={"x": "projected"})
    assert ok.errors == () and ok.series[0].status.tolist() == ["final", "projected", "final"]
    with pytest.raises(RealbasisError) as e:
        read_file(text, filename="x.csv", markers={"x": "maybe"})
    assert e.value.code == "IN030"


def test_named_sheet_is_read_even_without_a_table_and_no_table_at_all_is_coded():
    path = agency_workbook()
    with pytest.raises(RealbasisError) as e:
        read_file(path, sheet="Cover")
    assert e.value.code in ("IN003", "IN009")
    wb = openpyxl.Workbook()
    wb.active.append(["Only a note"])
    buf = io.BytesIO()
    wb.save(buf)
    with pytest.raises(RealbasisError) as e:
        read_file(buf.getvalue(), filename="notes.xlsx")
    assert e.value.code == "IN003" and e.value.problems[0].remedy == "sheet"


# --- year and quarter columns; statsmodels' macrodata as shipped ------------------------

def test_statsmodels_macrodata_as_shipped_is_quarterly():
    # Source: statsmodels.datasets.macrodata (quarterly US macroeconomic data, 1959Q1 to
    # 2009Q3, 203 rows; separate 'year' and 'quarter' columns written as floats).
    from statsmodels.datasets import macrodata

    frame = macrodata.load_pandas().data
    path = OUT / "macrodata.csv"
    frame.to_csv(path, index=False)
    r = read_file(path)
    assert r.errors == ()
    assert len(r.series) == 12 and "year" not in [s.name for s in r.series]
    gdp = r.get("realgdp")
    assert gdp.frequency == Frequency("Q")
    assert len(gdp.values) == 203
    assert str(gdp.index[0]) == "1959Q1" and str(gdp.index[-1]) == "2009Q3"
    # values exactly as in the dataset
    assert np.allclose(gdp.values.to_numpy(), frame["realgdp"].to_numpy())
    assert gdp.values.iloc[0] == 2710.349  # statsmodels macrodata, first row
    assert all(s.status is None for s in r.series)  # every value final
    assert r.get("cpi").kind == "index"  # guessed from its name, said to be a guess
    assert "guessed" in r.get("cpi").notes[0]
    assert note_has(r, "Columns 'year' and 'quarter' combined into quarters", "1959Q1")
    assert note_has(r, "Kinds:", "guessed")


def test_year_and_month_columns_and_month_names():
    text = "Year,Month,Fares\n2024,1,10\n2024,2,11\n2024,Mar,12\n"
    r = read_file(text.encode(), filename="ym.csv")
    s = r.get("Fares")
    assert s.frequency == Frequency("M") and str(s.index[0]) == "2024-01"
    assert s.values.tolist() == [10.0, 11.0, 12.0]
    assert note_has(r, "Columns 'Year' and 'Month' combined into months")


@pytest.mark.parametrize(("label", "first"), [("03/2024", "2024-03"), ("3/2024", "2024-03"),
                                             ("2024/03", "2024-03"), ("202403", "2024-03")])
def test_month_year_forms(label, first):
    nxt = {"03/2024": "04/2024", "3/2024": "4/2024", "2024/03": "2024/04", "202403": "202404"}
    text = f"period,Revenue\n{label},1\n{nxt[label]},2\n"
    path = OUT / "months.csv"
    path.write_text(text, encoding="utf-8")
    r = read_file(path)
    s = r.get("Revenue")
    assert (s.frequency, str(s.index[0]), len(s.values)) == (Frequency("M"), first, 2)
    assert s.status is None and note_has(r, "Layout: wide", "'period'")


def test_six_digit_numbers_are_not_taken_for_months_in_an_amount_column():
    # an amount column of values like 202401 next to real period labels stays amounts
    r = read_file(b"Store,period,Sales\nA,2024-01,202401\nB,2024-02,202402\n", filename="a.csv")
    assert r.get("Sales").values.tolist() == [202401.0, 202402.0]


# --- dates finer than months ------------------------------------------------------------

def daily_text(days: int = 62) -> bytes:
    dates = pd.date_range("2024-01-01", periods=days, freq="D").strftime("%Y-%m-%d")
    return ("date,Cash balance,Card sales\n"
            + "".join(f"{d},{100 + i},{i % 7 + 1}\n" for i, d in enumerate(dates))).encode()


def test_daily_dates_are_refused_once_unless_asked_then_aggregated_by_kind():
    with pytest.raises(RealbasisError) as e:
        read_file(daily_text(), filename="daily.csv")
    assert e.value.codes == ("IN031",)
    p = e.value.problems[0]
    assert p.where.column == "date" and "'2024-01-01'" in p.found
    r = read_file(daily_text(), filename="daily.csv", daily=True)
    cash, sales = r.get("Cash balance"), r.get("Card sales")
    assert cash.frequency == Frequency("M") and len(cash.values) == 3  # Jan, Feb, Mar 2
    # a balance is a stock: the month's last day (Jan 31 -> 100 + 30); sales a flow: summed
    assert cash.kind == "stock" and cash.values.iloc[0] == 130.0
    assert sales.values.iloc[0] == sum(i % 7 + 1 for i in range(31))
    assert note_has(r, "Dates finer than months aggregated to months", "flows summed")


def test_500000_daily_dates_give_one_problem_not_half_a_million():
    # long layout: 500,000 daily observations of one series (dates repeat every 1,370
    # years would be needed otherwise, so several series share the dates)
    dates = pd.date_range("1900-01-01", periods=50_000, freq="D").strftime("%Y-%m-%d")
    frame = pd.DataFrame({"series": np.repeat([f"Illustrative {i}" for i in range(10)], len(dates)),
                          "date": np.tile(np.asarray(dates, dtype=object), 10),
                          "value": 1.0})
    data = frame.to_csv(index=False).encode()
    with pytest.raises(RealbasisError) as e:
        read_file(data, filename="days.csv")
    assert e.value.codes == ("IN031",) and len(str(e.value)) < 1000
    r = read_file(data, filename="days.csv", daily=True)
    assert len(r.series) == 10 and len(r.problems) <= 201


# --- missing values ---------------------------------------------------------------------

def test_missing_values_are_warnings_with_row_column_and_period():
    text = b"period,Revenue,Cost\n2024-01,1,5\n2024-02,,6\n2024-03,n/a,7\n2024-04,4,..\n2024-05,5,8\n2024-06,6,\n"
    r = read_file(text, filename="m.csv")
    missing = [p for p in r.problems if p.code == "IN032"]
    assert [(p.where.row, p.where.column, p.where.period, p.severity) for p in missing] == [
        (3, "Revenue", "2024-02", "warning"), (4, "Revenue", "2024-03", "warning"),
        (5, "Cost", "2024-04", "warning")]  # Cost's blank in 2024-06 is after its last value
    assert r.errors == ()
    assert np.isnan(r.get("Revenue").values.iloc[1])
    assert note_has(r, "3 value(s) missing inside a series", "never bridged")
    assert note_has(r, "1 blank cell(s) before a series' first value or after its last")
    long = read_file(b"series,period,value\nA,2024-01,1\nA,2024-02,-\nA,2024-03,3\n",
                     filename="l.csv")
    (p,) = [p for p in long.problems if p.code == "IN032"]
    assert (p.where.row, p.where.series, p.where.period) == (3, "A", "2024-02")


# --- bounded problem lists --------------------------------------------------------------

def test_288000_bad_cells_give_200_problems_and_counts_per_code():
    rows, cols = 1200, 240
    header = "period," + ",".join(f"Illustrative cost centre {j}" for j in range(cols))
    periods = pd.period_range("1900-01", periods=rows, freq="M").strftime("%Y-%m")
    line = ",".join(["oops"] * cols)
    text = header + "\n" + "".join(f"{p},{line}\n" for p in periods)
    r = read_file(text.encode(), filename="bad.csv")
    assert r.problem_counts["IN011"] == rows * cols == 288_000
    assert len(r.problems) == 201 and r.problems[-1].code == "IN033"
    assert "IN011 287,800" in r.problems[-1].found
    with pytest.raises(RealbasisError) as e:
        r.raise_for_errors()
    assert len(e.value.problems) == 201 and len(str(e.value)) < 100_000
    assert note_has(r, "288,000 problems found; the first 200 are listed")


def test_cells_are_echoed_at_most_80_characters():
    big = "x" * 30_000
    r = read_file(f"period,Revenue\n2024-01,{big}\n2024-02,1\n".encode(), filename="b.csv")
    (p,) = r.errors
    assert len(p.found) < 120 and "30,000 characters" in p.found


# --- kinds by the file's role -----------------------------------------------------------

def test_default_kind_is_the_files_role_and_the_unit_decides_over_it():
    text = (b"period,Revenue equal to 100 once,Consumer index (2020=100),Cash (USD)\n"
            b"2024-01,100,99,5\n2024-02,120,100,6\n")
    money = read_file(text, filename="s.csv", default_kind="flow")
    assert [s.kind for s in money.series] == ["flow", "index", "flow"]
    assert money.series[0].notes == ("kind 'flow' from the file's role (money amounts)",)
    index = read_file(text, filename="i.csv", default_kind="index")
    assert [s.kind for s in index.series] == ["index", "index", "flow"]
    told = read_file(text, filename="s.csv", default_kind="flow",
                     kinds={"Cash": "stock"})
    assert told.get("Cash").kind == "stock"
    sdmx = (b"FREQ,REF_AREA,INDICATOR,TIME_PERIOD,OBS_VALUE,UNIT_MEASURE\n"
            b"M,ZZ,PX,2024-01,98.1,IX\nM,ZZ,PX,2024-02,99.0,IX\n")
    s = read_file(sdmx, filename="x.csv", default_kind="flow").series[0]
    assert s.kind == "index" and s.notes == ("kind 'index' from the unit 'IX'",)


# --- encodings --------------------------------------------------------------------------

@pytest.mark.parametrize(("text", "encoding", "guess"), [
    ("period,うりあげ,しいれ\n2024-01,100,5\n2024-02,110,6\n", "shift_jis", "shift_jis"),
    ("период,Выручка магазина\n2024-01,100\n2024-02,110\n", "koi8_r", "koi8_r"),
])
def test_text_that_is_not_windows_1252_gets_a_coded_warning_naming_the_guess(text, encoding,
                                                                           guess):
    # bytes produced by Python's own codecs; read as Windows-1252 they are garbled
    data = text.encode(encoding)
    data.decode("cp1252")  # they do decode as Windows-1252
    r = read_file(data, filename="enc.csv")
    (p,) = [p for p in r.problems if p.code == "IN037"]
    assert p.severity == "warning" and guess in p.message
    assert note_has(r, "does not look like Windows-1252", guess)
    western = "période,Café crème,Müller Straße\n2024-01,1,2\n".encode("cp1252")
    assert "IN037" not in codes(read_file(western, filename="fr.csv"))


# --- workbooks of other programs --------------------------------------------------------

def ods_bytes(rows: list[list[object]], name: str = "Data") -> bytes:
    """A minimal OpenDocument spreadsheet (content.xml by hand, ODF 1.2)."""
    def cell(v: object) -> str:
        if isinstance(v, int | float):
            return (f'<table:table-cell office:value-type="float" office:value="{v}">'
                    f"<text:p>{v}</text:p></table:table-cell>")
        return f'<table:table-cell office:value-type="string"><text:p>{v}</text:p></table:table-cell>'
    body = "".join("<table:table-row>" + "".join(cell(v) for v in r) + "</table:table-row>"
                   for r in rows)
    content = ('<?xml version="1.0" encoding="UTF-8"?><office:document-content '
               'xmlns:office="urn:oasis:names:tc:opendocument:xmlns:office:1.0" '
               'xmlns:table="urn:oasis:names:tc:opendocument:xmlns:table:1.0" '
               'xmlns:text="urn:oasis:names:tc:opendocument:xmlns:text:1.0" office:version="1.2">'
               f'<office:body><office:spreadsheet><table:table table:name="{name}">{body}'
               "</table:table></office:spreadsheet></office:body></office:document-content>")
    buf = io.BytesIO()
    with zipfile.ZipFile(buf, "w") as z:
        z.writestr(zipfile.ZipInfo("mimetype"), "application/vnd.oasis.opendocument.spreadsheet")
        z.writestr("content.xml", content, compress_type=zipfile.ZIP_DEFLATED)
        z.writestr("META-INF/manifest.xml", '<?xml version="1.0" encoding="UTF-8"?>'
                   '<manifest:manifest xmlns:manifest="urn:oasis:names:tc:opendocument:xmlns:'
                   'manifest:1.0" manifest:version="1.2"><manifest:file-entry manifest:full-path'
                   '="/" manifest:media-type="application/vnd.oasis.opendocument.spreadsheet"/>'
                   "</manifest:manifest>")
    return buf.getvalue()


def test_ods_workbook_is_read_like_xlsx():
    data = ods_bytes([["Illustrative fares table"], ["period", "Fares (USD)"],
                      ["2024Q1", 10.5], ["2024Q2", "11.0p"]])
    path = OUT / "fares.ods"
    path.write_bytes(data)
    r = read_file(path)
    assert (r.format, r.sheet) == ("ods", "Data")
    s = r.get("Fares")
    assert s.frequency == Frequency("Q") and s.values.tolist() == [10.5, 11.0]
    assert s.status.tolist() == ["final", "preliminary"] and s.unit == "USD"
    assert read_table(path).header == ("period", "Fares (USD)")


def test_xls_signature_with_junk_is_a_coded_error():
    with pytest.raises(RealbasisError) as e:
        read_file(b"\xd0\xcf\x11\xe0\xa1\xb1\x1a\xe1" + b"\0" * 600, filename="old.xls")
    assert e.value.code == "IN027"


# --- unpacked-size checks ---------------------------------------------------------------

def xlsx_with_sheet(sheet_xml: bytes) -> bytes:
    """An .xlsx archive whose one sheet is ``sheet_xml`` (compressed as zip does)."""
    buf = io.BytesIO()
    with zipfile.ZipFile(buf, "w", zipfile.ZIP_DEFLATED, compresslevel=9) as z:
        z.writestr("[Content_Types].xml",
                   '<?xml version="1.0"?><Types xmlns="http://schemas.openxmlformats.org/package/'
                   '2006/content-types"><Default Extension="xml" ContentType="application/xml"/>'
                   '<Default Extension="rels" ContentType="application/vnd.openxmlformats-package.'
                   'relationships+xml"/><Override PartName="/xl/workbook.xml" ContentType="'
                   'application/vnd.openxmlformats-officedocument.spreadsheetml.sheet.main+xml"/>'
                   '<Override PartName="/xl/worksheets/sheet1.xml" ContentType="application/'
                   'vnd.openxmlformats-officedocument.spreadsheetml.worksheet+xml"/></Types>')
        z.writestr("_rels/.rels",
                   '<?xml version="1.0"?><Relationships xmlns="http://schemas.openxmlformats.org/'
                   'package/2006/relationships"><Relationship Id="rId1" Type="http://schemas.'
                   'openxmlformats.org/officeDocument/2006/relationships/officeDocument" '
                   'Target="xl/workbook.xml"/></Relationships>')
        z.writestr("xl/workbook.xml",
                   '<?xml version="1.0"?><workbook xmlns="http://schemas.openxmlformats.org/'
                   'spreadsheetml/2006/main" xmlns:r="http://schemas.openxmlformats.org/'
                   'officeDocument/2006/relationships"><sheets><sheet name="Data" sheetId="1" '
                   'r:id="rId1"/></sheets></workbook>')
        z.writestr("xl/_rels/workbook.xml.rels",
                   '<?xml version="1.0"?><Relationships xmlns="http://schemas.openxmlformats.org/'
                   'package/2006/relationships"><Relationship Id="rId1" Type="http://schemas.'
                   'openxmlformats.org/officeDocument/2006/relationships/worksheet" '
                   'Target="worksheets/sheet1.xml"/></Relationships>')
        z.writestr("xl/worksheets/sheet1.xml", sheet_xml)
    return buf.getvalue()


def sheet_xml(rows: list[str]) -> bytes:
    return ('<?xml version="1.0" encoding="UTF-8"?><worksheet xmlns="http://schemas.'
            'openxmlformats.org/spreadsheetml/2006/main"><sheetData>' + "".join(rows)
            + "</sheetData></worksheet>").encode()


def test_hand_made_xlsx_reads_and_far_cells_are_refused_before_opening():
    rows = ['<row r="1"><c r="A1" t="inlineStr"><is><t>period</t></is></c>'
            '<c r="B1" t="inlineStr"><is><t>Revenue</t></is></c></row>',
            '<row r="2"><c r="A2" t="inlineStr"><is><t>2024-01</t></is></c>'
            '<c r="B2"><v>5</v></c></row>']
    ok = read_file(xlsx_with_sheet(sheet_xml(rows)), filename="ok.xlsx")
    assert ok.get("Revenue").values.tolist() == [5.0]
    # one more cell far away: a used range of 1,048,576 rows x 16,384 columns
    far = [*rows, '<row r="1048576"><c r="XFD1048576"><v>1</v></c></row>']
    with pytest.raises(RealbasisError) as e:
        read_file(xlsx_with_sheet(sheet_xml(far)), filename="far.xlsx")
    assert e.value.code == "IN040"


def test_workbook_limits_on_unpacked_size_ratio_texts_and_cell_length():
    rows = ['<row r="1"><c r="A1" t="inlineStr"><is><t>period</t></is></c>'
            '<c r="B1" t="inlineStr"><is><t>Revenue</t></is></c></row>']
    rows += [f'<row r="{i}"><c r="A{i}" t="inlineStr"><is><t>2024-01</t></is></c>'
             f'<c r="B{i}"><v>1</v></c></row>' for i in range(2, 40_000)]
    data = xlsx_with_sheet(sheet_xml(rows))
    with pytest.raises(RealbasisError) as e:
        read_file(data, filename="big.xlsx", settings=Settings(max_unzipped_bytes=1_000_000))
    assert e.value.code == "IN034" and "max_unzipped_bytes" in e.value.problems[0].expected
    with pytest.raises(RealbasisError) as e:
        read_file(data, filename="big.xlsx", settings=Settings(max_zip_ratio=5))
    assert e.value.code == "IN034" and "max_zip_ratio" in e.value.problems[0].expected
    long_text = sheet_xml([f'<row r="1"><c r="A1" t="inlineStr"><is><t>{"y" * 40_000}</t></is>'
                           "</c></row>"])
    with pytest.raises(RealbasisError) as e:
        read_file(xlsx_with_sheet(long_text), filename="long.xlsx")
    assert e.value.code == "IN036"
    with pytest.raises(RealbasisError) as e:
        read_file(data, filename="big.xlsx", settings=Settings(max_columns=1))
    assert e.value.code == "IN035"


def test_a_part_that_unpacks_to_more_than_it_declares_is_refused():
    # the sizes in the archive's headers are the sender's word: patch the sheet's
    # declared size down to 1,000 bytes (local header offset 22, central directory 24)
    rows = [f'<row r="{i}"><c r="A{i}"><v>{i}</v></c><c r="B{i}"><v>1</v></c></row>'
            for i in range(1, 5000)]
    data = bytearray(xlsx_with_sheet(sheet_xml(rows)))
    name = b"xl/worksheets/sheet1.xml"
    import struct

    for sig, at in ((b"PK\x03\x04", 22), (b"PK\x01\x02", 24)):
        pos = 0
        while (pos := data.find(sig, pos)) >= 0:
            n = struct.unpack("<H", data[pos + (26 if sig == b"PK\x03\x04" else 28):][:2])[0]
            start = pos + (30 if sig == b"PK\x03\x04" else 46)
            if bytes(data[start: start + n]) == name:
                data[pos + at: pos + at + 4] = struct.pack("<I", 1000)
            pos += 4
    with pytest.raises(RealbasisError) as e:
        read_file(bytes(data), filename="liar.xlsx")
    assert e.value.code == "IN034" and "more than it declares" in e.value.problems[0].message
