"""The budget table: every program of a set by (fiscal) year, then-year and constant dollars.

A budget office shows its programs side by side, by fiscal year, in **then-year**
dollars (the amounts as appropriated or proposed, at the prices of their own year) and in
**constant dollars of a base fiscal year** (the same amounts deflated), with the
proposed out-years marked, program totals, and real growth year on year and over the
whole span (compound annual rate). The numbers come from the one deflation engine:
:func:`pipeline.deflate.deflate`, or :func:`pipeline.outlay.deflate_authority` when
authority is spent over several years at outlay rates, so the table shows the same
figures as every other view and export.

Conversions (common practice of multi-year budgeting, as in :mod:`pipeline.projection`):
then-year amounts are deflated, ``constant(t) = then(t) x I(B) / I(t)``; amounts given
in constant dollars of B are turned into then-year dollars by the inverse,
``then(t) = constant(t) / f(t)`` with ``f(t) = real/nominal`` the engine's factor for
year t (``I(B)/I(t)``, or with outlay rates ``sum_k r_k I(B)/I(t+k)``).

Totals add the programs (constant dollars of one base add exactly under a fixed-base
deflator); a year in which a program has no amount has no total. Real growth is
``constant(t) / constant(t-1) - 1``; the compound annual rate over the span is
``(x_last / x_first)^(1/years) - 1`` (:func:`pipeline.growth.cagr`). Statuses are the
engine's: a cell resting on a proposed (projected) amount or a projected index value is
``projected``.
"""

from __future__ import annotations

import json
import math
from collections.abc import Mapping, Sequence
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any, Literal

import numpy as np
import pandas as pd

from . import growth
from .deflate import DeflationResult, deflate
from .errors import Problem, fail, register, warn
from .model import ANNUAL, CAUTIONS, STATUS_RANK, STATUSES, Frequency, Series

DF030 = register("DF030", "a budget table needs results by year")
DF031 = register("DF031", "programs in different units are not totalled")
DF032 = register("DF032", "constant-dollar amounts are converted at their own periods")
DF033 = register("DF033", "deflator not in the result")

TOTAL = "Total"
Given = Literal["then-year", "constant"]
MEASURE_THEN = "then-year dollars"
MEASURE_GROWTH = "real growth on the previous year"
MEASURE_STATUS = "status"


