"""Revision risk: the distribution of past revisions by age and the band it implies, on
constructed vintages whose revisions are known by construction (the method is the
tool's own; there is no published table to check it against)."""

from __future__ import annotations

import json

import numpy as np
import openpyxl
import pandas as pd
import pytest
from conftest import DEMO

from pipeline.export import write_result
from pipeline.ingest import read_file
from pipeline.model import MONTHLY, Series, Workspace
from pipeline.revision_risk import revision_band, revision_history
from pipeline.revisions import vintages as group_vintages

MONTHS = pd.period_range("2022-01", "2024-12", freq="M")
FINAL = pd.Series(100 * 1.002 ** np.arange(len(MONTHS)), index=MONTHS)
BASE_REV = {0: -0.30, 1: -0.20, 2: -0.10}  # percent, by age (months since first release)
SPREAD = (-0.05, 0.0, 0.05)  # added in turn, vintage by vintage
AS_OF = pd.period_range("2023-02", "2024-07", freq="M")  # 18 monthly releases, 15th


def revision(age: int, j: int) -> float:
    return BASE_REV[age] + SPREAD[j % 3]


def release(j: int, *, n_prelim: int = 3) -> Series:
    """Vintage j: as of the 15th of AS_OF[j], published to the month before, its last
    three values preliminary and printed so that final / printed - 1 = revision(age, j)."""
    last = AS_OF[j] - 1
    idx = pd.period_range(MONTHS[0], last, freq="M")
    vals = FINAL.reindex(idx).copy()
    status = pd.Series("final", index=idx, dtype=object)
    for age in range(n_prelim):
        p = last - age
        vals[p] = FINAL[p] / (1 + revision(age, j) / 100)
        status[p] = "preliminary"
    return Series("Test index", vals, MONTHLY, kind="index", status=status,
                  vintage=f"{AS_OF[j]}-15")


@pytest.fixture(scope="module")
def vins() -> dict[str, Series]:
    return {f"{AS_OF[j]}-15": release(j) for j in range(len(AS_OF))}


def money(start="2023-01", end="2024-06", value=100.0) -> Series:
    idx = pd.period_range(start, end, freq="M")
    return Series("Revenue", pd.Series(value, index=idx), MONTHLY, kind="flow", unit="USD")


def test_history_counts_each_revision_at_its_age(vins):
    # By construction a value first printed at age 0 in vintage j is final three releases
    # later; values still preliminary in the latest vintage are not counted yet. With 18
    # releases: age 0 has 15 finished revisions, age 1 16, age 2 17.
    h = revision_history(vins)
    assert h.lag_months == 1  # as of the 15th, published to the month before
    assert h.by_age["age_months"].tolist() == [0, 1, 2]
    assert h.by_age["revisions"].tolist() == [15, 16, 17] and h.count == 48
    # every measured revision is the constructed one: final / printed - 1
    for rec in h.revisions.itertuples():
        j = list(vins).index(rec.vintage)
        assert rec.revision_pct == pytest.approx(revision(rec.age_months, j), abs=1e-10)
    # mean by age: base plus the average of the spreads used
    assert h.by_age["mean_pct"].to_numpy() == pytest.approx(
        [-0.30 + (5 * -0.05 + 5 * 0.05) / 15, -0.20 + (6 * -0.05 + 5 * 0.05) / 16,
         -0.10 + (6 * -0.05 + 6 * 0.0 + 5 * 0.05) / 17], abs=1e-10)


