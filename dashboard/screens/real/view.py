"""The Real terms screen's view model: plain functions, tested without a browser
(tests/test_view_real.py).

:func:`compute_real` deflates one series (or a total) by one deflator through the engine
and, when asked, seasonally adjusts nominal and real after deflation; :func:`outputs` turns
the result into the title, figure, warnings, growth tables and method note the callbacks
return. :func:`save_choices` keeps the screen's choices in the workspace settings (the
exports use them); :func:`adjust_all` adjusts every monthly and quarterly series in a
background job.
"""

from __future__ import annotations

import dataclasses
from collections.abc import Callable
from dataclasses import dataclass
from typing import Any

import pandas as pd
from dash import html

from pipeline.errors import Problem, RealbasisError, fail
from pipeline.model import Frequency, Series, Workspace

from ...components import (
    Column,
    method_view,
    notice,
    problems_view,
    table,
    warnings_view,
)
from ...data import DataAccess, WorkspaceRef
from ...figures import empty_figure, real_terms_figure
from .._shared.view import (
    UI005,
    ProgressFn,
    base_for,
    choose,
    deflator_options,
    error_dicts,
    parse_frequency,
    pick_index,
    pick_series,
    problem_dicts,
    series_options,
    trim_to_cover,
)

# --------------------------------------------------------------------------- computing


@dataclass(frozen=True)
class Computed:
    """Nominal and real values of one series under one deflator, ready for the views."""

    frame: pd.DataFrame            # period (label), nominal, real, deflator_index, status
    nominal: pd.Series             # on a PeriodIndex (for growth)
    real: pd.Series
    frequency: Frequency
    base_label: str
    dollars_label: str
    unit: str
    method: tuple[str, ...]
    warnings: tuple[Problem, ...]
    series_name: str
    deflator_name: str
    vintage: str
    left_out: str | None = None    # periods of the series the deflator does not reach


def _money_series(values: pd.Series, like: Series, frequency: Frequency, name: str) -> Series:
    return Series(name=name, values=values.astype(float), frequency=frequency,
                  kind="flow" if like.kind == "index" else like.kind, unit=like.unit)


def compute_real(ws: Workspace, series_key: str, deflator: str, base: str | None, *,
                 to: str | None = "auto", sa: bool = False, vintage: str | None = None
                 ) -> Computed:
    """Deflate one series (or the total) by one deflator through the engine; optionally
    seasonally adjust nominal and real (after deflation) through pipeline.seasonal."""
    from pipeline.deflate import deflate

    original = pick_series(ws, series_key)
    d = pick_index(ws, deflator, vintage)
    s, cut = trim_to_cover(original, [d])
    base_text = base_for(s, base)
    res = deflate([s], [d], base_text, to=parse_frequency(to, s, [d]))
    nominal = res.nominal_series(s.name)
    real = res.real_series(s.name, 0)
    status = res.status_frame(0)[s.name].reindex(nominal.index)
    index_used = res.index_frame(0)[s.name].reindex(nominal.index)
    method = list(res.method_note()) + ([cut] if cut else [])
    warnings = list(res.warnings)
    if sa:
        from pipeline.seasonal import adjust

        adj_n = adjust(_money_series(nominal, s, res.frequency, f"{s.name} (nominal)"))
        adj_r = adjust(_money_series(real, s, res.frequency, f"{s.name} (real)"))
        nominal = adj_n.adjusted.values.reindex(nominal.index)
        real = adj_r.adjusted.values.reindex(real.index)
        method.append("Seasonal adjustment after deflation: the nominal and the real series "
                      "were each adjusted the same way.")
        method.extend(adj_r.method_note())
        warnings.extend(adj_n.warnings)
        warnings.extend(adj_r.warnings)
    frame = pd.DataFrame({
        "period": res.frequency.labels(nominal.index),
        "nominal": nominal.to_numpy(), "real": real.to_numpy(),
        "deflator_index": index_used.to_numpy(), "status": status.astype(str).to_numpy(),
    })
    return Computed(frame, nominal, real, res.frequency, res.base_label, res.dollars_label,
                    s.unit or "unit not stated", tuple(method), tuple(warnings), s.name,
                    d.name, d.vintage or "",
                    left_out_text(ws, original, s, d) if cut else None)


