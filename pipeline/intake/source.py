"""Stage 1, the bytes: read a path or take an upload's bytes, refuse what is too large or
empty, and tell the format (text, or an xlsx, xls or ods workbook) by the file's
signature first and its name second."""

from __future__ import annotations

import io
import zipfile
from dataclasses import dataclass
from pathlib import Path
from typing import Literal

from ..errors import fail
from ..settings import Settings
from .codes import IN001, IN003, IN005, IN006, IN027

Format = Literal["csv", "xlsx", "xls", "ods"]

_ZIP = b"PK\x03\x04"
_OLE = b"\xd0\xcf\x11\xe0"  # the compound-file signature of .xls (BIFF) workbooks
_WORKBOOK_NAMES = {".xlsx": "xlsx", ".xlsm": "xlsx", ".xls": "xls", ".ods": "ods"}


@dataclass(frozen=True)
class Source:
    """A file's bytes, the name used in messages and its format."""

    data: bytes
    name: str
    format: Format


def load(source: str | Path | bytes, filename: str | None, settings: Settings) -> Source:
    """The bytes of ``source`` (a path or the bytes themselves) with their format."""
    data, name = read_bytes(source, filename, settings)
    return Source(data, name, detect_format(data, name))


def read_bytes(source: str | Path | bytes, filename: str | None,
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
                       found="a folder", fix="Name a CSV or workbook file.", file=str(source))
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


def detect_format(data: bytes, name: str) -> Format:
    """'xlsx', 'ods' or 'xls' for workbooks (by signature, then by name), else 'csv'."""
    suffix = Path(name).suffix.lower()
    if data.startswith(_ZIP):
        try:
            with zipfile.ZipFile(io.BytesIO(data)) as z:
                names = set(z.namelist())
                mime = z.read("mimetype")[:100] if "mimetype" in names else b""
        except (zipfile.BadZipFile, KeyError, OSError, ValueError, EOFError,
                NotImplementedError, RuntimeError):
            raise fail(IN027, "the workbook cannot be opened", expected="an .xlsx or .ods workbook",
                       found="a damaged or incomplete zip archive",
                       fix="Open the file in a spreadsheet program and save it again as .xlsx.",
                       file=name) from None
        if "xl/workbook.xml" in names or any(n.startswith("xl/") for n in names):
            return "xlsx"
        if b"opendocument.spreadsheet" in mime or "content.xml" in names:
            return "ods"
        if suffix in _WORKBOOK_NAMES:
            raise fail(IN027, "the workbook cannot be opened", expected="an .xlsx or .ods workbook",
                       found="a zip archive without a workbook inside",
                       fix="Open the file in a spreadsheet program and save it again as .xlsx.",
                       file=name)
        raise fail(IN005, "the file is a zip archive, not a table",
                   expected="a CSV file or a workbook (.xlsx, .xls, .ods)",
                   found="a zip archive", fix="Unpack the archive and choose the file inside.",
                   file=name)
    if data.startswith(_OLE):
        return "xls"
    if suffix in _WORKBOOK_NAMES:
        raise fail(IN027, "the workbook cannot be opened",
                   expected=f"a {suffix} workbook", found="bytes that are not a workbook",
                   fix="Open the file in a spreadsheet program and save it again as .xlsx.",
                   file=name)
    return "csv"
