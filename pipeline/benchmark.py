"""Benchmarking and interpolation that keep the averages (or sums): proportional Denton.

IMF Quarterly National Accounts Manual (2017), ch. 6 "Benchmarking and Reconciliation":
the proportional Denton method finds the high-frequency series X that moves as closely
as possible like an indicator I while each low-frequency period's aggregate of X equals
its benchmark A:

    minimise  sum_t (X_t / I_t - X_{t-1} / I_{t-1})^2
    subject to  aggregate of X over each benchmark period = A   (sum, or average)

Two jobs use it:

* :func:`benchmark` -- a monthly or quarterly indicator brought to annual (or quarterly)
  values: averages for indexes, sums for flows. Indicator periods beyond the first or
  last benchmark are extrapolated with the first or last benchmark-to-indicator ratio
  (the manual's basic treatment) and flagged.
* :func:`interpolate` -- an annual or quarterly index turned into monthly (or quarterly)
  values whose average over each published period equals the published value, with no
  indicator (a flat one: the smoothest path) or along a more frequent indicator index.
  The deflation engine uses it when it is allowed to interpolate a less frequent
  deflator (``method="denton"``, the default); ``method="linear"`` is the older
  straight-line interpolation (:func:`pipeline.periods.interpolate_index`).

The arithmetic is statsmodels' ``statsmodels.tsa.interp.dentonm`` (the proportional
first-difference penalty, with the first value free). As checked on statsmodels 0.15:
it constrains *sums* of k consecutive periods only (averages are benchmarked by passing k
times the average, which is the same problem); the indicator must start on the first
sub-period of the first benchmark (it does not extrapolate backwards) and indicator
values after the last benchmark are extrapolated with the last ratio; it does not check
for missing, zero or non-positive indicator values and squeezes a 2-D indicator, so
this module checks the inputs, calls it one series at a time on the benchmarked span
and extrapolates both ends itself. Its dense linear system is fast for decades of
months. Each benchmarked block is finally multiplied by benchmark / aggregate, which
only removes floating-point residue, so the aggregates hold to rounding.

Status: a benchmarked or interpolated value takes the worst status of the indicator
value of its period, of the benchmark of its period and of the benchmarks just before
and after it (Denton spreads a revision of one benchmark into the neighbouring
periods).
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Literal

import numpy as np
import pandas as pd

from .errors import Problem, fail, register, warn
from .model import Frequency, Series
from .periods import (
    PE201,
    PE206,
    PE208,
    Converted,
    check_index,
    first_months,
    ranks_to_status,
    relation,
    status_ranks,
)

PE230 = register("PE230", "indicator and benchmark frequencies do not fit")
PE231 = register("PE231", "indicator missing or not positive inside the benchmarked span")
PE232 = register("PE232", "benchmarks have a gap")
PE233 = register("PE233", "no benchmark period is covered by the indicator")
PE234 = register("PE234", "aggregation rule not known")
PE235 = register("PE235", "values extrapolated beyond the benchmarks")
PE236 = register("PE236", "benchmarks outside the indicator's span left out")
PE237 = register("PE237", "interpolation method not known")

Aggregation = Literal["average", "sum"]
AGGREGATIONS: tuple[Aggregation, ...] = ("average", "sum")
METHODS: tuple[str, ...] = ("denton", "linear")
DEFAULT_METHOD = "denton"
SOURCE = "IMF Quarterly National Accounts Manual 2017, ch. 6"


# --------------------------------------------------------------------------- the solver


def denton_array(indicator: np.ndarray, benchmarks: np.ndarray, k: int,
                 aggregation: Aggregation = "sum") -> np.ndarray:
    """Proportional Denton on plain arrays: ``indicator`` holds exactly ``k`` values per
    benchmark (n = k * m, all positive), ``benchmarks`` the m low-frequency values.
    Returns the n benchmarked values; each block of k sums (``"sum"``) or averages
    (``"average"``) to its benchmark."""
    from statsmodels.tsa.interp import dentonm

    ind = np.asarray(indicator, dtype=float)
    bench = np.asarray(benchmarks, dtype=float)
    m = len(bench)
    if len(ind) != k * m or m == 0:
        raise ValueError("indicator must hold k values per benchmark")
    totals = bench * k if aggregation == "average" else bench
    if m == 1:  # one benchmark: the indicator scaled to it (the problem's exact solution)
        x = ind * (totals[0] / ind.sum())
    else:
        freq = {4: "aq", 3: "qm"}.get(k, "other")
        x = np.asarray(dentonm(ind, totals, freq=freq, k=k), dtype=float).reshape(-1)
    # remove the linear solver's floating-point residue block by block
    block = x.reshape(m, k)
    sums = block.sum(axis=1)
    with np.errstate(divide="ignore", invalid="ignore"):
        scale = np.where(sums != 0, totals / sums, 1.0)
    return (block * scale[:, None]).reshape(-1)


# --------------------------------------------------------------------------- helpers


def _sub_positions(high: pd.PeriodIndex, low: pd.PeriodIndex, low_freq: Frequency) -> np.ndarray:
    """For each high-frequency period, the position of the low-frequency period it lies in
    (-1 when outside ``low``)."""
    owner = high.asfreq(low_freq.pandas_freq, how="end")
    return np.asarray(low.get_indexer(owner))


def _runs(mask: np.ndarray) -> list[tuple[int, int]]:
    """(start, stop) of each run of True in ``mask``."""
    out = []
    i, n = 0, len(mask)
    while i < n:
        if mask[i]:
            j = i
            while j < n and mask[j]:
                j += 1
            out.append((i, j))
            i = j
        else:
            i += 1
    return out


def _describe(labels: list[str]) -> str:
    from .periods import describe_ranges

    return describe_ranges(labels)


def _neighbour_ranks(ranks: np.ndarray) -> np.ndarray:
    """Worst rank of each value and its neighbours before and after."""
    r = ranks.astype(np.int8)
    if len(r) < 2:
        return r
    out = r.copy()
    out[1:] = np.maximum(out[1:], r[:-1])
    out[:-1] = np.maximum(out[:-1], r[1:])
    return out


def _aligned_indicator(indicator: Series, target: Frequency, name: str) -> Series:
    """The indicator at ``target`` frequency: as is, or averaged from a finer one."""
    rel = relation(indicator.frequency, target)
    if rel == "same":
        if indicator.frequency == target:
            return indicator
        vals = indicator.values.copy()
        vals.index = indicator.index.asfreq(target.pandas_freq, how="end")
        st = None if indicator.status is None else pd.Series(
            indicator.status.to_numpy(), index=vals.index, dtype=object)
        return indicator.with_values(vals, frequency=target, status=st)
    if rel == "coarser":
        from .periods import to_frequency

        return to_frequency(indicator.with_values(indicator.values, kind="index"), target,
                            rule="mean").series
    raise fail(PE230, f"indicator {indicator.name!r} ({indicator.frequency.describe()}) "
               f"cannot guide {name!r} to {target.describe()}",
               expected=f"an indicator at {target.describe()} or more frequent, aligned with it",
               found=indicator.frequency.describe(), series=indicator.name,
               fix="Use an indicator at least as frequent as the result.")


# --------------------------------------------------------------------------- benchmark


@dataclass(frozen=True, eq=False)
class Benchmarked:
    """An indicator benchmarked to low-frequency values by proportional Denton.

    ``series``: the benchmarked values at the indicator's frequency, named and stated
    like the benchmarks (the quantity benchmarked; the indicator only guides its path),
    with per-period status. ``extrapolated``: True for periods
    before the first or after the last benchmark period (carried by the first or last
    benchmark-to-indicator ratio). ``ratio``: the benchmark-to-indicator ratio X / I.
    ``used``: the benchmark periods the result rests on (labels).
    """

    series: Series
    indicator: Series
    benchmarks: Series
    aggregation: Aggregation
    extrapolated: pd.Series
    ratio: pd.Series
    used: tuple[str, ...]
    warnings: tuple[Problem, ...] = ()

    def method_note(self) -> tuple[str, ...]:
        f_hi, f_lo = self.series.frequency, self.benchmarks.frequency
        word = "average" if self.aggregation == "average" else "sum"
        notes = [
            f"{self.series.name}: {self.indicator.name!r} ({f_hi.describe()}) benchmarked to "
            f"{self.benchmarks.name!r} ({f_lo.describe()}) by the proportional Denton "
            f"method ({SOURCE}): the result moves as closely as possible like the "
            f"indicator (its ratio to the indicator changes as little as possible from one "
            f"period to the next) while its {word} over each benchmark period "
            f"({f_lo.describe()}) equals the benchmark.",
            f"Benchmark periods used: {self.used[0]} to {self.used[-1]} ({len(self.used)}).",
        ]
        n_ex = int(self.extrapolated.sum())
        if n_ex:
            notes.append(f"{n_ex} period(s) outside the benchmarks carried by the nearest "
                         "benchmark-to-indicator ratio (extrapolated; they will move when "
                         "a benchmark for them arrives).")
        notes.append("Status: each value takes the worst status of its indicator value, the "
                     "benchmark of its period and the benchmarks next to it.")
        return tuple(notes)

    def table(self) -> pd.DataFrame:
        """``period, value, extrapolated, status``."""
        s = self.series
        return pd.DataFrame({
            "period": s.frequency.labels(s.index),
            "value": s.values.to_numpy(),
            "extrapolated": self.extrapolated.to_numpy(dtype=bool),
            "status": s.status_or_final().to_numpy(dtype=object),
        })


def default_aggregation(benchmarks: Series) -> Aggregation:
    """Averages for indexes, sums for flows; a stock has no default (PE234)."""
    if benchmarks.kind == "index":
        return "average"
    if benchmarks.kind == "flow":
        return "sum"
    raise fail(PE234, f"{benchmarks.name!r} is a stock: its longer-period values are neither "
               "averages nor sums of the shorter periods", expected="averages or sums",
               found="kind 'stock'", series=benchmarks.name,
               fix="Say whether the longer-period values are averages or sums of the shorter "
               "periods.")


def benchmark(indicator: Series, benchmarks: Series, *,
              aggregation: Aggregation | None = None, name: str | None = None) -> Benchmarked:
    """Benchmark ``indicator`` (monthly or quarterly) to ``benchmarks`` (quarterly, annual
    or fiscal years) by proportional Denton.

    ``aggregation``: ``"average"`` (each benchmark is the average of its sub-periods:
    indexes) or ``"sum"`` (flows); default from the benchmarks' kind. Benchmark periods
    the indicator does not fully cover are left out (PE236); indicator periods outside
    the benchmarks are extrapolated and flagged (PE235). Errors: PE230 frequencies that do
    not nest, PE231 a missing or non-positive indicator value inside the benchmarked
    span, PE232 a gap between benchmarks, PE233 nothing to benchmark."""
    check_index(indicator)
    check_index(benchmarks)
    agg = aggregation or default_aggregation(benchmarks)
    if agg not in AGGREGATIONS:
        raise fail(PE234, f"aggregation {agg!r} not known", expected="average or sum",
                   found=repr(agg), series=benchmarks.name,
                   fix="Say whether the benchmarks are averages or sums.")
    f_hi, f_lo = indicator.frequency, benchmarks.frequency
    if relation(f_hi, f_lo) != "coarser":
        raise fail(PE230, f"{indicator.name!r} ({f_hi.describe()}) cannot be benchmarked to "
                   f"{benchmarks.name!r} ({f_lo.describe()})",
                   expected="benchmarks of a longer period made of whole indicator periods",
                   found=f"{f_hi.describe()} indicator, {f_lo.describe()} benchmarks",
                   series=indicator.name,
                   fix="Use benchmarks for longer periods than the indicator's, aligned with "
                   "them (e.g. calendar or fiscal years for a monthly indicator).")
    k = f_lo.months_per_period // f_hi.months_per_period
    warnings: list[Problem] = []
    b = benchmarks.values.dropna()
    ind = indicator.values.dropna()
    if b.empty or ind.empty:
        raise fail(PE233, "nothing to benchmark", expected="indicator and benchmark values",
                   found=f"{len(ind)} indicator and {len(b)} benchmark value(s)",
                   series=indicator.name, fix="Give both series with values.")
    # benchmark periods inside the indicator's span are used (and must be complete);
    # those reaching before its first or after its last value are left out
    low_idx = b.index
    full_lo = pd.period_range(low_idx[0], low_idx[-1], freq=f_lo.pandas_freq)
    first = pd.Period(ordinal=int(first_months(full_lo[:1])[0]), freq="M").asfreq(
        f_hi.pandas_freq)
    hi_idx = pd.period_range(first, periods=k * len(full_lo), freq=f_hi.pandas_freq)
    hi_vals = indicator.values.reindex(hi_idx).to_numpy(dtype=float)
    ok = np.isfinite(hi_vals) & (hi_vals > 0)
    b_vals = benchmarks.values.reindex(full_lo).to_numpy(dtype=float)
    inside = ((hi_idx >= ind.index[0]) & (hi_idx <= ind.index[-1])).reshape(
        len(full_lo), k).all(axis=1)
    inside_pos = np.flatnonzero(inside & np.isfinite(b_vals))
    if not len(inside_pos):
        raise fail(PE233, f"no benchmark period of {benchmarks.name!r} is covered by "
                   f"{indicator.name!r}",
                   expected="indicator values for every sub-period of at least one benchmark",
                   found=f"indicator {f_hi.label(ind.index[0])}..{f_hi.label(ind.index[-1])}, "
                   f"benchmarks {f_lo.label(low_idx[0])}..{f_lo.label(low_idx[-1])}",
                   series=indicator.name, fix="Give an indicator covering the benchmark "
                   "periods.")
    r0, r1 = int(inside_pos[0]), int(inside_pos[-1]) + 1
    lo_labels = f_lo.labels(full_lo)
    missing_b = [lo_labels[i] for i in range(r0, r1) if np.isnan(b_vals[i])]
    if missing_b:
        raise fail(PE232, f"benchmarks of {benchmarks.name!r} have a gap",
                   expected="a benchmark for every period between the first and the last",
                   found=f"missing {_describe(missing_b)}", series=benchmarks.name,
                   period=missing_b[0], fix="Supply the missing benchmark values, or "
                   "benchmark each stretch separately.")
    bad = np.flatnonzero(~ok[r0 * k:r1 * k]) + r0 * k
    if len(bad):
        labs = f_hi.labels(hi_idx[bad])
        raise fail(PE231, f"{indicator.name!r} is missing or not positive inside the "
                   "benchmarked span", expected="a positive indicator value in every period",
                   found=f"{_describe(labs)}", series=indicator.name, period=labs[0],
                   fix="Fill the missing indicator values (proportional benchmarking needs "
                   "positive values).")
    left_out = [lo_labels[i] for i in range(len(full_lo)) if not r0 <= i < r1
                and not np.isnan(b_vals[i])]
    if left_out:
        warnings.append(warn(PE236, f"{len(left_out)} benchmark period(s) of "
                        f"{benchmarks.name!r} are not fully covered by the indicator and "
                        "were left out", found=_describe(left_out), series=benchmarks.name,
                        fix="Extend the indicator to those periods to use them."))
    used_lo = full_lo[r0:r1]
    span = hi_idx[r0 * k:r1 * k]
    x_span = denton_array(hi_vals[r0 * k:r1 * k],
                          benchmarks.values.reindex(used_lo).to_numpy(dtype=float), k, agg)
    ratio_span = x_span / hi_vals[r0 * k:r1 * k]
    # the whole indicator range, extrapolated at both ends
    out_idx = ind.index.union(span)
    out_idx = pd.period_range(out_idx[0], out_idx[-1], freq=f_hi.pandas_freq)
    iv = indicator.values.reindex(out_idx).to_numpy(dtype=float)
    pos = out_idx.get_indexer(span)
    x = np.full(len(out_idx), np.nan)
    ratio = np.full(len(out_idx), np.nan)
    x[pos] = x_span
    ratio[pos] = ratio_span
    before = np.arange(len(out_idx)) < pos[0]
    after = np.arange(len(out_idx)) > pos[-1]
    ratio[before] = ratio_span[0]
    ratio[after] = ratio_span[-1]
    x[before | after] = iv[before | after] * ratio[before | after]
    extrap = (before | after) & np.isfinite(x)
    keep = np.isfinite(x)
    if extrap.any():
        labs = f_hi.labels(out_idx[extrap])
        warnings.append(warn(PE235, f"{int(extrap.sum())} period(s) of {indicator.name!r} "
                        "lie outside the benchmarks and were extrapolated",
                        found=_describe(labs), series=indicator.name,
                        fix="Treat them as provisional: they move when benchmarks for them "
                        "arrive."))
    # status: own indicator value, own benchmark and its neighbours
    ind_r = pd.Series(status_ranks(indicator), index=indicator.index).reindex(
        out_idx).fillna(0).to_numpy(dtype=np.int8)
    b_r = _neighbour_ranks(pd.Series(status_ranks(benchmarks), index=benchmarks.index)
                           .reindex(used_lo).fillna(0).to_numpy(dtype=np.int8))
    owner = _sub_positions(out_idx, used_lo, f_lo)
    owner = np.where(before, 0, np.where(after, len(used_lo) - 1, owner))
    ranks = np.maximum(ind_r, b_r[np.clip(owner, 0, len(used_lo) - 1)])
    status = None
    if indicator.status is not None or benchmarks.status is not None:
        status = pd.Series(ranks_to_status(ranks[keep]), index=out_idx[keep], dtype=object)
    values = pd.Series(x[keep], index=out_idx[keep], name=name or benchmarks.name)
    kind = benchmarks.kind if benchmarks.kind != "stock" else indicator.kind
    result = indicator.with_values(
        values, name=name or benchmarks.name, kind=kind, unit=benchmarks.unit or indicator.unit,
        status=status, reference=benchmarks.reference or indicator.reference,
        vintage=benchmarks.vintage or indicator.vintage,
        notes=(*indicator.notes, f"benchmarked to {benchmarks.name}"))
    return Benchmarked(
        series=result, indicator=indicator, benchmarks=benchmarks, aggregation=agg,
        extrapolated=pd.Series(extrap[keep], index=out_idx[keep]),
        ratio=pd.Series(ratio[keep], index=out_idx[keep]),
        used=tuple(f_lo.labels(used_lo)), warnings=tuple(warnings))


# --------------------------------------------------------------------------- interpolate


def check_method(method: object) -> str:
    """The interpolation method by name (``denton`` or ``linear``); PE237 otherwise."""
    text = str(method).strip().lower()
    if text not in METHODS:
        raise fail(PE237, f"interpolation method {method!r} not known",
                   expected=" or ".join(METHODS), found=repr(method),
                   fix="Choose Denton (keeps each period's average) or linear.")
    return text


def interpolate(series: Series, target: Frequency, *, method: str = DEFAULT_METHOD,
                indicator: Series | None = None) -> Converted:
    """Interpolate an index to shorter periods (annual or quarterly to monthly, annual to
    quarterly). ``method="denton"`` (default): proportional Denton, so that the average of
    the new values over each original period equals the original value; with no
    ``indicator`` the path is the smoothest one, with one it moves like the indicator.
    ``method="linear"``: straight lines between mid-period values
    (:func:`pipeline.periods.interpolate_index`; no indicator). Every value is flagged
    as interpolated (``Converted.interpolated``) and a PE208 warning says so."""
    method = check_method(method)
    if method == "linear":
        from .periods import interpolate_index

        return interpolate_index(series, target)
    src = series.frequency
    name = series.name
    if series.kind != "index":
        raise fail(PE206, f"{name!r} is a {series.kind}; only price indexes are interpolated",
                   expected="an index series", found=series.kind, series=name,
                   fix="Show the money series at a longer period instead.",
                   remedy="result_frequency")
    if relation(src, target) != "finer":
        raise fail(PE201, f"cannot interpolate {src.describe()} to {target.describe()}",
                   expected="a target whose periods nest in the source periods",
                   found=f"{src.describe()} -> {target.describe()}", series=name,
                   fix="Choose an aligned target frequency.")
    check_index(series)
    v = series.values.dropna()
    if v.empty:
        from .periods import PE205

        raise fail(PE205, f"{name!r} has no values to interpolate",
                   expected="at least one index value", found="0", series=name,
                   fix="Supply index values.")
    k = src.months_per_period // target.months_per_period
    full = pd.period_range(v.index[0], v.index[-1], freq=src.pandas_freq)
    vals = series.values.reindex(full).to_numpy(dtype=float)
    present = np.isfinite(vals)
    first = pd.Period(ordinal=int(first_months(full[:1])[0]), freq="M").asfreq(
        target.pandas_freq)
    tidx = pd.period_range(first, periods=k * len(full), freq=target.pandas_freq)
    guide = np.ones(len(tidx))
    ind_r = np.zeros(len(tidx), dtype=np.int8)
    ind_words = "with no indicator (the smoothest path)"
    if indicator is not None:
        check_index(indicator)
        aligned = _aligned_indicator(indicator, target, name)
        g = aligned.values.reindex(tidx).to_numpy(dtype=float)
        need = np.repeat(present, k)
        bad = need & ~(np.isfinite(g) & (g > 0))
        if bad.any():
            labs = target.labels(tidx[bad])
            raise fail(PE231, f"indicator {indicator.name!r} is missing or not positive where "
                       f"{name!r} is interpolated", expected="a positive indicator value in "
                       f"every {target.describe()} period of the interpolated span",
                       found=_describe(labs), series=indicator.name, period=labs[0],
                       fix="Extend or fill the indicator, or interpolate with no indicator.")
        guide = np.where(need, g, 1.0)
        ind_r = pd.Series(status_ranks(aligned), index=aligned.index).reindex(
            tidx).fillna(0).to_numpy(dtype=np.int8)
        ind_words = f"along the movement of {indicator.name!r}"
    out = np.full(len(tidx), np.nan)
    for a, b in _runs(present):
        out[a * k:b * k] = denton_array(guide[a * k:b * k], vals[a:b], k, "average")
    src_r = pd.Series(status_ranks(series), index=series.index).reindex(full).fillna(0)
    src_r = src_r.to_numpy(dtype=np.int8)
    run_r = np.zeros(len(full), dtype=np.int8)
    for a, b in _runs(present):
        run_r[a:b] = _neighbour_ranks(src_r[a:b])
    ranks = np.maximum(np.repeat(run_r, k), ind_r)
    keep = np.isfinite(out)
    tkeep = tidx[keep]
    status = None
    if series.status is not None or (indicator is not None and indicator.status is not None):
        status = pd.Series(ranks_to_status(ranks[keep]), index=tkeep, dtype=object)
    new = series.with_values(pd.Series(out[keep], index=tkeep, name=series.values.name),
                             frequency=target, status=status,
                             notes=(*series.notes, "interpolated"))
    method_words = (f"{name}: {src.describe()} index interpolated to {target.describe()} by "
                    f"the proportional Denton method ({SOURCE}) {ind_words}: the average of "
                    f"the interpolated values over each original period ({src.describe()}) "
                    "equals the published value; every such value is flagged as "
                    "interpolated")
    w = warn(PE208, f"{name!r} was interpolated from {src.describe()} to {target.describe()}",
             expected=f"an index measured at {target.describe()}",
             found=f"{src.describe()} values, interpolated on request (Denton)", series=name,
             fix="Use a measured index at the series' frequency where one exists.")
    return Converted(new, method_words, (w,), pd.Series(True, index=tkeep))