@dataclass(frozen=True, eq=False)
class BudgetTable:
    """Programs by year in then-year and constant dollars, with totals and growth.

    Frames have one row per program (plus ``Total`` when the programs share a unit) and
    one column per year label: ``then_year``, ``constant`` (constant dollars of
    ``base``), ``deflator_index`` (the engine's, base = 100), ``status`` (final,
    preliminary, projected), ``real_growth`` (fraction, on the previous year).
    ``nominal_cagr``/``real_cagr``: compound annual rates from the first to the last
    year (``span``). ``given``: whether the amounts came in then-year or constant
    dollars. ``outlay``: program -> outlay rates for programs deflated through them.
    """

    title: str
    deflator: str
    base: str
    dollars: str
    frequency: Frequency
    years: tuple[str, ...]
    programs: tuple[str, ...]
    unit: str | None
    then_year: pd.DataFrame
    constant: pd.DataFrame
    deflator_index: pd.DataFrame
    status: pd.DataFrame
    real_growth: pd.DataFrame
    nominal_cagr: pd.Series
    real_cagr: pd.Series
    span: tuple[str, str]
    given: Given
    outlay: Mapping[str, Any] = field(default_factory=dict)
    method: tuple[str, ...] = ()
    warnings: tuple[Problem, ...] = ()

    @property
    def has_total(self) -> bool:
        return TOTAL in self.then_year.index and TOTAL not in self.programs

    @property
    def rows(self) -> tuple[str, ...]:
        return tuple(self.then_year.index)

    @property
    def out_years(self) -> tuple[str, ...]:
        """Years in which some cell is projected (proposed amounts or projected index)."""
        return tuple(y for y in self.years if (self.status[y] == "projected").any())

    @property
    def worst_status(self) -> str:
        ranks = [STATUS_RANK.get(str(v), 0) for v in self.status.to_numpy().ravel()]
        return STATUSES[max(ranks)] if ranks else "final"

    @property
    def span_label(self) -> str:
        return f"{self.span[0]}–{self.span[1]}"

    def method_note(self) -> tuple[str, ...]:
        return self.method

    def layout(self) -> pd.DataFrame:
        """The table as laid out for reading, printing and the CSV export: ``program,
        measure``, one column per year, and ``compound annual growth <span>``. Four rows
        per program: then-year dollars, constant dollars, real growth on the previous
        year (fraction), status."""
        span_col = f"compound annual growth {self.span_label}"
        constant = f"constant {self.base} dollars"
        parts = []
        for prog in self.rows:
            for measure, frame, whole in (
                    (MEASURE_THEN, self.then_year, self.nominal_cagr.get(prog)),
                    (constant, self.constant, self.real_cagr.get(prog)),
                    (MEASURE_GROWTH, self.real_growth, None),
                    (MEASURE_STATUS, self.status, None)):
                row: dict[str, object] = {"program": prog, "measure": measure}
                row.update({y: frame.at[prog, y] for y in self.years})
                row[span_col] = whole
                parts.append(row)
        return pd.DataFrame(parts, columns=["program", "measure", *self.years, span_col])

    def long(self) -> pd.DataFrame:
        """One row per program and year: ``program, period, then_year, constant,
        deflator_index, real_growth, status`` (years without an amount left out)."""
        rows = []
        for prog in self.rows:
            for y in self.years:
                t = self.then_year.at[prog, y]
                if t is None or (isinstance(t, float) and math.isnan(t)):
                    continue
                rows.append({"program": prog, "period": y, "then_year": t,
                             "constant": self.constant.at[prog, y],
                             "deflator_index": self.deflator_index.at[prog, y],
                             "real_growth": self.real_growth.at[prog, y],
                             "status": self.status.at[prog, y]})
        return pd.DataFrame(rows, columns=["program", "period", "then_year", "constant",
                                           "deflator_index", "real_growth", "status"])

    def as_dict(self) -> dict[str, Any]:
        """Everything the JSON export holds (missing numbers as None)."""
        return {
            "title": self.title, "deflator": self.deflator, "base": self.base,
            "dollars": self.dollars, "frequency": self.frequency.describe(),
            "unit": self.unit, "given": self.given, "years": list(self.years),
            "out_years": list(self.out_years), "span": list(self.span),
            "programs": list(self.programs), "total": self.has_total,
            "outlay_rates": {k: list(v.rates) for k, v in self.outlay.items()},
            "rows": [{k: _plain(v) for k, v in r.items()} for r in
                     self.long().to_dict("records")],
            "compound_annual_growth": {
                prog: {"nominal": _plain(self.nominal_cagr.get(prog)),
                       "real": _plain(self.real_cagr.get(prog))} for prog in self.rows},
            "method": list(self.method), "cautions": list(CAUTIONS),
            "warnings": [p.as_dict() for p in self.warnings],
        }


def _plain(v: object) -> object:
    if isinstance(v, np.generic):
        v = v.item()
    if isinstance(v, float) and not math.isfinite(v):
        return None
    return v


def _years_frequency(series: Sequence[Series], to: Frequency | None,
                     fy_start: int | None) -> Frequency | None:
    if to is not None:
        return to
    freqs = {s.frequency for s in series}
    if len(freqs) == 1 and next(iter(freqs)).code in ("A", "FY"):
        return None
    if fy_start is not None and fy_start != 1:
        return Frequency("FY", fy_start)
    fiscal = {f.fy_start for f in freqs if f.is_fiscal}
    if len(fiscal) == 1:
        return Frequency("FY", fiscal.pop())
    return ANNUAL


def budget_years(series: Sequence[Series], to: Frequency | None = None,
                 fy_start: int | None = None) -> Frequency:
    """The years a budget table of ``series`` is laid out by (as :func:`budget_table`
    chooses them): ``to``, else the programs' own when they are yearly, else fiscal
    years of ``fy_start``, else calendar years."""
    return _years_frequency(series, to, fy_start) or series[0].frequency


