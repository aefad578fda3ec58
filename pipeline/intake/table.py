"""Stage 3, the table in the cells: leave out blank rows and columns, skip title lines
above the header, take the header row, name blank column names, refuse duplicate names
and too many rows.

:class:`Grid` is what a reader (``text``, ``workbook``) hands over: every row of cells as
text, with its file row. :class:`Table` is the table found in it (what
:func:`pipeline.ingest.read_table` returns)."""

from __future__ import annotations

import dataclasses
import functools
import re
from dataclasses import dataclass

import numpy as np
import pandas as pd

from .. import labels
from ..errors import Location, Problem, fail
from ..settings import Settings
from .codes import IN002, IN003, IN017, IN026, IN028, IN029, IN035
from .problems import clip

MAX_TITLE_ROWS = 30  # title or note rows above a table's header that are skipped
MAX_FOOTNOTE_ROWS = 200  # note rows below a table that are skipped as footnotes
# words a footnote starts with (agencies' tables: common practice)
_FOOTNOTE = re.compile(r"^\s*(?:\(?\d{1,2}[).]|[*†‡§¹²³]|\(?[a-z]\)\s|(?:source|sources|note|notes|"
                       r"footnotes?|remarks?|symbols?|legend|explanation)\b|[a-z]\s*[=:]\s)",
                       re.IGNORECASE)
# a marker legend: 'p = preliminary', '(r) revised', 'e: estimated', 'f forecast'
_LEGEND = re.compile(r"(?<![A-Za-z])\(?([A-Za-z])\)?\s*(?:[=:–—-]\s*)?"
                     r"(preliminary|provisional|estimated|estimate|forecasts?|projected|projection|"
                     r"revised|final)\b", re.IGNORECASE)
_LEGEND_STATUS = {"preliminary": "preliminary", "provisional": "preliminary",
                  "estimated": "preliminary", "estimate": "preliminary", "forecast": "projected",
                  "forecasts": "projected", "projected": "projected", "projection": "projected",
                  "revised": "final", "final": "final"}


@dataclass(frozen=True)
class Grid:
    """Rows of text cells as a reader found them (internal).

    ``values``: 2-D object array of str cells; ``rows``: 1-based file row of each row;
    ``skipped``: file lines before the first row (a text reader's title lines);
    ``notes``: what the reader did, in words (for the reading note)."""

    values: np.ndarray
    rows: np.ndarray
    format: str
    encoding: str | None = None
    delimiter: str | None = None
    sheet: str | None = None
    sheets: tuple[str, ...] = ()
    skipped: int = 0
    notes: tuple[str, ...] = ()
    warnings: tuple[Problem, ...] = ()


@dataclass(frozen=True)
class Table:
    """A file read as a plain table of text cells (what :func:`read_table` returns).

    ``header`` holds the column names (stripped; a blank name with data under it becomes
    ``column N``); ``values`` holds the ``str`` cells as a 2-D array and ``cells`` as a
    DataFrame with columns ``0..n-1`` in header order (``col(i)``: one column), one row per data row (blank rows and title lines removed); ``rows`` is
    the 1-based file row of each data row (for a workbook: the sheet row). ``format`` is
    'csv', 'xlsx', 'xls' or 'ods'; ``encoding`` and ``delimiter`` ('comma', 'semicolon',
    'tab') say how a text file was read; ``sheet``/``sheets`` name the sheet read and all
    sheets of a workbook; ``skipped`` counts lines above the header; ``file`` is the name
    used in messages (``filename``, else the path's name, else 'upload'). ``warnings``
    carries IN026 (lines skipped above the header), IN029 (footnotes skipped below the
    table) and IN028 (blank column name). ``notes`` says in words what was read and
    skipped (the start of the reading note); ``legend`` holds the status markers a title
    or footnote explains (``p = preliminary``); ``header_row`` is the header's file row."""

    header: tuple[str, ...]
    values: np.ndarray  # 2-D object array of str cells (rows x columns)
    rows: np.ndarray
    format: str
    encoding: str | None = None
    delimiter: str | None = None
    sheet: str | None = None
    sheets: tuple[str, ...] = ()
    skipped: int = 0
    file: str = ""
    warnings: tuple[Problem, ...] = ()
    notes: tuple[str, ...] = ()
    legend: tuple[tuple[str, str], ...] = ()  # (marker letter, status) read from notes
    header_row: int = 1
    unit: str | None = None  # a title line that is a unit ('Index 2020=100', 'USD millions')

    def replace(self, **changes: object) -> Table:
        return dataclasses.replace(self, **changes)  # type: ignore[arg-type]

    @functools.cached_property
    def cells(self) -> pd.DataFrame:
        """The cells as a DataFrame of str, columns ``0..n-1``."""
        return pd.DataFrame({i: self.values[:, i] for i in range(self.values.shape[1])},
                            index=pd.RangeIndex(len(self.values)), dtype=object)

    def col(self, i: int) -> pd.Series:
        """Column ``i`` as a Series of str (a view of the cells)."""
        return pd.Series(self.values[:, i], dtype=object, copy=False)


