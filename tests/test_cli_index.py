"""`realbasis index ...` on the command line (the contract in issue 3 / README)."""

from __future__ import annotations

import io
import json

import numpy as np
import pandas as pd
import pytest
from conftest import DEMO
from test_indexnum import ILO_CHAINED, ILO_PRICES, ILO_QUANTITIES

from pipeline.cli import main


@pytest.fixture()
def ilo_file(tmp_path):
    # ILO/IMF CPI Manual 2004, ch. 19 artificial data set, on quarters 2024Q1..2025Q1.
    labels = ["2024Q1", "2024Q2", "2024Q3", "2024Q4", "2025Q1"]
    rows = [(labels[t], f"item{i + 1}", ILO_PRICES[t][i], ILO_QUANTITIES[t][i])
            for t in range(5) for i in range(6)]
    path = tmp_path / "prices.csv"
    pd.DataFrame(rows, columns=["period", "item", "price", "quantity"]).to_csv(path, index=False)
    return path


def test_compute_writes_the_contract_csv(ilo_file, tmp_path, capsys):
    out = tmp_path / "fisher.csv"
    rc = main(["index", "compute", str(ilo_file), "--formula", "fisher", "--chained",
               "--out", str(out)])
    assert rc == 0
    df = pd.read_csv(out)
    assert list(df.columns) == ["period", "index", "matched_items"]
    assert df["period"].tolist()[0] == "2024Q1" and df["index"].iloc[0] == 100.0
    # chained Fisher, ILO/IMF CPI Manual 2004 ch. 19 (table 19.4)
    assert (df["index"].to_numpy()[1:] / 100) == pytest.approx(ILO_CHAINED["fisher"], abs=6e-5)
    assert df["matched_items"].tolist() == [6] * 5
    err = capsys.readouterr().err
    assert "dropped in all 0" in err and "not official statistics" in err


def test_compute_base_period_and_base_span(ilo_file, capsys):
    assert main(["index", "compute", str(ilo_file), "--formula", "laspeyres",
                 "--base", "2024Q2"]) == 0
    df = pd.read_csv(io.StringIO(capsys.readouterr().out))
    assert df.loc[1, "index"] == pytest.approx(100.0)
    assert main(["index", "compute", str(ilo_file), "--formula", "tornqvist", "--chained",
                 "--base", "2024", "--out", str(ilo_file.with_suffix(".json"))]) == 0
    doc = json.loads(ilo_file.with_suffix(".json").read_text())
    vals = [r["index"] for r in doc["rows"]]
    # rebasing to a year: mean of its quarters = 100 (DESIGN.md rebasing rule)
    assert np.mean(vals[:4]) == pytest.approx(100.0)
    assert doc["cautions"] and "2024 = 100" in " ".join(doc["method"])


def test_compute_reports_matched_and_dropped(tmp_path, capsys):
    path = tmp_path / "p.csv"
    path.write_text("period,item,price,expenditure\n2024-01,a,1,10\n2024-01,b,2,20\n"
                    "2024-02,a,1.1,11\n2024-02,c,5,5\n2024-03,a,1.2,12\n2024-03,c,5,5\n")
    assert main(["index", "compute", str(path), "--formula", "tornqvist", "--chained"]) == 0
    captured = capsys.readouterr()
    df = pd.read_csv(io.StringIO(captured.out))
    assert df["matched_items"].tolist() == [2, 1, 2]
    # link 2->3 on items a and c: Törnqvist with average expenditure shares (ILO/IMF CPI
    # Manual 2004, ch. 15 eq. 15.81), hand-computed; c's price is unchanged.
    share_a = 0.5 * (11 / 16 + 12 / 17)
    expected = 110.0 * np.exp(share_a * np.log(1.2 / 1.1))
    assert df["index"].tolist() == pytest.approx([100.0, 110.0, expected])
    assert "WS008" in captured.err


def test_compute_bad_input_is_a_located_coded_error(tmp_path, capsys):
    path = tmp_path / "bad.csv"
    path.write_text("period,item,price,quantity\n2024-01,a,1,1\n2024-02,a,-3,1\n")
    assert main(["index", "compute", str(path), "--formula", "laspeyres"]) == 2
    err = capsys.readouterr().err
    assert "[WS002]" in err and "row 3" in err and "price" in err
    assert main(["index", "compute", str(path), "--formula", "laspeyres",
                 "--out", str(tmp_path / "x.xlsx")]) == 2
    assert "WS00" in capsys.readouterr().err  # the bad price is found before the output


def test_blend_demo_cost_index_and_gap(tmp_path, capsys):
    out, gap = tmp_path / "own.csv", tmp_path / "gap.csv"
    rc = main(["index", "blend", str(DEMO / "harbourline_cost_components.csv"),
               "--weights", str(DEMO / "harbourline_cost_weights.csv"), "--link", "annual",
               "--out", str(out), "--gap-out", str(gap)])
    assert rc == 0
    df = pd.read_csv(out)
    assert list(df.columns) == ["period", "fixed", "annual-chain", "tornqvist", "status"]
    assert df.iloc[:12, 1:4].mean().to_numpy() == pytest.approx([100.0] * 3)  # 2019 = 100
    assert df["status"].iloc[-1] == "preliminary"
    err = capsys.readouterr().err
    assert "percentage points a year" in err
    g = pd.read_csv(gap)
    assert "gap_vs_tornqvist_pp" in g.columns and len(g) >= 5


