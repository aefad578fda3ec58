"""Stage 2 for workbooks (.xlsx, .xls, .ods): check the archive before opening it, choose
the sheet, read its cells as text.

Workbooks are read by python-calamine (xlsx, xls and ods alike). Before it opens an
.xlsx or .ods (zip archives), :func:`inspect_archive` checks every part's declared and
actual unpacked size and its compression ratio against the settings, and in the sheets
the used range (rows, columns, cells), the number of shared texts and the longest text:
a small file that unpacks to gigabytes (a "zip bomb") is refused with a coded error
before any of it is held in memory.

Without a named sheet, the first sheet holding a table (at least two rows of two or more
filled cells) is read; sheets before it (a cover note, contents) are skipped and said
(IN038)."""

from __future__ import annotations

import io
import re
import zipfile
from dataclasses import dataclass

import numpy as np
import pandas as pd

from ..errors import Location, Problem, RealbasisError, fail
from ..settings import Settings
from .codes import IN002, IN003, IN008, IN027, IN034, IN035, IN036, IN038, IN039, IN040
from .problems import clip
from .source import Source
from .table import MAX_TITLE_ROWS, Grid

_CHUNK = 4 * 1024 * 1024
_RATIO_FLOOR = 1024 * 1024  # parts smaller than this unpacked are not ratio-checked
_REF = re.compile(rb'<c r="([A-Z]{1,3})(\d{1,7})"')
_ROW = re.compile(rb'<row r="(\d{1,7})"')
_ODS_TAG = re.compile(rb"<table:(?:covered-)?table-(?:row|cell)\b[^>]*>")
_REPEAT_ROWS = re.compile(rb'number-rows-repeated="(\d+)"')
_REPEAT_COLS = re.compile(rb'number-columns-repeated="(\d+)"')


@dataclass(frozen=True)
class ArchiveFacts:
    """What :func:`inspect_archive` measured (for tests and the benchmark)."""

    unpacked: int
    parts: int
    rows: int
    columns: int
    cells: int
    texts: int
    longest_text: int


def _col_number(letters: bytes) -> int:
    n = 0
    for ch in letters:
        n = n * 26 + (ch - 64)
    return n


def _refuse(code: str, message: str, expected: str, found: str, fix: str, name: str,
            sheet: str | None = None) -> RealbasisError:
    return fail(code, message, expected=expected, found=found, fix=fix, file=name, sheet=sheet)


