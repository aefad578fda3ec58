"""Intake: read a user's file (CSV, XLSX, SDMX-CSV) into named :class:`Series`.

The path through this module, for every format:

1. get the bytes (refusing files over ``max_upload_bytes``), decide the format
   (XLSX by its zip signature, otherwise text), decode text (UTF-8 with or without BOM,
   UTF-16 with BOM, else cp1252), find the delimiter (tab, semicolon, comma), skip title
   lines above the header, and read every cell as text with ``pandas.read_csv(dtype=str)``
   (refusing more than ``max_rows`` data rows);
2. recognise the layout: ``sdmx`` (TIME_PERIOD and OBS_VALUE columns), ``long`` (series,
   period and value columns; optional unit, status, vintage), or ``wide`` (a period column
   and one column per series; or periods across the header row and one row per series);
3. bring every layout to one long table of text cells, each remembering its file row and
   column, then clean it with vectorised operations: period labels
   (:mod:`pipeline.labels`, parsed over unique labels), numbers (thousands separators,
   decimal comma detected per file, ``(1,234)`` negatives, currency symbols and codes,
   missing markers), status words;
4. build one :class:`Series` per series (per vintage in long files) with its frequency,
   kind (guessed from header words and values unless ``kinds=`` says), unit, status;
5. check: duplicate periods, gaps, mixed frequencies, non-positive index values.

Structural problems (the file cannot be read as a table of series at all) raise
:class:`RealbasisError` at once. Cell problems are all collected into ``Intake.problems``
(errors and warnings) and the offending cells are left out (values: NaN).
"""

from __future__ import annotations

import csv
import io
import re
import zipfile
from collections.abc import Mapping
from dataclasses import dataclass
from pathlib import Path
from typing import Literal

import numpy as np
import pandas as pd

from . import labels
from .errors import Location, Problem, RealbasisError, fail, register
from .model import KINDS, Frequency, Kind, Series
from .settings import Settings, load_settings

IN001 = register("IN001", "file too large")
IN002 = register("IN002", "too many rows")
IN003 = register("IN003", "file is empty")
IN004 = register("IN004", "text encoding not recognised")
IN005 = register("IN005", "file type not supported")
IN006 = register("IN006", "file not found or unreadable")
IN007 = register("IN007", "rows do not form a table")
IN008 = register("IN008", "sheet not found")
IN009 = register("IN009", "no period column")
IN010 = register("IN010", "period cell not recognised")
IN011 = register("IN011", "value cell is not a number")
IN012 = register("IN012", "duplicate period in a series")
IN013 = register("IN013", "gap in the periods of a series")
IN014 = register("IN014", "mixed frequencies within a series")
IN015 = register("IN015", "index value not positive")
IN016 = register("IN016", "status cell not recognised")
IN017 = register("IN017", "duplicate column names")
IN018 = register("IN018", "no value columns")
IN019 = register("IN019", "SDMX-CSV file lacks a required column")
IN020 = register("IN020", "series name missing")
IN021 = register("IN021", "kind given for a series is not flow, stock or index")
IN022 = register("IN022", "kind given for a series the file does not contain")
IN023 = register("IN023", "vintage cell is not a date")
IN024 = register("IN024", "several units in one series")
IN025 = register("IN025", "columns ignored")
IN026 = register("IN026", "lines above the header skipped")
IN027 = register("IN027", "workbook cannot be opened")
IN028 = register("IN028", "blank column name")

Layout = Literal["wide", "long", "sdmx"]
_FKEYS = ("M", "Q", "A", "FY", "FQ")  # frequency keys of pipeline.labels
_MAX_TITLE_ROWS = 30  # single-cell rows above a table's header that are skipped as titles

FORMATS = ("CSV (comma, semicolon or tab; UTF-8, UTF-8 with BOM, UTF-16 with BOM, cp1252)",
           "XLSX (choose the sheet)", "SDMX-CSV (TIME_PERIOD, OBS_VALUE)")

# --- vocabulary -------------------------------------------------------------------------

_MISSING = frozenset({"", "n/a", "na", "nan", "-", "--", "—", "–", "..", "...", "…", "null",
                      "none", "#n/a", "n.a.", "n.a"})
_PERIOD_NAMES = frozenset({"period", "date", "time", "time_period", "month", "quarter", "year",
                           "fiscal_year", "fy", "ref_period", "reference_period", "obs_date",
                           "observation_date"})
_VALUE_NAMES = frozenset({"value", "amount", "obs_value", "val"})
_SERIES_NAMES = frozenset({"series", "series_name", "name", "variable", "item", "indicator",
                           "measure", "line", "account", "program", "programme", "segment",
                           "category"})
_UNIT_NAMES = frozenset({"unit", "units", "unit_measure", "currency"})
_STATUS_NAMES = frozenset({"status", "obs_status", "flag"})
_VINTAGE_NAMES = frozenset({"vintage", "as_of", "asof", "release", "release_date", "as_of_date"})
_IGNORED_NAMES = frozenset({"note", "notes", "comment", "comments", "source", "footnote"})
# SDMX-CSV: structural columns and attributes that are not part of a series key
_SDMX_STRUCT = frozenset({"DATAFLOW", "STRUCTURE", "STRUCTURE_ID", "STRUCTURE_NAME", "ACTION"})
_SDMX_ATTRS = frozenset({"OBS_STATUS", "OBS_CONF", "OBS_PRE_BREAK", "OBS_COM", "UNIT_MULT",
                         "UNIT_MEASURE", "DECIMALS", "TITLE", "TITLE_COMPL", "COMMENT",
                         "TIME_FORMAT", "BASE_PER", "COLL_METHOD", "EMBARGO_TIME", "COMPILATION",
                         "SOURCE_AGENCY", "UNIT_INDEX_BASE"})

_STATUS_WORDS = {
    "": "final", "final": "final", "f": "final", "a": "final", "normal": "final",
    "preliminary": "preliminary", "prelim": "preliminary", "provisional": "preliminary",
    "p": "preliminary", "estimate": "preliminary", "estimated": "preliminary",
    "e": "preliminary",
    "projected": "projected", "projection": "projected", "forecast": "projected",
    "proj": "projected", "budget": "projected",
}
# SDMX observation status (SDMX Content-Oriented Guidelines, code list CL_OBS_STATUS,
# from memory): P = provisional -> preliminary, F = forecast -> projected; every other
# code (A normal, B break, E estimated, ...) says nothing about revision -> final.
_SDMX_STATUS = {"P": "preliminary", "F": "projected"}

_INDEX_WORDS = re.compile(r"\b(index|indices|indexes|cpi|ppi|hicp|rpi|deflator|price level)\b"
                          r"|=\s*100\b", re.IGNORECASE)
_STOCK_WORDS = re.compile(r"\b(balance|balances|stock|outstanding|debt|assets?|liabilit\w*|cash|"
                          r"inventor(y|ies)|headcount|position|end[- ]of[- ](period|month|quarter|year)"
                          r"|eop|closing)\b", re.IGNORECASE)
_FLOW_WORDS = re.compile(r"\b(revenue|revenues|sales|spending|spend|cost|costs|expenditure|"
                         r"expenses?|income|receipts|payments?|wages|payroll|turnover|outlays?|"
                         r"budget|purchases|fares?|rent|paid)\b", re.IGNORECASE)
_MONEY = re.compile(r"[$€£¥]|\b(USD|EUR|GBP|JPY|CAD|AUD|NZD|CHF|CNY|SEK|NOK|DKK|INR|dollars?|"
                    r"euros?|pounds?)\b", re.IGNORECASE)
_UNIT_IN_HEADER = re.compile(r"^(?P<name>.*?)(?P<space>\s*)(?:\((?P<u1>[^()\[\]]+)\)|\[(?P<u2>[^()\[\]]+)\])\s*$")
# what a unit in a header's trailing brackets may hold: words, numbers, currency signs and
# a few joiners ("USD thousands", "$m", "2020=100", "% of GDP", "index, 2015=100",
# "USD/month"); quotes, brackets, semicolons or a formula mark mean it is not a unit
_UNIT_TEXT = re.compile(r"[\w\s$€£¥%.,/=:+\-&'*^#°·]{1,60}")
_REFERENCE = re.compile(r"(?:\b(?:index|idx|base|reference)\b[\s:,]*)?(?P<ref>[\w\- ]+?)\s*=\s*100\b",
                        re.IGNORECASE)

