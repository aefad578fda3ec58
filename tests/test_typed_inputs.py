"""What users type into a box rather than a file: cost-index weights located by line of
the text, and projection rates read as percent a year or as fractions, with an
out-of-range rate shown as it was given. Plumbing tests on invented values; the blending
and projection formulas are proven in test_costindex.py and test_projection.py."""

from __future__ import annotations

import pandas as pd
import pytest

from pipeline.costindex import blend, weights_from_text
from pipeline.errors import RealbasisError
from pipeline.model import MONTHLY, Series
from pipeline.projection import parse_rate, project

COMPONENTS = ["Goods", "Wages"]


def shown(err: RealbasisError) -> str:
    return err.problems[0].where.render()


def test_typed_weights_are_read_like_a_file():
    w = weights_from_text("period,Goods,Wages\n2019,60,40\n2020,55,45\n",
                          components=COMPONENTS)
    assert w.shares.loc[pd.Period("2020", "Y-DEC")].tolist() == pytest.approx([0.55, 0.45])
    assert w.given_as == "shares"  # each year adds up to 100
    semi = weights_from_text("period;Goods;Wages\nFY2020;3;1\n", components=COMPONENTS,
                             fy_start=7)
    assert semi.given_as == "amounts" and semi.year_frequency.code == "FY"
    assert semi.warnings and all(p.where.file is None for p in semi.warnings)
    idx = pd.period_range("2019-01", "2020-12", freq="M")
    comps = [Series(c, pd.Series(100.0, index=idx), MONTHLY, kind="index")
             for c in COMPONENTS]
    assert blend(comps, weights_from_text("period,Goods,Wages\n2019,1,1\n2020,1,1\n",
                                          components=COMPONENTS)).values.notna().all().all()


@pytest.mark.parametrize("text, code, where", [
    ("period,Goods,Wages\n2019,60,40\n2020,x,50\n", "IN011", "line 3, column 'Goods'"),
    ("period,Goods,Wages\n2019,60,40\n2020,-5,50\n", "WS102", "line 3, column 'Goods'"),
    ("period,Goods,Wages\n2019,60,40\n2020,,50\n", "WS101", "line 3, column 'Goods'"),
    ("period,Goods,Wages\n2019,60,40\n2020,0,0\n", "WS102", "line 3"),
])
def test_typed_weight_problems_name_the_line_not_a_file(text, code, where):
    with pytest.raises(RealbasisError) as e:
        weights_from_text(text, components=COMPONENTS)
    assert e.value.code == code
    assert shown(e.value).startswith(where), shown(e.value)
    assert all(p.where.file is None and p.where.row is None for p in e.value.problems)
    assert "weights.csv" not in str(e.value) and "file " not in shown(e.value)


def test_empty_box():
    with pytest.raises(RealbasisError) as e:
        weights_from_text("   \n", components=COMPONENTS)
    assert e.value.code == "WS101" and e.value.problems[0].found == "(empty)"


def test_rates_as_percent_or_fraction():
    assert parse_rate("2.5%") == pytest.approx(0.025)
    assert parse_rate("2.5 %") == pytest.approx(0.025)
    assert parse_rate("0.025") == pytest.approx(0.025)
    assert parse_rate("2.5", bare="percent") == pytest.approx(0.025)  # a "% a year" field
    assert parse_rate(2.5, bare="percent") == pytest.approx(0.025)
    assert parse_rate("−1%") == pytest.approx(-0.01)  # a typographic minus sign
    with pytest.raises(RealbasisError) as e:
        parse_rate("two")
    assert e.value.code == "WS206" and e.value.problems[0].remedy == "projection_rate"


def test_out_of_range_rate_shows_what_was_typed():
    idx = pd.period_range("2024-01", periods=12, freq="M")
    ix = Series("Ix", pd.Series(100.0, index=idx), MONTHLY, kind="index")
    with pytest.raises(RealbasisError) as e:
        project(ix, "250", bare="percent", until="2026")
    p = e.value.problems[0]
    assert p.code == "WS202" and p.remedy == "projection_rate"
    assert p.found == "'250' (read as 250 % a year)"
    assert "fraction" not in p.expected  # neutral: a rate a year, as percent
    with pytest.raises(RealbasisError) as e:
        project(ix, {"2025": "3%", "2026": 1.5}, until="2026")
    assert e.value.problems[0].found == "1.5 (read as 150 % a year)"
    assert e.value.problems[0].where.period == "2026"
