"""Data intake: drop a file, see what was found, correct the reading, add it.

The file is size-checked on the server (the upload widget's own limit would drop a big
file silently), kept server-side under its SHA-256 and read by the engine's intake
(:func:`pipeline.ingest.read_file`) in a background job with a progress bar. The user
can correct the fiscal-year start and each series' kind; the file is then read again
with those choices. Adding puts the series into the workspace (the shared demo
workspace is never changed: adding there starts a new workspace).
"""

from __future__ import annotations

import dataclasses
import hashlib
from typing import Any

from dash import Dash, Input, Output, State, dcc, html, no_update

from pipeline.errors import RealbasisError
from pipeline.model import Workspace
from pipeline.settings import Settings

from .. import ids, logic
from ..components import (
    EDITOR_ONLY_CLASS,
    Column,
    cautions_view,
    dropdown,
    field,
    method_view,
    notice,
    problems_view,
    progress_bar,
    screen,
    table,
)
from ..data import DEMO_NAME, DataAccess, WorkspaceRef

KEY = "intake"
TITLE = "Data intake"
ORDER = 10
# Reviewers see this screen too, read-only: the part marked EDITOR_ONLY_CLASS (workspace
# choice, upload, corrections, adding) is hidden in their page by dashboard/access.py, and
# what the workspace holds (series, files added) is shown to everyone.

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


def layout() -> html.Div:
    workspace = html.Div([
        field("Open a workspace", dropdown(ids.IN_WORKSPACE_LIST, placeholder="Choose"),
              ids.IN_WORKSPACE_LIST),
        field("Or start a new one", dcc.Input(id=ids.IN_NEW_NAME, type="text",
                                              placeholder="Name, e.g. FY2026 budget review",
                                              className="rb-input", maxLength=120),
              ids.IN_NEW_NAME),
        html.Div(html.Button("Start an empty workspace", id=ids.IN_NEW_WORKSPACE, n_clicks=0,
                             type="button", className="rb-button"), className="rb-field"),
    ], className="rb-controls")
    upload = dcc.Upload(
        id=ids.IN_UPLOAD, multiple=False, accept=",".join(logic.ACCEPTED_TYPES),
        max_size=-1,  # the server checks the size and says so (the widget would drop silently)
        className="rb-upload",
        children=html.Div([
            html.Strong("Drop a file here"), " or ",
            html.Span("choose one", className="rb-linklike"),
            html.Br(),
            html.Small("CSV, XLSX or SDMX-CSV; a period column (2024-01, 2024Q1, 2024, FY2025) "
                       "and one column per series, or long columns series, period, value "
                       "(unit, status, vintage optional)."),
        ]),
    )
    limit = upload_limit()
    # assets/upload-limit.js reads these and refuses a bigger file in the browser, before
    # anything is sent (the server checks again: UI001, and answers an oversized request
    # with the same message, see dashboard.app).
    upload = html.Div(upload, id=ids.IN_UPLOAD_BOX, className="rb-upload-box", **{
        "data-max-bytes": str(limit), "data-limit-text": logic.size_text(limit),
        "data-status-id": ids.IN_STATUS})
    interpretation = html.Div([
        field("Fiscal year", dcc.Dropdown(id=ids.IN_FY_START, options=logic.month_options(),
                                          value=0, clearable=False, className="rb-dropdown"),
              ids.IN_FY_START, hint="Needed when labels like FY2025 appear."),
        field("Sheet", dcc.Dropdown(id=ids.IN_SHEET, options=[], value=None, clearable=True,
                                    placeholder="First sheet with data",
                                    className="rb-dropdown"), ids.IN_SHEET,
              hint="Workbooks only."),
        field("Series to correct", dropdown(ids.IN_KIND_SERIES, placeholder="Choose a series"),
              ids.IN_KIND_SERIES),
        field("Is a", dcc.Dropdown(id=ids.IN_KIND_VALUE, options=logic.kind_options(),
                                   value="flow", clearable=False, className="rb-dropdown"),
              ids.IN_KIND_VALUE),
        html.Div(html.Button("Apply and read again", id=ids.IN_KIND_APPLY, n_clicks=0,
                             type="button", className="rb-button"), className="rb-field"),
    ], className="rb-controls")
    return screen(
        "Data intake",
        "The series and price indexes this workspace holds, and the files added to it. "
        "Editors drop new files here: every series found is listed with its frequency, "
        "kind and unit, and every problem with where it is.",
        html.Div([*_editor_part(workspace, upload, interpretation)], className=EDITOR_ONLY_CLASS),
        html.H3("In this workspace"),
        html.Div(id=ids.IN_WS_SERIES),
        html.H3("Files added"),
        html.Div(id=ids.IN_UPLOADS),
        cautions_view(),
    )


