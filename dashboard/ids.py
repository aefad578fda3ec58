"""Every component id of the dashboard, in one place.

Ids are plain strings; screens import them from here so a rename touches one line and
tests can address components without guessing. Prefixes name the screen.
"""

from __future__ import annotations

# Shell
URL = "rb-url"
WORKSPACE = "rb-workspace"          # dcc.Store {"id": str, "version": int} (browser holds ids only)
NAV = "rb-nav"
SCREEN = "rb-screen"                # dcc.Store: key of the screen shown
SECTIONS = "rb-sections"            # dcc.Store: each screen's contents until first shown
WORKSPACE_LABEL = "rb-workspace-label"
CAUTIONS = "rb-cautions"
PAGE_PROBLEM = "rb-page-problem"    # top of the page: problems no screen shows (failures.py,
                                    # assets/access-notice.js)


def nav_button(key: str) -> str:
    return f"rb-nav-{key}"


def screen_container(key: str) -> str:
    return f"rb-screen-{key}"


def screen_ref(key: str) -> str:
    """dcc.Store: the workspace ref a screen's callbacks compute for. The shell copies
    WORKSPACE into it only while the screen is shown (dashboard/app.py), so a hidden
    screen computes nothing; it catches up when opened."""
    return f"rb-ref-{key}"


def screen_saved(key: str) -> str:
    """dcc.Store inside a screen's section: the workspace ref a change on the screen saved;
    the shell copies it into WORKSPACE (app.py). A screen's callbacks write here, never to
    WORKSPACE itself: Dash runs a callback whose input joins the page and whose output is
    outside the joining part, and a screen's contents join the page when first shown."""
    return f"rb-saved-{key}"


def screen_goto(key: str) -> str:
    """dcc.Store inside a screen's section: a query string to open (another workspace);
    the shell copies it into the address (URL.search), like screen_saved."""
    return f"rb-goto-{key}"


def screen_address(key: str) -> str:
    """dcc.Store written by the clientside callback that keeps a screen's choices in the
    page address (#key?name=value...); its data is never read."""
    return f"rb-address-{key}"


# Intake
IN_UPLOAD = "in-upload"
IN_UPLOAD_BOX = "in-upload-box"     # carries the size limit for assets/upload-limit.js
IN_FY_START = "in-fy-start"
IN_SHEET = "in-sheet"
IN_KIND_SERIES = "in-kind-series"
IN_KIND_VALUE = "in-kind-value"
IN_KINDS = "in-kinds"               # dcc.Store {series name: kind} corrections
IN_KIND_APPLY = "in-kind-apply"
IN_PENDING = "in-pending"           # dcc.Store: upload id of the parsed, unsaved file
IN_ADD = "in-add"
IN_STATUS = "in-status"
IN_SUMMARY = "in-summary"
IN_ADDED = "in-added"
IN_NEW_NAME = "in-new-name"
IN_LAYOUT = "in-layout"
IN_PROGRESS = "in-progress"
IN_CANCEL = "in-cancel"             # stops reading a file
IN_PREVIEW = "in-preview"
IN_SERIES_TABLE = "in-series-table"
IN_PROBLEMS = "in-problems"
IN_WORKSPACE_LIST = "in-workspace-list"
IN_NEW_WORKSPACE = "in-new-workspace"
IN_REREAD = "in-reread"
IN_ADDED_AT = "in-added-at"       # dcc.Store: the workspace version the "Added" message names
IN_WS_SERIES = "in-ws-series"       # series held in the workspace (editors and reviewers)
IN_UPLOADS = "in-uploads"           # files added, from the audit trail
IN_WS_FY = "in-ws-fy"               # the workspace's fiscal year, in words (everyone)
IN_WS_FY_MONTH = "in-ws-fy-month"   # its start month, settable (editors)
IN_FY_SAVE = "in-fy-save"
IN_FY_MESSAGE = "in-fy-message"

# Deflator shelf
SH_TABLE = "sh-table"
SH_INDEX = "sh-index"
SH_TARGET = "sh-target"
SH_FIGURE = "sh-figure"
SH_REBASE_BASE = "sh-rebase-base"
SH_REBASE = "sh-rebase"
SH_LINK_OLD = "sh-link-old"
SH_LINK_NEW = "sh-link-new"
SH_LINK_OVERLAP = "sh-link-overlap"
SH_LINK = "sh-link"
SH_PROJECT_INDEX = "sh-project-index"
SH_PROJECT_RATE = "sh-project-rate"
SH_PROJECT_UNTIL = "sh-project-until"
SH_PROJECT = "sh-project"
SH_COST_NAME = "sh-cost-name"
SH_COST_COMPONENTS = "sh-cost-components"
SH_COST_WEIGHTS = "sh-cost-weights"
SH_COST_METHOD = "sh-cost-method"
SH_COST_BUILD = "sh-cost-build"
SH_MESSAGE = "sh-message"
SH_METHOD = "sh-method"

