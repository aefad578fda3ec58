"""The Budget table screen's callbacks: thin, they parse values and call :mod:`.view`."""

from __future__ import annotations

from typing import Any

from dash import Dash, Input, Output, State, ctx, dcc, no_update

from pipeline.errors import RealbasisError

from ... import ids
from ...components import notice, problems_view
from ...context import context
from ...data import WorkspaceRef
from ...writes import writes
from .._shared.callbacks import register_period_placeholders
from .._shared.view import error_dicts
from . import view

CHOICES = (ids.BT_PROGRAMS, ids.BT_DEFLATOR, ids.BT_BASE, ids.BT_FREQ, ids.BT_GIVEN,
           ids.BT_INTERP)


def register(app: Dash) -> None:
    rb = context(app)

    register_period_placeholders(app, rb, ids.BT_BASE)

    def load(ref: Any) -> Any:
        r = WorkspaceRef.from_dict(ref)
        return None if r is None else rb.data.load(r)

    @app.callback(
        Output(ids.BT_PROGRAMS, "options"), Output(ids.BT_PROGRAMS, "value"),
        Output(ids.BT_FREQ, "options"), Output(ids.BT_BASE, "value"),
        Output(ids.BT_FREQ, "value"), Output(ids.BT_GIVEN, "value"),
        Output(ids.BT_INTERP, "value"),
        Input(ids.WORKSPACE, "data"),
        State(ids.BT_PROGRAMS, "value"), State(ids.BT_BASE, "value"),
    )
    def _options(ref: Any, programs: Any, base: Any) -> Any:
        ws = load(ref)
        return no_update if ws is None else view.options_for(ws, programs, base)

    @app.callback(
        Output(ids.BT_DEFLATOR, "options"), Output(ids.BT_DEFLATOR, "value"),
        Output(ids.BT_DEFLATOR_WHY, "children"),
        Input(ids.WORKSPACE, "data"), Input(ids.BT_PROGRAMS, "value"),
        Input(ids.BT_BASE, "value"), Input(ids.BT_FREQ, "value"), Input(ids.BT_INTERP, "value"),
        State(ids.BT_DEFLATOR, "value"),
    )
    def _deflators(ref: Any, programs: Any, base: Any, freq: Any, interp: Any,
                   deflator: Any) -> Any:
        ws = load(ref)
        return (no_update if ws is None else
                view.deflator_picker(ws, programs, deflator, base, freq, interp))

    @app.callback(
        Output(ids.BT_TITLE, "children"), Output(ids.BT_SUMMARY, "children"),
        Output(ids.BT_FIGURE, "figure"), Output(ids.BT_TABLE, "children"),
        Output(ids.BT_WARNINGS, "children"), Output(ids.BT_METHOD, "children"),
        *(Input(i, "value") for i in CHOICES), Input(ids.WORKSPACE, "data"),
    )
    def _compute(programs: Any, deflator: Any, base: Any, freq: Any, given: Any,
                 interp: Any, ref: Any) -> Any:
        ws = load(ref)
        return (no_update if ws is None else
                view.outputs(ws, programs, deflator, base, freq, given, interp))

    @app.callback(
        Output(ids.BT_OUTLAY_PROGRAM, "options"), Output(ids.BT_OUTLAY_PROGRAM, "value"),
        Output(ids.BT_OUTLAY_SAVED, "children"),
        Input(ids.BT_PROGRAMS, "value"), Input(ids.WORKSPACE, "data"),
        State(ids.BT_OUTLAY_PROGRAM, "value"),
    )
    def _outlay_programs(programs: Any, ref: Any, current: Any) -> Any:
        ws = load(ref)
        if ws is None:
            return no_update
        opts = [{"label": p, "value": p} for p in (programs or []) if p in ws.series]
        chosen = current if current in (programs or []) else (opts[0]["value"] if opts else None)
        return opts, chosen, view.outlay_saved_view(ws, programs)

    @app.callback(Output(ids.BT_OUTLAY, "value"),
                  Input(ids.BT_OUTLAY_PROGRAM, "value"), Input(ids.WORKSPACE, "data"))
    def _outlay_text(program: Any, ref: Any) -> Any:
        ws = load(ref)
        return no_update if ws is None else view.outlay_text(ws, program)

    @app.callback(
        Output(ids.WORKSPACE, "data", allow_duplicate=True),
        Output(ids.BT_OUTLAY_MESSAGE, "children"),
        Input(ids.BT_OUTLAY_SAVE, "n_clicks"),
        State(ids.BT_OUTLAY_PROGRAM, "value"), State(ids.BT_OUTLAY, "value"),
        State(ids.WORKSPACE, "data"), prevent_initial_call=True,
    )
    @writes("save the outlay rates")
    def _save_outlay(n: Any, program: Any, text: Any, ref: Any) -> Any:
        r = WorkspaceRef.from_dict(ref)
        if r is None or not n:
            return no_update, no_update
        new_ref, message = view.save_outlay_rates(rb.data, r, program, text)
        return (new_ref.as_dict() if new_ref else no_update), message

    @app.callback(
        Output(ids.WORKSPACE, "data", allow_duplicate=True), Output(ids.BT_SAVED, "children"),
        Input(ids.BT_SAVE, "n_clicks"), *(State(i, "value") for i in CHOICES),
        State(ids.WORKSPACE, "data"), prevent_initial_call=True,
    )
    @writes("save the budget-table choices")
    def _save(n: Any, programs: Any, deflator: Any, base: Any, freq: Any, given: Any,
              interp: Any, ref: Any) -> Any:
        r = WorkspaceRef.from_dict(ref)
        if r is None or not n:
            return no_update, no_update
        try:
            saved = rb.data.save(view.save_choices(rb.data.load(r), programs, deflator, base,
                                                   freq, given, interp),
                                 action="budget-table choices")
        except RealbasisError as err:
            return no_update, f" Not saved: {err.problems[0].message}"
        return (WorkspaceRef(saved.id, saved.version).as_dict(),
                f" Saved as version {saved.version:,}: the workspace export now carries "
                "this table.")

    @app.callback(
        Output(ids.BT_DOWNLOAD, "data"), Output(ids.BT_DL_STATUS, "children"),
        Input(ids.BT_DL_CSV, "n_clicks"), Input(ids.BT_DL_XLSX, "n_clicks"),
        *(State(i, "value") for i in CHOICES), State(ids.WORKSPACE, "data"),
        background=True, prevent_initial_call=True, interval=250,
        cancel=[Input(ids.BT_DL_CANCEL, "n_clicks")],
        running=[(Output(ids.BT_DL_CSV, "disabled"), True, False),
                 (Output(ids.BT_DL_XLSX, "disabled"), True, False),
                 (Output(ids.BT_DL_PROGRESS, "style"), {"visibility": "visible"},
                  {"visibility": "hidden"}),
                 (Output(ids.BT_DL_CANCEL, "hidden"), False, True)],
    )
    def _download(_c: Any, _x: Any, programs: Any, deflator: Any, base: Any, freq: Any,
                  given: Any, interp: Any, ref: Any) -> Any:
        ws = load(ref)
        fmt = "xlsx" if ctx.triggered_id == ids.BT_DL_XLSX else "csv"
        if ws is None:
            return no_update, no_update
        try:
            data, name = view.download(ws, fmt, programs, deflator, base, freq, given, interp)
        except RealbasisError as err:
            return no_update, problems_view(error_dicts(err), title="Cannot download")
        return dcc.send_bytes(data, name), notice(f"{name} is ready.", "ok")