def _editor_part(workspace: Any, upload: Any, interpretation: Any) -> list[Any]:
    """Choosing a workspace, dropping a file, correcting and adding it (editors only)."""
    return [
        workspace,
        upload,
        dcc.Store(id=ids.IN_PENDING),
        dcc.Store(id=ids.IN_KINDS, data={}),
        dcc.Store(id=ids.IN_ADDED_AT),
        html.Div(id=ids.IN_STATUS, role="status"),
        progress_bar(ids.IN_PROGRESS),
        html.Div(id=ids.IN_SUMMARY, role="status"),
        html.H3("How the file is read"),
        interpretation,
        html.Div(id=ids.IN_SERIES_TABLE),
        html.Div(id=ids.IN_PROBLEMS),
        html.Details([html.Summary("First rows of the file, as written"),
                      html.Div(id=ids.IN_PREVIEW)], className="rb-details"),
        html.Div([html.Button("Add these series to the workspace", id=ids.IN_ADD, n_clicks=0,
                              type="button", disabled=True, className="rb-button rb-primary"),
                  html.Div(id=ids.IN_ADDED, role="status")], className="rb-actions"),
    ]


def upload_limit() -> int:
    """The upload limit of the app serving this page (Settings.max_upload_bytes)."""
    from ..context import current

    rb = current()
    if rb is not None:
        return int(rb.settings.max_upload_bytes)
    return int(Settings().max_upload_bytes)


# --------------------------------------------------------------------------- bodies


def receive(data: DataAccess, contents: str | None, filename: str | None
            ) -> tuple[dict[str, str] | None, Any]:
    """Check the size, keep the file server-side; returns (pending, status)."""
    name = filename or "upload"
    try:
        raw = logic.decode_upload(contents, name, data.settings.max_upload_bytes)
    except RealbasisError as err:
        return None, problems_view(logic.error_dicts(err), title="File refused")
    upload_id = data.keep_upload(raw, name)
    return ({"upload": upload_id, "filename": name},
            notice(f"Received {name} ({len(raw):,} bytes). Reading it…", "info"))


def interpret(data: DataAccess, pending: dict[str, str] | None, fy_start: int | None,
              kinds: dict[str, str] | None, progress: logic.ProgressFn | None = None,
              sheet: str | None = None
              ) -> tuple[Any, Any, Any, Any, list[dict[str, str]], bool, list[dict[str, str]]]:
    """Read the kept file with the user's choices: summary, series table, problems,
    preview, the series names (for corrections), whether it can be added, and the
    workbook's sheets."""
    step = progress or (lambda done, total: None)
    if not pending:
        return None, None, None, None, [], True, []
    step(1, 4)
    try:
        raw, name = data.upload(pending["upload"])
        step(2, 4)
        intake = logic.read_upload(raw, name, fy_start=fy_start, kinds=kinds,
                                   settings=data.settings, sheet=sheet)
    except RealbasisError as err:
        step(4, 4)
        lines = [f"{pending.get('filename', 'The file')} could not be read."]
        if "PE102" in err.codes:
            lines.append("Choose the month the fiscal year starts in under 'How the file is "
                         "read' below; the file is then read again.")
        return (notice(lines, "error"),
                None, problems_view(logic.error_dicts(err), title="The file cannot be read"),
                _preview(pending, data), [], True, [])
    step(3, 4)
    view = logic.intake_view(intake, name)
    tone = "ok" if view.can_add else ("error" if view.problems else "warn")
    layout_words = {"wide": "one column per series", "long": "long (series, period, value)",
                    "sdmx": "SDMX-CSV"}.get(view.layout, view.layout)
    summary = html.Div([notice([view.message, f"Layout: {layout_words}."], tone),
                        method_view(logic.reading_note(intake), title="How the file was read")])
    series_table = table(SERIES_COLUMNS, view.series, caption="Series found")
    problems = problems_view(view.problems)
    options = [{"label": n, "value": n} for n in view.names]
    sheets = [{"label": str(n), "value": str(n)} for n in getattr(intake, "sheets", ()) or ()]
    step(4, 4)
    return (summary, series_table, problems, _preview(pending, data), options,
            not view.can_add, sheets)


