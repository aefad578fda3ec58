"""Growth rates of money series and indexes, and the exact nominal/real/price split.

All rates are fractions (0.05 = 5 %); ``Growth.percent()`` gives percentages.

* period on period over n periods: x_t / x_{t-n} - 1
* annualised at m periods a year: (x_t / x_{t-n})^(m/n) - 1 (compound), or with
  ``log=True`` the continuously compounded rate (m/n) * ln(x_t / x_{t-n})
* year on year: x_t / x_{t-m} - 1 (the same period a year earlier)
* compound annual rate between any two periods: (x_end / x_start)^(1/years) - 1
* cumulative from a start period: x_t / x_start - 1
* the split is exact: (1 + nominal) = (1 + real)(1 + price), so
  real = (1 + nominal) / (1 + price) - 1, never nominal - price.

Lags are taken by period arithmetic (the value n periods earlier by the calendar), not by
position, so gaps never pair the wrong periods. Values are pandas Series or DataFrames on a
PeriodIndex (one column per series), or a :class:`pipeline.model.Series`.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any, Literal, TypeVar

import numpy as np
import pandas as pd

from .errors import Problem, fail, register, warn
from .model import Frequency, Series
from .periods import Span, frequency_of_period, parse_span

GR001 = register("GR001", "growth undefined where the earlier value is not positive")
GR002 = register("GR002", "growth period not in the data")
GR003 = register("GR003", "growth needs a period index")
GR004 = register("GR004", "the split needs two of nominal, real and price growth")
GR005 = register("GR005", "end period must come after the start period")
GR006 = register("GR006", "unknown growth measure")

Measure = Literal["period_on_period", "annualised", "year_on_year", "cumulative"]
Values = pd.Series | pd.DataFrame
T = TypeVar("T", float, np.ndarray, pd.Series, pd.DataFrame)


@dataclass(frozen=True, eq=False)
class Growth:
    """Growth rates (fractions) on the same PeriodIndex as the input; NaN where undefined.

    ``periods``: n periods apart; ``annualised``: raised to m/n; ``log``: continuously
    compounded; ``note``: the formula in words.
    """

    measure: Measure
    values: Values
    frequency: Frequency
    periods: int
    annualised: bool
    log: bool
    note: str
    warnings: tuple[Problem, ...] = ()

    def percent(self) -> Values:
        return self.values * 100.0


@dataclass(frozen=True)
class Rate:
    """A compound annual (or other single) rate between two periods."""

    value: float
    start: str
    end: str
    years: float
    note: str

    @property
    def percent(self) -> float:
        return self.value * 100.0


@dataclass(frozen=True, eq=False)
class Split:
    """Exact decomposition (1 + nominal) = (1 + real)(1 + price)."""

    nominal: float | np.ndarray | pd.Series | pd.DataFrame
    real: float | np.ndarray | pd.Series | pd.DataFrame
    price: float | np.ndarray | pd.Series | pd.DataFrame
    note: str = ("real growth = (1 + nominal growth) / (1 + price growth) - 1, exact; "
                 "not the difference of the two rates")


# --------------------------------------------------------------------------- helpers


def _unwrap(values: Values | Series, frequency: Frequency | None) -> tuple[Values, Frequency]:
    if isinstance(values, Series):
        return values.values, values.frequency
    if not isinstance(values.index, pd.PeriodIndex):
        raise fail(GR003, "growth rates need values on a period index",
                   expected="a pandas Series/DataFrame with a PeriodIndex",
                   found=type(values.index).__name__,
                   fix="Index the values by pandas Periods (see pipeline.periods).")
    if frequency is None:
        if len(values.index) == 0:
            raise fail(GR003, "no values to compute growth from", expected="values",
                       found="an empty series", fix="Give at least two periods.")
        frequency = frequency_of_period(values.index[0])
    return values, frequency


def _lagged(values: Values, n: int) -> Values:
    """The value n periods earlier by the calendar, aligned on ``values``' index."""
    idx = values.index
    if n == 0:
        return values
    prev = values.reindex(idx - n)
    prev.index = idx
    return prev


def ratio_to_rate(ratio: T, *, power: float = 1.0, log: bool = False) -> T:
    """ratio^power - 1, or power * ln(ratio) for a log rate; NaN where ratio <= 0."""
    with np.errstate(divide="ignore", invalid="ignore"):
        r = ratio.where(ratio > 0) if isinstance(ratio, pd.Series | pd.DataFrame) else \
            np.where(np.asarray(ratio) > 0, ratio, np.nan)
        if log:
            return power * np.log(r)  # type: ignore[return-value]
        return r ** power - 1.0  # type: ignore[return-value]


