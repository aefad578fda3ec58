"""The Budget table screen's view model: plain functions, tested without a browser
(tests/test_view_budget.py).

:func:`compute` asks the engine for the budget table of the chosen programs
(:func:`pipeline.workbook.workspace_budget`, the same call the workspace export makes for
its Budget sheet): the deflator at its saved vintage, fiscal labels read with the
workspace's fiscal year, each program's saved outlay rates, programs cut to what the
deflator covers. :func:`outputs` turns it into the title, summary, chart, table,
warnings and method note; :func:`deflator_picker` offers only the deflators that can
serve the programs (:func:`dashboard.screens._shared.view.deflator_choices`);
:func:`save_outlay_rates` and :func:`save_choices` keep the program's outlay rates and the
screen's choices with the workspace; :func:`download` writes the table
(:func:`pipeline.budget.write_budget`).
"""

from __future__ import annotations

import calendar
import dataclasses
import math
import tempfile
from collections.abc import Sequence
from pathlib import Path
from typing import Any

import pandas as pd
from dash import html

from pipeline.budget import TOTAL as BUDGET_TOTAL
from pipeline.budget import BudgetTable, budget_years
from pipeline.errors import RealbasisError
from pipeline.model import Series, Workspace

from ...components import (
    Column,
    fmt_number,
    fmt_percent,
    method_view,
    notice,
    problems_view,
    table,
    warnings_view,
)
from ...data import DataAccess, WorkspaceRef, saved_words
from ...figures import empty_figure, real_terms_figure
from .._shared.view import (
    INTERPOLATE_VALUE,
    choices_view,
    choose,
    default_base,
    deflator_choices,
    error_dicts,
    fiscal_note,
    fy_start,
    interpolation,
    outlay_field,
    percent_text,
    problem_dicts,
    result_frequency,
    save_outlay,
    saved_outlay,
    shown_base,
)

SETTING = "budget"  # pipeline.workbook.BUDGET_SETTING
GIVEN = {"then-year": " then-year dollars (as appropriated or proposed)",
         "constant": " constant dollars of the base year (turned into then-year dollars)"}
MARKS = {"preliminary": "p", "projected": "f"}
MARK_WORDS = {"p": "rests on preliminary index values (will be revised)",
              "f": "projected: a proposed amount or a projected index value (an assumption, "
                   "not an outcome)"}


# --------------------------------------------------------------------------- choices


def program_options(ws: Workspace) -> list[dict[str, str]]:
    return [{"label": f"{name} ({s.unit or 'unit not stated'}, {s.frequency.describe()})",
             "value": name} for name, s in ws.series.items()]


def default_programs(ws: Workspace) -> list[str]:
    """The saved programs, else the workspace's yearly (calendar or fiscal) money series,
    else its largest group of series of one frequency."""
    saved = (ws.settings.get(SETTING) or {}).get("programs") or []
    chosen = [p for p in saved if p in ws.series]
    if chosen:
        return chosen
    yearly = [n for n, s in ws.series.items() if s.frequency.code in ("A", "FY")]
    if yearly:
        return yearly
    groups: dict[Any, list[str]] = {}
    for n, s in ws.series.items():
        groups.setdefault(s.frequency, []).append(n)
    return max(groups.values(), key=len) if groups else []


def year_options(ws: Workspace) -> list[dict[str, str]]:
    """The years the table can be laid out by: the programs' own (fiscal years of the
    workspace for monthly or quarterly programs), calendar years, fiscal years."""
    opts = [{"label": "The programs' years (fiscal years for monthly or quarterly programs)",
             "value": "auto"}, {"label": "Calendar years", "value": "A"}]
    starts = {s.frequency.fy_start for s in ws.series.values() if s.frequency.is_fiscal}
    month = fy_start(ws)
    if month is not None and month != 1:
        starts.add(month)
    opts += [{"label": f"Fiscal years starting {calendar.month_name[m]}", "value": f"FY-{m}"}
             for m in sorted(starts)]
    return opts


def options_for(ws: Workspace, programs: Any, base: Any) -> tuple[Any, ...]:
    """Program options and choice (current while offered, else saved, else the yearly
    series), the year options, and the base, years, 'given' and interpolation to show
    (typed, else saved)."""
    opts = program_options(ws)
    offered = {o["value"] for o in opts}
    keep = [p for p in (programs or []) if p in offered] or default_programs(ws)
    spec = ws.settings.get(SETTING) or {}
    shown = shown_base(ws, base, keep, saved=spec.get("base"))
    return (opts, keep, year_options(ws), shown, str(spec.get("frequency") or "auto"),
            "constant" if spec.get("given") == "constant" else "then-year",
            [INTERPOLATE_VALUE] if spec.get("interpolate") else [])