def test_band_is_the_quantiles_of_the_revisions_of_the_same_age(vins):
    # Empirical quantiles with numpy's default (linear between order statistics). Age 0:
    # 15 revisions, 5 each of -0.35, -0.30, -0.25: the 10 % quantile sits at position
    # 0.1 x 14 = 1.4 (between the 2nd and 3rd smallest, both -0.35), the 90 % one at 12.6
    # (both -0.25). Ages 1 and 2 likewise give base -+ 0.05.
    band = revision_band(vins)
    assert band.available and band.current == "2024-07-15"
    ib = band.index_band.set_index("period")
    assert ib.index.tolist() == ["2024-04", "2024-05", "2024-06"]
    assert ib["age_months"].tolist() == [2, 1, 0]
    assert ib["revisions_used"].tolist() == [17, 16, 15]  # no pooling needed
    for period, age in (("2024-04", 2), ("2024-05", 1), ("2024-06", 0)):
        lo, hi = BASE_REV[age] - 0.05, BASE_REV[age] + 0.05
        assert ib.loc[period, "low_pct"] == pytest.approx(lo, abs=1e-10)
        assert ib.loc[period, "high_pct"] == pytest.approx(hi, abs=1e-10)
        v = ib.loc[period, "value"]
        assert ib.loc[period, "low"] == pytest.approx(v * (1 + lo / 100), rel=1e-12)
        assert ib.loc[period, "high"] == pytest.approx(v * (1 + hi / 100), rel=1e-12)
    note = " ".join(band.method_note())
    assert "10 % and 90 % quantiles" in note and "48 past revision(s)" in note
    assert "no band below 8 revisions" in note


def test_real_values_and_growth_under_the_band(vins):
    # Real = nominal x 100 / rebased index; the base year 2023 is final, so moving a
    # preliminary index value by the factor (1 + q) divides its real value by it, and the
    # year-on-year growth against a final month becomes (1 + g) / (1 + q) - 1.
    band = revision_band(vins, [money()], "2023")
    rb = band.real_band.set_index("period")
    assert rb.index.tolist() == ["2024-04", "2024-05", "2024-06"]
    ib = band.index_band.set_index("period")
    for p in rb.index:
        real = rb.loc[p, "real"]
        q_lo, q_hi = ib.loc[p, "low_pct"] / 100, ib.loc[p, "high_pct"] / 100
        assert rb.loc[p, "real_low"] == pytest.approx(real / (1 + q_hi), rel=1e-12)
        assert rb.loc[p, "real_high"] == pytest.approx(real / (1 + q_lo), rel=1e-12)
        g = rb.loc[p, "growth_pct"] / 100
        assert rb.loc[p, "growth_low_pct"] == pytest.approx(100 * ((1 + g) / (1 + q_hi) - 1))
        assert rb.loc[p, "growth_high_pct"] == pytest.approx(100 * ((1 + g) / (1 + q_lo) - 1))
        assert rb.loc[p, "status"] == "preliminary"
    said = band.statements[-1]
    assert said.startswith("Revenue: real growth 2024-06 on 2023-06: ")
    assert "past revisions of this index would put it between" in said
    g, lo, hi = rb.loc["2024-06", ["growth_pct", "growth_low_pct", "growth_high_pct"]]
    d = 1 if f"{lo:+.1f}" != f"{hi:+.1f}" else 2  # a second decimal when one hides the band
    assert said.endswith(f": {g:+.{d}f} %; past revisions of this index would put it between "
                         f"{lo:+.{d}f} % and {hi:+.{d}f} %.")


def test_one_vintage_gives_no_band(vins):
    first = next(iter(vins))
    band = revision_band({first: vins[first]}, [money("2022-01", "2023-01")], "2022")
    assert not band.available and band.statements == () and band.real_band.empty
    assert band.history.count == 0
    assert [w.code for w in band.warnings] == ["WS310"]
    assert "0 revision(s)" in band.warnings[0].found


def test_too_few_revisions_give_no_band_and_the_minimum_is_stated(vins):
    refused = revision_band(vins, min_revisions=49)  # 48 revisions measured
    assert not refused.available and refused.warnings[-1].code == "WS310"
    assert "at least 49" in refused.warnings[-1].expected
    # few revisions per age: the nearest ages are pooled until the minimum is reached.
    # The last 6 releases finish 3 revisions at age 0, 4 at age 1, 5 at age 2 (12 in all).
    # Age 0: 3, + age 1 = 7 < 8, + age 2 = 12; age 1: 4, + ages 0 and 2 (both one month
    # away) = 12; age 2: 5, + age 1 = 9.
    few = dict(list(vins.items())[-6:])
    band = revision_band(few, min_revisions=8)
    assert band.history.count == 12
    ib = band.index_band.set_index("age_months")
    assert ib.loc[0, "ages_pooled"] == "0-2" and ib.loc[0, "revisions_used"] == 12
    assert ib.loc[1, "ages_pooled"] == "0-2" and ib.loc[1, "revisions_used"] == 12
    assert ib.loc[2, "ages_pooled"] == "1-2" and ib.loc[2, "revisions_used"] == 9


