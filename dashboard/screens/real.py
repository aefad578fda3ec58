"""Real terms: one series (or a total) in nominal and constant dollars of a stated base.

The title states the base ("in constant 2024 dollars"); the growth table splits nominal
growth exactly into price and real growth; the preliminary stretch is shaded and the
projected stretch dashed; seasonal adjustment can be switched on (after deflation).
"""

from __future__ import annotations

import dataclasses
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
    progress_bar,
    screen,
    table,
    warnings_view,
)
from ..data import DataAccess, WorkspaceRef
from ..figures import empty_figure, real_terms_figure
from ._shared.callbacks import register_base_follows_series, register_frequency_options
from ._shared.view import choose

KEY = "real"
TITLE = "Real terms"
ORDER = 30

GROWTH_COLUMNS = (
    Column("measure", "Growth"),
    Column("nominal", "Nominal", "percent", 2),
    Column("price", "Prices (implicit deflator)", "percent", 2),
    Column("real", "Real", "percent", 2),
)


def recent_columns(unit: str, dollars: str, yearly: bool) -> tuple[Column, ...]:
    g = "on a year earlier" if yearly else "on the period before"
    return (
        Column("period", "Period"),
        Column("nominal", f"Nominal ({unit})", "number", 1),
        Column("real", f"Real ({unit}, {dollars})", "number", 1),
        Column("g_nominal", f"Nominal growth {g}", "percent", 1),
        Column("g_real", f"Real growth {g}", "percent", 1),
        Column("status", "Index status"),
    )


def layout() -> html.Div:
    controls = html.Div([
        field("Series", dropdown(ids.RT_SERIES, placeholder="Choose a series"), ids.RT_SERIES),
        field("Deflator", dropdown(ids.RT_DEFLATOR, placeholder="Choose a price index"),
              ids.RT_DEFLATOR),
        field("Base period", dcc.Input(id=ids.RT_BASE, type="text", debounce=True,
                                       placeholder="e.g. 2024, FY2025, 2024Q1",
                                       className="rb-input"), ids.RT_BASE,
              hint="One period or a range such as 2024-01..2024-12; empty = last full year."),
        field("Show as", dcc.Dropdown(id=ids.RT_FREQ, options=logic.frequency_options(Workspace("", ""), None),
                                      value="auto", clearable=False,
                                      className="rb-dropdown"), ids.RT_FREQ),
        field("Seasonal adjustment",
              dcc.Checklist(id=ids.RT_SA, options=[{"label": " Seasonally adjust (STL, after "
                                                            "deflation)", "value": "sa"}],
                            value=[], className="rb-check",
                            inline=True, inputStyle={"marginRight": "6px"}), ids.RT_SA),
        html.Div([html.Button("Save these choices to the workspace", id=ids.RT_SAVE,
                              n_clicks=0, type="button", className="rb-button"),
                  html.Span(id=ids.RT_SAVED, role="status")], className="rb-field"),
    ], className="rb-controls")
    return screen(
        "Real terms",
        "A nominal series and the same series in constant dollars of the base period you "
        "choose, with growth split exactly into price and real growth.",
        controls,
        html.H3(id=ids.RT_TITLE, className="rb-result-title"),
        dcc.Loading(dcc.Graph(id=ids.RT_FIGURE, figure=empty_figure("Loading…"),
                              config={"displaylogo": False, "responsive": True},
                              className="rb-graph", style={"height": "460px"}), type="dot"),
        html.Div(id=ids.RT_WARNINGS),
        html.Div(id=ids.RT_GROWTH),
        html.Div(id=ids.RT_METHOD),
        html.Details([
            html.Summary("Seasonally adjust every monthly and quarterly series (a background job)"),
            html.Div([
                field("Method", dcc.Dropdown(id=ids.RT_SA_METHOD, value="stl", clearable=False,
                                             options=[{"label": w, "value": k}
                                                      for k, w in logic.SA_METHODS.items()],
                                             className="rb-dropdown"), ids.RT_SA_METHOD),
                html.Div(html.Button("Adjust them all", id=ids.RT_SA_ALL, n_clicks=0,
                                     type="button", className="rb-button"), className="rb-field"),
            ], className="rb-controls"),
            progress_bar(ids.RT_SA_PROGRESS),
            html.Div(id=ids.RT_SA_MESSAGE, role="status"),
        ], className="rb-details"),
        cautions_view(),
    )


def options_for(ws: Workspace, series: Any, deflator: Any) -> tuple[Any, ...]:
    s_opts = logic.series_options(ws)
    d_opts = logic.deflator_options(ws)
    saved = ws.settings
    return (s_opts, choose(series, s_opts, saved.get("series")),
            d_opts, choose(deflator, d_opts, saved.get("deflator")))


