"""The Deflator spread screen's callbacks: thin, they parse values and call :mod:`.view`."""

from __future__ import annotations

from typing import Any

from dash import Dash, Input, Output, State, no_update

from ... import ids
from ...context import context
from ...data import WorkspaceRef
from .._shared.callbacks import register_base_follows_series, register_frequency_options
from .._shared.view import shown_base
from . import view


def register(app: Dash) -> None:
    rb = context(app)

    register_base_follows_series(app, rb, ids.SP_SERIES, ids.SP_BASE)
    register_frequency_options(app, rb, ids.SP_SERIES, ids.SP_FREQ)

    @app.callback(
        Output(ids.SP_SERIES, "options"), Output(ids.SP_SERIES, "value"),
        Output(ids.SP_DEFLATORS, "options"), Output(ids.SP_DEFLATORS, "value"),
        Output(ids.SP_BASE, "value"),
        Input(ids.WORKSPACE, "data"),
        State(ids.SP_SERIES, "value"), State(ids.SP_DEFLATORS, "value"),
        State(ids.SP_BASE, "value"),
    )
    def _options(ref: Any, series: Any, chosen: Any, base: Any) -> Any:
        r = WorkspaceRef.from_dict(ref)
        if r is None:
            return no_update
        ws = rb.data.load(r)
        return (*view.options_for(ws, series, chosen), shown_base(ws, base))

    @app.callback(
        Output(ids.SP_VERDICT, "children"), Output(ids.SP_TITLE, "children"),
        Output(ids.SP_FIGURE, "figure"), Output(ids.SP_GROWTH, "children"),
        Output(ids.SP_WARNINGS, "children"), Output(ids.SP_METHOD, "children"),
        Input(ids.SP_SERIES, "value"), Input(ids.SP_DEFLATORS, "value"),
        Input(ids.SP_BASE, "value"), Input(ids.SP_FREQ, "value"), Input(ids.SP_MEASURE, "value"),
        State(ids.WORKSPACE, "data"),
    )
    def _compute(series: Any, deflators: Any, base: Any, freq: Any, measure: Any,
                 ref: Any) -> Any:
        r = WorkspaceRef.from_dict(ref)
        if r is None:
            return no_update
        return view.outputs(rb.data.load(r), series, deflators, base, freq, measure)