def from_result(result: DeflationResult, deflator: str | int = 0, *,
                given: Given = "then-year", title: str | None = None) -> BudgetTable:
    """The budget table of an engine result (one deflator of it). ``given="constant"``
    means the result's nominal values are amounts in constant dollars of its base, which
    the table turns into then-year dollars. DF030 when the result is not by year."""
    if result.frequency.code not in ("A", "FY"):
        raise fail(DF030, f"a budget table is laid out by year, but the results are "
                   f"{result.frequency.describe()}", expected="results by fiscal or calendar "
                   "year", found=result.frequency.describe(),
                   fix="Show the results by fiscal or calendar year.",
                   remedy="result_frequency")
    if isinstance(deflator, str) and deflator not in result.deflator_names:
        raise fail(DF033, f"no deflator {deflator!r} in the result",
                   expected=", ".join(result.deflator_names), found=repr(deflator),
                   fix="Choose one of the deflators used.", remedy="deflator_missing")
    d = result.deflator_names.index(deflator) if isinstance(deflator, str) else int(deflator)
    dname = result.deflator_names[d]
    keep_rows = ~np.isnan(result.nominal).all(axis=1)
    periods = result.periods[keep_rows]
    years = tuple(result.frequency.labels(periods))
    names = list(result.series_names)
    amounts = result.nominal[keep_rows]
    real = np.asarray(result.real[d])[keep_rows]
    with np.errstate(divide="ignore", invalid="ignore"):
        factor = np.where(amounts != 0, real / amounts, np.nan)
        if given == "constant":
            then = np.where(amounts == 0, 0.0, amounts / factor)
            constant = amounts
        else:
            then, constant = amounts, real
    index_used = np.asarray(result.index_used[d])[keep_rows]
    ranks = np.asarray(result.status[d])[keep_rows].astype(int)
    ranks = np.where(np.isnan(amounts), 0, ranks)
    then_f = pd.DataFrame(then.T, index=names, columns=list(years))
    const_f = pd.DataFrame(constant.T, index=names, columns=list(years))
    index_f = pd.DataFrame(index_used.T, index=names, columns=list(years))
    rank_f = pd.DataFrame(ranks.T, index=names, columns=list(years))
    warnings: list[Problem] = list(result.warnings)
    units = set(result.units)
    unit = next(iter(units)) if len(units) == 1 else None
    if len(names) > 1 and len(units) == 1:
        then_f.loc[TOTAL] = then_f.loc[names].sum(axis=0).where(
            then_f.loc[names].notna().all(axis=0))
        const_f.loc[TOTAL] = const_f.loc[names].sum(axis=0).where(
            const_f.loc[names].notna().all(axis=0))
        with np.errstate(divide="ignore", invalid="ignore"):
            index_f.loc[TOTAL] = 100.0 * then_f.loc[TOTAL] / const_f.loc[TOTAL]
        rank_f.loc[TOTAL] = rank_f.loc[names].max(axis=0)
    elif len(names) > 1:
        warnings.append(warn(DF031, "the programs are in different units, so no total is "
                             "shown", expected="one unit for every program",
                             found=", ".join(sorted(str(u) for u in units)),
                             fix="Give every program in the same unit to see their total."))
    status_f = rank_f.map(lambda r: STATUSES[int(r)])
    blank = then_f.isna()
    status_f = status_f.mask(blank, "")
    freq = result.frequency
    by_period = const_f.T
    by_period.index = periods
    nominal_by_period = then_f.T
    nominal_by_period.index = periods
    g = growth.period_on_period(by_period, freq).values.T
    g.columns = list(years)
    first = by_period.dropna(how="all").index
    span = (freq.label(first[0]), freq.label(first[-1])) if len(first) else ("", "")
    nominal_cagr = _cagr(nominal_by_period, freq)
    real_cagr = _cagr(by_period, freq)
    outlay = dict(getattr(result, "rates", {}) or {})
    dollars = result.dollars_label
    title = title or (f"Programs by {freq.describe()} in then-year and {dollars}, "
                      f"deflated by {dname}")
    method = [
        f"{title}.",
        ("Amounts given in then-year dollars (as appropriated or proposed) and deflated: "
         f"constant(t) = then(t) x I({result.base_label}) / I(t)." if given == "then-year"
         else f"Amounts given in constant {result.base_label} dollars and turned into "
         "then-year dollars: then(t) = constant(t) / f(t), f(t) the deflation factor of "
         "year t."),
        *result.method_note(),
        "Total: the sum of the programs in each year (constant dollars of one base add "
        "exactly); a year in which a program has no amount has no total.",
        "Real growth: constant(t) / constant(t-1) - 1; compound annual growth over "
        f"{span[0]}–{span[1]}: (x_last / x_first)^(1/years) - 1.",
    ]
    out_years = [y for y in years if (status_f[y] == "projected").any()]
    if out_years:
        method.append(f"Projected (assumptions, not outcomes): {out_years[0]}–{out_years[-1]}"
                      if len(out_years) > 1 else f"Projected: {out_years[0]}.")
    return BudgetTable(title, dname, result.base_label, dollars, freq, years, tuple(names),
                       unit, then_f, const_f, index_f, status_f, g, nominal_cagr, real_cagr,
                       span, given, outlay, tuple(method), tuple(warnings))


