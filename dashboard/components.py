"""Pure builders of page pieces: plain data in, Dash components out.

Nothing here touches the store or the engine, so every builder is unit-tested by looking
at the component tree it returns. User text is passed as component children (text
nodes, escaped by React), except in tables (:func:`table`) and in notes made of plain
elements (:func:`flattened`: problem lists, method notes, band notes, cautions), which are
written as one HTML string, every text through :func:`html_text`, and rendered by a single
``dcc.Markdown`` (:func:`html_block`), because the Dash renderer's cost grows with the
number of components a callback creates (DEVELOPERS.md, "Version quirks").
"""

from __future__ import annotations

import html as _html
import math
from collections.abc import Iterable, Mapping, Sequence
from dataclasses import dataclass
from typing import Any, Literal

from dash import dcc, html

from pipeline.model import CAUTIONS

ColumnKind = Literal["text", "number", "percent", "index"]

EDITOR_ONLY_CLASS = "rb-editor-only"
"""CSS class of the parts of a screen a reviewer does not get (dashboard/access.py hides
them in a reviewer's page): upload and correction controls and the like."""


@dataclass(frozen=True)
class Column:
    key: str
    label: str
    kind: ColumnKind = "text"
    decimals: int = 1


def _as_float(value: object) -> float | str:
    """The value as a float, or the text to show instead: a dash for missing (None, NaN),
    the value itself when it is not a number."""
    if value is None:
        return "–"
    try:
        x = float(value)  # type: ignore[arg-type]
    except (TypeError, ValueError):
        return str(value)
    return "–" if math.isnan(x) else x


def fmt_number(value: object, decimals: int = 1) -> str:
    """Thousands separators and a fixed number of decimals; a dash for missing."""
    x = _as_float(value)
    if isinstance(x, str):
        return x
    if math.isinf(x):
        return "∞" if x > 0 else "-∞"
    return f"{round(x, decimals) or 0.0:,.{decimals}f}"  # `or 0.0`: never '-0.0'


def fmt_percent(value: object, decimals: int = 1) -> str:
    """A fraction as a signed percentage: 0.0234 -> '+2.3 %'."""
    x = _as_float(value)
    if isinstance(x, str):
        return x
    return f"{round(x * 100, decimals) or 0.0:+,.{decimals}f} %"


def format_cell(value: object, column: Column) -> str:
    if column.kind == "number":
        return fmt_number(value, column.decimals)
    if column.kind == "index":
        return fmt_number(value, column.decimals or 1)
    if column.kind == "percent":
        return fmt_percent(value, column.decimals)
    return "" if value is None else str(value)


def html_text(text: object, *, attribute: bool = False) -> str:
    """Text for an HTML string: ``& < >`` as entities (and ``" '`` too in an attribute
    value), line breaks and other control characters as spaces, so user text can neither
    open an element nor end the single-line HTML block that ``dcc.Markdown`` is given (a
    blank line would turn what follows into Markdown)."""
    s = "".join(" " if (ord(ch) < 32 or 0x7F <= ord(ch) < 0xA0 or ch in "\u2028\u2029")
                else ch for ch in str(text))
    return _html.escape(s, quote=attribute)


_HTML_ATTRS = {"className": "class", "id": "id", "role": "role", "scope": "scope",
               "title": "title", "aria-label": "aria-label", "aria-live": "aria-live"}
"""The props a flattened element may carry, and their HTML names: nothing that could run
or load anything (no href, src, style or event)."""


def element_html(node: Any) -> str | None:
    """An ``html.*`` element tree of plain elements and text as one line of HTML, every
    text and attribute value through :func:`html_text`; None when the tree holds anything
    else (a dcc component, a prop not in ``_HTML_ATTRS``), which is then kept as it is."""
    if node is None:
        return ""
    if isinstance(node, str | int | float):
        return html_text(node)
    if isinstance(node, list | tuple):
        parts = [element_html(c) for c in node]
        return None if any(p is None for p in parts) else "".join(parts)  # type: ignore[arg-type]
    if getattr(node, "_namespace", None) != "dash_html_components":
        return None
    props = {k: v for k, v in node.to_plotly_json()["props"].items() if k != "children"}
    if any(k not in _HTML_ATTRS or not isinstance(v, str | int) for k, v in props.items()):
        return None
    inner = element_html(getattr(node, "children", None))
    if inner is None:
        return None
    tag = node._type.lower()
    attrs = "".join(f' {_HTML_ATTRS[k]}="{html_text(v, attribute=True)}"'
                    for k, v in props.items())
    return f"<{tag}{attrs}>{inner}</{tag}>"