def inspect_archive(src: Source, settings: Settings) -> ArchiveFacts:
    """Check an .xlsx or .ods archive part by part, unpacking in chunks (never more than
    the limits), before the workbook reader sees it."""
    name = src.name
    limit = settings.max_unzipped_bytes
    fix = "Check the file: a workbook this large or this compressed is refused before it is opened."
    try:
        z = zipfile.ZipFile(io.BytesIO(src.data))
    except (zipfile.BadZipFile, OSError, ValueError, EOFError, NotImplementedError):
        raise fail(IN027, "the workbook cannot be opened", expected="a workbook archive",
                   found="a damaged zip archive",
                   fix="Open the file in a spreadsheet program and save it again as .xlsx.",
                   file=name) from None
    rows = cols = cells = texts = longest = total = 0
    with z:
        infos = z.infolist()
        declared = sum(i.file_size for i in infos)
        if declared > limit:
            raise _refuse(IN034, "the workbook is too large once unpacked",
                          f"at most {limit:,} bytes unpacked (setting max_unzipped_bytes)",
                          f"{declared:,} bytes declared by its {len(infos)} parts", fix + " Or "
                          "raise REALBASIS_MAX_UNZIPPED_BYTES.", name)
        for info in infos:
            if info.file_size > _RATIO_FLOOR and info.file_size > settings.max_zip_ratio * max(
                    info.compress_size, 1):
                raise _refuse(IN034, "a part of the workbook is compressed beyond belief",
                              f"at most {settings.max_zip_ratio}:1 unpacked to packed "
                              "(setting max_zip_ratio)",
                              f"{clip(info.filename)}: {info.file_size:,} bytes from "
                              f"{info.compress_size:,}", fix, name)
            part = info.filename
            sheet_xml = part.startswith("xl/worksheets/") and part.endswith(".xml")
            strings_xml = part == "xl/sharedStrings.xml"
            ods_xml = part == "content.xml"
            size = 0
            carry = 0  # characters since the last '<' at the end of the previous chunk
            tail = b""
            sheet_cells = sheet_rows = sheet_cols = 0
            ods_row_repeat, ods_cols_row = 1, 0
            try:
                for chunk in _unpack(src.data, info, name):
                    size += len(chunk)
                    total += len(chunk)
                    if size > info.file_size or total > limit:
                        raise _refuse(IN034, "the workbook is too large once unpacked",
                                      f"at most {limit:,} bytes unpacked, each part no "
                                      "larger than it declares",
                                      f"{clip(part)}: more than {min(size, total):,} bytes "
                                      f"({info.file_size:,} declared)", fix, name)
                    if not (sheet_xml or strings_xml or ods_xml):
                        continue
                    # the longest run of text between two tags
                    arr = np.frombuffer(chunk, dtype=np.uint8)
                    lt = np.flatnonzero(arr == 60)
                    if len(lt):
                        run = max(carry + int(lt[0]), int(np.diff(lt).max()) if len(lt) > 1
                                  else 0)
                        carry = len(chunk) - int(lt[-1]) - 1
                    else:
                        run = carry + len(chunk)
                        carry = run
                    longest = max(longest, run)
                    if longest > settings.max_cell_chars + 64:
                        raise _refuse(IN036, "a workbook cell holds more text than intake reads",
                                      f"at most {settings.max_cell_chars:,} characters per "
                                      "cell (setting max_cell_chars)",
                                      f"a text of more than {longest - 64:,} characters in "
                                      f"{clip(part)}", fix, name)
                    data = tail + chunk
                    if sheet_xml:
                        sheet_cells += chunk.count(b"<c ") + chunk.count(b"<c>")
                        refs = set(_REF.findall(data))
                        if refs:
                            sheet_cols = max(sheet_cols, max(_col_number(c) for c, _ in refs))
                            sheet_rows = max(sheet_rows, max(int(r) for _, r in refs))
                        last = _ROW.findall(data[-100_000:])
                        if last:
                            sheet_rows = max(sheet_rows, int(last[-1]))
                    elif strings_xml:
                        texts += chunk.count(b"<si>") + chunk.count(b"<si ")
                        if texts > settings.max_shared_strings:
                            raise _refuse(IN036, "the workbook holds more distinct texts than "
                                          "intake reads",
                                          f"at most {settings.max_shared_strings:,} shared "
                                          "texts (setting max_shared_strings)",
                                          f"more than {texts:,}", fix, name)
                    else:
                        cut = data.rfind(b"<")
                        if cut >= 0 and data.find(b">", cut) < 0:
                            data, rest = data[:cut], data[cut:]
                        else:
                            rest = b""
                        for m in _ODS_TAG.finditer(data):
                            tag = m.group(0)
                            if tag.startswith(b"<table:table-row"):
                                if ods_cols_row:  # the row before held values
                                    sheet_rows += ods_row_repeat
                                r = _REPEAT_ROWS.search(tag)
                                ods_row_repeat = int(r.group(1)) if r else 1
                                ods_cols_row = 0
                                continue
                            c = _REPEAT_COLS.search(tag)
                            n = int(c.group(1)) if c else 1
                            ods_cols_row += n
                            if b"value-type" in tag:
                                cells += n * ods_row_repeat
                                sheet_cols = max(sheet_cols, ods_cols_row)
                        if cells > settings.max_cells or sheet_cols > settings.max_columns:
                            _check_used_range(sheet_rows, sheet_cols, cells, settings, name,
                                              part)
                        tail = rest
                        continue
                    tail = chunk[-64:]
            except RealbasisError:
                raise
            except (zipfile.BadZipFile, OSError, ValueError, EOFError, NotImplementedError,
                    RuntimeError, zipfile.LargeZipFile) as e:
                raise fail(IN027, "the workbook cannot be opened", expected="a workbook archive",
                           found=f"{type(e).__name__}: {clip(e, 150)}",
                           fix="Open the file in a spreadsheet program and save it again as .xlsx.",
                           file=name) from None
            if sheet_xml:
                used = max(sheet_rows * sheet_cols, sheet_cells)
                cells = max(cells, used)
                _check_used_range(sheet_rows, sheet_cols, used, settings, name, part)
            elif ods_xml:
                if ods_cols_row:
                    sheet_rows += ods_row_repeat
                _check_used_range(sheet_rows, sheet_cols, cells, settings, name, part)
            rows, cols = max(rows, sheet_rows), max(cols, sheet_cols)
    return ArchiveFacts(total, len(infos), rows, cols, cells, texts, longest)


