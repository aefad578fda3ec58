"""The Deflator spread screen's callbacks: thin, they parse values and call :mod:`.view`."""

from __future__ import annotations

from typing import Any

from dash import Dash, Input, Output, State, no_update

from ... import ids
from ...context import context
from ...data import WorkspaceRef
from .._shared.callbacks import (
    register_base_follows_series,
    register_frequency_options,
    register_period_placeholders,
)
from .._shared.view import shown_base
from . import view


def register(app: Dash) -> None:
    rb = context(app)

    register_base_follows_series(app, rb, ids.SP_SERIES, ids.SP_BASE)
    register_frequency_options(app, rb, ids.SP_SERIES, ids.SP_FREQ)
    register_period_placeholders(app, rb, ids.SP_BASE)

    @app.callback(
        Output(ids.SP_SERIES, "options"), Output(ids.SP_SERIES, "value"),
        Output(ids.SP_BASE, "value"), Output(ids.SP_INTERP, "value"),
        Input(ids.WORKSPACE, "data"),
        State(ids.SP_SERIES, "value"), State(ids.SP_DEFLATORS, "value"),
        State(ids.SP_BASE, "value"), State(ids.SP_INTERP, "value"),
    )
    def _options(ref: Any, series: Any, chosen: Any, base: Any, interp: Any) -> Any:
        r = WorkspaceRef.from_dict(ref)
        if r is None:
            return no_update
        ws = rb.data.load(r)
        s_opts, chosen_series, saved_interp = view.options_for(ws, series, chosen)
        return s_opts, chosen_series, shown_base(ws, base, chosen_series), interp or saved_interp

    @app.callback(
        Output(ids.SP_DEFLATORS, "options"), Output(ids.SP_DEFLATORS, "value"),
        Output(ids.SP_DEFLATOR_WHY, "children"),
        Input(ids.WORKSPACE, "data"), Input(ids.SP_SERIES, "value"), Input(ids.SP_BASE, "value"),
        Input(ids.SP_FREQ, "value"), Input(ids.SP_INTERP, "value"),
        State(ids.SP_DEFLATORS, "value"),
    )
    def _deflators(ref: Any, series: Any, base: Any, freq: Any, interp: Any,
                   chosen: Any) -> Any:
        r = WorkspaceRef.from_dict(ref)
        if r is None:
            return no_update
        return view.deflator_picker(rb.data.load(r), series, chosen, base, freq, interp)

    @app.callback(
        Output(ids.SP_VERDICT, "children"), Output(ids.SP_TITLE, "children"),
        Output(ids.SP_FIGURE, "figure"), Output(ids.SP_GROWTH, "children"),
        Output(ids.SP_WARNINGS, "children"), Output(ids.SP_METHOD, "children"),
        Input(ids.SP_SERIES, "value"), Input(ids.SP_DEFLATORS, "value"),
        Input(ids.SP_BASE, "value"), Input(ids.SP_FREQ, "value"), Input(ids.SP_MEASURE, "value"),
        Input(ids.SP_INTERP, "value"),
        State(ids.WORKSPACE, "data"),
    )
    def _compute(series: Any, deflators: Any, base: Any, freq: Any, measure: Any,
                 interp: Any, ref: Any) -> Any:
        r = WorkspaceRef.from_dict(ref)
        if r is None:
            return no_update
        return view.outputs(rb.data.load(r), series, deflators, base, freq, measure,
                            interpolate=interp)
