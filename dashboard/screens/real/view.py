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
from pipeline.periods import Span

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
    INTERPOLATE_VALUE,
    TOTAL,
    UI005,
    ProgressFn,
    base_for,
    choices_view,
    choose,
    deflator_choices,
    error_dicts,
    fiscal_note,
    fy_start,
    interpolation,
    outlay_field,
    outlay_years,
    pick_index,
    pick_series,
    problem_dicts,
    read_base,
    read_outlay_field,
    result_frequency,
    save_outlay,
    series_options,
    yearly_frequency,
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
    outlay: str | None = None      # the outlay rates used, in words


def _money_series(values: pd.Series, like: Series, frequency: Frequency, name: str) -> Series:
    return Series(name=name, values=values.astype(float), frequency=frequency,
                  kind="flow" if like.kind == "index" else like.kind, unit=like.unit)


def compute_real(ws: Workspace, series_key: str, deflator: str, base: str | None, *,
                 to: str | None = "auto", sa: bool = False, vintage: str | None = None,
                 interpolate: Any = False, outlay: str | None = None) -> Computed:
    """Deflate one series (or the total) by one deflator through the engine; optionally
    seasonally adjust nominal and real (after deflation) through pipeline.seasonal.

    Period fields are read with the workspace's fiscal year (``FY2025``, ``2024-25``);
    ``interpolate`` lets a less frequent deflator serve (Denton, flagged); ``outlay``
    (the outlay-rate box, in percent) deflates the series as budget authority spent over
    several years (:func:`pipeline.outlay.deflate_authority`), by year. The series is cut
    to the periods the deflator covers (:func:`pipeline.compare.trim_to_cover`) and, with
    outlay rates, to the years whose outlays it reaches; what was left out is said, with
    the deflators that would show it and the projection that would (the serve check)."""
    from pipeline.compare import trim_to_cover
    from pipeline.deflate import deflate
    from pipeline.outlay import cut_to_reach

    original = pick_series(ws, series_key)
    d = pick_index(ws, deflator, vintage)
    fy = fy_start(ws)
    interp = interpolation(interpolate)
    rates = (read_outlay_field(outlay, original.name)
             if outlay and not series_key.startswith(TOTAL) else None)
    s, cut = trim_to_cover(original, [d])
    span = read_base(ws, base_for(s, base))
    freq = result_frequency(ws, to, s, [d])
    method_extra: list[str] = []
    if rates is not None:
        if (freq is None or freq.code not in ("A", "FY")) and (to or "auto") == "auto":
            freq = yearly_frequency(ws, None, [s])
            if freq != s.frequency:
                method_extra.append(f"With outlay rates the results are by "
                                    f"{freq.describe()}: rates are shares per year.")
        if freq is None or freq.code in ("A", "FY"):
            s, outlay_cut = cut_to_reach(s, [d], rates, freq or s.frequency)
            if outlay_cut:
                cut = f"{cut} {outlay_cut}" if cut else outlay_cut
    if rates is not None:
        from pipeline.outlay import deflate_authority

        res = deflate_authority([s], [d], span, rates, to=freq, fy_start=fy,
                                interpolate=interp)
    else:
        res = deflate([s], [d], span, to=freq, fy_start=fy, interpolate=interp)
    nominal = res.nominal_series(s.name)
    real = res.real_series(s.name, 0)
    status = res.status_frame(0)[s.name].reindex(nominal.index)
    index_used = res.index_frame(0)[s.name].reindex(nominal.index)
    method = [*res.method_note(), *method_extra]
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
    left_out = None
    if cut:
        left_out = left_out_text(ws, original, s, d, span, res.frequency, interp, rates)
        method.append(cut)
    method.extend(fiscal_note(ws))
    return Computed(frame, nominal, real, res.frequency, res.base_label, res.dollars_label,
                    s.unit or "unit not stated", tuple(m for m in method if m),
                    tuple(warnings), s.name, d.name, d.vintage or "", left_out,
                    rates.describe() if rates is not None else None)


def left_out_text(ws: Workspace, original: Series, kept: Series, deflator: Series,
                  base: Span, frequency: Frequency, interpolate: bool = False,
                  rates: Any = None) -> str | None:
    """Which periods of the series are not shown because the deflator does not reach
    them (e.g. a budget's projected out-years), which deflators of the workspace would
    show them and the projection that would: the engine's serve check
    (:func:`pipeline.compare.serve_check`: ``Fit.missing``, ``Fit.project_until``,
    ``ServeCheck.alternatives``). None when nothing was left out."""
    from pipeline.compare import serve_check

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
            f"{deflator.frequency.label(ends.index[-1])}")
    if rates is not None:
        text += f", and their outlays at {rates.describe()} need its later years"
    names = list(ws.indexes)
    candidates = [pick_index(ws, n) for n in names]
    try:
        check = serve_check(original, candidates, base, to=frequency, fy_start=fy_start(ws),
                            interpolate=interpolate)
    except RealbasisError:
        return text + "."
    fit = check.fit(deflator.name)
    covering = list(check.alternatives(deflator.name))
    until = fit.project_until
    if rates is not None:
        until = outlay_years({original.name: rates}, [original], frequency) or until
        covering = []  # the serve check does not know outlay years: propose the projection
    how = []
    if covering:
        how.append("choose a deflator that reaches them (" + ", ".join(covering[:3]) + ")")
    if until:
        how.append(f"project {deflator.name} until {until}")
    if not how:
        return text + "."
    return text + ". To see them in real terms " + " or ".join(how) + "."


