"""Streaming Excel writer behind every workbook realbasis writes (xlsxwriter).

Workbooks are written row by row in xlsxwriter's constant-memory mode: each finished row
goes to disk, so memory stays flat whatever the size, and a cell costs one call. The
sheet writers of :mod:`pipeline.workbook` and :mod:`pipeline.export` use only this small
surface:

* :class:`Book` — ``with Book(path) as wb:`` writes ``<path>.part`` and renames it to
  ``path`` when the block ends without an error (nothing half-written is left behind);
  ``wb.create_sheet(title)``.
* :class:`Sheet` — ``append(values, style=..., fmts=...)`` writes the next row;
  ``append_columns(columns)`` the rows of a table given column by column (the fast path
  for data sheets); ``freeze(cell)``, ``width(col, chars)``.
* :class:`Cell` / :class:`Style` — a value with its look (bold, size, fill colour,
  wrap, number format).

Every text cell is written as text, never as a formula, hyperlink or number, after
:func:`pipeline.export.neutralise` (a leading apostrophe on text a spreadsheet would
run: OWASP "CSV Injection" guidance). NaN is an empty cell; +/-inf is the text
``inf``/``-inf``; numbers keep full precision (number formats only change the look).
"""

from __future__ import annotations

import datetime as dt
import math
import re
from collections.abc import Mapping, Sequence
from dataclasses import dataclass
from pathlib import Path
from types import TracebackType
from typing import Any

import numpy as np
import xlsxwriter
import xlsxwriter.exceptions
import xlsxwriter.utility
from xlsxwriter.utility import _preserve_whitespace, _utf16_len, _utf16_truncate

_DANGEROUS = ("=", "+", "-", "@", "\t", "\r")
_CELL_RE = re.compile(r"^([A-Z]+)(\d+)$")
_DATE_FORMAT = "yyyy-mm-dd hh:mm:ss"


def _neutral(text: str) -> str:
    return "'" + text if text.startswith(_DANGEROUS) else text


@dataclass(frozen=True)
class Style:
    """How a cell looks: ``fill`` is an RGB hex colour such as ``"FFF2CC"``; ``num`` an
    Excel number format such as ``"#,##0.00"``."""

    bold: bool = False
    size: float | None = None
    fill: str | None = None
    wrap: bool = False
    num: str | None = None

    def merged(self, other: Style | None) -> Style:
        if other is None:
            return self
        return Style(self.bold or other.bold, other.size or self.size, other.fill or self.fill,
                     self.wrap or other.wrap, other.num or self.num)


PLAIN = Style()


class Cell:
    """A value with its look (for one cell of :meth:`Sheet.append`)."""

    __slots__ = ("style", "value")

    def __init__(self, value: Any, style: Style = PLAIN) -> None:
        self.value, self.style = value, style


def plain(value: Any) -> Any:
    """A Python value for a cell: numpy scalars unwrapped, NaN None, inf as text."""
    if isinstance(value, np.generic):
        value = value.item()
    if isinstance(value, float) and not math.isfinite(value):
        return None if math.isnan(value) else ("inf" if value > 0 else "-inf")
    return value


