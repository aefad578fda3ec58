"""Vintages, status rules, value revisions and their impact on real results."""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest

from pipeline.errors import RealbasisError
from pipeline.model import ANNUAL, MONTHLY, Series
from pipeline.revisions import apply_status_rule, compare_vintages, revision_impact, vintages

YEARS = pd.period_range("2020", periods=3, freq="Y")


def idx(values, vintage, status=None, reference="2020"):
    st = None if status is None else pd.Series(status, index=YEARS[:len(values)], dtype=object)
    return Series("Consumer index, chained", pd.Series(values, index=YEARS[:len(values)]),
                  ANNUAL, kind="index", status=st, vintage=vintage, reference=reference)


def test_status_rule_last_n_preliminary_keeps_projected():
    # "The last N values are preliminary" (common practice for chained consumer indexes,
    # DESIGN.md); projected values stay projected.
    months = pd.period_range("2025-01", periods=6, freq="M")
    st = pd.Series(["final"] * 5 + ["projected"], index=months, dtype=object)
    s = Series("ix", pd.Series(np.arange(100.0, 106.0), index=months), MONTHLY, kind="index",
               status=st)
    out = apply_status_rule(s, last_preliminary=2, as_of="2025-07-15")
    assert out.status_or_final().tolist() == ["final"] * 3 + ["preliminary"] * 2 + ["projected"]
    assert out.vintage == "2025-07-15"
    with pytest.raises(RealbasisError) as e:
        apply_status_rule(s, last_preliminary=-1)
    assert e.value.code == "WS302"


def test_vintages_grouped_by_name_and_date():
    a = idx([100, 102], "2021-04-15")
    b = idx([100, 102.2, 104], "2022-04-15")
    got = vintages([b, a])
    assert list(got["Consumer index, chained"]) == ["2021-04-15", "2022-04-15"]
    with pytest.raises(RealbasisError) as e:
        vintages([a, a])
    assert e.value.code == "WS305"


def test_compare_vintages_reports_revisions_by_hand():
    # revision = new - old (common practice of revision analysis); values by hand.
    old = idx([100.0, 102.0], "2021-04-15", ["final", "preliminary"])
    new = idx([100.0, 102.3, 104.1], "2022-04-15", ["final", "final", "preliminary"])
    c = compare_vintages(old, new)
    assert c.revised == 1 and c.added == 1 and c.removed == 0 and c.finalised == 1
    assert c.largest == ("2021", pytest.approx(0.3))
    row = c.table.iloc[1]
    assert row["revision_pct"] == pytest.approx(0.3 / 102 * 100)
    assert c.table["old_status"].tolist() == ["final", "preliminary", ""]
    assert "1 value(s) revised" in " ".join(c.method_note())


def test_compare_vintages_on_different_references():
    # Rebasing first: I'(t) = 100 I(t)/I(B) (DESIGN.md); without it a WS303 warning.
    old = idx([100.0, 102.0, 104.0], "2021", reference="2020")
    new = idx([98.0, 100.0, 102.0], "2022", reference="2021")
    assert any(w.code == "WS303" for w in compare_vintages(old, new).warnings)
    c = compare_vintages(old, new, rebase_to="2020")
    assert c.table["new"].tolist() == pytest.approx([100.0, 100 * 100 / 98, 100 * 102 / 98])
    assert c.rebased_to == "2020"


def test_revision_impact_hand_computed():
    # real(t) = nominal(t) x I(B)/I(t) (DESIGN.md; IMF QNA Manual 2017 ch. 8) under each
    # vintage; real growth moves by the exact split (1+n) = (1+r)(1+p).
    old = idx([100.0, 102.0, 104.0], "2022-01-15", ["final", "final", "preliminary"])
    new = idx([100.0, 102.0, 105.0], "2022-07-15", ["final", "final", "final"])
    nominal = Series("Program spending", pd.Series([1000.0, 1100.0, 1200.0], index=YEARS),
                     ANNUAL, kind="flow")
    imp = revision_impact([nominal], old, new, "2020")
    t = imp.table
    last = t.iloc[-1]
    assert last["real_old"] == pytest.approx(1200 * 100 / 104)
    assert last["real_new"] == pytest.approx(1200 * 100 / 105)
    assert last["real_change"] == pytest.approx(1200 * 100 / 105 - 1200 * 100 / 104)
    g_old = (1200 / 1100) / (104 / 102) - 1
    g_new = (1200 / 1100) / (105 / 102) - 1
    assert last["growth_old_pct"] == pytest.approx(100 * g_old)
    assert last["growth_change_pp"] == pytest.approx(100 * (g_new - g_old))
    assert last["status_old"] == "preliminary" and last["status_new"] == "final"
    assert t.iloc[0]["real_change"] == pytest.approx(0.0)
    s = imp.summary.iloc[0]
    assert s["real_cagr_new_pct"] == pytest.approx(100 * ((1200 * 100 / 105 / 1000) ** 0.5 - 1))
    assert s["values_moved"] == 1
    assert "constant 2020 dollars" in imp.method_note()[0]


def test_revision_impact_leaves_out_periods_the_old_vintage_lacks():
    old = idx([100.0, 102.0], "2021-04-15")
    new = idx([100.0, 102.5, 104.0], "2022-04-15")
    nominal = Series("Revenue", pd.Series([10.0, 11.0, 12.0], index=YEARS), ANNUAL)
    imp = revision_impact([nominal], old, new, "2020")
    assert imp.table["period"].tolist() == ["2020", "2021"]
    assert any(w.code == "WS304" for w in imp.warnings)
    with pytest.raises(RealbasisError) as e:
        revision_impact([], old, new, "2020")
    assert e.value.code == "WS301"
