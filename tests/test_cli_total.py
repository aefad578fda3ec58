"""`realbasis total` and `realbasis deflate --growth-out`: the command-line contracts, the
workbook's Contributions sheet, and the coded errors.

Inputs written here from published data: the ILO/IMF CPI Manual 2004, ch. 19 artificial
data set (tables 19.1 prices, 19.2 quantities; each item's value p x q deflated by its own
price) and statsmodels' macrodata (nominal consumption = realcons x cpi / 100). Values are
checked against those sources; the small invented files are for the error cases only.
"""

from __future__ import annotations

import json
import subprocess
import sys

import numpy as np
import pandas as pd
import pytest
from conftest import ROOT
from openpyxl import load_workbook
from test_indexnum import ILO_CHAINED, ILO_PRICES, ILO_QUANTITIES

from pipeline.cli import main
from pipeline.growth import SPLIT_COLUMNS
from pipeline.model import MONTHLY, Series, Workspace
from pipeline.totals import TABLE_COLUMNS, total_of_parts
from pipeline.workbook import export_workspace

P = np.array(ILO_PRICES)
Q = np.array(ILO_QUANTITIES)
V = (P * Q).sum(axis=1)
MONTHS = [f"2024-{m:02d}" for m in range(1, 6)]
PAIRS = [f"--pair=item{i + 1}=price{i + 1}" for i in range(6)]


def ilo_files(tmp_path, *, units=("USD",) * 6, names=None):
    names = names or [f"item{i + 1}" for i in range(6)]
    money = pd.DataFrame({"period": MONTHS})
    for i, n in enumerate(names):
        money[f"{n} ({units[i]})"] = P[:, i] * Q[:, i]
    m = tmp_path / "items.csv"
    money.to_csv(m, index=False)
    rows = [(f"price{i + 1}", MONTHS[t], 100 * P[t, i], "index 2024-01=100")
            for i in range(6) for t in range(5)]
    ix = tmp_path / "prices.csv"
    pd.DataFrame(rows, columns=["series", "period", "value", "unit"]).to_csv(ix, index=False)
    return str(m), str(ix)


def _run(capsys, *args):
    capsys.readouterr()
    code = main([str(a) for a in args])
    return code, capsys.readouterr()


def test_total_csv_has_exactly_the_columns_and_the_published_fisher_values(tmp_path, capsys):
    m, ix = ilo_files(tmp_path)
    out = tmp_path / "total.csv"
    code, cap = _run(capsys, "total", m, "--index", ix, *PAIRS, "--base", "2024-01",
                     "--chain", "fisher", "--out", out)
    assert code == 0, cap.err
    t = pd.read_csv(out, dtype={"period": str})
    assert tuple(t.columns) == TABLE_COLUMNS
    assert len(t) == 5 * 8
    total = t[t["component"] == "total"]["real"].to_numpy()
    # ILO/IMF CPI Manual 2004, ch. 19, table 19.4: chained Fisher price index (4 decimals);
    # the chained total of the items deflated by their own prices is V_t / P_F(t)
    assert (V / total)[1:] == pytest.approx(ILO_CHAINED["fisher"], abs=6e-5)
    resid = t[t["component"] == "residual"]
    parts = t[t["component"].str.startswith("item")]
    np.testing.assert_allclose(parts.groupby("period")["real"].sum().to_numpy()
                               + resid["real"].to_numpy(), total, rtol=1e-12)
    # empty for total and residual and for the first period
    assert t[t["component"].isin(["total", "residual"])]["contribution_pp"].isna().all()
    assert t[t["period"] == "2024-01"]["contribution_pp"].isna().all()
    assert "wrote" in cap.err and "chained 2024-01 dollars" in cap.err


