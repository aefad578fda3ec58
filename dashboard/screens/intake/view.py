"""The Data intake screen's view model: plain functions, tested without a browser
(tests/test_view_intake.py).

An upload is size-checked before it is decoded (:func:`decode_upload`, UI001/UI002),
kept server-side under its SHA-256 (:func:`receive`) and read by the engine's intake
(:func:`read_upload` -> :func:`pipeline.ingest.read_file`) with the user's corrections
(:func:`interpret`); :func:`add_with_summary` puts its series into the workspace (a new
workspace when the shared demo is open). :func:`workspace_contents` lists what the
workspace holds and the files added to it, for everyone including reviewers.
"""

from __future__ import annotations

import base64
import binascii
import calendar
import dataclasses
import hashlib
from collections.abc import Mapping, Sequence
from dataclasses import dataclass
from typing import Any

from dash import html, no_update

from pipeline.errors import RealbasisError, fail, register
from pipeline.model import KINDS, Series, Workspace
from pipeline.settings import Settings

from ... import bounded
from ...components import Column, method_view, notice, problems_view, table, warnings_view
from ...context import current
from ...data import DEMO_NAME, DataAccess, WorkspaceRef, saved_words
from .._shared.view import (
    ProgressFn,
    add_intake,
    error_dicts,
    problem_dicts,
    span_text,
    stretch_text,
)

UI001 = register("UI001", "uploaded file is too large")
UI002 = register("UI002", "upload could not be decoded")

ACCEPTED_TYPES = (".csv", ".txt", ".xlsx", ".xlsm", ".xls", ".ods")


# --------------------------------------------------------------------------- reading a file


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


def preview(data: bytes, filename: str, rows: int = 8, *, sheet: str | None = None,
            settings: Any = None) -> tuple[list[str], list[dict[str, str]]]:
    """The first rows of the file as written (no interpretation): the engine's
    :func:`pipeline.ingest.preview`, which raises only coded errors."""
    from pipeline.ingest import preview as engine_preview

    return engine_preview(data, filename, rows, sheet=sheet,
                          settings=settings if isinstance(settings, Settings) else None)


def month_options(workspace_fy: int | None = None) -> list[dict[str, Any]]:
    """How the file's fiscal labels are read: as the workspace's fiscal year (the first
    choice, value 0), or a start month chosen for this file."""
    first = (f"As the workspace: fiscal year starts in {calendar.month_name[workspace_fy]}"
             if workspace_fy else "Not stated (labels need no fiscal year)")
    opts: list[dict[str, Any]] = [{"label": first, "value": 0}]
    opts += [{"label": f"Fiscal year starts in {calendar.month_name[m]}", "value": m}
             for m in range(1, 13)]
    return opts


def fiscal_month_options(found: int | None) -> list[dict[str, Any]]:
    """The workspace's fiscal-year choice: taken from its fiscal series (saying which
    month they give, when they agree), or a month set for the workspace."""
    first = ("Taken from the fiscal series" + (f" ({calendar.month_name[found]})"
                                               if found else ""))
    return [{"label": first, "value": 0},
            *({"label": f"{calendar.month_name[m]}" + (" (calendar years)" if m == 1 else ""),
               "value": m} for m in range(1, 13))]


def fiscal_view(ws: Workspace) -> tuple[Any, list[dict[str, Any]], int]:
    """The workspace's fiscal year in words (everyone sees it; PE301 when its fiscal
    series disagree), the month choices and the choice to show (0 = from the series)."""
    from pipeline.fiscal import SETTING, infer_fiscal_start, workspace_fiscal_year

    fy = workspace_fiscal_year(ws)
    from_series = infer_fiscal_start([s for s in ws.series.values()] + [
        s for v in ws.indexes.values() for s in v.values()])
    saved = (ws.settings or {}).get(SETTING)
    text = html.Div([notice(fy.describe(), "info" if fy.known else "warn"),
                     warnings_view(problem_dicts(fy.warnings))])
    return text, fiscal_month_options(from_series.month), int(saved) if saved else 0


def save_fiscal_year(data: DataAccess, ref: WorkspaceRef, month: Any
                     ) -> tuple[WorkspaceRef | None, Any]:
    """Save the workspace's fiscal-year start month (0 or None: taken from its fiscal
    series again) through :func:`pipeline.fiscal.with_fiscal_start`."""
    from pipeline.fiscal import with_fiscal_start, workspace_fiscal_year

    try:
        ws = data.load(ref)
        chosen = int(month) if month else None
        saved = data.save(with_fiscal_start(ws, chosen), action="set the fiscal year")
    except (RealbasisError, TypeError, ValueError) as err:
        if isinstance(err, RealbasisError):
            return None, problems_view(error_dicts(err), title="Not saved")
        return None, notice(f"Not saved: {month!r} is not a month.", "error")
    fy = workspace_fiscal_year(saved)
    return WorkspaceRef(saved.id, saved.version), notice(
        f"{fy.describe()} {saved_words(ws, saved)}", "ok")


