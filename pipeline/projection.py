"""Out-year projection of a price index and then-year / constant-year dollar conversion.

Projection extends an index past its last value with an assumed annual rate of change,
one rate for every year or a rate per (calendar or fiscal) year. A period of a year with
rate ``r`` grows by ``(1 + r) ** (1 / periods_per_year)``, so twelve projected months of
that year compound to exactly ``r``. Every projected value is flagged ``projected``: it is
an assumption, not a measurement, and figures resting on it say so.

Budget conversions (common practice of multi-year budgeting):

* then-year (nominal, "current") dollars to constant dollars of base ``B``:
  ``constant(t) = then(t) * I(B) / I(t)`` — this is deflation, done by
  :func:`pipeline.deflate.deflate` so periods are aligned the same way everywhere;
* constant dollars of ``B`` to then-year dollars: ``then(t) = constant(t) * I(t) / I(B)``,
  with ``I(t)/I(B)`` taken from the same deflation run (the deflator rebased to B).
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from dataclasses import dataclass
from typing import Literal

import numpy as np
import pandas as pd

from .deflate import DeflationResult, deflate
from .errors import Problem, fail, register, warn
from .model import ANNUAL, Frequency, Series
from .periods import parse_span

WS201 = register("WS201", "projection year without an assumed rate")
WS202 = register("WS202", "assumed rate out of range")
WS203 = register("WS203", "projection end not after the last index value")
WS204 = register("WS204", "only price indexes can be projected")
WS205 = register("WS205", "index values projected (assumptions)")
WS206 = register("WS206", "assumed rate not understood")

RateUnit = Literal["fraction", "percent"]
RateGiven = float | str


def parse_rate(text: RateGiven, *, bare: RateUnit = "fraction") -> float:
    """An assumed annual rate as a fraction: ``'2.5%'`` and ``'2.5 %'`` -> 0.025 always;
    a bare number is a fraction (``'0.025'``) or, with ``bare="percent"`` (a field that
    says "percent a year"), a percent (``'2.5'`` -> 0.025). Numbers pass through as
    fractions (or percents). WS206 when the text is not a number."""
    if isinstance(text, int | float) and not isinstance(text, bool):
        value = float(text)
        return value / 100.0 if bare == "percent" else value
    t = str(text).strip().replace("\u2212", "-")
    percent = t.endswith("%")
    number = t[:-1].strip() if percent else t
    try:
        value = float(number.replace(" ", ""))
    except ValueError:
        raise fail(WS206, f"the assumed rate {str(text)!r} is not a number",
                   expected="a rate a year such as 2.5% or 0.025", found=repr(str(text)),
                   fix="Write the rate as a number, as a percent a year (2.5%) or a "
                       "fraction (0.025).", remedy="projection_rate") from None
    return value / 100.0 if (percent or bare == "percent") else value


def _shown(given: RateGiven, bare: RateUnit) -> str:
    """The rate as the user gave it, for ``found``."""
    if isinstance(given, str):
        text = given.strip()
        return f"{text!r} (read as {100 * parse_rate(text, bare=bare):g} % a year)"
    return (f"{float(given):g} % a year" if bare == "percent"
            else f"{float(given)!r} (read as {100 * float(given):g} % a year)")


@dataclass(frozen=True)
class Projection:
    """An index extended with projected values.

    ``series``: the extended index (status ``projected`` on the new periods; earlier
    statuses kept). ``rates``: year label -> annual rate used. ``first``/``last``: labels
    of the first and last projected period.
    """

    series: Series
    rates: Mapping[str, float]
    first: str
    last: str
    year_frequency: Frequency
    warnings: tuple[Problem, ...] = ()

    def method_note(self) -> tuple[str, ...]:
        rates = ", ".join(f"{y}: {100 * r:.2f}%" for y, r in self.rates.items())
        return (
            f"{self.series.name} projected from {self.first} to {self.last} with assumed "
            f"annual rates ({rates}); each period grows by (1 + rate)^(1/"
            f"{self.series.frequency.periods_per_year}).",
            "Projected values are assumptions, not measurements.",
        )

    def table(self) -> pd.DataFrame:
        """Long layout (series, period, value, unit, status) that the intake reads back
        with the index's name, unit and statuses intact."""
        return self.series.to_long_frame()


def _year_frequency(freq: Frequency, year_frequency: Frequency | None,
                    fy_start: int | None = None, keys: Sequence[object] = ()) -> Frequency:
    if year_frequency is not None:
        return year_frequency
    if freq.is_fiscal:
        return Frequency("FY", freq.fy_start)
    if fy_start is not None and fy_start != 1 and any(_is_fiscal_key(k, fy_start)
                                                      for k in keys):
        return Frequency("FY", fy_start)
    return ANNUAL


