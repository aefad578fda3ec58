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

_AXIS = {"gridcolor": "#EBF0F8", "linecolor": "#EBF0F8", "zerolinecolor": "#EBF0F8",
         "zerolinewidth": 2, "ticks": "", "automargin": True, "title": {"standoff": 15}}
TEMPLATE = {"layout": {"paper_bgcolor": "white", "plot_bgcolor": "white",
                       "font": {"color": "#2a3f5f"}, "colorway": list(LINE_COLOURS),
                       "hoverlabel": {"align": "left"}, "xaxis": _AXIS, "yaxis": _AXIS}}
"""The charts' look: white background, light grid (as plotly's "plotly_white"), given as a
small dict. Naming a built-in template costs plotly a deep copy of its full definition
for every figure (about 50 ms; 0.7 s the first time in a process), which was most of a
chart's cost on the dashboard."""


def new_figure() -> go.Figure:
    """An empty figure with :data:`TEMPLATE` (never plotly's default template)."""
    return go.Figure(layout={"template": TEMPLATE})


def _category_ticks(x: Sequence[str], most: int = 10) -> tuple[list[str], list[str]]:
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
        margin={"l": 70, "r": 20, "t": 70 if title else 40, "b": 40},
        legend={"orientation": "h", "yanchor": "bottom", "y": 1.0, "x": 0},
        hovermode="x unified",
        separators=".,",
        font={"family": "system-ui, -apple-system, Segoe UI, Roboto, sans-serif", "size": 13},
    )
    fig.update_yaxes(title_text=y_title, tickformat=",.0f", separatethousands=True)
    if categories:
        # no fixed angle: plotly turns the labels when they would run into each other
        # (a phone-wide chart), and keeps them level when they fit
        fig.update_xaxes(type="category", automargin=True)
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


STRETCH_LABELS = (("preliminary", PRELIM_FILL, "preliminary index", "top left", 0),
                  ("projected", PROJECTED_FILL, "projected", "top right", -16))
"""How each kind of stretch is shaded and labelled: (status, fill, label, position,
vertical shift). The two labels never share a line: the projected one sits at the right
of its stretch and one line lower, so a short preliminary stretch just before a
projected one (the usual budget picture) cannot put one label over the other."""


def _shade(fig: go.Figure, status: Sequence[str], *, rows: int | None = None) -> None:
    """Shade preliminary and projected stretches (category positions, ±0.5); with
    ``rows`` across every row of a subplot figure, labelled in the first."""
    for which, fill, text, where, shift in STRETCH_LABELS:
        for a, b in _stretches(status, which):
            for r in (range(1, rows + 1) if rows else (None,)):
                label = ({"annotation_text": text, "annotation_position": where,
                          "annotation_font_size": 11, "annotation_yshift": shift}
                         if r in (None, 1) else {})
                place = {"row": r, "col": 1} if r else {}
                fig.add_vrect(x0=a - 0.5, x1=b + 0.5, fillcolor=fill, line_width=0,
                              layer="below", **place, **label)


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
    hover = f"%{{y:,.1f}} {plain(unit)}" if unit else "%{y:,.1f}"
    fig.add_trace(go.Scatter(x=list(x), y=solid, name=plain(name), mode="lines",
                             line={"color": colour, "dash": dash, "width": 2},
                             marker={"symbol": marker}, hovertemplate=hover,
                             legendgroup=plain(name), connectgaps=False))
    if any(v is not None for v in dashed):
        fig.add_trace(go.Scatter(x=list(x), y=dashed, name=plain(f"{name} (projected)"),
                                 mode="lines", line={"color": colour, "dash": "dash", "width": 2},
                                 hovertemplate=hover, legendgroup=plain(name), showlegend=True,
                                 connectgaps=False))


def real_terms_figure(table: pd.DataFrame, *, title: str, unit: str, real_label: str,
                      nominal_label: str = "Nominal") -> go.Figure:
    """Nominal and real lines of one series under one deflator.

    ``table``: rows of the engine's tidy table for one (series, deflator), columns
    period, nominal, real, status."""
    fig = new_figure()
    x = [str(p) for p in table["period"]]
    status = [str(s) for s in table["status"]]
    _line(fig, x, _num(table["nominal"]), status, nominal_label, NOMINAL_COLOUR, "dot",
          "circle", unit)
    _line(fig, x, _num(table["real"]), status, real_label, LINE_COLOURS[0], "solid",
          "square", unit)
    _shade(fig, status)
    _layout(fig, plain(title), plain(unit), x=x)
    _legend_below(fig, [str(t.name) for t in fig.data])
    return fig