def test_blend_errors(tmp_path, capsys):
    w = tmp_path / "w.csv"
    w.write_text("period,Goods purchased,Wages and benefits\n2019,0.5,0.2\n")
    rc = main(["index", "blend", str(DEMO / "harbourline_cost_components.csv"),
               "--weights", str(w), "--weights-as", "shares"])
    assert rc == 2 and "[WS104]" in capsys.readouterr().err
    rc = main(["index", "blend", str(DEMO / "harbourline_cost_components.csv"),
               "--weights", str(w)])
    assert rc == 2 and "[WS101]" in capsys.readouterr().err


def _index_file(path, name, labels, values, status=None, vintage=None):
    df = pd.DataFrame({"series": name, "period": labels, "value": values})
    if status is not None:
        df["status"] = status
    if vintage is not None:
        df["vintage"] = vintage
    df.to_csv(path, index=False)
    return path


def test_link_prints_the_factor(tmp_path, capsys):
    # Linking at an overlap o: I(t) = I_new(t) x I_old(o)/I_new(o) (DESIGN.md).
    old = _index_file(tmp_path / "old.csv", "Old", ["2020", "2021", "2022"], [90.0, 95, 100])
    new = _index_file(tmp_path / "new.csv", "New", ["2022", "2023"], [100.0 * 2, 104 * 2])
    assert main(["index", "link", str(old), str(new), "--overlap", "2022"]) == 0
    cap = capsys.readouterr()
    df = pd.read_csv(io.StringIO(cap.out))
    assert df["value"].tolist() == pytest.approx([90, 95, 100, 104])
    assert set(df["series"]) == {"Old"}  # the engine names the linked index after the older segment
    assert "link factor 0.5" in cap.err


def test_project_with_rates_per_year(tmp_path, capsys):
    ix = _index_file(tmp_path / "ix.csv", "Deflator", ["2023", "2024"], [100.0, 103.0])
    assert main(["index", "project", str(ix), "--rate", "2025=3%", "--rate", "2026=0.02",
                 "--until", "2026"]) == 0
    df = pd.read_csv(io.StringIO(capsys.readouterr().out))
    assert df["value"].tolist() == pytest.approx([100, 103, 103 * 1.03, 103 * 1.03 * 1.02])
    assert set(df["series"]) == {"Deflator"}
    assert df["status"].tolist() == ["final", "final", "projected", "projected"]
    assert main(["index", "project", str(ix), "--rate", "lots", "--until", "2026"]) == 2
    assert "[WS403]" in capsys.readouterr().err


def test_convert_then_year_to_constant(tmp_path, capsys):
    ix = _index_file(tmp_path / "ix.csv", "Deflator", ["FY2025", "FY2026", "FY2027"],
                     [100.0, 102.0, 104.0], status=["final", "final", "projected"])
    money = tmp_path / "budget.csv"
    money.write_text("series,period,value,unit\nBus operations,FY2025,50,USD thousands\n"
                     "Bus operations,FY2026,51,USD thousands\nBus operations,FY2027,53,USD thousands\n")
    assert main(["index", "convert", str(money), "--index", str(ix), "--base", "FY2025",
                 "--to", "constant", "--fy-start", "7"]) == 0
    df = pd.read_csv(io.StringIO(capsys.readouterr().out))
    assert df["constant"].tolist() == pytest.approx([50, 51 / 1.02, 53 / 1.04])
    assert df["status"].tolist()[-1] == "projected"


def test_vintages_in_one_file_and_real_impact(tmp_path, capsys):
    both = pd.concat([
        pd.read_csv(_index_file(tmp_path / "a.csv", "Consumer index", ["2020", "2021", "2022"],
                                [100.0, 102.0, 104.0], vintage="2023-01-15")),
        pd.read_csv(_index_file(tmp_path / "b.csv", "Consumer index", ["2020", "2021", "2022"],
                                [100.0, 102.0, 104.5], vintage="2023-07-15")),
    ])
    path = tmp_path / "vintages.csv"
    both.to_csv(path, index=False)
    money = tmp_path / "rev.csv"
    money.write_text("period,Revenue (USD thousands)\n2020,1000\n2021,1100\n2022,1200\n")
    out, impact = tmp_path / "rev_out.csv", tmp_path / "impact.csv"
    rc = main(["index", "vintages", str(path), "--old-preliminary-last", "1",
               "--nominal", str(money), "--base", "2020", "--out", str(out),
               "--impact-out", str(impact)])
    assert rc == 0
    rev = pd.read_csv(out)
    assert rev["revision"].tolist() == pytest.approx([0, 0, 0.5])
    assert rev["old_status"].tolist()[-1] == "preliminary"
    imp = pd.read_csv(impact)
    # real = nominal x I(B)/I(t) under each vintage (DESIGN.md)
    assert imp["real_change"].iloc[-1] == pytest.approx(1200 * 100 / 104.5 - 1200 * 100 / 104)
    assert "1 value(s) revised" in capsys.readouterr().err
    one = tmp_path / "one.csv"
    pd.read_csv(tmp_path / "a.csv").to_csv(one, index=False)
    assert main(["index", "vintages", str(one)]) == 2
    assert "[WS404]" in capsys.readouterr().err
