"""Seasonal adjustment engine (pipeline.seasonal, pipeline.seasonal_batch).

Outside references used here:
* statsmodels (reference library): ``STL``, ``seasonal_decompose``, ``x13_arima_analysis``
  and ``OLS(...).f_test`` give the values our results must equal.
* statsmodels' ``elec_equip`` dataset (euro-area electrical equipment orders, monthly,
  not seasonally adjusted; statsmodels.datasets.elec_equip) is the real seasonal series.
* Strength of seasonality: Wang, Smith & Hyndman (2006); Hyndman & Athanasopoulos,
  Forecasting: Principles and Practice, 3rd ed., section 4.3:
  F_S = max(0, 1 - Var(R_t) / Var(S_t + R_t)).
"""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest
from conftest import missing
from statsmodels.datasets import elec_equip
from statsmodels.tsa.seasonal import STL, seasonal_decompose

from pipeline import seasonal as sa
from pipeline.errors import RealbasisError
from pipeline.model import MONTHLY, QUARTERLY, Frequency, Series, fiscal_year
from pipeline.seasonal_batch import (
    OperatorCache,
    chunk,
    run_pool,
    seasonal_dummy_ftest,
    seasonal_strength,
    stl_batch,
)


@pytest.fixture(scope="module")
def elec() -> Series:
    data = elec_equip.load_pandas().data.iloc[:, 0]
    idx = pd.PeriodIndex(data.index, freq="M")
    return Series("elec_equip", pd.Series(data.to_numpy(dtype=float), index=idx), MONTHLY)


def _monthly(values, start="2018-01", name="s", kind="flow") -> Series:
    idx = pd.period_range(start, periods=len(values), freq="M")
    return Series(name, pd.Series(np.asarray(values, dtype=float), index=idx), MONTHLY,
                  kind=kind)


def _synthetic(n=72, seed=3, level=500.0) -> np.ndarray:
    rng = np.random.default_rng(seed)
    t = np.arange(n)
    return level * np.exp(0.003 * t + 0.08 * np.sin(2 * np.pi * t / 12)
                          + rng.normal(0, 0.01, n))


# ------------------------------------------------------------------ equality with statsmodels


def test_stl_equals_statsmodels_on_the_logs_of_a_positive_series(elec):
    # Reference library: statsmodels STL fitted on log(y) with period 12 and its defaults.
    a = sa.adjust(elec, "stl")
    y = elec.values.to_numpy()
    ref = STL(np.log(y), period=12).fit()
    assert a.model == "multiplicative" and "logs" in a.model_reason
    assert a.params == {"seasonal": 7}
    np.testing.assert_allclose(np.log(a.seasonal.to_numpy()), ref.seasonal, atol=1e-10)
    np.testing.assert_allclose(np.log(a.trend.to_numpy()), ref.trend, atol=1e-10)
    np.testing.assert_allclose(np.log(a.remainder.to_numpy()), ref.resid, atol=1e-10)
    np.testing.assert_allclose(a.adjusted.values.to_numpy(), y / np.exp(ref.seasonal),
                               rtol=1e-12)
    # y = trend x seasonal x remainder for a multiplicative model
    np.testing.assert_allclose(a.trend * a.seasonal * a.remainder, y, rtol=1e-12)


def test_stl_robust_and_overridden_parameters_reach_statsmodels(elec):
    # Reference library: statsmodels STL(robust=True, seasonal=13, trend=25).
    a = sa.adjust(elec, "stl-robust", seasonal=13, trend=25)
    ref = STL(np.log(elec.values.to_numpy()), period=12, seasonal=13, trend=25,
              robust=True).fit()
    np.testing.assert_allclose(np.log(a.seasonal.to_numpy()), ref.seasonal, atol=1e-10)
    assert a.params == {"seasonal": 13, "trend": 25}


