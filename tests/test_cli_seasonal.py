"""Seasonal adjustment of deflation results: ``adjust_deflation`` and ``realbasis deflate --sa``.

Outside references: statsmodels STL (reference library) and the statsmodels
``elec_equip`` dataset (monthly, not seasonally adjusted) as the nominal series. The
deflators are synthetic price levels built here (illustrative, for the identities only).
"""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest
from statsmodels.datasets import elec_equip
from statsmodels.tsa.seasonal import STL

from pipeline.deflate import TABLE_COLUMNS, deflate
from pipeline.errors import RealbasisError
from pipeline.model import MONTHLY, Series
from pipeline.seasonal import adjust, adjust_deflation


@pytest.fixture(scope="module")
def elec() -> Series:
    data = elec_equip.load_pandas().data.iloc[:, 0]
    idx = pd.PeriodIndex(data.index, freq="M")
    return Series("orders", pd.Series(data.to_numpy(dtype=float), index=idx), MONTHLY)


@pytest.fixture(scope="module")
def deflators(elec) -> tuple[Series, Series]:
    idx = elec.values.index
    t = np.arange(len(idx))
    seasonal_prices = 100 * np.exp(0.002 * t + 0.01 * np.sin(2 * np.pi * t / 12))
    smooth_prices = 100 * np.exp(0.0015 * t)
    return (Series("seasonal_prices", pd.Series(seasonal_prices, index=idx), MONTHLY,
                   kind="index"),
            Series("smooth_prices", pd.Series(smooth_prices, index=idx), MONTHLY,
                   kind="index"))


@pytest.fixture(scope="module")
def result(elec, deflators):
    return deflate([elec], list(deflators), "2010")


def test_table_keeps_the_deflation_columns_first_and_unchanged(result):
    out = adjust_deflation(result, "stl")
    plain = result.table()
    assert list(out.table.columns) == [*TABLE_COLUMNS, "nominal_sa", "real_sa"]
    pd.testing.assert_frame_equal(out.table[list(TABLE_COLUMNS)], plain)
    assert out.table[["nominal_sa", "real_sa"]].notna().all().all()


def test_deflate_first_adjusts_the_real_series_with_statsmodels_stl(result, elec):
    # Reference library: statsmodels STL on the logs of the real series.
    out = adjust_deflation(result, "stl", order="deflate-first")
    tab = out.table[out.table["deflator"] == "seasonal_prices"]
    real = tab["real"].to_numpy()
    ref = STL(np.log(real), period=12).fit()
    np.testing.assert_allclose(tab["real_sa"].to_numpy(), real / np.exp(ref.seasonal),
                               rtol=1e-9)
    nom = STL(np.log(elec.values.to_numpy()), period=12).fit()
    np.testing.assert_allclose(tab["nominal_sa"].to_numpy(),
                               elec.values.to_numpy() / np.exp(nom.seasonal), rtol=1e-9)
    assert set(out.real) == {("orders", "seasonal_prices"), ("orders", "smooth_prices")}


def test_adjust_first_deflates_the_adjusted_nominal(result):
    out = adjust_deflation(result, "stl", order="adjust-first")
    tab = out.table
    np.testing.assert_allclose(tab["real_sa"], tab["nominal_sa"] * 100 / tab["deflator_index"],
                               rtol=1e-12)
    assert out.real == {}
    assert "adjusted first" in out.method_note()[0]


def test_orders_differ_by_exactly_the_deflators_seasonal_factor(result, deflators):
    # Non-robust STL is linear (its LOESS weights depend on positions only: Cleveland et al.
    # 1990, from memory), so on logs SA(log N - log I) = SA(log N) - SA(log I): the two
    # orders differ by the deflator's own STL seasonal factor, and agree where the deflator
    # has no seasonality. Reference values: statsmodels STL on the log deflator.
    first = adjust_deflation(result, "stl", order="deflate-first").table
    second = adjust_deflation(result, "stl", order="adjust-first").table
    for d in deflators:
        rows = first["deflator"] == d.name
        ratio = first.loc[rows, "real_sa"].to_numpy() / second.loc[rows, "real_sa"].to_numpy()
        level = first.loc[rows, "deflator_index"].to_numpy()
        s_log_index = STL(np.log(level), period=12).fit().seasonal
        np.testing.assert_allclose(np.log(ratio), s_log_index, atol=1e-8)
    smooth = first["deflator"] == "smooth_prices"
    np.testing.assert_allclose(first.loc[smooth, "real_sa"], second.loc[smooth, "real_sa"],
                               rtol=1e-6)