def test_nothing_preliminary_and_undated_loads(vins):
    cur = list(vins)[-1]
    s = vins[cur]
    final = s.with_values(s.values, status=None)
    band = revision_band({**vins, cur: final})
    assert not band.available and band.warnings[-1].code == "WS311"
    undated = revision_band({**vins, "": vins[cur]}, current=cur)
    assert "WS312" in [w.code for w in undated.warnings] and undated.available
    # a band as of an earlier vintage uses only what was known then
    early = revision_band(vins, current=list(vins)[10])
    assert early.current == list(vins)[10] and early.history.count < 48


def test_band_in_json_and_audit_workbook(vins, tmp_path):
    from pipeline.deflate import deflate

    cur = list(vins)[-1]
    band = revision_band(vins, [money()], "2023")
    res = deflate([money()], [vins[cur]], "2023")
    doc_path = write_result(res, tmp_path / "real.json", bands=(band,))
    doc = json.loads(doc_path.read_text())
    rb = doc["revision_bands"][0]
    assert rb["available"] and rb["revisions_used"] == 48 and rb["quantiles"] == [0.1, 0.9]
    assert rb["statements"] == list(band.statements) and rb["real_band"]
    assert rb["revisions_by_age"][0]["revisions"] == 15 and rb["cautions"]
    xlsx = write_result(res, tmp_path / "real.xlsx", bands=(band,))
    wb = openpyxl.load_workbook(xlsx, read_only=True)
    assert "Revision band" in wb.sheetnames
    text = " ".join(str(c) for row in wb["Revision band"].iter_rows(values_only=True)
                    for c in row if c is not None)
    assert "past revisions of this index would put it between" in text
    assert "Past revisions by age" in text and "48 past revision(s)" in text
    summary = " ".join(str(c) for row in wb["Summary"].iter_rows(values_only=True)
                       for c in row if c is not None)
    assert "Revision risk" in summary and band.statements[-1] in summary


def test_workspace_exports_carry_the_band(vins, tmp_path):
    from pipeline.workbook import export_workspace

    ws = Workspace("w1", "Band test (invented)", series={"Revenue": money()},
                   indexes={"Test index": vins},
                   settings={"base": "2023", "deflators": ["Test index"]})
    doc = json.loads(export_workspace(ws, tmp_path / "ws.json").read_text())
    assert doc["revision_bands"][0]["available"]
    assert doc["revision_bands"][0]["vintage"] == "2024-07-15"
    one = Workspace("w2", "One vintage (invented)", series={"Revenue": money()},
                    indexes={"Test index": {"2024-07-15": vins["2024-07-15"]}},
                    settings={"base": "2023", "deflators": ["Test index"]})
    assert "revision_bands" not in json.loads(
        export_workspace(one, tmp_path / "one.json").read_text())


def test_demo_vintages_give_a_band():
    # The illustrative demo holds four vintages of its chained consumer index (invented
    # data: plumbing, not proof): enough past revisions for a band.
    loads = []
    for f in ("consumer_indexes.csv", "chained_consumer_index_vintage_2026-04-15.csv",
              "chained_consumer_index_vintage_2025-10-15.csv",
              "chained_consumer_index_vintage_2025-04-15.csv"):
        loads += [s for s in read_file(DEMO / f).series if s.name == "Chained consumer index"]
    vins = group_vintages(loads)["Chained consumer index"]
    assert len(vins) == 4
    revenue = [s for s in read_file(DEMO / "harbourline_revenue.csv").series][:1]
    band = revision_band(vins, revenue, "2024")
    assert band.available and band.history.count >= 8
    assert band.index_band["period"].tolist()[-1] == "2026-09"
    assert any("real growth 2026-09 on 2025-09" in s for s in band.statements)
