"""Errors a callback did not turn into a message itself: a coded problem on the page,
never an HTTP 500.

``create_app`` passes :func:`on_callback_error` to Dash as the app's ``on_error``: Dash
calls it when a callback (or a background job, when its result is collected) raises.

* A refusal keeps its HTTP answer: ``SH001``/``SH007``/``SH002`` (403) and a malformed page
  state ``UI701``/``UI702`` (400) are raised again, so :mod:`dashboard.access` answers
  them — the page then shows them (``assets/access-notice.js``).
* Any other coded problem (``RealbasisError``, including a background job's failure record
  from :mod:`dashboard.jobs`) and a ``MemoryError`` are shown at the top of the page
  (:data:`dashboard.ids.PAGE_PROBLEM`) with their codes, logged as one line.
* Anything else is a bug: logged with its traceback (so tests and operators see it) and
  shown as ``UI706`` — the page never gets a 500 or a traceback.
"""

from __future__ import annotations

import logging
from typing import Any

from dash import html, set_props
from dash.exceptions import BackgroundCallbackError

from pipeline.errors import RealbasisError, fail, register

from . import ids
from .access import status_of
from .components import problems_view
from .jobs import out_of_memory
from .screens._shared.view import error_dicts

UI706 = register("UI706", "the server could not finish this request")

log = logging.getLogger("realbasis.dashboard")


def unexpected() -> RealbasisError:
    return fail(UI706, "the server could not finish this request",
                expected="an answer", found="an unexpected problem on the server (logged)",
                fix="Reload the page and try again; if it happens again, tell the "
                    "administrator the time it happened.")


def page_problem(err: RealbasisError) -> Any:
    """What the top of the page shows for ``err``."""
    return html.Div([problems_view(error_dicts(err), title="Not done")],
                    className="rb-notice rb-error", role="alert")


def on_callback_error(err: Exception) -> None:
    """Dash's ``on_error`` for the whole app (see the module notes)."""
    if isinstance(err, RealbasisError):
        if status_of(err) is not None:
            raise err
        log.warning("callback problem: %s", "; ".join(err.codes))
        shown = err
    elif isinstance(err, MemoryError):
        log.warning("callback ran out of memory")
        shown = out_of_memory()
    elif isinstance(err, BackgroundCallbackError):
        log.error("%s", err)  # its text holds the job's traceback
        shown = unexpected()
    else:
        log.error("callback failed", exc_info=err)
        shown = unexpected()
    set_props(ids.PAGE_PROBLEM, {"children": page_problem(shown)})
