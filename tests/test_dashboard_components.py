"""The dashboard's pure page pieces (dashboard/components.py) and chart builders
(dashboard/figures.py), without a browser."""

from __future__ import annotations

from pathlib import Path

import pandas as pd

from dashboard import components, figures


def test_numbers_have_thousands_separators_and_units():
    assert components.fmt_number(1234567.891) == "1,234,567.9"
    assert components.fmt_number(float("nan")) == "–"
    assert components.fmt_percent(0.0234) == "+2.3 %"
    assert components.fmt_percent(-0.00001) == "+0.0 %"
    assert components.fmt_number(-0.04) == "0.0"  # no negative zero
    assert components.fmt_number(None) == "–" and components.fmt_percent(None) == "–"
    assert components.fmt_number("n/a") == "n/a"
    t = components.table([components.Column("v", "Value (USD)", "number", 0)], [{"v": 12345}])
    assert "12,345" in str(t.to_plotly_json())


def test_user_text_stays_text():
    evil = "<img src=x onerror=alert(1)>"
    t = components.table([components.Column("name", "Series")], [{"name": evil}])
    cell = t.children.children[1].children[0].children[0]  # wrapper > table > tbody
    assert cell.children == evil  # a text child: React escapes it
    root = Path(components.__file__).parent
    for path in root.rglob("*.py"):
        text = path.read_text()
        assert "dangerously" not in text and "dcc.Markdown" not in text, path


def test_palette_is_okabe_ito():
    # Okabe & Ito (2008), "Color Universal Design (CUD): how to make figures and
    # presentations that are friendly to colorblind people", the eight colours.
    assert set(figures.OKABE_ITO) == {"#000000", "#E69F00", "#56B4E9", "#009E73", "#F0E442",
                                      "#0072B2", "#D55E00", "#CC79A7"}
    assert set(figures.LINE_COLOURS) <= set(figures.OKABE_ITO)


def test_figures_shade_preliminary_and_dash_projected():
    frame = pd.DataFrame({"period": ["2024", "2025", "2026", "2027"],
                          "nominal": [1.0, 2.0, 3.0, 4.0], "real": [1.0, 1.5, 2.0, 2.5],
                          "status": ["final", "preliminary", "projected", "projected"]})
    fig = figures.real_terms_figure(frame, title="t", unit="USD", real_label="Real")
    dashed = [t for t in fig.data if t.name.endswith("(projected)")]
    assert dashed and all(t.line.dash == "dash" for t in dashed)
    # the dashed part starts at the last measured point so the line is continuous
    assert dashed[-1].y[:2] == (None, 1.5)
    shapes = fig.layout.shapes
    assert [(s.x0, s.x1) for s in shapes] == [(0.5, 1.5), (1.5, 3.5)]


def test_spread_band_runs_from_the_lowest_to_the_highest_real_value():
    table = pd.DataFrame({
        "series": "S", "deflator": ["A", "A", "B", "B", "C", "C"],
        "period": ["2024", "2025"] * 3, "nominal": [100.0, 110.0] * 3,
        "real": [100.0, 104.0, 100.0, 99.0, 100.0, 107.0],
        "status": ["final", "final", "final", "preliminary", "final", "final"]})
    fig = figures.spread_figure(table, title="", unit="USD")
    low, high = fig.data[0], fig.data[1]
    assert list(low.y) == [100.0, 99.0] and list(high.y) == [100.0, 107.0]
    assert high.fill == "tonexty"
    # each deflator has its own colour AND dash pattern (not colour alone)
    lines = [t for t in fig.data if t.name in ("A", "B", "C")]
    assert len({t.line.dash for t in lines}) == 3 and len({t.line.color for t in lines}) == 3
    # the worst status of a period across deflators is shaded
    assert [(s.x0, s.x1) for s in fig.layout.shapes] == [(0.5, 1.5)]
