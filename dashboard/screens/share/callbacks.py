"""The Share and export screen's callbacks: thin, they parse values and call :mod:`.view`."""

from __future__ import annotations

from typing import Any

from dash import Dash, Input, Output, State, ctx, dcc, no_update

from pipeline.errors import RealbasisError
from pipeline.store import current_access

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
    import flask

    rb = context(app)

    @app.callback(Output(ids.SX_SCOPE, "children"), Output(ids.SX_LINK_PANEL, "hidden"),
                  Input(REF, "data"))
    def _overview(ref: Any) -> Any:
        r = WorkspaceRef.from_dict(ref)
        if r is None:
            return no_update, no_update
        view.warm_images()  # the chart image then rarely waits for Chromium to start
        return view.scope_view(rb.data.load(r)), current_access().read_only

    @app.callback(Output(ids.SX_AUDIT, "children"), Input(REF, "data"),
                  Input(ids.SX_LINKS, "children"), Input(ids.SX_DL_STATUS, "children"))
    def _audit(ref: Any, _links: Any, _status: Any) -> Any:
        r = WorkspaceRef.from_dict(ref)
        if r is None:
            return no_update
        return view.audit_view(rb.data.store, r.id)

    @app.callback(Output(ids.SX_LINKS, "children"), Output(ids.SX_REVOKE_ID, "options"),
                  Output(ids.SX_LINK_NEW, "children"), Input(REF, "data"))
    def _links(ref: Any) -> Any:
        r = WorkspaceRef.from_dict(ref)
        if r is None:
            return no_update, no_update, no_update
        if current_access().read_only:
            return None, [], None  # nothing to show a reviewer; changes would be refused
        try:
            links, options = view.links_view(rb.data.store, r.id)
        except RealbasisError as err:
            return no_update, no_update, problems_view(error_dicts(err), title="Not done")
        return links, options, None

    @app.callback(Output(ids.SX_LINKS, "children", allow_duplicate=True),
                  Output(ids.SX_REVOKE_ID, "options", allow_duplicate=True),
                  Output(ids.SX_LINK_NEW, "children", allow_duplicate=True),
                  Input(ids.SX_LINK_CREATE, "n_clicks"), Input(ids.SX_REVOKE, "n_clicks"),
                  State(ids.SX_LINK_LABEL, "value"), State(ids.SX_LINK_DAYS, "value"),
                  State(ids.SX_REVOKE_ID, "value"), State(REF, "data"),
                  prevent_initial_call=True)
    @writes("create or revoke a reviewer link")
    def _link_change(_c: Any, _r: Any, label: Any, days: Any, revoke_id: Any,
                     ref: Any) -> Any:
        r = WorkspaceRef.from_dict(ref)
        if r is None:
            return no_update, no_update, no_update
        store = rb.data.store
        trigger = ctx.triggered_id
        message: Any = None
        try:
            if trigger == ids.SX_LINK_CREATE:
                url, info = view.new_link(store, r.id, label, days, flask.request.host_url)
                message = view.created_link_view(url, info)
            elif trigger == ids.SX_REVOKE and revoke_id:
                info = store.revoke_link(str(revoke_id), actor=current_access().actor)
                message = notice(f"Link {info.id} revoked: it no longer opens anything.", "ok")
            else:
                return no_update, no_update, no_update
            links, options = view.links_view(store, r.id)
        except RealbasisError as err:
            return no_update, no_update, problems_view(error_dicts(err), title="Not done")
        return links, options, message

    @app.callback(
        Output(ids.SX_DOWNLOAD, "data"), Output(ids.SX_DL_STATUS, "children"),
        Input(ids.SX_DL_XLSX, "n_clicks"), Input(ids.SX_DL_CSV, "n_clicks"),
        Input(ids.SX_DL_JSON, "n_clicks"), State(REF, "data"),
        background=True, prevent_initial_call=True, interval=250,
        progress=[Output(ids.SX_PROGRESS, "value"), Output(ids.SX_PROGRESS, "max")],
        cancel=[Input(ids.SX_CANCEL, "n_clicks")],
        running=[(Output(ids.SX_DL_XLSX, "disabled"), True, False),
                 (Output(ids.SX_DL_CSV, "disabled"), True, False),
                 (Output(ids.SX_DL_JSON, "disabled"), True, False),
                 (Output(ids.SX_PROGRESS, "style"), {"visibility": "visible"},
                  {"visibility": "hidden"}),
                 (Output(ids.SX_CANCEL, "hidden"), False, True)],
    )
    def _download(set_progress: Any, _x: Any, _c: Any, _j: Any, ref: Any) -> Any:
        r = WorkspaceRef.from_dict(ref)
        fmt = {ids.SX_DL_XLSX: "xlsx", ids.SX_DL_CSV: "csv",
               ids.SX_DL_JSON: "json"}.get(str(ctx.triggered_id), "xlsx")
        if r is None:
            return no_update, no_update
        try:
            data, name = view.export_file(rb.data.load(r), fmt, rb.data.store,
                                          lambda done, total: set_progress((str(done), str(total))))
        except RealbasisError as err:
            return no_update, problems_view(error_dicts(err), title="Cannot export")
        return dcc.send_bytes(data, name), notice(f"{name} is ready.", "ok")

    @app.callback(
        Output(ids.SX_DOWNLOAD_PNG, "data"),
        Output(ids.SX_DL_STATUS, "children", allow_duplicate=True),
        Input(ids.SX_DL_PNG, "n_clicks"), State(REF, "data"),
        prevent_initial_call=True,  # not a job: the Chromium kept open lives in this process
        running=[(Output(ids.SX_DL_PNG, "disabled"), True, False)],
    )
    def _png(_n: Any, ref: Any) -> Any:
        r = WorkspaceRef.from_dict(ref)
        if r is None:
            return no_update, no_update
        try:
            data, name = view.chart_png(rb.data.load(r))
        except RealbasisError as err:
            return no_update, problems_view(error_dicts(err), title="No chart image")
        return dcc.send_bytes(data, name), notice(f"{name} is ready.", "ok")
