"""The audit workbook: one Excel file a reviewer can check a real-terms result against.

Sheets (in this order):

* **Summary** — what the numbers are (constant dollars of which base period), the
  series and deflators, one line per series x deflator (first and last period, real
  values there, real change, worst status), the usual cautions.
* **Real terms** — the engine's tidy table exactly (``series, deflator, period, nominal,
  deflator_index, real, status``, plus ``interpolated`` / ``nominal_sa``, ``real_sa`` when
  used), the same rows as ``realbasis deflate`` prints (written by
  :func:`pipeline.export.write_data_sheet`).
* **Real - <deflator>** — one sheet per deflator: period, then nominal, real and status
  (and the seasonally adjusted real value, when adjusted) for every series.
* **Indexes used** — every deflator as used, rebased so the base period = 100, with its
  per-period status, vintage, source and reference.
* **Status flags** — every real value resting on a preliminary, projected (or
  interpolated) index value, and the preliminary/projected stretches of each deflator.
* **Contributions** (and **Contributions - year on year**, **Contributions - annual**
  for sub-annual results) — when the export carries a total of separately deflated parts
  (:mod:`pipeline.totals`): per period nominal, real, real growth and each part's
  contribution in percentage points, the total and the residual (total - sum of parts),
  with the status of each value. Written by :func:`write_contributions_sheets`, which
  ``realbasis total --out x.xlsx`` (:func:`write_total_workbook`) uses too.
* **Revision band** — when revision bands are given (context ``bands``): for each
  deflator with a revision history, the sentences, the range past revisions imply for
  its preliminary values and for the real values and real growth resting on them, the
  distribution of past revisions by age and the method.
* **Method** — base period, alignment rules (the engine's method note), seasonal
  adjustment, index vintages, the total's method, warnings, cautions, how the file was
  made.
* **Audit trail** — when the export comes from a stored workspace.
* **Budget** — with ``budget=`` (one :class:`pipeline.budget.BudgetTable` or several):
  every program by year in then-year and constant dollars, totals, real growth and the
  compound annual rate, projected out-years shaded (:func:`write_budget_sheet`, also
  written on its own with a method sheet by :func:`write_budget_workbook`).

Text that came from users (series and index names, units, notes, file names, settings)
is *neutralised* before it is written: a cell starting with ``=``, ``+``, ``-``, ``@``, a
tab or a carriage return gets a leading apostrophe and is stored as text, so a
spreadsheet never runs it as a formula (OWASP "CSV Injection" guidance). Numbers are
written as numbers at full precision; number formats only change how they look.
"""

from __future__ import annotations

import datetime as dt
import re
from collections.abc import Callable, Iterable, Mapping, Sequence
from pathlib import Path
from typing import Any

import numpy as np

from . import __version__
from .errors import RealbasisError, fail, register
from .export import EX002, EX003, XLSX_MAX_ROWS, export_table, write_data_sheet
from .model import CAUTIONS, STATUSES
from .xlsx import Book, Cell, Sheet, Style

EX101 = register("EX101", "too many series for one workbook sheet")
EX103 = register("EX103", "chart image cannot be made")

XLSX_MAX_COLUMNS = 16_384
SHEET_SUMMARY = "Summary"
SHEET_DATA = "Real terms"
SHEET_INDEXES = "Indexes used"
SHEET_FLAGS = "Status flags"
SHEET_BAND = "Revision band"
SHEET_METHOD = "Method"
SHEET_AUDIT = "Audit trail"
SHEET_BUDGET = "Budget"
REAL_PREFIX = "Real - "

_BOLD = Style(bold=True)
_TITLE = Style(bold=True, size=14)
_FLAG_FILL = {"preliminary": "FFF2CC", "projected": "E2EFDA"}
_STATUS_LOOKS = {k: Style(fill=v) for k, v in _FLAG_FILL.items()}
_MONEY = "#,##0.00"
_INDEX = "0.000"
_BAD_SHEET_CHARS = re.compile(r"[\[\]:*?/\\]")


def _cell(value: Any, *, fmt: str | None = None, font: Style | None = None,
          fill: str | None = None, wrap: bool = False) -> Cell:
    """A value with its look: number format, font (bold, size), fill colour, wrap."""
    f = font or Style()
    return Cell(value, Style(f.bold, f.size, fill, wrap, fmt))


def _widths(ws: Sheet, widths: Mapping[int, float]) -> None:
    for col, w in widths.items():
        ws.width(col, w)


def _flagged(status: str) -> Cell:
    return _cell(status, fill=_FLAG_FILL.get(status))


def sheet_title(name: str, taken: set[str]) -> str:
    """A valid, unique worksheet title for user text (31 characters, no []:*?/\\)."""
    base = _BAD_SHEET_CHARS.sub("_", name).strip("'") or "sheet"
    base = base[:31]
    title, n = base, 2
    while title.lower() in taken:
        suffix = f" ({n})"
        title = base[:31 - len(suffix)] + suffix
        n += 1
    taken.add(title.lower())
    return title


def _lines(value: Any) -> list[str]:
    if value is None:
        return []
    if isinstance(value, str):
        return [value]
    if isinstance(value, Mapping):
        return [f"{k}: {v}" for k, v in value.items()]
    if isinstance(value, Iterable):
        return [str(v) for v in value]
    return [str(value)]


def _status_name(rank: Any) -> str:
    return STATUSES[int(rank)]


def write_book(path: str | Path, build: Callable[[Book], None]) -> Path:
    """Write a workbook through ``build(book)`` into ``path`` (via ``<path>.part``, renamed
    when complete; EX002 on a write error, with nothing half-written left behind)."""
    path = Path(path)
    try:
        with Book(path) as wb:
            build(wb)
    except OSError as err:
        raise fail(EX002, f"could not write {path.name!r}", expected="a writable file path",
                   found=f"{type(err).__name__}: {err.strerror or err}", file=str(path),
                   fix="Check that the folder exists, that you may write there, and that "
                       "no spreadsheet program holds the file open.") from None
    return path