_CODES = "USD|EUR|GBP|JPY|CAD|AUD|NZD|CHF|CNY|SEK|NOK|DKK|INR|HKD|SGD|ZAR|MXN|BRL"
_CURRENCY = re.compile(rf"^(?:(?:US|A|C|NZ|HK|S)?[$€£¥]|(?:{_CODES})\s*)|(?:\s*(?:{_CODES})|[$€£¥])$",
                       re.IGNORECASE)
_NUM_POINT = re.compile(r"[-+]?(?:\d{1,3}(?:,\d{3})+|\d+)(?:\.\d*)?(?:[eE][-+]?\d+)?|[-+]?\.\d+(?:[eE][-+]?\d+)?")
_NUM_COMMA = re.compile(r"[-+]?(?:\d{1,3}(?:\.\d{3})+|\d+)(?:,\d*)?(?:[eE][-+]?\d+)?|[-+]?,\d+")


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


# --- reading ----------------------------------------------------------------------------

@dataclass(frozen=True)
class _Table:
    header: list[str]
    cells: pd.DataFrame  # str cells, columns 0..n-1
    rows: np.ndarray  # 1-based file row of each data row
    fmt: str
    encoding: str | None = None
    delimiter: str | None = None
    sheet: str | None = None
    sheets: tuple[str, ...] = ()
    skipped: int = 0


def _read_bytes(source: str | Path | bytes, filename: str | None,
                settings: Settings) -> tuple[bytes, str]:
    limit = settings.max_upload_bytes
    if isinstance(source, bytes | bytearray | memoryview):
        data = bytes(source)
        name = filename or "upload"
        size = len(data)
    else:
        path = Path(source)
        name = filename or path.name
        try:
            size = path.stat().st_size
        except OSError as e:
            raise fail(IN006, "the file cannot be found or opened", expected="a readable file",
                       found=f"{e.strerror or e}", fix="Check the path and the file's permissions.",
                       file=str(source)) from None
        if path.is_dir():
            raise fail(IN006, "the path is a folder, not a file", expected="a file",
                       found="a folder", fix="Name a CSV or XLSX file.", file=str(source))
        data = b""
    if size > limit:
        raise fail(IN001, "the file is larger than intake accepts",
                   expected=f"at most {limit:,} bytes (setting max_upload_bytes)",
                   found=f"{size:,} bytes",
                   fix="Split the file, or raise REALBASIS_MAX_UPLOAD_BYTES.", file=name)
    if not isinstance(source, bytes | bytearray | memoryview):
        try:
            data = Path(source).read_bytes()
        except OSError as e:
            raise fail(IN006, "the file cannot be read", expected="a readable file",
                       found=f"{e.strerror or e}", fix="Check the file's permissions.",
                       file=name) from None
    if not data.strip():
        raise fail(IN003, "the file is empty", expected="a header row and at least one data row",
                   found=f"{len(data)} bytes of nothing", fix="Choose the file that holds the data.",
                   file=name)
    return data, name


def _decode(data: bytes, name: str) -> tuple[str, str]:
    if data.startswith((b"\xff\xfe", b"\xfe\xff")):
        try:
            return data.decode("utf-16"), "utf-16"
        except UnicodeDecodeError:
            pass
    elif b"\x00" not in data:
        try:
            return data.decode("utf-8-sig"), ("utf-8-sig" if data.startswith(b"\xef\xbb\xbf")
                                              else "utf-8")
        except UnicodeDecodeError:
            pass
        try:
            return data.decode("cp1252"), "cp1252"
        except UnicodeDecodeError:
            pass
    raise fail(IN004, "the file is not text in an encoding intake reads",
               expected="UTF-8 (with or without BOM), UTF-16 with BOM, or Windows-1252 text; or an XLSX workbook",
               found="bytes that are none of these" + (" (it contains NUL bytes)" if b"\x00" in data else ""),
               fix="Save the file as 'CSV UTF-8' or as an .xlsx workbook.", file=name)


def _records(text: str, sep: str, limit: int | None = None) -> tuple[list[int], list[int]]:
    """Quote-aware split of ``text`` into records (RFC 4180: a field that starts with a
    double quote runs to the closing quote; inside it delimiters, line breaks and doubled
    quotes ``""`` are data; a quote inside an unquoted field is an ordinary character, as
    in ``pandas.read_csv``). Returns per record the number of delimiters outside quotes
    (-1 for a blank line) and the 1-based line where the record starts. Stops after
    ``limit`` records; an unreadable rest (e.g. a field over the csv module's size limit)
    ends the lists early."""
    counts: list[int] = []
    starts: list[int] = []
    reader = csv.reader(io.StringIO(text, newline=""), delimiter=sep, quotechar='"',
                        doublequote=True, skipinitialspace=False, strict=False)
    line = 0
    try:
        for record in reader:
            starts.append(line + 1)
            blank = len(record) == 0 or (len(record) == 1 and not record[0].strip())
            counts.append(-1 if blank else len(record) - 1)
            line = reader.line_num
            if limit is not None and len(counts) >= limit:
                break
    except csv.Error:
        pass
    return counts, starts


def _head(text: str) -> str:
    """The first 200,000 characters, cut after the last complete line."""
    if len(text) <= 200_000:
        return text
    head = text[:200_000]
    cut = max(head.rfind("\n"), head.rfind("\r"))
    return head[: cut + 1] if cut > 0 else head


def _sniff(text: str) -> tuple[str, int]:
    """(delimiter, number of records above the header: title lines and blank lines).

    Delimiters are counted outside quoted fields, record by record (a quoted field may
    hold the delimiter, doubled quotes and line breaks), over the first 60 records; the
    delimiter is the one whose count is the same on most records, and the header is the
    first record with that count."""
    head = _head(text)
    per_sep = {sep: _records(head, sep, 60)[0] for sep in ("\t", ";", ",")}
    best, best_score = ",", -1.0
    for sep, all_counts in per_sep.items():
        counts = [c for c in all_counts if c >= 0]
        if not counts or max(counts) == 0:
            continue
        mode = max(set(counts), key=counts.count)
        score = counts.count(mode) + (0.5 if counts[0] > 0 else 0) + (0.1 if mode > 0 else 0)
        if mode > 0 and score > best_score:
            best, best_score = sep, score
    nonblank = [(i, c) for i, c in enumerate(per_sep[best]) if c >= 0]
    if not nonblank:
        return best, 0
    values = [c for _, c in nonblank]
    mode = max(set(values), key=values.count)
    if mode == 0:
        return best, 0
    first = next(i for i, c in nonblank if c == mode)
    return best, first


def _record_lines(data: bytes, text: str, sep: str) -> np.ndarray | None:
    """1-based file line where each record starts, when some quoted field spans lines;
    None when every record is one line (no quote character, or every line break has an
    even number of quotes before it). Quote parity is only the cheap trigger; the lines
    themselves come from the quote-aware :func:`_records`."""
    if b'"' not in data:
        return None
    raw = np.frombuffer(data, dtype=np.uint8)
    quotes = np.flatnonzero(raw == 34)
    before = np.searchsorted(quotes, np.flatnonzero(raw == 10))  # quotes before each line break
    if not (before % 2).any():
        return None
    _, starts = _records(text, sep)
    return np.asarray(starts, dtype=np.int64) if starts else None


