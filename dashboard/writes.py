"""Which callbacks change the server: the registry the access gate decides on.

A callback that changes anything on the server — saves a workspace version, starts a
workspace, creates or revokes a reviewer link, keeps an uploaded file, starts a job that
saves — is marked where it is defined, directly under ``@app.callback``::

    @app.callback(Output(...), Input(ids.RT_SAVE, "n_clicks"), ...)
    @writes("save the real-terms choices")
    def _save(...): ...

Dash runs the callback the request's ``output`` names (``app.callback_map[output]``),
whatever the request's ``changedPropIds`` say. So the access gate
(:mod:`dashboard.access`) looks the callback up the same way and refuses a marked one for
a reviewer with 403 before it runs. Inside, every store write and
:meth:`dashboard.data.DataAccess.keep_upload` also refuse under a reviewer
(``require_write``), so a write callback forgotten here is still refused one level down —
and ``tests/test_security_http.py`` replays every callback of ``/_dash-dependencies`` as an
editor and fails when one changes server state without being marked.

Not marked (reads, or changes browser state only): computing figures, listing, the
kind correction (a browser-side store), downloads (an editor's export is *recorded* in the
audit trail, a reviewer's is not; neither changes the workspace).

This module imports nothing of the dashboard, so screens and the gate both use it.
"""

from __future__ import annotations

from collections.abc import Callable
from typing import Any, TypeVar

F = TypeVar("F", bound=Callable[..., Any])

WRITES_ATTR = "_rb_writes"


def writes(what: str) -> Callable[[F], F]:
    """Mark a callback function as changing server state; ``what`` completes "cannot …"
    in the refusal a reviewer gets (e.g. ``"save the workspace"``)."""

    def mark(fn: F) -> F:
        setattr(fn, WRITES_ATTR, what)
        return fn

    return mark


def _marked(fn: Any) -> str | None:
    what = getattr(fn, WRITES_ATTR, None)
    if what is None and getattr(fn, "__wrapped__", None) is not None:
        what = getattr(fn.__wrapped__, WRITES_ATTR, None)  # marked above @app.callback
    return what if isinstance(what, str) else None


def write_of(app: Any, output: str) -> str | None:
    """What the callback answering ``output`` (a request's ``output``) writes, or None."""
    entry = app.callback_map.get(output)
    return None if entry is None else _marked(entry.get("callback"))


def write_callbacks(app: Any) -> dict[str, str]:
    """Every marked callback of ``app``: its callback id (the ``output`` of
    ``/_dash-dependencies``) and what it writes."""
    out = {}
    for cid, entry in app.callback_map.items():
        what = _marked(entry.get("callback"))
        if what is not None:
            out[cid] = what
    return out
