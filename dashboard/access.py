"""Who may do what: editor and reviewer access, enforced on the server.

``create_app`` calls :func:`install` last. From then on every request is classified
before Dash sees it, and the answer is bound to the request as a
:class:`pipeline.store.AccessContext`:

* **Editor.** With no ``editor_token`` set, only requests from this machine
  (``127.0.0.1``/``::1``, with a loopback ``Host`` header and no proxy headers) are
  editors; serving on a network address without an editor token is refused at start
  (``SH003``). With ``editor_token`` set, an editor presents it once on
  ``/editor-login`` (a signed session cookie remembers it) or on every request as
  ``Authorization: Bearer <token>``.
* **Reviewer.** ``/review/<token>`` checks a reviewer link (the store keeps only its
  SHA-256), puts the token in the signed session cookie and opens the dashboard on the
  link's workspace; scripts may send ``X-Realbasis-Review: <token>`` instead. Every
  request re-checks the link, so revoking or expiry takes effect at once.

A reviewer is read-only where it matters: every store method that writes refuses under a
reviewer context (``SH001``), and if any refusal happened while a request was handled
the response is replaced by ``403`` whatever the callback did with the error. Requests
that could change the server outside the store (uploads, any non-GET route other than
Dash's callback dispatcher) are refused with ``403`` before they run. Background jobs
carry the access context of the request that started them
(:class:`dashboard.jobs.AccessAwareMixin`, which builds on :func:`anonymous`).
"""

from __future__ import annotations

import contextlib
import hashlib
import hmac
import html
import time
from collections.abc import Callable
from typing import Any
from urllib.parse import urlsplit

import flask
from dash import Dash
from dash import html as dhtml

from pipeline.errors import RealbasisError
from pipeline.settings import Settings
from pipeline.store import (
    SH001,
    SH002,
    SH006,
    SH007,
    AccessContext,
    WorkspaceStore,
    check_serving,
    current_access,
    is_loopback_host,
    reset_access,
    set_access,
)

from . import ids
from .components import EDITOR_ONLY_CLASS
from .context import find
from .data import WorkspaceRef
from .secret import secret_key

REVIEW_HEADER = "X-Realbasis-Review"
ROLE_HEADER = "X-Realbasis-Access"
LOOPBACK_ADDRS = frozenset({"127.0.0.1", "::1", "::ffff:127.0.0.1"})
_FORWARD_HEADERS = ("X-Forwarded-For", "Forwarded", "X-Real-Ip")
_SAFE_METHODS = frozenset({"GET", "HEAD", "OPTIONS"})
ANONYMOUS = "anonymous"


def anonymous() -> AccessContext:
    """Read-only, no workspace: for the sign-in pages and refused requests (a fresh
    object each time, since a context records its own refusals)."""
    return AccessContext("reviewer", None, ANONYMOUS)


def _digest(text: str) -> str:
    return hashlib.sha256(text.encode("utf-8")).hexdigest()


def _page(title: str, body: str, status: int) -> flask.Response:
    doc = (f"<!doctype html><html lang='en'><head><meta charset='utf-8'><title>{html.escape(title)}"
           "</title></head><body style='font-family:sans-serif;max-width:40em;margin:3em auto'>"
           f"<h1>{html.escape(title)}</h1>{body}</body></html>")
    return flask.Response(doc, status=status, mimetype="text/html")


def _refusal(code: str, message: str, fix: str, status: int = 403) -> flask.Response:
    wants_json = (flask.request.path.endswith("_dash-update-component")
                  or flask.request.accept_mimetypes.best == "application/json"
                  or flask.request.method not in _SAFE_METHODS)
    if wants_json:
        resp = flask.jsonify({"code": code, "message": message, "fix": fix})
        resp.status_code = status
        return resp
    return _page("Access refused", f"<p>[{code}] {html.escape(message)}</p>"
                 f"<p>{html.escape(fix)}</p>", status)