def write_workbook(result: Any, path: str | Path, **context: Any) -> Path:
    """Write the audit workbook of a :class:`pipeline.deflate.DeflationResult`.

    Optional ``context`` (all plain values): ``title``; ``command`` (the command line
    or screen that made it); ``seasonal`` (words, or a list of lines, on the seasonal
    adjustment applied; default "none"); ``files`` or ``sources`` (input files);
    ``workspace`` (name, id and version text); ``audit`` (a sequence of
    :class:`pipeline.store.AuditEvent`); ``total`` (a :class:`pipeline.totals.TotalResult`:
    adds the Contributions sheets and the total's method); ``notes``; ``cautions`` (default
    :data:`pipeline.model.CAUTIONS`); ``generated_at`` (datetime). Other keys are listed
    on the method sheet as "key: value". Raises EX003 when the data do not fit a sheet,
    EX101 when there are too many series for the wide sheets, EX002 on a write error."""
    path = Path(path)
    table = result.table(flags=True)
    if len(table) + 1 > XLSX_MAX_ROWS:
        raise fail(EX003, f"{len(table)} rows do not fit on one Excel sheet",
                   expected=f"at most {XLSX_MAX_ROWS - 1} rows", found=str(len(table)),
                   fix="Export CSV or JSON instead, or deflate fewer series at a time.")
    wide = 1 + 4 * len(result.series_names)
    if wide > XLSX_MAX_COLUMNS:
        raise fail(EX101, f"{len(result.series_names)} series do not fit side by side on "
                   "one Excel sheet", expected=f"at most {(XLSX_MAX_COLUMNS - 1) // 4} series",
                   found=str(len(result.series_names)),
                   fix="Export CSV or JSON instead, or deflate fewer series at a time.")
    taken = {s.lower() for s in (SHEET_SUMMARY, SHEET_DATA, SHEET_INDEXES, SHEET_FLAGS,
                                 SHEET_BAND, SHEET_METHOD, SHEET_AUDIT)}

    def build(wb: Book) -> None:
        _summary(wb.create_sheet(SHEET_SUMMARY), result, context)
        _budget_sheets(wb, context.get("budget"), taken)
        write_data_sheet(wb, export_table(result), SHEET_DATA)
        for d, name in enumerate(result.deflator_names):
            _real(wb.create_sheet(sheet_title(REAL_PREFIX + name, taken)), result, d,
                  _adjusted_wide(table, name))
        if context.get("total") is not None:
            write_contributions_sheets(wb, context["total"], taken)
        _indexes(wb.create_sheet(SHEET_INDEXES), result)
        _flags(wb.create_sheet(SHEET_FLAGS), result, table)
        if context.get("bands"):
            _bands(wb.create_sheet(SHEET_BAND), context["bands"])
        _method(wb.create_sheet(SHEET_METHOD), result, context)
        if context.get("audit"):
            _audit(wb.create_sheet(SHEET_AUDIT), context["audit"])

    return write_book(path, build)


# --------------------------------------------------------------------------- sheets


def _summary(ws: Any, result: Any, context: Mapping[str, Any]) -> None:
    _widths(ws, {1: 34, 2: 34, 3: 8, 4: 14, 5: 12, 6: 12, 7: 16, 8: 16, 9: 12, 10: 13})
    title = context.get("title") or f"Real terms in {result.dollars_label}"
    ws.append([_cell(str(title), font=_TITLE)])
    ws.append([])
    made_at = context.get("generated_at") or dt.datetime.now(dt.UTC)
    facts = [
        ("Amounts", f"{result.dollars_label} (base period {result.base_label})"),
        ("Frequency", result.frequency.describe()),
        ("Periods", f"{result.period_labels[0]} to {result.period_labels[-1]}"
         if len(result.periods) else "none"),
        ("Series", ", ".join(result.series_names)),
        ("Deflators", ", ".join(
            f"{s.name} (vintage {s.vintage or 'not stated'})" for s in result.deflators_used)
         or ", ".join(result.deflator_names)),
        ("Worst status", result.worst_status),
        ("Workspace", context.get("workspace")),
        ("Made by", f"realbasis {__version__}"),
        ("Made at", made_at.isoformat(timespec="seconds")),
    ]
    for label, value in facts:
        if value not in (None, ""):
            ws.append([_cell(label, font=_BOLD), str(value)])
    ws.append([])
    ws.append(["Series", "Deflator", "Kind", "Unit", "First period", "Last period",
                 "Real, first", "Real, last", "Real change", "Worst status"], style=_BOLD)
    labels = result.period_labels
    for j, sname in enumerate(result.series_names):
        rows = np.flatnonzero(~np.isnan(result.nominal[:, j]))
        if not len(rows):
            continue
        first, last = rows[0], rows[-1]
        for d, dname in enumerate(result.deflator_names):
            r0, r1 = float(result.real[d][first, j]), float(result.real[d][last, j])
            change = (r1 / r0 - 1.0) if r0 and np.isfinite(r0) and np.isfinite(r1) else None
            worst = _status_name(np.max(result.status[d][rows, j]))
            ws.append([sname, dname, result.kinds[j], result.units[j] or "",
                         labels[first], labels[last], r0, r1, change, _flagged(worst)],
                    fmts=[None] * 6 + [_MONEY, _MONEY, "0.00%", None])
    ws.append([])
    ws.append([_cell("Cautions", font=_BOLD)])
    for line in context.get("cautions") or CAUTIONS:
        ws.append(["• " + str(line)])
    if result.worst_status != "final":
        ws.append([_cell("• Some figures here rest on preliminary or projected index "
                           "values: see the sheet 'Status flags'.", font=_BOLD)])
    bands = context.get("bands") or ()
    if bands:
        ws.append([])
        ws.append([_cell("Revision risk", font=_BOLD)])
        for b in bands:
            for line in (b.statements if b.available else
                         [f"{b.name}: no revision band ("
                          + "; ".join(w.message for w in b.warnings if w.code == "WS310")
                          + ")."]):
                ws.append(["• " + line])
        ws.append(["• Details and method: see the sheet 'Revision band'."])


def _adjusted_wide(table: Any, deflator: str) -> Any:
    """Seasonally adjusted real values of one deflator, periods x series (or None)."""
    if "real_sa" not in table.columns:
        return None
    part = table[table["deflator"] == deflator]
    return part.pivot_table(index="period", columns="series", values="real_sa",
                            aggfunc="first", sort=False)


def _real(ws: Any, result: Any, d: int, adjusted: Any = None) -> None:
    name = result.deflator_names[d]
    per = 3 if adjusted is None else 4
    ws.freeze("B4")
    _widths(ws, {1: 11, **{c: 18 for c in range(2, 2 + per * len(result.series_names))}})
    ws.append([_cell(f"Real values deflated by {name}, in {result.dollars_label}",
                     font=_BOLD)])
    ws.append([])
    header = ["period"]
    columns: list[Any] = [[str(x) for x in result.period_labels]]
    fmts: list[str | None] = [None]
    looks: list[Any] = [None]
    status_names = np.array(STATUSES, dtype=object)
    for j, sname in enumerate(result.series_names):
        nominal = result.nominal[:, j]
        missing = np.isnan(nominal)  # a period without a nominal value stays empty
        real = np.where(missing, np.nan, result.real[d][:, j])
        status = np.where(missing, None, status_names[result.status[d][:, j].astype(np.intp)])
        header += [f"{sname} (nominal)", f"{sname} (real)", f"{sname} status"]
        columns += [nominal, real, status]
        fmts += [_MONEY, _MONEY, None]
        looks += [None, None, _STATUS_LOOKS]
        if adjusted is not None:
            header.append(f"{sname} (real, seasonally adjusted)")
            col = (adjusted[sname].reindex(result.period_labels).to_numpy(dtype=float)
                   if sname in adjusted.columns else np.full(len(nominal), np.nan))
            columns.append(np.where(missing, np.nan, col))
            fmts.append(_MONEY)
            looks.append(None)
    ws.append_columns(columns, header=header, fmts=fmts, looks=looks)