def _undefined_warning(values: Values, prev: Values, what: str) -> tuple[Problem, ...]:
    bad = (prev <= 0) | ((values < 0) & (prev > 0))
    n_bad = int(np.asarray(bad).sum())
    if not n_bad:
        return ()
    return (warn(GR001, f"{what} left blank for {n_bad} value(s): the earlier value is not "
                 "positive or the sign changes", expected="positive values at both ends",
                 found=f"{n_bad} pair(s) with zero or negative values",
                 fix="Growth rates of amounts that cross zero are not meaningful; compare "
                 "levels instead."),)


def _ratio(values: Values, prev: Values) -> Values:
    with np.errstate(divide="ignore", invalid="ignore"):
        out = values / prev
    return out.where((prev > 0) & (values >= 0))


# --------------------------------------------------------------------------- measures


def period_on_period(values: Values | Series, frequency: Frequency | None = None, *,
                     periods: int = 1, annualise: bool = False, log: bool = False) -> Growth:
    """Growth over ``periods`` periods; optionally annualised and/or as a log rate."""
    vals, freq = _unwrap(values, frequency)
    prev = _lagged(vals, periods)
    ratio = _ratio(vals, prev)
    m = freq.periods_per_year
    power = m / periods if annualise else 1.0
    rate = ratio_to_rate(ratio, power=power, log=log)
    if annualise and log:
        note = f"annualised log rate: ({m}/{periods}) x ln(x_t / x_t-{periods})"
    elif annualise:
        note = f"annualised: (x_t / x_t-{periods})^({m}/{periods}) - 1"
    elif log:
        note = f"log change: ln(x_t / x_t-{periods})"
    else:
        note = f"change over {periods} period(s): x_t / x_t-{periods} - 1"
    measure: Measure = "annualised" if annualise else "period_on_period"
    return Growth(measure, rate, freq, periods, annualise, log, note,
                  _undefined_warning(vals, prev, "growth"))


def annualised(values: Values | Series, frequency: Frequency | None = None, *,
               periods: int = 1, log: bool = False) -> Growth:
    """(x_t / x_{t-n})^(m/n) - 1 with m periods a year (BEA's "at an annual rate")."""
    return period_on_period(values, frequency, periods=periods, annualise=True, log=log)


def year_on_year(values: Values | Series, frequency: Frequency | None = None, *,
                 log: bool = False) -> Growth:
    """x_t / x_{t-m} - 1: against the same period a year earlier."""
    vals, freq = _unwrap(values, frequency)
    m = freq.periods_per_year
    g = period_on_period(vals, freq, periods=m, log=log)
    note = ("year on year: ln(x_t / x_same period a year earlier)" if log else
            "year on year: x_t / x_same period a year earlier - 1")
    return Growth("year_on_year", g.values, freq, m, False, log, note, g.warnings)


def cumulative(values: Values | Series, frequency: Frequency | None = None, *,
               start: str | pd.Period | None = None) -> Growth:
    """x_t / x_start - 1 from ``start`` (default: the first period)."""
    vals, freq = _unwrap(values, frequency)
    p0 = _period(vals, freq, start) if start is not None else vals.index[0]
    base = vals.loc[p0]
    with np.errstate(divide="ignore", invalid="ignore"):
        ratio = (vals / base).where(vals >= 0)
    if isinstance(vals, pd.DataFrame):
        ratio.loc[:, ~np.asarray(base > 0)] = np.nan
    elif not base > 0:
        ratio[:] = np.nan
    rate = ratio_to_rate(ratio)
    rate = rate[vals.index >= p0]
    return Growth("cumulative", rate, freq, 0, False, False,
                  f"cumulative since {freq.label(p0)}: x_t / x_{freq.label(p0)} - 1")


def _period(vals: Values, freq: Frequency, p: str | pd.Period | Span) -> pd.Period:
    if isinstance(p, pd.Period):
        period = p.asfreq(freq.pandas_freq, how="end") if p.freqstr != freq.pandas_freq else p
    else:
        span = parse_span(p, freq)
        if not span.is_single:
            raise fail(GR002, f"{span.label} is a range, not one period",
                       expected="one period label", found=span.label,
                       fix="Give a single period, e.g. FY2025 or 2024-06.")
        period = span.periods_in(freq)
        if len(period) != 1:
            raise fail(GR002, f"{span.label} is not one {freq.describe()} period",
                       expected=f"a {freq.describe()} period", found=span.describe(),
                       fix="Give a period of the data's own frequency.")
        period = period[0]
    if period not in vals.index:
        raise fail(GR002, f"{freq.label(period)} is not in the data",
                   expected="a period with a value",
                   found=f"data from {freq.label(vals.index[0])} to {freq.label(vals.index[-1])}",
                   period=freq.label(period), fix="Pick a period inside the data.")
    return period