def blank_mask(values: np.ndarray) -> np.ndarray:
    """(rows, columns) bool: the cell is exactly empty (whitespace is caught later)."""
    return values == ""


def legend(texts: list[str]) -> tuple[tuple[str, str], ...]:
    """Marker letters a title or footnote explains, with the status each means."""
    out: dict[str, str] = {}
    for t in texts:
        for m in _LEGEND.finditer(t):
            out.setdefault(m.group(1).lower(), _LEGEND_STATUS[m.group(2).lower()])
    return tuple(out.items())


def _first_cells(values: np.ndarray, blank: np.ndarray, rows: range) -> list[str]:
    """The first filled cell of each of ``rows``."""
    first = np.argmax(~blank[rows.start:rows.stop], axis=1)
    return [str(values[rows.start + i, j]) for i, j in enumerate(first.tolist())]


def _is_note(text: str) -> bool:
    """A first cell that is text, neither a number nor a period label."""
    t = text.strip()
    if not t or re.fullmatch(r"[-+(]?[\d.,\s$€£¥%)]+[a-zA-Z]?\)?", t):
        return False
    parsed = labels.parse_values([t], 7)
    return bool(parsed.keys[0] == "")


def _ranges(rows: list[int]) -> str:
    """'1-3, 5' from [1, 2, 3, 5]."""
    out, start, prev = [], None, None
    for r in rows:
        if start is None:
            start = prev = r
        elif r == prev + 1:  # type: ignore[operator]
            prev = r
        else:
            out.append(f"{start}" if start == prev else f"{start}–{prev}")
            start = prev = r
    if start is not None:
        out.append(f"{start}" if start == prev else f"{start}–{prev}")
    return ", ".join(out)


