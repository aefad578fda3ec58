"""Deflator spread: the same series under every chosen deflator.

Shows the band between the lowest and highest real values, real growth per deflator
(nominal growth split exactly into price and real growth) and a plain verdict on whether
the sign of real growth depends on the deflator.
"""

from __future__ import annotations

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
    screen,
    table,
    warnings_view,
)
from ..data import WorkspaceRef
from ..figures import empty_figure, spread_figure
from ._shared.callbacks import register_base_follows_series, register_frequency_options
from ._shared.view import choose

KEY = "spread"
TITLE = "Deflator spread"
ORDER = 40

GROWTH_COLUMNS = (
    Column("deflator", "Deflator"),
    Column("nominal", "Nominal growth", "percent", 2),
    Column("price", "Price growth (deflator)", "percent", 2),
    Column("real", "Real growth", "percent", 2),
    Column("status", "Index status"),
)


def layout() -> html.Div:
    controls = html.Div([
        field("Series", dropdown(ids.SP_SERIES, placeholder="Choose a series"), ids.SP_SERIES),
        field("Deflators to compare", dropdown(ids.SP_DEFLATORS, multi=True,
                                               placeholder="Choose price indexes"),
              ids.SP_DEFLATORS, wide=True),
        field("Base period", dcc.Input(id=ids.SP_BASE, type="text", debounce=True,
                                       placeholder="e.g. 2024, FY2025", className="rb-input"),
              ids.SP_BASE),
        field("Show as", dcc.Dropdown(id=ids.SP_FREQ, options=logic.frequency_options(Workspace("", ""), None),
                                      value="auto",
                                      clearable=False, className="rb-dropdown"), ids.SP_FREQ),
        field("Growth measure", dcc.RadioItems(
            id=ids.SP_MEASURE, value="yoy", className="rb-radio",
            inline=True, inputStyle={"marginRight": "6px"},
            options=[{"label": f" {words}", "value": key}
                     for key, words in logic.MEASURES.items()]), ids.SP_MEASURE, wide=True),
    ], className="rb-controls")
    return screen(
        "Deflator spread",
        "The same series deflated by each chosen price index: how far apart the real "
        "figures are, and whether real growth keeps its sign whichever index is used.",
        controls,
        html.Div(id=ids.SP_VERDICT, className="rb-verdict", role="status",
                 **{"aria-live": "polite"}),
        html.H3(id=ids.SP_TITLE, className="rb-result-title"),
        dcc.Loading(dcc.Graph(id=ids.SP_FIGURE, figure=empty_figure("Loading…"),
                              config={"displaylogo": False, "responsive": True},
                              className="rb-graph", style={"height": "460px"}), type="dot"),
        html.Div(id=ids.SP_GROWTH),
        html.Div(id=ids.SP_WARNINGS),
        html.Div(id=ids.SP_METHOD),
        cautions_view(),
    )


def outputs(ws: Workspace, series: str | None, deflators: list[str] | None, base: str | None,
            freq: str | None, measure: str | None) -> tuple[Any, Any, Any, Any, Any, Any]:
    """Verdict, title, figure, growth table, warnings and method note."""
    if not series or not deflators:
        msg = "Choose a series and one or more deflators."
        return notice(msg, "info"), msg, empty_figure(msg), None, None, method_view(())
    try:
        sp = logic.spread(ws, series, list(deflators), base, to=freq or "auto",
                          measure=measure or "yoy")
    except RealbasisError as err:
        return (notice("No verdict: the figures cannot be computed.", "warn"),
                "These figures cannot be computed", empty_figure("See the problems below."),
                None, problems_view(logic.error_dicts(err), title="Cannot compute"),
                method_view(()))
    fig = spread_figure(sp.table, title="", unit=sp.unit)
    growth = table(GROWTH_COLUMNS, sp.rows,
                   caption=f"Growth per deflator: {sp.measure_words}; "
                           "(1 + nominal) = (1 + real) × (1 + price), exactly")
    verdict = html.Div(html.P(sp.verdict), className=f"rb-notice rb-{sp.verdict_tone}")
    return (verdict, sp.title, fig, growth, warnings_view(logic.problem_dicts(sp.warnings)),
            method_view(sp.method))


def register(app: Dash) -> None:
    from ..context import context

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
        s_opts = logic.series_options(ws)
        d_opts = logic.deflator_options(ws)
        offered = {o["value"] for o in d_opts}
        keep = [d for d in (chosen or []) if d in offered]
        if not keep:
            keep = [d for d in (ws.settings.get("deflators") or []) if d in offered]  # type: ignore[union-attr]
        if not keep:
            keep = [o["value"] for o in d_opts[:5]]
        return (s_opts, choose(series, s_opts, ws.settings.get("series")), d_opts, keep,
                base if base else str(ws.settings.get("base") or ""))

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
        return outputs(rb.data.load(r), series, deflators, base, freq, measure)