class Sheet:
    """One worksheet being written, top row first."""

    def __init__(self, book: Book, ws: Any) -> None:
        self._book, self._ws, self.row = book, ws, 0

    @property
    def title(self) -> str:
        return str(self._ws.get_name())

    def freeze(self, cell: str) -> None:
        """Freeze the rows above and the columns left of ``cell`` (e.g. ``"B4"``)."""
        m = _CELL_RE.match(cell)
        if not m:
            raise ValueError(f"not a cell reference: {cell!r}")
        col = 0
        for ch in m.group(1):
            col = col * 26 + (ord(ch) - 64)
        self._ws.freeze_panes(int(m.group(2)) - 1, col - 1)

    def width(self, col: int, chars: float) -> None:
        """Width of column ``col`` (1-based) in characters."""
        self._ws.set_column(col - 1, col - 1, chars)

    def append(self, values: Sequence[Any] = (), *, style: Style | None = None,
               fmts: Sequence[str | None] | None = None) -> None:
        """Write the next row. ``style`` applies to every cell of the row, ``fmts`` gives
        number formats by position; a :class:`Cell` carries its own look on top."""
        ws, r, fmt_of = self._ws, self.row, self._book.format
        base = style or PLAIN
        for j, v in enumerate(values):
            look = base
            if isinstance(v, Cell):
                look, v = base.merged(v.style), v.value
            value = plain(v)
            if fmts is not None and j < len(fmts) and fmts[j] and look.num is None \
                    and isinstance(value, int | float) and not isinstance(value, bool):
                look = Style(look.bold, look.size, look.fill, look.wrap, fmts[j])
            fmt = None if look == PLAIN else fmt_of(look)
            if value is None:
                if fmt is not None and look.fill:
                    ws.write_blank(r, j, None, fmt)
            elif isinstance(value, str):
                ws.write_string(r, j, _neutral(value), fmt)
            elif isinstance(value, bool):
                ws.write_boolean(r, j, value, fmt)
            elif isinstance(value, int | float):
                ws.write_number(r, j, value, fmt)
            elif isinstance(value, dt.datetime | dt.date):
                ws.write_datetime(r, j, value, fmt or fmt_of(Style(num=_DATE_FORMAT)))
            else:
                ws.write_string(r, j, _neutral(str(value)), fmt)
        self.row += 1

    def append_columns(self, columns: Sequence[Sequence[Any]], *, header: Sequence[str] = (),
                       fmts: Sequence[str | None] | None = None,
                       looks: Sequence[Mapping[Any, Style] | None] | None = None) -> None:
        """Write a table given column by column (numpy arrays or lists of equal length):
        the header row (bold), then one row per entry. ``fmts`` gives number formats by
        column, ``looks`` a style per text value by column (e.g. a fill for
        'preliminary'). Text is neutralised once per distinct value; NaN is empty. The
        fast path for large sheets."""
        if header:
            self.append(list(header), style=Style(bold=True))
        if not columns:
            return
        fmt_of = self._book.format
        prepared: list[tuple[list[Any], Any, dict[Any, Any] | None]] = []
        for j, col in enumerate(columns):
            arr = np.asarray(col)
            num = fmt_of(Style(num=fmts[j])) if fmts and j < len(fmts) and fmts[j] else None
            look = looks[j] if looks and j < len(looks) else None
            if arr.dtype.kind == "f":
                vals = [None if math.isnan(x) else
                        (x if math.isfinite(x) else ("inf" if x > 0 else "-inf"))
                        for x in arr.astype(float).tolist()]
            elif arr.dtype.kind in "iub":
                vals = arr.tolist()
            else:
                memo: dict[Any, Any] = {}
                vals = []
                for x in (col.tolist() if hasattr(col, "tolist") else list(col)):
                    if x.__class__ is str:  # the common case: a text seen before
                        y = memo.get(x)
                        if y is None:
                            y = memo[x] = _neutral(x)
                        vals.append(y)
                        continue
                    x = plain(x)
                    if x is None or isinstance(x, int | float):
                        vals.append(x)
                        continue
                    y = memo.get(x)
                    if y is None:
                        y = memo[x] = _neutral(x if isinstance(x, str) else str(x))
                    vals.append(y)
            styled = ({_neutral(str(k)): fmt_of(v) for k, v in look.items()}
                      if look else None)
            prepared.append((vals, num, styled))
        n = len(prepared[0][0])
        if n == 0:
            return
        if _fast_ok(self._ws):
            self._write_rows_xml(prepared, n)
        else:
            self._write_rows_cells(prepared, n)
        self.row += n

    def _write_rows_cells(self, prepared: list[tuple[list[Any], Any, dict[Any, Any] | None]],
                          n: int) -> None:
        """The rows of :meth:`append_columns` one xlsxwriter call per cell (the general
        path, kept for sheets the row-XML path does not cover)."""
        ws = self._ws
        write_number, write_string, write_boolean = (ws.write_number, ws.write_string,
                                                     ws.write_boolean)
        r0 = self.row
        for i in range(n):
            r = r0 + i
            for j, (vals, num, styled) in enumerate(prepared):
                v = vals[i]
                if v is None:
                    continue
                if isinstance(v, str):
                    write_string(r, j, v, styled.get(v) if styled else None)
                elif isinstance(v, bool):
                    write_boolean(r, j, v)
                else:
                    write_number(r, j, v, num)

    def _write_rows_xml(self, prepared: list[tuple[list[Any], Any, dict[Any, Any] | None]],
                        n: int) -> None:
        """The rows of :meth:`append_columns` as sheet XML, written straight into the
        constant-memory row file of xlsxwriter: the same ``<row>``/``<c>`` elements its
        per-cell path writes (inline strings, ``%.16G`` numbers; a test compares the two
        byte for byte), each distinct text escaped once. About ten times faster than a
        call per cell, which dominated large workbooks."""
        ws = self._ws
        r0 = self.row
        # dimensions first, from the cells that hold something (xlsxwriter ignores rows
        # before the one it holds), then the row it holds goes out, so the rows below
        # follow it in order
        for j, (vals, _, _) in enumerate(prepared):
            first = next((i for i, v in enumerate(vals) if v is not None), None)
            if first is not None:
                last = n - 1 - next(i for i, v in enumerate(reversed(vals)) if v is not None)
                ws._check_dimensions(r0 + first, j)
                ws._check_dimensions(r0 + last, j)
        ws._write_single_row(r0 + n)
        _number_formats_in_order(prepared)
        refs = [f'<c r="{xlsxwriter.utility.xl_col_to_name(j)}' for j in range(len(prepared))]
        s_nums = [f' s="{num._get_xf_index()}"' if num is not None else ""
                  for _, num, _ in prepared]
        memos: list[dict[Any, str]] = [{} for _ in prepared]
        write = ws.fh.write
        step = 2048  # rows built at a time: memory stays flat whatever the sheet's length
        for a in range(0, n, step):
            b = min(a + step, n)
            rows = [str(r) for r in range(r0 + a + 1, r0 + b + 1)]
            cells: list[list[str | None]] = []
            for (vals, _, styled), ref, s_num, memo in zip(prepared, refs, s_nums, memos,
                                                         strict=True):
                out: list[str | None] = []
                for rn, v in zip(rows, vals[a:b], strict=True):
                    if v is None:
                        out.append(None)
                        continue
                    if v.__class__ is float:
                        out.append(f'{ref}{rn}"{s_num}><v>{v:.16G}</v></c>')
                        continue
                    key = (v.__class__, v)
                    tail = memo.get(key)
                    if tail is None:
                        if isinstance(v, str):
                            tail = _string_tail(ws, v, styled.get(v) if styled else None)
                        elif isinstance(v, bool):
                            tail = f' t="b"><v>{int(v)}</v></c>'
                        else:
                            tail = f"{s_num}><v>{v:.16G}</v></c>"
                        if len(memo) < 65536:
                            memo[key] = tail
                    out.append(ref + rn + '"' + tail)
                cells.append(out)
            if any(None in col for col in cells):  # empty cells left out, empty rows too
                bodies = ["".join([c for c in cs if c is not None])
                          for cs in zip(*cells, strict=True)]
                text = "".join(['<row r="' + rn + '">' + body + "</row>"
                                for rn, body in zip(rows, bodies, strict=True) if body])
            else:
                text = "".join(['<row r="' + rn + '">' + "".join(cs) + "</row>"
                                for rn, *cs in zip(rows, *cells, strict=True)])
            write(text)