def test_additive_stl_is_fitted_on_the_levels():
    # Reference library: statsmodels STL on the raw values for an additive model.
    y = _synthetic() - 560.0  # crosses zero: auto must pick additive
    s = _monthly(y)
    a = sa.adjust(s, "stl")
    assert a.model == "additive" and "<= 0" in a.model_reason
    ref = STL(y, period=12).fit()
    np.testing.assert_allclose(a.seasonal.to_numpy(), ref.seasonal, atol=1e-10)
    np.testing.assert_allclose(a.adjusted.values.to_numpy(), y - ref.seasonal, atol=1e-10)


def test_classical_equals_statsmodels_seasonal_decompose(elec):
    # Reference library: statsmodels seasonal_decompose, multiplicative, period 12.
    a = sa.adjust(elec, "classical")
    y = elec.values.to_numpy()
    ref = seasonal_decompose(y, model="multiplicative", period=12, extrapolate_trend="period")
    np.testing.assert_allclose(a.seasonal.to_numpy(), ref.seasonal, rtol=1e-12)
    np.testing.assert_allclose(a.trend.to_numpy(), ref.trend, rtol=1e-12)
    np.testing.assert_allclose(a.adjusted.values.to_numpy(), y / ref.seasonal, rtol=1e-12)


# ------------------------------------------------------------------ the batch operator


@pytest.mark.parametrize("params", [
    {},
    {"seasonal": 13},
    {"seasonal": 9, "trend": 31, "low_pass": 15, "seasonal_deg": 0},
    {"seasonal_jump": 2, "trend_jump": 3, "low_pass_jump": 2, "inner_iter": 3},
])
def test_batch_operator_equals_statsmodels_per_series_to_1e_8(params):
    # Reference library: statsmodels STL (non-robust) fitted series by series.
    rng = np.random.default_rng(11)
    n = 60
    y = np.log(np.vstack([_synthetic(n, seed=s) for s in range(6)]))
    y[3] += rng.normal(0, 0.2, n)  # an outlier-ish row: linearity must not care
    comps = stl_batch(y, 12, cache=OperatorCache(), **params)
    fit_kw = {k: params[k] for k in ("inner_iter", "outer_iter") if k in params}
    init = {k: v for k, v in params.items() if k not in fit_kw}
    for i in range(len(y)):
        ref = STL(y[i], period=12, **init).fit(**fit_kw)
        assert np.abs(comps.seasonal[i] - ref.seasonal).max() <= 1e-8
        assert np.abs(comps.trend[i] - ref.trend).max() <= 1e-8
        assert np.abs(comps.remainder[i] - ref.resid).max() <= 1e-8


def test_adjust_many_fast_path_equals_adjust_per_series():
    series = [_monthly(_synthetic(48, seed=s), name=f"s{s}") for s in range(10)]
    fast = sa.adjust_many(series, "stl", fast=True)
    for s, f in zip(series, fast, strict=True):
        one = sa.adjust(s, "stl")
        assert f.name == s.name
        np.testing.assert_allclose(f.adjusted.values, one.adjusted.values, rtol=1e-10)
        assert f.diagnostics.residual_p == pytest.approx(one.diagnostics.residual_p, abs=1e-8)
        assert f.diagnostics.seasonal_strength == pytest.approx(
            one.diagnostics.seasonal_strength, abs=1e-10)


def test_operator_cache_builds_once_per_shape_and_evicts():
    cache = OperatorCache(maxsize=2)
    y = np.log(_synthetic(36))[None, :]
    stl_batch(y, 12, cache=cache)
    stl_batch(y, 12, cache=cache, seasonal=7)  # statsmodels' default: same operator
    assert (cache.builds, cache.hits) == (1, 1)
    assert (36, 12, {}) in cache and (36, 12, {"seasonal": 7}) in cache
    stl_batch(y, 12, cache=cache, seasonal=9)
    stl_batch(np.log(_synthetic(40))[None, :], 12, cache=cache)
    assert cache.builds == 3 and (36, 12, {}) not in cache  # least recently used went
    with pytest.raises(ValueError, match="missing"):
        stl_batch(np.array([[1.0, np.nan] * 18]), 12, cache=cache)


# ------------------------------------------------------------------ diagnostics