def cagr(values: Values | Series, start: str | pd.Period, end: str | pd.Period,
         frequency: Frequency | None = None) -> Rate | pd.Series:
    """Compound annual growth rate between two periods: (x_end/x_start)^(1/years) - 1,
    years = (months from start to end) / 12. A DataFrame gives one rate per column
    (a pandas Series of rates)."""
    vals, freq = _unwrap(values, frequency)
    p0, p1 = _period(vals, freq, start), _period(vals, freq, end)
    if p1 <= p0:
        raise fail(GR005, f"end {freq.label(p1)} is not after start {freq.label(p0)}",
                   expected="an end period after the start period",
                   found=f"{freq.label(p0)} .. {freq.label(p1)}",
                   fix="Swap the periods.")
    years = (p1 - p0).n * freq.months_per_period / 12.0
    ratio = vals.loc[p1] / vals.loc[p0]
    note = (f"compound annual rate {freq.label(p0)} to {freq.label(p1)} "
            f"({years:g} years): (x_end / x_start)^(1/{years:g}) - 1")
    if isinstance(vals, pd.DataFrame):
        return ratio_to_rate(ratio.where(vals.loc[p0] > 0), power=1.0 / years)
    value = float(ratio_to_rate(np.float64(ratio) if vals.loc[p0] > 0 else np.float64(np.nan),
                                power=1.0 / years))
    return Rate(value, freq.label(p0), freq.label(p1), years, note)


def split(*, nominal: T | None = None, real: T | None = None,
          price: T | None = None) -> Split:
    """Given any two of nominal, real and price growth, the third, exactly:
    (1 + nominal) = (1 + real)(1 + price)."""
    given = [x is not None for x in (nominal, real, price)]
    if sum(given) != 2:
        raise fail(GR004, "give exactly two of nominal, real and price growth",
                   expected="two rates", found=f"{sum(given)} given",
                   fix="Pass nominal= and price= (or real=) growth.")
    if real is None:
        real = (1.0 + nominal) / (1.0 + price) - 1.0  # type: ignore[operator]
    elif price is None:
        price = (1.0 + nominal) / (1.0 + real) - 1.0  # type: ignore[operator]
    else:
        nominal = (1.0 + real) * (1.0 + price) - 1.0
    return Split(nominal, real, price)  # type: ignore[arg-type]


def lagged_ratio_wide(arr: np.ndarray, lag: int) -> np.ndarray:
    """Fast path for contiguous periods: arr[..., t, :] / arr[..., t-lag, :] - 1 along the
    period axis (-2), NaN for the first ``lag`` periods and where the earlier value is not
    positive. Works on (T, S) or (D, T, S) arrays such as DeflationResult.real."""
    a = np.asarray(arr, dtype=float)
    out = np.full(a.shape, np.nan)
    if a.shape[-2] > lag:
        cur = a[..., lag:, :]
        prev = a[..., :-lag, :]
        with np.errstate(divide="ignore", invalid="ignore"):
            out[..., lag:, :] = np.where((prev > 0) & (cur >= 0), cur / prev - 1.0, np.nan)
    return out


def growth_table(result: Any, series: str, deflator: str | int = 0, *,
                 measure: Measure = "year_on_year", periods: int = 1) -> pd.DataFrame:
    """Nominal, price and real growth of one series under one deflator, side by side.

    ``result`` is a :class:`pipeline.deflate.DeflationResult`. Price growth is that of
    the deflator as used (for aggregated periods the implicit deflator nominal / real);
    real growth is the exact split (1 + nominal) / (1 + price) - 1, which equals the
    growth of the real values themselves. Columns: period, nominal_growth, price_growth,
    real_growth, status (of the later period's real value). Fractions, not percent.
    """
    nominal = result.nominal_series(series)
    real = result.real_series(series, deflator)
    freq = result.frequency
    price = 100.0 * nominal / real

    def measure_of(v: pd.Series) -> pd.Series:
        if measure == "year_on_year":
            return year_on_year(v, freq).values
        if measure == "annualised":
            return annualised(v, freq, periods=periods).values
        if measure == "cumulative":
            return cumulative(v, freq).values
        return period_on_period(v, freq, periods=periods).values

    n_g, p_g = measure_of(nominal), measure_of(price)
    r_g = split(nominal=n_g, price=p_g).real
    status = result.status_frame(deflator)[series].reindex(nominal.index)
    return pd.DataFrame({
        "period": freq.labels(nominal.index),
        "nominal_growth": n_g.to_numpy(),
        "price_growth": p_g.to_numpy(),
        "real_growth": np.asarray(r_g),
        "status": status.to_numpy(),
    })