def _number_formats_in_order(prepared: list[tuple[list[Any], Any, dict[Any, Any] | None]]
                             ) -> None:
    """Give the formats of a table their style numbers in the order a cell-by-cell
    writer first uses them (row by row, left to right), so both paths number the styles
    alike."""
    firsts: list[tuple[int, int, Any]] = []
    for j, (vals, num, styled) in enumerate(prepared):
        if num is not None:
            i = next((i for i, v in enumerate(vals)
                      if v is not None and not isinstance(v, str | bool)), None)
            if i is not None:
                firsts.append((i, j, num))
        for text, fmt in (styled or {}).items():
            try:
                firsts.append((vals.index(text), j, fmt))
            except ValueError:
                continue
    for _, _, fmt in sorted(firsts, key=lambda f: (f[0], f[1])):
        fmt._get_xf_index()


def _fast_ok(ws: Any) -> bool:
    """Whether rows may be written as XML directly: constant-memory mode with the row
    file open, no row heights or formats, no column formats, no comments (what
    xlsxwriter would otherwise add to a row or a cell)."""
    return bool(getattr(ws, "constant_memory", False) and getattr(ws, "row_data_fh", None)
                and not ws.row_data_fh_closed and not ws.row_info and not ws.comments
                and ws.default_row_height == ws.original_row_height
                and ws.excel_version != 2010
                and all(c.column_format is None for c in ws.col_info.values()))