def spread_figure(table: pd.DataFrame, *, title: str, unit: str,
                  show_nominal: bool = True) -> go.Figure:
    """The series under every deflator, with the band between the lowest and highest.

    ``table``: tidy rows for one series and several deflators (series, deflator, period,
    nominal, real, status)."""
    fig = new_figure()
    if table.empty:
        return _layout(fig, plain(title), plain(unit))
    # every period of the table keeps its place, an empty one too (pivot_table would drop
    # a period with no value under any deflator, and the lines would bridge it)
    order = list(dict.fromkeys(table["period"]))
    deflators = list(dict.fromkeys(table["deflator"]))
    wide = (table.drop_duplicates(["period", "deflator"])
            .pivot(index="period", columns="deflator", values="real")
            .reindex(index=order, columns=deflators))
    periods = [str(p) for p in wide.index]
    lo = wide.min(axis=1, skipna=True)
    hi = wide.max(axis=1, skipna=True)
    if wide.shape[1] > 1:
        fig.add_trace(go.Scatter(x=periods, y=_num(lo), mode="lines", line={"width": 0},
                                 hoverinfo="skip", showlegend=False, name="lowest",
                                 connectgaps=False))
        fig.add_trace(go.Scatter(x=periods, y=_num(hi), mode="lines", line={"width": 0},
                                 fill="tonexty", fillcolor=BAND_FILL, hoverinfo="skip",
                                 name="range between deflators", connectgaps=False))
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
    _layout(fig, plain(title), plain(unit), x=periods)
    _legend_below(fig, [str(t.name) for t in fig.data])
    return fig


def index_figure(indexes: Sequence[Mapping[str, object]], *, title: str) -> go.Figure:
    """Price indexes on one date axis (start of each period).

    Each item: name, x (ISO dates), labels (period labels for hover), y, status."""
    fig = new_figure()
    for i, item in enumerate(indexes):
        colour = LINE_COLOURS[i % len(LINE_COLOURS)]
        x = list(item["x"])  # type: ignore[call-overload]
        y = _num(item["y"])  # type: ignore[arg-type]
        status = [str(s) for s in item["status"]]  # type: ignore[union-attr]
        labels = list(item["labels"])  # type: ignore[call-overload]
        solid, dashed = _split_projected(x, y, status)
        prelim = [v if s == "preliminary" else None for v, s in zip(y, status, strict=True)]
        name = plain(item["name"])
        hover = "%{customdata}: %{y:,.2f}"
        labels = [plain(v) for v in labels]
        fig.add_trace(go.Scatter(x=x, y=solid, customdata=labels, name=name, mode="lines",
                                 line={"color": colour, "dash": DASHES[i % len(DASHES)]},
                                 hovertemplate=hover, legendgroup=name, connectgaps=False))
        if any(v is not None for v in prelim):
            fig.add_trace(go.Scatter(x=x, y=prelim, customdata=labels,
                                     name=f"{name} (preliminary)", mode="markers",
                                     marker={"color": colour, "symbol": "circle-open", "size": 6},
                                     hovertemplate=hover, legendgroup=name))
        if any(v is not None for v in dashed):
            fig.add_trace(go.Scatter(x=x, y=dashed, customdata=labels,
                                     name=f"{name} (projected)", mode="lines",
                                     line={"color": colour, "dash": "dash"},
                                     hovertemplate=hover, legendgroup=name, connectgaps=False))
    _layout(fig, plain(title), "index", categories=False)
    fig.update_yaxes(tickformat=",.1f")
    fig.update_layout(hovermode="closest")
    _legend_below(fig, [str(t.name) for t in fig.data])
    return fig