def _read_text(data: bytes, name: str, settings: Settings) -> _Table:
    text, encoding = _decode(data, name)
    if not text.strip():
        raise fail(IN003, "the file is empty", expected="a header row and at least one data row",
                   found="only blank text", fix="Choose the file that holds the data.", file=name)
    sep, skip = _sniff(text)
    # read enough rows to see whether there are more than max_rows data rows: blank lines
    # and title rows do not count as data, so allow for them (counted without a loop)
    raw = np.frombuffer(data if encoding != "utf-16" else text.encode("utf-8"), dtype=np.uint8)
    nl = np.flatnonzero(raw == 10)
    starts = np.r_[0, nl + 1]
    ends = np.r_[nl, len(raw)]
    length = ends - starts
    blank_lines = int((length == 0).sum() + ((length == 1) & (raw[np.minimum(starts, len(raw) - 1)] == 13)).sum())
    nrows = settings.max_rows + 2 + _MAX_TITLE_ROWS + blank_lines
    # file line of each record (only differs from the record number when a quoted field
    # holds a line break)
    lines = _record_lines(raw.tobytes() if encoding == "utf-16" else data, text, sep)

    def line_of(record: int) -> int:  # 0-based record number -> 1-based file line
        if lines is not None and 0 <= record < len(lines):
            return int(lines[record])
        return record + 1

    try:
        # the C reader decodes bytes itself (faster than a Python text buffer)
        buf = (io.BytesIO(data) if encoding in ("utf-8", "utf-8-sig", "cp1252")
               else io.StringIO(text))
        df = pd.read_csv(buf, encoding=encoding if isinstance(buf, io.BytesIO) else None, sep=sep, header=None, dtype=str,
                         keep_default_na=False, na_filter=False, skip_blank_lines=False,
                         skiprows=skip, nrows=nrows, engine="c",
                         quotechar='"', skipinitialspace=False)
    except pd.errors.EmptyDataError:
        raise fail(IN003, "the file has no rows", expected="a header row and data rows",
                   found="nothing to read", fix="Choose the file that holds the data.",
                   file=name) from None
    except (pd.errors.ParserError, ValueError, OverflowError) as e:
        msg = str(e)
        m = re.search(r"Expected (\d+) fields in line (\d+), saw (\d+)", msg)
        if m:
            raise fail(IN007, "a row has more cells than the header",
                       expected=f"{m.group(1)} cells per row (as in the header)",
                       found=f"{m.group(3)} cells", row=line_of(int(m.group(2)) - 1),
                       fix="Remove the extra cells or quote cells that contain the delimiter.",
                       file=name) from None
        raise fail(IN007, "the text cannot be read as a table", expected="delimited rows",
                   found=msg.splitlines()[0][:200] if msg else type(e).__name__,
                   fix="Save the data as a plain CSV with one header row.", file=name) from None
    rows = np.arange(len(df)) + 1 + skip
    if lines is not None and len(lines) >= skip + len(df):
        rows = lines[skip: skip + len(df)]
    return _Table([], df, rows, "csv", encoding,
                  {"\t": "tab", ";": "semicolon", ",": "comma"}[sep], skipped=line_of(skip) - 1)


def _xlsx_cell(v: object) -> str:
    if v is None:
        return ""
    if isinstance(v, bool):
        return str(v)
    if isinstance(v, float):
        if v.is_integer() and abs(v) < 1e15:
            return str(int(v))
        return repr(v)
    if isinstance(v, pd.Timestamp) or hasattr(v, "isoformat"):
        return v.isoformat()  # type: ignore[union-attr]
    return str(v)


def _open_workbook(data: bytes, name: str):  # -> openpyxl Workbook
    import openpyxl  # lazy: only workbooks need it

    try:
        return openpyxl.load_workbook(io.BytesIO(data), read_only=True, data_only=True)
    except (zipfile.BadZipFile, KeyError, OSError, ValueError, TypeError, EOFError,
            IndexError, AttributeError) as e:
        raise fail(IN027, "the workbook cannot be opened", expected="an .xlsx workbook",
                   found=f"{type(e).__name__}: {str(e)[:150]}",
                   fix="Open the file in a spreadsheet program and save it again as .xlsx.",
                   file=name) from None
    except Exception as e:  # openpyxl raises assorted errors on corrupt archives
        if type(e).__module__.startswith(("openpyxl", "xml", "zipfile")):
            raise fail(IN027, "the workbook cannot be opened", expected="an .xlsx workbook",
                       found=f"{type(e).__name__}: {str(e)[:150]}",
                       fix="Open the file in a spreadsheet program and save it again as .xlsx.",
                       file=name) from None
        raise


def _read_xlsx(data: bytes, name: str, sheet: str | None, settings: Settings) -> _Table:
    wb = _open_workbook(data, name)
    try:
        names = tuple(wb.sheetnames)
        if sheet is not None and sheet not in names:
            raise fail(IN008, f"the workbook has no sheet named {sheet!r}",
                       expected="one of: " + ", ".join(repr(s) for s in names),
                       found=repr(sheet), fix="Choose one of the sheets listed.", remedy="sheet",
                       file=name)
        order = [sheet] if sheet is not None else list(names)
        rows: list[list[str]] = []
        numbers: list[int] = []
        chosen = order[0] if order else None
        for sname in order:
            ws = wb[sname]
            rows, numbers = [], []
            try:
                for r, values in enumerate(ws.iter_rows(values_only=True), start=1):
                    cells = [_xlsx_cell(v) for v in values]
                    if any(c.strip() for c in cells):
                        rows.append(cells)
                        numbers.append(r)
                        if len(rows) > settings.max_rows + 1 + _MAX_TITLE_ROWS:
                            break
            except (zipfile.BadZipFile, KeyError, OSError, ValueError, TypeError) as e:
                raise fail(IN027, "the workbook cannot be read", expected="an .xlsx workbook",
                           found=f"{type(e).__name__}: {str(e)[:150]}",
                           fix="Open it in a spreadsheet program and save it again as .xlsx.",
                           file=name, sheet=sname) from None
            chosen = sname
            if len(rows) >= 2:
                break
    finally:
        wb.close()
    if len(rows) < 2:
        raise fail(IN003, "the sheet has no data rows" if sheet else "no sheet holds data rows",
                   expected="a header row and at least one data row",
                   found=f"{len(rows)} non-blank rows", fix="Choose the sheet that holds the data.",
                   file=name, sheet=chosen)
    width = max(len(r) for r in rows)
    df = pd.DataFrame([r + [""] * (width - len(r)) for r in rows], dtype=str)
    return _Table([], df, np.asarray(numbers), "xlsx", sheet=chosen, sheets=names)


def list_sheets(source: str | Path | bytes, *, filename: str | None = None,
                settings: Settings | None = None) -> tuple[str, ...]:
    """Names of the sheets of an XLSX workbook (in workbook order)."""
    settings = settings or load_settings()
    data, name = _read_bytes(source, filename, settings)
    wb = _open_workbook(data, name)
    try:
        return tuple(wb.sheetnames)
    finally:
        wb.close()