def flattened(node: Any) -> Any:
    """``node`` drawn from one HTML string in one ``dcc.Markdown`` when it is made of plain
    elements and text (see :func:`element_html`), else ``node`` itself. For notes, problem
    lists and method notes that callbacks send anew with every change: each Dash component
    a callback creates costs the renderer a pass over every component on the page."""
    text = element_html(node)
    if not text or node is None or isinstance(node, str):
        return node
    return html_block(text)


def html_block(text: str, class_name: str = "rb-html") -> dcc.Markdown:
    """The one place raw HTML reaches the page: ``text`` comes from :func:`table_html` or
    :func:`element_html`, which escape every text (tests/test_dashboard_components.py
    parses what they write)."""
    return dcc.Markdown(text, dangerously_allow_html=True, className=class_name)


def table_html(columns: Sequence[Column], rows: Iterable[Mapping[str, Any]], *,
               caption: str | None = None, id: str | None = None) -> str:
    """The table as one line of HTML: caption, a header row of ``th scope=col`` and one
    row per mapping; every text and attribute value through :func:`html_text`."""
    t = html_text

    def a(v: object) -> str:
        return html_text(v, attribute=True)

    parts = ['<table class="rb-table"' + (f' id="{a(id)}"' if id else "") + ">"]
    if caption:
        parts.append(f"<caption>{t(caption)}</caption>")
    parts.append("<thead><tr>" + "".join(
        f'<th scope="col" class="rb-{a(c.kind)}">{t(c.label)}</th>' for c in columns)
        + "</tr></thead><tbody>")
    for r in rows:
        parts.append("<tr>" + "".join(
            f'<td class="rb-{a(c.kind)} rb-col-{a(c.key)}">{t(format_cell(r.get(c.key), c))}</td>'
            for c in columns) + "</tr>")
    parts.append("</tbody></table>")
    return "".join(parts)


def table(columns: Sequence[Column], rows: Iterable[Mapping[str, Any]], *,
          caption: str | None = None, id: str | None = None,
          empty: str = "Nothing to show.") -> dcc.Markdown | html.P:
    """An accessible HTML table; numbers right-aligned and formatted. The table sits in a
    wrapper that scrolls sideways (``rb-scroll``, reachable by keyboard), so a wide table
    is never cut off on a narrow screen; the id, when given, is the table element's (in
    the page, not a Dash component: no callback can use it).

    The rows are one HTML string in one ``dcc.Markdown`` (not a component per cell): a
    table of 60 cells made 80 components, and the Dash renderer runs every mounted
    component's selector once for each component a callback creates, which cost about
    half of a deflator switch in the browser (DEVELOPERS.md, "Version quirks")."""
    rows = list(rows)
    if not rows:
        return html.P(empty, className="rb-empty", id=id) if id else html.P(empty, className="rb-empty")
    label = f' aria-label="{html_text(caption, attribute=True)}"' if caption else ""
    return html_block(f'<div class="rb-scroll rb-table-wrap" tabindex="0" role="region"{label}>'
                      + table_html(columns, rows, caption=caption, id=id) + "</div>",
                      "rb-table-html")


def field(label: str, control: Any, control_id: str, hint: str | None = None, *,
          wide: bool = False) -> html.Div:
    """A labelled control (the label is tied to the control for screen readers)."""
    parts: list[Any] = [html.Label(label, htmlFor=control_id, className="rb-label"), control]
    if hint:
        parts.append(html.Small(hint, className="rb-hint"))
    return html.Div(parts, className="rb-field rb-field-wide" if wide else "rb-field")


def notice(text: str | Sequence[str] | None, tone: Literal["info", "ok", "warn", "error"] = "info"
           ) -> html.Div | None:
    """A status line (role=status, or role=alert for errors)."""
    if not text:
        return None
    lines = [text] if isinstance(text, str) else list(text)
    role = "alert" if tone == "error" else "status"
    return html.Div([html.P(line) for line in lines], className=f"rb-notice rb-{tone}", role=role)


def unique_problems(problems: Sequence[Mapping[str, Any]]) -> list[Mapping[str, Any]]:
    """Each problem once, in the order first met: the same warning reached by two paths
    (a series deflated twice, a note the engine and the screen both add) is one item."""
    seen: set[tuple[str, ...]] = set()
    out = []
    for p in problems:
        key = tuple(str(p.get(k) or "") for k in ("code", "severity", "message", "where_text",
                                                   "expected", "found", "fix"))
        if key not in seen:
            seen.add(key)
            out.append(p)
    return out


