"""Exports of a deflation result: CSV, JSON and an Excel workbook, chosen by file suffix.

* ``.csv``: the tidy table with EXACTLY the columns ``series, deflator, period, nominal,
  deflator_index, real, status`` (periods written 2024-01, 2024Q1, 2024, FY2025), plus an
  ``interpolated`` column only when interpolation was used.
* ``.json``: ``{"base", "frequency", "dollars", "columns", "records", "method",
  "cautions", "warnings", "context"}``, plus ``"revision_bands"`` when revision bands
  are given (context ``bands=``: :class:`pipeline.revision_risk.RevisionBand`, each as
  its ``as_dict()``) and ``"budget"`` when budget tables are given (context ``budget=``:
  :class:`pipeline.budget.BudgetTable`, each as its ``as_dict()``); missing numbers are
  ``null``.
* ``.xlsx``: the audit workbook of :mod:`pipeline.workbook` (Summary, the "Real terms"
  data sheet written by :func:`write_data_sheet`, one "Real - <deflator>" sheet each,
  "Indexes used", "Status flags", "Revision band" when bands are given, "Method").
  :func:`write_minimal_workbook` still gives the
  minimal two-sheet workbook (data and method) for callers that want only that. Every
  workbook is written by the streaming writer of :mod:`pipeline.xlsx` (xlsxwriter).

Text cells that a spreadsheet would read as a formula (starting with = + - @, a tab or a
carriage return) are written with a leading single quote (:func:`neutralise`).
"""

from __future__ import annotations

import json
import math
from collections.abc import Mapping
from pathlib import Path
from typing import Any

import numpy as np
import pandas as pd

from .deflate import DeflationResult
from .errors import fail, register
from .model import CAUTIONS

EX001 = register("EX001", "export format not supported")
EX002 = register("EX002", "export file could not be written")
EX003 = register("EX003", "table too large for an Excel sheet")

SUFFIXES = (".csv", ".json", ".xlsx")
XLSX_MAX_ROWS = 1_048_576
_DANGEROUS = ("=", "+", "-", "@", "\t", "\r")
TEXT_COLUMNS = ("series", "deflator", "period", "status")


def neutralise(value: object) -> object:
    """Prefix a single quote to text a spreadsheet would run as a formula."""
    if isinstance(value, str) and value.startswith(_DANGEROUS):
        return "'" + value
    return value


def neutralise_frame(frame: pd.DataFrame, columns: tuple[str, ...] = TEXT_COLUMNS) -> pd.DataFrame:
    """A copy of ``frame`` with its text columns neutralised (vectorised over uniques)."""
    out = frame.copy()
    for c in columns:
        if c in out.columns:
            col = out[c].astype(str)
            uniq = pd.unique(col)
            mapping = {u: neutralise(u) for u in uniq}
            if any(mapping[u] != u for u in uniq):
                out[c] = col.map(mapping)
    return out


def export_table(result: DeflationResult) -> pd.DataFrame:
    """The table as exported: contract columns, plus ``interpolated`` if any value is."""
    return result.table(flags=result.has_interpolation)


def _context_lines(context: Mapping[str, Any]) -> list[tuple[str, str]]:
    return [(str(k), str(v)) for k, v in context.items() if v is not None]


CSV_LINE_END = "\r\n"  # RFC 4180; also makes the csv writer quote text holding a CR


def write_csv(result: DeflationResult, path: Path) -> None:
    table = neutralise_frame(export_table(result))
    table.to_csv(path, index=False, lineterminator=CSV_LINE_END)


def _num(v: float) -> float | None:
    return None if v is None or (isinstance(v, float) and math.isnan(v)) else float(v)


