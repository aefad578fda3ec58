"""The Real terms screen's callbacks: thin, they parse values and call :mod:`.view`."""

from __future__ import annotations

from typing import Any

from dash import ALL, Dash, Input, Output, State, no_update

from pipeline.errors import RealbasisError

from ... import ids
from ...context import context
from ...data import WorkspaceRef
from ...writes import writes
from .._shared.callbacks import (
    register_base_follows_series,
    register_frequency_options,
    register_period_placeholders,
)
from .._shared.view import outlay_field, shown_base
from . import view


def register(app: Dash) -> None:
    rb = context(app)

    register_base_follows_series(app, rb, ids.RT_SERIES, ids.RT_BASE)
    register_frequency_options(app, rb, ids.RT_SERIES, ids.RT_FREQ)
    register_period_placeholders(app, rb, ids.RT_BASE)

    @app.callback(
        Output(ids.RT_SERIES, "options"), Output(ids.RT_SERIES, "value"),
        Output(ids.RT_BASE, "value"), Output(ids.RT_INTERP, "value"),
        Input(ids.WORKSPACE, "data"),
        State(ids.RT_SERIES, "value"), State(ids.RT_BASE, "value"), State(ids.RT_INTERP, "value"),
    )
    def _options(ref: Any, series: Any, base: Any, interp: Any) -> Any:
        r = WorkspaceRef.from_dict(ref)
        if r is None:
            return no_update
        ws = rb.data.load(r)
        s_opts, chosen, saved_interp = view.options_for(ws, series)
        return s_opts, chosen, shown_base(ws, base), interp or saved_interp

    @app.callback(Output(ids.RT_OUTLAY, "value"),
                  Input(ids.RT_SERIES, "value"), Input(ids.WORKSPACE, "data"))
    def _outlay(series: Any, ref: Any) -> Any:
        r = WorkspaceRef.from_dict(ref)
        return no_update if r is None else outlay_field(rb.data.load(r), series)

    @app.callback(Output(ids.RT_OUTLAY_STATE, "children"),
                  Input(ids.RT_OUTLAY, "value"), State(ids.RT_SERIES, "value"),
                  State(ids.WORKSPACE, "data"))
    def _outlay_state(text: Any, series: Any, ref: Any) -> Any:
        r = WorkspaceRef.from_dict(ref)
        return no_update if r is None else view.outlay_state(rb.data.load(r), series, text)

    @app.callback(
        Output(ids.RT_DEFLATOR, "options"), Output(ids.RT_DEFLATOR, "value"),
        Output(ids.RT_DEFLATOR_WHY, "children"),
        Input(ids.WORKSPACE, "data"), Input(ids.RT_SERIES, "value"), Input(ids.RT_BASE, "value"),
        Input(ids.RT_FREQ, "value"), Input(ids.RT_INTERP, "value"), Input(ids.RT_OUTLAY, "value"),
        State(ids.RT_DEFLATOR, "value"),
    )
    def _deflators(ref: Any, series: Any, base: Any, freq: Any, interp: Any, outlay: Any,
                   deflator: Any) -> Any:
        r = WorkspaceRef.from_dict(ref)
        if r is None:
            return no_update
        return view.deflator_picker(rb.data.load(r), series, deflator, base, freq, interp,
                                    outlay)

    pair = {"type": ids.RT_PAIR, "part": ALL}

    @app.callback(
        Output(ids.RT_PAIRS, "children"), Output(ids.RT_PARTS_BOX, "hidden"),
        Output(ids.RT_DEFLATOR_BOX, "hidden"), Output(ids.RT_DEFLATOR_WHY, "hidden"),
        Input(ids.RT_SERIES, "value"), Input(ids.RT_BASE, "value"), Input(ids.RT_FREQ, "value"),
        State(pair, "value"), State(pair, "id"), State(ids.WORKSPACE, "data"),
    )
    def _pairs(series: Any, base: Any, freq: Any, values: Any, pair_ids: Any, ref: Any) -> Any:
        r = WorkspaceRef.from_dict(ref)
        if r is None:
            return no_update
        rows, parts_hidden, deflator_hidden = view.pairs_panel(
            rb.data.load(r), series, base, freq, view.pair_values(pair_ids, values))
        return rows, parts_hidden, deflator_hidden, deflator_hidden

    @app.callback(Output(ids.RT_CHAIN, "value"), Input(ids.WORKSPACE, "data"),
                  State(ids.RT_CHAIN, "value"))
    def _chain(ref: Any, chain: Any) -> Any:
        r = WorkspaceRef.from_dict(ref)
        return no_update if r is None else view.saved_chain(rb.data.load(r), chain)

    @app.callback(
        Output(ids.RT_TITLE, "children"), Output(ids.RT_FIGURE, "figure"),
        Output(ids.RT_WARNINGS, "children"), Output(ids.RT_GROWTH, "children"),
        Output(ids.RT_METHOD, "children"), Output(ids.RT_CONTRIB_FIGURE, "figure"),
        Output(ids.RT_CONTRIB_TABLE, "children"), Output(ids.RT_CONTRIB_BOX, "style"),
        Input(ids.RT_SERIES, "value"), Input(ids.RT_DEFLATOR, "value"),
        Input(ids.RT_BASE, "value"), Input(ids.RT_FREQ, "value"), Input(ids.RT_SA, "value"),
        Input(ids.RT_INTERP, "value"), Input(ids.RT_OUTLAY, "value"),
        Input(pair, "value"), Input(ids.RT_CHAIN, "value"), Input(ids.RT_BASIS, "value"),
        State(pair, "id"), State(ids.WORKSPACE, "data"),
    )
    def _compute(series: Any, deflator: Any, base: Any, freq: Any, sa: Any, interp: Any,
                 outlay: Any, values: Any, chain: Any, basis: Any, pair_ids: Any,
                 ref: Any) -> Any:
        r = WorkspaceRef.from_dict(ref)
        if r is None:
            return no_update
        return view.screen_outputs(rb.data.load(r), series, deflator, base, freq,
                                   "sa" in (sa or []), view.pair_values(pair_ids, values),
                                   chain, basis, interpolate=interp, outlay=outlay)

    @app.callback(
        Output(ids.WORKSPACE, "data", allow_duplicate=True), Output(ids.RT_SAVED, "children"),
        Input(ids.RT_SAVE, "n_clicks"),
        State(ids.RT_SERIES, "value"), State(ids.RT_DEFLATOR, "value"),
        State(ids.RT_BASE, "value"), State(ids.RT_FREQ, "value"), State(ids.RT_SA, "value"),
        State(ids.RT_INTERP, "value"), State(ids.RT_OUTLAY, "value"),
        State(pair, "value"), State(pair, "id"), State(ids.RT_CHAIN, "value"),
        State(ids.WORKSPACE, "data"), prevent_initial_call=True,
    )
    @writes("save the real-terms choices")
    def _save(n: Any, series: Any, deflator: Any, base: Any, freq: Any, sa: Any, interp: Any,
              outlay: Any, values: Any, pair_ids: Any, chain: Any, ref: Any) -> Any:
        r = WorkspaceRef.from_dict(ref)
        if r is None or not n:
            return no_update, no_update
        try:
            saved = rb.data.save(view.save_choices(rb.data.load(r), series, deflator, base, freq,
                                                   "sa" in (sa or []), interpolate=interp,
                                                   outlay=outlay,
                                                   pairs=view.pair_values(pair_ids, values),
                                                   chain=chain),
                                 action="real-terms choices")
        except RealbasisError as err:
            return no_update, f" Not saved: {err.problems[0].message}"
        return WorkspaceRef(saved.id, saved.version).as_dict(), f" Saved as version {saved.version:,}."

    @app.callback(
        Output(ids.WORKSPACE, "data", allow_duplicate=True),
        Output(ids.RT_SA_MESSAGE, "children"),
        Input(ids.RT_SA_ALL, "n_clicks"),
        State(ids.RT_SA_METHOD, "value"), State(ids.WORKSPACE, "data"),
        background=True, interval=250,
        progress=[Output(ids.RT_SA_PROGRESS, "value"), Output(ids.RT_SA_PROGRESS, "max")],
        cancel=[Input(ids.RT_SA_CANCEL, "n_clicks")],
        running=[(Output(ids.RT_SA_PROGRESS, "style"), {"visibility": "visible"},
                  {"visibility": "hidden"}),
                 (Output(ids.RT_SA_ALL, "disabled"), True, False),
                 (Output(ids.RT_SA_CANCEL, "hidden"), False, True)],
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
