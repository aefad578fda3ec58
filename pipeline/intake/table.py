"""Stage 3, the table in the cells: leave out blank rows and columns, skip title lines
above the header, take the header row, name blank column names, refuse duplicate names
and too many rows.

:class:`Grid` is what a reader (``text``, ``workbook``) hands over: every row of cells as
text, with its file row. :class:`Table` is the table found in it (what
:func:`pipeline.ingest.read_table` returns)."""

from __future__ import annotations

import dataclasses
from dataclasses import dataclass

import numpy as np
import pandas as pd

from ..errors import Location, Problem, fail
from ..settings import Settings
from .codes import IN002, IN003, IN017, IN026, IN028
from .problems import clip

MAX_TITLE_ROWS = 30  # single-cell rows above a table's header that are skipped as titles


@dataclass(frozen=True)
class Grid:
    """Rows of text cells as a reader found them (internal).

    ``cells``: str DataFrame, columns 0..n-1; ``rows``: 1-based file row of each row;
    ``skipped``: file lines before the first row (a text reader's title lines);
    ``notes``: what the reader did, in words (for the reading note)."""

    cells: pd.DataFrame
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
    ``column N``); ``cells`` is a DataFrame of ``str`` cells with columns ``0..n-1`` in
    header order, one row per data row (blank rows and title lines removed); ``rows`` is
    the 1-based file row of each data row (for a workbook: the sheet row). ``format`` is
    'csv', 'xlsx', 'xls' or 'ods'; ``encoding`` and ``delimiter`` ('comma', 'semicolon',
    'tab') say how a text file was read; ``sheet``/``sheets`` name the sheet read and all
    sheets of a workbook; ``skipped`` counts lines above the header; ``file`` is the name
    used in messages (``filename``, else the path's name, else 'upload'). ``warnings``
    carries IN026 (lines skipped) and IN028 (blank column name). ``notes`` says in words
    what was read and skipped (the start of the reading note)."""

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
    notes: tuple[str, ...] = ()

    def replace(self, **changes: object) -> Table:
        return dataclasses.replace(self, **changes)  # type: ignore[arg-type]


def blank_mask(df: pd.DataFrame) -> np.ndarray:
    """(rows, columns) bool: the cell is exactly empty (whitespace is caught later)."""
    if df.shape[1] == 0:
        return np.zeros((len(df), 0), dtype=bool)
    return np.column_stack([df[c].to_numpy(dtype=object) == "" for c in df.columns])


def find_table(g: Grid, name: str, settings: Settings) -> Table:
    """Drop blank rows/columns, skip title lines, take the header, check names and rows."""
    df = g.cells
    problems: list[Problem] = list(g.warnings)
    blank = blank_mask(df)
    keep_rows = ~blank.all(axis=1)
    df = df[keep_rows]
    rows = g.rows[keep_rows]
    blank = blank[keep_rows]
    if len(df) == 0:
        raise fail(IN003, "the file has no rows", expected="a header row and data rows",
                   found="only blank lines", fix="Choose the file that holds the data.", file=name)
    # title lines above the header: leading rows with a single filled cell in a wider table
    filled = (~blank).sum(axis=1)
    width = int(filled[:30].max())
    title = 0
    if width >= 2:
        while title < min(MAX_TITLE_ROWS, len(filled) - 1) and filled[title] == 1:
            title += 1
    skipped = g.skipped + title
    if title:
        df = df.iloc[title:]
        rows = rows[title:]
        blank = blank[title:]
    header = [str(h).strip() for h in df.iloc[0].tolist()]
    df = df.iloc[1:]
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
    df = df.iloc[:, keep_cols]
    header = [header[i] for i in keep_cols]
    df.columns = range(len(header))
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
    return Table(tuple(header), df, np.asarray(rows), g.format, g.encoding, g.delimiter, g.sheet,
                 g.sheets, skipped, name, tuple(problems), g.notes)