def _legend_below(fig: go.Figure, names: Sequence[str], *, width: int = 600) -> None:
    """The legend at the foot of the figure, under the axis labels, with the bottom
    margin it needs, so however many entries it holds it never covers the lines (above
    the plot a legend of several rows ran into the plot area). Rows are estimated from
    the entries' lengths at a plot about ``width`` pixels wide (a phone-wide chart puts
    one long entry to a row)."""
    per_row = max(1, width // 7)
    rows, used = 1, 0
    for n in names:
        need = len(n) + 6
        if used and used + need > per_row:
            rows, used = rows + 1, 0
        used += need
    top = 70 if fig.layout.title.text else 30
    fig.update_layout(legend={"orientation": "h", "yref": "container", "yanchor": "bottom",
                              "y": 0.005, "x": 0, "xanchor": "left"},
                      margin={"b": 64 + 21 * rows, "t": top})


def revisions_figure(table: pd.DataFrame, *, title: str, unit: str, old_label: str,
                     new_label: str) -> go.Figure:
    """Real figures under the earlier and the later vintage, and their difference.

    ``table``: columns period, real_old, real_new, status_old, status_new."""
    fig = new_figure()
    x = [str(p) for p in table["period"]]
    hover = f"%{{y:,.1f}} {plain(unit)}"
    fig.add_trace(go.Scatter(x=x, y=_num(table["real_old"]), name=plain(old_label), mode="lines",
                             line={"color": LINE_COLOURS[1], "dash": "dot", "width": 2},
                             hovertemplate=hover, connectgaps=False))
    fig.add_trace(go.Scatter(x=x, y=_num(table["real_new"]), name=plain(new_label), mode="lines",
                             line={"color": LINE_COLOURS[0], "width": 2}, hovertemplate=hover,
                             connectgaps=False))
    diff = _num(pd.to_numeric(table["real_new"]) - pd.to_numeric(table["real_old"]))
    fig.add_trace(go.Bar(x=x, y=diff, name="change (later minus earlier)", yaxis="y2",
                         marker={"color": LINE_COLOURS[2]}, hovertemplate=hover, opacity=0.7))
    status = ["preliminary" if "preliminary" in (a, b) else ("projected" if "projected" in (a, b)
              else "final") for a, b in zip(table["status_old"], table["status_new"], strict=True)]
    _shade(fig, status)
    _layout(fig, plain(title), plain(unit), x=x)
    _legend_below(fig, [str(t.name) for t in fig.data])
    fig.update_layout(yaxis2={"overlaying": "y", "side": "right", "showgrid": False,
                              "title": {"text": f"change ({plain(unit)})"}, "tickformat": ",.1f"})
    return fig


def empty_figure(message: str) -> go.Figure:
    fig = new_figure()
    fig.update_layout(xaxis={"visible": False},
                      yaxis={"visible": False},
                      annotations=[{"text": plain(message), "showarrow": False, "font": {"size": 14},
                                    "xref": "paper", "yref": "paper", "x": 0.5, "y": 0.5}])
    return fig


# --------------------------------------------------------------------------- totals and bands
# Every text given to plotly below (series and index names are user text) goes through
# plain(): plotly renders a small HTML subset in titles, legends and hover labels, so
# '<' and '&' are turned into entities, which plotly shows as the characters themselves.

PATTERNS = ("", "/", "\\", "x", ".", "-", "|", "+")
TOTAL_COLOUR = "#000000"
RESIDUAL_COLOUR = "#D55E00"
REVISION_FILL = "rgba(213, 94, 0, 0.18)"    # vermillion, light: the revision band


def plain(text: object) -> str:
    """User text made safe for plotly's text rendering (shown as typed, never markup)."""
    import html

    return html.escape(str(text), quote=False)


def part_style(i: int) -> dict[str, str]:
    """Colour, dash and bar pattern of the i-th part (the same in every chart)."""
    return {"colour": LINE_COLOURS[i % len(LINE_COLOURS)], "dash": DASHES[i % len(DASHES)],
            "marker": MARKERS[i % len(MARKERS)], "pattern": PATTERNS[i % len(PATTERNS)]}


def _shade_rows(fig: go.Figure, status: Sequence[str], rows: int) -> None:
    """Preliminary and projected stretches shaded across every row of a subplot figure."""
    _shade(fig, status, rows=rows)


def _title_over_legend(fig: go.Figure, top: int = 150) -> None:
    """Keep a figure's own title clear of a legend that may take two or three rows: the
    title at the top of the figure, the legend just above the plot, room between."""
    fig.update_layout(title={"y": 0.985, "yref": "container", "yanchor": "top"},
                      legend={"y": 1.02, "yanchor": "bottom"}, margin={"t": top})


def total_figure(levels: pd.DataFrame, *, parts: Sequence[str], part_status: Mapping[str,
                 Sequence[str]], total_status: Sequence[str], title: str, unit: str,
                 total_label: str, residual_note: str) -> go.Figure:
    """The parts, their total and the residual (total minus the sum of the parts).

    ``levels``: rows = period labels, columns = the parts, ``total`` and ``residual``
    (:meth:`pipeline.totals.TotalResult.levels_frame`). The residual has a panel of its
    own under the levels, always drawn (a flat zero line for an additive total)."""
    from plotly.subplots import make_subplots

    fig = make_subplots(figure=new_figure(), rows=2, cols=1, shared_xaxes=True, row_heights=[0.72, 0.28],
                        vertical_spacing=0.07)
    x = [str(p) for p in levels.index]
    hover = f"%{{y:,.1f}} {plain(unit)}"
    for i, name in enumerate(parts):
        st = part_style(i)
        status = [str(s) for s in part_status.get(name, ["final"] * len(x))]
        solid, dashed = _split_projected(x, _num(levels[name]), status)
        fig.add_trace(go.Scatter(x=x, y=solid, name=plain(name), mode="lines",
                                 line={"color": st["colour"], "dash": st["dash"], "width": 1.6},
                                 hovertemplate=hover, legendgroup=plain(name), connectgaps=False), row=1, col=1)
        if any(v is not None for v in dashed):
            fig.add_trace(go.Scatter(x=x, y=dashed, name=plain(f"{name} (projected)"),
                                     mode="lines", line={"color": st["colour"], "dash": "dash"},
                                     hovertemplate=hover, legendgroup=plain(name), connectgaps=False), row=1, col=1)
    status = [str(s) for s in total_status]
    solid, dashed = _split_projected(x, _num(levels["total"]), status)
    fig.add_trace(go.Scatter(x=x, y=solid, name=plain(total_label), mode="lines",
                             line={"color": TOTAL_COLOUR, "width": 3}, hovertemplate=hover,
                             legendgroup="total", connectgaps=False), row=1, col=1)
    if any(v is not None for v in dashed):
        fig.add_trace(go.Scatter(x=x, y=dashed, name=plain(f"{total_label} (projected)"),
                                 mode="lines", line={"color": TOTAL_COLOUR, "dash": "dash",
                                                     "width": 3},
                                 hovertemplate=hover, legendgroup="total", connectgaps=False), row=1, col=1)
    fig.add_trace(go.Scatter(x=x, y=_num(levels["residual"]), name=plain(residual_note),
                             mode="lines", line={"color": RESIDUAL_COLOUR, "dash": "dashdot",
                                                 "width": 2},
                             hovertemplate=hover, legendgroup="residual", connectgaps=False), row=2, col=1)
    _shade_rows(fig, status, 2)
    _layout(fig, plain(title), plain(unit), x=x)
    fig.update_yaxes(title_text="residual", tickformat=",.1f", row=2, col=1, zeroline=True,
                     zerolinecolor="#777777")
    fig.update_xaxes(showticklabels=False, row=1, col=1)
    _title_over_legend(fig)
    return fig


def contributions_figure(contributions: pd.DataFrame, total_growth: pd.Series, *,
                         status: Sequence[str], title: str, growth_label: str) -> go.Figure:
    """Contributions to the total's real growth, stacked bars in percentage points, one
    colour and pattern per part, with the total's real growth as a line: the bars of a
    period add up to the line's point.

    ``contributions``: rows = period labels, columns = parts (percentage points);
    ``total_growth``: the total's real growth in percent on the same rows."""
    fig = new_figure()
    x = [str(p) for p in contributions.index]
    for i, name in enumerate(contributions.columns):
        st = part_style(i)
        fig.add_trace(go.Bar(x=x, y=_num(contributions[name]), name=plain(name),
                             marker={"color": st["colour"],
                                     "pattern": {"shape": st["pattern"], "solidity": 0.35,
                                                 "fgcolor": "#ffffff"},
                                     "line": {"width": 0}},
                             hovertemplate="%{y:+,.2f} pp"))
    fig.add_trace(go.Scatter(x=x, y=_num(total_growth.reindex(contributions.index)),
                             name=plain(growth_label), mode="lines+markers",
                             line={"color": TOTAL_COLOUR, "width": 2},
                             marker={"symbol": "diamond", "size": 7, "color": TOTAL_COLOUR},
                             hovertemplate="%{y:+,.2f} %", connectgaps=False))
    _shade(fig, [str(s) for s in status])
    _layout(fig, plain(title), "percentage points", x=x)
    fig.update_layout(barmode="relative", bargap=0.25)
    _title_over_legend(fig, 130)
    fig.update_yaxes(tickformat="+,.1f", zeroline=True, zerolinecolor="#777777")
    return fig


def add_band(fig: go.Figure, x: Sequence[str], low: Sequence[object], high: Sequence[object],
             *, name: str, unit: str = "", row: int | None = None) -> go.Figure:
    """Shade the range between ``low`` and ``high`` at the periods ``x`` (a category axis
    already holding them): the revision band over a preliminary stretch."""
    hover = f"%{{y:,.1f}} {plain(unit)}" if unit else "%{y:,.2f}"
    where = {"row": row, "col": 1} if row else {}
    fig.add_trace(go.Scatter(x=list(x), y=_num(low), mode="lines", showlegend=False,
                             line={"width": 0.8, "color": RESIDUAL_COLOUR, "dash": "dot"},
                             name=plain(f"{name}: low"), legendgroup="band",
                             hovertemplate="low " + hover, connectgaps=False), **where)
    fig.add_trace(go.Scatter(x=list(x), y=_num(high), mode="lines", fill="tonexty",
                             fillcolor=REVISION_FILL,
                             line={"width": 0.8, "color": RESIDUAL_COLOUR, "dash": "dot"},
                             name=plain(name), legendgroup="band",
                             hovertemplate="high " + hover, connectgaps=False), **where)
    return fig


def revision_band_figure(index: Mapping[str, Sequence[object]],
                         real: Mapping[str, Sequence[object]] | None, *, title: str,
                         index_label: str, real_label: str, band_label: str,
                         unit: str) -> go.Figure:
    """The revision band in two panels: the index's current vintage (top) and the chosen
    series in real terms (bottom), each with the range past revisions imply shaded over
    the preliminary stretch. Each mapping: x, y, status (the line) and band_x, low, high
    (the band)."""
    from plotly.subplots import make_subplots

    rows = 2 if real else 1
    fig = make_subplots(figure=new_figure(), rows=rows, cols=1, vertical_spacing=0.14,
                        subplot_titles=[plain(index_label), *([plain(real_label)] if real else [])])
    for r, (part, colour, u) in enumerate(((index, LINE_COLOURS[2], ""),
                                           *(((real, LINE_COLOURS[0], unit),) if real else ())),
                                          start=1):
        x = [str(v) for v in part["x"]]
        status = [str(s) for s in part["status"]]
        solid, dashed = _split_projected(x, _num(part["y"]), status)
        hover = f"%{{y:,.1f}} {plain(u)}" if u else "%{y:,.3f}"
        name = index_label if r == 1 else real_label
        fig.add_trace(go.Scatter(x=x, y=solid, name=plain(name), mode="lines",
                                 line={"color": colour, "width": 2}, hovertemplate=hover,
                                 connectgaps=False), row=r, col=1)
        if any(v is not None for v in dashed):
            fig.add_trace(go.Scatter(x=x, y=dashed, name=plain(f"{name} (projected)"),
                                     mode="lines", line={"color": colour, "dash": "dash"},
                                     hovertemplate=hover, connectgaps=False), row=r, col=1)
        add_band(fig, [str(v) for v in part["band_x"]], part["low"], part["high"],
                 name=band_label, unit=u, row=r)
        if r > 1:
            fig.data[-1].showlegend = False
        for a, b in _stretches(status, "preliminary"):
            fig.add_vrect(x0=a - 0.5, x1=b + 0.5, fillcolor=PRELIM_FILL, line_width=0,
                          layer="below", row=r, col=1)
        fig.update_xaxes(type="category", row=r, col=1)
        vals, text = _category_ticks(x)
        fig.update_xaxes(tickmode="array", tickvals=vals, ticktext=text, row=r, col=1)
    _layout(fig, plain(title), "", categories=False)
    fig.update_yaxes(title_text="index", tickformat=",.1f", row=1, col=1)
    if real:
        fig.update_yaxes(title_text=plain(unit), row=2, col=1)
    fig.update_layout(hovermode="x unified")
    _title_over_legend(fig, 170)
    fig.update_layout(legend={"y": 1.08})  # above the first panel's own title
    return fig