def outputs(ws: Workspace, series: str | None, deflator: str | None, base: str | None,
            freq: str | None, sa: bool) -> tuple[Any, Any, Any, Any, Any]:
    """Title, figure, warnings, growth tables and method note for the chosen inputs."""
    if not series or not deflator:
        msg = "Choose a series and a deflator."
        return msg, empty_figure(msg), None, None, method_view(())
    try:
        c = logic.compute_real(ws, series, deflator, base, to=freq or "auto", sa=sa)
    except RealbasisError as err:
        return ("These figures cannot be computed", empty_figure("See the problems below."),
                problems_view(logic.error_dicts(err), title="Cannot compute"), None,
                method_view(()))
    title = logic.real_title(c, sa=sa)
    fig = real_terms_figure(c.frame, title="", unit=c.unit,
                            real_label=f"Real ({c.dollars_label})",
                            nominal_label="Nominal" + (" (seasonally adjusted)" if sa else ""))
    try:
        summary = logic.growth_summary(c.nominal, c.real, c.frequency, annualise=sa)
    except RealbasisError as err:
        summary = []
        c = dataclasses.replace(c, warnings=(*c.warnings, *(p.as_warning() for p in err.problems)))
    yearly = c.frequency.periods_per_year > 1
    growth = html.Div([
        table(GROWTH_COLUMNS, summary, caption="Growth: (1 + nominal) = (1 + real) × (1 + prices), "
                                               "exactly"),
        table(recent_columns(c.unit, c.dollars_label, yearly), logic.recent_rows(c),
              caption="Latest periods"),
    ], className="rb-tables")
    status_note = _status_note(c.frame)
    warn = html.Div([notice(c.left_out, "warn"), notice(status_note, "warn"),
                     warnings_view(logic.problem_dicts(c.warnings))])
    vintage = f" Index vintage: {c.vintage}." if c.vintage else ""
    return (title, fig, warn, growth,
            method_view((*c.method, f"Deflator: {c.deflator_name}.{vintage}")))


def _status_note(frame: Any) -> str | None:
    statuses = set(frame["status"])
    parts = []
    if "preliminary" in statuses:
        parts.append("Some real values rest on preliminary index values (shaded): they will "
                     "move when the index is revised.")
    if "projected" in statuses:
        parts.append("Some rest on projected index values (dashed): these are assumptions.")
    return " ".join(parts) or None


def save_choices(ws: Workspace, series: Any, deflator: Any, base: Any, freq: Any, sa: bool
                 ) -> Workspace:
    settings = dict(ws.settings)
    settings.update({"series": series, "deflator": deflator, "base": base or "",
                     "frequency": freq or "auto", "seasonal_adjustment": bool(sa)})
    return dataclasses.replace(ws, settings=settings)


def adjust_all(data: DataAccess, ref: WorkspaceRef, method: str,
               progress: logic.ProgressFn | None = None) -> tuple[WorkspaceRef | None, Any]:
    """Seasonally adjust every series of the workspace and save them as new series."""
    try:
        ws = data.load(ref)
        new_ws, lines = logic.adjust_all(ws, method or "stl", progress,
                                         x13_path=data.settings.x13_path)
        saved = data.save(new_ws, action=f"seasonally adjusted all series ({method})")
    except RealbasisError as err:
        return None, problems_view(logic.error_dicts(err), title="Not adjusted")
    return (WorkspaceRef(saved.id, saved.version),
            html.Div([notice(f"{lines[0]} Saved as version {saved.version:,}.", "ok"),
                      method_view(lines[1:], title="How they were adjusted")]))


def register(app: Dash) -> None:
    from ..context import context

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
        return (*options_for(ws, series, deflator),
                base if base else str(ws.settings.get("base") or ""))

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
        return outputs(rb.data.load(r), series, deflator, base, freq, "sa" in (sa or []))

    @app.callback(
        Output(ids.WORKSPACE, "data", allow_duplicate=True), Output(ids.RT_SAVED, "children"),
        Input(ids.RT_SAVE, "n_clicks"),
        State(ids.RT_SERIES, "value"), State(ids.RT_DEFLATOR, "value"),
        State(ids.RT_BASE, "value"), State(ids.RT_FREQ, "value"), State(ids.RT_SA, "value"),
        State(ids.WORKSPACE, "data"), prevent_initial_call=True,
    )
    def _save(n: Any, series: Any, deflator: Any, base: Any, freq: Any, sa: Any, ref: Any) -> Any:
        r = WorkspaceRef.from_dict(ref)
        if r is None or not n:
            return no_update, no_update
        try:
            saved = rb.data.save(save_choices(rb.data.load(r), series, deflator, base, freq,
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
    def _adjust_all(set_progress: Any, n: Any, method: Any, ref: Any) -> Any:
        r = WorkspaceRef.from_dict(ref)
        if not n or r is None:
            return no_update, no_update
        new_ref, message = adjust_all(rb.data, r, method,
                                      lambda done, total: set_progress((str(done), str(total))))
        return (new_ref.as_dict() if new_ref else no_update), message
