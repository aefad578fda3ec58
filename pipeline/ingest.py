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
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np

from . import labels
from .errors import Location, Problem, RealbasisError, fail
from .intake import layout, periods, series, source, table, text, values, workbook
from .intake import note as note_words
from .intake.codes import IN007, IN008, IN011, IN016, IN021, IN030, IN033, IN039
from .intake.layout import Layout
from .intake.note import Note
from .intake.problems import Problems, cell_problems, clip, grid_problems
from .intake.table import Table
from .intake.values import detect_decimal, parse_numbers
from .model import KINDS, STATUSES, Kind, Series
from .settings import Settings, load_settings

FORMATS = ("CSV (comma, semicolon or tab; UTF-8, UTF-8 with BOM, UTF-16 with BOM, cp1252)",
           "XLSX, XLS, ODS workbooks (choose the sheet)", "SDMX-CSV (TIME_PERIOD, OBS_VALUE)")


@dataclass(frozen=True)
class Intake:
    """What one file held: the series found and every problem met.

    ``problems`` holds cell-level errors and warnings: the first ``max_problems`` (errors
    first, then in file order), and, when more were found, one IN033 warning saying how
    many of each code were left out; ``problem_counts`` counts every problem by code.
    ``layout`` is 'wide', 'long' or 'sdmx'. ``sheet`` is the sheet read from a workbook
    (``sheets`` lists all of them). ``encoding``, ``delimiter`` and ``decimal`` say how a
    text file was read; ``rows`` counts data rows. ``note`` is the reading note: what was
    done, in words (rows skipped above and below the table, sheets skipped, columns
    combined, markers read, missing values, how kinds were decided).
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
    note: tuple[str, ...] = ()
    problem_counts: Mapping[str, int] = field(default_factory=dict)

    @property
    def errors(self) -> tuple[Problem, ...]:
        return tuple(p for p in self.problems if p.severity == "error")

    @property
    def warnings(self) -> tuple[Problem, ...]:
        return tuple(p for p in self.problems if p.severity == "warning")

    def totals(self) -> tuple[int, int]:
        """(errors, warnings) found in all, listed or not (``problem_counts`` by the
        severity of each code; the IN033 summary itself is not counted)."""
        severity = {p.code: p.severity for p in self.problems}
        n_err = sum(n for c, n in self.problem_counts.items() if severity.get(c) == "error")
        n_warn = sum(n for c, n in self.problem_counts.items() if severity.get(c) == "warning")
        listed_warn = sum(1 for p in self.warnings if p.code != IN033)
        return max(n_err, len(self.errors)), max(n_warn, listed_warn)

    def raise_for_errors(self) -> None:
        """Raise one RealbasisError carrying every error problem listed (and the IN033
        count of those left out); no-op when there are none."""
        if self.errors:
            more = [p for p in self.problems if p.code == IN033]
            raise RealbasisError(self.errors + tuple(more))

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
    try:
        return _table(source, filename, sheet, settings or load_settings())
    except MemoryError:
        raise fail(IN039, "there is not enough memory to read the file",
                   expected="a file that fits in memory", found="reading ran out of memory",
                   fix="Split the file into smaller ones.", file=filename) from None


def list_sheets(source: str | Path | bytes, *, filename: str | None = None,
                settings: Settings | None = None) -> tuple[str, ...]:
    """Names of the sheets of a workbook (in workbook order)."""
    settings = settings or load_settings()
    return workbook.sheet_names(_load(source, filename, settings), settings)


def _load(src: str | Path | bytes, filename: str | None, settings: Settings) -> source.Source:
    return source.load(src, filename, settings)


def preview(source_: str | Path | bytes, filename: str | None = None, rows: int = 8, *,
            sheet: str | None = None,
            settings: Settings | None = None) -> tuple[list[str], list[dict[str, str]]]:
    """The first ``rows`` rows of a file as written, before any interpretation (titles and
    notes included): ``(columns, rows)`` with columns ``column 1`` ... and each row a dict
    of text cells (each at most 200 characters). Text files are decoded and split as
    :func:`read_file` would; a workbook shows the sheet intake would read (or ``sheet``).
    Raises only :class:`RealbasisError` (coded), whatever the bytes."""
    settings = settings or load_settings()
    try:
        src = source.load(source_, filename, settings)
        if src.format == "csv":
            if sheet is not None:
                raise fail(IN008, "a sheet was named but the file is not a workbook",
                           expected="a workbook (.xlsx, .xls, .ods) when a sheet is named",
                           found="a text file", fix="Leave out the sheet name for CSV files.",
                           file=src.name)
            decoded, _ = text.decode(src.data, src.name)
            sep, _ = text.sniff(decoded)
            records = text.first_records(decoded, sep, rows)
        else:
            grid = workbook.read(src, sheet, settings)
            records = [list(r) for r in grid.values[:rows].tolist()]
    except RealbasisError:
        raise
    except MemoryError:
        raise fail(IN039, "there is not enough memory to show the file",
                   expected="a file that fits in memory", found="reading ran out of memory",
                   fix="Split the file into smaller ones.", file=filename) from None
    except Exception as e:  # the last guard: a preview never fails with a traceback
        raise fail(IN007, "the file cannot be shown as rows", expected="a CSV file or a workbook",
                   found=f"{type(e).__name__}: {clip(e, 150)}",
                   fix="Save the data as a plain CSV with one header row.", file=filename) from None
    width = min(max((len(r) for r in records), default=0), 200)
    columns = [f"column {i + 1}" for i in range(width)]
    out = [{c: clip(v, 200) for c, v in zip(columns, [*r, *[""] * (width - len(r))], strict=False)}
           for r in records]
    return columns, out


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
              default_kind: Kind | None = None, markers: Mapping[str, str] | None = None,
              daily: bool = False, settings: Settings | None = None) -> Intake:
    """Read one CSV, workbook (.xlsx, .xls, .ods) or SDMX-CSV file into series (see the
    module text).

    ``source`` is a path or the file's bytes (then ``filename`` names it in messages and
    an ``.xlsx`` name, like the zip signature, marks a workbook). ``sheet`` picks a
    workbook sheet (default: the first sheet holding a table). ``fy_start`` is the month
    fiscal years start in (needed by FY labels). ``kinds`` sets the kind by series name.
    ``default_kind`` is the file's role: 'flow' or 'stock' when it holds money, 'index'
    when it holds price indexes; every series not named in ``kinds`` and whose unit does
    not say otherwise gets it (no guessing). None guesses from names, units and values
    (the guess is said in ``Series.notes``). ``markers`` says what a status letter beside
    a value means (``{"r": "preliminary"}``), over the defaults p/e preliminary, f
    projected, r final and any legend in the file's notes. ``daily`` aggregates dates
    finer than months to months (flows summed, stocks last, indexes averaged); without it
    such dates are refused with one IN031. Raises :class:`RealbasisError` for structural
    problems; cell problems are in ``Intake.problems``.
    """
    settings = settings or load_settings()
    labels._check_fy_start(fy_start)
    _check_kinds(kinds)
    if default_kind is not None and default_kind not in KINDS:
        raise ValueError(f"default_kind must be one of {KINDS}")
    _check_markers(markers)
    try:
        return _read_file(source, filename, sheet, fy_start, dict(kinds or {}), default_kind,
                          dict(markers or {}), daily, settings)
    except MemoryError:
        raise fail(IN039, "there is not enough memory to read the file",
                   expected="a file that fits in memory", found="reading ran out of memory",
                   fix="Split the file into smaller ones.", file=filename or str(source)[:80]
                   if not isinstance(source, bytes | bytearray | memoryview) else filename) from None


def _check_markers(markers: Mapping[str, str] | None) -> None:
    for k, v in (markers or {}).items():
        if not (isinstance(k, str) and len(k) == 1 and k.isalpha()) or v not in STATUSES:
            raise fail(IN030, "a status marker must be one letter meaning final, preliminary or "
                       "projected", expected="e.g. r=preliminary", found=f"{k!r}={v!r}",
                       fix="Give one letter and one of final, preliminary, projected.")


def _read_file(source_: str | Path | bytes, filename: str | None, sheet: str | None,
               fy_start: int | None, kinds: dict[str, Kind], default_kind: Kind | None,
               markers: dict[str, str], daily: bool, settings: Settings) -> Intake:
    # stages 1-3: bytes -> cells -> table
    tbl = _table(source_, filename, sheet, settings)
    name, where = tbl.file, {"file": tbl.file, "sheet": tbl.sheet}
    sink = Problems(settings.max_problems)
    sink.extend(tbl.warnings)
    note = Note([note_words.reading(tbl.format, tbl.encoding, tbl.delimiter), *tbl.notes])
    # stage 4: layout (year + quarter columns first become one period column)
    tbl, combined = layout.combine_period_columns(tbl)
    note.add(combined)
    plan = layout.recognise(tbl, fy_start)
    periods.check_shared_column(tbl, plan, fy_start)
    cells, more, tbl = layout.cells(tbl, plan)
    sink.extend(more)
    if tbl.unit:
        layout.default_unit(cells, tbl.unit)
    # the meaning of status letters: defaults, then the file's legend, then the caller's
    meaning = {**values.DEFAULT_MARKERS, **dict(tbl.legend), **markers}
    opts = series.Options(kinds, default_kind, daily)
    if isinstance(cells, layout.WideCells):
        found, decimal, facts, counts = _wide(cells, tbl, fy_start, meaning, opts, sink, where)
        period_column = cells.period_column
    else:
        found, decimal, facts, counts = _long(cells, tbl, fy_start, meaning, opts, sink, where)
        period_column = str(cells.period_column[0]) if len(cells.period_column) else None
    note.add(note_words.layout(plan.layout, plan.transposed, period_column, len(found)))
    note.add(note_words.decimal(decimal))
    note.add(note_words.markers(counts, meaning))
    note.add(note_words.daily(facts.daily_rows, facts.days_per_month))
    note.add(note_words.missing(facts.missing_cells, facts.outside_cells))
    note.add(note_words.kinds(facts.kinds))
    note.add(f"{len(found):,} series found.")
    problems, problem_counts, omitted = sink.result()
    if omitted:
        left = {c: n - sum(1 for p in problems if p.code == c) for c, n in problem_counts.items()}
        left = {c: n for c, n in left.items() if n > 0}
        problems = (*problems, Problem(
            IN033, f"{omitted:,} more problem(s) were found than are listed",
            f"at most {settings.max_problems:,} problems listed (setting max_problems)",
            "not listed: " + ", ".join(f"{c} {n:,}" for c, n in left.items()),
            "Correct the problems listed (the others are usually the same mistake repeated), "
            "then read the file again.", Location(file=name, sheet=tbl.sheet), "warning"))
        note.add(f"{sum(problem_counts.values()):,} problems found; the first "
                 f"{settings.max_problems:,} are listed.")
    return Intake(tuple(found), problems, name, plan.layout, tbl.sheet, tbl.sheets,
                  tbl.format, tbl.encoding, tbl.delimiter, decimal, len(tbl.values),
                  note.text(), problem_counts)


def _long(cells: layout.Cells, tbl: Table, fy_start: int | None, meaning: Mapping[str, str],
          opts: series.Options, sink: Problems, where: dict) -> tuple:
    """Stages 5-6 for the long table of cells."""
    decimal = detect_decimal(cells.value.astype(str), tbl.delimiter)
    vals = values.read(cells, decimal)
    series_text = values.ustrip(cells.series)
    period_text = values.ustrip(cells.period)
    names = series_text.to_numpy(dtype=object)
    keep = series.rows_to_read(cells, series_text, period_text, vals.missing, sink, **where)
    per, keep = periods.read(cells, period_text, names, fy_start, keep, sink, **where)
    marker, counts, unknown = values.marker_statuses(vals, keep, meaning)
    values.report_markers(vals, cells, names, unknown, meaning, sink, **where)
    values.report_bad(vals, cells, names, keep, sink, **where)
    status = values.statuses(cells, names, keep, sink, **where)
    vintage = values.vintages(cells, names, keep, sink, **where)
    found, facts = series.assemble(cells, per, series_text, vals, marker, status, vintage,
                                   keep, opts, sink, **where)
    return found, decimal, facts, counts


def _wide(w: layout.WideCells, tbl: Table, fy_start: int | None, meaning: Mapping[str, str],
          opts: series.Options, sink: Problems, where: dict) -> tuple:
    """Stages 5-6 for a wide table, column-wise over the whole rows x series array."""
    n, k = w.values.shape
    decimal = detect_decimal(values.wide_sample(w), tbl.delimiter)
    vals = values.read_wide(w, decimal)
    period_text = values.ustrip(w.period)
    all_missing = vals.missing.reshape(n, k).all(axis=1)
    per, row_ok = periods.read_column(w, period_text, fy_start, all_missing, sink, **where)
    keep = np.repeat(row_ok, k)
    marker, counts, unknown = values.marker_statuses(vals, keep, meaning)
    text2 = w.values
    grid_problems(sink, IN030, "the value carries a status marker of no known meaning",
                  unknown.reshape(n, k), rows=w.row, columns=w.columns, series=w.names,
                  found=text2, expected=values.MARKER_EXPECTED + ", ".join(
                      f"{a} ({b})" for a, b in sorted(meaning.items())),
                  fix=values.MARKER_FIX, **where)
    grid_problems(sink, IN011, "the cell is not a number",
                  (vals.bad & keep & ~vals.unknown).reshape(n, k), rows=w.row,
                  columns=w.columns, series=w.names, found=text2,
                  expected="a number such as 1234.5, 1,234.5, (1,234) or $1,234; "
                           "blank, n/a or - for missing",
                  fix="Correct the number or leave the cell blank if it is missing.", **where)
    status_rows = None
    if w.status is not None:
        st, bad = values.status_column(w.status, False)
        cell_problems(sink, IN016, "the status is not final, preliminary or projected",
                      bad & row_ok, rows=w.row, columns=w.status_column, series=None,
                      found=values.ustrip(w.status).to_numpy(dtype=object),
                      expected="final, preliminary (p, provisional, estimate) or projected "
                               "(forecast, budget); blank = final",
                      fix="Write one of the accepted status words.", **where)
        status_rows = st
    found, facts = series.assemble_wide(
        w, per, vals.numbers.reshape(n, k), vals.missing.reshape(n, k), vals.bad.reshape(n, k),
        text2, None if marker is None else marker.reshape(n, k), status_rows, row_ok, opts,
        sink, **where)
    return found, decimal, facts, counts


__all__ = ["FORMATS", "Intake", "Table", "detect_decimal", "list_sheets", "parse_numbers", "preview",
           "read_file", "read_table"]