def _indexes(ws: Any, result: Any) -> None:
    used = list(result.deflators_used)
    _widths(ws, {1: 18, **{c: 20 for c in range(2, 2 + 2 * len(used))}})
    ws.freeze("B8")  # title, blank, 4 lines about each index, header
    ws.append([_cell(f"Deflator indexes as used, rebased: {result.base_label} = 100",
                       font=_BOLD)])
    ws.append([])
    if not used:
        ws.append(["The result does not carry its deflators."])
        return
    meta = [("vintage", lambda s: s.vintage or "not stated"),
            ("source", lambda s: s.source or ""),
            ("original frequency", lambda s: s.frequency.describe()),
            ("unit", lambda s: s.unit or "")]
    for label, get in meta:
        row: list[Any] = [_cell(label, font=_BOLD)]
        for s in used:
            row += [get(s), None]
        ws.append(row)
    header: list[Any] = ["period"]
    for s in used:
        header += [f"{s.name} ({result.base_label} = 100)", f"{s.name} status"]
    ws.append(header, style=_BOLD)
    # one row per period of any deflator, in time order, at each deflator's own frequency
    rows: dict[tuple[Any, Any], dict[int, tuple[float, str]]] = {}
    names: dict[tuple[Any, Any], str] = {}
    for k, s in enumerate(used):
        labels = s.frequency.labels(s.index)
        flags = s.status_or_final().tolist()
        for p, lab, v, flag in zip(s.index, labels, s.values.tolist(), flags, strict=True):
            key = (p.start_time, p.end_time)
            rows.setdefault(key, {})[k] = (v, flag)
            names[key] = lab
    for key in sorted(rows):
        row = [names[key]] + [None] * (2 * len(used))
        for k, (v, flag) in rows[key].items():
            row[1 + 2 * k] = _cell(float(v), fmt=_INDEX)
            row[2 + 2 * k] = _flagged(str(flag))
        ws.append(row)


def _flags(ws: Any, result: Any, table: Any) -> None:
    _widths(ws, {1: 30, 2: 30, 3: 16, 4: 16, 5: 16, 6: 14})
    ws.append([_cell("Figures resting on index values that are not final", font=_BOLD)])
    ws.append(["Preliminary index values will be revised; projected values are "
                 "assumptions. Interpolated: the index was interpolated to the series' "
                 "periods."])
    ws.append([])
    ws.append([_cell("Deflator stretches", font=_BOLD)])
    ws.append(["deflator", "vintage", "preliminary from", "preliminary to",
                 "projected from", "projected to"], style=_BOLD)
    for s in result.deflators_used:
        st = s.stretches()
        pre, pro = st.get("preliminary"), st.get("projected")
        ws.append([s.name, s.vintage or "not stated", *(pre or ("", "")),
                     *(pro or ("", ""))])
    ws.append([])
    ws.append([_cell("Real values flagged", font=_BOLD)])
    ws.append(["series", "deflator", "period", "real", "status", "interpolated"], style=_BOLD)
    flagged = table[(table["status"] != "final") | table["interpolated"]]
    if flagged.empty:
        ws.append(["None: every figure rests on final index values."])
        return
    ws.append_columns([flagged["series"].to_numpy(), flagged["deflator"].to_numpy(),
                       flagged["period"].to_numpy(), flagged["real"].to_numpy(dtype=float),
                       flagged["status"].to_numpy(),
                       np.where(flagged["interpolated"].to_numpy(dtype=bool), "yes", None)],
                      fmts=[None, None, None, _MONEY], looks=[None] * 4 + [_STATUS_LOOKS])


_KNOWN = {"title", "command", "seasonal", "sources", "files", "workspace", "audit", "notes",
          "cautions", "generated_at", "base", "total", "budget", "bands"}


def _frame_rows(ws: Any, frame: Any, fmts: Mapping[str, str]) -> None:
    ws.append_columns([frame[c].to_numpy() for c in frame.columns],
                      header=[str(c) for c in frame.columns],
                      fmts=[fmts.get(c) for c in frame.columns],
                      looks=[_STATUS_LOOKS if c == "status" else None for c in frame.columns])


def _bands(ws: Any, bands: Sequence[Any]) -> None:
    _widths(ws, {1: 26, 2: 14, 3: 14, 4: 14, 5: 14, 6: 14, 7: 16, 8: 16, 9: 16, 10: 14})
    ws.append([_cell("Revision risk of figures resting on preliminary index values",
                       font=_TITLE)])
    ws.append(["The range the index's own past revisions imply: an empirical quantile "
                 "band, not a forecast. Preliminary values will be revised."])
    pct = "0.000"
    fmts = {"value": _INDEX, "low": _INDEX, "high": _INDEX, "final": _INDEX,
            "low_pct": pct, "high_pct": pct, "revision_pct": pct, "mean_pct": pct,
            "median_pct": pct, "min_pct": pct, "max_pct": pct, "real": _MONEY,
            "real_low": _MONEY, "real_high": _MONEY, "growth_pct": pct,
            "growth_low_pct": pct, "growth_high_pct": pct}
    for b in bands:
        ws.append([])
        ws.append([_cell(f"{b.name} (vintage {b.current or 'not stated'})", font=_BOLD)])
        if not b.available:
            for w in b.warnings:
                ws.append([w.code, _cell(w.render().replace("\n", "; "), wrap=True)])
        for line in b.statements:
            ws.append(["", _cell(line, wrap=True)])
        if not b.real_band.empty:
            ws.append([])
            ws.append([_cell(f"Real values and real growth (year on year), constant "
                               f"{b.base} dollars", font=_BOLD)])
            _frame_rows(ws, b.real_band, fmts)
        if b.available:
            ws.append([])
            ws.append([_cell("Index values: current and the band", font=_BOLD)])
            _frame_rows(ws, b.index_band, fmts)
        ws.append([])
        ws.append([_cell("Past revisions by age (months since first release), percent",
                           font=_BOLD)])
        if b.history.by_age.empty:
            ws.append(["None measured."])
        else:
            _frame_rows(ws, b.history.by_age, fmts)
        ws.append([])
        ws.append([_cell("Method", font=_BOLD)])
        for line in b.method_note():
            ws.append(["", _cell(line, wrap=True)])
        for w in b.warnings if b.available else ():
            ws.append([w.code, _cell(w.render().replace("\n", "; "), wrap=True)])


def _seasonal_lines(result: Any) -> list[str]:
    """The seasonal-adjustment note of an adjusted result (pipeline.seasonal's view)."""
    adjusted = getattr(result, "_adjusted", None)
    return list(adjusted.method_note()) if adjusted is not None else []


