"""Who may do what: editor and reviewer access, enforced on the server.

``create_app`` calls :func:`install` last. From then on every request is classified
before Dash sees it, and the answer is bound to the request as a
:class:`pipeline.store.AccessContext`:

* **Editor.** With ``editor_token`` set, an editor presents it once on ``/editor-login``
  (the server opens a session: a random id in the signed cookie, only its SHA-256 in the
  store, ended by ``/editor-logout`` or when the token changes) or on every request as
  ``Authorization: Bearer <token>``. Wrong tokens are counted per client in the store,
  shared by every worker and host; past :data:`LOGIN_LIMIT` in :data:`LOGIN_WINDOW` the
  client gets ``429`` with ``Retry-After`` (``SH009``) — nothing ever sleeps in a worker.
  Without an editor token nobody edits, unless ``local_editing`` is on (``realbasis serve``
  on a loopback address turns it on): then requests from this machine edit — loopback
  peer, loopback ``Host`` (against DNS rebinding) and no proxy header of any kind
  (:func:`proxied`). The peer address alone never makes an editor.
* **Reviewer.** ``/review/<token>`` checks a reviewer link (the store keeps only its
  SHA-256), puts the token in the signed session cookie and opens the dashboard on the
  link's workspace; scripts may send ``X-Realbasis-Review: <token>`` instead. Every
  request re-checks the link, so revoking or expiry takes effect at once — and the
  session stays a reviewer's: a revoked link shows "no longer valid" (``SH002``) on every
  page and click until the reviewer leaves at ``/review-exit``; it never falls back to
  editing.

A reviewer is read-only where it matters. A callback request runs the callback its
``output`` names (that is how Dash picks it, whatever ``changedPropIds`` say), so the gate
looks the callback up the same way and refuses every callback registered as writing
(:mod:`dashboard.writes`) with ``403`` before it runs. Below that, every store method that
writes and ``DataAccess.keep_upload`` refuse under a reviewer context (``SH001``), and if
any refusal happened while a request was handled the response is replaced by ``403``
whatever the callback did with the error. Any other non-GET route is refused for
reviewers. Background jobs carry the access context of the request that started them
(:class:`dashboard.jobs.AccessAwareMixin`, which builds on :func:`anonymous`).
"""

from __future__ import annotations

import contextlib
import datetime as dt
import hashlib
import hmac
import html
import math
import secrets
from collections.abc import Callable, Mapping
from typing import Any
from urllib.parse import urlsplit

import flask
from dash import Dash
from dash import html as dhtml
from flask.sessions import SecureCookieSessionInterface

