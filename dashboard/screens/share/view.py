"""The Share and export screen's view model: plain functions, tested without a browser
(tests/test_share.py).

Downloads (:func:`export_file`: audit workbook, CSV, JSON) are written by the same engine
path as the command line from the workspace's saved choices; :func:`chart_png` renders the
deflator-spread chart of those choices through kaleido and the system Chromium. Reviewer
links are created (:func:`new_link`), listed (:func:`links_view`) and revoked here; the
audit trail is listed newest first (:func:`audit_view`).
"""

from __future__ import annotations

import datetime as dt
import os
import re
import shutil
import tempfile
import textwrap
from collections.abc import Callable, Sequence
from pathlib import Path
from typing import Any

from dash import dcc, html

from pipeline.errors import RealbasisError, fail
from pipeline.export import EX001
from pipeline.model import CAUTIONS, Workspace
from pipeline.store import SH005, AuditEvent, LinkInfo, WorkspaceStore, current_access
from pipeline.workbook import EX103, workspace_result

from ...components import Column, table
from ...images import RENDERER
from .._shared.view import comparison, problem_dict

FORMATS = {"xlsx": "Excel workbook (audit)", "csv": "CSV table", "json": "JSON"}
PNG_SIZE = (1200, 675)


LINK_COLUMNS = (
    Column("id", "Link"), Column("label", "For"), Column("state", "State"),
    Column("created", "Created (UTC)"), Column("expires", "Expires (UTC)"),
    Column("last_used", "Last used (UTC)"),
)


AUDIT_COLUMNS = (Column("at", "Time (UTC)"), Column("actor", "Who"), Column("what", "What"))


def _when(t: dt.datetime | None) -> str:
    return t.strftime("%Y-%m-%d %H:%M") if t else "—"


def link_rows(links: Sequence[LinkInfo], now: dt.datetime | None = None) -> list[dict[str, str]]:
    return [{"id": li.id, "label": li.label or "—", "state": li.state(now),
             "created": _when(li.created_at), "expires": _when(li.expires_at) if li.expires_at
             else "never", "last_used": _when(li.last_used_at)} for li in links]


def audit_rows(events: Sequence[AuditEvent]) -> list[dict[str, str]]:
    """Newest first, in words."""
    return [{"at": _when(e.at), "actor": e.actor, "what": e.describe()}
            for e in reversed(list(events))]


def scope_text(ws: Workspace) -> list[str]:
    """What the downloads will contain, from the saved choices."""
    from pipeline.workbook import saved_budget, workspace_budget

    try:
        result, used, notes = workspace_result(ws)
    except RealbasisError as err:
        return [f"Nothing to export yet: {err.problems[0].message}.",
                problem_dict(err.problems[0])["fix"]]
    lines = [f"Amounts in {result.dollars_label}, {result.frequency.describe()}.",
             "Series: " + ", ".join(result.series_names) + ".",
             "Deflators: " + ", ".join(f"{k} (vintage {v or 'not stated'})"
                                       for k, v in used.items()) + ".",
             *notes]
    rates = getattr(result, "rates", None) or {}
    if rates:
        lines.append("Deflated through outlay rates (budget authority): " + "; ".join(
            f"{k} ({v.describe()})" for k, v in rates.items()) + ".")
    if saved_budget(ws) is not None:
        try:
            budget, _used, _notes = workspace_budget(ws)
        except RealbasisError as err:
            lines.append(f"No budget table: {err.problems[0].message}.")
        else:
            lines.append(f"The workbook's 'Budget' sheet and the JSON's 'budget': "
                         f"{budget.title}.")
    if result.worst_status != "final":
        lines.append("Some figures rest on preliminary or projected index values; the "
                     "workbook's 'Status flags' sheet lists them.")
    return lines + total_scope(ws) + band_scope(ws, result, used)


def total_scope(ws: Workspace) -> list[str]:
    """What the workbook holds of the saved total of parts (its Contributions sheets)."""
    from pipeline.workbook import saved_total, workspace_total

    if saved_total(ws) is None:
        return []
    try:
        total, _used, _notes = workspace_total(ws)
    except RealbasisError as err:
        return [f"The saved total of parts cannot be computed ({err.problems[0].code}: "
                f"{err.problems[0].message}); the workbook leaves out its Contributions "
                "sheets."]
    held = "; ".join(f"{p} by {d}" for p, d in total.pairs)
    return [f"Audit workbook: Contributions sheets of the saved total of "
            f"{len(total.part_names):,} part(s) ({held}), {total.chain_words}, in "
            f"{total.dollars_label}, with the residual line."]