def result_dict(result: DeflationResult, **context: Any) -> dict[str, Any]:
    """Everything the JSON export holds, as plain Python objects. ``bands`` (a sequence of
    revision bands) becomes ``revision_bands``; other context is listed as text."""
    bands = context.pop("bands", None) or ()
    budget = context.pop("budget", None)
    table = export_table(result)
    records = []
    cols = list(table.columns)
    arrays = [table[c].to_numpy() for c in cols]
    for row in zip(*arrays, strict=True):
        rec: dict[str, Any] = {}
        for c, v in zip(cols, row, strict=True):
            if isinstance(v, np.floating | float):
                rec[c] = _num(float(v))
            elif isinstance(v, np.bool_ | bool):
                rec[c] = bool(v)
            else:
                rec[c] = v
        records.append(rec)
    out = {
        "base": result.base_label,
        "frequency": result.frequency.describe(),
        "dollars": result.dollars_label,
        "columns": cols,
        "records": records,
        "method": list(result.method_note()),
        "cautions": list(CAUTIONS),
        "warnings": [p.as_dict() for p in result.warnings],
        "context": {k: v for k, v in _context_lines(context)},
    }
    if bands:
        out["revision_bands"] = [b.as_dict() for b in bands]
    if budget is not None:
        tables = list(budget) if isinstance(budget, list | tuple) else [budget]
        out["budget"] = [t.as_dict() for t in tables]
    return out


def write_json(result: DeflationResult, path: Path, **context: Any) -> None:
    data = result_dict(result, **context)
    with open(path, "w", encoding="utf-8") as fh:
        json.dump(data, fh, ensure_ascii=False, indent=1, allow_nan=False)
        fh.write("\n")


def write_data_sheet(wb: Any, table: pd.DataFrame, title: str = "Real terms") -> Any:
    """Append a sheet holding ``table`` (header row + values), text neutralised, NaN
    empty (:class:`pipeline.xlsx.Book`; written column-wise, the fast path)."""
    if len(table) + 1 > XLSX_MAX_ROWS:
        raise fail(EX003, f"{len(table)} rows do not fit on one Excel sheet",
                   expected=f"at most {XLSX_MAX_ROWS - 1} rows", found=str(len(table)),
                   fix="Export CSV or JSON instead, or deflate fewer series at a time.")
    ws = wb.create_sheet(title)
    ws.append_columns([table[c].to_numpy() for c in table.columns],
                      header=[str(c) for c in table.columns])
    return ws


def _cell(v: object) -> object:
    if isinstance(v, np.floating | float):
        return None if math.isnan(float(v)) else float(v)
    if isinstance(v, np.bool_):
        return bool(v)
    if isinstance(v, np.integer):
        return int(v)
    return v


def write_method_sheet(wb: Any, result: DeflationResult, context: Mapping[str, Any],
                       title: str = "Method") -> Any:
    """Append the method sheet: base, method note, cautions, warnings, context (text is
    neutralised by the sheet writer)."""
    ws = wb.create_sheet(title)
    ws.append(["Real terms", result.dollars_label])
    ws.append(["Results", result.frequency.describe()])
    ws.append([])
    ws.append(["Method"])
    for line in result.method_note():
        ws.append(["", line])
    ws.append([])
    ws.append(["Cautions"])
    for line in CAUTIONS:
        ws.append(["", line])
    if result.warnings:
        ws.append([])
        ws.append(["Warnings"])
        for p in result.warnings:
            ws.append([p.code, p.render()])
    ctx = _context_lines(context)
    if ctx:
        ws.append([])
        ws.append(["Context"])
        for k, v in ctx:
            ws.append([k, v])
    return ws


def write_minimal_workbook(result: DeflationResult, path: str | Path, **context: Any) -> Path:
    """The minimal two-sheet workbook (data and method) for callers that want only that."""
    from .workbook import write_book

    def build(wb: Any) -> None:
        write_data_sheet(wb, export_table(result))
        write_method_sheet(wb, result, context)

    return write_book(path, build)


def write_xlsx(result: DeflationResult, path: Path, **context: Any) -> None:
    """The audit workbook (:mod:`pipeline.workbook`): summary, the "Real terms" data
    sheet, real values per deflator, indexes as used, status flags and method."""
    from .workbook import write_workbook

    write_workbook(result, path, **context)


