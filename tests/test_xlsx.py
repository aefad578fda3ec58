"""The streaming sheet writer (pipeline.xlsx): the row-XML path of ``append_columns``
against xlsxwriter's own per-cell path, and what a spreadsheet reads back.

Sources: the cell XML (``<c r=".." s=".." t="inlineStr"><is><t>..</t></is></c>``, numbers
as ``<v>``, booleans ``t="b"``) is ECMA-376 Part 1, 18.3.1.4 (c) and 18.3.1.96 (v); the
per-cell path is xlsxwriter's constant-memory writer, which the fast path must match byte
for byte; the read-back uses openpyxl (an independent reader).
"""

from __future__ import annotations

import math
import zipfile

import numpy as np
import pytest
from openpyxl import load_workbook

from pipeline import xlsx
from pipeline.xlsx import Book, Style

TEXTS = ["plain", "=1+1", " leading space", "trailing ", "a & b < c > d", "tab\tinside",
         "ctrl\x01char", "_x0041_ literal", "ünïcödé €", "x" * 40000, "", "-5", "@cmd"]


def _build(path, *, after_row=True):
    rng = np.random.default_rng(7)
    n = 3000
    floats = rng.normal(0, 1e6, n)
    floats[::17] = np.nan
    floats[5] = np.inf
    floats[6] = -np.inf
    floats[7] = 0.1 + 0.2
    floats[8] = 1e-300
    texts = np.array([TEXTS[i % len(TEXTS)] for i in range(n)], dtype=object)
    texts[::11] = None
    ints = np.arange(n, dtype=np.int64) * 7 - 100
    bools = np.arange(n) % 3 == 0
    status = np.array(["final", "preliminary", "projected"] * (n // 3), dtype=object)
    with Book(path) as wb:
        ws = wb.create_sheet("Data")
        ws.width(1, 12)
        ws.freeze("B2")
        ws.append(["title row"], style=Style(bold=True))
        ws.append([])
        ws.append_columns([floats, texts, ints, bools, status, [float(x) for x in floats]],
                          header=["f", "t", "i", "b", "status", "list"],
                          fmts=["#,##0.00", None, "0", None, None, None],
                          looks=[None, None, None, None,
                                 {"preliminary": Style(fill="FFF2CC"),
                                  "projected": Style(fill="F4CCCC")}, None])
        if after_row:
            ws.append(["after", 1.5, True])
        ws2 = wb.create_sheet("Second")
        ws2.append_columns([np.array([1.0, 2.0])], header=["only"])


def _sheets(path):
    with zipfile.ZipFile(path) as z:
        return {n: z.read(n) for n in z.namelist() if n.startswith("xl/worksheets/")
                or n == "xl/styles.xml"}


def test_row_xml_path_writes_the_same_sheets_as_the_per_cell_path(tmp_path, monkeypatch):
    fast = tmp_path / "fast.xlsx"
    _build(fast)
    monkeypatch.setattr(xlsx, "_fast_ok", lambda ws: False)
    slow = tmp_path / "slow.xlsx"
    _build(slow)
    a, b = _sheets(fast), _sheets(slow)
    assert a.keys() == b.keys()
    for name in a:
        assert a[name] == b[name], name


def test_row_xml_path_reads_back_in_an_independent_reader(tmp_path):
    path = tmp_path / "fast.xlsx"
    _build(path)
    wb = load_workbook(path, read_only=True)
    rows = list(wb["Data"].iter_rows(values_only=True))
    assert rows[0][0] == "title row"
    assert rows[2] == ("f", "t", "i", "b", "status", "list")
    data = rows[3:3003]
    assert len(data) == 3000
    assert data[0][0] is None  # NaN is an empty cell
    assert data[5][0] == "inf" and data[6][0] == "-inf"
    assert math.isclose(data[7][0], 0.3, rel_tol=1e-15)
    assert data[1][1] == "'=1+1"  # neutralised, never a formula
    assert data[2][1] == " leading space" and data[3][1] == "trailing "
    assert data[9][1] == "x" * 32767  # Excel's longest text
    assert data[12][1] == "'@cmd"
    assert data[10][2] == 7 * 10 - 100
    assert data[0][3] is True and data[1][3] is False
    assert [r[4] for r in data[:3]] == ["final", "preliminary", "projected"]
    assert rows[3003][:3] == ("after", 1.5, True)
    assert list(wb["Second"].iter_rows(values_only=True)) == [("only",), (1,), (2,)]


def test_text_that_looks_like_rich_string_xml_is_escaped(tmp_path):
    # xlsxwriter's per-cell constant-memory path writes "<r>...</r>" unescaped; the row
    # path escapes it, so the text comes back as typed (ECMA-376 18.3.1.53 is
    # the rich text run a cell would otherwise hold).
    path = tmp_path / "rich.xlsx"
    with Book(path) as wb:
        wb.create_sheet("S").append_columns([np.array(["<r><t>x</t></r>"], dtype=object)])
    rows = list(load_workbook(path, read_only=True)["S"].iter_rows(values_only=True))
    assert rows == [("<r><t>x</t></r>",)]


@pytest.mark.parametrize("after_row", [True, False])
def test_dimensions_cover_the_rows_written(tmp_path, after_row):
    path = tmp_path / "dim.xlsx"
    _build(path, after_row=after_row)
    xml = _sheets(path)["xl/worksheets/sheet1.xml"].decode()
    last = 3004 if after_row else 3003
    assert f'<dimension ref="A1:F{last}"/>' in xml


def test_an_empty_table_writes_its_header_only(tmp_path, monkeypatch):
    def sheet(path):
        with Book(path) as wb:
            ws = wb.create_sheet("S")
            ws.append_columns([np.array([], dtype=float), np.array([], dtype=object)],
                              header=["a", "b"])
            ws.append(["next"])
        return _sheets(path)["xl/worksheets/sheet1.xml"]

    fast = sheet(tmp_path / "f.xlsx")
    monkeypatch.setattr(xlsx, "_fast_ok", lambda ws: False)
    assert fast == sheet(tmp_path / "s.xlsx")
    assert b'<dimension ref="A1:B2"/>' in fast


@pytest.mark.parametrize("seed", range(6))
def test_random_mixed_tables_match_the_per_cell_path(tmp_path, monkeypatch, seed):
    rng = np.random.default_rng(seed)
    n = int(rng.integers(1, 700))
    pool = ["a", " b", "c ", "=x", "<&>", None, 1.5, float("nan"), float("inf"), 7, True,
            False, "\x02", "final", "preliminary"]

    def table():
        cols, fmts, looks = [], [], []
        for _ in range(int(rng.integers(1, 9))):
            kind = rng.integers(0, 4)
            if kind == 0:
                col = rng.normal(0, 1e4, n)
                col[rng.random(n) < 0.2] = np.nan
            elif kind == 1:
                col = rng.integers(-10**6, 10**6, n)
            elif kind == 2:
                col = rng.random(n) < 0.5
            else:
                col = np.array([pool[i] for i in rng.integers(0, len(pool), n)], dtype=object)
            cols.append(col)
            fmts.append(["0.00", None, "#,##0"][int(rng.integers(0, 3))])
            looks.append({"preliminary": Style(fill="FFF2CC"), "a": Style(bold=True)}
                         if rng.random() < 0.5 else None)
        return cols, fmts, looks

    cols, fmts, looks = table()

    def write(path):
        with Book(path) as wb:
            ws = wb.create_sheet("S")
            ws.append(["title"], style=Style(bold=True))
            ws.append_columns(cols, header=[f"c{j}" for j in range(len(cols))], fmts=fmts,
                              looks=looks)
            ws.append_columns(cols[:1], fmts=fmts[:1])
        return _sheets(path)

    fast = write(tmp_path / "f.xlsx")
    monkeypatch.setattr(xlsx, "_fast_ok", lambda ws: False)
    assert fast == write(tmp_path / "s.xlsx")