def _unpack(data: bytes, info: zipfile.ZipInfo, name: str):  # -> Iterator[bytes]
    """The unpacked bytes of one archive part, in chunks, decompressed here from the raw
    stream (not through ``zipfile``, which stops at the declared size): a part that
    unpacks to more than it declares is refused (IN034) instead of trusted."""
    import struct
    import zlib

    off = info.header_offset
    head = data[off: off + 30]
    if len(head) < 30 or head[:4] != b"PK\x03\x04":
        raise fail(IN027, "the workbook cannot be opened", expected="a workbook archive",
                   found=f"a damaged part {clip(info.filename)!r}",
                   fix="Open the file in a spreadsheet program and save it again as .xlsx.",
                   file=name)
    n_name, n_extra = struct.unpack("<HH", head[26:30])
    start = off + 30 + n_name + n_extra
    raw = memoryview(data)[start: start + info.compress_size]
    declared = info.file_size
    if info.compress_type == zipfile.ZIP_STORED:
        for i in range(0, len(raw), _CHUNK):
            yield bytes(raw[i: i + _CHUNK])
        return
    if info.compress_type != zipfile.ZIP_DEFLATED:
        raise fail(IN027, "the workbook cannot be opened", expected="a workbook archive "
                   "(parts stored or deflated)", found=f"part {clip(info.filename)!r} packed "
                   f"with method {info.compress_type}",
                   fix="Open the file in a spreadsheet program and save it again as .xlsx.",
                   file=name)
    d = zlib.decompressobj(-15)
    produced = 0
    pos = 0
    pending = b""
    while pos < len(raw) or pending:
        if not pending:
            pending = bytes(raw[pos: pos + _CHUNK])
            pos += _CHUNK
        try:
            out = d.decompress(pending, _CHUNK)
        except zlib.error:
            raise fail(IN027, "the workbook cannot be opened", expected="a workbook archive",
                       found=f"part {clip(info.filename)!r} does not unpack",
                       fix="Open the file in a spreadsheet program and save it again as .xlsx.",
                       file=name) from None
        pending = d.unconsumed_tail
        produced += len(out)
        if produced > declared:
            raise fail(IN034, "a part of the workbook unpacks to more than it declares",
                       expected=f"{clip(info.filename)} of {declared:,} bytes, as declared",
                       found=f"more than {produced:,} bytes",
                       fix="Check the file: a workbook whose parts lie about their size is "
                       "refused before it is opened.", file=name)
        if out:
            yield out
        elif not pending and pos >= len(raw):
            break
        if d.eof:
            break


