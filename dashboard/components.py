"""Pure builders of page pieces: plain data in, Dash components out.

Nothing here touches the store or the engine, so every builder is unit-tested by looking
at the component tree it returns. User text is only ever passed as component children
(text nodes, escaped by React); nothing here renders HTML or Markdown from user input.
"""

from __future__ import annotations

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


def table(columns: Sequence[Column], rows: Iterable[Mapping[str, Any]], *,
          caption: str | None = None, id: str | None = None,
          empty: str = "Nothing to show.") -> html.Div | html.P:
    """An accessible HTML table; numbers right-aligned and formatted. The table sits in a
    wrapper that scrolls sideways (``rb-scroll``, reachable by keyboard), so a wide table
    is never cut off on a narrow screen; the id, when given, is the table's."""
    rows = list(rows)
    if not rows:
        return html.P(empty, className="rb-empty", id=id) if id else html.P(empty, className="rb-empty")
    head = html.Thead(html.Tr([html.Th(c.label, scope="col",
                                       className=f"rb-{c.kind}") for c in columns]))
    body = html.Tbody([
        html.Tr([html.Td(format_cell(r.get(c.key), c), className=f"rb-{c.kind} rb-col-{c.key}")
                 for c in columns])
        for r in rows
    ])
    children: list[Any] = []
    if caption:
        children.append(html.Caption(caption))
    children += [head, body]
    kwargs: dict[str, Any] = {"className": "rb-table"}
    if id:
        kwargs["id"] = id
    label = {"aria-label": caption} if caption else {}
    return html.Div(html.Table(children, **kwargs), className="rb-scroll rb-table-wrap",
                    tabIndex=0, role="region", **label)


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
                  ) -> html.Section:
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
    return html.Section([html.H3(f"{title}: {n_err:,} error(s), {n_warn:,} warning(s)"),
                         html.Ul(items, className="rb-problem-list")], className="rb-problems")


def method_view(lines: Sequence[str], *, title: str = "How these figures were computed"
                ) -> html.Section:
    if not lines:
        return html.Section([html.H3(title), html.P("Nothing computed yet.")],
                            className="rb-method")
    lines = list(dict.fromkeys(lines))  # a note reached twice is said once
    return html.Section([html.H3(title), html.Ol([html.Li(line) for line in lines])],
                        className="rb-method")


def warnings_view(warnings: Sequence[Mapping[str, Any]]) -> html.Section | None:
    if not warnings:
        return None
    return problems_view(warnings, title="Notes on these figures")


def cautions_view(cautions: Sequence[str] = CAUTIONS) -> html.Aside:
    return html.Aside([html.H3("Cautions"), html.Ul([html.Li(c) for c in cautions])],
                      className="rb-cautions", **{"aria-label": "Cautions"})


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
              title: str = "Revision risk of the preliminary values") -> html.Section | None:
    """The revision band in words: the sentences the engine gives ("past revisions of this
    index would put it between ...") and plain notes (e.g. why there is no band)."""
    notes = [n for n in notes if n]
    if not statements and not notes:
        return None
    children: list[Any] = [html.H3(title)]
    if statements:
        children.append(html.Ul([html.Li(s) for s in statements]))
    children += [html.P(n) for n in notes]
    return html.Section(children, className="rb-band", role="status")


def workspace_label(name: str, version: int, *, demo_copy: bool = False) -> list[Any]:
    """The header's line naming the workspace shown; a copy of the demo says what it is,
    so the user knows their changes went there and the shared demo is unchanged."""
    out: list[Any] = ["Workspace: ", html.Strong(name), f" · version {version:,}"]
    if demo_copy:
        out.append(html.Span(" · your copy: changes to the demo are saved here, the shared "
                             "demo stays as it was", className="rb-copy-note"))
    return out