def _covers(index: Series, s: Series) -> bool:
    """Whether ``index`` has values from the first to the last value of ``s``."""
    iv, sv = index.values.dropna(), s.values.dropna()
    return (not iv.empty and not sv.empty and iv.index[0].start_time <= sv.index[0].start_time
            and iv.index[-1].end_time >= sv.index[-1].end_time)


def left_out_text(ws: Workspace, original: Series, kept: Series, deflator: Series
                  ) -> str | None:
    """Which periods of the series are not shown because the deflator does not reach
    them (e.g. a budget's projected out-years), and which deflators of the workspace
    would show them. None when nothing was left out."""
    values = original.values.dropna()
    kept_index = kept.values.dropna().index
    dropped = values.index.difference(kept_index)
    if dropped.empty:
        return None
    label = original.frequency.label
    spans = []
    for part in (dropped[dropped < kept_index[0]], dropped[dropped > kept_index[-1]]):
        if len(part):
            spans.append(label(part[0]) if len(part) == 1 else f"{label(part[0])}–{label(part[-1])}")
    status = (original.status.reindex(dropped).astype(str)
              if original.status is not None else pd.Series([], dtype=str))
    what = " (projected values)" if (status == "projected").all() and len(status) else ""
    ends = deflator.values.dropna()
    text = (f"{' and '.join(spans)}{what} of {original.name} are not shown: {deflator.name} "
            f"runs only from {deflator.frequency.label(ends.index[0])} to "
            f"{deflator.frequency.label(ends.index[-1])}.")
    covering = [name for name in sorted(ws.indexes)
                if name != deflator.name and _covers(pick_index(ws, name), original)]
    if covering:
        return (text + " To see them in real terms choose a deflator that reaches them ("
                + ", ".join(covering[:3]) + ") or project this one on the Deflator shelf.")
    return text + " To see them in real terms project the index on the Deflator shelf."


def real_title(c: Computed, *, sa: bool = False) -> str:
    adj = ", seasonally adjusted" if sa else ""
    return (f"{c.series_name} in {c.dollars_label} ({c.unit}{adj}), "
            f"deflated by {c.deflator_name}")


def growth_summary(nominal: pd.Series, real: pd.Series, frequency: Frequency, *,
                   annualise: bool = True) -> list[dict[str, Any]]:
    """Nominal, price and real growth by several measures (rates as fractions).

    Every rate comes from pipeline.growth; price growth is that of the implicit
    deflator 100 x nominal / real, so (1 + nominal) = (1 + real)(1 + price) exactly.
    ``annualise=False`` leaves out the annualised period-on-period rate (common practice:
    annualising one month's change of data that is not seasonally adjusted misleads)."""
    from pipeline import growth

    price = 100.0 * nominal / real
    both = nominal.dropna().index.intersection(real.dropna().index)
    rows: list[dict[str, Any]] = []
    if len(both) < 2:
        return rows
    last, first = both[-1], both[0]
    lab = frequency.label

    def add(measure: str, fn: Callable[[pd.Series], float]) -> None:
        vals = {k: fn(v) for k, v in (("nominal", nominal), ("price", price), ("real", real))}
        rows.append({"measure": measure, **vals})

    def at_last(g: Any) -> float:
        v = g.values.get(last, float("nan"))
        return float(v)

    add(f"{lab(last)} on {lab(last - 1)}",
        lambda v: at_last(growth.period_on_period(v, frequency)))
    if frequency.periods_per_year > 1 and annualise:
        add(f"{lab(last)} on {lab(last - 1)}, annualised",
            lambda v: at_last(growth.annualised(v, frequency)))
    if frequency.periods_per_year > 1 and (last - frequency.periods_per_year) in both:
        add(f"{lab(last)} on a year earlier",
            lambda v: at_last(growth.year_on_year(v, frequency)))
    add(f"compound annual rate {lab(first)} to {lab(last)}",
        lambda v: float(growth.cagr(v, first, last, frequency).value))
    add(f"cumulative {lab(first)} to {lab(last)}",
        lambda v: at_last(growth.cumulative(v, frequency, start=first)))
    return rows


def recent_rows(c: Computed, n: int = 8) -> list[dict[str, Any]]:
    """The latest periods: levels, growth on a year earlier, status."""
    from pipeline import growth

    f = c.frequency
    if f.periods_per_year > 1:
        gn = growth.year_on_year(c.nominal, f).values
        gr = growth.year_on_year(c.real, f).values
    else:
        gn = growth.period_on_period(c.nominal, f).values
        gr = growth.period_on_period(c.real, f).values
    rows = []
    for p in c.nominal.index[-n:][::-1]:
        rows.append({"period": f.label(p), "nominal": c.nominal.get(p), "real": c.real.get(p),
                     "g_nominal": gn.get(p), "g_real": gr.get(p),
                     "status": c.frame.set_index("period")["status"].get(f.label(p), "")})
    return rows


