"""The Real terms screen's callbacks: thin, they parse values and call :mod:`.view`."""

from __future__ import annotations

from typing import Any

from dash import ALL, Dash, Input, Output, State, ctx, no_update

from pipeline.errors import RealbasisError
from pipeline.model import Workspace

from ... import ids
from ...context import context
from ...data import WorkspaceRef, saved_words
from ...writes import writes
from .._shared.callbacks import (
    register_base_follows_series,
    register_frequency_options,
    register_period_placeholders,
)
from .._shared.view import address_choices, outlay_field, shown_base
from . import view

KEY = __package__.rsplit(".", 1)[-1]
"""The screen's key: its package's name (dashboard.screens.discover checks they agree)."""
REF = ids.screen_ref(KEY)
SAVED = ids.screen_saved(KEY)  # what a change saved (the shell passes it on)
GOTO = ids.screen_goto(KEY)  # a workspace to open (the shell puts it in the address)
"""The workspace this screen computes for (set by the shell only while it is shown)."""


def register(app: Dash) -> None:
    rb = context(app)

    register_base_follows_series(app, rb, REF, ids.RT_SERIES, ids.RT_BASE)
    register_frequency_options(app, rb, REF, ids.RT_SERIES, ids.RT_FREQ)
    register_period_placeholders(app, rb, REF, ids.RT_BASE)

    @app.callback(
        Output(ids.RT_SERIES, "options"), Output(ids.RT_SERIES, "value"),
        Output(ids.RT_BASE, "value"), Output(ids.RT_INTERP, "value"),
        Input(REF, "data"),
        State(ids.RT_SERIES, "value"), State(ids.RT_BASE, "value"), State(ids.RT_INTERP, "value"),
        State(ids.URL, "hash"),
    )
    def _options(ref: Any, series: Any, base: Any, interp: Any, hash_: Any) -> Any:
        r = WorkspaceRef.from_dict(ref)
        if r is None:
            return no_update
        ws = rb.data.load(r)
        asked = address_choices(hash_, KEY)
        if isinstance(ref, dict) and ref.get("address"):  # opened again for the address
            series, base = asked.get("series") or series, asked.get("base") or base
        s_opts, chosen, saved_interp = view.options_for(ws, series or asked.get("series"))
        return (s_opts, chosen, shown_base(ws, base or asked.get("base"), chosen),
                interp or saved_interp)

    @app.callback(Output(ids.RT_OUTLAY, "value"),
                  Input(ids.RT_SERIES, "value"), Input(REF, "data"))
    def _outlay(series: Any, ref: Any) -> Any:
        r = WorkspaceRef.from_dict(ref)
        return no_update if r is None else outlay_field(rb.data.load(r), series)

    @app.callback(Output(ids.RT_OUTLAY_STATE, "children"),
                  Input(ids.RT_OUTLAY, "value"), State(ids.RT_SERIES, "value"),
                  State(REF, "data"))
    def _outlay_state(text: Any, series: Any, ref: Any) -> Any:
        r = WorkspaceRef.from_dict(ref)
        return no_update if r is None else view.outlay_state(rb.data.load(r), series, text)

    # A new base or "Show as" reaches the pickers through _compute (one round trip: it
    # offers the deflators again and computes with what they then hold), so here they are
    # State; the series, the interpolation switch and outlay rates still come this way.
    @app.callback(
        Output(ids.RT_DEFLATOR, "options"), Output(ids.RT_DEFLATOR, "value"),
        Output(ids.RT_DEFLATOR_WHY, "children"),
        Input(REF, "data"), Input(ids.RT_SERIES, "value"), Input(ids.RT_INTERP, "value"),
        Input(ids.RT_OUTLAY, "value"),
        State(ids.RT_BASE, "value"), State(ids.RT_FREQ, "value"),
        State(ids.RT_DEFLATOR, "value"), State(ids.URL, "hash"),
    )
    def _deflators(ref: Any, series: Any, interp: Any, outlay: Any, base: Any, freq: Any,
                   deflator: Any, hash_: Any) -> Any:
        r = WorkspaceRef.from_dict(ref)
        if r is None:
            return no_update
        ws = rb.data.load(r)
        asked = address_choices(hash_, KEY).get("deflator")
        opened_again = isinstance(ref, dict) and ref.get("address")  # for the address
        deflator = (asked or deflator) if opened_again else (deflator or asked)
        choices = (series, deflator, base, freq, interp, outlay)
        return rb.cached(ws, "real.deflators", choices,
                         lambda: view.deflator_picker(ws, *choices))

    pair = {"type": ids.RT_PAIR, "part": ALL}

    @app.callback(
        Output(ids.RT_PAIRS, "children"), Output(ids.RT_PARTS_BOX, "hidden"),
        Output(ids.RT_DEFLATOR_BOX, "hidden"), Output(ids.RT_DEFLATOR_WHY, "hidden"),
        Output(ids.RT_PAIRS_STAMP, "data"),
        Input(ids.RT_SERIES, "value"), State(ids.RT_BASE, "value"), State(ids.RT_FREQ, "value"),
        State(pair, "value"), State(pair, "id"), State(REF, "data"), State(ids.RT_PAIRS_STAMP, "data"),
    )
    def _pairs(series: Any, base: Any, freq: Any, values: Any, pair_ids: Any, ref: Any,
               stamp: Any) -> Any:
        r = WorkspaceRef.from_dict(ref)
        if r is None:
            return no_update
        rows, parts_hidden, deflator_hidden = view.pairs_panel(
            rb.data.load(r), series, base, freq, view.pair_values(pair_ids, values))
        # the stamp makes the computation wait for, then read, the rebuilt pickers
        return rows, parts_hidden, deflator_hidden, deflator_hidden, (stamp or 0) + 1

    @app.callback(Output(ids.RT_CHAIN, "value"), Input(REF, "data"),
                  State(ids.RT_CHAIN, "value"))
    def _chain(ref: Any, chain: Any) -> Any:
        r = WorkspaceRef.from_dict(ref)
        return no_update if r is None else view.saved_chain(rb.data.load(r), chain)

    @app.callback(
        Output(ids.RT_TITLE, "children"), Output(ids.RT_FIGURE, "figure"),
        Output(ids.RT_WARNINGS, "children"), Output(ids.RT_GROWTH, "children"),
        Output(ids.RT_METHOD, "children"), Output(ids.RT_CONTRIB_FIGURE, "figure"),
        Output(ids.RT_CONTRIB_TABLE, "children"), Output(ids.RT_CONTRIB_BOX, "style"),
        # the pickers offered again after a new base or "Show as" (see _deflators)
        Output(ids.RT_DEFLATOR, "options", allow_duplicate=True),
        Output(ids.RT_DEFLATOR, "value", allow_duplicate=True),
        Output(ids.RT_DEFLATOR_WHY, "children", allow_duplicate=True),
        Output(ids.RT_PAIRS, "children", allow_duplicate=True),
        Output(ids.RT_PARTS_BOX, "hidden", allow_duplicate=True),
        Output(ids.RT_DEFLATOR_BOX, "hidden", allow_duplicate=True),
        Output(ids.RT_DEFLATOR_WHY, "hidden", allow_duplicate=True),
        Input(ids.RT_SERIES, "value"), Input(ids.RT_DEFLATOR, "value"),
        Input(ids.RT_BASE, "value"), Input(ids.RT_FREQ, "value"), Input(ids.RT_SA, "value"),
        Input(ids.RT_INTERP, "value"), Input(ids.RT_OUTLAY, "value"),
        Input(pair, "value"), Input(ids.RT_CHAIN, "value"), Input(ids.RT_BASIS, "value"),
        Input(ids.RT_PAIRS_STAMP, "data"),
        State(pair, "id"), State(REF, "data"),
    )
    def _compute(series: Any, deflator: Any, base: Any, freq: Any, sa: Any, interp: Any,
                 outlay: Any, values: Any, chain: Any, basis: Any, _stamp: Any, pair_ids: Any,
                 ref: Any) -> Any:
        r = WorkspaceRef.from_dict(ref)
        if r is None:
            return no_update
        ws = rb.data.load(r)
        pairs = view.pair_values(pair_ids, values)
        adjust = "sa" in (sa or [])
        pickers: tuple[Any, ...] = (no_update,) * 7
        if {f"{ids.RT_BASE}.value", f"{ids.RT_FREQ}.value"} & set(ctx.triggered_prop_ids):
            choices = (series, deflator, base, freq, interp, outlay)
            offered = rb.cached(ws, "real.deflators", choices,
                                lambda: view.deflator_picker(ws, *choices))
            rows, parts_hidden, deflator_hidden = view.pairs_panel(ws, series, base, freq, pairs)
            deflator, pairs = offered[1], view.chosen_pairs(ws, series, base, freq, pairs)
            pickers = (*offered, rows, parts_hidden, deflator_hidden, deflator_hidden)
        shown = rb.cached(ws, "real.outputs",
                          (series, deflator, base, freq, adjust, pairs, chain, basis, interp,
                           outlay),
                          lambda: view.screen_outputs(ws, series, deflator, base, freq, adjust,
                                                      pairs, chain, basis, interpolate=interp,
                                                      outlay=outlay))
        return (*shown, *pickers)

    @app.callback(
        Output(SAVED, "data", allow_duplicate=True), Output(ids.RT_SAVED, "children"),
        Input(ids.RT_SAVE, "n_clicks"),
        State(ids.RT_SERIES, "value"), State(ids.RT_DEFLATOR, "value"),
        State(ids.RT_BASE, "value"), State(ids.RT_FREQ, "value"), State(ids.RT_SA, "value"),
        State(ids.RT_INTERP, "value"), State(ids.RT_OUTLAY, "value"),
        State(pair, "value"), State(pair, "id"), State(ids.RT_CHAIN, "value"),
        State(REF, "data"), prevent_initial_call=True,
    )
    @writes("save the real-terms choices")
    def _save(n: Any, series: Any, deflator: Any, base: Any, freq: Any, sa: Any, interp: Any,
              outlay: Any, values: Any, pair_ids: Any, chain: Any, ref: Any) -> Any:
        r = WorkspaceRef.from_dict(ref)
        if r is None or not n:
            return no_update, no_update
        try:
            before = rb.data.load(r)
            saved = rb.data.save(view.save_choices(before, series, deflator, base, freq,
                                                   "sa" in (sa or []), interpolate=interp,
                                                   outlay=outlay,
                                                   pairs=view.pair_values(pair_ids, values),
                                                   chain=chain),
                                 action="real-terms choices")
        except RealbasisError as err:
            return no_update, f" Not saved: {err.problems[0].message}"
        return WorkspaceRef(saved.id, saved.version).as_dict(), " " + saved_words(before, saved)

    @app.callback(
        Output(SAVED, "data", allow_duplicate=True),
        Output(ids.RT_SA_MESSAGE, "children"),
        Input(ids.RT_SA_ALL, "n_clicks"),
        State(ids.RT_SA_METHOD, "value"), State(REF, "data"),
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


def opening(rb: Any, ws: Any, asked: Any = None) -> dict[str, dict[str, Any]]:
    """The screen as the callbacks above leave it when the page opens on ``ws`` with the
    address's choices ``asked`` (``address_choices``; none: the saved choices), as
    initial props by component id (the shell puts them into the layout,
    dashboard.app.opening, so a first load needs no round of callbacks): the same calls,
    in the same order and with the same values, the callbacks make — "Show as" automatic,
    no seasonal adjustment, growth on the period before — and the same result-cache keys,
    so what warm() computed is used."""
    from .._shared.view import base_after_series_change, frequency_options, period_placeholder
    from .._shared.view import pick_series as shared_pick

    asked = asked if asked is not None else address_choices("", KEY)
    s_opts, series, saved_interp = view.options_for(ws, asked.get("series"))
    base = shown_base(ws, asked.get("base"), series)
    moved = base_after_series_change(ws, series, base)
    base = base if moved is None else moved
    freq, interp, outlay = "auto", saved_interp, outlay_field(ws, series)
    choices = (series, asked.get("deflator"), base, freq, interp, outlay)
    d_opts, deflator, why = rb.cached(ws, "real.deflators", choices,
                                      lambda: view.deflator_picker(ws, *choices))
    chain = view.saved_chain(ws, "none")
    rows, parts_hidden, deflator_hidden = view.pairs_panel(ws, series, base, freq,
                                                           view.pair_values([], []))
    out = rb.cached(ws, "real.outputs",
                    (series, deflator, base, freq, False, {}, chain, "period", interp, outlay),
                    lambda: view.screen_outputs(ws, series, deflator, base, freq, False, {},
                                                chain, "period", interpolate=interp,
                                                outlay=outlay))
    try:
        picked = shared_pick(ws, series) if series else None
    except RealbasisError:
        picked = None
    title, figure, warnings, growth, method, c_fig, c_table, c_style = out
    return {
        ids.RT_SERIES: {"options": s_opts, "value": series},
        ids.RT_BASE: {"value": base, "placeholder": period_placeholder(ws)},
        ids.RT_INTERP: {"value": interp},
        ids.RT_OUTLAY: {"value": outlay},
        ids.RT_OUTLAY_STATE: {"children": view.outlay_state(ws, series, outlay)},
        ids.RT_FREQ: {"options": frequency_options(ws if series else Workspace("", ""), picked)},
        ids.RT_DEFLATOR: {"options": d_opts, "value": deflator},
        ids.RT_DEFLATOR_WHY: {"children": why, "hidden": deflator_hidden},
        ids.RT_PAIRS: {"children": rows},
        ids.RT_PARTS_BOX: {"hidden": parts_hidden},
        ids.RT_DEFLATOR_BOX: {"hidden": deflator_hidden},
        ids.RT_PAIRS_STAMP: {"data": 1},
        ids.RT_CHAIN: {"value": chain},
        ids.RT_TITLE: {"children": title},
        ids.RT_FIGURE: {"figure": figure},
        ids.RT_WARNINGS: {"children": warnings},
        ids.RT_GROWTH: {"children": growth},
        ids.RT_METHOD: {"children": method},
        ids.RT_CONTRIB_FIGURE: {"figure": c_fig},
        ids.RT_CONTRIB_TABLE: {"children": c_table},
        ids.RT_CONTRIB_BOX: {"style": c_style},
    }


def warm(rb: Any, ws: Any) -> None:
    """Compute the view a first visit to this screen on ``ws`` asks for, into the result
    cache (run at worker start on the demo, dashboard.warm): :func:`opening`."""
    opening(rb, ws)
