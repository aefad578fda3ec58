"""Benchmarking and interpolation that keep the averages (proportional Denton), checked
against the IMF Quarterly National Accounts Manual (2017) and statsmodels."""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from pipeline.benchmark import benchmark, denton_array, interpolate
from pipeline.deflate import deflate
from pipeline.errors import RealbasisError
from pipeline.model import ANNUAL, MONTHLY, QUARTERLY, Frequency, Series

# IMF Quarterly National Accounts Manual (2017), ch. 8, Example 8.8 "Chain-Linking and
# Benchmarking Quarterly Fisher Indices": column (2) the quarterly chain Fisher volume
# index (2010 = 100) for 2011Q1-2013Q4, column (4) the annual chain Fisher index
# (2010 = 100) for 2011-2013, and column (6) the quarterly index benchmarked to the annual
# one "using the Denton proportional method". Printed with two decimals.
QNA88_QUARTERLY = [100.74, 100.66, 100.74, 101.07, 101.25, 101.31, 101.90, 102.99,
                   103.77, 104.32, 104.26, 104.08]
QNA88_ANNUAL = [100.79, 101.79, 104.06]
QNA88_BENCHMARKED = [100.73, 100.65, 100.72, 101.04, 101.19, 101.24, 101.82, 102.91,
                     103.71, 104.27, 104.21, 104.04]


def series(name, values, start, freq=MONTHLY, kind="index", status=None):
    idx = pd.period_range(start, periods=len(values), freq=freq.pandas_freq)
    st_ = None if status is None else pd.Series(status, index=idx, dtype=object)
    return Series(name, pd.Series(np.asarray(values, dtype=float), index=idx), freq, kind=kind,
                  status=st_)


def test_qna_2017_example_8_8_benchmarked_quarterly_chain():
    # IMF QNA Manual 2017, Example 8.8 (see QNA88_*). Inputs and printed results carry two
    # decimals: the benchmarks' rounding (+-0.005) moves every value by up to that much, the
    # indicator's (+-0.005 on ~100) shifts the quarterly pattern by as much again, and the
    # printed result is rounded once more, so agreement to 0.02 is what the rounding allows.
    ind = series("quarterly chain Fisher", QNA88_QUARTERLY, "2011Q1", QUARTERLY)
    bench = series("annual chain Fisher", QNA88_ANNUAL, "2011", ANNUAL)
    res = benchmark(ind, bench)
    assert res.aggregation == "average"  # an index: each year's average is the benchmark
    got = res.series.values.to_numpy()
    assert got == pytest.approx(QNA88_BENCHMARKED, abs=0.02)
    # the averages are kept exactly (to floating-point rounding), not to 0.02
    annual = res.series.values.groupby(res.series.index.year).mean()
    assert annual.to_numpy() == pytest.approx(QNA88_ANNUAL, rel=1e-13, abs=0)
    # and the example's own column (6) averages to its benchmarks (printed 100.79 ...)
    printed = np.asarray(QNA88_BENCHMARKED).reshape(3, 4).mean(axis=1)
    assert printed == pytest.approx(QNA88_ANNUAL, abs=0.005)
    assert not res.extrapolated.any() and res.warnings == ()
    assert "proportional Denton" in res.method_note()[0]


def test_denton_array_is_statsmodels_dentonm():
    # Reference implementation: statsmodels.tsa.interp.dentonm (its docstring example:
    # indicator [50, 100, 150, 100] * 5, benchmarks [500, 400, 300, 400, 500] as sums).
    from statsmodels.tsa.interp import dentonm

    ind = np.array([50, 100, 150, 100] * 5, dtype=float)
    bench = np.array([500, 400, 300, 400, 500], dtype=float)
    ours = denton_array(ind, bench, 4, "sum")
    assert ours == pytest.approx(dentonm(ind, bench, freq="aq"), rel=1e-12)
    assert ours.reshape(5, 4).sum(axis=1) == pytest.approx(bench, rel=1e-14)
    # averages are the same problem with k x the average as the sum
    avg = denton_array(ind, bench / 4, 4, "average")
    assert avg == pytest.approx(ours, rel=1e-12)


def test_movement_is_kept_when_the_benchmarks_agree_with_the_indicator():
    # Proportional Denton: if the benchmarks are a constant multiple of the indicator's own
    # aggregates, the benchmark-to-indicator ratio stays constant and the result is the
    # indicator times that multiple (IMF QNA Manual 2017, ch. 6: the method preserves the
    # indicator's movements as far as the benchmarks allow).
    rng = np.random.default_rng(7)
    ind_vals = 100 + np.cumsum(rng.normal(0.2, 1.0, 36))
    ind = series("indicator", ind_vals, "2020-01")
    annual = ind_vals.reshape(3, 12).mean(axis=1) * 1.37
    res = benchmark(ind, series("benchmarks", annual, "2020", ANNUAL))
    assert res.series.values.to_numpy() == pytest.approx(ind_vals * 1.37, rel=1e-10)
    assert res.ratio.to_numpy() == pytest.approx(1.37, rel=1e-10)