# --------------------------------------------------------------------------- split table

SPLIT_COLUMNS: tuple[str, ...] = (
    "series", "deflator", "measure", "start", "end", "nominal_pct", "price_pct", "real_pct",
)
SPLIT_MEASURES: tuple[str, ...] = ("period", "annualised", "yoy", "cagr", "cumulative")
_LAGGED = ("period", "annualised", "yoy")


@dataclass(frozen=True, eq=False)
class SplitTable:
    """Nominal, price and real growth of every series under every deflator, in percent.

    ``table`` has EXACTLY the columns :data:`SPLIT_COLUMNS`, one row per series x
    deflator x measure x period (``cagr`` and ``cumulative`` one row each, first to last
    period), ordered that way; the split is exact: (1 + nominal) = (1 + real)(1 + price).
    """

    table: pd.DataFrame
    frequency: Frequency
    method: tuple[str, ...]
    warnings: tuple[Problem, ...] = ()

    def method_note(self) -> tuple[str, ...]:
        return self.method


def split_table(result: Any, *, nominal: np.ndarray | None = None,
                real: np.ndarray | None = None,
                measures: tuple[str, ...] = SPLIT_MEASURES, adjusted: bool = False
                ) -> SplitTable:
    """Growth of every series of a :class:`pipeline.deflate.DeflationResult` under every
    deflator, split exactly into price and real growth (vectorised over deflators x
    periods x series).

    Measures: ``period`` (on the period before), ``annualised`` ((x_t / x_t-1)^m - 1 with
    m periods a year), ``yoy`` (on the same period a year earlier), ``cagr`` (compound
    annual rate first to last period) and ``cumulative`` (first to last period). Price
    growth is that of the deflator as used (the implicit deflator nominal / real for
    aggregated periods), so real = (1 + nominal) / (1 + price) - 1 is the growth of the
    real values themselves. ``nominal`` (T, S) and ``real`` (D, T, S) replace the result's
    values (e.g. seasonally adjusted ones; say so with ``adjusted=True``)."""
    freq: Frequency = result.frequency
    periods: pd.PeriodIndex = result.periods
    nom = np.asarray(result.nominal if nominal is None else nominal, dtype=float)
    rea = np.asarray(result.real if real is None else real, dtype=float)
    names = list(result.series_names)
    dnames = list(result.deflator_names)
    labels = np.array(freq.labels(periods), dtype=object)
    if len(periods) > 1:  # lags go by the calendar: put the rows on the full range
        from .periods import full_range

        full = full_range(periods, freq)
        if len(full) != len(periods):
            pos = full.get_indexer(periods)
            n2 = np.full((len(full), nom.shape[1]), np.nan)
            n2[pos] = nom
            r2 = np.full((rea.shape[0], len(full), rea.shape[2]), np.nan)
            r2[:, pos] = rea
            nom, rea, periods = n2, r2, full
            labels = np.array(freq.labels(full), dtype=object)
    d_n, t_n, s_n = rea.shape
    m = freq.periods_per_year
    unknown = [x for x in measures if x not in SPLIT_MEASURES]
    if unknown or not measures:
        raise fail(GR006, f"unknown growth measure {unknown[0] if unknown else '(none)'!r}",
                   expected=" | ".join(SPLIT_MEASURES), found=", ".join(unknown) or "none",
                   fix="Choose among period, annualised, yoy, cagr and cumulative.")
    present = ~np.isnan(nom)[None, :, :] & ~np.isnan(rea)  # (D, T, S)
    nom_d = np.broadcast_to(nom[None, :, :], rea.shape)
    blocks: list[tuple[str, np.ndarray, np.ndarray, np.ndarray, np.ndarray, np.ndarray]] = []
    for measure in measures:
        if measure in _LAGGED:
            lag = m if measure == "yoy" else 1
            g_n = lagged_ratio_wide(nom_d, lag)
            g_r = lagged_ratio_wide(rea, lag)
            if measure == "annualised":
                g_n = ratio_to_rate(1.0 + g_n, power=float(m))
                g_r = ratio_to_rate(1.0 + g_r, power=float(m))
            keep = np.zeros(rea.shape, dtype=bool)
            if t_n > lag:
                keep[:, lag:] = present[:, lag:] & present[:, :-lag]
            t_idx = np.broadcast_to(np.arange(t_n)[None, :, None], rea.shape)
            blocks.append((measure, g_n, g_r, t_idx - lag, t_idx, keep))
            continue
        # first to last period with a value, per deflator and series
        has = present.any(axis=1)  # (D, S)
        first = np.argmax(present, axis=1)
        last = t_n - 1 - np.argmax(present[:, ::-1], axis=1)
        keep1 = has & (last > first)
        di, si = np.indices((d_n, s_n))
        with np.errstate(divide="ignore", invalid="ignore"):
            n0, n1 = nom[first, si], nom[last, si]
            r0, r1 = rea[di, first, si], rea[di, last, si]
            rn = np.where((n0 > 0) & (n1 >= 0), n1 / n0, np.nan)
            rr = np.where((r0 > 0) & (r1 >= 0), r1 / r0, np.nan)
            years = (last - first) * freq.months_per_period / 12.0
            power = np.where(years > 0, 1.0 / np.where(years > 0, years, 1.0), np.nan) \
                if measure == "cagr" else 1.0
            g_n, g_r = rn ** power - 1.0, rr ** power - 1.0
        blocks.append((measure, g_n[:, None, :], g_r[:, None, :], first[:, None, :],
                       last[:, None, :], keep1[:, None, :]))
    # rows ordered series, deflator, measure, period: (S, D, K) with K slots per pair
    def stack(i: int) -> np.ndarray:
        return np.concatenate([np.asarray(b[i]).transpose(2, 0, 1) for b in blocks], axis=2)

    codes = np.concatenate([np.full(b[1].shape[1], j) for j, b in enumerate(blocks)])
    sel = np.nonzero(stack(5).astype(bool))
    n_rate, r_rate = stack(1)[sel], stack(2)[sel]
    p_rate = split(nominal=n_rate, real=r_rate).price
    a_idx, b_idx = stack(3)[sel].astype(np.intp), stack(4)[sel].astype(np.intp)
    measure_names = np.array([b[0] for b in blocks], dtype=object)
    table = pd.DataFrame({
        "series": pd.array(np.asarray(names, dtype=object)[sel[0]], dtype="str"),
        "deflator": pd.array(np.asarray(dnames, dtype=object)[sel[1]], dtype="str"),
        "measure": pd.array(measure_names[codes[sel[2]]], dtype="str"),
        "start": pd.array(labels[a_idx], dtype="str"),
        "end": pd.array(labels[b_idx], dtype="str"),
        "nominal_pct": 100.0 * n_rate,
        "price_pct": 100.0 * np.asarray(p_rate),
        "real_pct": 100.0 * r_rate,
    }, columns=list(SPLIT_COLUMNS))
    undefined = int(np.isnan(table["nominal_pct"].to_numpy()).sum()
                    + np.isnan(table["real_pct"].to_numpy()).sum())
    warnings = () if not undefined else (warn(
        GR001, f"{undefined} growth rate(s) left blank: an earlier value is not positive or "
        "the sign changes", expected="positive values at both ends of each span",
        found=f"{undefined} rate(s) undefined",
        fix="Growth rates of amounts that cross zero are not meaningful; compare levels "
        "instead."),)
    values = "seasonally adjusted values" if adjusted else "values as deflated"
    method = (
        f"Growth of the {values}, in percent, {freq.describe()} (m = {m} periods a year); "
        "columns start and end name the two periods compared.",
        "period: x_t / x_t-1 - 1; annualised: (x_t / x_t-1)^m - 1; yoy: x_t / x_t-m - 1 "
        "(the same period a year earlier); cagr: (x_last / x_first)^(1/years) - 1; "
        "cumulative: x_last / x_first - 1 (first and last period with a value).",
        "nominal_pct is the growth of the nominal amount, real_pct that of the real value, "
        "price_pct that of the deflator as used (for aggregated periods the implicit "
        "deflator nominal / real); the split is exact: (1 + nominal) = (1 + real) x "
        "(1 + price), so real growth is not nominal minus price growth.",
    )
    return SplitTable(table, freq, method, warnings)