def pick_programs(ws: Workspace, programs: Sequence[str] | None) -> list[Series]:
    return [ws.series[p] for p in (programs or []) if p in ws.series]


def _years(ws: Workspace, programs: Sequence[Series], freq: Any) -> Any:
    code = freq or "auto"
    to = None if code in ("auto", "native") else result_frequency(ws, code, programs[0])
    return budget_years(programs, to, fy_start(ws))


def base_or_default(programs: Sequence[Series], base: Any) -> str:
    return (base or "").strip() or (default_base(programs[0]) if programs else "")


def deflator_picker(ws: Workspace, programs: Any, deflator: Any, base: Any, freq: Any,
                    interpolate: Any) -> tuple[Any, Any, Any]:
    """The deflators that can serve every chosen program by year (and reach every outlay
    year of the programs with saved rates) enabled, the others disabled with the reason
    and listed under the picker with what would make them serve; the choice kept while
    it can serve, else the saved one, else the first that serves."""
    money = pick_programs(ws, programs)
    if not money:
        return [], None, None
    try:
        years = _years(ws, money, freq)
    except RealbasisError:
        years = None
    rates = {n: r for n, r in saved_outlay(ws).items() if n in {s.name for s in money}}
    ch = deflator_choices(ws, money, base_or_default(money, base), to=years,
                          interpolate=interpolate, outlay=rates or None)
    enabled = [o for o in ch.options if not o.get("disabled")]
    serving = [o["value"] for o in enabled if o["value"] in ch.fits
               and ch.fits[o["value"]].verdict == "serves"]
    spec = ws.settings.get(SETTING) or {}
    value = choose(deflator if deflator in [o["value"] for o in enabled] else None, enabled,
                   spec.get("deflator"), *serving)
    return ch.options, value, choices_view(ch)


# --------------------------------------------------------------------------- computing


def compute(ws: Workspace, programs: Any, deflator: Any, base: Any, freq: Any, given: Any,
            interpolate: Any) -> BudgetTable:
    """The budget table of the chosen programs (:func:`pipeline.workbook.
    workspace_budget`)."""
    from pipeline.workbook import workspace_budget

    money = pick_programs(ws, programs)
    table_, _used, _notes = workspace_budget(
        ws, programs=[s.name for s in money], deflator=deflator,
        base=base_or_default(money, base), given="constant" if given == "constant"
        else "then-year", to=freq or "auto", interpolate=interpolation(interpolate))
    return table_


def _mark(status: str) -> str:
    return MARKS.get(status, "")


def _cell(value: Any, status: str, kind: str) -> html.Td:
    text = fmt_percent(value, 1) if kind == "percent" else fmt_number(value, 0)
    classes = f"rb-{'percent' if kind == 'percent' else 'number'}"
    if status == "projected":
        classes += " rb-projected"
    mark = _mark(status)
    children: list[Any] = [text]
    if mark and text != "–":
        children.append(html.Sup(mark, className="rb-mark", title=MARK_WORDS[mark]))
    return html.Td(children, className=classes)