def _preview(pending: dict[str, str], data: DataAccess) -> Any:
    try:
        raw, name = data.upload(pending["upload"])
        columns, rows = logic.preview(raw, name)
    except (RealbasisError, ValueError, OSError) as err:
        return html.P(f"No preview: {err}")
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
        return problems_view(logic.error_dicts(err), title="Cannot show the workspace"), None
    held = [*ws.series.values(),
            *(s for name in sorted(ws.indexes) for _, s in sorted(ws.indexes[name].items()))]
    series = table(SERIES_COLUMNS, logic.series_rows(held),
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
        raw, name = data.upload(pending["upload"])
        intake = logic.read_upload(raw, name, fy_start=fy_start, kinds=kinds,
                                   settings=data.settings, sheet=sheet)
        intake.raise_for_errors()
        ws = data.load(ref)
        note = ""
        if ws.name == DEMO_NAME:
            ws, note = start_from_demo(data, ws, name, actor)
        new_ws, summary = logic.add_intake(ws, intake.series)
        saved = data.save(new_ws, action=f"added {name}", actor=actor)
        data.store.record_upload(saved.id, name, len(raw), hashlib.sha256(raw).hexdigest(),
                                 actor=actor)
    except RealbasisError as err:
        return None, problems_view(logic.error_dicts(err), title="Not added"), ""
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


# --------------------------------------------------------------------------- callbacks


def register(app: Dash) -> None:
    from ..context import context

    rb = context(app)

    @app.callback(Output(ids.IN_WORKSPACE_LIST, "options"), Output(ids.IN_WORKSPACE_LIST, "value"),
                  Input(ids.WORKSPACE, "data"))
    def _workspaces(ref: Any) -> Any:
        r = WorkspaceRef.from_dict(ref)
        return workspace_options(rb.data), (r.id if r else None)

    @app.callback(Output(ids.URL, "search", allow_duplicate=True),
                  Input(ids.IN_WORKSPACE_LIST, "value"), State(ids.WORKSPACE, "data"),
                  prevent_initial_call=True)
    def _open(chosen: Any, ref: Any) -> Any:
        r = WorkspaceRef.from_dict(ref)
        if not chosen or (r is not None and r.id == chosen):
            return no_update
        return f"?ws={chosen}"

    @app.callback(Output(ids.URL, "search", allow_duplicate=True),
                  Output(ids.IN_ADDED, "children", allow_duplicate=True),
                  Output(ids.IN_ADDED_AT, "data", allow_duplicate=True),
                  Input(ids.IN_NEW_WORKSPACE, "n_clicks"), State(ids.IN_NEW_NAME, "value"),
                  prevent_initial_call=True)
    def _new(n: Any, name: Any) -> Any:
        if not n:
            return no_update, no_update, no_update
        try:
            ws = rb.data.create((name or "").strip() or "Untitled workspace")
        except RealbasisError as err:
            return no_update, problems_view(logic.error_dicts(err), title="Not created"), None
        return f"?ws={ws.id}", notice(f"Started workspace {ws.name!r}.", "ok"), None

    @app.callback(Output(ids.IN_PENDING, "data"), Output(ids.IN_STATUS, "children"),
                  Output(ids.IN_KINDS, "data"), Output(ids.IN_SHEET, "value"),
                  Input(ids.IN_UPLOAD, "contents"), State(ids.IN_UPLOAD, "filename"),
                  prevent_initial_call=True)
    def _receive(contents: Any, filename: Any) -> Any:
        pending, status = receive(rb.data, contents, filename)
        return pending, status, {}, None

    @app.callback(Output(ids.IN_WS_SERIES, "children"), Output(ids.IN_UPLOADS, "children"),
                  Input(ids.WORKSPACE, "data"))
    def _contents(ref: Any) -> Any:
        return workspace_contents(rb.data, WorkspaceRef.from_dict(ref))

    @app.callback(Output(ids.IN_ADDED, "children", allow_duplicate=True),
                  Input(ids.WORKSPACE, "data"), State(ids.IN_ADDED_AT, "data"),
                  prevent_initial_call=True)
    def _confirmation(ref: Any, added_at: Any) -> Any:
        return confirmation_after_change(added_at, WorkspaceRef.from_dict(ref))

    @app.callback(
        Output(ids.IN_SUMMARY, "children"), Output(ids.IN_SERIES_TABLE, "children"),
        Output(ids.IN_PROBLEMS, "children"), Output(ids.IN_PREVIEW, "children"),
        Output(ids.IN_KIND_SERIES, "options"), Output(ids.IN_ADD, "disabled"),
        Output(ids.IN_SHEET, "options"), Output(ids.IN_STATUS, "children", allow_duplicate=True),
        Input(ids.IN_PENDING, "data"), Input(ids.IN_FY_START, "value"),
        Input(ids.IN_KINDS, "data"), Input(ids.IN_SHEET, "value"),
        background=True,
        progress=[Output(ids.IN_PROGRESS, "value"), Output(ids.IN_PROGRESS, "max")],
        running=[(Output(ids.IN_PROGRESS, "style"), {"visibility": "visible"},
                  {"visibility": "hidden"})],
        prevent_initial_call=True,
    )
    def _interpret(set_progress: Any, pending: Any, fy_start: Any, kinds: Any,
                   sheet: Any) -> Any:
        return (*interpret(rb.data, pending, fy_start, kinds,
                           lambda done, total: set_progress((str(done), str(total))), sheet),
                status_after_reading(pending))

    @app.callback(Output(ids.IN_KINDS, "data", allow_duplicate=True),
                  Input(ids.IN_KIND_APPLY, "n_clicks"), State(ids.IN_KIND_SERIES, "value"),
                  State(ids.IN_KIND_VALUE, "value"), State(ids.IN_KINDS, "data"),
                  prevent_initial_call=True)
    def _kind(n: Any, series: Any, kind: Any, kinds: Any) -> Any:
        return apply_kind(kinds, series, kind) if n else no_update

    @app.callback(Output(ids.URL, "search", allow_duplicate=True),
                  Output(ids.WORKSPACE, "data", allow_duplicate=True),
                  Output(ids.IN_ADDED, "children"), Output(ids.IN_ADDED_AT, "data"),
                  Input(ids.IN_ADD, "n_clicks"), State(ids.IN_PENDING, "data"),
                  State(ids.IN_FY_START, "value"), State(ids.IN_KINDS, "data"),
                  State(ids.IN_SHEET, "value"),
                  State(ids.WORKSPACE, "data"), prevent_initial_call=True)
    def _add(n: Any, pending: Any, fy_start: Any, kinds: Any, sheet: Any, ref: Any) -> Any:
        r = WorkspaceRef.from_dict(ref)
        if not n or r is None:
            return no_update, no_update, no_update, no_update
        new_ref, message, summary = add_with_summary(rb.data, r, pending, fy_start, kinds,
                                                     sheet=sheet)
        if new_ref is None:
            return no_update, no_update, message, None
        return (f"?ws={new_ref.id}", new_ref.as_dict(), message,
                {**new_ref.as_dict(), "summary": summary})
