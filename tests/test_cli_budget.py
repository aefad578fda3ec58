"""The budget officer's path on the command line: `realbasis deflate ... --outlay-rates`,
`--budget-out`, `--interpolate`, FY bases, and `realbasis index project --rate` as given.

Contract: same CSV columns as every deflation (`series, deflator, period, nominal,
deflator_index, real, status`), `deflator_index` = the implied authority deflator
rebased to the base period; exit 2 with a coded message on stderr (no traceback) for bad
input. The demo files are invented and illustrative (plumbing); the outlay arithmetic is
proven by hand in test_outlay.py (common practice in public budgeting)."""

from __future__ import annotations

import json
import subprocess
import sys

import openpyxl
import pandas as pd
import pytest
from conftest import DEMO, ROOT

from pipeline.cli import main

PROGRAMS = str(DEMO / "tallmere_program_spending.csv")
GCD = str(DEMO / "government_consumption_deflator.csv")
CCI = str(DEMO / "construction_cost_index.csv")
REVENUE = str(DEMO / "harbourline_revenue.csv")
CPI = str(DEMO / "consumer_indexes.csv")
COLUMNS = ["series", "deflator", "period", "nominal", "deflator_index", "real", "status"]


def run_cli(*args: str) -> subprocess.CompletedProcess:
    return subprocess.run([sys.executable, "-m", "pipeline.cli", *args], cwd=ROOT,
                          capture_output=True, text=True, timeout=120)


@pytest.fixture(scope="module")
def projected_gcd(tmp_path_factory) -> str:
    """The government deflator projected to FY2032 at 2.5 % a year, as a budget office
    would before deflating FY2030 authority spent over three years."""
    out = tmp_path_factory.mktemp("idx") / "gcd.csv"
    assert main(["index", "project", GCD, "--rate", "2.5%", "--until", "FY2032",
                 "--fy-start", "7", "--out", str(out)]) == 0
    return str(out)


def test_outlay_rates_contract(projected_gcd, tmp_path, capsys):
    out = tmp_path / "real.csv"
    code = main(["deflate", PROGRAMS, "--index", projected_gcd, "--base", "FY2025",
                 "--fiscal-start", "7", "--outlay-rates", "0.5,0.3,0.2", "--out", str(out)])
    assert code == 0
    t = pd.read_csv(out)
    assert list(t.columns) == COLUMNS
    assert t["period"].iloc[0] == "FY2016" and t["period"].iloc[-1] == "FY2030"
    g = pd.read_csv(projected_gcd)
    q = g.set_index("period")["value"]
    fy = {y: q[[f"{y - 1}Q3", f"{y - 1}Q4", f"{y}Q1", f"{y}Q2"]].mean() for y in
          range(2016, 2033)}  # each fiscal year = mean of its quarters (July start)
    bus = t[t.series == "Bus operations"].set_index("period")
    # real authority by hand: sum_k r_k x BA(t) x I(FY2025) / I(t+k)
    ba = bus.at["FY2028", "nominal"]
    by_hand = ba * (0.5 * fy[2025] / fy[2028] + 0.3 * fy[2025] / fy[2029]
                    + 0.2 * fy[2025] / fy[2030])
    assert bus.at["FY2028", "real"] == pytest.approx(by_hand, rel=1e-12)
    # deflator_index: the implied authority deflator rebased to FY2025 = 100
    implied = 100 * bus["nominal"] / bus["real"]
    assert bus["deflator_index"].to_numpy() == pytest.approx(
        (100 * implied / implied["FY2025"]).to_numpy(), rel=1e-12)
    assert bus.at["FY2025", "deflator_index"] == pytest.approx(100.0)
    # the proposed out-years (and outlays at projected index values) are projected
    assert set(bus.loc["FY2025":, "status"]) == {"projected"}
    err = capsys.readouterr().err
    assert "wrote" in err


def test_outlay_rates_on_stdout_and_per_series(projected_gcd):
    r = run_cli("deflate", PROGRAMS, "--index", projected_gcd, "--base", "FY2025",
                "--fiscal-start", "7", "--outlay-rates", "Capital maintenance=50%,30%,20%")
    assert r.returncode == 0, r.stderr
    lines = r.stdout.splitlines()
    assert lines[0] == ",".join(COLUMNS)
    assert "# Outlay rates of 'Capital maintenance': 50 % in the year of authority" in r.stderr
    assert "deflated as usual" in r.stderr and "# caution:" in r.stderr


@pytest.mark.parametrize("rates, code, words", [
    ("0.5,0.3,0.1", "DF020", "add up to"),
    ("0.6,-0.1,0.5", "DF021", "negative"),
])
def test_bad_rates_exit_2(projected_gcd, rates, code, words):
    r = run_cli("deflate", PROGRAMS, "--index", projected_gcd, "--base", "FY2025",
                "--fiscal-start", "7", "--outlay-rates", rates)
    assert r.returncode == 2 and f"[{code}]" in r.stderr and words in r.stderr
    assert "Traceback" not in r.stderr and r.stdout == ""


def test_outlay_years_beyond_the_index_are_named_with_the_remedy():
    r = run_cli("deflate", PROGRAMS, "--index", GCD, "--base", "FY2025", "--fiscal-start",
                "7", "--outlay-rates", "0.5,0.3,0.2")
    assert r.returncode == 2 and "[DF022]" in r.stderr
    assert "FY2031, FY2032" in r.stderr and "FY2029, FY2030" in r.stderr
    assert "realbasis index project" in r.stderr  # the command line's words for the remedy
    assert "Deflator shelf" not in r.stderr and "Traceback" not in r.stderr


