"""What the callbacks do, as plain functions (unit-tested without a browser).

Callbacks in :mod:`dashboard.screens` are a few lines: they turn component values into
arguments, call a function here, and put its result into components. Functions here take
and return plain data (workspaces, engine results, lists of dicts) and call the engine
(:mod:`pipeline`) for every computation; nothing here recomputes what the engine does.
"""

from __future__ import annotations

import base64
import binascii
import calendar
import dataclasses
import io
from collections.abc import Mapping, Sequence
from dataclasses import dataclass
from typing import Any

import pandas as pd

from pipeline.errors import RealbasisError, fail, register
from pipeline.model import KINDS, Series, Workspace

from .screens._shared.view import (  # noqa: F401  (moving out of this module)
    MEASURES,
    TOTAL,
    UI004,
    UI005,
    ProgressFn,
    Spread,
    base_after_series_change,
    base_fits,
    base_for,
    default_base,
    deflator_options,
    error_dicts,
    frequency_options,
    isfinite,
    latest_vintage,
    parse_frequency,
    pick_index,
    pick_series,
    problem_dict,
    problem_dicts,
    series_options,
    span_text,
    spread,
    stretch_text,
    total_groups,
    trim_to_cover,
    verdict_text,
)

UI001 = register("UI001", "uploaded file is too large")
UI002 = register("UI002", "upload could not be decoded")

ACCEPTED_TYPES = (".csv", ".txt", ".xlsx", ".xlsm")


# --------------------------------------------------------------------------- problems


# --------------------------------------------------------------------------- uploads


def decode_upload(contents: str | None, filename: str | None, max_bytes: int) -> bytes:
    """The bytes of a dcc.Upload ``contents`` data URL, refusing files over ``max_bytes``
    before decoding them (UI001) and undecodable payloads (UI002)."""
    if not contents or "," not in contents:
        raise fail(UI002, "the upload arrived empty or garbled", expected="a file",
                   found=repr((contents or "")[:40]), fix="Drop the file again.",
                   file=filename)
    header, payload = contents.split(",", 1)
    estimated = len(payload) * 3 // 4 - payload[-2:].count("=")
    if estimated > max_bytes:
        raise too_large(estimated, max_bytes, filename)
    if ";base64" not in header:
        raise fail(UI002, "the upload is not base64-encoded", expected="a data URL with base64",
                   found=header[:60], fix="Drop the file again.", file=filename)
    try:
        return base64.b64decode(payload, validate=True)
    except (binascii.Error, ValueError):
        raise fail(UI002, "the upload could not be decoded", expected="base64 data",
                   found="invalid characters", fix="Drop the file again.",
                   file=filename) from None


def too_large(found: int | None, max_bytes: int, filename: str | None = None
              ) -> RealbasisError:
    """UI001 for a file over the upload limit, naming the limit (``found`` None: the
    request was cut off before its size could be read from the file)."""
    what = (f"the file is {_size(found)}; the largest accepted is {_size(max_bytes)}"
            if found is not None else
            f"the upload is far larger than the largest file accepted ({_size(max_bytes)})")
    return fail(UI001, what, expected=f"at most {max_bytes:,} bytes ({_size(max_bytes)})",
                found=f"{found:,} bytes" if found is not None else "a larger request",
                fix="Split the file, drop columns you do not need, or ask the "
                    "administrator to raise REALBASIS_MAX_UPLOAD_BYTES.",
                file=filename)


def size_text(n: int) -> str:
    """A byte count in words (kB and MB of 1,024), as the messages state limits."""
    return _size(n)


def _size(n: int) -> str:
    if n >= 1024 * 1024:
        return f"{n / (1024 * 1024):,.1f} MB"
    if n >= 1024:
        return f"{n / 1024:,.1f} kB"
    return f"{n:,} bytes"


def preview(data: bytes, filename: str, rows: int = 8) -> tuple[list[str], list[dict[str, str]]]:
    """The first rows of the file as text, exactly as written (no interpretation)."""
    name = filename.lower()
    if name.endswith((".xlsx", ".xlsm")):
        frame = pd.read_excel(io.BytesIO(data), nrows=rows, dtype=str, header=None,
                              engine="openpyxl")
    else:
        try:
            frame = pd.read_csv(io.BytesIO(data), nrows=rows, dtype=str, header=None,
                                sep=None, engine="python", encoding_errors="replace")
        except (pd.errors.ParserError, UnicodeDecodeError, ValueError):
            text = data[:4000].decode("utf-8", errors="replace").splitlines()[:rows]
            return ["line"], [{"line": t} for t in text]
    frame = frame.fillna("")
    columns = [f"column {i + 1}" for i in range(frame.shape[1])]
    out = [{c: str(v) for c, v in zip(columns, row, strict=True)}
           for row in frame.itertuples(index=False)]
    return columns, out