def band_scope(ws: Workspace, result: Any, used: dict[str, str]) -> list[str]:
    """Which revision bands the workbook and the JSON carry."""
    from pipeline.workbook import workspace_bands

    try:
        bands = workspace_bands(ws, result, used)
    except RealbasisError:
        return []
    out = []
    for b in bands:
        if b.available:
            out.append(f"Workbook and JSON: the revision band of {b.name} (vintage "
                       f"{b.current or 'not stated'}, {b.revisions_used:,} past revisions).")
        else:
            out.append(f"Workbook and JSON: no revision band of {b.name} (too few past "
                       "revisions); the reason is recorded.")
    return out


def safe_filename(text: str) -> str:
    stem = re.sub(r"[^A-Za-z0-9._-]+", "-", text).strip("-._")[:60]
    return stem or "workspace"


def export_file(ws: Workspace, fmt: str, store: WorkspaceStore | None,
                progress: Callable[[int, int], None] | None = None) -> tuple[bytes, str]:
    """The download: (bytes, file name) of the workspace's result in ``fmt``;
    ``progress(done, total)`` follows the stages of the export."""
    from pipeline.workbook import export_workspace

    if fmt not in FORMATS:
        raise fail(EX001, f"unknown export format {fmt!r}", expected=", ".join(FORMATS),
                   found=repr(fmt), fix="Choose one of the offered downloads.")
    name = f"{safe_filename(ws.name)}-v{ws.version}-real.{fmt}"
    with tempfile.TemporaryDirectory(prefix="rb-export-") as tmp:
        path = export_workspace(ws, Path(tmp) / name, store=store,
                                actor=current_access().actor,
                                command=f"dashboard: Share and export ({FORMATS[fmt]})",
                                progress=progress)
        return path.read_bytes(), name


def chromium_path() -> str | None:
    for candidate in (os.environ.get("RB_CHROMIUM"), os.environ.get("BROWSER_PATH"),
                      shutil.which("chromium"), "/usr/bin/chromium"):
        if candidate and Path(candidate).exists():
            return candidate
    return None


def chart_figure(ws: Workspace) -> Any:
    """The deflator-spread chart of the saved choices, titled, with the cautions."""
    from ...figures import spread_figure

    settings = dict(ws.settings or {})
    series = settings.get("series") if settings.get("series") in ws.series else next(
        iter(ws.series), None)
    names = [n for n in (settings.get("deflators") or
                         ([settings["deflator"]] if settings.get("deflator") else [])
                         or list(ws.indexes)[:5]) if n in ws.indexes]
    if not series or not names:
        raise fail(EX103, "no chart to draw yet", expected="a series and deflators chosen",
                   found=f"series {series or 'none'}; {len(names)} deflators",
                   fix="Choose them on the Deflator spread screen and save.")
    cmp = comparison(ws, str(series), names, str(settings.get("base") or "") or None,
                     to=str(settings.get("frequency") or "auto"),
                     interpolate=settings.get("interpolate"))
    unit = (cmp.result.units[0] if cmp.result.units else None) or "unit not stated"
    fig = spread_figure(cmp.table(), title=cmp.title, unit=unit)
    # the image travels without the page: say which deflators are not drawn, and why
    left = cmp.left_out_text()
    notes = textwrap.wrap(left.replace("<", "‹"), 150) if left else []
    # Every caution, one per line, under the chart: a PNG travels without the page.
    fig.add_annotation(text="<br>".join([*notes, *CAUTIONS]), align="left",
                       xref="paper", yref="paper", x=0, y=-0.2, yanchor="top", showarrow=False,
                       xanchor="left", font={"size": 10})
    # On the page the title is HTML above the chart; in the image it needs room of its own
    # above the legend.
    # the legend above the plot here: under it go the cautions
    fig.update_layout(legend={"orientation": "h", "yref": "paper", "yanchor": "bottom",
                              "y": 1.02, "x": 0},
                      margin={"t": 140, "b": 170 + 14 * len(notes)},
                      title={"xref": "paper", "x": 0, "xanchor": "left", "y": 0.985,
                             "yanchor": "top"})
    return fig


