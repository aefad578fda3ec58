"""The methods on the command line: `index benchmark`, `deflate --interpolate`,
`index compute --rolling-year`, `index vintages --revision-band`."""

from __future__ import annotations

import io
import json

import numpy as np
import openpyxl
import pandas as pd
import pytest
from conftest import DEMO
from test_benchmark import QNA88_ANNUAL, QNA88_BENCHMARKED, QNA88_QUARTERLY
from test_rolling_year import TABLE_22_18, TURVEY

from pipeline.cli import main

CHAINED = "Chained consumer index"
DEMO_VINTAGES = [DEMO / "consumer_indexes.csv",
                 DEMO / "chained_consumer_index_vintage_2026-04-15.csv",
                 DEMO / "chained_consumer_index_vintage_2025-10-15.csv",
                 DEMO / "chained_consumer_index_vintage_2025-04-15.csv"]


@pytest.fixture()
def qna88(tmp_path):
    q = tmp_path / "quarterly.csv"
    labels = [f"{y}Q{k}" for y in (2011, 2012, 2013) for k in (1, 2, 3, 4)]
    pd.DataFrame({"period": labels, "Volume index (2010=100)": QNA88_QUARTERLY}).to_csv(
        q, index=False)
    a = tmp_path / "annual.csv"
    pd.DataFrame({"period": ["2011", "2012", "2013"],
                  "Volume index (2010=100)": QNA88_ANNUAL}).to_csv(a, index=False)
    return q, a


def test_benchmark_writes_period_value(qna88, tmp_path, capsys):
    q, a = qna88
    out = tmp_path / "benchmarked.csv"
    assert main(["index", "benchmark", str(q), "--benchmarks", str(a), "--out", str(out)]) == 0
    df = pd.read_csv(out)
    assert list(df.columns) == ["period", "value"]
    # IMF QNA Manual 2017, Example 8.8, column (6); 0.02 is what the printed rounding allows
    assert df["value"].to_numpy() == pytest.approx(QNA88_BENCHMARKED, abs=0.02)
    err = capsys.readouterr().err
    assert "proportional Denton" in err and "(average)" in err and "not official" in err
    # JSON adds the method, the extrapolated periods and the statuses
    assert main(["index", "benchmark", str(q), "--benchmarks", str(a), "--aggregation",
                 "average", "--out", str(tmp_path / "b.json")]) == 0
    doc = json.loads((tmp_path / "b.json").read_text())
    assert doc["extrapolated"] == {"Volume index": []} and doc["cautions"]


def test_benchmark_several_series_and_sums(tmp_path, capsys):
    # flows: each year's months sum to the annual total (IMF QNA Manual 2017, ch. 6)
    months = pd.period_range("2023-01", "2024-12", freq="M")
    rng = np.random.default_rng(3)
    ind = pd.DataFrame({"period": [str(p) for p in months],
                        "Sales (USD)": 100 + rng.normal(0, 5, 24),
                        "Fees (USD)": 10 + rng.normal(0, 1, 24)})
    ind.to_csv(tmp_path / "monthly.csv", index=False)
    pd.DataFrame({"period": ["2023", "2024"], "Sales (USD)": [1300.0, 1400.0],
                  "Fees (USD)": [125.0, 118.0]}).to_csv(tmp_path / "annual.csv", index=False)
    assert main(["index", "benchmark", str(tmp_path / "monthly.csv"), "--benchmarks",
                 str(tmp_path / "annual.csv")]) == 0
    df = pd.read_csv(io.StringIO(capsys.readouterr().out))
    assert list(df.columns) == ["series", "period", "value"]
    sums = df.assign(year=df["period"].str[:4]).groupby(["series", "year"])["value"].sum()
    assert sums[("Sales", "2023")] == pytest.approx(1300.0, rel=1e-12)
    assert sums[("Fees", "2024")] == pytest.approx(118.0, rel=1e-12)