def test_monthly_authority_needs_results_by_year():
    r = run_cli("deflate", REVENUE, "--index", CPI, "--base", "FY2025", "--fiscal-start",
                "7", "--outlay-rates", "1")
    assert r.returncode == 2 and "[DF023]" in r.stderr and "--to" in r.stderr
    r = run_cli("deflate", REVENUE, "--index", CPI, "--base", "FY2025", "--fiscal-start",
                "7", "--outlay-rates", "1", "--outlay-rates", "0.5,0.5")
    assert r.returncode == 2 and "[CL254]" in r.stderr


def test_budget_out_csv_json_xlsx(projected_gcd, tmp_path, capsys):
    for suffix in ("csv", "json", "xlsx"):
        path = tmp_path / f"budget.{suffix}"
        assert main(["deflate", PROGRAMS, "--index", GCD, "--base", "FY2025",
                     "--fiscal-start", "7", "--budget-out", str(path),
                     "--out", str(tmp_path / "real.csv")]) == 0
        assert path.exists()
    lay = pd.read_csv(tmp_path / "budget.csv")
    assert list(lay.columns[:2]) == ["program", "measure"] and "FY2030" in lay.columns
    assert "Total" in set(lay["program"])
    real = pd.read_csv(tmp_path / "real.csv")
    bus_25 = real[(real.series == "Bus operations") & (real.period == "FY2026")]["real"]
    row = lay[(lay.program == "Bus operations") & (lay.measure == "constant FY2025 dollars")]
    assert float(row["FY2026"].iloc[0]) == pytest.approx(float(bus_25.iloc[0]))
    data = json.loads((tmp_path / "budget.json").read_text())
    assert data["tables"][0]["out_years"] == ["FY2027", "FY2028", "FY2029", "FY2030"]
    assert "Budget" in openpyxl.load_workbook(tmp_path / "budget.xlsx").sheetnames
    assert "budget table" in capsys.readouterr().err


def test_budget_out_of_monthly_revenue_by_fiscal_year(tmp_path):
    path = tmp_path / "b.csv"
    r = run_cli("deflate", REVENUE, "--index", CPI, "--base", "FY2025", "--fiscal-start",
                "7", "--to", "FY", "--budget-out", str(path), "--out",
                str(tmp_path / "r.csv"))
    assert r.returncode == 0, r.stderr
    lay = pd.read_csv(path)
    assert "deflator" in lay.columns  # two consumer indexes: one table each
    assert {"FY2015", "FY2026"} <= set(lay.columns)
    r = run_cli("deflate", REVENUE, "--index", CPI, "--base", "FY2025", "--fiscal-start",
                "7", "--budget-out", str(tmp_path / "m.csv"))
    assert r.returncode == 2 and "[DF030]" in r.stderr and "--to" in r.stderr


def test_construction_index_serves_fiscal_years_when_interpolated(tmp_path):
    r = run_cli("deflate", PROGRAMS, "--index", CCI, "--base", "FY2025", "--fiscal-start",
                "7")
    assert r.returncode == 2 and ("[PE203]" in r.stderr or "[PE201]" in r.stderr)
    out = tmp_path / "cci.csv"
    r = run_cli("deflate", PROGRAMS, "--index", CCI, "--base", "FY2025", "--fiscal-start",
                "7", "--interpolate", "--out", str(out))
    assert r.returncode == 0, r.stderr
    t = pd.read_csv(out)
    assert list(t.columns) == [*COLUMNS, "interpolated"] and t["interpolated"].all()
    assert "[PE208]" in r.stderr


def test_fy_base_on_a_monthly_series():
    r = run_cli("deflate", REVENUE, "--index", CPI, "--base", "FY2025", "--fiscal-start", "7")
    assert r.returncode == 0, r.stderr
    r = run_cli("deflate", REVENUE, "--index", CPI, "--base", "FY2025")
    assert r.returncode == 2 and "[PE102]" in r.stderr and "--fiscal-start" in r.stderr


@pytest.mark.parametrize("rate", ["2.5%", "0.025", "2.5 %"])
def test_index_project_accepts_percent_and_fraction(rate, tmp_path):
    out = tmp_path / "p.csv"
    assert main(["index", "project", GCD, "--rate", rate, "--until", "FY2032",
                 "--fy-start", "7", "--out", str(out)]) == 0
    t = pd.read_csv(out)
    v = t.set_index("period")["value"]
    # each projected quarter grows by (1 + 2.5 %)^(1/4) (pipeline.projection)
    assert v["2032Q2"] / v["2032Q1"] == pytest.approx(1.025 ** 0.25, rel=1e-12)


@pytest.mark.parametrize("rate, shown", [("250%", "'250%'"), ("3", "'3'"),
                                         ("FY2031=150%", "'150%'")])
def test_out_of_range_rate_shows_what_was_given(rate, shown):
    extra = ["--rate", "FY2032=2%"] if "=" in rate else []
    r = run_cli("index", "project", GCD, "--rate", rate, *extra, "--until", "FY2032",
                "--fy-start", "7", "--fiscal-years", "7")
    assert r.returncode == 2 and "[WS202]" in r.stderr
    assert f"found: {shown}" in r.stderr and "Traceback" not in r.stderr
