"""Fast paths for seasonal adjustment of many series at once.

Two ideas live here, both used by :mod:`pipeline.seasonal`:

* **STL as a linear operator.** STL without robustness iterations (statsmodels
  ``STL(..., robust=False)``) is a composition of LOESS smoothers and moving averages
  whose weights depend only on the positions of the observations, never on their values.
  For a given length ``n``, period and set of parameters the seasonal and trend components
  are therefore fixed linear maps ``s = S y`` and ``t = T y``. :func:`stl_operator`
  builds ``S`` and ``T`` once by running statsmodels' own STL on the ``n`` unit vectors
  (column ``j`` of ``S`` is the seasonal component of ``e_j``) and caches them per
  ``(n, period, parameters)``; :func:`stl_batch` then decomposes every series of that
  shape with one matrix product. The result equals statsmodels' per-series output to
  rounding (the tests check 1e-8).

* **A process pool** for the methods that are not linear (robust STL, X-13ARIMA-SEATS):
  :func:`run_pool` spreads chunks of work over all cores and reports progress to a
  caller-given callback in the calling process.

Also here: the vectorised diagnostics (strength of seasonality, residual-seasonality
F-test) that both the fast path and the per-series path use, so every method reports the
same statistics computed the same way.
"""

from __future__ import annotations

import multiprocessing
import os
import threading
from collections import OrderedDict
from collections.abc import Callable, Iterable, Mapping, Sequence
from concurrent.futures import FIRST_COMPLETED, Executor, ProcessPoolExecutor, wait
from dataclasses import dataclass
from typing import Any, TypeVar

import numpy as np

Progress = Callable[[int, int], None]
"""``progress(done, total)``: called in the calling process as work completes."""

T = TypeVar("T")
R = TypeVar("R")

# STL parameters that the linear operator may depend on. ``robust`` must be False.
STL_PARAMS: tuple[str, ...] = (
    "seasonal", "trend", "low_pass", "seasonal_deg", "trend_deg", "low_pass_deg",
    "seasonal_jump", "trend_jump", "low_pass_jump", "inner_iter", "outer_iter",
)
OPERATOR_CACHE_SIZE = 32


# statsmodels' defaults for non-robust STL (STL.fit: inner_iter 5, outer_iter 0 when
# robust=False), so that {} and {"seasonal": 7} share a key
_STL_DEFAULTS: Mapping[str, Any] = {
    "seasonal": 7, "seasonal_deg": 1, "trend_deg": 1, "low_pass_deg": 1,
    "seasonal_jump": 1, "trend_jump": 1, "low_pass_jump": 1, "inner_iter": 5, "outer_iter": 0,
}


def _param_key(params: Mapping[str, Any]) -> tuple[tuple[str, Any], ...]:
    unknown = set(params) - set(STL_PARAMS)
    if unknown:
        raise ValueError(f"not an STL parameter: {', '.join(sorted(unknown))}")
    full = {**_STL_DEFAULTS, **{k: v for k, v in params.items() if v is not None}}
    return tuple(sorted(full.items()))


@dataclass(frozen=True)
class StlOperator:
    """The seasonal and trend maps of non-robust STL for one shape (read-only arrays).

    ``seasonal @ y`` and ``trend @ y`` are statsmodels' seasonal and trend components of
    ``y``; the remainder is ``y - seasonal @ y - trend @ y``.
    """

    n: int
    period: int
    params: tuple[tuple[str, Any], ...]
    seasonal: np.ndarray
    trend: np.ndarray
    stacked: np.ndarray  # (n, 2n) = [seasonal.T | trend.T]: one product gives both


def _build_operator(n: int, period: int, key: tuple[tuple[str, Any], ...]) -> StlOperator:
    from statsmodels.tsa.seasonal import STL

    params = dict(key)
    fit_kw = {k: params.pop(k) for k in ("inner_iter", "outer_iter") if k in params}
    if fit_kw.get("outer_iter", 0):
        raise ValueError("outer_iter > 0 adds robustness weights; STL is then not linear")
    seasonal = np.empty((n, n))
    trend = np.empty((n, n))
    unit = np.zeros(n)
    for j in range(n):
        unit[j] = 1.0
        res = STL(unit, period=period, robust=False, **params).fit(**fit_kw)
        seasonal[:, j] = res.seasonal
        trend[:, j] = res.trend
        unit[j] = 0.0
    stacked = np.ascontiguousarray(np.hstack([seasonal.T, trend.T]))
    for a in (seasonal, trend, stacked):
        a.setflags(write=False)
    return StlOperator(n, period, key, seasonal, trend, stacked)