def _is_fiscal_key(key: object, fy_start: int) -> bool:
    from .errors import RealbasisError

    try:
        return parse_span(str(key).strip(), fy_start).frequency.code == "FY"
    except RealbasisError:
        return False


def project(
    index: Series,
    rate: RateGiven | Mapping[str | int, RateGiven],
    *,
    until: str | pd.Period,
    year_frequency: Frequency | None = None,
    fy_start: int | None = None,
    bare: RateUnit = "fraction",
) -> Projection:
    """Extend ``index`` to ``until`` (any period label or span; its last period counts)
    with ``rate`` or a mapping year label -> rate.

    A rate is a number or text read by :func:`parse_rate`: ``'2.5%'`` always means
    2.5 % a year; a bare number is a fraction (0.025) unless ``bare="percent"`` (a field
    that asks for percent a year, where ``2.5`` means 2.5 %). An out-of-range rate is
    refused (WS202) showing the rate as it was given.

    ``fy_start`` (the workspace's fiscal year) reads fiscal labels in ``until`` and in
    the rate keys (``FY2030``, ``2029-30``) for an index that is not itself fiscal; rates
    keyed by fiscal years then apply per fiscal year. Years are calendar years, or fiscal
    years for a fiscal index, or ``year_frequency`` (e.g. fiscal years starting July for
    a monthly index and a budget office's rates). Trailing missing values are projected
    too (from the last value present).
    """
    if index.kind != "index":
        raise fail(WS204, f"{index.name!r} is a {index.kind}, not a price index",
                   expected="an index series", found=index.kind, series=index.name,
                   fix="Project a price index; money series are deflated, not projected.")
    freq = index.frequency
    keys = list(rate) if isinstance(rate, Mapping) else []
    yf = _year_frequency(freq, year_frequency, fy_start, keys)
    present = index.values.dropna()
    if present.empty:
        raise fail(WS204, f"index {index.name!r} has no values", expected="at least one value",
                   found="none", series=index.name, fix="Load the index values first.")
    last_p = present.index[-1]
    span = parse_span(until, fy_start if fy_start is not None else (
        yf.fy_start if yf.code == "FY" else freq))
    end_month = pd.Period(ordinal=span.last_month, freq="M")
    end = end_month.asfreq(freq.pandas_freq)
    if end.asfreq("M", how="end") != end_month:
        end = end - 1  # the period containing the last month is not complete by then
    if end <= last_p:
        raise fail(WS203, "nothing to project", expected=f"an end after {freq.label(last_p)}",
                   found=span.label, series=index.name,
                   fix="Give a later end period (e.g. the last budget out-year).")
    new_idx = pd.period_range(last_p + 1, end, freq=freq.pandas_freq)
    years = new_idx.asfreq(yf.pandas_freq, how="end")
    ylabels = yf.labels(years)
    rates_by_year: dict[str, float] = {}
    shown: dict[str, RateGiven] = {}
    if isinstance(rate, Mapping):
        given = {}
        for k, v in rate.items():
            label = _year_label(k, yf, fy_start)
            given[label] = parse_rate(v, bare=bare)
            shown[label] = v
        missing = sorted(set(ylabels) - set(given))
        if missing:
            raise fail(WS201, "no assumed rate for some projected years",
                       expected="a rate for each of " + ", ".join(dict.fromkeys(ylabels)),
                       found="none for " + ", ".join(missing), series=index.name,
                       fix="Give a rate for every out-year, or one rate for all.")
        rates_by_year = {y: given[y] for y in dict.fromkeys(ylabels)}
    else:
        one = parse_rate(rate, bare=bare)
        rates_by_year = dict.fromkeys(dict.fromkeys(ylabels), one)
        shown = dict.fromkeys(rates_by_year, rate)
    for y, r in rates_by_year.items():
        if not np.isfinite(r) or r <= -1 or r > 1:
            per = f" for {y}" if isinstance(rate, Mapping) else ""
            raise fail(WS202, f"the assumed rate{per} is out of range",
                       expected="a rate a year above -100 % and at most 100 % (e.g. 2.5 %)",
                       found=_shown(shown[y], bare), series=index.name,
                       period=y if isinstance(rate, Mapping) else None,
                       fix=("Give the rate in percent a year (2.5 means 2.5 % a year); "
                            "rates above 100 % a year are refused." if bare == "percent" else
                            "Give the rate as a percent a year (2.5 %) or a fraction "
                            "(0.025); rates above 100 % a year are refused."),
                       remedy="projection_rate")
    per_period = np.array([(1 + rates_by_year[y]) ** (1 / freq.periods_per_year)
                           for y in ylabels])
    new_vals = float(present.iloc[-1]) * np.cumprod(per_period)
    kept = index.values[index.index <= last_p]
    values = pd.concat([kept, pd.Series(new_vals, index=new_idx)])
    values.index = pd.PeriodIndex(values.index, freq=freq.pandas_freq)
    values.name = index.values.name
    status = pd.concat([index.status_or_final()[index.index <= last_p],
                        pd.Series("projected", index=new_idx, dtype=object)])
    status.index = values.index
    first, last = freq.label(new_idx[0]), freq.label(new_idx[-1])
    note = f"projected {first} to {last} at assumed rates"
    out = index.with_values(values, status=status.astype(object), notes=(*index.notes, note))
    w = warn(WS205, f"{len(new_idx)} value(s) of {index.name!r} are projected",
             found=f"{first} to {last}", fix="Figures resting on them are assumptions.",
             series=index.name)
    return Projection(out, rates_by_year, first, last, yf, (w,))