def warm_images() -> None:
    """Start the Chromium chart images need, in the background, if kaleido and a
    Chromium are there (the Share screen calls it when drawn: the first image then
    rarely waits for Chromium to start)."""
    try:
        import kaleido  # noqa: F401 - only whether it is there
    except ImportError:
        return
    path = chromium_path()
    if path is not None:
        RENDERER.warm(path)


def chart_png(ws: Workspace) -> tuple[bytes, str]:
    """The chart as PNG through kaleido and the system Chromium (never downloaded), kept
    open between images (:mod:`dashboard.images`)."""
    try:
        import kaleido  # noqa: F401 - the renderer needs it
    except ImportError:
        raise fail(EX103, "chart images need the kaleido package", expected="kaleido installed",
                   found="kaleido is not installed",
                   fix="pip install 'realbasis[images]' (or kaleido); the workbook, CSV and "
                   "JSON downloads work without it.") from None

    path = chromium_path()
    if path is None:
        raise fail(EX103, "chart images need Chromium", expected="/usr/bin/chromium or "
                   "RB_CHROMIUM", found="no Chromium", fix="Install Debian's chromium package "
                   "or set RB_CHROMIUM; the workbook and CSV downloads work without it.")
    fig = chart_figure(ws)
    try:  # through the Chromium this process keeps open (dashboard.images)
        png = RENDERER.png(fig.to_dict(), PNG_SIZE[0], PNG_SIZE[1], path)
    except Exception as err:  # kaleido/choreographer raise many kinds of errors
        raise fail(EX103, "the chart image could not be made", expected="a PNG from Chromium",
                   found=f"{type(err).__name__}: {err}"[:300],
                   fix="Try again; if it keeps failing use the workbook or CSV.") from None
    return bytes(png), f"{safe_filename(ws.name)}-v{ws.version}-spread.png"


def new_link(store: WorkspaceStore, workspace_id: str, label: str | None, days: Any,
             base_url: str) -> tuple[str, LinkInfo]:
    """Create a reviewer link; returns the full address (shown once) and its info."""
    expires = None
    if days not in (None, ""):
        try:
            n = float(days)
        except (TypeError, ValueError):
            n = -1.0
        if not n > 0:
            raise fail(SH005, "a reviewer link must expire after a positive number of days",
                       expected="a number of days above 0, or empty for no expiry",
                       found=repr(days), fix="Enter e.g. 30, or leave the box empty.")
        expires = dt.datetime.now(dt.UTC) + dt.timedelta(days=n)
    token, info = store.create_link(workspace_id, expires_at=expires, label=label or "",
                                    actor=current_access().actor)
    return f"{base_url.rstrip('/')}/review/{token}", info


def links_view(store: WorkspaceStore, workspace_id: str) -> tuple[Any, list[dict[str, str]]]:
    """The links table and the revoke choices (editors only)."""
    links = store.list_links(workspace_id)
    options = [{"label": f"{li.id} — {li.label or 'no label'}", "value": li.id}
               for li in links if li.active]
    return table(LINK_COLUMNS, link_rows(links), caption="Reviewer links of this workspace",
                 empty="No reviewer links yet."), options


def scope_view(ws: Workspace) -> html.Ul:
    """What the downloads will contain (:func:`scope_text`), as a list."""
    return html.Ul([html.Li(line) for line in scope_text(ws)])


def audit_view(store: WorkspaceStore, workspace_id: str) -> html.Div:
    """The workspace's audit trail, newest first."""
    return html.Div(table(AUDIT_COLUMNS, audit_rows(store.audit(workspace_id)),
                          caption="Uploads, settings changes, index vintages, exports "
                                  "and links", empty="Nothing recorded yet."),
                    style={"overflowX": "auto", "overflowWrap": "break-word"})


def created_link_view(url: str, info: LinkInfo) -> html.Div:
    """The new reviewer link, shown once."""
    return html.Div([
        html.P(f"Link {info.id} created. Copy it now: it is not shown again."),
        dcc.Input(value=url, readOnly=True, className="rb-input rb-link-url",
                  id="sx-link-url", style={"width": "100%"}),
    ], className="rb-notice rb-ok", role="status")