class OperatorCache:
    """A small least-recently-used cache of STL operators, keyed (n, period, params).

    A pure cache: an operator depends only on its key (statsmodels' STL is
    deterministic), so holding it changes no result, only the time taken. Each process
    (each gunicorn worker) has its own. An operator for n periods takes 32 n^2 bytes
    (seasonal, trend and their stacked copy: 1.8 MB for 240 months); ``maxsize`` bounds
    the total.
    """

    def __init__(self, maxsize: int = OPERATOR_CACHE_SIZE) -> None:
        self.maxsize = maxsize
        self._items: OrderedDict[tuple[Any, ...], StlOperator] = OrderedDict()
        self._lock = threading.Lock()
        self.hits = 0
        self.builds = 0

    def get(self, n: int, period: int, params: Mapping[str, Any]) -> StlOperator:
        key = (int(n), int(period), _param_key(params))
        with self._lock:
            op = self._items.get(key)
            if op is not None:
                self._items.move_to_end(key)
                self.hits += 1
                return op
        op = _build_operator(*key)  # outside the lock: building takes a while
        with self._lock:
            self.builds += 1
            self._items[key] = op
            self._items.move_to_end(key)
            while len(self._items) > self.maxsize:
                self._items.popitem(last=False)
        return op

    def __contains__(self, key: tuple[int, int, Mapping[str, Any]]) -> bool:
        n, period, params = key
        return (int(n), int(period), _param_key(params)) in self._items

    def clear(self) -> None:
        with self._lock:
            self._items.clear()
            self.hits = self.builds = 0


OPERATORS = OperatorCache()
"""The process-wide operator cache used by :func:`stl_batch` unless one is passed."""


def stl_operator(n: int, period: int, *, cache: OperatorCache | None = None,
                 **params: Any) -> StlOperator:
    """The (cached) linear operator of non-robust STL for ``n`` observations."""
    return (cache or OPERATORS).get(n, period, params)


@dataclass(frozen=True)
class Components:
    """Components of many series of one shape: arrays of shape (k, n)."""

    seasonal: np.ndarray
    trend: np.ndarray
    remainder: np.ndarray


def stl_batch(y: np.ndarray, period: int, *, cache: OperatorCache | None = None,
              **params: Any) -> Components:
    """Decompose every row of ``y`` (k series x n periods, no NaN) with non-robust STL.

    Equal to ``statsmodels.tsa.seasonal.STL(row, period=period, **params).fit()`` per
    row, to rounding. Raises ValueError for NaN (STL cannot take gaps).
    """
    y = np.asarray(y, dtype=float)
    if y.ndim == 1:
        y = y[None, :]
    if not np.isfinite(y).all():
        raise ValueError("STL cannot take missing values; fill or refuse gaps first")
    op = stl_operator(y.shape[1], period, cache=cache, **params)
    both = y @ op.stacked
    n = y.shape[1]
    seasonal, trend = both[:, :n], both[:, n:]
    return Components(seasonal, trend, y - seasonal - trend)


# --------------------------------------------------------------------------- diagnostics


def seasonal_strength(seasonal: np.ndarray, remainder: np.ndarray) -> np.ndarray:
    """Strength of seasonality, row by row: max(0, 1 - var(R) / var(S + R)).

    Source: Wang, Smith & Hyndman (2006), "Characteristic-based clustering for time
    series data", Data Mining and Knowledge Discovery 13; as used in Hyndman &
    Athanasopoulos, Forecasting: Principles and Practice (3rd ed.), section 4.3.
    Computed on the scale the model is fitted on (logs for a multiplicative model).
    """
    s = np.atleast_2d(np.asarray(seasonal, dtype=float))
    r = np.atleast_2d(np.asarray(remainder, dtype=float))
    ok = np.isfinite(s) & np.isfinite(r)
    s = np.where(ok, s, np.nan)
    r = np.where(ok, r, np.nan)
    var_r = np.nanvar(r, axis=1, ddof=1)
    var_sr = np.nanvar(s + r, axis=1, ddof=1)
    with np.errstate(divide="ignore", invalid="ignore"):
        out = 1.0 - var_r / var_sr
    out = np.where(var_sr > 0, out, 0.0)
    return np.clip(out, 0.0, 1.0)


@dataclass(frozen=True)
class FTest:
    """F-test that seasonal dummies explain nothing; arrays (one entry per series)."""

    statistic: np.ndarray
    pvalue: np.ndarray
    df_num: int
    df_den: int