def _method(ws: Any, result: Any, context: Mapping[str, Any]) -> None:
    _widths(ws, {1: 28, 2: 110})
    ws.append([_cell("Method", font=_TITLE)])
    ws.append([])
    sections: list[tuple[str, list[str]]] = [
        ("Base period", [f"{result.base_label}: every deflator is rebased so that its "
                         f"average over {result.base_label} is 100; real = nominal x 100 / "
                         f"rebased index, i.e. {result.dollars_label}."]),
        ("Alignment rules and steps", [m for m in result.method_note()
                                       if m not in _seasonal_lines(result)]),
        ("Seasonal adjustment", _lines(context.get("seasonal")) or _seasonal_lines(result)
         or ["None: the series were deflated as given."]),
        ("Index vintages", [
            f"{s.name}: vintage {s.vintage or 'not stated'}"
            + (f"; source {s.source}" if s.source else "")
            for s in result.deflators_used] or list(result.deflator_names)),
        ("Total of parts", list(context["total"].method_note())
         if context.get("total") is not None else []),
        ("Input files", _lines(context.get("sources")) + _lines(context.get("files"))),
        ("Revision risk", [line for b in (context.get("bands") or ())
                           for line in b.method_note()[:1]]),
        ("Warnings", [p.render().replace("\n", "; ") for p in _all_warnings(result, context)]
         or ["None."]),
        ("Cautions", [str(c) for c in (context.get("cautions") or CAUTIONS)]),
        ("Notes", _lines(context.get("notes"))),
        ("How this file was made", [f"realbasis {__version__}"]
         + _lines(context.get("command"))
         + [f"{k}: {v}" for k, v in context.items() if k not in _KNOWN and v is not None]),
    ]
    for heading, lines in sections:
        if not lines:
            continue
        for i, line in enumerate(lines):
            ws.append([_cell(heading, font=_BOLD) if i == 0 else None,
                         _cell(line, wrap=True)])
        ws.append([])


def _all_warnings(result: Any, context: Mapping[str, Any]) -> list[Any]:
    out = list(result.warnings)
    total = context.get("total")
    if total is not None and total is not result:
        out += [w for w in total.warnings if w not in out]
    return out


def _audit(ws: Any, events: Sequence[Any]) -> None:
    ws.freeze("A2")
    _widths(ws, {1: 26, 2: 18, 3: 12, 4: 9, 5: 90})
    ws.append(["time (UTC)", "who", "event", "version", "what"], style=_BOLD)
    for e in events:
        ws.append([e.at.isoformat(timespec="seconds"), e.actor, e.event,
                     e.version if e.version is not None else "", e.describe(limit=4000)])


# --------------------------------------------------------------------------- budget

_PCT = "0.00%"


def _budget_sheets(wb: Any, budget: Any, taken: set[str]) -> list[Any]:
    """Write a Budget sheet per table in ``budget`` (one table, several, or None)."""
    if budget is None:
        return []
    tables = list(budget) if isinstance(budget, list | tuple) else [budget]
    sheets = []
    for t in tables:
        name = SHEET_BUDGET if len(tables) == 1 else f"{SHEET_BUDGET} - {t.deflator}"
        sheets.append(write_budget_sheet(wb, t, sheet_title(name, taken)))
    return sheets


def write_budget_sheet(wb: Any, table: Any, title: str = SHEET_BUDGET) -> Any:
    """Append a Budget sheet for a :class:`pipeline.budget.BudgetTable`: title, base
    and deflator, then per program its then-year and constant dollars by year, real
    growth on the previous year, status, and the compound annual growth over the span;
    out-years shaded as projected, cautions underneath."""
    ws = wb.create_sheet(title)
    years = list(table.years)
    ws.freeze("C6")
    _widths(ws, {1: 30, 2: 34, **{c: 14 for c in range(3, 4 + len(years))}})
    ws.append([_cell(table.title, font=_TITLE)])
    ws.append([f"Amounts in {table.unit or 'the programs’ own units'}; constant dollars "
                 f"of {table.base}; deflator {table.deflator}; given in "
                 f"{table.given} dollars."])
    ws.append([])
    span_col = f"compound annual growth {table.span_label}"
    ws.append(["", ""] + [_cell("projected", fill=_FLAG_FILL["projected"])
                            if y in table.out_years else "" for y in years] + [""])
    ws.append(["program", "measure", *years, span_col], style=_BOLD)
    for rec in table.layout().to_dict("records"):
        measure = rec["measure"]
        row: list[Any] = [rec["program"], measure]
        for y in years:
            v = rec[y]
            if measure == "status":
                row.append(_flagged(str(v)) if v else "")
            elif measure.startswith("real growth"):
                row.append(_cell(v, fmt=_PCT))
            else:
                fill = (_FLAG_FILL["projected"] if table.status.at[rec["program"], y]
                        == "projected" else None)
                row.append(_cell(v, fmt=_MONEY, fill=fill))
        whole = rec[span_col]
        row.append(_cell(whole, fmt=_PCT) if whole is not None else None)
        ws.append(row, style=_BOLD if rec["program"] == "Total" and measure != "status"
                else None)
    ws.append([])
    ws.append([_cell("Cautions", font=_BOLD)])
    for line in CAUTIONS:
        ws.append(["• " + line])
    return ws


def write_budget_workbook(tables: Sequence[Any], path: str | Path, **context: Any) -> Path:
    """A workbook of budget tables: one Budget sheet per table and a Method sheet (the
    tables' method notes, warnings, cautions, how the file was made)."""
    taken = {SHEET_METHOD.lower()}

    def build(wb: Book) -> None:
        _budget_sheets(wb, list(tables), taken)
        ws = wb.create_sheet(SHEET_METHOD)
        _widths(ws, {1: 28, 2: 110})
        ws.append([_cell("Method", font=_TITLE)])
        ws.append([])
        for t in tables:
            for i, line in enumerate(t.method_note()):
                ws.append([_cell(t.deflator, font=_BOLD) if i == 0 else None,
                             _cell(line, wrap=True)])
            for p in t.warnings:
                ws.append([p.code, _cell(p.render().replace("\n", "; "), wrap=True)])
            ws.append([])
        for i, line in enumerate(CAUTIONS):
            ws.append([_cell("Cautions", font=_BOLD) if i == 0 else None, line])
        ws.append([])
        made = [f"realbasis {__version__}", *(f"{k}: {v}" for k, v in context.items()
                                              if v is not None)]
        for i, line in enumerate(made):
            ws.append([_cell("How this file was made", font=_BOLD) if i == 0 else None, line])

    return write_book(path, build)


# --------------------------------------------------------------------------- workspaces

EX102 = register("EX102", "workspace export needs a base period, series and deflators")


def _latest(vintages: Mapping[str, Any]) -> str:
    return sorted(vintages)[-1]  # ISO dates sort as text; '' (unknown) sorts first