def _cagr(frame: pd.DataFrame, freq: Frequency) -> pd.Series:
    out = {}
    for col in frame.columns:
        v = frame[col].dropna()
        if len(v) < 2:
            out[col] = float("nan")
            continue
        out[col] = float(growth.cagr(v, v.index[0], v.index[-1], freq).value)
    return pd.Series(out, dtype=float)


def budget_table(series: Sequence[Series], deflator: Series, base: str, *,
                 fy_start: int | None = None, to: Frequency | None = None,
                 outlay_rates: Any = None, given: Given = "then-year",
                 interpolate: bool = False, title: str | None = None) -> BudgetTable:
    """Lay out ``series`` (the programs) by year in then-year and constant ``base``
    dollars under ``deflator``.

    Years: ``to``, else the programs' own when they are yearly, else fiscal years of
    ``fy_start`` (the workspace's), else calendar years. ``outlay_rates``: one set for
    every program or a mapping program -> rates (:func:`pipeline.outlay.
    deflate_authority`). ``given="constant"``: the amounts are in constant ``base``
    dollars and are turned into then-year dollars (at their own yearly periods, DF032
    otherwise). ``interpolate`` lets a deflator whose periods do not fit the years serve
    (flagged)."""
    years = _years_frequency(series, to, fy_start)
    if given == "constant" and years is not None and any(
            s.frequency != years for s in series):
        raise fail(DF032, "amounts in constant dollars are turned into then-year dollars "
                   "at their own periods", expected="yearly amounts (one per fiscal or "
                   "calendar year)", found=", ".join(sorted({s.frequency.describe()
                                                             for s in series})),
                   fix="Give the constant-dollar amounts by year.")
    if outlay_rates:
        from .outlay import deflate_authority

        res: DeflationResult = deflate_authority(series, [deflator], base, outlay_rates,
                                                 to=years, fy_start=fy_start,
                                                 interpolate=interpolate)
    else:
        res = deflate(list(series), [deflator], base, to=years, fy_start=fy_start,
                      interpolate=interpolate)
    return from_result(res, 0, given=given, title=title)


# --------------------------------------------------------------------------- exports

SUFFIXES = (".csv", ".json", ".xlsx")


def layout_frame(tables: Sequence[BudgetTable]) -> pd.DataFrame:
    """One or more budget tables stacked for a file: ``deflator`` first when several."""
    frames = []
    for t in tables:
        f = t.layout()
        if len(tables) > 1:
            f.insert(0, "deflator", t.deflator)
        frames.append(f)
    return pd.concat(frames, ignore_index=True) if frames else pd.DataFrame()


def write_budget(tables: BudgetTable | Sequence[BudgetTable], path: str | Path,
                 **context: Any) -> Path:
    """Write budget tables: ``.csv`` the layout (text neutralised against formulas),
    ``.json`` every table with its rows, method, cautions and warnings, ``.xlsx`` one
    Budget sheet per table plus a method sheet (:func:`pipeline.workbook.
    write_budget_workbook`). EX001 for another suffix, EX002 when it cannot be
    written."""
    from .export import CSV_LINE_END, EX001, EX002, neutralise_frame

    items = [tables] if isinstance(tables, BudgetTable) else list(tables)
    p = Path(path)
    suffix = p.suffix.lower()
    if suffix not in SUFFIXES:
        raise fail(EX001, f"cannot write {p.name!r}: unknown export format",
                   expected="a file name ending in .csv, .json or .xlsx",
                   found=suffix or "(no suffix)", file=str(p),
                   fix="Name the output file with one of those suffixes.")
    try:
        if suffix == ".csv":
            frame = neutralise_frame(layout_frame(items), ("deflator", "program", "measure"))
            frame.to_csv(p, index=False, lineterminator=CSV_LINE_END)
        elif suffix == ".json":
            data = {"tables": [t.as_dict() for t in items],
                    "context": {k: str(v) for k, v in context.items() if v is not None}}
            with open(p, "w", encoding="utf-8") as fh:
                json.dump(data, fh, ensure_ascii=False, indent=1, allow_nan=False)
                fh.write("\n")
        else:
            from .workbook import write_budget_workbook

            write_budget_workbook(items, p, **context)
    except OSError as err:
        raise fail(EX002, f"could not write {p.name!r}", expected="a writable file path",
                   found=f"{type(err).__name__}: {err.strerror or err}", file=str(p),
                   fix="Check that the folder exists and that you may write there.") from None
    return p