def _finish_table(t: _Table, name: str, settings: Settings) -> tuple[_Table, list[Problem]]:
    """Drop blank rows/columns, take the header, check names and row counts."""
    df = t.cells
    problems: list[Problem] = []
    # exact-empty test is vectorised; whitespace-only cells are caught later as missing
    blank = np.column_stack([df[c].to_numpy(dtype=object) == "" for c in df.columns])
    keep_rows = ~blank.all(axis=1)
    df = df[keep_rows]
    rows = t.rows[keep_rows]
    if len(df) == 0:
        raise fail(IN003, "the file has no rows", expected="a header row and data rows",
                   found="only blank lines", fix="Choose the file that holds the data.", file=name)
    # title lines above the header: leading rows with a single filled cell in a wider table
    filled = (~blank[keep_rows]).sum(axis=1)
    width = int(filled[:30].max())
    title = 0
    if width >= 2:
        while title < min(_MAX_TITLE_ROWS, len(filled) - 1) and filled[title] == 1:
            title += 1
    if title:
        df = df.iloc[title:]
        rows = rows[title:]
        blank = blank[keep_rows][title:]
        keep_rows = np.ones(len(df), dtype=bool)
        t = _Table(t.header, t.cells, t.rows, t.fmt, t.encoding, t.delimiter, t.sheet, t.sheets,
                   t.skipped + title)
    header = [str(h).strip() for h in df.iloc[0].tolist()]
    df = df.iloc[1:]
    header_row = int(rows[0])
    rows = rows[1:]
    # trailing columns with no header and no data (e.g. a final delimiter) go silently
    nonblank_cols = (~blank[keep_rows][1:]).any(axis=0)
    keep_cols = [i for i, h in enumerate(header) if h or nonblank_cols[i]]
    for i in keep_cols:
        if not header[i]:
            header[i] = f"column {i + 1}"
            problems.append(Problem(IN028, "a column with data has no name", "a name in the header row",
                                    "a blank header cell", "Name the column in the header row.",
                                    Location(file=name, sheet=t.sheet, row=header_row,
                                             column=header[i]), "warning"))
    df = df.iloc[:, keep_cols]
    header = [header[i] for i in keep_cols]
    df.columns = range(len(header))
    if len(df) > settings.max_rows:
        raise fail(IN002, "the file has more data rows than intake accepts",
                   expected=f"at most {settings.max_rows:,} data rows (setting max_rows)",
                   found=f"more than {settings.max_rows:,}",
                   fix="Split the file, or raise REALBASIS_MAX_ROWS.", file=name, sheet=t.sheet)
    if len(df) == 0:
        raise fail(IN003, "the file has a header but no data rows",
                   expected="at least one data row under the header",
                   found="only the header row", fix="Choose the file that holds the data.",
                   file=name, sheet=t.sheet, row=header_row)
    seen: dict[str, int] = {}
    for h in header:
        key = h.casefold()
        if key in seen:
            raise fail(IN017, f"two columns are named {h!r}", expected="unique column names",
                       found=f"{h!r} twice", fix="Rename one of the columns.",
                       file=name, sheet=t.sheet, row=header_row, column=h)
        seen[key] = 1
    if t.skipped:
        problems.append(Problem(IN026, f"{t.skipped} line(s) above the header were skipped", "",
                                "title or note lines before the table",
                                "Nothing to do if those lines are titles.",
                                Location(file=name, sheet=t.sheet, row=1), "warning"))
    return _Table(header, df, rows, t.fmt, t.encoding, t.delimiter, t.sheet, t.sheets,
                  t.skipped), problems


# --- cells to numbers -------------------------------------------------------------------