def test_elec_equip_raw_is_seasonal_and_adjusted_is_not(elec):
    # statsmodels elec_equip dataset (not seasonally adjusted): seasonal dummies explain
    # its monthly growth rates; after STL (statsmodels defaults) they no longer do at 5%.
    for method in ("stl", "classical"):
        d = sa.adjust(elec, method).diagnostics
        assert d.raw_p < 0.05 and d.raw_seasonality
        assert d.residual_p >= 0.05 and not d.residual_seasonality
        assert d.seasonal_strength > 0.6  # strongly seasonal series (FPP3 s.4.3 scale)
        assert "seasonality removed" in d.verdict()


def test_residual_seasonality_ftest_equals_statsmodels_ols(elec):
    # Reference library: statsmodels OLS F-test of the 11 month dummies (intercept kept)
    # on the log differences (growth rates) of the adjusted series.
    import statsmodels.api as sm

    a = sa.adjust(elec, "stl")
    g = np.diff(np.log(a.adjusted.values.to_numpy()))
    month = (np.arange(1, len(g) + 1)) % 12
    design = np.column_stack([np.ones(len(g))] + [(month == m).astype(float)
                                                  for m in range(1, 12)])
    ref = sm.OLS(g, design).fit().f_test(np.eye(12)[1:])
    assert a.diagnostics.residual_f == pytest.approx(float(np.squeeze(ref.fvalue)), rel=1e-9)
    assert a.diagnostics.residual_p == pytest.approx(float(ref.pvalue), rel=1e-7)
    assert a.diagnostics.df == (int(ref.df_num), int(ref.df_denom))
    # and the raw test is the same regression on the raw log differences
    raw = seasonal_dummy_ftest(np.diff(np.log(elec.values.to_numpy())), 12)
    assert a.diagnostics.raw_f == pytest.approx(raw.statistic[0])


def test_seasonal_strength_formula():
    # FPP3 s.4.3: F_S = max(0, 1 - Var(R)/Var(S+R)); worked by hand: S = (1,-1,1,-1),
    # R = (0.5, 0.5, -0.5, -0.5): Var(R) = 1/3, Var(S+R) = Var(1.5,-0.5,0.5,-1.5) = 5/3.
    s = np.array([1.0, -1.0, 1.0, -1.0])
    r = np.array([0.5, 0.5, -0.5, -0.5])
    assert seasonal_strength(s, r)[0] == pytest.approx(1 - (1 / 3) / (5 / 3))
    assert seasonal_strength(np.zeros(4), r)[0] == 0.0  # no seasonal: clipped at 0


def test_no_seasonality_is_reported_not_hidden():
    rng = np.random.default_rng(5)
    s = _monthly(100 * np.exp(np.cumsum(rng.normal(0.002, 0.02, 72))))
    a = sa.adjust(s, "stl")
    assert not a.diagnostics.raw_seasonality
    assert "SA105" in [w.code for w in a.warnings]


def test_residual_seasonality_raises_a_warning_when_present(elec):
    # Whatever the method, SA102 travels with the result exactly when the test fires.
    for method in ("stl", "stl-robust", "classical"):
        a = sa.adjust(elec, method)
        has = "SA102" in [w.code for w in a.warnings]
        assert has == a.diagnostics.residual_seasonality


# ------------------------------------------------------------------ X-13ARIMA-SEATS


@pytest.fixture(scope="module")
def x13_program() -> str:
    try:
        return sa.resolve_x13_path()
    except RealbasisError as err:
        missing(f"X-13ARIMA-SEATS program not available: {err.problems[0].found}",
                "RB_REQUIRE_SERVICES")
        raise