def seasonal_dummy_ftest(x: np.ndarray, period: int) -> FTest:
    """F-test for seasonal dummies in each row of ``x`` (k x m, no NaN).

    Regress x_t on an intercept and ``period - 1`` dummies for the position in the year
    and test that all dummy coefficients are zero (the ordinary regression F-test,
    restricted model = intercept only). The column space does not depend on which
    calendar month a series starts in, so one projection serves every row.
    The test applied to the period-on-period growth of an adjusted series is the usual
    check for residual seasonality (X-13ARIMA-SEATS Reference Manual, U.S. Census Bureau,
    "F-tests for seasonal regressors" / residual seasonality; from memory).
    """
    x = np.atleast_2d(np.asarray(x, dtype=float))
    _k, m = x.shape
    if not np.isfinite(x).all():
        raise ValueError("seasonal_dummy_ftest needs complete rows")
    df_num = period - 1
    df_den = m - period
    if df_den <= 0:
        raise ValueError("too few observations for the seasonal-dummy F-test")
    # A full set of position dummies spans the same space as intercept + period-1 dummies:
    # the full model fits each position's mean, the restricted one the overall mean.
    # (Plain slicing, no BLAS: this also runs inside pool workers.)
    rss_full = np.zeros(x.shape[0])
    for p in range(period):
        part = x[:, p::period]
        rss_full += ((part - part.mean(axis=1, keepdims=True)) ** 2).sum(axis=1)
    rss_restricted = ((x - x.mean(axis=1, keepdims=True)) ** 2).sum(axis=1)
    with np.errstate(divide="ignore", invalid="ignore"):
        f = ((rss_restricted - rss_full) / df_num) / (rss_full / df_den)
    f = np.where(rss_full > 0, f, np.where(rss_restricted > rss_full, np.inf, 0.0))
    from scipy import stats  # here, not at import: every CLI call imports this module

    p = stats.f.sf(f, df_num, df_den)
    return FTest(f, p, df_num, df_den)


# --------------------------------------------------------------------------- process pool


def default_workers() -> int:
    """All cores this process may use."""
    try:
        return len(os.sched_getaffinity(0))
    except AttributeError:  # pragma: no cover - not Linux
        return os.cpu_count() or 1


def chunk(items: Sequence[T], n_chunks: int) -> list[list[T]]:
    """Split into about ``n_chunks`` contiguous chunks of near-equal size."""
    n_chunks = max(1, min(n_chunks, len(items)))
    size, extra = divmod(len(items), n_chunks)
    out, start = [], 0
    for i in range(n_chunks):
        stop = start + size + (1 if i < extra else 0)
        out.append(list(items[start:stop]))
        start = stop
    return [c for c in out if c]


def _apply(func: Callable[[T], R], items: list[T]) -> list[R]:
    return [func(item) for item in items]


def run_pool(
    func: Callable[[T], R],
    items: Sequence[T],
    *,
    max_workers: int | None = None,
    chunks_per_worker: int = 4,
    progress: Progress | None = None,
    executor: Executor | None = None,
) -> list[R]:
    """``[func(item) for item in items]`` over a process pool, in input order.

    ``func`` must be a module-level function (it is pickled). Work is sent in chunks
    (``chunks_per_worker`` per worker: few enough to keep the per-task overhead small,
    enough to balance uneven series and to give the progress bar steps). ``progress``
    is called in this process with (items done, total) after each chunk. With one worker
    (or one item) everything runs here, in order, with no pool at all. An ``executor``
    given by the caller is used and left open. Inside a daemonic process (which may not
    have children) everything runs inline too.
    """
    items = list(items)
    total = len(items)
    workers = max_workers or default_workers()
    if executor is None and multiprocessing.current_process().daemon:
        # A daemonic process (a Celery prefork worker, some background-job runners) may
        # not start children: run inline instead of failing.
        workers = 1
    if total == 0:
        return []
    if executor is None and (workers <= 1 or total == 1):
        out = []
        for i, item in enumerate(items, 1):
            out.append(func(item))
            if progress is not None:
                progress(i, total)
        return out
    parts = chunk(items, workers * max(1, chunks_per_worker))
    results: list[list[R] | None] = [None] * len(parts)
    done = 0
    own = executor is None
    pool = executor if executor is not None else ProcessPoolExecutor(max_workers=workers)
    try:
        futures = {pool.submit(_apply, func, part): i for i, part in enumerate(parts)}
        pending = set(futures)
        while pending:
            finished, pending = wait(pending, return_when=FIRST_COMPLETED)
            for fut in finished:
                i = futures[fut]
                results[i] = fut.result()
                done += len(parts[i])
                if progress is not None:
                    progress(done, total)
    finally:
        if own:
            pool.shutdown(wait=True, cancel_futures=True)
    return [r for part in results for r in (part or [])]


def iter_groups(keys: Iterable[Any]) -> dict[Any, list[int]]:
    """Positions grouped by key, in first-seen order."""
    groups: dict[Any, list[int]] = {}
    for i, key in enumerate(keys):
        groups.setdefault(key, []).append(i)
    return groups
