"""The Share and export page (pure: no data; the callbacks fill it)."""

from __future__ import annotations

from dash import dcc, html

from ... import ids
from ...components import cautions_view, field, progress_with_cancel, screen
from .view import FORMATS


def layout() -> html.Div:
    downloads = html.Section([
        html.H3("Downloads"),
        html.Div(id=ids.SX_SCOPE, className="rb-scope"),
        html.Div([
            html.Button(FORMATS["xlsx"], id=ids.SX_DL_XLSX, n_clicks=0, type="button",
                        className="rb-button"),
            html.Button(FORMATS["csv"], id=ids.SX_DL_CSV, n_clicks=0, type="button",
                        className="rb-button"),
            html.Button(FORMATS["json"], id=ids.SX_DL_JSON, n_clicks=0, type="button",
                        className="rb-button"),
            html.Button("Chart image (PNG)", id=ids.SX_DL_PNG, n_clicks=0, type="button",
                        className="rb-button"),
        ], className="rb-actions", style={"display": "flex", "gap": "8px", "flexWrap": "wrap"}),
        progress_with_cancel(ids.SX_PROGRESS, ids.SX_CANCEL),
        html.Div(id=ids.SX_DL_STATUS, role="status", **{"aria-live": "polite"}),
        dcc.Download(id=ids.SX_DOWNLOAD),
        dcc.Download(id=ids.SX_DOWNLOAD_PNG),
        html.P("The workbook holds a summary, the real values per deflator, the deflator "
               "indexes as used (rebased), the status flags, the method and the audit trail; "
               "it is the same file `realbasis workspace export` writes.", className="rb-hint"),
    ], className="rb-panel")
    links = html.Section([
        html.H3("Reviewer links (read-only)"),
        html.P("A reviewer link opens every screen of this workspace read-only: the server "
               "refuses any change made through it. The link is shown once; only its hash is "
               "kept. Revoke it when the review is over.", className="rb-hint"),
        html.Div([
            field("For whom", dcc.Input(id=ids.SX_LINK_LABEL, type="text", maxLength=200,
                                        placeholder="e.g. audit committee",
                                        className="rb-input"), ids.SX_LINK_LABEL),
            field("Expires after (days)", dcc.Input(id=ids.SX_LINK_DAYS, type="number", min=0,
                                                    placeholder="never", className="rb-input"),
                  ids.SX_LINK_DAYS, "Leave empty for a link that does not expire."),
            html.Button("Create link", id=ids.SX_LINK_CREATE, n_clicks=0, type="button",
                        className="rb-button"),
        ], className="rb-controls"),
        html.Div(id=ids.SX_LINK_NEW, role="status", **{"aria-live": "polite"}),
        html.Div(id=ids.SX_LINKS),
        html.Div([
            field("Revoke a link", dcc.Dropdown(id=ids.SX_REVOKE_ID, options=[],
                                                placeholder="Choose a link",
                                                className="rb-dropdown"), ids.SX_REVOKE_ID),
            html.Button("Revoke", id=ids.SX_REVOKE, n_clicks=0, type="button",
                        className="rb-button rb-danger"),
        ], className="rb-controls"),
    ], id=ids.SX_LINK_PANEL, className="rb-panel")
    audit = html.Section([html.H3("Audit trail"), html.Div(id=ids.SX_AUDIT)],
                         className="rb-panel")
    return screen("Share and export", "Download what this workspace shows, send a read-only link to a "
                  "reviewer, and see everything that was done to the workspace.",
                  downloads, links, audit, cautions_view())
