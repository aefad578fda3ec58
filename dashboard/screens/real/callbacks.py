"""The Real terms screen's callbacks: thin, they parse values and call :mod:`.view`."""

from __future__ import annotations

from typing import Any

from dash import Dash, Input, Output, State, no_update

from pipeline.errors import RealbasisError

from ... import ids
from ...context import context
from ...data import WorkspaceRef
from ...writes import writes
from .._shared.callbacks import register_base_follows_series, register_frequency_options
from .._shared.view import shown_base
from . import view


def register(app: Dash) -> None:
    rb = context(app)

    register_base_follows_series(app, rb, ids.RT_SERIES, ids.RT_BASE)
    register_frequency_options(app, rb, ids.RT_SERIES, ids.RT_FREQ)

    @app.callback(
        Output(ids.RT_SERIES, "options"), Output(ids.RT_SERIES, "value"),
        Output(ids.RT_DEFLATOR, "options"), Output(ids.RT_DEFLATOR, "value"),
        Output(ids.RT_BASE, "value"),
        Input(ids.WORKSPACE, "data"),
        State(ids.RT_SERIES, "value"), State(ids.RT_DEFLATOR, "value"), State(ids.RT_BASE, "value"),
    )
    def _options(ref: Any, series: Any, deflator: Any, base: Any) -> Any:
        r = WorkspaceRef.from_dict(ref)
        if r is None:
            return no_update
        ws = rb.data.load(r)
        return (*view.options_for(ws, series, deflator), shown_base(ws, base))

    @app.callback(
        Output(ids.RT_TITLE, "children"), Output(ids.RT_FIGURE, "figure"),
        Output(ids.RT_WARNINGS, "children"), Output(ids.RT_GROWTH, "children"),
        Output(ids.RT_METHOD, "children"),
        Input(ids.RT_SERIES, "value"), Input(ids.RT_DEFLATOR, "value"),
        Input(ids.RT_BASE, "value"), Input(ids.RT_FREQ, "value"), Input(ids.RT_SA, "value"),
        State(ids.WORKSPACE, "data"),
    )
    def _compute(series: Any, deflator: Any, base: Any, freq: Any, sa: Any, ref: Any) -> Any:
        r = WorkspaceRef.from_dict(ref)
        if r is None:
            return no_update
        return view.outputs(rb.data.load(r), series, deflator, base, freq, "sa" in (sa or []))

    @app.callback(
        Output(ids.WORKSPACE, "data", allow_duplicate=True), Output(ids.RT_SAVED, "children"),
        Input(ids.RT_SAVE, "n_clicks"),
        State(ids.RT_SERIES, "value"), State(ids.RT_DEFLATOR, "value"),
        State(ids.RT_BASE, "value"), State(ids.RT_FREQ, "value"), State(ids.RT_SA, "value"),
        State(ids.WORKSPACE, "data"), prevent_initial_call=True,
    )
    @writes("save the real-terms choices")
    def _save(n: Any, series: Any, deflator: Any, base: Any, freq: Any, sa: Any, ref: Any) -> Any:
        r = WorkspaceRef.from_dict(ref)
        if r is None or not n:
            return no_update, no_update
        try:
            saved = rb.data.save(view.save_choices(rb.data.load(r), series, deflator, base, freq,
                                              "sa" in (sa or [])), action="real-terms choices")
        except RealbasisError as err:
            return no_update, f" Not saved: {err.problems[0].message}"
        return WorkspaceRef(saved.id, saved.version).as_dict(), f" Saved as version {saved.version:,}."

    @app.callback(
        Output(ids.WORKSPACE, "data", allow_duplicate=True),
        Output(ids.RT_SA_MESSAGE, "children"),
        Input(ids.RT_SA_ALL, "n_clicks"),
        State(ids.RT_SA_METHOD, "value"), State(ids.WORKSPACE, "data"),
        background=True,
        progress=[Output(ids.RT_SA_PROGRESS, "value"), Output(ids.RT_SA_PROGRESS, "max")],
        running=[(Output(ids.RT_SA_PROGRESS, "style"), {"visibility": "visible"},
                  {"visibility": "hidden"}),
                 (Output(ids.RT_SA_ALL, "disabled"), True, False)],
        prevent_initial_call=True,
    )
    @writes("seasonally adjust the workspace's series")
    def _adjust_all(set_progress: Any, n: Any, method: Any, ref: Any) -> Any:
        r = WorkspaceRef.from_dict(ref)
        if not n or r is None:
            return no_update, no_update
        new_ref, message = view.adjust_all(rb.data, r, method,
                                      lambda done, total: set_progress((str(done), str(total))))
        return (new_ref.as_dict() if new_ref else no_update), message
