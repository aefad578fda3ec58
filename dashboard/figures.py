"""Plotly figure builders: pure functions from tidy tables to figures.

Colours are the Okabe–Ito palette (distinguishable with the common colour-vision
deficiencies); each deflator line also gets its own dash pattern and marker so no
meaning rests on colour alone. Preliminary stretches are shaded; projected stretches are
drawn dashed. Period labels are categories on the x axis (the labels the user knows:
2024-01, 2024Q1, FY2025), except on the deflator shelf, where indexes of different
frequencies share a date axis at the start of each period.
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence

import numpy as np
import pandas as pd
import plotly.graph_objects as go

# Okabe & Ito (2008), "Color Universal Design": black, orange, sky blue, bluish green,
# yellow, blue, vermillion, reddish purple.
OKABE_ITO = ("#000000", "#E69F00", "#56B4E9", "#009E73", "#F0E442", "#0072B2",
             "#D55E00", "#CC79A7")
# Line colours in order of use (yellow last: weak on white).
LINE_COLOURS = ("#0072B2", "#D55E00", "#009E73", "#CC79A7", "#E69F00", "#56B4E9",
                "#000000", "#F0E442")
DASHES = ("solid", "dot", "dash", "longdash", "dashdot", "longdashdot")
MARKERS = ("circle", "square", "diamond", "triangle-up", "cross", "x", "star", "hexagon")
NOMINAL_COLOUR = "#000000"
PRELIM_FILL = "rgba(230, 159, 0, 0.14)"     # orange, light
PROJECTED_FILL = "rgba(86, 180, 233, 0.12)"  # sky blue, light
BAND_FILL = "rgba(0, 114, 178, 0.15)"


def _category_ticks(x: Sequence[str], most: int = 14) -> tuple[list[str], list[str]]:
    """Tick positions on a category axis of period labels: the first period of each year
    (2024-01, 2024Q1, FY2025Q1), thinned to at most ``most`` ticks; years label them."""
    firsts = [v for v in x if v.endswith(("-01", "Q1"))]
    if not firsts:
        firsts = list(x)
    step = max(1, -(-len(firsts) // most))
    vals = firsts[::step]
    text = [v[:-3] if v.endswith("-01") else (v[:-2] if v.endswith("Q1") else v) for v in vals]
    return vals, text


def _layout(fig: go.Figure, title: str, y_title: str, *, categories: bool = True,
            x: Sequence[str] | None = None) -> go.Figure:
    fig.update_layout(
        title={"text": title, "x": 0, "xanchor": "left", "font": {"size": 16}} if title else None,
        template="plotly_white",
        margin={"l": 70, "r": 20, "t": 70 if title else 40, "b": 40},
        legend={"orientation": "h", "yanchor": "bottom", "y": 1.0, "x": 0},
        hovermode="x unified",
        separators=".,",
        font={"family": "system-ui, -apple-system, Segoe UI, Roboto, sans-serif", "size": 13},
    )
    fig.update_yaxes(title_text=y_title, tickformat=",.0f", separatethousands=True)
    if categories:
        fig.update_xaxes(type="category", tickangle=0)
        if x:
            vals, text = _category_ticks(list(x))
            fig.update_xaxes(tickmode="array", tickvals=vals, ticktext=text)
    return fig


def _stretches(status: Sequence[str], which: str) -> list[tuple[int, int]]:
    """(first, last) positions of each run of ``which`` in ``status``."""
    out: list[tuple[int, int]] = []
    start = None
    for i, s in enumerate(status):
        if s == which and start is None:
            start = i
        if s != which and start is not None:
            out.append((start, i - 1))
            start = None
    if start is not None:
        out.append((start, len(status) - 1))
    return out


def _shade(fig: go.Figure, status: Sequence[str]) -> None:
    """Shade preliminary and projected stretches (category positions, ±0.5)."""
    # the projected label sits at the right of its stretch, so it never runs into the
    # preliminary label when a short preliminary stretch comes just before it
    for which, fill, text, where in (
            ("preliminary", PRELIM_FILL, "preliminary index", "top left"),
            ("projected", PROJECTED_FILL, "projected", "top right")):
        for a, b in _stretches(status, which):
            fig.add_vrect(x0=a - 0.5, x1=b + 0.5, fillcolor=fill, line_width=0, layer="below",
                          annotation_text=text, annotation_position=where,
                          annotation_font_size=11)


def _split_projected(x: Sequence[str], y: Sequence[float], status: Sequence[str]
                     ) -> tuple[list[float | None], list[float | None]]:
    """Two copies of y: measured part (solid) and projected part (dashed), joined at the
    last measured point so the line is continuous."""
    solid: list[float | None] = []
    dashed: list[float | None] = []
    proj = [s == "projected" for s in status]
    for i, v in enumerate(y):
        solid.append(None if proj[i] else v)
        joins = proj[i] or (i + 1 < len(y) and proj[i + 1])
        dashed.append(v if joins else None)
    return solid, dashed


def _num(values: Sequence[object]) -> list[float | None]:
    out: list[float | None] = []
    for v in values:
        f = float(v) if v is not None else float("nan")  # type: ignore[arg-type]
        out.append(None if np.isnan(f) else f)
    return out


def _line(fig: go.Figure, x: Sequence[str], y: Sequence[float | None], status: Sequence[str],
          name: str, colour: str, dash: str, marker: str, unit: str) -> None:
    solid, dashed = _split_projected(x, y, status)
    hover = f"%{{y:,.1f}} {unit}" if unit else "%{y:,.1f}"
    fig.add_trace(go.Scatter(x=list(x), y=solid, name=name, mode="lines",
                             line={"color": colour, "dash": dash, "width": 2},
                             marker={"symbol": marker}, hovertemplate=hover,
                             legendgroup=name))
    if any(v is not None for v in dashed):
        fig.add_trace(go.Scatter(x=list(x), y=dashed, name=f"{name} (projected)",
                                 mode="lines", line={"color": colour, "dash": "dash", "width": 2},
                                 hovertemplate=hover, legendgroup=name, showlegend=True))


def real_terms_figure(table: pd.DataFrame, *, title: str, unit: str, real_label: str,
                      nominal_label: str = "Nominal") -> go.Figure:
    """Nominal and real lines of one series under one deflator.

    ``table``: rows of the engine's tidy table for one (series, deflator), columns
    period, nominal, real, status."""
    fig = go.Figure()
    x = [str(p) for p in table["period"]]
    status = [str(s) for s in table["status"]]
    _line(fig, x, _num(table["nominal"]), status, nominal_label, NOMINAL_COLOUR, "dot",
          "circle", unit)
    _line(fig, x, _num(table["real"]), status, real_label, LINE_COLOURS[0], "solid",
          "square", unit)
    _shade(fig, status)
    return _layout(fig, title, unit, x=x)


def spread_figure(table: pd.DataFrame, *, title: str, unit: str,
                  show_nominal: bool = True) -> go.Figure:
    """The series under every deflator, with the band between the lowest and highest.

    ``table``: tidy rows for one series and several deflators (series, deflator, period,
    nominal, real, status)."""
    fig = go.Figure()
    if table.empty:
        return _layout(fig, title, unit)
    wide = table.pivot_table(index="period", columns="deflator", values="real", sort=False)
    periods = [str(p) for p in wide.index]
    lo = wide.min(axis=1, skipna=True)
    hi = wide.max(axis=1, skipna=True)
    if wide.shape[1] > 1:
        fig.add_trace(go.Scatter(x=periods, y=_num(lo), mode="lines", line={"width": 0},
                                 hoverinfo="skip", showlegend=False, name="lowest"))
        fig.add_trace(go.Scatter(x=periods, y=_num(hi), mode="lines", line={"width": 0},
                                 fill="tonexty", fillcolor=BAND_FILL, hoverinfo="skip",
                                 name="range between deflators"))
    # Worst status per period across deflators, for shading and dashes.
    rank = {"final": 0, "preliminary": 1, "projected": 2}
    st = (table.assign(_r=table["status"].map(rank).fillna(0))
          .groupby("period", sort=False)["_r"].max().reindex(wide.index).fillna(0))
    inv = {v: k for k, v in rank.items()}
    status = [inv[int(r)] for r in st]
    for i, name in enumerate(wide.columns):
        _line(fig, periods, _num(wide[name]), status, str(name),
              LINE_COLOURS[i % len(LINE_COLOURS)], DASHES[i % len(DASHES)],
              MARKERS[i % len(MARKERS)], unit)
    if show_nominal:
        nominal = table.drop_duplicates("period").set_index("period")["nominal"].reindex(wide.index)
        _line(fig, periods, _num(nominal), status, "Nominal", NOMINAL_COLOUR, "dot", "circle",
              unit)
    _shade(fig, status)
    return _layout(fig, title, unit, x=periods)


def index_figure(indexes: Sequence[Mapping[str, object]], *, title: str) -> go.Figure:
    """Price indexes on one date axis (start of each period).

    Each item: name, x (ISO dates), labels (period labels for hover), y, status."""
    fig = go.Figure()
    for i, item in enumerate(indexes):
        colour = LINE_COLOURS[i % len(LINE_COLOURS)]
        x = list(item["x"])  # type: ignore[call-overload]
        y = _num(item["y"])  # type: ignore[arg-type]
        status = [str(s) for s in item["status"]]  # type: ignore[union-attr]
        labels = list(item["labels"])  # type: ignore[call-overload]
        solid, dashed = _split_projected(x, y, status)
        prelim = [v if s == "preliminary" else None for v, s in zip(y, status, strict=True)]
        name = str(item["name"])
        hover = "%{customdata}: %{y:,.2f}"
        fig.add_trace(go.Scatter(x=x, y=solid, customdata=labels, name=name, mode="lines",
                                 line={"color": colour, "dash": DASHES[i % len(DASHES)]},
                                 hovertemplate=hover, legendgroup=name))
        if any(v is not None for v in prelim):
            fig.add_trace(go.Scatter(x=x, y=prelim, customdata=labels,
                                     name=f"{name} (preliminary)", mode="markers",
                                     marker={"color": colour, "symbol": "circle-open", "size": 6},
                                     hovertemplate=hover, legendgroup=name))
        if any(v is not None for v in dashed):
            fig.add_trace(go.Scatter(x=x, y=dashed, customdata=labels,
                                     name=f"{name} (projected)", mode="lines",
                                     line={"color": colour, "dash": "dash"},
                                     hovertemplate=hover, legendgroup=name))
    _layout(fig, title, "index", categories=False)
    fig.update_yaxes(tickformat=",.1f")
    fig.update_layout(hovermode="closest")
    return fig


def revisions_figure(table: pd.DataFrame, *, title: str, unit: str, old_label: str,
                     new_label: str) -> go.Figure:
    """Real figures under the earlier and the later vintage, and their difference.

    ``table``: columns period, real_old, real_new, status_old, status_new."""
    fig = go.Figure()
    x = [str(p) for p in table["period"]]
    hover = f"%{{y:,.1f}} {unit}"
    fig.add_trace(go.Scatter(x=x, y=_num(table["real_old"]), name=old_label, mode="lines",
                             line={"color": LINE_COLOURS[1], "dash": "dot", "width": 2},
                             hovertemplate=hover))
    fig.add_trace(go.Scatter(x=x, y=_num(table["real_new"]), name=new_label, mode="lines",
                             line={"color": LINE_COLOURS[0], "width": 2}, hovertemplate=hover))
    diff = _num(pd.to_numeric(table["real_new"]) - pd.to_numeric(table["real_old"]))
    fig.add_trace(go.Bar(x=x, y=diff, name="change (later minus earlier)", yaxis="y2",
                         marker={"color": LINE_COLOURS[2]}, hovertemplate=hover, opacity=0.7))
    status = ["preliminary" if "preliminary" in (a, b) else ("projected" if "projected" in (a, b)
              else "final") for a, b in zip(table["status_old"], table["status_new"], strict=True)]
    _shade(fig, status)
    _layout(fig, title, unit, x=x)
    fig.update_layout(yaxis2={"overlaying": "y", "side": "right", "showgrid": False,
                              "title": {"text": f"change ({unit})"}, "tickformat": ",.1f"})
    return fig


def empty_figure(message: str) -> go.Figure:
    fig = go.Figure()
    fig.update_layout(template="plotly_white", xaxis={"visible": False},
                      yaxis={"visible": False},
                      annotations=[{"text": message, "showarrow": False, "font": {"size": 14},
                                    "xref": "paper", "yref": "paper", "x": 0.5, "y": 0.5}])
    return fig
