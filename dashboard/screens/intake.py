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

from .. import ids, logic
from ..components import (
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
EDITOR_ONLY = True

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
        "Drop nominal series and price indexes. Every series found is listed with its "
        "frequency, kind and unit, and every problem with where it is.",
        workspace,
        upload,
        dcc.Store(id=ids.IN_PENDING),
        dcc.Store(id=ids.IN_KINDS, data={}),
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
        cautions_view(),
    )


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
    if not pending:
        return None, notice("Drop a file first.", "warn")
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
        return None, problems_view(logic.error_dicts(err), title="Not added")
    text = [f"{summary} Workspace {saved.name!r} is now at version {saved.version:,}."]
    if note:
        text.append(note)
    text.append("Open Real terms or Deflator spread to use them.")
    return WorkspaceRef(saved.id, saved.version), notice(text, "ok")


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
    from ..app import context

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
                  Input(ids.IN_NEW_WORKSPACE, "n_clicks"), State(ids.IN_NEW_NAME, "value"),
                  prevent_initial_call=True)
    def _new(n: Any, name: Any) -> Any:
        if not n:
            return no_update, no_update
        try:
            ws = rb.data.create((name or "").strip() or "Untitled workspace")
        except RealbasisError as err:
            return no_update, problems_view(logic.error_dicts(err), title="Not created")
        return f"?ws={ws.id}", notice(f"Started workspace {ws.name!r}.", "ok")

    @app.callback(Output(ids.IN_PENDING, "data"), Output(ids.IN_STATUS, "children"),
                  Output(ids.IN_KINDS, "data"), Output(ids.IN_SHEET, "value"),
                  Input(ids.IN_UPLOAD, "contents"), State(ids.IN_UPLOAD, "filename"),
                  prevent_initial_call=True)
    def _receive(contents: Any, filename: Any) -> Any:
        pending, status = receive(rb.data, contents, filename)
        return pending, status, {}, None

    @app.callback(
        Output(ids.IN_SUMMARY, "children"), Output(ids.IN_SERIES_TABLE, "children"),
        Output(ids.IN_PROBLEMS, "children"), Output(ids.IN_PREVIEW, "children"),
        Output(ids.IN_KIND_SERIES, "options"), Output(ids.IN_ADD, "disabled"),
        Output(ids.IN_SHEET, "options"),
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
        return interpret(rb.data, pending, fy_start, kinds,
                         lambda done, total: set_progress((str(done), str(total))), sheet)

    @app.callback(Output(ids.IN_KINDS, "data", allow_duplicate=True),
                  Input(ids.IN_KIND_APPLY, "n_clicks"), State(ids.IN_KIND_SERIES, "value"),
                  State(ids.IN_KIND_VALUE, "value"), State(ids.IN_KINDS, "data"),
                  prevent_initial_call=True)
    def _kind(n: Any, series: Any, kind: Any, kinds: Any) -> Any:
        return apply_kind(kinds, series, kind) if n else no_update

    @app.callback(Output(ids.URL, "search", allow_duplicate=True),
                  Output(ids.WORKSPACE, "data", allow_duplicate=True),
                  Output(ids.IN_ADDED, "children"),
                  Input(ids.IN_ADD, "n_clicks"), State(ids.IN_PENDING, "data"),
                  State(ids.IN_FY_START, "value"), State(ids.IN_KINDS, "data"),
                  State(ids.IN_SHEET, "value"),
                  State(ids.WORKSPACE, "data"), prevent_initial_call=True)
    def _add(n: Any, pending: Any, fy_start: Any, kinds: Any, sheet: Any, ref: Any) -> Any:
        r = WorkspaceRef.from_dict(ref)
        if not n or r is None:
            return no_update, no_update, no_update
        new_ref, message = add(rb.data, r, pending, fy_start, kinds, sheet=sheet)
        if new_ref is None:
            return no_update, no_update, message
        return f"?ws={new_ref.id}", new_ref.as_dict(), message