def test_total_additive_by_default_prints_the_table_and_notes(tmp_path, capsys):
    m, ix = ilo_files(tmp_path)
    code, cap = _run(capsys, "total", m, "--index", ix, *PAIRS, "--base", "2024-01")
    assert code == 0, cap.err
    lines = cap.out.splitlines()
    assert lines[0] == ",".join(TABLE_COLUMNS) and len(lines) == 1 + 40
    t = pd.read_csv(pd.io.common.StringIO(cap.out))
    # ILO ch. 19 table 19.2: the items deflated by their own prices are the quantities
    np.testing.assert_allclose(t[t["component"] == "total"]["real"], Q.sum(axis=1))
    assert (t[t["component"] == "residual"]["real"] == 0).all()
    assert "# caution:" in cap.err and "residual is 0" in cap.err


def test_total_json_and_workbook(tmp_path, capsys):
    m, ix = ilo_files(tmp_path)
    j = tmp_path / "total.json"
    code, cap = _run(capsys, "total", m, "--index", ix, *PAIRS, "--base", "2024-01",
                     "--chain", "fisher", "--out", j)
    assert code == 0, cap.err
    data = json.loads(j.read_text())
    assert data["columns"] == [*TABLE_COLUMNS, "status"] and data["chain"] == "fisher"
    assert data["cautions"] and any("Residual" in line for line in data["method"])
    assert data["pairs"]["item1"] == "price1" and len(data["records"]) == 40
    csv = tmp_path / "total.csv"
    assert _run(capsys, "total", m, "--index", ix, *PAIRS, "--base", "2024-01", "--chain",
                "fisher", "--out", csv)[0] == 0
    x = tmp_path / "total.xlsx"
    code, cap = _run(capsys, "total", m, "--index", ix, *PAIRS, "--base", "2024-01",
                     "--chain", "fisher", "--out", x)
    assert code == 0, cap.err
    wb = load_workbook(x, read_only=True)
    assert wb.sheetnames == ["Summary", "Contributions", "Contributions - year on year",
                             "Contributions - annual", "Indexes used", "Method"]
    rows = list(wb["Contributions"].iter_rows(values_only=True))
    assert list(rows[3]) == [*TABLE_COLUMNS, "status"]
    body = pd.DataFrame([r for r in rows[4:4 + 40]], columns=rows[3])
    printed = pd.read_csv(csv, dtype={"period": str})
    for c in ("nominal", "real", "real_growth_pct", "contribution_pp"):
        np.testing.assert_allclose(body[c].astype(float), printed[c], rtol=1e-15, equal_nan=True)
    assert body["component"].tolist() == printed["component"].tolist()
    method = " ".join(str(c) for r in wb["Method"].iter_rows(values_only=True) for c in r if c)
    assert "BEA" in method and "Residual" in method and "Cautions" in method


def test_contributions_on_the_year_on_year_basis_from_the_command_line(tmp_path, capsys):
    m, ix = ilo_files(tmp_path)
    code, cap = _run(capsys, "total", m, "--index", ix, *PAIRS, "--base", "2024-01",
                     "--basis", "yoy")
    assert code == 0, cap.err
    t = pd.read_csv(pd.io.common.StringIO(cap.out))
    assert t["contribution_pp"].isna().all()  # five months: no year-earlier period


def _err(capsys, *args) -> str:
    code, cap = _run(capsys, *args)
    assert code == 2
    assert "Traceback" not in cap.err
    return cap.err


def test_pair_errors_are_coded_and_name_the_option(tmp_path, capsys):
    m, ix = ilo_files(tmp_path)
    err = _err(capsys, "total", m, "--index", ix, *PAIRS[:5], "--base", "2024-01")
    assert "[CL302]" in err and "'item6'" in err and "--pair" in err
    err = _err(capsys, "total", m, "--index", ix, *PAIRS[:5], "--pair", "item7=price6",
               "--base", "2024-01")
    assert "[CL303]" in err and "'item7'" in err and "[CL302]" in err
    err = _err(capsys, "total", m, "--index", ix, *PAIRS[:5], "--pair", "item6=price9",
               "--base", "2024-01")
    assert "[CL304]" in err and "'price9'" in err and "one of 'price1'" in err
    err = _err(capsys, "total", m, "--index", ix, *PAIRS, "--pair", "item6",
               "--base", "2024-01")
    assert "[CL301]" in err
    err = _err(capsys, "total", m, "--index", ix, *PAIRS, "--pair", "item6=price1",
               "--base", "2024-01")
    assert "[CL305]" in err