class Gate:
    """The request classifier installed on the Flask server (one per app)."""

    def __init__(self, settings: Settings, store: WorkspaceStore, prefix: str) -> None:
        self.settings = settings
        self.store = store
        self.prefix = prefix if prefix.endswith("/") else prefix + "/"
        self.open_paths = (self.prefix + "review/", self.prefix + "editor-login",
                           self.prefix + "review-exit", self.prefix + "favicon.ico")

    # ----- classification

    def classify(self) -> AccessContext | flask.Response:
        req = flask.request
        token = req.headers.get(REVIEW_HEADER) or flask.session.get("rb_review")
        if token:
            link = self.store.resolve_token(str(token))
            if link is None:
                flask.session.pop("rb_review", None)
                return _refusal(SH002, "this reviewer link is unknown, revoked or expired",
                                "Ask the workspace's editor for a new link.")
            return AccessContext("reviewer", link.workspace_id, f"reviewer {link.id}",
                                 link_id=link.id)
        if self.settings.editor_token:
            expected = _digest(self.settings.editor_token)
            bearer = req.headers.get("Authorization", "")
            if bearer.startswith("Bearer ") and hmac.compare_digest(
                    _digest(bearer[7:].strip()), expected):
                return AccessContext("editor", None, "editor")
            if hmac.compare_digest(str(flask.session.get("rb_editor", "")), expected):
                return AccessContext("editor", None, "editor")
            if req.method == "GET" and req.path == self.prefix:
                return flask.redirect(self.prefix + "editor-login")
            return _refusal(SH006, "editor access needs the editor token",
                            f"Sign in at {self.prefix}editor-login or open a reviewer link.")
        if self._local_request():
            return AccessContext("editor", None, "editor")
        return _refusal(SH006, "editor access is only open from this machine",
                        "Open the dashboard on the machine it runs on, set "
                        "REALBASIS_EDITOR_TOKEN, or use a reviewer link.")

    @staticmethod
    def _local_request() -> bool:
        req = flask.request
        if req.remote_addr not in LOOPBACK_ADDRS:
            return False
        if any(h in req.headers for h in _FORWARD_HEADERS):
            return False  # came through a proxy: its clients are not this machine
        host = urlsplit("//" + (req.host or "")).hostname or ""
        return is_loopback_host(host)  # a foreign Host header means DNS rebinding

    def reviewer_guard(self, ctx: AccessContext) -> flask.Response | None:
        """Refuse reviewer requests that could change the server before they run."""
        req = flask.request
        if req.method in _SAFE_METHODS:
            return None
        if not req.path.endswith("_dash-update-component"):
            return _refusal(SH001, "a reviewer link is read-only",
                            "Ask the workspace's editor to make the change.")
        body = req.get_json(silent=True) or {}
        changed = body.get("changedPropIds") or []
        if any(str(p).endswith(".contents") for p in changed):
            ctx.refused.append("upload a file")
            return _refusal(SH001, "a reviewer link is read-only: uploads are refused",
                            "Ask the workspace's editor to add the file.")
        return None

    # ----- Flask hooks

    def before(self) -> flask.Response | None:
        req = flask.request
        if req.method not in _SAFE_METHODS and req.headers.get("Origin"):
            origin = urlsplit(req.headers["Origin"]).netloc
            if origin and origin != req.host:
                flask.g.rb_access = set_access(anonymous())
                return _refusal(SH006, "cross-site request refused",
                                "Use the dashboard from its own address.")
        if req.path.startswith(self.open_paths):
            flask.g.rb_access = set_access(anonymous())
            return None
        result = self.classify()
        if isinstance(result, flask.Response):
            flask.g.rb_access = set_access(anonymous())
            return result
        flask.g.rb_access = set_access(result)
        if result.read_only:
            return self.reviewer_guard(result)
        return None

    @staticmethod
    def after(response: flask.Response) -> flask.Response:
        ctx = current_access()
        if ctx.read_only and ctx.refused and response.status_code != 403:
            refused = _refusal(SH001, "a reviewer link is read-only: cannot "
                               + ", ".join(dict.fromkeys(ctx.refused)),
                               "Ask the workspace's editor to make the change.")
            refused.headers[ROLE_HEADER] = ctx.role
            return refused
        response.headers[ROLE_HEADER] = ANONYMOUS if ctx.actor == ANONYMOUS else ctx.role
        if ctx.read_only:
            response.headers["Cache-Control"] = "no-store"
        return response

    @staticmethod
    def teardown(_exc: BaseException | None) -> None:
        token = flask.g.pop("rb_access", None)
        if token is not None:
            with contextlib.suppress(ValueError):  # set in another context: nothing to undo
                reset_access(token)

    # ----- routes

    def review_entry(self, token: str) -> flask.Response:
        link = self.store.resolve_token(token)
        if link is None:
            flask.session.pop("rb_review", None)
            return _page("Link not valid", f"<p>[{SH002}] This reviewer link is unknown, "
                         "revoked or expired.</p><p>Ask the workspace's editor for a new "
                         "link.</p>", 403)
        flask.session["rb_review"] = token
        return flask.redirect(self.prefix)

    def review_exit(self) -> flask.Response:
        flask.session.pop("rb_review", None)
        return flask.redirect(self.prefix)

    def editor_login(self) -> flask.Response:
        form = (f"<form method='post' action='{html.escape(self.prefix)}editor-login'>"
                "<label>Editor token <input type='password' name='token' "
                "autocomplete='current-password' required></label> "
                "<button type='submit'>Sign in</button></form>")
        if not self.settings.editor_token:
            return _page("Editor sign-in", "<p>No editor token is set: editors use the "
                         "dashboard from this machine.</p>", 404)
        if flask.request.method == "POST":
            given = flask.request.form.get("token", "")
            expected = _digest(self.settings.editor_token)
            if hmac.compare_digest(_digest(given), expected):
                flask.session.clear()
                flask.session["rb_editor"] = expected
                return flask.redirect(self.prefix)
            time.sleep(0.5)  # slow down guessing
            return _page("Editor sign-in", f"<p>[{SH006}] That is not the editor token.</p>"
                         + form, 403)
        return _page("Editor sign-in", form, 200)