def find_table(g: Grid, name: str, settings: Settings) -> Table:
    """Drop blank rows/columns, skip title rows and footnotes, take the header, check the
    names and the number of rows."""
    df = g.values
    if df.ndim != 2 or df.shape[1] > settings.max_columns:
        raise fail(IN035, "the file has more columns than intake accepts",
                   expected=f"at most {settings.max_columns:,} columns (setting max_columns)",
                   found=f"{df.shape[-1]:,} columns", fix="Split the file, or raise "
                   "REALBASIS_MAX_COLUMNS.", file=name, sheet=g.sheet)
    problems: list[Problem] = list(g.warnings)
    notes: list[str] = list(g.notes)
    blank = blank_mask(df)
    all_blank = blank.all(axis=1)
    keep_rows = ~all_blank
    # a blank row right before each kept row (footnotes sit below one)
    after_blank = np.r_[False, all_blank[:-1]][keep_rows] if len(all_blank) else all_blank
    if not keep_rows.all():
        df = df[keep_rows]
    rows = g.rows[keep_rows]
    blank = blank[keep_rows]
    if len(df) == 0:
        raise fail(IN003, "the file has no rows", expected="a header row and data rows",
                   found="only blank lines", fix="Choose the file that holds the data.", file=name)
    filled = (~blank).sum(axis=1)
    width = int(filled[:60].max())
    # title rows above the header: leading rows filling at most a third of the table's
    # width (a title, a subtitle, a unit line), at most MAX_TITLE_ROWS of them
    title = 0
    if width >= 2:
        while (title < min(MAX_TITLE_ROWS, len(filled) - 1)
               and (filled[title] == 1 or filled[title] * 3 <= width)):
            title += 1
    titles = _first_cells(df, blank, range(0, title))
    # footnotes below the table: a trailing block of note rows (narrow rows whose first
    # cell is text, not a number or a period) that sits below a blank row or starts with
    # a footnote word ('Source:', 'Note:', '1)', '*', 'p = preliminary')
    foot_start = len(df)
    if width >= 2 and len(df) - title > 2:
        i = len(df) - 1
        lowest = max(title + 2, len(df) - MAX_FOOTNOTE_ROWS)
        firsts = dict(zip(range(lowest, len(df)), _first_cells(df, blank, range(lowest, len(df))),
                          strict=True))
        start = None
        while i >= lowest and (filled[i] == 1 or filled[i] * 3 <= width) and _is_note(firsts[i]):
            if after_blank[i] or _FOOTNOTE.match(firsts[i]):
                start = i
            i -= 1
        if start is not None:
            foot_start = start
    footnotes = _first_cells(df, blank, range(foot_start, len(df)))
    foot_rows = [int(r) for r in rows[foot_start:]]
    skipped = g.skipped + title
    if title:
        skipped_rows = list(range(1, g.skipped + 1)) + [int(r) for r in rows[:title]]
        notes.append(f"Row(s) {_ranges(skipped_rows)} above the header skipped (titles and "
                     "notes): " + "; ".join(repr(clip(t, 60)) for t in titles[:3])
                     + (" ..." if len(titles) > 3 else "") + ".")
    elif g.skipped:
        notes.append(f"Line(s) {_ranges(list(range(1, g.skipped + 1)))} above the header "
                     "skipped (titles and notes).")
    if footnotes:
        notes.append(f"Row(s) {_ranges(foot_rows)} below the table skipped (footnotes): "
                     + "; ".join(repr(clip(t, 60)) for t in footnotes[:3])
                     + (" ..." if len(footnotes) > 3 else "") + ".")
        problems.append(Problem(IN029, f"{len(footnotes)} line(s) below the table were skipped",
                                "", "footnotes or notes after the data: "
                                + "; ".join(repr(clip(t, 40)) for t in footnotes[:2]),
                                "Nothing to do if those lines are notes.",
                                Location(file=name, sheet=g.sheet, row=foot_rows[0]), "warning"))
    from .kinds import unit_says  # the kind rules say what a unit is

    title_unit = next((t.strip() for t in titles if len(t.strip()) <= 40 and unit_says(t.strip())),
                      None)
    if title_unit:
        notes.append(f"The title line {title_unit!r} is taken as the unit of every series "
                     "without one.")
    marker_legend = legend(titles + footnotes)
    if marker_legend:
        notes.append("Marker legend found in the notes: " + ", ".join(
            f"{k} = {v}" for k, v in marker_legend) + ".")
    df = df[title:foot_start]
    rows = rows[title:foot_start]
    blank = blank[title:foot_start]
    header = [str(h).strip() for h in df[0].tolist()]
    df = df[1:]
    header_row = int(rows[0])
    rows = rows[1:]
    # trailing columns with no header and no data (e.g. a final delimiter) go silently
    nonblank_cols = (~blank[1:]).any(axis=0)
    keep_cols = [i for i, h in enumerate(header) if h or nonblank_cols[i]]
    for i in keep_cols:
        if not header[i]:
            header[i] = f"column {i + 1}"
            problems.append(Problem(IN028, "a column with data has no name", "a name in the header row",
                                    "a blank header cell", "Name the column in the header row.",
                                    Location(file=name, sheet=g.sheet, row=header_row,
                                             column=header[i]), "warning"))
    if len(keep_cols) < df.shape[1]:
        df = df[:, keep_cols]
    header = [header[i] for i in keep_cols]
    if len(df) > settings.max_rows:
        raise fail(IN002, "the file has more data rows than intake accepts",
                   expected=f"at most {settings.max_rows:,} data rows (setting max_rows)",
                   found=f"more than {settings.max_rows:,}",
                   fix="Split the file, or raise REALBASIS_MAX_ROWS.", file=name, sheet=g.sheet)
    if len(df) == 0:
        raise fail(IN003, "the file has a header but no data rows",
                   expected="at least one data row under the header",
                   found="only the header row", fix="Choose the file that holds the data.",
                   file=name, sheet=g.sheet, row=header_row)
    seen: set[str] = set()
    for h in header:
        key = h.casefold()
        if key in seen:
            raise fail(IN017, f"two columns are named {clip(h)!r}", expected="unique column names",
                       found=f"{clip(h)!r} twice", fix="Rename one of the columns.",
                       file=name, sheet=g.sheet, row=header_row, column=clip(h))
        seen.add(key)
    if skipped:
        problems.append(Problem(IN026, f"{skipped} line(s) above the header were skipped", "",
                                "title or note lines before the table",
                                "Nothing to do if those lines are titles.",
                                Location(file=name, sheet=g.sheet, row=1), "warning"))
    notes.append(f"Header on row {header_row}: {len(header)} column(s), {len(df):,} data row(s).")
    return Table(tuple(header), df, np.asarray(rows), g.format, g.encoding, g.delimiter, g.sheet,
                 g.sheets, skipped, name, tuple(problems), tuple(notes), marker_legend, header_row,
                 title_unit)