def test_mixed_units_and_bad_suffix_are_coded(tmp_path, capsys):
    m, ix = ilo_files(tmp_path, units=("USD",) * 5 + ("EUR",))
    err = _err(capsys, "total", m, "--index", ix, *PAIRS, "--base", "2024-01")
    assert "[DF203]" in err and "'item6' (EUR)" in err
    m, ix = ilo_files(tmp_path)
    out = tmp_path / "total.txt"
    err = _err(capsys, "total", m, "--index", ix, *PAIRS, "--base", "2024-01", "--out", out)
    assert "[EX001]" in err and not out.exists()


def test_names_holding_an_equals_sign(tmp_path, capsys):
    m, ix = ilo_files(tmp_path)
    idx = pd.read_csv(ix)
    idx["series"] = idx["series"].str.replace("price", "p=")
    idx.to_csv(ix, index=False)
    pairs = [f"--pair=item{i + 1}=p={i + 1}" for i in range(6)]
    code, cap = _run(capsys, "total", m, "--index", ix, *pairs, "--base", "2024-01")
    assert code == 0, cap.err


def test_no_traceback_in_a_subprocess(tmp_path):
    m, ix = ilo_files(tmp_path)
    proc = subprocess.run([sys.executable, "-m", "pipeline.cli", "total", m, "--index", ix,
                           "--pair", "item1=price1", "--base", "2024-01"], cwd=ROOT,
                          capture_output=True, text=True, timeout=120)
    assert proc.returncode == 2 and "[CL302]" in proc.stderr
    assert "Traceback" not in proc.stderr


# --------------------------------------------------------------------------- growth-out


def macro_files(tmp_path):
    import statsmodels.api as sm

    data = sm.datasets.macrodata.load_pandas().data
    labels = [f"{int(y)}Q{int(q)}" for y, q in zip(data["year"], data["quarter"], strict=True)]
    m = tmp_path / "consumption.csv"
    pd.DataFrame({"period": labels, "Consumption (USD billions)":
                  data["realcons"] * data["cpi"] / 100}).to_csv(m, index=False)
    ix = tmp_path / "cpi.csv"
    pd.DataFrame({"series": "cpi", "period": labels, "value": data["cpi"],
                  "unit": "index"}).to_csv(ix, index=False)
    return str(m), str(ix), data


def test_growth_out_reproduces_realcons_growth(tmp_path, capsys):
    # statsmodels macrodata: nominal = realcons x cpi / 100; deflated by cpi its growth is
    # realcons' growth; price growth is cpi's; the split is exact.
    m, ix, data = macro_files(tmp_path)
    g = tmp_path / "growth.csv"
    code, cap = _run(capsys, "deflate", m, "--index", ix, "--base", "2000", "--out",
                     tmp_path / "real.csv", "--growth-out", g)
    assert code == 0, cap.err
    t = pd.read_csv(g, dtype={"start": str, "end": str})
    assert tuple(t.columns) == SPLIT_COLUMNS
    rc = data["realcons"].to_numpy()
    per = t[t["measure"] == "period"]
    np.testing.assert_allclose(per["real_pct"], 100 * (rc[1:] / rc[:-1] - 1), atol=1e-11)
    yoy = t[t["measure"] == "yoy"]
    np.testing.assert_allclose(yoy["real_pct"], 100 * (rc[4:] / rc[:-4] - 1), atol=1e-11)
    np.testing.assert_allclose(1 + t["nominal_pct"] / 100,
                               (1 + t["real_pct"] / 100) * (1 + t["price_pct"] / 100),
                               rtol=1e-13)
    assert t["measure"].unique().tolist() == ["period", "annualised", "yoy", "cagr",
                                              "cumulative"]
    assert "wrote" in cap.err and (tmp_path / "real.csv").exists()


