"""Stage 2 for workbooks: open the workbook, choose the sheet, read its cells as text."""

from __future__ import annotations

import io
import zipfile

import numpy as np
import pandas as pd

from ..errors import fail
from ..settings import Settings
from .codes import IN003, IN005, IN008, IN027
from .problems import clip
from .source import Source
from .table import MAX_TITLE_ROWS, Grid


def cell_text(v: object) -> str:
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


def _open(data: bytes, name: str):  # -> openpyxl Workbook
    import openpyxl  # lazy: only workbooks need it

    try:
        return openpyxl.load_workbook(io.BytesIO(data), read_only=True, data_only=True)
    except (zipfile.BadZipFile, KeyError, OSError, ValueError, TypeError, EOFError,
            IndexError, AttributeError) as e:
        raise fail(IN027, "the workbook cannot be opened", expected="an .xlsx workbook",
                   found=f"{type(e).__name__}: {clip(e, 150)}",
                   fix="Open the file in a spreadsheet program and save it again as .xlsx.",
                   file=name) from None
    except Exception as e:  # openpyxl raises assorted errors on corrupt archives
        if type(e).__module__.startswith(("openpyxl", "xml", "zipfile")):
            raise fail(IN027, "the workbook cannot be opened", expected="an .xlsx workbook",
                       found=f"{type(e).__name__}: {clip(e, 150)}",
                       fix="Open the file in a spreadsheet program and save it again as .xlsx.",
                       file=name) from None
        raise


def sheet_names(src: Source, settings: Settings) -> tuple[str, ...]:
    wb = _open(src.data, src.name)
    try:
        return tuple(wb.sheetnames)
    finally:
        wb.close()


def read(src: Source, sheet: str | None, settings: Settings) -> Grid:
    """The cells of ``sheet`` (default: the first sheet holding data rows)."""
    data, name = src.data, src.name
    if src.format == "xls":
        raise fail(IN005, "old-style .xls workbooks are not read", expected="CSV or .xlsx",
                   found="an .xls (BIFF) workbook", fix="Save the workbook as .xlsx or CSV.",
                   file=name)
    wb = _open(data, name)
    try:
        names = tuple(wb.sheetnames)
        if sheet is not None and sheet not in names:
            raise fail(IN008, f"the workbook has no sheet named {clip(sheet)!r}",
                       expected="one of: " + ", ".join(repr(s) for s in names),
                       found=repr(clip(sheet)), fix="Choose one of the sheets listed.",
                       remedy="sheet", file=name)
        order = [sheet] if sheet is not None else list(names)
        rows: list[list[str]] = []
        numbers: list[int] = []
        chosen = order[0] if order else None
        for sname in order:
            ws = wb[sname]
            rows, numbers = [], []
            try:
                for r, values in enumerate(ws.iter_rows(values_only=True), start=1):
                    cells = [cell_text(v) for v in values]
                    if any(c.strip() for c in cells):
                        rows.append(cells)
                        numbers.append(r)
                        if len(rows) > settings.max_rows + 1 + MAX_TITLE_ROWS:
                            break
            except (zipfile.BadZipFile, KeyError, OSError, ValueError, TypeError) as e:
                raise fail(IN027, "the workbook cannot be read", expected="an .xlsx workbook",
                           found=f"{type(e).__name__}: {clip(e, 150)}",
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
    return Grid(df, np.asarray(numbers), src.format, sheet=chosen, sheets=names)