def test_benchmark_pairing_and_stock_errors(tmp_path, capsys):
    pd.DataFrame({"period": ["2024-01", "2024-02"], "A (USD)": [1, 2], "B (USD)": [1, 2]}
                 ).to_csv(tmp_path / "m.csv", index=False)
    pd.DataFrame({"period": ["2024"], "C (USD)": [3], "D (USD)": [4]}).to_csv(
        tmp_path / "a.csv", index=False)
    assert main(["index", "benchmark", str(tmp_path / "m.csv"), "--benchmarks",
                 str(tmp_path / "a.csv")]) == 2
    assert "[WS410]" in capsys.readouterr().err
    pd.DataFrame({"period": ["2024"], "Cash balance (USD)": [3]}).to_csv(
        tmp_path / "s.csv", index=False)
    months = [f"2024-{m:02d}" for m in range(1, 13)]
    pd.DataFrame({"period": months, "Cash balance (USD)": range(1, 13)}).to_csv(
        tmp_path / "sm.csv", index=False)
    assert main(["index", "benchmark", str(tmp_path / "sm.csv"), "--benchmarks",
                 str(tmp_path / "s.csv")]) == 2
    err = capsys.readouterr().err
    assert "[WS411]" in err and "--aggregation" in err


@pytest.fixture()
def annual_deflator(tmp_path):
    months = pd.period_range("2023-01", "2025-12", freq="M")
    pd.DataFrame({"period": [str(p) for p in months], "Revenue (USD)": 100.0}).to_csv(
        tmp_path / "revenue.csv", index=False)
    pd.DataFrame({"period": ["2023", "2024", "2025"],
                  "Cost index (2023=100)": [100.0, 104.0, 106.0]}).to_csv(
        tmp_path / "annual.csv", index=False)
    return tmp_path / "revenue.csv", tmp_path / "annual.csv"


def test_deflate_refuses_a_less_frequent_deflator_unless_interpolation_is_asked(
        annual_deflator, capsys):
    rev, ann = annual_deflator
    assert main(["deflate", str(rev), "--index", str(ann), "--base", "2023"]) == 2
    err = capsys.readouterr().err
    assert "[PE204]" in err and "--to" in err and "--interpolate" in err
    assert main(["deflate", str(rev), "--index", str(ann), "--base", "2023",
                 "--interpolate"]) == 0
    out, err = capsys.readouterr()
    df = pd.read_csv(io.StringIO(out))
    assert list(df.columns)[-1] == "interpolated" and df["interpolated"].all()
    # Denton keeps each year's average of the deflator levels (IMF QNA Manual 2017, ch. 6)
    means = df.groupby(df["period"].str[:4])["deflator_index"].mean()
    assert means.to_numpy() == pytest.approx([100.0, 104.0, 106.0], rel=1e-12)
    assert "proportional Denton" in err and "[PE208]" in err
    assert main(["deflate", str(rev), "--index", str(ann), "--base", "2023",
                 "--interpolate", "linear"]) == 0
    assert "straight lines" in capsys.readouterr().err


def test_deflate_interpolation_indicator(annual_deflator, tmp_path, capsys):
    rev, ann = annual_deflator
    months = pd.period_range("2023-01", "2025-12", freq="M")
    pd.DataFrame({"period": [str(p) for p in months],
                  "Monthly price index (2023=100)": np.linspace(99, 107, 36)}).to_csv(
        tmp_path / "ind.csv", index=False)
    out = tmp_path / "real.json"
    assert main(["deflate", str(rev), "--index", str(ann), "--base", "2023", "--interpolate",
                 "--interpolate-indicator", str(tmp_path / "ind.csv"), "--out", str(out)]) == 0
    doc = json.loads(out.read_text())
    assert "interpolated" in doc["columns"]
    assert any("Monthly price index" in m for m in doc["method"])
    assert main(["deflate", str(rev), "--index", str(ann), "--base", "2023", "--interpolate",
                 "linear", "--interpolate-indicator", str(tmp_path / "ind.csv")]) == 2
    assert "[CL260]" in capsys.readouterr().err


def test_convert_takes_interpolate_too(annual_deflator, capsys):
    rev, ann = annual_deflator
    assert main(["index", "convert", str(rev), "--index", str(ann), "--base", "2023",
                 "--to", "constant", "--interpolate"]) == 0
    df = pd.read_csv(io.StringIO(capsys.readouterr().out))
    assert "interpolated" in df.columns and df["interpolated"].all()