def kind_options() -> list[dict[str, str]]:
    words = {"flow": "flow (amount over a period: revenue, spending)",
             "stock": "stock (amount at a date: a balance)",
             "index": "price index"}
    return [{"label": words[k], "value": k} for k in KINDS]


def _read(data: bytes, filename: str, fy_start: int | None, kinds: Mapping[str, str] | None,
          settings: Any, sheet: str | None) -> Any:
    from pipeline.ingest import read_file

    # The choices come from the page: anything the controls cannot send counts as unset
    # (the engine checks the values of the rest, IN021, PE1xx).
    fy = fy_start if isinstance(fy_start, int) and not isinstance(fy_start, bool) else None
    chosen = {str(k): str(v) for k, v in kinds.items()} if isinstance(kinds, Mapping) else {}
    return read_file(data, filename=filename, fy_start=fy or None, kinds=chosen or None,
                     sheet=sheet if isinstance(sheet, str) and sheet else None,
                     settings=settings)


def read_upload(data: bytes, filename: str, *, fy_start: int | None,
                kinds: Mapping[str, str] | None, settings: Any = None,
                sheet: str | None = None) -> Any:
    """Read a file through the intake (pipeline.ingest.read_file); with the server's
    ``settings``, in a child process bounded by ``read_memory_bytes`` and
    ``read_seconds`` (:mod:`dashboard.bounded`: UI704, UI705)."""
    if not isinstance(settings, Settings):
        return _read(data, filename, fy_start, kinds, settings, sheet)
    return bounded.run(_read, data, filename, fy_start, kinds, settings, sheet,
                       memory_bytes=settings.read_memory_bytes,
                       seconds=settings.read_seconds).value


def _read_and_preview(data: bytes, filename: str, fy_start: int | None,
                      kinds: Mapping[str, str] | None, settings: Any, sheet: str | None
                      ) -> tuple[Any, tuple[Any, ...], Any]:
    """Both readings the intake screen shows, in one bounded child: (intake or None,
    its problems when it could not be read, the preview or why there is none)."""
    try:
        intake, problems = _read(data, filename, fy_start, kinds, settings, sheet), ()
    except RealbasisError as err:
        intake, problems = None, err.problems
    try:
        shown: Any = preview(data, filename, sheet=sheet if isinstance(sheet, str) and sheet
                             else None, settings=settings)
    except RealbasisError as err:
        p = err.problems[0]
        shown = f"[{p.code}] {p.message}"
    return intake, problems, shown


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
    """How the intake read the file, in words: the engine's reading note (format,
    encoding, rows skipped, layout, markers, missing values, how kinds were decided),
    then what the screen adds."""
    lines = [str(line) for line in getattr(intake, "note", ()) or ()]
    lines.append("Kinds found here can be corrected under 'Series to correct'; a price "
                 "index is kept apart from money series and filed by vintage.")
    return lines


# --------------------------------------------------------------------------- what the screen shows


SERIES_COLUMNS = (
    Column("name", "Series"),
    Column("kind", "Kind"),
    Column("frequency", "Frequency"),
    Column("unit", "Unit"),
    Column("span", "Periods"),
    Column("count", "Values", "number", 0),
    Column("missing", "Missing", "number", 0),
    Column("status", "Status"),
    Column("vintage", "Vintage"),
)

UPLOAD_COLUMNS = (
    Column("at", "When (UTC)"),
    Column("filename", "File"),
    Column("size", "Bytes", "number", 0),
    Column("version", "Added as version"),
    Column("actor", "By"),
    Column("sha256", "SHA-256 (first 12)"),
)


def upload_limit() -> int:
    """The upload limit of the app serving this page (Settings.max_upload_bytes)."""
    rb = current()
    if rb is not None:
        return int(rb.settings.max_upload_bytes)
    return int(Settings().max_upload_bytes)


def receive(data: DataAccess, contents: str | None, filename: str | None,
            workspace: WorkspaceRef | None = None) -> tuple[dict[str, str] | None, Any]:
    """Check the size, keep the file server-side for this session and ``workspace``;
    returns (pending, status)."""
    name = filename if isinstance(filename, str) and filename else "upload"
    try:
        raw = decode_upload(contents if isinstance(contents, str) else None, name,
                            data.settings.max_upload_bytes)
        upload_id = data.keep_upload(raw, name, workspace.id if workspace else None)
    except RealbasisError as err:
        return None, problems_view(error_dicts(err), title="File refused")
    return ({"upload": upload_id, "filename": name},
            notice(f"Received {name} ({len(raw):,} bytes). Reading it…", "info"))