def test_growth_out_json_and_xlsx_and_with_seasonal_adjustment(tmp_path, capsys):
    m, ix, _ = macro_files(tmp_path)
    j = tmp_path / "growth.json"
    code, cap = _run(capsys, "deflate", m, "--index", ix, "--base", "2000", "--out",
                     tmp_path / "r.csv", "--growth-out", j)
    assert code == 0, cap.err
    data = json.loads(j.read_text())
    assert data["columns"] == list(SPLIT_COLUMNS) and data["cautions"]
    assert any("(1 + nominal) = (1 + real)" in line for line in data["method"])
    x = tmp_path / "growth.xlsx"
    code, cap = _run(capsys, "deflate", m, "--index", ix, "--base", "2000", "--growth-out", x)
    assert code == 0, cap.err
    wb = load_workbook(x, read_only=True)
    assert wb.sheetnames == ["Growth", "Method"]
    rows = list(wb["Growth"].iter_rows(values_only=True))
    assert list(rows[0]) == list(SPLIT_COLUMNS) and len(rows) == 1 + 605
    sa = tmp_path / "growth_sa.csv"
    code, cap = _run(capsys, "deflate", m, "--index", ix, "--base", "2000", "--sa", "stl",
                     "--out", tmp_path / "sa.csv", "--growth-out", sa)
    assert code == 0, cap.err
    # with --sa the rates are those of the seasonally adjusted values
    t_sa = pd.read_csv(sa)
    adj = pd.read_csv(tmp_path / "sa.csv")
    real_sa = adj["real_sa"].to_numpy()
    per = t_sa[t_sa["measure"] == "period"]
    np.testing.assert_allclose(per["real_pct"], 100 * (real_sa[1:] / real_sa[:-1] - 1),
                               rtol=1e-9, atol=1e-9)


def test_growth_out_bad_suffix_is_a_usage_error(tmp_path, capsys):
    m, ix, _ = macro_files(tmp_path)
    with pytest.raises(SystemExit) as info:
        main(["deflate", m, "--index", ix, "--base", "2000", "--growth-out", "g.txt"])
    assert info.value.code == 2
    assert "[CL001]" in capsys.readouterr().err


# --------------------------------------------------------------------------- workspace


def test_workspace_export_gets_a_contributions_sheet(tmp_path):
    # ILO ch. 19 items and prices held in a workspace with a saved total of parts.
    idx = pd.period_range("2024-01", periods=5, freq="M")
    series = {f"item{i + 1}": Series(f"item{i + 1}", pd.Series(P[:, i] * Q[:, i], index=idx),
                                     MONTHLY) for i in range(6)}
    indexes = {f"price{i + 1}": {"": Series(f"price{i + 1}",
                                            pd.Series(100 * P[:, i], index=idx), MONTHLY,
                                            kind="index")} for i in range(6)}
    pairs = {f"item{i + 1}": f"price{i + 1}" for i in range(6)}
    ws = Workspace("w1", "ILO ch. 19 items", 1, series=series, indexes=indexes,
                   settings={"base": "2024-01", "deflators": ["price1"],
                             "total": {"pairs": pairs, "chain": "fisher"}})
    path = export_workspace(ws, tmp_path / "ws.xlsx")
    wb = load_workbook(path, read_only=True)
    assert "Contributions" in wb.sheetnames
    rows = list(wb["Contributions"].iter_rows(values_only=True))
    body = pd.DataFrame(rows[4:4 + 40], columns=rows[3])
    engine = total_of_parts(list(series.values()), [v[""] for v in indexes.values()], pairs,
                            "2024-01", chain="fisher").table()
    np.testing.assert_allclose(body["contribution_pp"].astype(float),
                               engine["contribution_pp"], rtol=1e-15, equal_nan=True)
    method = " ".join(str(c) for r in wb["Method"].iter_rows(values_only=True) for c in r if c)
    assert "Total of parts" in method
    # CSV exports stay the deflation table
    csv = export_workspace(ws, tmp_path / "ws.csv")
    assert "component" not in pd.read_csv(csv).columns