def test_compute_rolling_year_on_turvey(tmp_path, capsys):
    if not TURVEY.exists():
        pytest.skip("Turvey's seasonal fruit data is not on this machine (reference only)")
    df = pd.read_csv(TURVEY).rename(columns={"commodity": "item"})
    path = tmp_path / "fruit.csv"
    df.to_csv(path, index=False)
    assert main(["index", "compute", str(path), "--formula", "fisher", "--rolling-year",
                 "--chained", "--base", "1970"]) == 0
    out, err = capsys.readouterr()
    got = pd.read_csv(io.StringIO(out))
    assert list(got.columns) == ["period", "index", "matched_items"]
    assert got["period"].iloc[0] == "1970-12" and got["index"].iloc[0] == 100.0
    # PPI Manual 2004, Table 22.18, chained Fisher column
    table = got.set_index("period")["index"] / 100
    for period in ("1971-12", "1972-06", "1973-02"):
        assert table[period] == pytest.approx(TABLE_22_18[period][5], abs=6e-5)
    assert "base year 1970 = 100" in err and "rolling-year" in err


def test_compute_rolling_year_hand_data(tmp_path, capsys):
    # two items, one bought only in Q2 and Q3 (see tests/test_rolling_year.py for the
    # working): fixed-base Laspeyres 2021Q4 = 190/170.
    rows = []
    oil = {2020: [10, 10, 10, 10], 2021: [11, 11, 12, 12]}
    ice = {2020: [5, 5], 2021: [6, 5]}
    iceq = {2020: [6, 8], 2021: [5, 8]}
    for y in (2020, 2021):
        for q in range(4):
            rows.append((f"{y}Q{q + 1}", "heating oil", oil[y][q], [4, 2, 1, 3][q]))
            if q in (1, 2):
                rows.append((f"{y}Q{q + 1}", "ice cream", ice[y][q - 1], iceq[y][q - 1]))
    path = tmp_path / "p.csv"
    pd.DataFrame(rows, columns=["period", "item", "price", "quantity"]).to_csv(path, index=False)
    assert main(["index", "compute", str(path), "--formula", "laspeyres", "--rolling-year",
                 "--out", str(tmp_path / "r.json")]) == 0
    doc = json.loads((tmp_path / "r.json").read_text())
    rows = {r["period"]: r for r in doc["rows"]}
    assert rows["2021Q4"]["index"] == pytest.approx(100 * 190 / 170)
    assert rows["2021Q4"]["matched_items"] == 6 and doc["base_year"] == "2020"


def test_vintages_revision_band_on_the_demo(tmp_path, capsys):
    files = [str(f) for f in DEMO_VINTAGES]
    out = tmp_path / "band.json"
    assert main(["index", "vintages", *files, "--series", CHAINED, "--revision-band",
                 "--nominal", str(DEMO / "harbourline_revenue.csv"), "--base", "2024",
                 "--band-out", str(out)]) == 0
    err = capsys.readouterr().err
    assert "revision history:" in err and "age_months" in err
    assert "past revisions of this index would put it between" in err
    doc = json.loads(out.read_text())
    assert doc["available"] and doc["revisions_used"] >= 8 and len(doc["vintages_used"]) == 4
    assert doc["real_band"] and doc["index_band"][-1]["period"] == "2026-09"
    # the workbook: the real figures under the current vintage plus the band sheet
    xlsx = tmp_path / "band.xlsx"
    assert main(["index", "vintages", *files, "--series", CHAINED, "--revision-band",
                 "--nominal", str(DEMO / "harbourline_revenue.csv"), "--base", "2024",
                 "--to", "A", "--band-out", str(xlsx)]) == 0
    wb = openpyxl.load_workbook(xlsx, read_only=True)
    assert "Revision band" in wb.sheetnames and "Real terms" in wb.sheetnames
    capsys.readouterr()
    # stricter settings: quantiles 5/95, and a minimum the demo does not reach
    assert main(["index", "vintages", *files, "--series", CHAINED, "--revision-band",
                 "--band-quantiles", "5", "95", "--band-min-revisions", "100"]) == 0
    err = capsys.readouterr().err
    assert "[WS310]" in err and "no revision band" in err
    assert main(["index", "vintages", *files, "--series", CHAINED, "--revision-band",
                 "--band-quantiles", "90", "10"]) == 2
    assert "[WS412]" in capsys.readouterr().err


def test_vintages_revision_band_with_one_vintage(capsys):
    assert main(["index", "vintages", str(DEMO / "consumer_indexes.csv"), "--series", CHAINED,
                 "--revision-band"]) == 0
    err = capsys.readouterr().err
    assert "[WS310]" in err and "no revision band" in err
    # without the band the command still needs two vintages
    assert main(["index", "vintages", str(DEMO / "consumer_indexes.csv"), "--series",
                 CHAINED]) == 2