blocks = st.integers(min_value=1, max_value=6)
positive = st.floats(min_value=1.0, max_value=1000.0, allow_nan=False, allow_infinity=False)


@settings(max_examples=60, deadline=None)
@given(m=blocks, freq_pair=st.sampled_from([("M", "A"), ("Q", "A"), ("M", "Q")]),
       aggregation=st.sampled_from(["average", "sum"]), data=st.data())
def test_property_aggregates_equal_the_benchmarks(m, freq_pair, aggregation, data):
    # The defining constraint of benchmarking (IMF QNA Manual 2017, ch. 6): the average
    # (indexes) or sum (flows) of the result over each benchmark period is the benchmark.
    hi, lo = (Frequency(c) for c in freq_pair)
    k = lo.months_per_period // hi.months_per_period
    ind_vals = data.draw(st.lists(positive, min_size=k * m, max_size=k * m))
    bench_vals = data.draw(st.lists(positive, min_size=m, max_size=m))
    start = "2021-01" if hi.code == "M" else "2021Q1"
    ind = series("indicator", ind_vals, start, hi, kind="flow")
    bench = series("benchmarks", bench_vals, "2021" if lo.code == "A" else "2021Q1", lo,
                   kind="flow")
    res = benchmark(ind, bench, aggregation=aggregation)
    got = res.series.values.to_numpy().reshape(m, k)
    agg = got.mean(axis=1) if aggregation == "average" else got.sum(axis=1)
    assert agg == pytest.approx(bench_vals, rel=1e-11)


@settings(max_examples=60, deadline=None)
@given(values=st.lists(positive, min_size=1, max_size=8),
       target=st.sampled_from(["M", "Q"]))
def test_property_interpolation_keeps_each_years_average(values, target):
    # DESIGN.md / IMF QNA Manual 2017, ch. 6: interpolating a less frequent index must keep
    # its period averages.
    annual = series("annual index", values, "2018", ANNUAL)
    conv = interpolate(annual, Frequency(target))
    got = conv.series.values
    means = got.groupby(got.index.year).mean().to_numpy()
    assert means == pytest.approx(values, rel=1e-11)
    assert conv.interpolated.all() and len(got) == len(values) * (12 if target == "M" else 4)


def test_interpolation_along_an_indicator_and_without():
    # With an indicator whose annual averages are the published values, Denton returns the
    # indicator itself (the ratio is 1 throughout: IMF QNA Manual 2017, ch. 6).
    months = 100 * 1.002 ** np.arange(24) * (1 + 0.01 * np.sin(np.arange(24)))
    ind = series("monthly indicator", months, "2023-01")
    annual = series("annual index", months.reshape(2, 12).mean(axis=1), "2023", ANNUAL)
    conv = interpolate(annual, MONTHLY, indicator=ind)
    assert conv.series.values.to_numpy() == pytest.approx(months, rel=1e-10)
    assert "along the movement of 'monthly indicator'" in conv.method
    # with no indicator the path is smooth and still keeps the averages
    flat = interpolate(annual, MONTHLY)
    assert "no indicator" in flat.method
    assert flat.series.values.groupby(flat.series.index.year).mean().to_numpy() == (
        pytest.approx(annual.values.to_numpy(), rel=1e-12))
    # linear is still there, and does not keep the averages of a curving index
    lin = interpolate(series("a", [100, 110, 100], "2022", ANNUAL), MONTHLY, method="linear")
    assert lin.series.values.groupby(lin.series.index.year).mean().iloc[1] != pytest.approx(110)


def test_extrapolation_beyond_the_benchmarks_is_flagged():
    # Beyond the last benchmark the indicator is carried by the last benchmark-to-indicator
    # ratio (IMF QNA Manual 2017, ch. 6, the basic extension of the Denton method).
    ind_vals = np.linspace(100, 130, 36)
    ind = series("indicator", ind_vals, "2022-01")
    bench = series("benchmarks", [105.0, 118.0], "2022", ANNUAL)
    res = benchmark(ind, bench)
    ex = res.extrapolated
    assert ex.sum() == 12 and ex[ex].index[0] == pd.Period("2024-01", "M")
    last_ratio = res.ratio.iloc[23]
    assert res.series.values.iloc[24:].to_numpy() == pytest.approx(ind_vals[24:] * last_ratio)
    assert [w.code for w in res.warnings] == ["PE235"]
    # an indicator starting before the first benchmark is extrapolated backwards alike
    res2 = benchmark(series("indicator", ind_vals, "2021-01"), series("b", [110.0], "2022",
                                                                      ANNUAL))
    assert res2.extrapolated.sum() == 24 and res2.used == ("2022",)


def test_status_of_a_benchmarked_value():
    # Each value takes the worst status of its indicator value and of its own and the
    # neighbouring benchmarks (a revised benchmark moves the periods next to it).
    ind = series("indicator", np.linspace(100, 110, 36), "2022-01")
    bench = series("b", [101.0, 104.0, 108.0], "2022", ANNUAL,
                   status=["final", "final", "preliminary"])
    st_ = benchmark(ind, bench).series.status_or_final()
    assert set(st_["2022"]) == {"final"}
    assert set(st_["2023"]) == {"preliminary"} and set(st_["2024"]) == {"preliminary"}