def _check_used_range(rows: int, cols: int, cells: int, settings: Settings, name: str,
                      part: str) -> None:
    if cols > settings.max_columns:
        raise fail(IN035, "a sheet has more columns than intake accepts",
                   expected=f"at most {settings.max_columns:,} columns (setting max_columns)",
                   found=f"{cols:,} columns in {clip(part)}",
                   fix="Split the sheet, or raise REALBASIS_MAX_COLUMNS.", file=name)
    if rows > settings.max_rows + MAX_TITLE_ROWS + 1_000_000:
        raise fail(IN002, "a sheet has more rows than intake accepts",
                   expected=f"at most {settings.max_rows:,} data rows (setting max_rows)",
                   found=f"rows up to {rows:,} in {clip(part)}",
                   fix="Split the file, or raise REALBASIS_MAX_ROWS.", file=name)
    if cells > settings.max_cells:
        raise fail(IN040, "a sheet has more cells than intake reads",
                   expected=f"at most {settings.max_cells:,} cells, rows x columns of the used "
                            "range (setting max_cells)",
                   found=f"{cells:,} cells in {clip(part)} ({rows:,} rows x {cols:,} columns)",
                   fix="Delete the unused rows and columns, split the sheet, or raise "
                       "REALBASIS_MAX_CELLS.", file=name)


def cell_text(v: object) -> str:
    """A workbook cell as text: whole floats without '.0', dates in ISO form."""
    if v is None:
        return ""
    if isinstance(v, str):
        return v
    if isinstance(v, bool):
        return str(v)
    if isinstance(v, float):
        if v.is_integer() and abs(v) < 1e15:
            return str(int(v))
        return repr(v)
    if isinstance(v, pd.Timestamp) or hasattr(v, "isoformat"):
        return v.isoformat()  # type: ignore[union-attr]
    return str(v)


def _library_error(e: BaseException, name: str, sheet: str | None = None) -> RealbasisError:
    if isinstance(e, MemoryError):
        return fail(IN039, "there is not enough memory to read the workbook",
                    expected="a workbook that fits in memory", found="the reader ran out of memory",
                    fix="Split the workbook or save the sheet as CSV.", file=name, sheet=sheet)
    return fail(IN027, "the workbook cannot be opened" if sheet is None else
                "the workbook sheet cannot be read",
                expected="an .xlsx, .xls or .ods workbook",
                found=f"{type(e).__name__}: {clip(e, 150)}",
                fix="Open the file in a spreadsheet program and save it again as .xlsx.",
                file=name, sheet=sheet)


def _open(src: Source, settings: Settings):  # -> python_calamine.CalamineWorkbook
    if src.format in ("xlsx", "ods"):
        inspect_archive(src, settings)
    try:
        import python_calamine  # lazy: only workbooks need it

        return python_calamine.CalamineWorkbook.from_filelike(io.BytesIO(src.data))
    except (KeyboardInterrupt, SystemExit):
        raise
    except BaseException as e:  # the reader's own errors, and a panic inside it
        raise _library_error(e, src.name) from None


def sheet_names(src: Source, settings: Settings) -> tuple[str, ...]:
    wb = _open(src, settings)
    try:
        return tuple(wb.sheet_names)
    finally:
        wb.close()


def _rows(wb, sname: str, settings: Settings, name: str) -> tuple[list[list[str]], list[int]]:
    """Non-blank rows of a sheet as text, with their sheet row numbers."""
    limit = settings.max_rows + 1 + MAX_TITLE_ROWS
    try:
        ws = wb.get_sheet_by_name(sname)
        start = ws.start[0] if ws.start else 0
        if ws.width > settings.max_columns:
            raise fail(IN035, "a sheet has more columns than intake accepts",
                       expected=f"at most {settings.max_columns:,} columns (setting max_columns)",
                       found=f"{ws.width:,} columns", fix="Split the sheet, or raise "
                       "REALBASIS_MAX_COLUMNS.", file=name, sheet=sname)
        if ws.height * max(ws.width, 1) > settings.max_cells:
            raise fail(IN040, "a sheet has more cells than intake reads",
                       expected=f"at most {settings.max_cells:,} cells (setting max_cells)",
                       found=f"{ws.height:,} rows x {ws.width:,} columns",
                       fix="Delete the unused rows and columns, split the sheet, or raise "
                           "REALBASIS_MAX_CELLS.", file=name, sheet=sname)
        raw = ws.to_python(skip_empty_area=True, nrows=limit + 1)
    except RealbasisError:
        raise
    except (KeyboardInterrupt, SystemExit):
        raise
    except BaseException as e:
        raise _library_error(e, name, sname) from None
    rows: list[list[str]] = []
    numbers: list[int] = []
    for r, values in enumerate(raw, start=start + 1):
        cells = [cell_text(v) for v in values]
        if any(c.strip() for c in cells):
            rows.append(cells)
            numbers.append(r)
    return rows, numbers