def _trim(s: Any, deflators: Sequence[Any]) -> tuple[Any, str | None]:
    """Cut a series to the periods every deflator covers (its ends only)."""
    covered = [d.values.dropna().index for d in deflators if d.values.notna().any()]
    if not covered or s.values.dropna().empty:
        return s, None
    start = max(i[0].start_time for i in covered)
    end = min(i[-1].end_time for i in covered)
    idx = s.values.index
    keep = np.asarray((idx.start_time >= start) & (idx.end_time <= end))
    if keep.all() or not s.values[keep].notna().any():
        return s, None  # nothing to cut, or nothing left: let the engine say what is missing
    kept = s.values[keep]
    status = s.status.reindex(kept.index) if s.status is not None else None
    first, last = kept.dropna().index[0], kept.dropna().index[-1]
    return (s.with_values(kept, status=status),
            f"{s.name} is exported from {s.frequency.label(first)} to "
            f"{s.frequency.label(last)}, the periods every chosen deflator covers.")


def _frequency(code: Any, series: Sequence[Any], deflators: Sequence[Any]) -> Any:
    """The result frequency from a saved choice: 'auto' (the series' own, or the least
    frequent deflator's when coarser), 'native', 'M', 'Q', 'A', 'FY-7'."""
    from .model import Frequency

    if code and code not in ("auto", "native"):
        text = str(code)
        return Frequency("FY", int(text[3:])) if text.startswith("FY-") else Frequency(text)
    if code == "native" or not series or not deflators:
        return None
    own = series[0].frequency
    coarsest = min(deflators, key=lambda d: d.frequency.periods_per_year).frequency
    if coarsest.periods_per_year < own.periods_per_year:
        if coarsest.code == "Q" and own.is_fiscal:
            return Frequency("Q", own.fy_start)
        if coarsest.code == "A" and own.is_fiscal:
            return Frequency("FY", own.fy_start)
        return coarsest
    return None


def workspace_result(ws: Any, *, base: str | None = None,
                     deflators: Sequence[str] | None = None,
                     series: Sequence[str] | None = None, to: Any = None
                     ) -> tuple[Any, dict[str, str], list[str]]:
    """Deflate a stored workspace as its saved choices say (or as given).

    Series: ``series``, else the workspace's chosen series and every other series of the
    same frequency. Deflators: ``deflators``, else the chosen ones, else every index; each
    at the vintage in ``settings["vintages"]`` or its latest. Base: ``base``, else the
    saved base, fiscal labels read with the workspace's fiscal year
    (:func:`pipeline.fiscal.workspace_fiscal_year`). Returns the result, the index vintages used and notes on trimming."""
    from .deflate import deflate

    settings = dict(ws.settings or {})
    base = (base or str(settings.get("base") or "")).strip()
    names = list(deflators or settings.get("deflators") or
                 ([settings["deflator"]] if settings.get("deflator") else []) or ws.indexes)
    names = [n for n in dict.fromkeys(names) if n in ws.indexes]
    if series:
        chosen = [n for n in series if n in ws.series]
    else:
        first = settings.get("series") if settings.get("series") in ws.series else None
        if first is None and ws.series:
            groups: dict[Any, list[str]] = {}
            for n, s in ws.series.items():
                groups.setdefault(s.frequency, []).append(n)
            first = max(groups.values(), key=len)[0]
        chosen = [n for n, s in ws.series.items()
                  if first is not None and s.frequency == ws.series[first].frequency]
    missing = [w for w, ok in (("a base period", base), ("money series", chosen),
                               ("price indexes", names)) if not ok]
    if missing:
        raise fail(EX102, "the workspace export needs " + ", ".join(missing),
                   expected="a saved base period, money series and price indexes",
                   found=f"base {base or 'none'}; {len(chosen)} series; {len(names)} indexes",
                   fix="Choose the base period, series and deflators and save them with "
                       "the workspace, or give them for this export.",
                   remedy="export_choices")
    saved_vintages = settings.get("vintages") if isinstance(settings.get("vintages"), dict) else {}
    used: dict[str, str] = {}
    defl = []
    for n in names:
        vins = ws.indexes[n]
        key = str(saved_vintages.get(n)) if saved_vintages.get(n) in vins else _latest(vins)
        used[n] = key
        defl.append(vins[key])
    notes = []
    money = []
    for n in chosen:
        s, note = _trim(ws.series[n], defl)
        money.append(s)
        if note:
            notes.append(note)
    freq = _frequency(to if to is not None else settings.get("frequency", "auto"), money, defl)
    from .fiscal import fiscal_start_of

    fy = fiscal_start_of(ws)
    interp = bool(settings.get("interpolate"))
    rates = saved_rates(ws, chosen)
    if rates:
        result = _authority_result([ws.series[n] for n in chosen], defl, base, rates, freq,
                                   fy, interp, notes)
        if result is not None:
            for name in [n for n in used if n not in result.deflator_names]:
                used.pop(name)
            return result, used, notes
    return deflate(money, defl, base, to=freq, fy_start=fy, interpolate=interp), used, notes


def saved_rates(ws: Any, names: Sequence[str]) -> dict[str, Any]:
    """The outlay rates saved for any of ``names`` (series name -> OutlayRates;
    :data:`pipeline.outlay.SETTING`)."""
    from .outlay import SETTING, rates_by_series

    return {n: r for n, r in rates_by_series((ws.settings or {}).get(SETTING)).items()
            if n in names}


def _authority_result(money: list[Any], defl: list[Any], base: str, rates: Mapping[str, Any],
                      freq: Any, fy: int | None, interp: bool, notes: list[str]) -> Any:
    """The series with saved outlay rates deflated as budget authority
    (:func:`pipeline.outlay.deflate_authority`): a deflator that cannot reach the outlay
    years even of the base is left out, the years whose outlays the others do not reach
    are cut (both noted); None when the results are not by year (noted: rates are shares
    per year)."""
    from .outlay import cut_to_reach, deflate_authority

    years = freq if freq is not None else (
        money[0].frequency if len({m.frequency for m in money}) == 1 else None)
    # ``money`` is the series as held (not yet cut to the deflators' span)
    if years is None or years.code not in ("A", "FY"):
        notes.append("Outlay rates saved for " + ", ".join(repr(n) for n in rates)
                     + " are not used: the results are "
                     + (years.describe() if years is not None else "not by year")
                     + ", and outlay rates are shares per year.")
        return None
    from .outlay import DF022

    rated = [s for s in money if s.name in rates]
    kept, first_error = [], None
    for d in defl:  # a deflator that cannot reach the outlay years is left out, and named
        trial = [cut_to_reach(_trim(s, [d])[0], [d], rates[s.name], years)[0]
                 for s in rated]
        try:
            deflate_authority(trial, [d], base, dict(rates), to=freq, fy_start=fy,
                              interpolate=interp)
        except RealbasisError as err:
            gap = next((p for p in err.problems if p.code == DF022), None)
            if gap is None:
                raise
            first_error = first_error or err
            notes.append(f"{d.name} is left out: {gap.message} ({gap.found}).")
            continue
        kept.append(d)
    if not kept:
        raise first_error  # type: ignore[misc]
    # cut to what the deflators kept cover (the notes on cutting are made again for them)
    notes[:] = [n for n in notes if "the periods every chosen deflator covers" not in n]
    money = list(money)
    for i, s in enumerate(money):
        money[i], note = _trim(s, kept)
        if note:
            notes.append(note)
        if s.name in rates:
            money[i], note = cut_to_reach(money[i], kept, rates[s.name], years)
            if note:
                notes.append(note)
    return deflate_authority(money, kept, base, dict(rates), to=freq, fy_start=fy,
                             interpolate=interp)


