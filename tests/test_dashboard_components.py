"""The dashboard's pure page pieces (dashboard/components.py) and chart builders
(dashboard/figures.py), without a browser."""

from __future__ import annotations

from html.parser import HTMLParser
from pathlib import Path
from typing import Any

import pandas as pd
from dash import html
from hypothesis import given, settings
from hypothesis import strategies as st

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


class _Cells(HTMLParser):
    """The elements and texts of a table's HTML, as the browser's parser sees them."""

    def __init__(self) -> None:
        super().__init__(convert_charrefs=True)
        self.tags: list[tuple[str, dict[str, str | None]]] = []
        self.texts: list[str] = []

    def handle_starttag(self, tag: str, attrs: list[tuple[str, str | None]]) -> None:
        self.tags.append((tag, dict(attrs)))

    def handle_data(self, data: str) -> None:
        self.texts.append(data)


def _parsed(t: Any) -> _Cells:
    markdown = t  # a dcc.Markdown holding the scrolling wrapper and the table, as HTML
    assert type(markdown).__name__ == "Markdown" and markdown.dangerously_allow_html
    p = _Cells()
    p.feed(markdown.children)
    p.close()
    return p


def test_user_text_stays_text():
    evil = "<img src=x onerror=alert(1)>"
    t = components.table([components.Column("name", "Series")], [{"name": evil}],
                         caption="Series & <b>names</b>")
    p = _parsed(t)
    # only the table's own elements, no attribute taken from the text
    assert [tag for tag, _ in p.tags] == ["div", "table", "caption", "thead", "tr", "th",
                                          "tbody", "tr", "td"]
    assert p.texts == ["Series & <b>names</b>", "Series", evil]
    assert p.tags[0][1] == {"class": "rb-scroll rb-table-wrap", "tabindex": "0", "role": "region",
                            "aria-label": "Series & <b>names</b>"}
    root = Path(components.__file__).parent
    for path in root.rglob("*.py"):  # raw HTML is written in one place only
        text = path.read_text()
        if path.name != "components.py":
            assert "dangerously" not in text and "dcc.Markdown" not in text, path
    assert components.__file__ and Path(components.__file__).read_text().count(
        "dangerously_allow_html=True") == 1


@settings(max_examples=300, deadline=None)
@given(st.text(min_size=1, max_size=40), st.text(max_size=40))
def test_any_text_in_a_table_is_text_and_one_html_line(name: str, label: str):
    # The HTML spec's parsing rules (html.parser follows them for this subset): whatever a
    # user names a series or a column, the table's elements are the same, each cell's
    # text is the name with control characters (line breaks) as spaces, and the string
    # has no line break, so Markdown sees one HTML block (CommonMark 0.31, 4.6 "HTML
    # blocks": a type-6 block ends at a blank line).
    t = components.table([components.Column("name", label or "x")], [{"name": name}])
    html_string = t.children
    assert "\n" not in html_string and "\r" not in html_string
    p = _parsed(t)
    assert [tag for tag, _ in p.tags] == ["div", "table", "thead", "tr", "th", "tbody", "tr", "td"]
    spaced = "".join(" " if (ord(c) < 32 or 0x7F <= ord(c) < 0xA0 or c in "\u2028\u2029")
                     else c for c in name)
    assert "".join(p.texts[1:]) == spaced


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


@settings(max_examples=300, deadline=None)
@given(st.text(max_size=40), st.text(max_size=40))
def test_a_flattened_note_keeps_its_elements_and_its_text(message: str, where: str):
    # problems_view, method_view, band_view and cautions_view are sent as one HTML string
    # (components.flattened); whatever the texts, the browser's parser finds the same
    # elements and the texts themselves (html.parser, as in the table test above).
    view = components.problems_view([{"code": "DF011", "severity": "warning",
                                      "message": message or "x", "where_text": where}])
    assert type(view).__name__ == "Markdown" and "\n" not in view.children
    p = _Cells()
    p.feed(view.children)
    p.close()
    tags = [tag for tag, _ in p.tags]
    assert tags[:6] == ["section", "h3", "ul", "li", "div", "span"]
    assert all(set(attrs) <= {"class"} for _, attrs in p.tags)
    spaced = "".join(" " if (ord(c) < 32 or 0x7F <= ord(c) < 0xA0
                             or c in "\u2028\u2029") else c for c in (message or "x"))
    assert spaced in "".join(p.texts)
    # a tree with anything but plain elements is kept as components (a link, a style)
    kept = components.flattened(html.Div([html.A("a", href="x"), "b"]))
    assert type(kept).__name__ == "Div"


def test_notes_and_tables_draw_their_elements_from_one_component_each():
    # the reason for html_block: a callback that returns these creates one component, not
    # one per row or cell (DEVELOPERS.md, "Version quirks": the renderer's cost per
    # component created). Common practice of Dash apps with large static content.
    lines = [f"step {i}" for i in range(20)]
    method = components.method_view(lines)
    assert type(method).__name__ == "Markdown" and method.children.count("<li>") == 20
    t = components.table([components.Column("v", "V", "number")], [{"v": i} for i in range(50)])
    assert t.children.count("<tr>") == 51