def test_x13_runs_on_elec_equip_and_equals_statsmodels(elec, x13_program, tmp_path):
    # Reference library: statsmodels x13_arima_analysis with log transform.
    import warnings

    from statsmodels.tsa.x13 import x13_arima_analysis

    a = sa.adjust(elec, "x13")
    assert a.model == "multiplicative"
    endog = pd.Series(elec.values.to_numpy(),
                      index=pd.date_range("1995-01-01", periods=len(elec.values), freq="MS"))
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", ResourceWarning)
        ref = x13_arima_analysis(endog, log=True, x12path=x13_program, tempdir=str(tmp_path))
    np.testing.assert_allclose(a.adjusted.values.to_numpy(), ref.seasadj.to_numpy(),
                               rtol=1e-10)
    d = a.diagnostics
    assert d.raw_seasonality and not d.residual_seasonality
    # X-13's own quality statistics come back; M7 < 1 means identifiable seasonality
    # (X-13ARIMA-SEATS Reference Manual, X-11 quality statistics; from memory).
    assert set(d.x13_stats) == {"F-D8", "M07", "Q"}
    assert d.x13_stats["M07"] < 1
    assert list(tmp_path.iterdir()) != []  # the reference run left files; ours did not


def test_x13_messages_travel_with_the_result(x13_program):
    # Three years of monthly noise with trading-day regressors: X-13 adds notes and
    # warnings to its error file; each comes back once as an SA103 warning.
    rng = np.random.default_rng(2)
    rng.normal(0, 1, 36)
    s = _monthly(100 + rng.normal(0, 1, 36), start="2015-01")
    a = sa.adjust(s, "x13", trading=True)
    msgs = a.diagnostics.x13_messages
    assert msgs and all(m.startswith(("NOTE:", "WARNING:")) for m in msgs)
    assert len(set(msgs)) == len(msgs)
    sa103 = [w.message for w in a.warnings if w.code == "SA103"]
    assert sa103 == ["X-13ARIMA-SEATS: " + m for m in msgs]


def test_x13_failure_is_a_coded_error_with_its_own_text(x13_program):
    # Too short for the automatic model after differencing: X-13 stops with an error.
    idx = pd.period_range("2015Q1", periods=13, freq="Q")
    vals = 100 + np.tile([5.0, -3.0, 1.0, -3.0], 4)[:13] + np.linspace(0, 1, 13)
    with pytest.raises(RealbasisError) as err:
        sa.adjust(Series("q", pd.Series(vals, index=idx), QUARTERLY), "x13")
    assert err.value.code == "SA008" and "ERROR" in err.value.problems[0].found


def test_x13_missing_program_is_a_coded_error(elec, monkeypatch, tmp_path):
    with pytest.raises(RealbasisError) as err:
        sa.adjust(elec, "x13", x13_path=str(tmp_path / "nowhere" / "x13as"))
    assert err.value.code == "SA007" and "nowhere" in err.value.problems[0].found
    monkeypatch.setenv("REALBASIS_X13_PATH", str(tmp_path))  # a folder without x13as
    with pytest.raises(RealbasisError) as err:
        sa.adjust(elec, "x13")
    assert err.value.code == "SA007"
    assert "REALBASIS_X13_PATH" in err.value.problems[0].fix


def test_x13_path_setting_accepts_the_program_folder(elec, x13_program, monkeypatch):
    from pathlib import Path

    monkeypatch.setenv("REALBASIS_X13_PATH", str(Path(x13_program).parent))
    assert sa.resolve_x13_path() == x13_program


# ------------------------------------------------------------------ rules and coded errors


def test_short_series_refused_with_counts():
    # Three full years of monthly data at least (DESIGN.md facts of the trade; common practice)
    s = _monthly(_synthetic(30))
    with pytest.raises(RealbasisError) as err:
        sa.adjust(s, "stl")
    p = err.value.problems[0]
    assert p.code == "SA003"
    assert "36" in p.expected and "30 values (2 years 6 months)" in p.found
    assert "2018-01 to 2020-06" in p.found


def test_gappy_series_refused_with_missing_periods_listed():
    y = _synthetic(48)
    y[[5, 6, 20]] = np.nan
    s = _monthly(y)
    with pytest.raises(RealbasisError) as err:
        sa.adjust(s, "stl")
    p = err.value.problems[0]
    assert p.code == "SA004"
    assert "2018-06, 2018-07, 2019-09" in p.found and p.where.period == "2018-06"
    # periods absent from the index count as gaps too
    s2 = Series("s", s.values.dropna(), MONTHLY)
    with pytest.raises(RealbasisError) as err2:
        sa.adjust(s2, "stl")
    assert err2.value.code == "SA004" and "2018-06, 2018-07, 2019-09" in err2.value.problems[0].found