def workspace_bands(ws: Any, result: Any, used: Mapping[str, str]) -> tuple[Any, ...]:
    """Revision bands (:func:`pipeline.revision_risk.revision_band`) of every deflator of
    ``result`` the workspace holds in more than one vintage, for the same series, base
    and frequency, banding the vintage ``used`` (as :func:`workspace_result` returns)."""
    from .revision_risk import revision_band

    bands = []
    for name in result.deflator_names:
        vins = ws.indexes.get(name) or {}
        if len(vins) < 2:
            continue
        current = used.get(name) or _latest(vins)
        money = [_trim(ws.series[n], [vins[current]])[0] for n in result.series_names
                 if n in ws.series]
        bands.append(revision_band(vins, money, result.base, current=current,
                                   to=result.frequency))
    return tuple(bands)


def export_workspace(ws: Any, path: str | Path, *, base: str | None = None,
                     deflators: Sequence[str] | None = None,
                     series: Sequence[str] | None = None, to: Any = None,
                     store: Any = None, actor: str = "editor", command: str | None = None,
                     progress: Callable[[int, int], None] | None = None) -> Path:
    """Write a workspace's result (.xlsx audit workbook, .csv or .json) the same way the
    command line does, with the workspace, its audit trail and index vintages recorded.
    When the workspace's settings hold a total of parts (:func:`saved_total`), the
    workbook also gets its Contributions sheets (:func:`write_contributions_sheets`);
    when they hold a budget table (:func:`saved_budget`), the workbook gets its Budget
    sheet and the JSON its ``budget`` (:func:`workspace_budget`). Series with saved
    outlay rates are deflated as budget authority (:func:`workspace_result`).
    With a ``store`` and editor access, the export is noted in the audit trail.
    ``progress(done, total)`` is told each stage done (the result, the extras and the
    audit trail, the file written: 3 stages)."""
    from .export import write_result
    from .store import current_access

    step = progress or (lambda done, total: None)
    step(0, 3)
    result, used, notes = workspace_result(ws, base=base, deflators=deflators, series=series,
                                           to=to)
    total = None
    budget = None
    if Path(path).suffix.lower() != ".csv" and saved_budget(ws) is not None:
        try:
            budget, budget_used, budget_notes = workspace_budget(ws)
        except RealbasisError as err:  # the rest of the export stands; the file says why
            notes.append(f"No budget table: {err.problems[0].message} "
                         f"({err.problems[0].code}).")
        else:
            used.update({k: v for k, v in budget_used.items() if k not in used})
            notes += [n for n in budget_notes if n not in notes]
    if Path(path).suffix.lower() == ".xlsx" and saved_total(ws) is not None:
        total, total_used, total_notes = workspace_total(ws, base=base, to=to)
        used.update({k: v for k, v in total_used.items() if k not in used})
        notes += [n for n in total_notes if n not in notes]
    step(1, 3)
    events = store.audit(ws.id) if store is not None else []
    uploads = [f"{e.detail.get('filename')} ({e.detail.get('size')} bytes, sha256 "
               f"{e.detail.get('sha256')})" for e in events if e.event == "upload"]
    bands = workspace_bands(ws, result, used) if Path(path).suffix.lower() != ".csv" else ()
    context: dict[str, Any] = {
        "workspace": f"{ws.name} (id {ws.id}, version {ws.version})",
        "command": command or f"realbasis workspace export {ws.id}",
        "sources": uploads or None,
        "notes": notes or None,
        "audit": events or None,
        "total": total,
        "bands": bands or None,
        "budget": budget,
    }
    if Path(path).suffix.lower() != ".xlsx":
        context = {"workspace": context["workspace"], "command": context["command"],
                   "vintages": "; ".join(f"{k}: {v or 'not stated'}" for k, v in used.items()),
                   "notes": "; ".join(notes) if notes else None,
                   "bands": bands or None, "budget": budget}
    step(2, 3)
    out = write_result(result, path, **{k: v for k, v in context.items() if v is not None})
    if store is not None and not current_access().read_only:
        store.record_use(ws.id, used, purpose=f"export {Path(path).name}", actor=actor)
    step(3, 3)
    return out


# --------------------------------------------------------------------------- totals

SHEET_CONTRIBUTIONS = "Contributions"
CONTRIBUTION_SHEETS = (("period", SHEET_CONTRIBUTIONS),
                       ("yoy", "Contributions - year on year"),
                       ("annual", "Contributions - annual"))
_PCT = "0.00"
_HEADER_ROW = 4  # the Contributions table's header row (title, note, blank above it)


def write_contributions_sheets(wb: Any, total: Any, taken: set[str] | None = None) -> None:
    """Append the Contributions sheet of a :class:`pipeline.totals.TotalResult` (and, for
    sub-annual results, its year-on-year and annual versions): title and method on rows
    1-2, the table from row 4 with EXACTLY ``period, component, nominal, real,
    real_growth_pct, contribution_pp`` plus ``status``, footnotes below."""
    taken = taken if taken is not None else set()
    for basis, name in CONTRIBUTION_SHEETS:
        if basis != "period" and total.frequency.periods_per_year == 1:
            continue
        from .totals import BASIS_WORDS

        table = total.table(basis, status=True)
        if len(table) + _HEADER_ROW + 4 > XLSX_MAX_ROWS:
            raise fail(EX003, f"{len(table)} rows do not fit on one Excel sheet",
                       expected=f"at most {XLSX_MAX_ROWS - _HEADER_ROW - 4} rows",
                       found=str(len(table)),
                       fix="Export CSV or JSON instead, or total fewer parts at a time.")
        ws = wb.create_sheet(sheet_title(name, taken))
        ws.freeze(f"A{_HEADER_ROW + 1}")
        _widths(ws, {1: 12, 2: 34, 3: 18, 4: 18, 5: 16, 6: 16, 7: 13})
        ws.append([_cell(f"Contributions to real growth ({BASIS_WORDS[basis]}), in "
                           f"{total.dollars_label}", font=_BOLD)])
        ws.append([f"Total: {total.chain_words}. Each part deflated by its own deflator; "
                     "residual = total - sum of the parts' real values."])
        ws.append([])
        ws.append_columns([table[c].to_numpy() for c in table.columns],
                          header=[str(c) for c in table.columns],
                          fmts=[None, None, _MONEY, _MONEY, _PCT, _PCT],
                          looks=[None] * 6 + [_STATUS_LOOKS])
        ws.append([])
        for line in ("Contributions are in percentage points and add up to the total's "
                     "real growth (in percent) in every period.",
                     "Real growth and contributions are empty where there is no earlier "
                     "period to compare with; the total and residual have no contribution.",
                     *(["Some figures rest on preliminary or projected index values (column "
                        "status)."] if total.worst_status != "final" else [])):
            ws.append([line])