def _string_tail(ws: Any, text: str, fmt: Any) -> str:
    """What follows ``<c r="A1"`` for a text cell, as xlsxwriter's constant-memory path
    writes it (truncated to Excel's limit, control characters as _xHHHH_, whitespace
    kept, XML escaped); a text that looks like a rich string is escaped too."""
    if len(text) > ws.xls_strmax // 2 and _utf16_len(text) > ws.xls_strmax:
        text = _utf16_truncate(text, ws.xls_strmax)
    text = ws._escape_control_characters(text)
    t_attr = ' xml:space="preserve"' if _preserve_whitespace(text) else ""
    s_attr = f' s="{fmt._get_xf_index()}"' if fmt is not None else ""
    return f'{s_attr} t="inlineStr"><is><t{t_attr}>{ws._escape_data(text)}</t></is></c>'


class Book:
    """A workbook written to ``<path>.part`` and renamed to ``path`` on success."""

    def __init__(self, path: str | Path) -> None:
        self.path = Path(path)
        self.part = self.path.with_name(self.path.name + ".part")
        self._wb = xlsxwriter.Workbook(str(self.part), {
            "constant_memory": True, "strings_to_formulas": False, "strings_to_urls": False,
            "strings_to_numbers": False, "remove_timezone": True,
        })
        self._formats: dict[Style, Any] = {}
        self.sheets: list[Sheet] = []

    def format(self, style: Style) -> Any:
        fmt = self._formats.get(style)
        if fmt is None:
            spec: dict[str, Any] = {}
            if style.bold:
                spec["bold"] = True
            if style.size:
                spec["font_size"] = style.size
            if style.fill:
                spec.update(pattern=1, bg_color="#" + style.fill)
            if style.wrap:
                spec.update(text_wrap=True, valign="top")
            if style.num:
                spec["num_format"] = style.num
            fmt = self._formats[style] = self._wb.add_format(spec)
        return fmt

    def create_sheet(self, title: str) -> Sheet:
        sheet = Sheet(self, self._wb.add_worksheet(title))
        self.sheets.append(sheet)
        return sheet

    @property
    def sheetnames(self) -> list[str]:
        return [s.title for s in self.sheets]

    def __enter__(self) -> Book:
        return self

    def __exit__(self, kind: type[BaseException] | None, err: BaseException | None,
                 tb: TracebackType | None) -> None:
        try:
            if kind is None:
                try:
                    self._wb.close()
                except xlsxwriter.exceptions.FileCreateError as e:
                    raise (e.args[0] if e.args and isinstance(e.args[0], OSError)
                           else OSError(str(e))) from None
                self.part.replace(self.path)
        finally:
            self.part.unlink(missing_ok=True)