def detect_decimal(values: pd.Series, delimiter: str | None = None) -> str:
    """',' when the cells look like decimal-comma numbers, else '.' (per file).

    Evidence for a decimal comma: ``1.234,5``, ``12,5``, ``1234,56``; for a point:
    ``1,234.5``, ``12.5``, ``1234.56``. Groups of three after the separator (``1,234``)
    are ambiguous; a tie is a point unless the file is semicolon-separated (common
    practice where the comma is the decimal mark)."""
    if len(values) > 20000:
        values = values.iloc[:: max(1, len(values) // 20000)]
    s = values[values.str.contains(r"[.,]", regex=True)]
    s = pd.Series(s.unique(), dtype=str).str.replace(r"[^\d.,\-]", "", regex=True)
    comma = (s.str.fullmatch(r"-?\d{1,3}(\.\d{3})+,\d+") | s.str.fullmatch(r"-?\d+,(\d{1,2}|\d{4,})")
             | s.str.fullmatch(r"-?\d{4,},\d+")).sum()
    point = (s.str.fullmatch(r"-?\d{1,3}(,\d{3})+\.\d+") | s.str.fullmatch(r"-?\d+\.(\d{1,2}|\d{4,})")
             | s.str.fullmatch(r"-?\d{4,}\.\d+")).sum()
    if comma > point:
        return ","
    if point > comma:
        return "."
    return "," if delimiter == "semicolon" else "."


def parse_numbers(values: pd.Series, decimal: str = ".") -> tuple[np.ndarray, np.ndarray]:
    """Vectorised: text cells -> (float64 values, mask of cells that are not numbers).

    Missing markers (blank, n/a, NA, -, .., null) give NaN and are not errors."""
    out, bad, _ = _parse_numbers(values, decimal)
    return out, bad


def _parse_numbers(values: pd.Series, decimal: str) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """(values, not-a-number mask, missing mask). Plain numbers take the C fast path
    (``pandas.to_numeric``); only the other cells go through the text clean-up."""
    values = values.astype(str)
    n = len(values)
    out = np.full(n, np.nan)
    rest = np.ones(n, dtype=bool)
    if decimal == ".":
        fast = pd.to_numeric(values, errors="coerce").to_numpy(dtype=float)
        done = ~np.isnan(fast)
        out[done] = fast[done]
        rest = ~done
    missing = np.zeros(n, dtype=bool)
    t = values[rest].str.strip()
    missing[rest] = t.str.lower().isin(_MISSING).to_numpy()
    need = rest & ~missing
    t = t[~missing[rest]]
    if need.any():
        x = t
        neg = x.str.fullmatch(r"\(.*\)").to_numpy(dtype=bool)
        x = x.str.replace(r"^\((.*)\)$", r"\1", regex=True).str.strip()
        # sign may sit before or after a currency symbol: -$1,234 or $-1,234
        sign = x.str.startswith("-").to_numpy(dtype=bool)
        x = x.str.replace(r"^[-+]\s*", "", regex=True)
        x = x.str.replace(_CURRENCY, "", regex=True).str.strip()
        sign2 = x.str.startswith("-").to_numpy(dtype=bool)
        x = x.str.replace(r"^[-+]", "", regex=True)
        x = x.str.replace(r"[\s\u00a0\u202f']", "", regex=True)
        pattern = _NUM_POINT if decimal == "." else _NUM_COMMA
        valid = x.str.fullmatch(pattern).to_numpy(dtype=bool)
        if decimal == ".":
            y = x.str.replace(",", "", regex=False)
        else:
            y = x.str.replace(".", "", regex=False).str.replace(",", ".", regex=False)
        nums = pd.to_numeric(y.where(valid, "nan"), errors="coerce").to_numpy(dtype=float)
        nums = np.where(neg ^ sign ^ sign2, -nums, nums)
        out[need] = nums
    bad = ~missing & ~np.isfinite(out)
    out[bad] = np.nan
    return out, bad, missing


def _ustrip(s: pd.Series) -> pd.Series:
    """``str.strip`` computed over the unique values only (fast for repetitive columns)."""
    codes, uniques = pd.factorize(s.to_numpy(dtype=object))
    stripped = np.array([str(u).strip() for u in uniques], dtype=object)
    out = np.where(codes >= 0, stripped[np.where(codes >= 0, codes, 0)] if len(stripped) else "", "")
    return pd.Series(out, index=s.index, dtype=object)


# --- layouts ----------------------------------------------------------------------------

def _norm(h: str) -> str:
    h = h.split(":", 1)[0] if ": " in h else h  # SDMX-CSV 'labels=both': "FREQ: Frequency"
    return re.sub(r"[\s\-]+", "_", h.strip().casefold())


def _split_header(h: str) -> tuple[str, str | None, str | None]:
    """'Revenue (USD thousands)' -> ('Revenue', 'USD thousands', None);
    'Price index (2020=100)' -> ('Price index', '2020=100', '2020').

    Only a trailing ``(...)`` or ``[...]`` group that looks like a unit is split off;
    any other header (``=HYPERLINK("x","y")``, ``Sales (north (new))``) is a name and
    is kept whole."""
    m = _UNIT_IN_HEADER.match(h)
    if not m or not m.group("name").strip():
        return h, None, None
    name, unit = m.group("name").strip(), (m.group("u1") or m.group("u2")).strip()
    if not _UNIT_TEXT.fullmatch(unit) or not re.search(r"[^\W_]|[$€£¥%]", unit):
        return h, None, None  # not unit-like: the header is a name, kept whole
    if name[0] in "=+-@" and not m.group("space") and (name[-1].isalnum() or name[-1] == "_"):
        return h, None, None  # NAME(...) after a formula mark: a function call, not a unit
    ref = _REFERENCE.search(unit)
    if ref:
        return name, unit, ref.group("ref").strip()
    return name, unit, None


@dataclass
class _Long:
    """Every cell of the file as one long table of text (internal)."""

    series: pd.Series  # str
    period: pd.Series  # str
    value: pd.Series  # str
    row: np.ndarray
    column: np.ndarray  # header name of the value cell, object
    period_column: np.ndarray  # header name where the period came from
    unit: pd.Series | None = None
    status: pd.Series | None = None
    status_sdmx: bool = False
    vintage: pd.Series | None = None
    headers: Mapping[str, str] | None = None  # series name -> original header (wide)
    units: Mapping[str, str | None] | None = None
    references: dict[str, str | None] | None = None
    series_column: str | None = None
    status_column: str | None = None
    vintage_column: str | None = None


def _period_share(col: pd.Series, fy_start: int | None, *, years_count: bool = True) -> float:
    """Share of the (first 5,000 non-blank) cells that are period labels. With
    ``years_count=False`` plain numbers like 2019 do not count (they may be amounts)."""
    sample = col.iloc[:5000]
    sample = sample[sample.str.strip() != ""]
    if len(sample) == 0:
        return 0.0
    try:
        parsed = labels.parse_values(sample.tolist(), fy_start if fy_start and fy_start != 1 else 7)
    except RealbasisError as e:
        # slashed dates of unclear day/month order are periods all the same: the real
        # parse then raises PE106 with the column named
        return 1.0 if e.code == labels.PE106 else 0.0
    ok = parsed.keys != ""
    if not years_count:
        ok &= parsed.kinds != labels.YEAR
    return float(ok.mean())


def _layout(t: _Table, fy_start: int | None, name: str) -> tuple[Layout, dict[str, int], bool]:
    """Decide the layout; returns (layout, role -> column position, transposed)."""
    normed = [_norm(h) for h in t.header]
    upper = [h.split(":", 1)[0].strip().upper() for h in t.header]
    roles: dict[str, int] = {}
    if "TIME_PERIOD" in upper:
        if "OBS_VALUE" not in upper:
            raise fail(IN019, "an SDMX-CSV file needs an OBS_VALUE column",
                       expected="columns TIME_PERIOD and OBS_VALUE", found="TIME_PERIOD only",
                       fix="Export the data again as SDMX-CSV with observation values.", file=name)
        return "sdmx", {"period": upper.index("TIME_PERIOD"), "value": upper.index("OBS_VALUE")}, False
    if "OBS_VALUE" in upper:
        raise fail(IN019, "an SDMX-CSV file needs a TIME_PERIOD column",
                   expected="columns TIME_PERIOD and OBS_VALUE", found="OBS_VALUE only",
                   fix="Export the data again as SDMX-CSV with time periods.", file=name)

    def find(names: frozenset[str]) -> int | None:
        return next((i for i, h in enumerate(normed) if h in names), None)

    period, value, series = find(_PERIOD_NAMES), find(_VALUE_NAMES), find(_SERIES_NAMES)
    if period is not None and value is not None and series is not None:
        roles = {"period": period, "value": value, "series": series}
        for role, names in (("unit", _UNIT_NAMES), ("status", _STATUS_NAMES),
                            ("vintage", _VINTAGE_NAMES)):
            pos = find(names)
            if pos is not None:
                roles[role] = pos
        unused = [t.header[i] for i in range(len(t.header)) if i not in roles.values()]
        return "long", {**roles, "_unused": unused}, False  # type: ignore[dict-item]
    def wide(i: int) -> tuple[Layout, dict[str, int], bool]:
        roles = {"period": i}
        for role, names in (("status", _STATUS_NAMES), ("vintage", _VINTAGE_NAMES)):
            pos = find(names)
            if pos is not None and pos != i:
                roles[role] = pos
        return "wide", roles, False

    # wide: a period column found by its name, else the first column by its content,
    # else periods across the header row (one row per series: budget tables), else any
    # other column by content (plain numbers such as 2019 do not count there: amounts)
    if period is not None and _period_share(t.cells[period], fy_start) >= 0.8:
        return wide(period)
    if _period_share(t.cells[0], fy_start) >= 0.8:
        return wide(0)
    heads = pd.Series(t.header[1:], dtype=str)
    if len(heads) and _period_share(heads, fy_start) >= 0.8:
        return "wide", {"series": 0}, True
    for i in range(1, len(t.header)):
        if i != period and _period_share(t.cells[i], fy_start, years_count=False) >= 0.8:
            return wide(i)
    raise fail(IN009, "no column of periods found",
               expected="a column of period labels (" + labels.ACCEPTED + "), or periods across the header row",
               found="columns " + ", ".join(repr(h) for h in t.header[:8]) + (" ..." if len(t.header) > 8 else ""),
               fix="Add a period column (e.g. 'period' with 2024-01, 2024Q1 or FY2025).",
               file=name, sheet=t.sheet)


def _units_row(t: _Table, period: int) -> tuple[_Table, dict[str, str]]:
    """A second header row of units (blank period cell, text that is no number under
    the series columns, e.g. ``,USD thousands,index``) is taken as the units and removed."""
    if len(t.cells) < 2:
        return t, {}
    first = t.cells.iloc[0]
    if first.iloc[period].strip():
        return t, {}
    cells = {t.header[i]: str(first.iloc[i]).strip() for i in range(len(t.header)) if i != period}
    filled = {h: v for h, v in cells.items() if v}
    if not filled:
        return t, {}
    _, bad, _ = _parse_numbers(pd.Series(list(filled.values()), dtype=str), ".")
    if not bad.all():
        return t, {}
    return (_Table(t.header, t.cells.iloc[1:], t.rows[1:], t.fmt, t.encoding, t.delimiter,
                   t.sheet, t.sheets, t.skipped), filled)


def _wide(t: _Table, roles: dict[str, int], name: str,
          row_units: Mapping[str, str] | None = None) -> tuple[_Long, list[Problem]]:
    problems: list[Problem] = []
    p = roles["period"]
    skip = {p, roles.get("status", -1), roles.get("vintage", -1)}
    ignored = [i for i, h in enumerate(t.header) if i not in skip and _norm(h) in _IGNORED_NAMES]
    value_cols = [i for i in range(len(t.header)) if i not in skip and i not in ignored]
    if ignored:
        problems.append(Problem(IN025, "columns of notes were ignored", "", ", ".join(t.header[i] for i in ignored),
                                "Nothing to do if they hold notes only.",
                                Location(file=name, sheet=t.sheet, column=t.header[ignored[0]]), "warning"))
    if not value_cols:
        raise fail(IN018, "the file has a period column but no series columns",
                   expected="one column of values per series next to the period column",
                   found="only " + ", ".join(repr(h) for h in t.header),
                   fix="Add the value columns, one per series.", file=name, sheet=t.sheet)
    split = {t.header[i]: _split_header(t.header[i]) for i in value_cols}
    short = [split[t.header[i]][0] for i in value_cols]
    use_short = len({s.casefold() for s in short}) == len(short)
    names = [s if use_short else t.header[i] for s, i in zip(short, value_cols, strict=True)]
    if len(value_cols) == 1 and _norm(names[0]) in _VALUE_NAMES:
        # 'date,value' files: the file name is the better series name
        names = [Path(name).stem or names[0]]
    n = len(t.cells)
    k = len(value_cols)
    vals = t.cells[value_cols].to_numpy(dtype=object).reshape(-1)  # row-major
    period = np.repeat(t.cells[p].to_numpy(dtype=object), k)
    rows = np.repeat(t.rows, k)
    columns = np.tile(np.array([t.header[i] for i in value_cols], dtype=object), n)
    series = np.tile(np.array(names, dtype=object), n)
    long = _Long(pd.Series(series, dtype=str), pd.Series(period, dtype=str),
                 pd.Series(vals, dtype=str), rows, columns,
                 np.full(len(vals), t.header[p], dtype=object))
    if "status" in roles:
        long.status = pd.Series(np.repeat(t.cells[roles["status"]].to_numpy(dtype=object), k), dtype=str)
        long.status_column = t.header[roles["status"]]
    if "vintage" in roles:
        long.vintage = pd.Series(np.repeat(t.cells[roles["vintage"]].to_numpy(dtype=object), k),
                                 dtype=str)
        long.vintage_column = t.header[roles["vintage"]]
    long.headers = dict(zip(names, (t.header[i] for i in value_cols), strict=True))
    row_units = row_units or {}
    long.units = {nm: row_units.get(t.header[i]) or split[t.header[i]][1]
                  for nm, i in zip(names, value_cols, strict=True)}
    long.references = {}
    for nm, i in zip(names, value_cols, strict=True):
        ref = _REFERENCE.search(row_units.get(t.header[i], ""))
        long.references[nm] = ref.group("ref").strip() if ref else split[t.header[i]][2]
    return long, problems


def _transposed(t: _Table, name: str) -> tuple[_Long, list[Problem]]:
    """Periods across the header row; first column names the series."""
    heads = t.header[1:]
    names = t.cells[0].str.strip()
    if not len(heads):
        raise fail(IN018, "no period columns", file=name)
    k = len(heads)
    vals = t.cells[list(range(1, k + 1))].to_numpy(dtype=object).reshape(-1)
    split = {nm: _split_header(nm) for nm in names}
    short = [split[nm][0] for nm in names]
    use_short = len({s.casefold() for s in short}) == len(short)
    final = [s if use_short else nm for s, nm in zip(short, names, strict=True)]
    long = _Long(pd.Series(np.repeat(np.array(final, dtype=object), k), dtype=str),
                 pd.Series(np.tile(np.array(heads, dtype=object), len(names)), dtype=str),
                 pd.Series(vals, dtype=str), np.repeat(t.rows, k),
                 np.tile(np.array(heads, dtype=object), len(names)),
                 np.tile(np.array(heads, dtype=object), len(names)))
    long.headers = dict(zip(final, names, strict=True))
    long.units = {f: split[nm][1] for f, nm in zip(final, names, strict=True)}
    long.references = {f: split[nm][2] for f, nm in zip(final, names, strict=True)}
    return long, []


def _long(t: _Table, roles: dict[str, int]) -> _Long:
    roles = {k: v for k, v in roles.items() if not k.startswith("_")}
    c = t.cells
    n = len(c)
    long = _Long(_ustrip(c[roles["series"]]), c[roles["period"]], c[roles["value"]], t.rows,
                 np.full(n, t.header[roles["value"]], dtype=object),
                 np.full(n, t.header[roles["period"]], dtype=object))
    long.series_column = t.header[roles["series"]]
    if "unit" in roles:
        long.unit = _ustrip(c[roles["unit"]])
    if "status" in roles:
        long.status = c[roles["status"]]
        long.status_column = t.header[roles["status"]]
    if "vintage" in roles:
        long.vintage = c[roles["vintage"]]
        long.vintage_column = t.header[roles["vintage"]]
    return long


def _sdmx(t: _Table, roles: dict[str, int]) -> _Long:
    upper = [h.split(":", 1)[0].strip().upper() for h in t.header]
    p = roles["period"]
    dims = [i for i in range(len(upper)) if i < p and upper[i] not in _SDMX_STRUCT
            and upper[i] not in _SDMX_ATTRS]
    c = t.cells
    n = len(c)
    if dims:
        codes = [c[i].str.split(":", n=1).str[0].str.strip() for i in dims]
        key = codes[0]
        for part in codes[1:]:
            key = key + "." + part
    else:
        key = pd.Series(["series"] * n, dtype=str, index=c.index)
    long = _Long(key, c[p], c[roles["value"]], t.rows,
                 np.full(n, t.header[roles["value"]], dtype=object),
                 np.full(n, t.header[p], dtype=object))
    if "UNIT_MEASURE" in upper:
        unit = c[upper.index("UNIT_MEASURE")].str.split(":", n=1).str[0].str.strip()
        if "UNIT_MULT" in upper:
            mult = c[upper.index("UNIT_MULT")].str.split(":", n=1).str[0].str.strip()
            unit = unit.where(mult.isin(["", "0"]), unit + " x10^" + mult)
        long.unit = unit
    if "OBS_STATUS" in upper:
        long.status = c[upper.index("OBS_STATUS")].str.split(":", n=1).str[0].str.strip()
        long.status_sdmx = True
        long.status_column = t.header[upper.index("OBS_STATUS")]
    refs: dict[str, str | None] = {}
    if "BASE_PER" in upper:
        base = c[upper.index("BASE_PER")].str.strip()
        first = pd.DataFrame({"k": key.to_numpy(), "b": base.to_numpy()})
        first = first[first["b"] != ""].drop_duplicates("k")
        refs = dict(zip(first["k"], first["b"], strict=True))
    long.references = refs
    return long


# --- the common path --------------------------------------------------------------------

def _kind_guess(name: str, header: str, unit: str | None, vmin: float, vmax: float,
                has100: bool) -> tuple[Kind, str]:
    if _INDEX_WORDS.search(header):
        return "index", f"kind 'index' guessed from the words {header!r}"
    if unit and _INDEX_WORDS.search(unit):
        return "index", f"kind 'index' guessed from the unit {unit!r}"
    if _STOCK_WORDS.search(header):
        return "stock", f"kind 'stock' guessed from the words {header!r}"
    if _FLOW_WORDS.search(header):
        return "flow", f"kind 'flow' guessed from the words {header!r}"
    if (has100 and np.isfinite(vmin) and vmin > 0 and vmax / vmin < 20
            and not (unit and _MONEY.search(unit)) and not _MONEY.search(header)):
        return "index", "kind 'index' guessed from the values (positive, equal to 100 in one period)"
    return "flow", "kind 'flow' assumed (no index or balance words in the name)"


class _col:
    """A lazily built column holding one name (for cell-problem locations)."""

    def __init__(self, long: _Long, name: str | None) -> None:
        self.n, self.name = len(long.row), name or ""

    def __getitem__(self, pos: np.ndarray) -> np.ndarray:
        return np.full(len(pos), self.name, dtype=object)


def _cell_problems(code: str, message: str, mask: np.ndarray, long: _Long, name: str,
                   sheet: str | None, found: pd.Series | np.ndarray, expected: str, fix: str,
                   column: np.ndarray | _col | None = None, severity: str = "error",
                   per_row: bool = False) -> list[Problem]:
    pos = np.flatnonzero(mask)
    if not len(pos):
        return []
    per_row = per_row and long.headers is not None  # wide: one problem per row
    if per_row:
        _, first = np.unique(long.row[pos], return_index=True)
        pos = pos[np.sort(first)]
    rows = long.row[pos]
    cols = (long.column if column is None else column)[pos]
    ser = long.series.to_numpy(dtype=object)[pos]
    f = np.asarray(found, dtype=object)[pos]
    return [Problem(code, message, expected, repr(v), fix,
                    Location(file=name, sheet=sheet, row=int(r), column=str(c),
                             series=None if per_row else (str(s) or None)),
                    severity)  # type: ignore[arg-type]
            for r, c, s, v in zip(rows.tolist(), cols.tolist(), ser.tolist(), f.tolist(), strict=True)]


def _build(long: _Long, layout: Layout, t: _Table, name: str, fy_start: int | None,
           kinds: Mapping[str, Kind] | None, decimal: str) -> tuple[list[Series], list[Problem]]:
    problems: list[Problem] = []
    sheet = t.sheet
    value_text = long.value
    series_text = _ustrip(long.series)
    period_text = _ustrip(long.period)
    numbers, bad_num, missing_num = _parse_numbers(value_text, decimal)
    # rows with neither period nor value carry nothing (e.g. an empty series cell in a wide row)
    empty = (period_text == "").to_numpy() & missing_num
    keep = ~empty
    no_name = (series_text == "").to_numpy() & keep
    problems += _cell_problems(IN020, "a row has values but no series name", no_name, long, name,
                               sheet, long.series, "the series name", "Fill in the series name.",
                               column=_col(long, long.series_column))
    keep &= ~no_name

    parsed = labels.parse_values(period_text,
                                 fy_start, where={"file": name, "sheet": sheet,
                                                  "column": str(long.period_column[0]) if len(long.period_column) else None})
    bad_period = keep & (parsed.keys == "")
    problems += _cell_problems(IN010, "the period is not a period label", bad_period, long, name,
                               sheet, period_text, labels.ACCEPTED,
                               "Write the period in an accepted form, e.g. 2024-01, 2024Q1, FY2025.",
                               column=long.period_column, per_row=True)
    keep &= ~bad_period

    bad_num &= keep
    problems += _cell_problems(IN011, "the cell is not a number", bad_num, long, name, sheet,
                               value_text, "a number such as 1234.5, 1,234.5, (1,234) or $1,234; "
                               "blank, n/a or - for missing",
                               "Correct the number or leave the cell blank if it is missing.")

    status = None
    if long.status is not None:
        st_text = _ustrip(long.status)
        if long.status_sdmx:
            status = st_text.str.upper().map(_SDMX_STATUS).fillna("final").to_numpy(dtype=object)
        else:
            status = st_text.str.lower().map(_STATUS_WORDS).to_numpy(dtype=object)
            bad_st = keep & pd.isna(status)
            problems += _cell_problems(IN016, "the status is not final, preliminary or projected",
                                       bad_st, long, name, sheet, st_text,
                                       "final, preliminary (p, provisional, estimate) or projected "
                                       "(forecast, budget); blank = final",
                                       "Write one of the accepted status words.",
                                       column=_col(long, long.status_column))
            status = np.where(pd.isna(status), "final", status)

    vintage = None
    if long.vintage is not None:
        vt = _ustrip(long.vintage)
        u, inv = np.unique(vt.to_numpy(dtype=str), return_inverse=True)
        dates = pd.to_datetime(pd.Series(u), errors="coerce", format="ISO8601")
        iso = np.where(dates.isna(), None, dates.dt.strftime("%Y-%m-%d").to_numpy(dtype=object))
        iso = np.where(u == "", "", iso)
        vintage = iso[inv]
        bad_v = keep & pd.isna(vintage)
        problems += _cell_problems(IN023, "the vintage is not a date", bad_v, long, name, sheet, vt,
                                   "an ISO date such as 2025-03-15 (the date the values were as of)",
                                   "Write the as-of date as YYYY-MM-DD.",
                                   column=_col(long, long.vintage_column))
        vintage = np.where(pd.isna(vintage), "", vintage)

    # group rows into series (name, vintage)
    sel = np.flatnonzero(keep)
    sname = series_text.to_numpy(dtype=object)[sel]
    vint = vintage[sel] if vintage is not None else np.full(len(sel), "", dtype=object)
    gkey = pd.MultiIndex.from_arrays([sname, vint]) if vintage is not None else pd.Index(sname)
    gcodes, guniq = pd.factorize(gkey, sort=False)
    keys_all = parsed.keys[sel]
    # frequency keys as small integers (fast grouping); _FKEYS[code] is the key
    keys = np.full(len(sel), -1, dtype=np.int8)
    for code, key in enumerate(_FKEYS):
        keys[keys_all == key] = code
    ords = parsed.ordinals[sel]
    kinds_sel = parsed.kinds[sel]
    vals = numbers[sel]
    rows_sel = long.row[sel]
    stat_sel = status[sel] if status is not None else None

    # target-frequency ordinals per row, per frequency key (vectorised per key)
    date_only = {}
    for key in np.unique(keys):
        m = keys == key
        date_only[key] = bool((kinds_sel[m] == labels.DATE).all())
    freq_key = keys.copy()
    target_ord = np.zeros(len(sel), dtype=np.int64)
    for key in np.unique(keys):
        m = keys == key
        k2 = key
        if _FKEYS[key] == "M" and date_only[key]:
            k2 = _FKEYS.index(labels._date_frequency(ords[m], parsed.fy_start))
            freq_key[m] = k2
        idx = labels._to_periods(ords[m], _FKEYS[k2], parsed.fy_start)
        target_ord[m] = idx.asi8

    frame = pd.DataFrame({"g": gcodes, "f": freq_key, "o": target_ord, "v": vals, "r": rows_sel,
                          "i": np.arange(len(sel))})
    # mixed frequencies inside one series
    grouped = frame.groupby("g", sort=False)["f"]
    spread = grouped.max() - grouped.min()
    mixed = set(spread.index[spread.to_numpy() > 0].tolist())
    for g in sorted(mixed):
        sub = frame[frame["g"] == g]
        counts = sub["f"].value_counts()
        minority = counts.index[-1]
        first = sub[sub["f"] == minority].iloc[0]
        gname = guniq[g] if vintage is None else guniq[g][0]
        problems.append(Problem(
            IN014, "the series mixes frequencies", "one frequency per series",
            "; ".join(f"{labels._FREQ_WORDS[_FKEYS[k]]}: {c} rows" for k, c in counts.items()),
            "Remove total or subtotal rows, or give each frequency its own series.",
            Location(file=name, sheet=sheet, row=int(first["r"]),
                     column=str(long.period_column[sel[int(first["i"])]]), series=str(gname))))
    if mixed:
        frame = frame[~frame["g"].isin(mixed)]

    # duplicate periods
    dup = frame.duplicated(["g", "o"], keep="first").to_numpy()
    if dup.any():
        dmask = np.zeros(len(long.row), dtype=bool)
        dmask[sel[frame["i"].to_numpy()[dup]]] = True
        problems += _cell_problems(IN012, "the period appears twice in this series", dmask, long,
                                   name, sheet, period_text, "each period once per series",
                                   "Delete or merge the repeated row (the first one is kept).",
                                   column=long.period_column, per_row=True)
        frame = frame[~dup]

    frame = frame.sort_values(["g", "o"], kind="stable")
    gcol = frame["g"].to_numpy()
    starts = np.flatnonzero(np.r_[True, gcol[1:] != gcol[:-1]]) if len(gcol) else np.array([], int)
    ends = np.r_[starts[1:], len(gcol)] if len(gcol) else np.array([], int)
    out: list[Series] = []
    kinds = dict(kinds or {})
    used_kinds: set[str] = set()
    o_all = frame["o"].to_numpy()
    v_all = frame["v"].to_numpy()
    i_all = frame["i"].to_numpy()
    f_all = frame["f"].to_numpy()
    nonpos_mask = np.zeros(len(long.row), dtype=bool)
    unit_all = long.unit.to_numpy(dtype=object) if long.unit is not None else None
    for a, b in zip(starts.tolist(), ends.tolist(), strict=True):
        g = int(gcol[a])
        gname = str(guniq[g] if vintage is None else guniq[g][0])
        gvint = None if vintage is None else (str(guniq[g][1]) or None)
        key = _FKEYS[int(f_all[a])]
        freq: Frequency = labels.frequency_of(key, parsed.fy_start)
        o = o_all[a:b]
        v = v_all[a:b]
        lo, hi = int(o[0]), int(o[-1])
        full = np.full(hi - lo + 1, np.nan)
        full[o - lo] = v
        pidx = pd.PeriodIndex(pd.arrays.PeriodArray(np.arange(lo, hi + 1, dtype=np.int64),
                                                    dtype=pd.PeriodDtype(freq.pandas_freq)))
        values = pd.Series(full, index=pidx, name=gname)
        # unit
        unit: str | None = None
        if long.units is not None:
            unit = long.units.get(gname)
        if unit_all is not None:
            us = unit_all[sel[i_all[a:b]]]
            us = [u for u in pd.unique(us) if u]
            if us:
                unit = str(us[0])
            if len(us) > 1:
                problems.append(Problem(IN024, "the series has more than one unit",
                                        "one unit per series", ", ".join(map(str, us[:5])),
                                        f"Check the unit column; {us[0]!r} is used.",
                                        Location(file=name, sheet=sheet, series=gname), "warning"))
        header = (long.headers or {}).get(gname, gname)
        reference = (long.references or {}).get(gname)
        if reference is None and unit:
            ref = _REFERENCE.search(unit)
            reference = ref.group("ref").strip() if ref else None
        finite = v[np.isfinite(v)]
        vmin = float(finite.min()) if len(finite) else np.nan
        vmax = float(finite.max()) if len(finite) else np.nan
        has100 = bool(np.isclose(finite, 100.0).any()) if len(finite) else False
        notes: list[str] = []
        if gname in kinds:
            kind = kinds[gname]
            used_kinds.add(gname)
            notes.append(f"kind {kind!r} given by the user")
        else:
            kind, why = _kind_guess(gname, header, unit, vmin, vmax, has100)
            notes.append(why)
        if kind == "index":
            bad = np.isfinite(v) & (v <= 0)
            if bad.any():
                nonpos_mask[sel[i_all[a:b][bad]]] = True
        st_series = None
        if stat_sel is not None:
            st = stat_sel[i_all[a:b]]
            if (st != "final").any():
                st_full = np.full(hi - lo + 1, "final", dtype=object)
                st_full[o - lo] = st
                st_series = pd.Series(st_full, index=pidx, dtype=object)
        # gaps
        gaps = np.array([], dtype=np.int64)
        if len(o) < hi - lo + 1:
            present = np.zeros(hi - lo + 1, dtype=bool)
            present[o - lo] = True
            gaps = np.flatnonzero(~present) + lo
        if len(gaps):
            gl = freq.labels(pidx[gaps - lo][:5])
            problems.append(Problem(
                IN013, f"{len(gaps)} period(s) missing inside the series", "one row per period from first to last",
                "missing " + ", ".join(gl) + (" ..." if len(gaps) > 5 else ""),
                "Add the missing periods (blank values are fine) or check the period labels.",
                Location(file=name, sheet=sheet, series=gname, period=gl[0]), "warning"))
        out.append(Series(name=gname, values=values, frequency=freq, kind=kind, unit=unit,
                          status=st_series, source=name, vintage=gvint, reference=reference,
                          notes=tuple(notes)))
    problems += _cell_problems(IN015, "an index value must be above zero", nonpos_mask, long, name,
                               sheet, value_text, "a positive index level (e.g. 100 in the reference period)",
                               "Correct the value; if this is not an index, say the kind is flow or stock.")
    missing_kinds = sorted(set(kinds) - used_kinds)
    if missing_kinds:
        problems.append(Problem(IN022, "kinds were given for series not in the file",
                                "names of series in the file: " + ", ".join(s.name for s in out[:10]),
                                ", ".join(missing_kinds), "Check the spelling of the series names.",
                                Location(file=name, sheet=sheet), "warning"))
    return out, problems


def _sort_key(p: Problem) -> tuple[int, int]:
    return (0 if p.severity == "error" else 1, p.where.row or 0)


@dataclass(frozen=True)
class Table:
    """A file read as a plain table of text cells (what :func:`read_table` returns).

    ``header`` holds the column names (stripped; a blank name with data under it becomes
    ``column N``); ``cells`` is a DataFrame of ``str`` cells with columns ``0..n-1`` in
    header order, one row per data row (blank rows and title lines removed); ``rows`` is
    the 1-based file row of each data row (for a workbook: the sheet row). ``format`` is
    'csv' or 'xlsx'; ``encoding`` and ``delimiter`` ('comma', 'semicolon', 'tab') say how
    a text file was read; ``sheet``/``sheets`` name the sheet read and all sheets of a
    workbook; ``skipped`` counts lines above the header; ``file`` is the name used in
    messages (``filename``, else the path's name, else 'upload'). ``warnings`` carries IN026
    (lines skipped) and IN028 (blank column name)."""

    header: tuple[str, ...]
    cells: pd.DataFrame
    rows: np.ndarray
    format: str
    encoding: str | None = None
    delimiter: str | None = None
    sheet: str | None = None
    sheets: tuple[str, ...] = ()
    skipped: int = 0
    file: str = ""
    warnings: tuple[Problem, ...] = ()


def _read_table(source: str | Path | bytes, filename: str | None, sheet: str | None,
                settings: Settings) -> tuple[_Table, list[Problem], str]:
    data, name = _read_bytes(source, filename, settings)
    if data.startswith(b"PK\x03\x04") or name.lower().endswith((".xlsx", ".xlsm")):
        raw = _read_xlsx(data, name, sheet, settings)
    elif data.startswith(b"\xd0\xcf\x11\xe0"):
        raise fail(IN005, "old-style .xls workbooks are not read", expected="CSV or .xlsx",
                   found="an .xls (BIFF) workbook", fix="Save the workbook as .xlsx or CSV.", file=name)
    else:
        if sheet is not None:
            raise fail(IN008, "a sheet was named but the file is not a workbook",
                       expected="an .xlsx workbook when a sheet is named", found="a text file",
                       fix="Leave out the sheet name for CSV files.", file=name)
        raw = _read_text(data, name, settings)
    table, problems = _finish_table(raw, name, settings)
    return table, problems, name


def read_table(source: str | Path | bytes, *, filename: str | None = None,
               sheet: str | None = None, settings: Settings | None = None) -> Table:
    """Read a CSV or XLSX file as a plain table of text cells, without looking for series.

    The first stage of :func:`read_file`, for other readers of tabular files (e.g. price
    files in :mod:`pipeline.indexnum`): the same size and row limits (IN001, IN002),
    encodings, delimiter sniffing with RFC 4180 quoting (quoted fields may hold the
    delimiter, doubled quotes and line breaks), title lines, workbook sheets and coded
    errors (IN003-IN008, IN017, IN027). ``source`` is a path or the file's bytes (then
    ``filename`` names it in messages, and an ``.xlsx`` name like the zip signature marks
    a workbook); ``sheet`` picks a workbook sheet (an error for a text file). Cells stay
    text: use :func:`detect_decimal` and :func:`parse_numbers` for numbers and
    :mod:`pipeline.labels` for periods."""
    settings = settings or load_settings()
    t, problems, name = _read_table(source, filename, sheet, settings)
    return Table(tuple(t.header), t.cells, t.rows, t.fmt, t.encoding, t.delimiter, t.sheet,
                 t.sheets, t.skipped, name, tuple(problems))


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
    if kinds:
        wrong = {k: v for k, v in kinds.items() if v not in KINDS}
        if wrong:
            k, v = next(iter(wrong.items()))
            raise fail(IN021, f"the kind given for {k!r} is not one of flow, stock, index",
                       expected="flow, stock or index", found=repr(v),
                       fix="Give flow (amounts over a period), stock (balances at a date) or index.",
                       series=k)
    table, problems, name = _read_table(source, filename, sheet, settings)
    layout, roles, transposed = _layout(table, fy_start, name)
    if layout == "sdmx":
        long = _sdmx(table, roles)
    elif layout == "long":
        unused: list[str] = roles.pop("_unused", [])  # type: ignore[assignment]
        if unused:
            problems.append(Problem(IN025, "columns not used by a long layout were ignored",
                                    "series, period, value and optional unit, status, vintage",
                                    ", ".join(unused), "Nothing to do if they hold notes only.",
                                    Location(file=name, sheet=table.sheet, column=unused[0]),
                                    "warning"))
        long = _long(table, roles)
    elif transposed:
        long, more = _transposed(table, name)
        problems += more
    else:
        table, row_units = _units_row(table, roles["period"])
        # one period column shared by every series: mixed frequencies stop at once
        labels.parse_label_column(table.cells[roles["period"]], fy_start, file=name,
                                  column=table.header[roles["period"]], rows=table.rows)
        long, more = _wide(table, roles, name, row_units)
        problems += more
    decimal = detect_decimal(long.value.astype(str), table.delimiter)
    series, cell_problems = _build(long, layout, table, name, fy_start, kinds, decimal)
    problems += cell_problems
    problems.sort(key=_sort_key)
    return Intake(tuple(series), tuple(problems), name, layout, table.sheet, table.sheets,
                  table.fmt, table.encoding, table.delimiter, decimal, len(table.cells))


__all__ = ["FORMATS", "Intake", "Table", "detect_decimal", "list_sheets", "parse_numbers", "read_file",
           "read_table"]