def real_title(c: Computed, *, sa: bool = False) -> str:
    adj = ", seasonally adjusted" if sa else ""
    through = f" through outlay rates ({c.outlay})" if c.outlay else ""
    return (f"{c.series_name} in {c.dollars_label} ({c.unit}{adj}), "
            f"deflated by {c.deflator_name}{through}")


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


def options_for(ws: Workspace, series: Any) -> tuple[Any, ...]:
    """Series options and the series to show (the current one while offered, else the
    saved one), and the saved interpolation switch."""
    s_opts = series_options(ws)
    saved = ws.settings
    return (s_opts, choose(series, s_opts, saved.get("series")),
            [INTERPOLATE_VALUE] if saved.get("interpolate") else [])


def deflator_picker(ws: Workspace, series: Any, deflator: Any, base: Any, freq: Any,
                    interpolate: Any, outlay: Any) -> tuple[Any, Any, Any]:
    """The deflator options for the chosen series, base, 'Show as' and outlay rates:
    only those that can deflate it are enabled, the others disabled with the reason and
    listed under the picker with what would make them serve
    (:func:`dashboard.screens._shared.view.deflator_choices`); the choice kept while it
    can serve, else the saved one, else the first that serves."""
    series_list: list[Series] = []
    rates = None
    if series:
        try:
            series_list = [pick_series(ws, series)]
            if outlay and not str(series).startswith(TOTAL):
                rates = read_outlay_field(outlay, series_list[0].name)
        except RealbasisError:
            rates = None
    ch = deflator_choices(ws, series_list, base, to=freq or "auto", interpolate=interpolate,
                          outlay={series_list[0].name: rates} if rates and series_list
                          else None)
    enabled = [o for o in ch.options if not o.get("disabled")]
    serving = [o for o in enabled if o["value"] in ch.fits
               and ch.fits[o["value"]].verdict == "serves"]
    value = choose(deflator if deflator in [o["value"] for o in enabled] else None,
                   enabled, ws.settings.get("deflator"), *(o["value"] for o in serving))
    return ch.options, value, choices_view(ch)


def outputs(ws: Workspace, series: str | None, deflator: str | None, base: str | None,
            freq: str | None, sa: bool, *, interpolate: Any = False, outlay: str | None = None
            ) -> tuple[Any, Any, Any, Any, Any]:
    """Title, figure, warnings, growth tables and method note for the chosen inputs."""
    if not series or not deflator:
        msg = "Choose a series and a deflator."
        return msg, empty_figure(msg), None, None, method_view(())
    try:
        c = compute_real(ws, series, deflator, base, to=freq or "auto", sa=sa,
                         interpolate=interpolate, outlay=outlay)
    except RealbasisError as err:
        return ("These figures cannot be computed", empty_figure("See the problems below."),
                problems_view(error_dicts(err), title="Cannot compute"), None,
                method_view(fiscal_note(ws)))
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


def save_choices(ws: Workspace, series: Any, deflator: Any, base: Any, freq: Any, sa: bool,
                 *, interpolate: Any = False, outlay: str | None = None) -> Workspace:
    """The screen's choices in the workspace settings (the exports use them); the
    series' outlay rates with them (:func:`pipeline.outlay.with_outlay_rates`; empty
    clears them)."""
    settings = dict(ws.settings)
    settings.update({"series": series, "deflator": deflator, "base": base or "",
                     "frequency": freq or "auto", "seasonal_adjustment": bool(sa),
                     "interpolate": interpolation(interpolate)})
    out = dataclasses.replace(ws, settings=settings)
    if series and series in ws.series and (outlay or outlay_field(ws, series)):
        out = save_outlay(out, series, outlay)
    return out


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


def outlay_state(ws: Workspace, series: Any, text: Any) -> str | None:
    """A line under the outlay-rate box: read as what, saved or not (never an error here;
    a bad entry is shown as a coded problem with the figures)."""
    if not series:
        return None
    if str(series).startswith(TOTAL):
        return ("Outlay rates apply to one series at a time; the total is deflated year by "
                "year." if (text or "").strip() else None)
    try:
        rates = read_outlay_field(text, str(series))
    except RealbasisError:
        return None
    saved = outlay_field(ws, str(series))
    if rates is None:
        return ("Outlay rates cleared; press 'Save these choices to the workspace' to keep "
                "that." if saved else None)
    state = ("saved with the workspace" if saved and read_outlay_field(saved) == rates
             else "not saved yet: press 'Save these choices to the workspace' to keep them")
    return f"Outlay rates of {series}: {rates.describe()} ({state})."