def _total_summary(ws: Any, total: Any, context: Mapping[str, Any]) -> None:
    _widths(ws, {1: 30, 2: 30, 3: 8, 4: 14, 5: 12, 6: 12, 7: 16, 8: 16, 9: 12, 10: 13})
    title = context.get("title") or f"Total of parts in {total.dollars_label}"
    ws.append([_cell(str(title), font=_TITLE)])
    ws.append([])
    labels = total.period_labels
    made_at = context.get("generated_at") or dt.datetime.now(dt.UTC)
    facts = [
        ("Total", f"{total.chain_words}, in {total.dollars_label}"),
        ("Parts", f"{len(total.part_names)}, each in constant {total.base_label} dollars of "
                  "its own deflator"),
        ("Frequency", total.frequency.describe()),
        ("Periods", f"{labels[0]} to {labels[-1]}" if len(labels) else "none"),
        ("Worst status", total.worst_status),
        ("Made by", f"realbasis {__version__}"),
        ("Made at", made_at.isoformat(timespec="seconds")),
    ]
    for label, value in facts:
        ws.append([_cell(label, font=_BOLD), str(value)])
    ws.append([])
    ws.append(["Component", "Deflator", "Kind", "Unit", "First period", "Last period",
                 "Real, first", "Real, last", "Real change", "Worst status"], style=_BOLD)
    vintages = {s.name: s.vintage for s in total.deflators_used}
    last = len(labels) - 1
    rows = [(name, f"{d} (vintage {vintages.get(d) or 'not stated'})",
             total.real[:, j], total.part_status[:, j])
            for j, (name, d) in enumerate(total.pairs)]
    rows.append(("total", total.chain_words, total.total_real, total.total_status))
    for name, defl, real, status in rows:
        if last < 0:
            break
        r0, r1 = float(real[0]), float(real[last])
        change = (r1 / r0 - 1.0) if r0 and np.isfinite(r0) and np.isfinite(r1) else None
        ws.append([name, defl, total.kind, total.unit or "", labels[0], labels[last], r0, r1,
                     change, _flagged(_status_name(np.max(status)))],
                fmts=[None] * 6 + [_MONEY, _MONEY, "0.00%", None])
    ws.append([])
    ws.append([_cell("Cautions", font=_BOLD)])
    for line in context.get("cautions") or CAUTIONS:
        ws.append(["• " + str(line)])


def _total_method(ws: Any, total: Any, context: Mapping[str, Any]) -> None:
    _widths(ws, {1: 28, 2: 110})
    ws.append([_cell("Method", font=_TITLE)])
    ws.append([])
    sections: list[tuple[str, list[str]]] = [
        ("Base period", [f"{total.base_label}: every deflator is rebased so that its "
                         f"average over {total.base_label} is 100; each part's real value "
                         f"= nominal x 100 / its rebased deflator (constant "
                         f"{total.base_label} dollars)."]),
        ("Total and contributions", list(total.method_note())),
        ("Index vintages", [f"{s.name}: vintage {s.vintage or 'not stated'}"
                            + (f"; source {s.source}" if s.source else "")
                            for s in total.deflators_used]),
        ("Input files", _lines(context.get("sources")) + _lines(context.get("files"))),
        ("Warnings", [p.render().replace("\n", "; ") for p in total.warnings] or ["None."]),
        ("Cautions", [str(c) for c in (context.get("cautions") or CAUTIONS)]),
        ("Notes", _lines(context.get("notes"))),
        ("How this file was made", [f"realbasis {__version__}"]
         + _lines(context.get("command"))
         + [f"{k}: {v}" for k, v in context.items() if k not in _KNOWN and v is not None]),
    ]
    for heading, lines in sections:
        for i, line in enumerate(lines):
            ws.append([_cell(heading, font=_BOLD) if i == 0 else None,
                         _cell(line, wrap=True)])
        if lines:
            ws.append([])


def write_total_workbook(total: Any, path: str | Path, **context: Any) -> Path:
    """The workbook of a :class:`pipeline.totals.TotalResult`: Summary, Contributions (and
    its year-on-year and annual versions), Indexes used, Method. ``context`` as for
    :func:`write_workbook` (``title``, ``command``, ``files``/``sources``, ``notes``,
    ``cautions``, ``generated_at``; others are listed on the method sheet)."""
    taken = {s.lower() for s in (SHEET_SUMMARY, SHEET_INDEXES, SHEET_METHOD)}

    def build(wb: Book) -> None:
        _total_summary(wb.create_sheet(SHEET_SUMMARY), total, context)
        write_contributions_sheets(wb, total, taken)
        _indexes(wb.create_sheet(SHEET_INDEXES), total)
        _total_method(wb.create_sheet(SHEET_METHOD), total, context)

    return write_book(path, build)


def saved_total(ws: Any) -> dict[str, Any] | None:
    """The total of parts a workspace's settings describe, or None:
    ``settings["total"] = {"pairs": {series: deflator, ...}, "chain": "none|fisher|annual"}``."""
    spec = (ws.settings or {}).get("total")
    if not isinstance(spec, Mapping) or not isinstance(spec.get("pairs"), Mapping) or \
            not spec["pairs"]:
        return None
    return {"pairs": {str(k): str(v) for k, v in spec["pairs"].items()},
            "chain": str(spec.get("chain") or "none")}