def test_bad_benchmarking_inputs_get_coded_errors():
    ind = series("indicator", np.linspace(100, 110, 24), "2022-01")
    with pytest.raises(RealbasisError) as e:  # quarterly indicator, monthly "benchmarks"
        benchmark(series("q", [1.0, 2.0], "2022Q1", QUARTERLY), ind)
    assert e.value.code == "PE230"
    holed = ind.values.copy()
    holed.iloc[5] = np.nan
    with pytest.raises(RealbasisError) as e:
        benchmark(ind.with_values(holed), series("b", [101.0, 104.0, 106.0], "2021", ANNUAL))
    assert e.value.code == "PE231" and e.value.problems[0].where.period == "2022-06"
    with pytest.raises(RealbasisError) as e:
        benchmark(ind, series("b", [101.0, 104.0], "2030", ANNUAL))
    assert e.value.code == "PE233"
    gap = series("b", [101.0, np.nan, 104.0], "2022", ANNUAL)
    with pytest.raises(RealbasisError) as e:
        benchmark(series("i", np.linspace(100, 110, 36), "2022-01"), gap)
    assert e.value.code == "PE232" and e.value.problems[0].where.period == "2023"
    with pytest.raises(RealbasisError) as e:
        benchmark(ind, series("b", [5.0, 6.0], "2022", ANNUAL, kind="stock"))
    assert e.value.code == "PE234"
    with pytest.raises(RealbasisError) as e:
        interpolate(series("b", [5.0, 6.0], "2022", ANNUAL), MONTHLY, method="cubic")
    assert e.value.code == "PE237"
    # a benchmark the indicator does not reach is left out, with a warning
    res = benchmark(ind, series("b", [101.0, 104.0, 106.0], "2022", ANNUAL))
    assert res.used == ("2022", "2023") and [w.code for w in res.warnings] == ["PE236"]


# --------------------------------------------------------------------------- deflation


def test_deflating_by_an_annual_index_keeps_its_annual_averages():
    # Interpolating a less frequent deflator must keep its period averages (DESIGN.md; IMF
    # QNA Manual 2017, ch. 6): the monthly deflator levels average to the annual ones.
    revenue = series("revenue", np.full(36, 100.0), "2023-01", kind="flow")
    annual = series("cost index", [100.0, 104.0, 106.0], "2023", ANNUAL)
    res = deflate([revenue], [annual], "2023", interpolate=True)
    used = res.index_frame().iloc[:, 0]
    assert used.groupby(used.index.year).mean().to_numpy() == pytest.approx(
        [100.0, 104.0, 106.0], rel=1e-12)
    assert res.table(flags=True)["interpolated"].all()
    assert "PE208" in [w.code for w in res.warnings]
    assert any("proportional Denton" in m for m in res.method_note())
    # linear on request: the old straight lines (a year's months do not keep its average)
    lin = deflate([revenue], [annual], "2023", interpolate="linear")
    lu = lin.index_frame().iloc[:, 0]
    assert lu.groupby(lu.index.year).mean().iloc[1] != pytest.approx(104.0, rel=1e-6)
    assert any("straight lines" in m for m in lin.method_note())
    with pytest.raises(RealbasisError) as e:
        deflate([revenue], [annual], "2023", interpolate="spline")
    assert e.value.code == "PE237"


def test_deflating_with_an_interpolation_indicator():
    # The Denton interpolation of a deflator may follow a more frequent indicator index; if
    # the annual values are the indicator's annual averages, the deflator becomes the
    # indicator (rescaled to base = 100): IMF QNA Manual 2017, ch. 6.
    months = 100 * 1.003 ** np.arange(24) * (1 + 0.02 * np.cos(np.arange(24) / 2))
    ind = series("monthly producer index", months, "2023-01")
    annual = series("annual cost index", months.reshape(2, 12).mean(axis=1), "2023", ANNUAL)
    revenue = series("revenue", np.full(24, 50.0), "2023-01", kind="flow")
    res = deflate([revenue], [annual], "2023", interpolate="denton", indicators=ind)
    used = res.index_frame().iloc[:, 0].to_numpy()
    assert used == pytest.approx(100 * months / months[:12].mean(), rel=1e-10)


def test_interpolated_deflator_status_follows_the_neighbouring_years():
    revenue = series("revenue", np.full(36, 100.0), "2023-01", kind="flow")
    annual = series("cost index", [100.0, 104.0, 106.0], "2023", ANNUAL,
                    status=["final", "final", "preliminary"])
    st_ = deflate([revenue], [annual], "2023", interpolate=True).status_frame().iloc[:, 0]
    assert set(st_["2023"]) == {"final"}
    # 2024's months move when the preliminary 2025 value is revised: not final
    assert set(st_["2024"]) == {"preliminary"} and set(st_["2025"]) == {"preliminary"}
