"""The Data intake page (pure: no data; the callbacks fill it)."""

from __future__ import annotations

from typing import Any

from dash import dcc, html

from ... import ids
from ...components import (
    EDITOR_ONLY_CLASS,
    cautions_view,
    dropdown,
    field,
    progress_with_cancel,
    screen,
)
from .view import (
    ACCEPTED_TYPES,
    fiscal_month_options,
    kind_options,
    month_options,
    size_text,
    upload_limit,
)


def layout() -> html.Div:
    workspace = html.Div([
        field("Open a workspace", dropdown(ids.IN_WORKSPACE_LIST, placeholder="Choose"),
              ids.IN_WORKSPACE_LIST),
        field("Or start a new one", dcc.Input(id=ids.IN_NEW_NAME, type="text",
                                              placeholder="Name, e.g. FY2026 budget review",
                                              className="rb-input", maxLength=120),
              ids.IN_NEW_NAME),
        html.Div(html.Button("Start an empty workspace", id=ids.IN_NEW_WORKSPACE, n_clicks=0,
                             type="button", className="rb-button"), className="rb-field"),
    ], className="rb-controls")
    upload = dcc.Upload(
        id=ids.IN_UPLOAD, multiple=False, accept=",".join(ACCEPTED_TYPES),
        max_size=-1,  # the server checks the size and says so (the widget would drop silently)
        className="rb-upload",
        children=html.Div([
            html.Strong("Drop a file here"), " or ",
            html.Span("choose one", className="rb-linklike"),
            html.Br(),
            html.Small("CSV, XLSX, XLS, ODS or SDMX-CSV; a period column (2024-01, 2024Q1, "
                       "2024, FY2025) and one column per series, or long columns series, period, value "
                       "(unit, status, vintage optional)."),
        ]),
    )
    limit = upload_limit()
    # assets/upload-limit.js reads these and refuses a bigger file in the browser, before
    # anything is sent (the server checks again: UI001, and answers an oversized request
    # with the same message, see dashboard.app).
    upload = html.Div(upload, id=ids.IN_UPLOAD_BOX, className="rb-upload-box", **{
        "data-max-bytes": str(limit), "data-limit-text": size_text(limit),
        "data-status-id": ids.IN_STATUS})
    interpretation = html.Div([
        field("Fiscal year of the file's labels",
              dcc.Dropdown(id=ids.IN_FY_START, options=month_options(), value=0,
                           clearable=False, className="rb-dropdown"),
              ids.IN_FY_START, hint="Needed when labels like FY2025 appear; the workspace's "
                                    "fiscal year to begin with."),
        field("Sheet", dcc.Dropdown(id=ids.IN_SHEET, options=[], value=None, clearable=True,
                                    placeholder="First sheet with data",
                                    className="rb-dropdown"), ids.IN_SHEET,
              hint="Workbooks only."),
        field("Series to correct", dropdown(ids.IN_KIND_SERIES, placeholder="Choose a series"),
              ids.IN_KIND_SERIES),
        field("Is a", dcc.Dropdown(id=ids.IN_KIND_VALUE, options=kind_options(),
                                   value="flow", clearable=False, className="rb-dropdown"),
              ids.IN_KIND_VALUE),
        html.Div(html.Button("Apply and read again", id=ids.IN_KIND_APPLY, n_clicks=0,
                             type="button", className="rb-button"), className="rb-field"),
    ], className="rb-controls")
    return screen(
        "Data intake",
        "The series and price indexes this workspace holds, and the files added to it. "
        "Editors drop new files here: every series found is listed with its frequency, "
        "kind and unit, and every problem with where it is.",
        html.Div([*_editor_part(workspace, upload, interpretation)], className=EDITOR_ONLY_CLASS),
        html.H3("Fiscal year of this workspace"),
        html.Div(id=ids.IN_WS_FY),
        html.Div([
            html.Div([
                field("Fiscal year starts in", dcc.Dropdown(
                    id=ids.IN_WS_FY_MONTH, options=fiscal_month_options(None), value=0,
                    clearable=False, className="rb-dropdown"), ids.IN_WS_FY_MONTH,
                    hint="Every period field (base, rebase, project until, overlap) reads "
                         "FY2025 and 2024-25 with it."),
                html.Div(html.Button("Save the fiscal year", id=ids.IN_FY_SAVE, n_clicks=0,
                                     type="button", className="rb-button"),
                         className="rb-field"),
            ], className="rb-controls"),
            html.Div(id=ids.IN_FY_MESSAGE, role="status"),
        ], className=EDITOR_ONLY_CLASS),
        html.H3("In this workspace"),
        html.Div(id=ids.IN_WS_SERIES),
        html.H3("Files added"),
        html.Div(id=ids.IN_UPLOADS),
        cautions_view(),
    )


def _editor_part(workspace: Any, upload: Any, interpretation: Any) -> list[Any]:
    """Choosing a workspace, dropping a file, correcting and adding it (editors only)."""
    return [
        workspace,
        upload,
        dcc.Store(id=ids.IN_PENDING),
        dcc.Store(id=ids.IN_KINDS, data={}),
        dcc.Store(id=ids.IN_ADDED_AT),
        html.Div(id=ids.IN_STATUS, role="status"),
        progress_with_cancel(ids.IN_PROGRESS, ids.IN_CANCEL),
        html.Div(id=ids.IN_SUMMARY, role="status"),
        html.H3("How the file is read"),
        interpretation,
        html.Div(id=ids.IN_SERIES_TABLE),
        html.Div(id=ids.IN_PROBLEMS),
        html.Details([html.Summary("First rows of the file, as written"),
                      html.Div(id=ids.IN_PREVIEW)], className="rb-details"),
        html.Div([html.Button("Add these series to the workspace", id=ids.IN_ADD, n_clicks=0,
                              type="button", disabled=True, className="rb-button rb-primary"),
                  html.Div(id=ids.IN_ADDED, role="status")], className="rb-actions"),
    ]