def _holds_table(rows: list[list[str]]) -> bool:
    """At least two rows with two or more filled cells (a header and a data row)."""
    wide = 0
    for r in rows:
        if sum(1 for c in r if c.strip()) >= 2:
            wide += 1
            if wide >= 2:
                return True
    return False


def read(src: Source, sheet: str | None, settings: Settings) -> Grid:
    """The cells of ``sheet`` (default: the first sheet holding a table)."""
    name = src.name
    wb = _open(src, settings)
    warnings: list[Problem] = []
    notes: list[str] = []
    try:
        names = tuple(wb.sheet_names)
        if sheet is not None and sheet not in names:
            raise fail(IN008, f"the workbook has no sheet named {clip(sheet)!r}",
                       expected="one of: " + ", ".join(repr(clip(s)) for s in names[:20]),
                       found=repr(clip(sheet)), fix="Choose one of the sheets listed.",
                       remedy="sheet", file=name)
        order = [sheet] if sheet is not None else list(names)
        rows: list[list[str]] = []
        numbers: list[int] = []
        chosen = order[0] if order else None
        skipped: list[str] = []
        for sname in order:
            rows, numbers = _rows(wb, sname, settings, name)
            chosen = sname
            if sheet is not None or _holds_table(rows):
                break
            skipped.append(sname)
            what = "is empty" if not rows else f"holds no table ({len(rows)} row(s) of text)"
            notes.append(f"Sheet {sname!r} skipped: it {what}.")
            warnings.append(Problem(IN038, f"sheet {clip(sname)!r} was skipped: it {what}",
                                    "a sheet with a header row and data rows",
                                    f"{len(rows)} non-blank row(s)",
                                    "Nothing to do if it is a cover or notes sheet.",
                                    Location(file=name, sheet=clip(sname)), "warning"))
        else:
            if sheet is None:
                rows, numbers = [], []
    finally:
        wb.close()
    if len(rows) < 2:
        raise fail(IN003, "the sheet has no data rows" if sheet else "no sheet holds a table",
                   expected="a header row and at least one data row",
                   found=(f"{len(rows)} non-blank rows" if sheet else
                          "sheets " + ", ".join(repr(clip(s)) for s in names[:10])
                          + " with no header and data rows"),
                   fix="Choose the sheet that holds the data.", remedy="sheet",
                   file=name, sheet=chosen if sheet else None)
    if len(rows) > settings.max_rows + 1 + MAX_TITLE_ROWS:
        raise fail(IN002, "the sheet has more data rows than intake accepts",
                   expected=f"at most {settings.max_rows:,} data rows (setting max_rows)",
                   found=f"more than {settings.max_rows:,}",
                   fix="Split the file, or raise REALBASIS_MAX_ROWS.", file=name, sheet=chosen)
    width = max(len(r) for r in rows)
    try:
        df = np.empty((len(rows), width), dtype=object)
        df[:] = ""
        for i, r in enumerate(rows):
            df[i, : len(r)] = r
    except MemoryError:
        raise _library_error(MemoryError(), name, chosen) from None
    notes.insert(len(notes), f"Read sheet {chosen!r} of {', '.join(repr(s) for s in names)}.")
    return Grid(df, np.asarray(numbers), src.format, sheet=chosen, sheets=names,
                notes=tuple(notes), warnings=tuple(warnings))
