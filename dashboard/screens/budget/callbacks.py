"""The Budget table screen's callbacks: thin, they parse values and call :mod:`.view`."""

from __future__ import annotations

from typing import Any

from dash import Dash, Input, Output, State, ctx, dcc, no_update

from pipeline.errors import RealbasisError

from ... import ids
from ...components import notice, problems_view
from ...context import context
from ...data import WorkspaceRef, saved_words
from ...writes import writes
from .._shared.callbacks import register_period_placeholders
from .._shared.view import address_choices, error_dicts
from . import view

KEY = __package__.rsplit(".", 1)[-1]
"""The screen's key: its package's name (dashboard.screens.discover checks they agree)."""
REF = ids.screen_ref(KEY)
SAVED = ids.screen_saved(KEY)  # what a change saved (the shell passes it on)
GOTO = ids.screen_goto(KEY)  # a workspace to open (the shell puts it in the address)
"""The workspace this screen computes for (set by the shell only while it is shown)."""


CHOICES = (ids.BT_PROGRAMS, ids.BT_DEFLATOR, ids.BT_BASE, ids.BT_FREQ, ids.BT_GIVEN,
           ids.BT_INTERP)


def register(app: Dash) -> None:
    rb = context(app)

    register_period_placeholders(app, rb, REF, ids.BT_BASE)

    def load(ref: Any) -> Any:
        r = WorkspaceRef.from_dict(ref)
        return None if r is None else rb.data.load(r)

    @app.callback(
        Output(ids.BT_PROGRAMS, "options"), Output(ids.BT_PROGRAMS, "value"),
        Output(ids.BT_FREQ, "options"), Output(ids.BT_BASE, "value"),
        Output(ids.BT_FREQ, "value"), Output(ids.BT_GIVEN, "value"),
        Output(ids.BT_INTERP, "value"),
        Input(REF, "data"),
        State(ids.BT_PROGRAMS, "value"), State(ids.BT_BASE, "value"), State(ids.URL, "hash"),
    )
    def _options(ref: Any, programs: Any, base: Any, hash_: Any) -> Any:
        ws = load(ref)
        if ws is None:
            return no_update
        asked = address_choices(hash_, KEY)
        return view.options_for(ws, programs or asked.get("programs", multi=True),
                                base or asked.get("base"))

    @app.callback(
        Output(ids.BT_DEFLATOR, "options"), Output(ids.BT_DEFLATOR, "value"),
        Output(ids.BT_DEFLATOR_WHY, "children"),
        Input(REF, "data"), Input(ids.BT_PROGRAMS, "value"),
        Input(ids.BT_BASE, "value"), Input(ids.BT_FREQ, "value"), Input(ids.BT_INTERP, "value"),
        State(ids.BT_DEFLATOR, "value"), State(ids.URL, "hash"),
    )
    def _deflators(ref: Any, programs: Any, base: Any, freq: Any, interp: Any,
                   deflator: Any, hash_: Any) -> Any:
        ws = load(ref)
        if ws is None:
            return no_update
        deflator = deflator or address_choices(hash_, KEY).get("deflator")
        choices = (programs, deflator, base, freq, interp)
        return rb.cached(ws, "budget.deflators", choices,
                         lambda: view.deflator_picker(ws, *choices))

    @app.callback(
        Output(ids.BT_TITLE, "children"), Output(ids.BT_SUMMARY, "children"),
        Output(ids.BT_FIGURE, "figure"), Output(ids.BT_TABLE, "children"),
        Output(ids.BT_WARNINGS, "children"), Output(ids.BT_METHOD, "children"),
        *(Input(i, "value") for i in CHOICES), Input(REF, "data"),
    )
    def _compute(programs: Any, deflator: Any, base: Any, freq: Any, given: Any,
                 interp: Any, ref: Any) -> Any:
        ws = load(ref)
        if ws is None:
            return no_update
        choices = (programs, deflator, base, freq, given, interp)
        return rb.cached(ws, "budget.outputs", choices, lambda: view.outputs(ws, *choices))

    @app.callback(
        Output(ids.BT_OUTLAY_PROGRAM, "options"), Output(ids.BT_OUTLAY_PROGRAM, "value"),
        Output(ids.BT_OUTLAY_SAVED, "children"),
        Input(ids.BT_PROGRAMS, "value"), Input(REF, "data"),
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
                  Input(ids.BT_OUTLAY_PROGRAM, "value"), Input(REF, "data"))
    def _outlay_text(program: Any, ref: Any) -> Any:
        ws = load(ref)
        return no_update if ws is None else view.outlay_text(ws, program)

    @app.callback(
        Output(SAVED, "data", allow_duplicate=True),
        Output(ids.BT_OUTLAY_MESSAGE, "children"),
        Input(ids.BT_OUTLAY_SAVE, "n_clicks"),
        State(ids.BT_OUTLAY_PROGRAM, "value"), State(ids.BT_OUTLAY, "value"),
        State(REF, "data"), prevent_initial_call=True,
    )
    @writes("save the outlay rates")
    def _save_outlay(n: Any, program: Any, text: Any, ref: Any) -> Any:
        r = WorkspaceRef.from_dict(ref)
        if r is None or not n:
            return no_update, no_update
        new_ref, message = view.save_outlay_rates(rb.data, r, program, text)
        return (new_ref.as_dict() if new_ref else no_update), message

    @app.callback(
        Output(SAVED, "data", allow_duplicate=True), Output(ids.BT_SAVED, "children"),
        Input(ids.BT_SAVE, "n_clicks"), *(State(i, "value") for i in CHOICES),
        State(REF, "data"), prevent_initial_call=True,
    )
    @writes("save the budget-table choices")
    def _save(n: Any, programs: Any, deflator: Any, base: Any, freq: Any, given: Any,
              interp: Any, ref: Any) -> Any:
        r = WorkspaceRef.from_dict(ref)
        if r is None or not n:
            return no_update, no_update
        try:
            before = rb.data.load(r)
            saved = rb.data.save(view.save_choices(before, programs, deflator, base,
                                                   freq, given, interp),
                                 action="budget-table choices")
        except RealbasisError as err:
            return no_update, f" Not saved: {err.problems[0].message}"
        return (WorkspaceRef(saved.id, saved.version).as_dict(),
                " " + saved_words(before, saved) + " The workspace export now carries this "
                "table.")

    @app.callback(
        Output(ids.BT_DOWNLOAD, "data"), Output(ids.BT_DL_STATUS, "children"),
        Input(ids.BT_DL_CSV, "n_clicks"), Input(ids.BT_DL_XLSX, "n_clicks"),
        *(State(i, "value") for i in CHOICES), State(REF, "data"),
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