from pipeline.errors import RealbasisError, register
from pipeline.settings import Settings
from pipeline.store import (
    SH001,
    SH002,
    SH006,
    SH007,
    SH009,
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
from .data import UI701, WorkspaceRef
from .secret import secret_key
from .writes import write_of

UI702 = register("UI702", "not a request the dashboard answers")

REVIEW_HEADER = "X-Realbasis-Review"
ROLE_HEADER = "X-Realbasis-Access"
LOOPBACK_ADDRS = frozenset({"127.0.0.1", "::1", "::ffff:127.0.0.1"})
_SAFE_METHODS = frozenset({"GET", "HEAD", "OPTIONS"})
ANONYMOUS = "anonymous"
SESSION_LIFETIME = dt.timedelta(hours=12)
"""An editor's sign-in lasts this long (then sign in again)."""
LOGIN_LIMIT = 10
LOGIN_WINDOW = dt.timedelta(minutes=5)
"""At most LOGIN_LIMIT wrong editor tokens per client in LOGIN_WINDOW; then 429."""

PROXY_HEADERS = frozenset({
    "forwarded", "via", "x-real-ip", "client-ip", "true-client-ip", "x-client-ip",
    "x-cluster-client-ip", "cf-connecting-ip", "fastly-client-ip", "x-host",
    "x-proxyuser-ip", "x-originating-ip", "x-remote-ip", "x-remote-addr", "wl-proxy-client-ip",
    "proxy-client-ip", "x-coming-from", "x-http-forwarded-for", "forwarded-for",
})
PROXY_PREFIXES = (
    "x-forwarded", "forwarded-", "x-original", "x-real-", "x-client-", "x-cluster-client",
    "true-client", "cf-", "fastly-", "x-envoy-", "x-azure-", "x-arr-", "x-amzn-",
    "x-appengine-", "akamai-", "x-akamai-", "x-proxy", "x-ms-forwarded", "x-sucuri-",
    "x-vercel-", "x-nf-", "x-cloud-trace",
)
"""Headers that only proxies, load balancers and CDNs add (names or prefixes, lower
case): any one of them marks a request as proxied, so never local."""


def proxied(headers: Mapping[str, str] | Any) -> bool:
    """Whether the request carries any header a proxy adds (:data:`PROXY_HEADERS`,
    :data:`PROXY_PREFIXES`; underscores count as dashes)."""
    for name, _value in headers.items():
        n = str(name).lower().replace("_", "-")
        if n in PROXY_HEADERS or n.startswith(PROXY_PREFIXES):
            return True
    return False


def anonymous() -> AccessContext:
    """Read-only, no workspace: for the sign-in pages and refused requests (a fresh
    object each time, since a context records its own refusals)."""
    return AccessContext("reviewer", None, ANONYMOUS, session=_session_id())


def _session_id() -> str:
    if not flask.has_request_context():
        return ""
    sid = flask.session.get("rb_sid")
    if not isinstance(sid, str) or not sid:
        sid = secrets.token_urlsafe(32)
        flask.session["rb_sid"] = sid
    return sid


def _page(title: str, body: str, status: int, headers: Mapping[str, str] | None = None
          ) -> flask.Response:
    doc = (f"<!doctype html><html lang='en'><head><meta charset='utf-8'><title>{html.escape(title)}"
           "</title></head><body style='font-family:sans-serif;max-width:40em;margin:3em auto'>"
           f"<h1>{html.escape(title)}</h1>{body}</body></html>")
    return flask.Response(doc, status=status, mimetype="text/html", headers=dict(headers or {}))


def _wants_json() -> bool:
    req = flask.request
    return (req.path.endswith("_dash-update-component")
            or req.accept_mimetypes.best == "application/json"
            or req.method not in _SAFE_METHODS)


def refusal(code: str, message: str, fix: str, status: int = 403, *,
            headers: Mapping[str, str] | None = None, actions: str = "",
            title: str | None = None) -> flask.Response:
    """A refused request: JSON ``{code, message, fix}`` to callbacks and scripts (the
    page shows it: assets/access-notice.js), an HTML page to a browser's navigation."""
    if _wants_json():
        resp = flask.jsonify({"code": code, "message": message, "fix": fix})
        resp.status_code = status
        resp.headers.update(dict(headers or {}))
        return resp
    return _page(title or ("Access refused" if status != 429 else "Too many tries"),
                 f"<p>[{code}] {html.escape(message)}</p><p>{html.escape(fix)}</p>{actions}",
                 status, headers)


def _retry_after(wait: float) -> dict[str, str]:
    return {"Retry-After": str(max(1, math.ceil(wait)))}


class SessionInterface(SecureCookieSessionInterface):
    """Flask's signed-cookie sessions, with the cookie ``Secure`` whenever the request
    came over HTTPS (directly, or through a trusted proxy saying so)."""

    def __init__(self, trusted: frozenset[str]) -> None:
        self.trusted = trusted

    def get_cookie_secure(self, app: Any) -> bool:
        return bool(flask.has_request_context() and came_over_https(self.trusted))


def came_over_https(trusted: frozenset[str]) -> bool:
    """``request.is_secure``, or ``X-Forwarded-Proto: https`` from a trusted proxy."""
    req = flask.request
    if req.is_secure:
        return True
    if req.remote_addr in trusted:
        proto = req.headers.get("X-Forwarded-Proto", "").split(",")[0].strip().lower()
        return proto == "https"
    return False


def client_address(trusted: frozenset[str]) -> str:
    """The client's address: the peer, or behind a trusted proxy the last address in
    X-Forwarded-For that is not itself a trusted proxy."""
    req = flask.request
    peer = str(req.remote_addr or "")
    if peer in trusted:
        hops = [h.strip() for h in req.headers.get("X-Forwarded-For", "").split(",") if h.strip()]
        for hop in reversed(hops):
            if hop not in trusted:
                return hop[:60]
    return peer[:60]


class Gate:
    """The request classifier installed on the Flask server (one per app)."""

    def __init__(self, settings: Settings, store: WorkspaceStore, prefix: str,
                 app: Dash | None = None) -> None:
        self.settings = settings
        self.store = store
        self.app = app
        self.trusted = settings.trusted_proxy_addresses
        self.prefix = prefix if prefix.endswith("/") else prefix + "/"
        self.open_paths = (self.prefix + "review/", self.prefix + "editor-login",
                           self.prefix + "editor-logout", self.prefix + "review-exit",
                           self.prefix + "favicon.ico")

    # ----- the editor token

    def _grant(self) -> str:
        """Fingerprint of the editor token in force: sessions opened under another token
        no longer count."""
        key = str(flask.current_app.secret_key or "").encode("utf-8")
        token = str(self.settings.editor_token or "").encode("utf-8")
        return hmac.new(key, b"editor:" + token, hashlib.sha256).hexdigest()[:32]

    def _token_ok(self, given: str) -> bool:
        expected = hashlib.sha256(str(self.settings.editor_token).encode("utf-8")).digest()
        return hmac.compare_digest(hashlib.sha256(given.encode("utf-8")).digest(), expected)

    def _throttle_key(self) -> str:
        return "editor-token:" + client_address(self.trusted)

    def _too_many(self, wait: float) -> flask.Response:
        return refusal(SH009, "too many wrong editor tokens from this address",
                       f"Wait {max(1, math.ceil(wait))} s, then try again with the right token.",
                       429, headers=_retry_after(wait))

    def check_token(self, given: str) -> flask.Response | None:
        """None when ``given`` is the editor token; else 403 (wrong) or 429 (too many
        wrong ones from this client: every try refused until the window ends)."""
        key = self._throttle_key()
        wait = self.store.throttle_wait(key, limit=LOGIN_LIMIT, window=LOGIN_WINDOW)
        if wait > 0:
            return self._too_many(wait)
        if self._token_ok(given):
            return None
        wait = self.store.throttle_fail(key, limit=LOGIN_LIMIT, window=LOGIN_WINDOW)
        if wait > 0:
            return self._too_many(wait)
        return refusal(SH006, "that is not the editor token",
                       f"Sign in at {self.prefix}editor-login with the editor token.")

    # ----- classification

    def classify(self) -> AccessContext | flask.Response:
        req = flask.request
        sid = _session_id()
        token = req.headers.get(REVIEW_HEADER) or flask.session.get("rb_review")
        if token:
            link = self.store.resolve_token(str(token))
            if link is None:
                # The session stays a reviewer's (never an editor's): every page and
                # click says so until the reviewer leaves at review-exit.
                return refusal(SH002, "this reviewer link is no longer valid: it was "
                               "revoked, it expired, or it never existed",
                               "Ask the workspace's editor for a new link.",
                               actions=self._exit_action(),
                               title="This reviewer link is no longer valid")
            return AccessContext("reviewer", link.workspace_id, f"reviewer {link.id}",
                                 link_id=link.id, session=sid)
        if self.settings.editor_token:
            bearer = req.headers.get("Authorization", "")
            if bearer.startswith("Bearer "):
                refused = self.check_token(bearer[7:].strip())
                return refused or AccessContext("editor", None, "editor", session=sid)
            if self.store.session_role(sid, grant=self._grant()) == "editor":
                return AccessContext("editor", None, "editor", session=sid)
            if req.method == "GET" and req.path == self.prefix:
                return flask.redirect(self.prefix + "editor-login")
            return refusal(SH006, "editor access needs the editor token (not signed in, or "
                           "the sign-in has ended)",
                           f"Sign in at {self.prefix}editor-login, or open a reviewer link.")
        if self.settings.local_editing and self._local_request():
            return AccessContext("editor", None, "editor", session=sid)
        if self.settings.local_editing:
            return refusal(SH006, "editor access is only open from this machine",
                           "Open the dashboard on the machine it runs on (not through a "
                           "proxy), set REALBASIS_EDITOR_TOKEN, or use a reviewer link.")
        return refusal(SH006, "editing needs the editor token, and none is set",
                       "Set REALBASIS_EDITOR_TOKEN (editors then sign in), or serve on "
                       "127.0.0.1 with REALBASIS_LOCAL_EDITING on for editing from this "
                       "machine; reviewer links work either way.")

    @staticmethod
    def _local_request() -> bool:
        req = flask.request
        if req.remote_addr not in LOOPBACK_ADDRS:
            return False
        if proxied(req.headers):
            return False  # came through a proxy: its clients are not this machine
        host = urlsplit("//" + (req.host or "")).hostname or ""
        return is_loopback_host(host)  # a foreign Host header means DNS rebinding

    def _exit_action(self) -> str:
        return (f"<p><a href='{html.escape(self.prefix)}review-exit'>Leave the reviewer "
                "view</a></p>")

    def callback_guard(self, ctx: AccessContext) -> flask.Response | None:
        """A callback request names the callback it runs by ``output``: refuse one Dash
        would not find or that runs only in the browser (400, for everyone) and, for a reviewer, one that writes (403),
        before it runs — whatever the request says changed."""
        body = flask.request.get_json(silent=True)
        output = body.get("output") if isinstance(body, dict) else None
        if not isinstance(output, str) or (
                self.app is not None
                # a clientside callback runs in the browser: the server has no function
                and "callback" not in self.app.callback_map.get(output, {})):
            return refusal(UI702, "this is not a request the dashboard answers", "Reload the "
                           "page; if that does not help the page is older than the server.",
                           400)
        if ctx.read_only and self.app is not None:
            what = write_of(self.app, output)
            if what is not None:
                ctx.refused.append(what)
                return refusal(SH001, f"a reviewer link is read-only: cannot {what}",
                               "Ask the workspace's editor to make the change.")
        return None

    def reviewer_guard(self, ctx: AccessContext) -> flask.Response | None:
        """Refuse reviewer requests that could change the server before they run."""
        req = flask.request
        if req.method in _SAFE_METHODS or req.path.endswith("_dash-update-component"):
            return None
        return refusal(SH001, "a reviewer link is read-only",
                       "Ask the workspace's editor to make the change.")

    # ----- Flask hooks

    def before(self) -> flask.Response | None:
        req = flask.request
        if req.method not in _SAFE_METHODS and "Origin" in req.headers:
            origin = urlsplit(req.headers["Origin"].strip())
            if not origin.netloc or origin.netloc != req.host:  # "null" included
                flask.g.rb_access = set_access(anonymous())
                return refusal(SH006, "cross-site request refused",
                               "Use the dashboard from its own address.")
        if req.path.startswith(self.open_paths):
            flask.g.rb_access = set_access(anonymous())
            return None
        result = self.classify()
        if isinstance(result, flask.Response):
            flask.g.rb_access = set_access(anonymous())
            return result
        flask.g.rb_access = set_access(result)
        if req.method == "POST" and req.path.endswith("_dash-update-component"):
            refused = self.callback_guard(result)
            if refused is not None:
                return refused
        if result.read_only:
            return self.reviewer_guard(result)
        return None

    @staticmethod
    def after(response: flask.Response) -> flask.Response:
        ctx = current_access()
        if ctx.read_only and ctx.refused and response.status_code != 403:
            refused = refusal(SH001, "a reviewer link is read-only: cannot "
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
            return _page("Link not valid", f"<p>[{SH002}] This reviewer link is no longer "
                         "valid: it was revoked, it expired, or it never existed.</p><p>Ask "
                         "the workspace's editor for a new link.</p>", 403)
        flask.session.clear()
        flask.session["rb_sid"] = secrets.token_urlsafe(32)
        flask.session["rb_review"] = token
        return flask.redirect(self.prefix)

    def review_exit(self) -> flask.Response:
        flask.session.clear()
        flask.session["rb_sid"] = secrets.token_urlsafe(32)
        return _page("You left the reviewer view", "<p>This browser no longer uses a "
                     "reviewer link. To review again, open the link the editor sent you.</p>"
                     f"<p><a href='{html.escape(self.prefix)}'>Open the dashboard</a> "
                     "(editors only).</p>", 200)

    def editor_login(self) -> flask.Response:
        form = (f"<form method='post' action='{html.escape(self.prefix)}editor-login'>"
                "<label>Editor token <input type='password' name='token' "
                "autocomplete='current-password' required></label> "
                "<button type='submit'>Sign in</button></form>")
        if not self.settings.editor_token:
            return _page("Editor sign-in", "<p>No editor token is set on this server.</p>",
                         404)
        if flask.request.method == "POST":
            refused = self.check_token(flask.request.form.get("token", ""))
            if refused is not None:
                if refused.status_code == 429:
                    return _page("Too many tries", f"<p>[{SH009}] Too many wrong editor "
                                 "tokens from this address.</p><p>Wait "
                                 f"{refused.headers['Retry-After']} s, then try again.</p>",
                                 429, {"Retry-After": refused.headers["Retry-After"]})
                return _page("Editor sign-in", f"<p>[{SH006}] That is not the editor "
                             "token.</p>" + form, 403)
            flask.session.clear()  # a new session id at sign-in: no fixation
            flask.session["rb_sid"] = self.store.open_session(
                "editor", grant=self._grant(), lifetime=SESSION_LIFETIME)
            return flask.redirect(self.prefix)
        return _page("Editor sign-in", form, 200)

    def editor_logout(self) -> flask.Response:
        if flask.request.method == "POST":
            sid = flask.session.get("rb_sid")
            if isinstance(sid, str):
                self.store.close_session(sid)
            flask.session.clear()
            return _page("Signed out", "<p>You are signed out; this browser's editor "
                         f"session has ended on the server.</p><p><a href='{html.escape(self.prefix)}"
                         "editor-login'>Sign in again</a></p>", 200)
        return _page("Sign out", f"<form method='post' action='{html.escape(self.prefix)}"
                     "editor-logout'><button type='submit'>Sign out</button></form>", 200)


_STATUS = {SH001: 403, SH007: 403, SH002: 403, UI701: 400, UI702: 400}
"""Codes that answer a request with an HTTP error rather than a message on the page."""


def status_of(err: RealbasisError) -> int | None:
    """The HTTP status a refusal stands for (None: an ordinary problem to show)."""
    for code in err.codes:
        if code in _STATUS:
            return _STATUS[code]
    return None


def _access_error(err: RealbasisError) -> flask.Response:
    """A refused change (403) or a malformed page state (400) reaching Flask; any other
    error stays an error."""
    status = status_of(err)
    if status is not None:
        p = err.problems[0]
        return refusal(p.code, p.message, p.fix, status)
    raise err


# --------------------------------------------------------------------------- install


WRITE_CONTROLS = ("IN_UPLOAD", "IN_ADD", "IN_KIND_APPLY", "IN_NEW_WORKSPACE", "RT_SAVE",
                  "RT_SA_ALL", "SH_REBASE", "SH_PROJECT", "SH_LINK", "SH_COST_BUILD",
                  "BT_SAVE", "BT_OUTLAY_SAVE", "IN_FY_SAVE",
                  "SX_LINK_CREATE", "SX_REVOKE", "IN_FY_SAVE", "BT_OUTLAY_SAVE", "BT_SAVE")
"""Names in dashboard.ids of controls that change something; disabled for reviewers (for
looks: the server refuses the callbacks behind them, dashboard.writes)."""


def _access_layout(layout: Callable[[], Any], editor_only: set[str],
                   settings: Settings) -> Callable[[], Any]:
    """The shell as the requester sees it. A reviewer: a read-only banner, editor-only
    screens and parts of screens (class EDITOR_ONLY_CLASS) hidden. An editor signed in with
    the editor token: a sign-out button."""
    hidden_ids = {ids.nav_button(k) for k in editor_only}
    write_ids = {getattr(ids, n) for n in WRITE_CONTROLS if hasattr(ids, n)}

    def build() -> Any:
        tree = layout()
        ctx = current_access()
        children = tree.children if isinstance(tree.children, list) else [tree.children]
        if not ctx.read_only:
            if settings.editor_token:
                bar = dhtml.Form(dhtml.Button("Sign out", type="submit", className="rb-button"),
                                 method="post", action="editor-logout",
                                 className="rb-session-bar", id="rb-sign-out")
                tree.children = [bar, *children]
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
            kids = getattr(node, "children", None)
            for child in kids if isinstance(kids, list | tuple) else [kids]:
                if hasattr(child, "to_plotly_json"):
                    walk(child)

        walk(tree)
        banner = dhtml.Div(
            ["Read-only reviewer view: you can see every figure, the method and the audit "
             "trail; changes are refused by the server. ",
             dhtml.A("Leave reviewer view", href="review-exit")],
            className="rb-reviewer-banner", role="note", id="rb-reviewer-banner")
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
    server.session_interface = SessionInterface(settings.trusted_proxy_addresses)
    prefix = app.config.requests_pathname_prefix or "/"
    gate = Gate(settings, store, prefix, app)
    routes = app.config.routes_pathname_prefix or "/"
    server.add_url_rule(routes + "review/<token>", "rb_review", gate.review_entry)
    server.add_url_rule(routes + "review-exit", "rb_review_exit", gate.review_exit)
    server.add_url_rule(routes + "editor-login", "rb_editor_login", gate.editor_login,
                        methods=["GET", "POST"])
    server.add_url_rule(routes + "editor-logout", "rb_editor_logout", gate.editor_logout,
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
            app.layout = _access_layout(app.layout, editor_only, settings)
    server.extensions["realbasis_access"] = gate
    return gate