def problems_view(problems: Sequence[Mapping[str, Any]], *, title: str = "Problems found"
                  ) -> Any:
    """The problem list: code, severity, where, what, expected/found and the fix."""
    if not problems:
        return html.Section([html.H3(title), html.P("No problems found.", className="rb-ok")],
                            className="rb-problems")
    problems = unique_problems(problems)
    items = []
    for p in problems:
        where = p.get("where_text") or ""
        lines: list[Any] = [
            html.Span(str(p.get("code", "")), className="rb-code"), " ",
            html.Span(str(p.get("severity", "error")), className=f"rb-sev rb-{p.get('severity', 'error')}"),
            " ", html.Span(str(p.get("message", ""))),
        ]
        detail = []
        if where:
            detail.append(html.Li(["where: ", where]))
        for key in ("expected", "found", "fix"):
            if p.get(key):
                detail.append(html.Li([f"{key}: ", str(p[key])]))
        items.append(html.Li([html.Div(lines), html.Ul(detail)] if detail else [html.Div(lines)]))
    n_err = sum(1 for p in problems if p.get("severity", "error") == "error")
    n_warn = len(problems) - n_err
    return flattened(html.Section(
        [html.H3(f"{title}: {n_err:,} error(s), {n_warn:,} warning(s)"),
         html.Ul(items, className="rb-problem-list")], className="rb-problems"))


def method_view(lines: Sequence[str], *, title: str = "How these figures were computed"
                ) -> Any:
    if not lines:
        return html.Section([html.H3(title), html.P("Nothing computed yet.")],
                            className="rb-method")
    lines = list(dict.fromkeys(lines))  # a note reached twice is said once
    return flattened(html.Section([html.H3(title), html.Ol([html.Li(line) for line in lines])],
                                  className="rb-method"))


def warnings_view(warnings: Sequence[Mapping[str, Any]]) -> Any:
    if not warnings:
        return None
    return problems_view(warnings, title="Notes on these figures")


def cautions_view(cautions: Sequence[str] = CAUTIONS) -> Any:
    return flattened(html.Aside([html.H3("Cautions"), html.Ul([html.Li(c) for c in cautions])],
                                className="rb-cautions", **{"aria-label": "Cautions"}))


def progress_bar(bar_id: str) -> html.Progress:
    """A native progress element driven by a background callback."""
    return html.Progress(id=bar_id, value="0", max="1", className="rb-progress",
                         style={"visibility": "hidden"}, **{"aria-label": "Progress"})


def progress_with_cancel(bar_id: str, cancel_id: str) -> html.Div:
    """A background job's progress bar and its Cancel button; both hidden until the job
    runs (the callback's ``running`` shows them, its ``cancel`` listens to the button)."""
    return html.Div([
        progress_bar(bar_id),
        html.Button("Cancel", id=cancel_id, n_clicks=0, type="button", hidden=True,
                    className="rb-button"),
    ], className="rb-job", style={"display": "flex", "gap": "8px", "alignItems": "center"})


def dropdown(control_id: str, *, multi: bool = False, clearable: bool = False,
             placeholder: str = "") -> dcc.Dropdown:
    """A searchable, keyboard-usable select."""
    # a multi-select is clearable so its popover offers "Deselect All"
    return dcc.Dropdown(id=control_id, options=[], multi=multi, clearable=clearable or multi,
                        placeholder=placeholder, className="rb-dropdown")


def screen(title: str, intro: str, *children: Any) -> html.Div:
    return html.Div([html.H2(title), html.P(intro, className="rb-intro"), *children],
                    className="rb-screen-body")


def band_view(statements: Sequence[str], notes: Sequence[str | None] = (), *,
              title: str = "Revision risk of the preliminary values") -> Any:
    """The revision band in words: the sentences the engine gives ("past revisions of this
    index would put it between ...") and plain notes (e.g. why there is no band)."""
    notes = [n for n in notes if n]
    if not statements and not notes:
        return None
    children: list[Any] = [html.H3(title)]
    if statements:
        children.append(html.Ul([html.Li(s) for s in statements]))
    children += [html.P(n) for n in notes]
    return flattened(html.Section(children, className="rb-band", role="status"))


def workspace_label(name: str, version: int, *, demo_copy: bool = False) -> list[Any]:
    """The header's line naming the workspace shown; a copy of the demo says what it is,
    so the user knows their changes went there and the shared demo is unchanged."""
    out: list[Any] = ["Workspace: ", html.Strong(name), f" · version {version:,}"]
    if demo_copy:
        out.append(html.Span(" · your copy: changes to the demo are saved here, the shared "
                             "demo stays as it was", className="rb-copy-note"))
    return out