def interpret(data: DataAccess, pending: dict[str, str] | None, fy_start: int | None,
              kinds: dict[str, str] | None, progress: ProgressFn | None = None,
              sheet: str | None = None, workspace_fy: int | None = None
              ) -> tuple[Any, Any, Any, Any, list[dict[str, str]], bool, list[dict[str, str]]]:
    """Read the kept file with the user's choices (fiscal labels with the start month
    chosen for the file, else the workspace's fiscal year): summary, series table,
    problems, preview, the series names (for corrections), whether it can be added, and
    the workbook's sheets."""
    step = progress or (lambda done, total: None)
    if not pending:
        return None, None, None, None, [], True, []
    step(1, 4)
    shown: Any = None
    try:
        raw, name = data.upload(pending.get("upload") if isinstance(pending, dict) else None)
        step(2, 4)
        s = data.settings
        intake, problems, shown = bounded.run(
            _read_and_preview, raw, name, fy_start or workspace_fy, kinds, s, sheet,
            memory_bytes=s.read_memory_bytes, seconds=s.read_seconds).value
        if intake is None:
            raise RealbasisError(problems)
    except RealbasisError as err:
        step(4, 4)
        lines = [f"{_name(pending)} could not be read."]
        if "PE102" in err.codes:
            lines.append("Choose the month the fiscal year starts in under 'Fiscal year of "
                         "this workspace' above (saved with the workspace) or under 'How the "
                         "file is read' below (for this file); the file is then read again.")
        return (notice(lines, "error"),
                None, problems_view(error_dicts(err), title="The file cannot be read"),
                _preview_view(shown), [], True, [])
    step(3, 4)
    view = intake_view(intake, name)
    tone = "ok" if view.can_add else ("error" if view.problems else "warn")
    layout_words = {"wide": "one column per series", "long": "long (series, period, value)",
                    "sdmx": "SDMX-CSV"}.get(view.layout, view.layout)
    summary = html.Div([notice([view.message, f"Layout: {layout_words}."], tone),
                        method_view(reading_note(intake), title="How the file was read")])
    series_table = table(SERIES_COLUMNS, view.series, caption="Series found")
    problems = problems_view(view.problems)
    options = [{"label": n, "value": n} for n in view.names]
    sheets = [{"label": str(n), "value": str(n)} for n in getattr(intake, "sheets", ()) or ()]
    step(4, 4)
    return (summary, series_table, problems, _preview_view(shown), options,
            not view.can_add, sheets)


def _name(pending: Any) -> str:
    name = pending.get("filename") if isinstance(pending, dict) else None
    return str(name)[:255] if name else "The file"


def _preview_view(shown: Any) -> Any:
    """The first rows as written (a table), or in words why there is none."""
    if shown is None:
        return None
    if isinstance(shown, str):
        return html.P(f"No preview: {shown}.")
    columns, rows = shown
    return table([Column(c, c) for c in columns], rows)


def status_after_reading(pending: dict[str, str] | None) -> Any:
    """The "Received ... Reading it…" line, once reading is done: cleared (the outcome is
    in the summary below it). A refused file (no pending upload) keeps its message."""
    return None if pending else no_update


def workspace_contents(data: DataAccess, ref: WorkspaceRef | None) -> tuple[Any, Any]:
    """What the workspace holds, read-only (reviewers see this): every series and index
    vintage with kind, frequency, unit, periods and status, and the files added to it
    from the audit trail."""
    if ref is None:
        return None, None
    try:
        ws = data.load(ref)
        events = data.store.audit(ref.id)
    except RealbasisError as err:
        return problems_view(error_dicts(err), title="Cannot show the workspace"), None
    held = [*ws.series.values(),
            *(s for name in sorted(ws.indexes) for _, s in sorted(ws.indexes[name].items()))]
    series = table(SERIES_COLUMNS, series_rows(held),
                   caption=f"Series and price indexes in {ws.name!r} (version {ws.version:,})",
                   empty="This workspace holds no series yet.")
    none = "No file has been added to this workspace through the intake" + (
        " (the demo workspace was built from illustrative files shipped with the program)."
        if ws.name == DEMO_NAME else ".")
    return series, table(UPLOAD_COLUMNS, upload_rows(events), empty=none)