def table_view(t: BudgetTable) -> html.Div:
    """Programs by year: then-year and constant dollars and real growth on the previous
    year, the compound annual rate over the span; projected years shaded and headed
    'projected', every value resting on a preliminary or projected value marked."""
    years = list(t.years)
    constant = f"constant {t.base} dollars"
    head = [html.Th("Program", scope="col"), html.Th("Measure", scope="col")]
    for y in years:
        if y in t.out_years:
            head.append(html.Th([y, html.Br(), html.Small("projected")], scope="col",
                                className="rb-number rb-projected"))
        else:
            head.append(html.Th(y, scope="col", className="rb-number"))
    head.append(html.Th(["Growth a year", html.Br(), html.Small("first to last year shown")],
                        scope="col", className="rb-percent",
                        title="Compound annual rate from each row's first to its last year"))
    body = []
    for prog in t.rows:
        total = prog == BUDGET_TOTAL and t.has_total
        rows = (("then-year dollars", t.then_year, t.nominal_cagr.get(prog), "number"),
                (constant, t.constant, t.real_cagr.get(prog), "number"),
                ("real growth on the previous year", t.real_growth, None, "percent"))
        for i, (measure, frame, whole, kind) in enumerate(rows):
            cells: list[Any] = []
            if i == 0:
                cells.append(html.Th(prog, scope="rowgroup", rowSpan=3,
                                     className="rb-program"))
            cells.append(html.Td(measure, className="rb-measure"))
            for y in years:
                v = frame.at[prog, y]
                cells.append(_cell(v, str(t.status.at[prog, y]), kind))
            cells.append(html.Td(fmt_percent(whole, 2) if whole is not None
                                 and not (isinstance(whole, float) and math.isnan(whole))
                                 else "–", className="rb-percent"))
            body.append(html.Tr(cells, className=("rb-total " if total else "")
                                + ("rb-group-start" if i == 0 else "")))
    legend = [f"Amounts in {t.unit or 'the programs’ own units'}. Shaded columns are "
              "projected years. ", html.Sup("p", className="rb-mark"),
              " rests on preliminary index values (will be revised); ",
              html.Sup("f", className="rb-mark"),
              " projected: a proposed amount or a projected index value (an assumption, "
              "not an outcome)."]
    if len(years) > 8:
        legend.append(" The table scrolls sideways.")
    return html.Div([
        html.P(legend, className="rb-hint rb-legend"),
        html.Div(html.Table([html.Caption(t.title, className="rb-visually-hidden"),
                             html.Thead(html.Tr(head)), html.Tbody(body)],
                            className="rb-table rb-budget"),
                 className="rb-scroll", tabIndex=0, role="region",
                 **{"aria-label": "Budget table (scrolls sideways)"})])


def summary_lines(t: BudgetTable) -> list[str]:
    """The table in sentences: the whole span's real growth, the projected years."""
    row = BUDGET_TOTAL if t.has_total else t.rows[0]
    who = "The total of the programs" if t.has_total else row
    unit = t.unit or "units as given"
    lines = []
    shown = [y for y in t.years if _finite(t.constant.at[row, y])]
    real, nominal = t.real_cagr.get(row), t.nominal_cagr.get(row)
    if len(shown) >= 2 and _finite(real):
        first, last = shown[0], shown[-1]
        lines.append(f"{who}: {fmt_number(t.constant.at[row, first], 0)} in {first} and "
                     f"{fmt_number(t.constant.at[row, last], 0)} in {last} ({unit}, constant "
                     f"{t.base} dollars): real growth {fmt_percent(real, 2)} a year "
                     f"{first}–{last}; in then-year dollars {fmt_percent(nominal, 2)} a year.")
    missing = [y for y in t.years if y not in shown]
    if t.has_total and missing:
        lines.append("No total in " + (missing[0] if len(missing) == 1 else
                                       f"{missing[0]}–{missing[-1]}")
                     + ": a total is shown only in years in which every program has an "
                       "amount (see the method note for why one is missing).")
    if t.out_years:
        span = (t.out_years[0] if len(t.out_years) == 1
                else f"{t.out_years[0]}–{t.out_years[-1]}")
        lines.append(f"{span}: projected — proposed amounts or projected index values; "
                     "these are assumptions, not outcomes.")
    if t.outlay:
        lines.append("Deflated through outlay rates: " + "; ".join(
            f"{k} ({v.describe()})" for k, v in t.outlay.items()) + ".")
    return lines


def _finite(x: Any) -> bool:
    try:
        return math.isfinite(float(x))
    except (TypeError, ValueError):
        return False


def figure_frame(t: BudgetTable) -> pd.DataFrame:
    """The total (or the one program) by year, for the chart: then-year and constant."""
    row = BUDGET_TOTAL if t.has_total else t.rows[0]
    years = list(t.years)
    return pd.DataFrame({"period": years,
                         "nominal": [t.then_year.at[row, y] for y in years],
                         "real": [t.constant.at[row, y] for y in years],
                         "status": [t.status.at[row, y] or "final" for y in years]})