def test_gaps_interpolated_on_request_and_flagged():
    y = _synthetic(48)
    y[[5, 6]] = np.nan
    a = sa.adjust(_monthly(y), "stl", interpolate=True)
    assert a.interpolated == ("2018-06", "2018-07")
    assert "SA101" in [w.code for w in a.warnings]
    adj = a.adjusted.values
    assert adj.isna().sum() == 2 and adj.iloc[5:7].isna().all()
    assert np.isfinite(a.seasonal.to_numpy()).all()
    # multiplicative: filled log-linearly (geometric mean of the neighbours for one gap)
    z = _synthetic(48)
    z[10] = np.nan
    b = sa.adjust(_monthly(z), "stl", interpolate=True)
    filled = b.trend.iloc[10] * b.seasonal.iloc[10] * b.remainder.iloc[10]
    assert filled == pytest.approx(np.sqrt(z[9] * z[11]), rel=1e-12)
    assert any("interpolated" in line for line in b.method_note())


def test_non_positive_series_refused_for_a_multiplicative_model():
    y = _synthetic(48)
    y[7] = 0.0
    y[9] = -3.0
    with pytest.raises(RealbasisError) as err:
        sa.adjust(_monthly(y), "stl", model="multiplicative")
    p = err.value.problems[0]
    assert p.code == "SA005" and "2 value(s) <= 0 at 2018-08, 2018-10" in p.found
    assert sa.adjust(_monthly(y), "stl").model == "additive"  # auto falls back, says why


@pytest.mark.parametrize("freq", [Frequency("A"), fiscal_year(7)])
def test_annual_and_fiscal_year_data_are_never_adjusted(freq):
    idx = pd.period_range("2001", periods=30, freq=freq.pandas_freq)
    s = Series("y", pd.Series(np.arange(30.0) + 1, index=idx), freq)
    with pytest.raises(RealbasisError) as err:
        sa.adjust(s, "stl")
    assert err.value.code == "SA002"


def test_index_series_adjusted_only_when_asked():
    s = _monthly(_synthetic(48), kind="index")
    with pytest.raises(RealbasisError) as err:
        sa.adjust(s, "stl")
    assert err.value.code == "SA006"
    assert sa.adjust(s, "stl", include_index=True).adjusted.kind == "index"


def test_unknown_method_model_and_parameter_are_coded():
    s = _monthly(_synthetic(48))
    for kw in ({"method": "x11"}, {"method": "stl", "model": "log"}):
        with pytest.raises(RealbasisError) as err:
            sa.adjust(s, **kw)
        assert err.value.code == "SA001"
    with pytest.raises(RealbasisError) as err:
        sa.adjust(s, "stl", maxorder=(1, 1))
    assert err.value.code == "SA009" and "maxorder" in err.value.problems[0].found
    with pytest.raises(RealbasisError) as err:
        sa.adjust(s, "stl", seasonal=8)  # statsmodels wants an odd seasonal smoother
    assert err.value.code == "SA009"


def test_leading_and_trailing_missing_left_unadjusted():
    y = np.concatenate([[np.nan, np.nan], _synthetic(48), [np.nan]])
    a = sa.adjust(_monthly(y), "stl")
    assert a.adjusted.values.index.equals(_monthly(y).values.index)
    assert a.adjusted.values.isna().tolist()[:3] == [True, True, False]
    assert "SA104" in [w.code for w in a.warnings]
    assert len(a.trend) == 48


def test_fiscal_quarters_use_period_four():
    idx = pd.period_range("2015Q1", periods=24, freq="Q-JUN")
    t = np.arange(24)
    vals = 200 * np.exp(0.01 * t + 0.05 * np.cos(np.pi * t / 2))
    s = Series("fq", pd.Series(vals, index=idx), Frequency("Q", 7))
    a = sa.adjust(s, "stl")
    ref = STL(np.log(vals), period=4).fit()
    np.testing.assert_allclose(np.log(a.seasonal.to_numpy()), ref.seasonal, atol=1e-10)
    assert a.table()["period"].iloc[0] == "FY2015Q1"
    assert "period 4" in a.method_note()[0]