def upload_rows(events: Any) -> list[dict[str, Any]]:
    """The audit trail's uploads, oldest first, each with the version its save made
    (the save recorded just before the upload, named "added <file>")."""
    rows: list[dict[str, Any]] = []
    last_added: dict[str, int] = {}
    for e in events:
        if e.event == "save" and str(e.detail.get("action", "")).startswith("added ") \
                and e.version is not None:
            last_added[str(e.detail["action"])[6:]] = int(e.version)
        elif e.event == "upload":
            name = str(e.detail.get("filename", ""))
            version = last_added.pop(name, None)
            rows.append({"at": e.at.strftime("%Y-%m-%d %H:%M"), "filename": name,
                         "size": e.detail.get("size"), "actor": e.actor,
                         "version": f"{version:,}" if version is not None else "–",
                         "sha256": str(e.detail.get("sha256", ""))[:12]})
    return rows


def confirmation_after_change(added_at: dict[str, Any] | None, current: WorkspaceRef | None
                              ) -> Any:
    """The "Added ..." confirmation once the workspace has moved on (another screen saved
    a new version): restated so it agrees with the version in the header, or cleared
    when another workspace is open."""
    added = WorkspaceRef.from_dict(added_at)
    if added is None or current is None or added == current:
        return no_update
    if added.id != current.id:
        return None
    return notice([f"{(added_at or {}).get('summary', '')} They were added as version "
                   f"{added.version:,}; the workspace has changed since and is now at version "
                   f"{current.version:,}.".strip()], "ok")


def apply_kind(kinds: dict[str, str] | None, series: str | None, kind: str | None
               ) -> dict[str, str] | Any:
    if not series or kind not in ("flow", "stock", "index"):
        return no_update
    out = dict(kinds or {})
    out[series] = kind
    return out


def add(data: DataAccess, ref: WorkspaceRef, pending: dict[str, str] | None,
        fy_start: int | None, kinds: dict[str, str] | None, actor: str = "editor",
        sheet: str | None = None) -> tuple[WorkspaceRef | None, Any]:
    """Add the kept file's series to the workspace (a new one when it is the demo)."""
    new_ref, message, _summary = add_with_summary(data, ref, pending, fy_start, kinds, actor,
                                                  sheet)
    return new_ref, message


def add_with_summary(data: DataAccess, ref: WorkspaceRef, pending: dict[str, str] | None,
                     fy_start: int | None, kinds: dict[str, str] | None, actor: str = "editor",
                     sheet: str | None = None) -> tuple[WorkspaceRef | None, Any, str]:
    if not pending:
        return None, notice("Drop a file first.", "warn"), ""
    try:
        from pipeline.fiscal import fiscal_start_of

        raw, name = data.upload(pending.get("upload") if isinstance(pending, dict) else None,
                                ref.id)
        ws = data.load(ref)
        intake = read_upload(raw, name, fy_start=fy_start or fiscal_start_of(ws), kinds=kinds,
                             settings=data.settings, sheet=sheet)
        intake.raise_for_errors()
        note = ""
        if ws.name == DEMO_NAME:
            ws, note = start_from_demo(data, ws, name, actor)
        new_ws, summary = add_intake(ws, intake.series)
        saved = data.save(new_ws, action=f"added {name}", actor=actor)
        data.store.record_upload(saved.id, name, len(raw), hashlib.sha256(raw).hexdigest(),
                                 actor=actor)
    except RealbasisError as err:
        return None, problems_view(error_dicts(err), title="Not added"), ""
    text = [f"{summary} Workspace {saved.name!r} is now at version {saved.version:,}."]
    if note:
        text.append(note)
    text.append("Open Real terms or Deflator spread to use them.")
    return WorkspaceRef(saved.id, saved.version), notice(text, "ok"), summary


def start_from_demo(data: DataAccess, demo: Workspace, filename: str, actor: str
                    ) -> tuple[Workspace, str]:
    """A new workspace for the user's file, with the demo's price indexes to start with."""
    ws = data.create(f"From {filename}"[:120], actor=actor)
    ws = dataclasses.replace(
        ws, indexes={k: dict(v) for k, v in demo.indexes.items()},
        notes="Started from the demo: its price indexes are ILLUSTRATIVE (invented); replace "
              "them with real ones before relying on any figure.")
    return ws, ("The demo workspace is shared, so a new workspace was started for your file. "
                "It holds the demo's price indexes, which are illustrative (invented): upload "
                "real indexes before relying on the figures.")


def workspace_options(data: DataAccess) -> list[dict[str, str]]:
    return [{"label": f"{w.name} (version {w.version:,})", "value": w.id}
            for w in data.store.list()]
