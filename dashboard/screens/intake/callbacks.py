"""The Data intake screen's callbacks: thin, they parse values and call :mod:`.view`."""

from __future__ import annotations

from typing import Any

from dash import Dash, Input, Output, State, no_update

from pipeline.errors import RealbasisError
from pipeline.fiscal import fiscal_start_of

from ... import ids
from ...components import notice, problems_view
from ...context import context
from ...data import WorkspaceRef
from ...writes import writes
from .._shared.view import error_dicts
from . import view

KEY = __package__.rsplit(".", 1)[-1]
"""The screen's key: its package's name (dashboard.screens.discover checks they agree)."""
REF = ids.screen_ref(KEY)
SAVED = ids.screen_saved(KEY)  # what a change saved (the shell passes it on)
GOTO = ids.screen_goto(KEY)  # a workspace to open (the shell puts it in the address)
"""The workspace this screen computes for (set by the shell only while it is shown)."""


def register(app: Dash) -> None:
    rb = context(app)

    @app.callback(Output(ids.IN_WORKSPACE_LIST, "options"), Output(ids.IN_WORKSPACE_LIST, "value"),
                  Input(REF, "data"))
    def _workspaces(ref: Any) -> Any:
        r = WorkspaceRef.from_dict(ref)
        return view.workspace_options(rb.data), (r.id if r else None)

    @app.callback(Output(GOTO, "data", allow_duplicate=True),
                  Input(ids.IN_WORKSPACE_LIST, "value"), State(REF, "data"),
                  prevent_initial_call=True)
    def _open(chosen: Any, ref: Any) -> Any:
        r = WorkspaceRef.from_dict(ref)
        if not chosen or (r is not None and r.id == chosen):
            return no_update
        return f"?ws={chosen}"

    @app.callback(Output(GOTO, "data", allow_duplicate=True),
                  Output(ids.IN_ADDED, "children", allow_duplicate=True),
                  Output(ids.IN_ADDED_AT, "data", allow_duplicate=True),
                  Input(ids.IN_NEW_WORKSPACE, "n_clicks"), State(ids.IN_NEW_NAME, "value"),
                  prevent_initial_call=True)
    @writes("start a workspace")
    def _new(n: Any, name: Any) -> Any:
        if not n:
            return no_update, no_update, no_update
        try:
            ws = rb.data.create((name or "").strip() or "Untitled workspace")
        except RealbasisError as err:
            return no_update, problems_view(error_dicts(err), title="Not created"), None
        return f"?ws={ws.id}", notice(f"Started workspace {ws.name!r}.", "ok"), None

    @app.callback(Output(ids.IN_PENDING, "data"), Output(ids.IN_STATUS, "children"),
                  Output(ids.IN_KINDS, "data"), Output(ids.IN_SHEET, "value"),
                  Input(ids.IN_UPLOAD, "contents"), State(ids.IN_UPLOAD, "filename"),
                  State(REF, "data"), prevent_initial_call=True)
    @writes("upload a file")
    def _receive(contents: Any, filename: Any, ref: Any) -> Any:
        pending, status = view.receive(rb.data, contents, filename, WorkspaceRef.from_dict(ref))
        return pending, status, {}, None

    @app.callback(Output(ids.IN_WS_FY, "children"), Output(ids.IN_WS_FY_MONTH, "options"),
                  Output(ids.IN_WS_FY_MONTH, "value"), Output(ids.IN_FY_START, "options"),
                  Input(REF, "data"))
    def _fiscal(ref: Any) -> Any:
        r = WorkspaceRef.from_dict(ref)
        if r is None:
            return no_update
        ws = rb.data.load(r)
        return (*view.fiscal_view(ws), view.month_options(fiscal_start_of(ws)))

    @app.callback(Output(SAVED, "data", allow_duplicate=True),
                  Output(ids.IN_FY_MESSAGE, "children"),
                  Input(ids.IN_FY_SAVE, "n_clicks"), State(ids.IN_WS_FY_MONTH, "value"),
                  State(REF, "data"), prevent_initial_call=True)
    @writes("save the workspace's fiscal year")
    def _save_fiscal(n: Any, month: Any, ref: Any) -> Any:
        r = WorkspaceRef.from_dict(ref)
        if r is None or not n:
            return no_update, no_update
        new_ref, message = view.save_fiscal_year(rb.data, r, month)
        return (new_ref.as_dict() if new_ref else no_update), message

    @app.callback(Output(ids.IN_WS_SERIES, "children"), Output(ids.IN_UPLOADS, "children"),
                  Input(REF, "data"))
    def _contents(ref: Any) -> Any:
        return view.workspace_contents(rb.data, WorkspaceRef.from_dict(ref))

    @app.callback(Output(ids.IN_ADDED, "children", allow_duplicate=True),
                  Input(REF, "data"), State(ids.IN_ADDED_AT, "data"),
                  prevent_initial_call=True)
    def _confirmation(ref: Any, added_at: Any) -> Any:
        return view.confirmation_after_change(added_at, WorkspaceRef.from_dict(ref))

    @app.callback(
        Output(ids.IN_SUMMARY, "children"), Output(ids.IN_SERIES_TABLE, "children"),
        Output(ids.IN_PROBLEMS, "children"), Output(ids.IN_PREVIEW, "children"),
        Output(ids.IN_KIND_SERIES, "options"), Output(ids.IN_ADD, "disabled"),
        Output(ids.IN_SHEET, "options"), Output(ids.IN_STATUS, "children", allow_duplicate=True),
        Input(ids.IN_PENDING, "data"), Input(ids.IN_FY_START, "value"),
        Input(ids.IN_KINDS, "data"), Input(ids.IN_SHEET, "value"),
        State(REF, "data"),
        background=True, interval=250,
        progress=[Output(ids.IN_PROGRESS, "value"), Output(ids.IN_PROGRESS, "max")],
        cancel=[Input(ids.IN_CANCEL, "n_clicks")],
        running=[(Output(ids.IN_PROGRESS, "style"), {"visibility": "visible"},
                  {"visibility": "hidden"}),
                 (Output(ids.IN_CANCEL, "hidden"), False, True)],
        prevent_initial_call=True,
    )
    def _interpret(set_progress: Any, pending: Any, fy_start: Any, kinds: Any,
                   sheet: Any, ref: Any) -> Any:
        r = WorkspaceRef.from_dict(ref)
        workspace_fy = fiscal_start_of(rb.data.load(r)) if r is not None and pending else None
        return (*view.interpret(rb.data, pending, fy_start, kinds,
                                lambda done, total: set_progress((str(done), str(total))),
                                sheet, workspace_fy),
                view.status_after_reading(pending))

    @app.callback(Output(ids.IN_KINDS, "data", allow_duplicate=True),
                  Input(ids.IN_KIND_APPLY, "n_clicks"), State(ids.IN_KIND_SERIES, "value"),
                  State(ids.IN_KIND_VALUE, "value"), State(ids.IN_KINDS, "data"),
                  prevent_initial_call=True)
    def _kind(n: Any, series: Any, kind: Any, kinds: Any) -> Any:
        return view.apply_kind(kinds, series, kind) if n else no_update

    @app.callback(Output(GOTO, "data", allow_duplicate=True),
                  Output(SAVED, "data", allow_duplicate=True),
                  Output(ids.IN_ADDED, "children"), Output(ids.IN_ADDED_AT, "data"),
                  Input(ids.IN_ADD, "n_clicks"), State(ids.IN_PENDING, "data"),
                  State(ids.IN_FY_START, "value"), State(ids.IN_KINDS, "data"),
                  State(ids.IN_SHEET, "value"),
                  State(REF, "data"), prevent_initial_call=True)
    @writes("add a file's series to the workspace")
    def _add(n: Any, pending: Any, fy_start: Any, kinds: Any, sheet: Any, ref: Any) -> Any:
        r = WorkspaceRef.from_dict(ref)
        if not n or r is None:
            return no_update, no_update, no_update, no_update
        new_ref, message, summary = view.add_with_summary(rb.data, r, pending, fy_start, kinds,
                                                     sheet=sheet)
        if new_ref is None:
            return no_update, no_update, message, None
        return (f"?ws={new_ref.id}", new_ref.as_dict(), message,
                {**new_ref.as_dict(), "summary": summary})
