"""Intake: read a user's file (CSV, XLSX, SDMX-CSV) into named :class:`Series`.

This module is the public entry point; the work is done by the stages of
:mod:`pipeline.intake`, called in this order by :func:`read_file`:

1. ``source`` — the bytes (refusing files over ``max_upload_bytes``) and the format;
2. ``text`` or ``workbook`` — the cells as text (decoding, delimiter, quoting; or the
   sheet);
3. ``table`` — the table in them: title lines, header, blank rows and columns;
4. ``layout`` — ``sdmx``, ``long`` or ``wide`` (also periods across the header), and every
   value cell as one long table remembering its file row and column;
5. ``periods`` and ``values`` — period labels (:mod:`pipeline.labels`), numbers, status
   and vintage cells, vectorised;
6. ``series`` (with ``kinds``) — one :class:`Series` per series (per vintage in long
   files), checked for duplicate periods, gaps, mixed frequencies, non-positive indexes.

Structural problems (the file cannot be read as a table of series at all) raise
:class:`RealbasisError` at once. Cell problems are collected into ``Intake.problems``
(errors and warnings) and the offending cells are left out (values: NaN).
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass
from pathlib import Path

from . import labels
from .errors import Problem, RealbasisError, fail
from .intake import layout, periods, series, source, table, text, values, workbook
from .intake.codes import IN008, IN021
from .intake.layout import Layout
from .intake.problems import Problems
from .intake.table import Table
from .intake.values import detect_decimal, parse_numbers
from .model import KINDS, Kind, Series
from .settings import Settings, load_settings

FORMATS = ("CSV (comma, semicolon or tab; UTF-8, UTF-8 with BOM, UTF-16 with BOM, cp1252)",
           "XLSX (choose the sheet)", "SDMX-CSV (TIME_PERIOD, OBS_VALUE)")


@dataclass(frozen=True)
class Intake:
    """What one file held: the series found and every problem met.

    ``problems`` holds cell-level errors and warnings (all of them, in file order within
    each kind of check). ``layout`` is 'wide', 'long' or 'sdmx'. ``sheet`` is the sheet
    read from a workbook (``sheets`` lists all of them). ``encoding``, ``delimiter`` and
    ``decimal`` say how a text file was read; ``rows`` counts data rows.
    """

    series: tuple[Series, ...]
    problems: tuple[Problem, ...]
    file: str
    layout: Layout
    sheet: str | None = None
    sheets: tuple[str, ...] = ()
    format: str = "csv"
    encoding: str | None = None
    delimiter: str | None = None
    decimal: str = "."
    rows: int = 0

    @property
    def errors(self) -> tuple[Problem, ...]:
        return tuple(p for p in self.problems if p.severity == "error")

    @property
    def warnings(self) -> tuple[Problem, ...]:
        return tuple(p for p in self.problems if p.severity == "warning")

    def raise_for_errors(self) -> None:
        """Raise one RealbasisError carrying every error problem (no-op when none)."""
        if self.errors:
            raise RealbasisError(self.errors)

    def get(self, name: str) -> Series:
        for s in self.series:
            if s.name == name:
                return s
        raise KeyError(name)


def _table(source_: str | Path | bytes, filename: str | None, sheet: str | None,
           settings: Settings) -> Table:
    """Stages 1-3: bytes -> cells -> table."""
    src = source.load(source_, filename, settings)
    if src.format == "csv":
        if sheet is not None:
            raise fail(IN008, "a sheet was named but the file is not a workbook",
                       expected="a workbook (.xlsx, .xls, .ods) when a sheet is named",
                       found="a text file", fix="Leave out the sheet name for CSV files.",
                       file=src.name)
        grid = text.read(src, settings)
    else:
        grid = workbook.read(src, sheet, settings)
    return table.find_table(grid, src.name, settings)


def read_table(source: str | Path | bytes, *, filename: str | None = None,
               sheet: str | None = None, settings: Settings | None = None) -> Table:
    """Read a CSV or XLSX file as a plain table of text cells, without looking for series.

    The first stages of :func:`read_file`, for other readers of tabular files (e.g. price
    files in :mod:`pipeline.indexnum`): the same size and row limits (IN001, IN002),
    encodings, delimiter sniffing with RFC 4180 quoting (quoted fields may hold the
    delimiter, doubled quotes and line breaks), title lines, workbook sheets and coded
    errors (IN003-IN008, IN017, IN027). ``source`` is a path or the file's bytes (then
    ``filename`` names it in messages, and an ``.xlsx`` name like the zip signature marks
    a workbook); ``sheet`` picks a workbook sheet (an error for a text file). Cells stay
    text: use :func:`detect_decimal` and :func:`parse_numbers` for numbers and
    :mod:`pipeline.labels` for periods."""
    return _table(source, filename, sheet, settings or load_settings())


def list_sheets(source: str | Path | bytes, *, filename: str | None = None,
                settings: Settings | None = None) -> tuple[str, ...]:
    """Names of the sheets of a workbook (in workbook order)."""
    settings = settings or load_settings()
    return workbook.sheet_names(_load(source, filename, settings), settings)


def _load(src: str | Path | bytes, filename: str | None, settings: Settings) -> source.Source:
    return source.load(src, filename, settings)


def _check_kinds(kinds: Mapping[str, Kind] | None) -> None:
    wrong = {k: v for k, v in (kinds or {}).items() if v not in KINDS}
    if wrong:
        k, v = next(iter(wrong.items()))
        raise fail(IN021, f"the kind given for {k!r} is not one of flow, stock, index",
                   expected="flow, stock or index", found=repr(v),
                   fix="Give flow (amounts over a period), stock (balances at a date) or index.",
                   series=k)


def read_file(source: str | Path | bytes, *, filename: str | None = None, sheet: str | None = None,
              fy_start: int | None = None, kinds: Mapping[str, Kind] | None = None,
              settings: Settings | None = None) -> Intake:
    """Read one CSV, XLSX or SDMX-CSV file into series (see the module text).

    ``source`` is a path or the file's bytes (then ``filename`` names it in messages and
    an ``.xlsx`` name, like the zip signature, marks a workbook). ``sheet`` picks a
    workbook sheet (default: the first sheet with data). ``fy_start`` is the month fiscal
    years start in (needed by FY labels). ``kinds`` overrides the guessed kind by series
    name. Raises :class:`RealbasisError` for structural problems; cell problems are in
    ``Intake.problems``.
    """
    settings = settings or load_settings()
    labels._check_fy_start(fy_start)
    _check_kinds(kinds)
    # stages 1-3: bytes -> table
    tbl = _table(source, filename, sheet, settings)
    name, where = tbl.file, {"file": tbl.file, "sheet": tbl.sheet}
    sink = Problems()
    sink.extend(tbl.warnings)
    # stage 4: layout
    plan = layout.recognise(tbl, fy_start)
    periods.check_shared_column(tbl, plan, fy_start)
    cells, more, tbl = layout.cells(tbl, plan)
    sink.extend(more)
    # stage 5: values and periods
    decimal = detect_decimal(cells.value.astype(str), tbl.delimiter)
    vals = values.read(cells, decimal)
    series_text = values.ustrip(cells.series)
    period_text = values.ustrip(cells.period)
    names = series_text.to_numpy(dtype=object)
    keep = series.rows_to_read(cells, series_text, period_text, vals.missing, sink, **where)
    per, keep = periods.read(cells, period_text, names, fy_start, keep, sink, **where)
    values.report_bad(vals, cells, names, keep, sink, **where)
    status = values.statuses(cells, names, keep, sink, **where)
    vintage = values.vintages(cells, names, keep, sink, **where)
    # stage 6: series
    found = series.assemble(cells, per, series_text, vals.numbers, vals.text, status, vintage,
                            keep, kinds, sink, **where)
    problems, _counts, _omitted = sink.result()
    return Intake(tuple(found), problems, name, plan.layout, tbl.sheet, tbl.sheets,
                  tbl.format, tbl.encoding, tbl.delimiter, decimal, len(tbl.cells))


__all__ = ["FORMATS", "Intake", "Table", "detect_decimal", "list_sheets", "parse_numbers", "read_file",
           "read_table"]