def _access_error(err: RealbasisError) -> flask.Response:
    """A refused change reaching Flask becomes 403; any other error stays an error."""
    if err.code in (SH001, SH007):
        p = err.problems[0]
        return _refusal(p.code, p.message, p.fix)
    raise err


# --------------------------------------------------------------------------- install


WRITE_CONTROLS = ("IN_UPLOAD", "IN_ADD", "IN_KIND_APPLY", "IN_NEW_WORKSPACE", "RT_SAVE",
                  "RT_SA_ALL", "SH_REBASE", "SH_PROJECT", "SH_LINK", "SH_COST_BUILD",
                  "BT_SAVE", "BT_OUTLAY_SAVE", "IN_FY_SAVE",
                  "SX_LINK_CREATE", "SX_REVOKE")
"""Names in dashboard.ids of controls that change something; disabled for reviewers."""


def _reviewer_layout(layout: Callable[[], Any], editor_only: set[str]) -> Callable[[], Any]:
    """The shell as a reviewer sees it: a read-only banner, editor-only screens and parts
    of screens (class EDITOR_ONLY_CLASS) hidden."""
    hidden_ids = {ids.nav_button(k) for k in editor_only}
    write_ids = {getattr(ids, n) for n in WRITE_CONTROLS if hasattr(ids, n)}

    def build() -> Any:
        tree = layout()
        ctx = current_access()
        if not ctx.read_only:
            return tree

        def walk(node: Any) -> None:
            node_id = getattr(node, "id", None)
            classes = str(getattr(node, "className", None) or "").split()
            if node_id in hidden_ids or EDITOR_ONLY_CLASS in classes:
                node.style = {**(getattr(node, "style", None) or {}), "display": "none"}
                if EDITOR_ONLY_CLASS in classes:
                    node.hidden = True
            elif node_id in write_ids:  # for looks: the server refuses these anyway
                node.disabled = True
                node.title = "Read-only reviewer link: changes are refused"
            children = getattr(node, "children", None)
            for child in children if isinstance(children, list | tuple) else [children]:
                if hasattr(child, "to_plotly_json"):
                    walk(child)

        walk(tree)
        banner = dhtml.Div(
            ["Read-only reviewer view: you can see every figure, the method and the audit "
             "trail; changes are refused by the server. ",
             dhtml.A("Leave reviewer view", href="review-exit")],
            className="rb-reviewer-banner", role="note", id="rb-reviewer-banner")
        children = tree.children if isinstance(tree.children, list) else [tree.children]
        tree.children = [banner, *children]
        return tree

    return build


def install(app: Dash, settings: Settings, store: WorkspaceStore) -> Gate:
    """Install editor/reviewer enforcement on ``app`` (called by ``create_app``)."""
    check_serving(settings)
    server = app.server
    if not server.secret_key:
        server.secret_key = secret_key(settings)
    server.config.update(SESSION_COOKIE_HTTPONLY=True, SESSION_COOKIE_SAMESITE="Lax",
                         SESSION_COOKIE_NAME="realbasis_session")
    prefix = app.config.requests_pathname_prefix or "/"
    gate = Gate(settings, store, prefix)
    routes = app.config.routes_pathname_prefix or "/"
    server.add_url_rule(routes + "review/<token>", "rb_review", gate.review_entry)
    server.add_url_rule(routes + "review-exit", "rb_review_exit", gate.review_exit)
    server.add_url_rule(routes + "editor-login", "rb_editor_login", gate.editor_login,
                        methods=["GET", "POST"])
    server.register_error_handler(RealbasisError, _access_error)
    server.before_request_funcs.setdefault(None, []).insert(0, gate.before)
    server.after_request(gate.after)
    server.teardown_request(gate.teardown)

    rb = find(app)
    if rb is not None:
        original = rb.resolve_workspace

        def resolve(search: str) -> Any:
            ctx = current_access()
            if ctx.role == "reviewer" and ctx.workspace_id:
                return WorkspaceRef(ctx.workspace_id, store.current_version(ctx.workspace_id))
            return original(search)

        rb.resolve_workspace = resolve
        editor_only = {s.key for s in getattr(rb, "screens", ()) if s.editor_only}
        if callable(app.layout):
            app.layout = _reviewer_layout(app.layout, editor_only)
    server.extensions["realbasis_access"] = gate
    return gate