def test_method_note_and_diagnostics_cover_every_adjusted_series(result):
    out = adjust_deflation(result, "classical")
    note = out.method_note()
    assert note[0].startswith("Seasonal adjustment (classical): deflated first")
    assert sum("strength of seasonality" in line for line in note) == 3
    assert all(not a.diagnostics.residual_seasonality for a in out.adjustments())


def test_unknown_order_and_annual_results_are_refused(result, elec, deflators):
    with pytest.raises(RealbasisError) as err:
        adjust_deflation(result, "stl", order="sideways")
    assert err.value.code == "SA001"
    from pipeline.model import ANNUAL

    annual = deflate([elec], list(deflators), "2010", to=ANNUAL)
    with pytest.raises(RealbasisError) as err:
        adjust_deflation(annual, "stl")
    assert "SA002" in err.value.codes


def test_adjust_of_one_series_matches_the_deflation_path(result, elec):
    out = adjust_deflation(result, "stl-robust", max_workers=1)
    one = adjust(elec, "stl-robust")
    np.testing.assert_allclose(out.nominal["orders"].adjusted.values, one.adjusted.values,
                               rtol=1e-12)


@pytest.mark.parametrize("suffix", [".csv", ".json", ".xlsx"])
def test_exports_carry_the_adjusted_columns(result, tmp_path, suffix):
    import json

    from pipeline.export import write_result

    adjusted = adjust_deflation(result, "stl")
    path = write_result(adjusted.as_result(), tmp_path / f"out{suffix}", command="test")
    expected = [*TABLE_COLUMNS, "nominal_sa", "real_sa"]
    if suffix == ".csv":
        back = pd.read_csv(path)
        assert list(back.columns) == expected
        np.testing.assert_allclose(back["real_sa"], adjusted.table["real_sa"], rtol=1e-12)
    elif suffix == ".json":
        data = json.loads(path.read_text())
        assert data["columns"] == expected
        assert any("Seasonal adjustment (stl)" in m for m in data["method"])
    else:
        from openpyxl import load_workbook

        wb = load_workbook(path, read_only=True)
        header = next(wb["Real terms"].iter_rows(max_row=1, values_only=True))
        assert list(header) == expected
        wb.close()


# ------------------------------------------------------------------ realbasis deflate --sa


@pytest.fixture(scope="module")
def cli_files(tmp_path_factory, elec, deflators):
    """The elec_equip series as a wide money file and the synthetic deflators as a long
    index file (the deflators are illustrative, for plumbing)."""
    folder = tmp_path_factory.mktemp("sa_cli")
    labels = MONTHLY.labels(elec.values.index)
    money = folder / "orders.csv"
    pd.DataFrame({"period": labels, "Orders (EUR m)": elec.values.to_numpy()}).to_csv(
        money, index=False)
    rows = []
    for d in deflators:
        rows += [{"series": d.name, "period": lab, "value": v, "unit": "index 2010=100",
                  "status": "final"} for lab, v in zip(labels, d.values.to_numpy(), strict=True)]
    index = folder / "prices.csv"
    pd.DataFrame(rows).to_csv(index, index=False)
    return str(money), str(index)


def _cli(args, capsys):
    from pipeline.cli import main

    code = main(["deflate", *args])
    out = capsys.readouterr()
    return code, out.out, out.err