def _year_label(key: str | int, yf: Frequency, fy_start: int | None = None) -> str:
    text = str(key).strip()
    span = parse_span(text, yf.fy_start if yf.code == "FY" else fy_start)
    if span.frequency.code not in ("A", "FY"):
        raise fail(WS201, f"rate key {text!r} is not a year", expected="a year such as 2027 or FY2027",
                   found=text, fix="Key the rates by year.")
    if yf.code == "FY" and span.frequency.code == "A":
        # a plain year number means the fiscal year ending in it
        return yf.label(pd.Period(year=span.start.year, freq=yf.pandas_freq))
    return yf.label(span.start.asfreq(yf.pandas_freq))


# ---------------------------------------------------------------------------------------
# Then-year <-> constant-year dollars


@dataclass(frozen=True, eq=False)
class BudgetConversion:
    """Amounts converted between then-year and constant-year dollars of ``base``.

    ``table``: ``series, period, then_year, constant, deflator_index, status`` where
    ``deflator_index`` is the index with base = 100 each amount was converted with and
    ``status`` the worst status of the index values used (projected out-years show);
    plus ``interpolated`` when a less frequent index was interpolated.
    """

    direction: str
    base: str
    table: pd.DataFrame
    deflation: DeflationResult
    warnings: tuple[Problem, ...] = ()

    def method_note(self) -> tuple[str, ...]:
        if self.direction == "to-constant":
            head = (f"Then-year dollars converted to constant {self.base} dollars: "
                    f"constant(t) = then(t) x I({self.base}) / I(t).")
        else:
            head = (f"Constant {self.base} dollars converted to then-year dollars: "
                    f"then(t) = constant(t) x I(t) / I({self.base}).")
        return (head, *self.deflation.method_note())


def to_constant(amounts: Sequence[Series], index: Series, base: str | pd.Period, *,
                to: Frequency | None = None, fy_start: int | None = None,
                interpolate: bool | str = False) -> BudgetConversion:
    """Then-year (nominal) amounts to constant dollars of ``base``: deflation by
    :func:`pipeline.deflate.deflate` with one index."""
    res = deflate(list(amounts), [index], base, to=to, fy_start=fy_start,
                  interpolate=interpolate)
    t = res.table(flags=res.has_interpolation)
    table = pd.DataFrame({"series": t["series"], "period": t["period"],
                          "then_year": t["nominal"], "constant": t["real"],
                          "deflator_index": t["deflator_index"], "status": t["status"]})
    if res.has_interpolation:
        table["interpolated"] = t["interpolated"].to_numpy()
    return BudgetConversion("to-constant", res.base_label, table, res, res.warnings)


def to_then_year(amounts: Sequence[Series], index: Series, base: str | pd.Period, *,
                 fy_start: int | None = None, interpolate: bool | str = False
                 ) -> BudgetConversion:
    """Constant-dollar amounts of ``base`` to then-year dollars:
    ``then(t) = constant(t) x I(t) / I(base)``, with ``I(t)/I(base)`` the index aligned
    and rebased by the same deflation engine (at the amounts' own periods)."""
    res = deflate(list(amounts), [index], base, fy_start=fy_start, interpolate=interpolate)
    t = res.table(flags=res.has_interpolation)
    then = t["nominal"] * t["deflator_index"] / 100.0
    table = pd.DataFrame({"series": t["series"], "period": t["period"],
                          "then_year": then, "constant": t["nominal"],
                          "deflator_index": t["deflator_index"], "status": t["status"]})
    if res.has_interpolation:
        table["interpolated"] = t["interpolated"].to_numpy()
    return BudgetConversion("to-then", res.base_label, table, res, res.warnings)