def outputs(ws: Workspace, programs: Any, deflator: Any, base: Any, freq: Any, given: Any,
            interpolate: Any) -> tuple[Any, Any, Any, Any, Any, Any]:
    """Title, summary, figure, table, warnings and method note."""
    if not programs or not deflator:
        msg = "Choose the programs and a deflator."
        return msg, notice(msg, "info"), empty_figure(msg), None, None, method_view(())
    try:
        t = compute(ws, programs, deflator, base, freq, given, interpolate)
    except RealbasisError as err:
        return ("This table cannot be computed", None, empty_figure("See the problems below."),
                None, problems_view(error_dicts(err), title="Cannot compute"),
                method_view(fiscal_note(ws)))
    row = "total of the programs" if t.has_total else t.rows[0]
    fig = real_terms_figure(figure_frame(t), title="", unit=t.unit or "",
                            real_label=f"{row.capitalize()} (constant {t.base} dollars)",
                            nominal_label=f"{row.capitalize()} (then-year dollars)")
    title = f"{t.title} ({t.unit or 'units as given'})"
    return (title, notice(summary_lines(t), "info"), fig, table_view(t),
            warnings_view(problem_dicts(t.warnings)), method_view(t.method_note()))


# --------------------------------------------------------------------------- outlay rates


OUTLAY_COLUMNS = (Column("program", "Program"), Column("rates", "Outlay rates (% each year)"),
                  Column("words", "Spent"))


def outlay_saved_view(ws: Workspace, programs: Any) -> Any:
    """The outlay rates saved for the chosen programs (the others are deflated year by
    year, each year's amount by that year's index)."""
    saved = saved_outlay(ws)
    rows = [{"program": p, "rates": percent_text(saved[p].rates), "words": saved[p].describe()}
            for p in (programs or []) if p in saved]
    return table(OUTLAY_COLUMNS, rows, caption="Outlay rates saved with the workspace",
                 empty="No outlay rates saved: each year's amount is deflated by that "
                       "year's index.")


def outlay_text(ws: Workspace, program: Any) -> str:
    return outlay_field(ws, program)


def save_outlay_rates(data: DataAccess, ref: WorkspaceRef, program: Any, text: Any
                      ) -> tuple[WorkspaceRef | None, Any]:
    """Check the program's outlay rates (percent) and save them with the workspace
    (empty clears them); returns the new ref and a message."""
    if not program:
        return None, notice("Choose the program first.", "warn")
    try:
        ws = data.load(ref)
        saved = data.save(save_outlay(ws, str(program), text),
                          action=f"outlay rates of {program}")
    except RealbasisError as err:
        return None, problems_view(error_dicts(err), title="Not saved")
    rates = saved_outlay(saved).get(str(program))
    what = (f"Outlay rates of {program}: {rates.describe()}." if rates is not None
            else f"Outlay rates of {program} cleared: each year's amount is deflated by that "
                 "year's index.")
    return WorkspaceRef(saved.id, saved.version), notice(
        f"{what} {saved_words(ws, saved)}", "ok")


# --------------------------------------------------------------------------- saving, downloads


def save_choices(ws: Workspace, programs: Any, deflator: Any, base: Any, freq: Any,
                 given: Any, interpolate: Any) -> Workspace:
    """The screen's choices in the workspace settings: the workspace export then adds
    this table as its Budget sheet (:func:`pipeline.workbook.saved_budget`)."""
    settings = dict(ws.settings)
    settings[SETTING] = {"programs": [p for p in (programs or []) if p in ws.series],
                         "deflator": deflator, "base": (base or "").strip(),
                         "frequency": freq or "auto",
                         "given": "constant" if given == "constant" else "then-year",
                         "interpolate": interpolation(interpolate)}
    return dataclasses.replace(ws, settings=settings)


FORMATS = {"csv": "CSV table", "xlsx": "Excel workbook"}


def download(ws: Workspace, fmt: str, programs: Any, deflator: Any, base: Any, freq: Any,
             given: Any, interpolate: Any) -> tuple[bytes, str]:
    """The table as a file (:func:`pipeline.budget.write_budget`): (bytes, file name)."""
    import re

    from pipeline.budget import write_budget

    t = compute(ws, programs, deflator, base, freq, given, interpolate)
    stem = re.sub(r"[^A-Za-z0-9._-]+", "-", ws.name).strip("-._")[:60] or "workspace"
    name = f"{stem}-v{ws.version}-budget.{fmt if fmt in FORMATS else 'csv'}"
    with tempfile.TemporaryDirectory(prefix="rb-budget-") as tmp:
        path = write_budget(t, Path(tmp) / name, workspace=f"{ws.name} (version {ws.version})",
                            command="dashboard: Budget table")
        return path.read_bytes(), name