def test_cli_sa_adds_two_columns_after_the_contract_columns(cli_files, capsys):
    import io

    money, index = cli_files
    code, out, err = _cli([money, "--index", index, "--base", "2010", "--sa", "stl"], capsys)
    assert code == 0, err
    table = pd.read_csv(io.StringIO(out), dtype={"period": str})
    assert list(table.columns) == [*TABLE_COLUMNS, "nominal_sa", "real_sa"]
    # Reference library: statsmodels STL on the log of the nominal series
    first = table[table["deflator"] == "seasonal_prices"]
    nominal = first["nominal"].to_numpy()
    ref = STL(np.log(nominal), period=12).fit()
    np.testing.assert_allclose(first["nominal_sa"], nominal / np.exp(ref.seasonal), rtol=1e-9)
    assert "# Seasonal adjustment (stl): deflated first" in err
    assert "seasonal adjustment (stl): 3/3 series" in err  # 1 nominal + 1 real per deflator
    assert "# caution:" in err


def test_cli_without_sa_is_unchanged(cli_files, capsys):
    import io

    money, index = cli_files
    code, out, _ = _cli([money, "--index", index, "--base", "2010"], capsys)
    assert code == 0
    assert list(pd.read_csv(io.StringIO(out)).columns) == list(TABLE_COLUMNS)


def test_cli_adjust_first_and_classical_to_a_file(cli_files, capsys, tmp_path):
    money, index = cli_files
    out = tmp_path / "sa.csv"
    code, _, err = _cli([money, "--index", index, "--base", "2010", "--sa", "classical",
                         "--sa-order", "adjust-first", "--out", str(out)], capsys)
    assert code == 0, err
    table = pd.read_csv(out)
    assert list(table.columns)[-2:] == ["nominal_sa", "real_sa"]
    np.testing.assert_allclose(table["real_sa"],
                               table["nominal_sa"] * 100 / table["deflator_index"], rtol=1e-9)


def test_cli_robust_reports_progress_on_stderr(cli_files, capsys):
    money, index = cli_files
    code, _, err = _cli([money, "--index", index, "--base", "2010", "--sa", "stl-robust"],
                        capsys)
    assert code == 0, err
    lines = [ln for ln in err.splitlines() if ln.startswith("seasonal adjustment")]
    assert lines and lines[-1] == "seasonal adjustment (stl-robust): 3/3 series"


def test_cli_sa_errors_are_coded_without_traceback(cli_files, tmp_path, capsys):
    import subprocess
    import sys

    from conftest import ROOT

    money, index = cli_files
    # annual results are never adjusted (a real process: exit status 2, no traceback)
    done = subprocess.run([sys.executable, "-m", "pipeline.cli", "deflate", money, "--index",
                           index, "--base", "2010", "--to", "A", "--sa", "stl"], cwd=ROOT,
                          capture_output=True, text=True, timeout=120)
    assert done.returncode == 2 and "[SA002]" in done.stderr
    assert "Traceback" not in done.stderr
    # a short series: counts in the message
    short = tmp_path / "short.csv"
    pd.read_csv(money).head(30).to_csv(short, index=False)
    code, _, err = _cli([str(short), "--index", index, "--base", "1995", "--sa", "stl"],
                        capsys)
    assert code == 2 and "[SA003]" in err and "30 values (2 years 6 months)" in err
    # unknown method: argparse refuses with the CLI code
    with pytest.raises(SystemExit) as stop:
        _cli([money, "--index", index, "--base", "2010", "--sa", "x11"], capsys)
    assert stop.value.code == 2


def test_series_of_different_spans_are_placed_by_their_keys(elec, deflators):
    later = Series("later orders", elec.values.iloc[24:] * 0.5, MONTHLY)
    res = deflate([elec, later], [deflators[1]], "2010")
    out = adjust_deflation(res, "stl")
    rows = out.table[out.table["series"] == "later orders"]
    assert len(rows) == len(later.values)
    np.testing.assert_allclose(rows["nominal_sa"].to_numpy(),
                               adjust(later, "stl").adjusted.values.to_numpy(), rtol=1e-10)
    # the longer series' adjustment is untouched by the shorter one
    full = out.table[out.table["series"] == "orders"]
    np.testing.assert_allclose(full["nominal_sa"].to_numpy(),
                               adjust(elec, "stl").adjusted.values.to_numpy(), rtol=1e-10)