# ------------------------------------------------------------------ many series, the pool


def test_adjust_many_collects_every_problem():
    good = _monthly(_synthetic(48), name="good")
    short = _monthly(_synthetic(20), name="short")
    gappy_vals = _synthetic(48)
    gappy_vals[4] = np.nan
    gappy = _monthly(gappy_vals, name="gappy")
    with pytest.raises(RealbasisError) as err:
        sa.adjust_many([good, short, gappy], "stl")
    assert err.value.codes == ("SA003", "SA004")
    assert [p.where.series for p in err.value.problems] == ["short", "gappy"]


def test_robust_pool_equals_serial_and_reports_progress():
    series = [_monthly(_synthetic(48, seed=s), name=f"s{s}") for s in range(6)]
    seen: list[tuple[int, int]] = []
    pooled = sa.adjust_many(series, "stl-robust", max_workers=2,
                            progress=lambda d, t: seen.append((d, t)))
    assert [a.name for a in pooled] == [s.name for s in series]
    for s, a in zip(series, pooled, strict=True):
        one = sa.adjust(s, "stl-robust")
        np.testing.assert_allclose(a.adjusted.values, one.adjusted.values, rtol=1e-12)
    assert seen[-1] == (6, 6)
    assert [d for d, _ in seen] == sorted(d for d, _ in seen)


def test_progress_for_the_fast_path_and_serial_path():
    series = [_monthly(_synthetic(40, seed=s), name=f"s{s}") for s in range(3)]
    for fast in (True, False):
        seen: list[int] = []
        sa.adjust_many(series, "stl", fast=fast, progress=lambda d, t, seen=seen: seen.append(d))
        assert seen[-1] == 3


def _square(x: int) -> int:
    return x * x


def test_run_pool_keeps_order_and_chunks_evenly():
    assert [len(c) for c in chunk(list(range(10)), 4)] == [3, 3, 2, 2]
    assert run_pool(_square, range(25), max_workers=2) == [i * i for i in range(25)]
    assert run_pool(_square, [], max_workers=2) == []


def test_method_note_states_method_model_and_diagnostics(elec):
    note = sa.adjust(elec, "stl").method_note()
    assert "STL" in note[0] and "seasonal=7" in note[0] and "monthly" in note[0]
    assert note[1].startswith("Model: multiplicative")
    assert "strength of seasonality" in note[2]


def _pool_in_daemon(queue) -> None:
    queue.put(run_pool(_square, range(6), max_workers=2))


def test_run_pool_runs_inline_inside_a_daemonic_process():
    # e.g. a Celery prefork worker: daemonic processes may not start a pool
    import multiprocessing

    ctx = multiprocessing.get_context("fork")
    queue = ctx.Queue()
    proc = ctx.Process(target=_pool_in_daemon, args=(queue,), daemon=True)
    proc.start()
    got = queue.get(timeout=60)
    proc.join(60)
    assert got == [i * i for i in range(6)] and proc.exitcode == 0


def test_preload_imports_statsmodels_only_when_called():
    """Importing the module stays light (every command line call imports it); a server
    calls ``preload`` at start so the first adjustment does not wait for statsmodels."""
    import subprocess
    import sys

    code = ("import sys, pipeline.seasonal as s; a = 'statsmodels.tsa.seasonal' in sys.modules; "
            "s.preload(); print(a, 'statsmodels.tsa.seasonal' in sys.modules)")
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True,
                         check=True)
    assert out.stdout.split() == ["False", "True"]


def test_the_gunicorn_entry_preloads_the_seasonal_adjustment():
    import ast
    from pathlib import Path

    tree = ast.parse((Path(__file__).resolve().parents[1] / "dashboard" / "wsgi.py").read_text())
    calls = [n.value.func.id for n in tree.body
             if isinstance(n, ast.Expr) and isinstance(n.value, ast.Call)
             and isinstance(n.value.func, ast.Name)]
    assert "preload" in calls