SA_METHODS = {"stl": "STL", "stl-robust": "STL, robust to outliers",
              "classical": "classical decomposition (moving averages)",
              "x13": "X-13ARIMA-SEATS (needs the external program)"}


SA_SUFFIX = " (seasonally adjusted)"


def adjust_workspace(ws: Workspace, method: str, progress: ProgressFn | None = None, *,
               x13_path: str | None = None) -> tuple[Workspace, list[str]]:
    """Seasonally adjust every monthly and quarterly money series of the workspace
    (pipeline.seasonal.adjust_many) and add each result as a new series named
    '<name> (seasonally adjusted)'. Annual series are never adjusted."""
    from pipeline.seasonal import adjust_many

    eligible = [s for name, s in ws.series.items()
                if s.frequency.code in ("M", "Q") and not name.endswith(SA_SUFFIX)]
    if not eligible:
        raise fail(UI005, "no monthly or quarterly series to adjust",
                   expected="monthly or quarterly money series",
                   found=f"{len(ws.series):,} series, none monthly or quarterly",
                   fix="Annual and fiscal-year data are never seasonally adjusted.")
    adjs = adjust_many(eligible, method, progress=progress, x13_path=x13_path)  # type: ignore[arg-type]
    money = dict(ws.series)
    for a in adjs:
        name = a.original.name + SA_SUFFIX
        money[name] = dataclasses.replace(a.adjusted, name=name)
    lines = [f"Added {len(adjs):,} seasonally adjusted series ({SA_METHODS.get(method, method)}); "
             "the originals are kept.", *adjs[0].method_note()]
    warned = sum(len(a.warnings) for a in adjs)
    if warned:
        lines.append(f"{warned:,} note(s) from the adjustment; see each series' result.")
    return dataclasses.replace(ws, series=money), lines


# --------------------------------------------------------------------------- what the screen shows


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


def options_for(ws: Workspace, series: Any, deflator: Any) -> tuple[Any, ...]:
    s_opts = series_options(ws)
    d_opts = deflator_options(ws)
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
        c = compute_real(ws, series, deflator, base, to=freq or "auto", sa=sa)
    except RealbasisError as err:
        return ("These figures cannot be computed", empty_figure("See the problems below."),
                problems_view(error_dicts(err), title="Cannot compute"), None,
                method_view(()))
    title = real_title(c, sa=sa)
    fig = real_terms_figure(c.frame, title="", unit=c.unit,
                            real_label=f"Real ({c.dollars_label})",
                            nominal_label="Nominal" + (" (seasonally adjusted)" if sa else ""))
    try:
        summary = growth_summary(c.nominal, c.real, c.frequency, annualise=sa)
    except RealbasisError as err:
        summary = []
        c = dataclasses.replace(c, warnings=(*c.warnings, *(p.as_warning() for p in err.problems)))
    yearly = c.frequency.periods_per_year > 1
    growth = html.Div([
        table(GROWTH_COLUMNS, summary, caption="Growth: (1 + nominal) = (1 + real) × (1 + prices), "
                                               "exactly"),
        table(recent_columns(c.unit, c.dollars_label, yearly), recent_rows(c),
              caption="Latest periods"),
    ], className="rb-tables")
    status_note = _status_note(c.frame)
    warn = html.Div([notice(c.left_out, "warn"), notice(status_note, "warn"),
                     warnings_view(problem_dicts(c.warnings))])
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
               progress: ProgressFn | None = None) -> tuple[WorkspaceRef | None, Any]:
    """Seasonally adjust every series of the workspace and save them as new series."""
    try:
        ws = data.load(ref)
        new_ws, lines = adjust_workspace(ws, method or "stl", progress,
                                         x13_path=data.settings.x13_path)
        saved = data.save(new_ws, action=f"seasonally adjusted all series ({method})")
    except RealbasisError as err:
        return None, problems_view(error_dicts(err), title="Not adjusted")
    return (WorkspaceRef(saved.id, saved.version),
            html.Div([notice(f"{lines[0]} Saved as version {saved.version:,}.", "ok"),
                      method_view(lines[1:], title="How they were adjusted")]))