# Real terms
RT_SERIES = "rt-series"
RT_DEFLATOR = "rt-deflator"
RT_BASE = "rt-base"
RT_FREQ = "rt-freq"
RT_SA = "rt-sa"
RT_FIGURE = "rt-figure"
RT_TITLE = "rt-title"
RT_GROWTH = "rt-growth"
RT_METHOD = "rt-method"
RT_WARNINGS = "rt-warnings"
RT_SAVE = "rt-save"
RT_SAVED = "rt-saved"
RT_SA_METHOD = "rt-sa-method"
RT_SA_ALL = "rt-sa-all"
RT_SA_PROGRESS = "rt-sa-progress"
RT_SA_CANCEL = "rt-sa-cancel"       # stops adjusting every series
RT_SA_MESSAGE = "rt-sa-message"
RT_INTERP = "rt-interp"             # fill in a less frequent deflator (Denton)
RT_DEFLATOR_WHY = "rt-deflator-why"  # why the other deflators are not offered
RT_OUTLAY = "rt-outlay"             # outlay rates of the chosen series, in percent
RT_OUTLAY_STATE = "rt-outlay-state"  # saved or not
RT_DEFLATOR_BOX = "rt-deflator-box"   # the one-deflator field (hidden for a total of parts)
RT_PARTS_BOX = "rt-parts-box"       # the total of parts' choices (shown for it only)
RT_PAIRS = "rt-pairs"               # one deflator picker per part, built by a callback
RT_PAIRS_STAMP = "rt-pairs-stamp"   # dcc.Store: bumped each time the pickers are rebuilt
RT_PAIR = "rt-pair"                 # pattern-matching type: {"type": RT_PAIR, "part": name}
RT_CHAIN = "rt-chain"               # none | fisher | annual
RT_CONTRIB_BOX = "rt-contrib-box"   # contributions chart and table (total of parts only)
RT_BASIS = "rt-basis"               # period | yoy | annual
RT_CONTRIB_FIGURE = "rt-contrib-figure"
RT_CONTRIB_TABLE = "rt-contrib-table"


def rt_pair(part: str) -> dict[str, str]:
    """The id of the deflator picker of one part of a total."""
    return {"type": RT_PAIR, "part": part}


# Budget table
BT_PROGRAMS = "bt-programs"
BT_DEFLATOR = "bt-deflator"
BT_INTERP = "bt-interp"
BT_DEFLATOR_WHY = "bt-deflator-why"
BT_BASE = "bt-base"
BT_FREQ = "bt-freq"
BT_GIVEN = "bt-given"
BT_OUTLAY_PROGRAM = "bt-outlay-program"
BT_OUTLAY = "bt-outlay"
BT_OUTLAY_SAVE = "bt-outlay-save"
BT_OUTLAY_MESSAGE = "bt-outlay-message"
BT_OUTLAY_SAVED = "bt-outlay-saved"   # the rates saved for the programs
BT_SAVE = "bt-save"
BT_SAVED = "bt-saved"
BT_TITLE = "bt-title"
BT_SUMMARY = "bt-summary"
BT_FIGURE = "bt-figure"
BT_TABLE = "bt-table"
BT_WARNINGS = "bt-warnings"
BT_METHOD = "bt-method"
BT_DL_CSV = "bt-dl-csv"
BT_DL_XLSX = "bt-dl-xlsx"
BT_DOWNLOAD = "bt-download"
BT_DL_STATUS = "bt-dl-status"
BT_DL_PROGRESS = "bt-dl-progress"
BT_DL_CANCEL = "bt-dl-cancel"       # stops the budget download job

# Deflator spread
SP_SERIES = "sp-series"
SP_DEFLATORS = "sp-deflators"
SP_BASE = "sp-base"
SP_FREQ = "sp-freq"
SP_MEASURE = "sp-measure"
SP_FIGURE = "sp-figure"
SP_TITLE = "sp-title"
SP_VERDICT = "sp-verdict"
SP_GROWTH = "sp-growth"
SP_METHOD = "sp-method"
SP_WARNINGS = "sp-warnings"
SP_INTERP = "sp-interp"
SP_DEFLATOR_WHY = "sp-deflator-why"

# Revisions
RV_INDEX = "rv-index"
RV_OLD = "rv-old"
RV_NEW = "rv-new"
RV_SERIES = "rv-series"
RV_BASE = "rv-base"
RV_FIGURE = "rv-figure"
RV_TABLE = "rv-table"
RV_SUMMARY = "rv-summary"
RV_METHOD = "rv-method"
RV_WARNINGS = "rv-warnings"
RV_BAND = "rv-band"                 # revision risk: statements, tables, method
RV_BAND_FIGURE = "rv-band-figure"   # the index band

# Share and export (dashboard/screens/share.py)
SX_SCOPE = "sx-scope"               # what the downloads contain (saved choices)
SX_DL_XLSX = "sx-dl-xlsx"
SX_DL_CSV = "sx-dl-csv"
SX_DL_JSON = "sx-dl-json"
SX_DL_PNG = "sx-dl-png"
SX_DOWNLOAD = "sx-download"         # dcc.Download for workbook / CSV / JSON
SX_DOWNLOAD_PNG = "sx-download-png"  # dcc.Download for the chart image
SX_DL_STATUS = "sx-dl-status"
SX_PROGRESS = "sx-progress"         # the download job's progress bar
SX_CANCEL = "sx-cancel"             # stops the download job
SX_LINK_PANEL = "sx-link-panel"
SX_LINK_LABEL = "sx-link-label"
SX_LINK_DAYS = "sx-link-days"
SX_LINK_CREATE = "sx-link-create"
SX_LINK_NEW = "sx-link-new"         # the new link, shown once
SX_LINKS = "sx-links"
SX_REVOKE_ID = "sx-revoke-id"
SX_REVOKE = "sx-revoke"
SX_AUDIT = "sx-audit"