def write_result(result: DeflationResult, path: str | Path, **context: Any) -> Path:
    """Write ``result`` to ``path``; the suffix (.csv, .json, .xlsx) picks the format.
    ``context`` (e.g. files=..., command=...) is recorded in the JSON and the method sheet.
    """
    p = Path(path)
    suffix = p.suffix.lower()
    if suffix not in SUFFIXES:
        raise fail(EX001, f"cannot write {p.name!r}: unknown export format",
                   expected="a file name ending in .csv, .json or .xlsx",
                   found=suffix or "(no suffix)", file=str(p),
                   fix="Name the output file with one of those suffixes.")
    try:
        if suffix == ".csv":
            write_csv(result, p)
        elif suffix == ".json":
            write_json(result, p, **context)
        else:
            write_xlsx(result, p, **context)
    except OSError as err:
        raise fail(EX002, f"could not write {p.name!r}", expected="a writable file path",
                   found=f"{type(err).__name__}: {err.strerror or err}", file=str(p),
                   fix="Check that the folder exists and that you may write there.") from None
    return p


def check_suffix(path: str | Path) -> str:
    """The export format of ``path`` (.csv, .json, .xlsx) or EX001."""
    p = Path(path)
    suffix = p.suffix.lower()
    if suffix not in SUFFIXES:
        raise fail(EX001, f"cannot write {p.name!r}: unknown export format",
                   expected="a file name ending in .csv, .json or .xlsx",
                   found=suffix or "(no suffix)", file=str(p),
                   fix="Name the output file with one of those suffixes.")
    return suffix


def _records(table: pd.DataFrame) -> list[dict[str, Any]]:
    cols = list(table.columns)
    return [{c: _cell(v) for c, v in zip(cols, row, strict=True)}
            for row in zip(*(table[c].to_numpy() for c in cols), strict=True)]


def write_table(table: pd.DataFrame, path: str | Path, *, title: str,
                method: tuple[str, ...] | list[str] = (), warnings: tuple[Any, ...] = (),
                text_columns: tuple[str, ...] = (), sheet: str = "Table",
                extra: Mapping[str, Any] | None = None, **context: Any) -> Path:
    """Write a table that is not a deflation result (growth, totals) by suffix:

    ``.csv`` the table exactly (text neutralised); ``.json`` ``{"title", ..extra,
    "columns", "records", "method", "cautions", "warnings", "context"}`` (missing numbers
    null); ``.xlsx`` a data sheet named ``sheet`` and a method sheet (title, method,
    cautions, warnings, context)."""
    p = Path(path)
    suffix = check_suffix(p)
    text = text_columns or tuple(c for c in table.columns if not pd.api.types.is_numeric_dtype(
        table[c]))
    try:
        if suffix == ".csv":
            neutralise_frame(table, text).to_csv(p, index=False, lineterminator=CSV_LINE_END)
        elif suffix == ".json":
            data = {"title": title, **dict(extra or {}), "columns": list(table.columns),
                    "records": _records(table), "method": list(method),
                    "cautions": list(CAUTIONS), "warnings": [w.as_dict() for w in warnings],
                    "context": {k: v for k, v in _context_lines(context)}}
            with open(p, "w", encoding="utf-8") as fh:
                json.dump(data, fh, ensure_ascii=False, indent=1, allow_nan=False)
                fh.write("\n")
        else:
            from .workbook import write_book

            def build(wb: Any) -> None:
                write_data_sheet(wb, table, sheet)
                ws = wb.create_sheet("Method")
                ws.append([title])
                for heading, lines in (("Method", list(method)), ("Cautions", list(CAUTIONS)),
                                       ("Warnings", [w.render() for w in warnings]),
                                       ("Context", [f"{k}: {v}" for k, v in
                                                    _context_lines(context)])):
                    if lines:
                        ws.append([])
                        ws.append([heading])
                        for line in lines:
                            ws.append(["", line])

            write_book(p, build)
    except OSError as err:
        raise fail(EX002, f"could not write {p.name!r}", expected="a writable file path",
                   found=f"{type(err).__name__}: {err.strerror or err}", file=str(p),
                   fix="Check that the folder exists and that you may write there.") from None
    return p