def month_options() -> list[dict[str, Any]]:
    opts: list[dict[str, Any]] = [{"label": "Not stated (labels need no fiscal year)",
                                   "value": 0}]
    opts += [{"label": f"Fiscal year starts in {calendar.month_name[m]}", "value": m}
             for m in range(1, 13)]
    return opts


def kind_options() -> list[dict[str, str]]:
    words = {"flow": "flow (amount over a period: revenue, spending)",
             "stock": "stock (amount at a date: a balance)",
             "index": "price index"}
    return [{"label": words[k], "value": k} for k in KINDS]


def read_upload(data: bytes, filename: str, *, fy_start: int | None,
                kinds: Mapping[str, str] | None, settings: Any = None,
                sheet: str | None = None) -> Any:
    """Read a file through the intake (pipeline.ingest.read_file)."""
    from pipeline.ingest import read_file

    return read_file(data, filename=filename, sheet=sheet or None, fy_start=fy_start or None,
                     kinds=dict(kinds or {}) or None, settings=settings)


def series_rows(series: Sequence[Series]) -> list[dict[str, Any]]:
    """One row per series found: what the intake made of it."""
    rows = []
    for s in series:
        values = s.values
        rows.append({
            "name": s.name, "frequency": s.frequency.describe(), "kind": s.kind,
            "unit": s.unit or "not stated", "span": span_text(s),
            "count": int(values.notna().sum()), "missing": int(values.isna().sum()),
            "status": stretch_text(s), "vintage": s.vintage or "not stated",
        })
    return rows


@dataclass(frozen=True)
class IntakeView:
    """What the intake screen shows about one uploaded file."""

    filename: str
    layout: str
    series: list[dict[str, Any]]
    problems: list[dict[str, Any]]
    names: list[str]
    can_add: bool
    message: str


def intake_view(intake: Any, filename: str) -> IntakeView:
    errors = [p for p in intake.problems if p.severity == "error"]
    names = [s.name for s in intake.series]
    if errors:
        msg = (f"{len(names):,} series found in {filename}, but {len(errors):,} problem(s) "
               "must be fixed in the file before it can be added.")
    elif names:
        msg = f"{len(names):,} series found in {filename}. Check them, then add them."
    else:
        msg = f"No series found in {filename}."
    return IntakeView(filename, str(getattr(intake, "layout", "")), series_rows(intake.series),
                      problem_dicts(intake.problems), names, bool(names) and not errors, msg)


def reading_note(intake: Any) -> list[str]:
    """How the intake read the file, in words (format, encoding, delimiter, decimals)."""
    lines = []
    fmt = str(getattr(intake, "format", "") or "")
    if fmt == "xlsx" or getattr(intake, "sheet", None):
        lines.append(f"Read as a workbook, sheet {intake.sheet!r}.")
    else:
        enc = getattr(intake, "encoding", None) or "not stated"
        d = str(getattr(intake, "delimiter", "") or "")
        delim = {",": "comma", ";": "semicolon", "\t": "tab"}.get(d, d)
        lines.append(f"Read as text: encoding {enc}, {delim}-separated.")
    dec = getattr(intake, "decimal", ".")
    lines.append("Decimal mark: " + ("comma (1.234,5)" if dec == "," else "point (1,234.5)") + ".")
    lines.append(f"{int(getattr(intake, 'rows', 0) or 0):,} data rows; cells that are not "
                 "numbers or not periods are listed as problems and left out.")
    lines.append("Kinds were guessed from names, units and values unless corrected here; "
                 "a price index is kept apart from money series and filed by vintage.")
    return lines


def add_intake(ws: Workspace, series: Sequence[Series]) -> tuple[Workspace, str]:
    """Put the series of an intake into a workspace: money series by name, price
    indexes by name and vintage. Returns the new workspace (unsaved) and a summary."""
    money = dict(ws.series)
    indexes = {k: dict(v) for k, v in ws.indexes.items()}
    added, replaced = 0, 0
    for s in series:
        if s.kind == "index":
            vins = indexes.setdefault(s.name, {})
            replaced += (s.vintage or "") in vins
            vins[s.vintage or ""] = s
        else:
            replaced += s.name in money
            money[s.name] = s
        added += 1
    n_idx = sum(1 for s in series if s.kind == "index")
    summary = (f"Added {added - n_idx:,} money series and {n_idx:,} index series"
               + (f" ({replaced:,} replaced an earlier one of the same name)" if replaced else "")
               + ".")
    return dataclasses.replace(ws, series=money, indexes=indexes), summary


# --------------------------------------------------------------------------- workspace views


# --------------------------------------------------------------------------- real terms


# --------------------------------------------------------------------------- deflator spread


# --------------------------------------------------------------------------- revisions


# --------------------------------------------------------------------------- deflator shelf


# --------------------------------------------------------------------------- batch seasonal adjustment