def workspace_total(ws: Any, *, base: str | None = None,
                    pairs: Mapping[str, str] | None = None, chain: str | None = None,
                    to: Any = None) -> tuple[Any, dict[str, str], list[str]]:
    """The total of parts of a stored workspace, each part deflated by its paired index.

    Pairs and chain: as given, else ``settings["total"]`` (see :func:`saved_total`); base:
    as given, else the saved base; each index at the vintage in ``settings["vintages"]``
    or its latest; each part cut to the periods its deflator covers. Returns the
    :class:`pipeline.totals.TotalResult`, the index vintages used and notes on cutting."""
    from .totals import total_of_parts

    settings = dict(ws.settings or {})
    spec = saved_total(ws) or {}
    pairs = dict(pairs if pairs is not None else spec.get("pairs") or {})
    chain = chain or spec.get("chain") or "none"
    base = (base or str(settings.get("base") or "")).strip()
    if not base or not pairs:
        raise fail(EX102, "the total of parts needs " + " and ".join(
                   w for w, ok in (("a base period", base), ("a deflator for each part", pairs))
                   if not ok), expected="a saved base period and a deflator for each part",
                   found=f"base {base or 'none'}; {len(pairs)} pair(s)",
                   fix="Choose the base period and a deflator for each part, and save them "
                       "with the workspace.", remedy="export_choices")
    saved_vintages = settings.get("vintages") if isinstance(settings.get("vintages"), dict) else {}
    used: dict[str, str] = {}
    defl: dict[str, Any] = {}
    for d in dict.fromkeys(pairs.values()):
        if d in ws.indexes:
            vins = ws.indexes[d]
            key = str(saved_vintages.get(d)) if saved_vintages.get(d) in vins else _latest(vins)
            used[d] = key
            defl[d] = vins[key]
    parts, notes = [], []
    for name in pairs:
        if name not in ws.series:
            parts.append(None)
            continue
        s = ws.series[name]
        if pairs[name] in defl:
            s, note = _trim(s, [defl[pairs[name]]])
            if note:
                notes.append(note)
        parts.append(s)
    missing = [n for n, s in zip(pairs, parts, strict=True) if s is None]
    if missing:
        from .totals import DF202

        raise fail(DF202, f"the saved total names {len(missing)} series the workspace does "
                   "not hold", expected="series of the workspace",
                   found=", ".join(repr(n) for n in missing), series=missing[0],
                   fix="Pair only series of the workspace (a series may have been renamed "
                       "or removed).", remedy="part_pairs")
    freq = _frequency(to if to is not None else settings.get("frequency", "auto"), parts,
                      list(defl.values()))
    total = total_of_parts(parts, list(defl.values()), pairs, base, chain=chain,  # type: ignore[arg-type]
                           to=freq)
    return total, used, notes


# --------------------------------------------------------------------------- budget tables

BUDGET_SETTING = "budget"
"""Key of the saved budget-table choices in ``Workspace.settings``: ``{"programs": [...],
"deflator": name, "base": label, "given": "then-year" | "constant", "frequency": choice,
"interpolate": bool}``."""


def saved_budget(ws: Any) -> dict[str, Any] | None:
    """The budget-table choices a workspace's settings hold (:data:`BUDGET_SETTING`), or
    None when no programs are saved."""
    spec = (ws.settings or {}).get(BUDGET_SETTING)
    if not isinstance(spec, Mapping) or not spec.get("programs"):
        return None
    return {"programs": [str(p) for p in spec["programs"]],
            "deflator": str(spec["deflator"]) if spec.get("deflator") else None,
            "base": str(spec.get("base") or ""),
            "given": "constant" if spec.get("given") == "constant" else "then-year",
            "frequency": str(spec.get("frequency") or "auto"),
            "interpolate": bool(spec.get("interpolate"))}


def workspace_budget(ws: Any, *, programs: Sequence[str] | None = None,
                     deflator: str | None = None, base: str | None = None,
                     given: str | None = None, to: Any = None,
                     interpolate: bool | None = None) -> tuple[Any, dict[str, str], list[str]]:
    """The budget table of a stored workspace (:func:`pipeline.budget.budget_table`).

    Choices as given, else the saved ones (:func:`saved_budget`), else the workspace's
    saved deflator and base; fiscal labels read with the workspace's fiscal year; the
    deflator at its saved vintage or its latest; each program's saved outlay rates used
    (:func:`pipeline.outlay.deflate_authority`). Each program is cut to the periods the
    deflator covers and, with outlay rates, to the years whose outlays it reaches; the
    notes say so and end up in the table's method note. Returns the table, the index
    vintage used and the notes."""
    import dataclasses

    from .budget import budget_table, budget_years
    from .compare import result_frequency, trim_to_cover
    from .fiscal import fiscal_start_of
    from .outlay import cut_to_reach

    settings = dict(ws.settings or {})
    spec = saved_budget(ws) or {}
    names = [n for n in (programs if programs is not None else spec.get("programs") or [])
             if n in ws.series]
    dname = deflator or spec.get("deflator") or settings.get("deflator")
    base = (base or spec.get("base") or str(settings.get("base") or "")).strip()
    given = given or spec.get("given") or "then-year"
    interp = bool(spec.get("interpolate")) if interpolate is None else bool(interpolate)
    if not names or not base or dname not in ws.indexes:
        raise fail(EX102, "the budget table needs " + ", ".join(
                   w for w, ok in (("programs", names), ("a base period", base),
                                   ("a deflator", dname in ws.indexes)) if not ok),
                   expected="programs, a deflator and a base year",
                   found=f"{len(names)} program(s); base {base or 'none'}; deflator "
                         f"{dname or 'none'}",
                   fix="Choose the programs, the deflator and the base year of the budget "
                       "table.", remedy="export_choices")
    saved_vintages = settings.get("vintages") if isinstance(settings.get("vintages"), dict) else {}
    vins = ws.indexes[dname]
    key = str(saved_vintages.get(dname)) if saved_vintages.get(dname) in vins else _latest(vins)
    d = vins[key]
    fy = fiscal_start_of(ws)
    money = [ws.series[n] for n in names]
    code = to if to is not None else spec.get("frequency") or "auto"
    years = (code if not isinstance(code, str) else
             None if code in ("auto", "native") else
             result_frequency(code, money[0], [d], fy_start=fy))
    years_used = budget_years(money, years, fy)
    rates = saved_rates(ws, names)
    notes: list[str] = []
    cut = []
    for s in money:
        s, note = trim_to_cover(s, [d])
        if note:
            notes.append(note)
        if s.name in rates:
            s, note = cut_to_reach(s, [d], rates[s.name], years_used)
            if note:
                notes.append(note)
        cut.append(s)
    table = budget_table(cut, d, base, fy_start=fy, to=years, outlay_rates=rates or None,
                         given="constant" if given == "constant" else "then-year",
                         interpolate=interp)
    from .fiscal import workspace_fiscal_year

    fiscal = workspace_fiscal_year(ws)
    extra = [*notes, *(fiscal.method_note() if fiscal.known else ())]
    # programs in the order chosen (outlay-weighted ones come first from the engine)
    rows = [n for n in names if n in table.then_year.index]
    rows += [r for r in table.then_year.index if r not in rows]
    table = dataclasses.replace(
        table, programs=tuple(n for n in names if n in table.programs),
        then_year=table.then_year.reindex(rows), constant=table.constant.reindex(rows),
        deflator_index=table.deflator_index.reindex(rows), status=table.status.reindex(rows),
        real_growth=table.real_growth.reindex(rows),
        nominal_cagr=table.nominal_cagr.reindex(rows), real_cagr=table.real_cagr.reindex(rows),
        method=(*table.method, *extra))
    return table, {dname: key}, notes
