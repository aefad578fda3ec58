"""The app factory: ``create_app(settings, *, store=None) -> Dash``.

The one module that builds the app, at the top of the dashboard's import graph (only
:mod:`dashboard.wsgi` and the Celery worker entry :mod:`dashboard.celery_app` import it).
It builds one Dash app over one :class:`~dashboard.data.DataAccess` (the workspace store
plus a small per-app cache), the background-job manager of :mod:`dashboard.jobs`, the
secret key of :mod:`dashboard.secret`, the shell (header, navigation, one section per
screen) and every screen found in :mod:`dashboard.screens`, and attaches the
:class:`~dashboard.context.AppContext` the screens' callbacks read. Last it calls
:func:`dashboard.access.install`, so editor/reviewer enforcement wraps everything the
screens registered.
"""

from __future__ import annotations

import logging
from collections.abc import Callable
from pathlib import Path
from typing import Any
from urllib.parse import parse_qs, urlencode, urlsplit

from dash import ClientsideFunction, Dash, Input, Output, State, ctx, dcc, html, no_update

from pipeline.settings import Settings, load_settings
from pipeline.store import WorkspaceStore

from . import access, failures, ids, jobs
from .components import workspace_label
from .context import AppContext, attach, context
from .data import DEMO_NAME, DataAccess, WorkspaceRef, is_demo_copy
from .results import ResultCache
from .screens import ScreenInfo, discover
from .secret import secret_key

ASSETS = Path(__file__).resolve().parent / "assets"
APP_TITLE = "realbasis"
TAGLINE = "Nominal money, stated in real terms"


log = logging.getLogger(__name__)


def default_resolver(data: DataAccess) -> Callable[[str], WorkspaceRef]:
    """``?ws=<id>`` when that workspace exists; otherwise the demo workspace, or with the
    demo setting off the most recently changed other workspace (an empty one is started
    when there is none)."""

    def resolve(search: str) -> WorkspaceRef:
        query = parse_qs((search or "").lstrip("?"))
        wanted = (query.get("ws") or [""])[0]
        if wanted and data.store.exists(wanted):
            return WorkspaceRef(wanted, data.store.current_version(wanted))
        if data.settings.demo:
            return data.demo_ref()
        for info in data.store.list():  # most recently changed first
            if info.name != DEMO_NAME:
                return WorkspaceRef(info.id, info.version)
        ws = data.create("My workspace")
        return WorkspaceRef(ws.id, ws.version)

    return resolve


def address_for(search: str, ref: WorkspaceRef | None) -> Any:
    """The query string showing workspace ``ref`` (other parameters kept), or no_update
    when it already does."""
    if ref is None:
        return no_update
    query = parse_qs(search.lstrip("?"), keep_blank_values=True)
    if (query.get("ws") or [""])[0] == ref.id:
        return no_update
    query["ws"] = [ref.id]
    return "?" + urlencode(query, doseq=True)


READY_ATTR = "data-rb-ready"
"""Attribute of the section that comes computed (see :func:`opening`)."""
OPENING_COOKIE = "rb_opening"
"""The cookie assets/shell.js sets with the address's #fragment for the layout request."""
OPENED = "__opened__"
"""Key, in :func:`opening`'s props, of the screen computed and the choices it had."""
OPENING_KEY = "opening"
"""Marks the gate of the screen the page came computed with (:func:`opening`);
assets/shell.js then re-opens it only for other choices in the address."""


def opening(rb: AppContext, screens: tuple[ScreenInfo, ...]
            ) -> tuple[WorkspaceRef | None, Any, dict[str, dict[str, Any]]]:
    """What the page opens with, decided while its layout is built: the workspace (the
    page's address reaches the layout request as its Referer, same origin), the header's
    label and the screen the address's #fragment names (told by the ``rb_opening`` cookie,
    :func:`opened_address`) computed for its choices when the screen has an
    ``opening(rb, ws, asked)`` hook (initial props by component id, plus ``OPENED``), so a
    first load shows its figures without a round of callbacks. ``(None, waiting label,
    {})`` when the address is not known or anything fails: the shell's ``_workspace``
    callback then decides, as it always checks."""
    import flask

    waiting = "Opening workspace…"
    # Only the page's own layout request: Dash also builds the layout once on a server's
    # first request (whatever it is, a sign-in form's POST say) to check it, and looking a
    # workspace up may start one, which must not happen there.
    if not flask.has_request_context() or not flask.request.path.endswith("_dash-layout"):
        return None, waiting, {}
    page = flask.request.referrer or ""
    parts = urlsplit(page)
    if not page or parts.netloc != flask.request.host:
        return None, waiting, {}
    try:
        ref = rb.resolve_workspace("?" + parts.query if parts.query else "")
        ws = rb.data.load(ref)
        ref = WorkspaceRef(ref.id, ws.version)
        label = workspace_label(ws.name, ws.version, demo_copy=is_demo_copy(ws.name))
    except Exception:  # the callbacks say what is wrong, as without an opening
        log.exception("opening the page's workspace while building the layout failed")
        return None, waiting, {}
    key, query = opened_address(flask.request.cookies.get(OPENING_COOKIE, ""), screens)
    screen = next((s for s in screens if s.key == key), None)
    compute = getattr(screen.module, "opening", None) if screen is not None else None
    if compute is None:
        return ref, label, {}
    try:
        from .screens._shared.view import address_choices

        props = compute(rb, ws, address_choices(f"{key}?{query}", key))
    except Exception:
        log.exception("computing screen %s while building the layout failed", key)
        return ref, label, {}
    return ref, label, {OPENED: {"key": key, "query": query}, **props}


def opened_address(cookie: str, screens: tuple[ScreenInfo, ...]) -> tuple[str, str]:
    """The screen key and the choices (query string) of the address a page is opened with,
    from the cookie assets/shell.js sets for the layout request (``key?query``, URL
    encoded); the first screen and no choices when it names none of ``screens``."""
    from urllib.parse import unquote

    text = unquote(cookie or "")[:1000]
    key, _, query = text.partition("?")
    key = unquote(key)
    if not any(s.key == key for s in screens):
        return (screens[0].key if screens else ""), ""
    return key, query


def _apply_props(node: Any, props: dict[str, dict[str, Any]]) -> None:
    """Set ``props[id]`` on the components of ``node``'s tree with that id."""
    node_id = getattr(node, "id", None)
    if isinstance(node_id, str) and node_id in props:
        for name, value in props[node_id].items():
            setattr(node, name, value)
    kids = getattr(node, "children", None)
    for child in kids if isinstance(kids, list | tuple) else [kids]:
        if hasattr(child, "to_plotly_json"):
            _apply_props(child, props)


def shell_layout(screens: tuple[ScreenInfo, ...], ref: WorkspaceRef | None = None,
                 label: Any = None, first_props: dict[str, dict[str, Any]] | None = None
                 ) -> html.Div:
    """The page: header, navigation, one section per screen (all but the first hidden
    until the address says otherwise) and the stores the shell keeps: the workspace, the
    screen shown and, per screen, the workspace gate its callbacks compute for. With
    :func:`opening`'s answer the page comes with its workspace and the screen it names
    shown and computed (that screen's gate set, its section kept out of
    :func:`lazy_sections`)."""
    first_props = dict(first_props or {})
    opened = first_props.pop(OPENED, None)
    first = opened["key"] if opened else (screens[0].key if screens else "")
    nav = html.Nav(
        [html.Button(s.title, id=ids.nav_button(s.key), n_clicks=0, type="button",
                     className="rb-nav-button" + (" rb-nav-active" if s.key == first else ""))
         for s in screens],
        id=ids.NAV, className="rb-nav", **{"aria-label": "Screens"})
    ready = ref is not None and bool(first_props)
    sections = []
    for s in screens:
        body = s.layout()
        extra: dict[str, Any] = {"aria-label": s.title}
        if ready and s.key == first:
            _apply_props(body, first_props or {})
            extra[READY_ATTR] = "1"
        sections.append(html.Section([dcc.Store(id=ids.screen_saved(s.key)),
                                      dcc.Store(id=ids.screen_goto(s.key)), body],
                                     id=ids.screen_container(s.key), hidden=s.key != first,
                                     className="rb-screen", **extra))
    gate = ({**ref.as_dict(), OPENING_KEY: True, "query": opened["query"]}
            if ready and ref is not None and opened else None)
    stores = [dcc.Store(id=ids.screen_ref(s.key), storage_type="memory",
                        data=gate if s.key == first else None) for s in screens]
    stores += [dcc.Store(id=ids.screen_address(s.key), storage_type="memory",
                         data={"key": s.key, "names": list(s.params)})
               for s in screens if s.params]
    return html.Div([
        dcc.Location(id=ids.URL, refresh=False),
        dcc.Store(id=ids.WORKSPACE, storage_type="memory",
                  data=ref.as_dict() if ref is not None else None),
        dcc.Store(id=ids.SCREEN, data=first),
        *stores,
        html.Div(id=ids.PAGE_PROBLEM, className="rb-page-problem", **{"aria-live": "assertive"}),
        html.Header([
            html.Div([html.H1(APP_TITLE), html.P(TAGLINE, className="rb-tagline")],
                     className="rb-brand"),
            html.P(label, id=ids.WORKSPACE_LABEL, className="rb-workspace-label",
                   role="status"),
        ], className="rb-header"),
        nav,
        html.Main(sections, className="rb-main"),
        html.Footer(html.P("realbasis — analytical estimates, not official statistics."),
                    className="rb-footer"),
    ], className="rb-app")


def _register_shell(app: Dash, screens: tuple[ScreenInfo, ...]) -> None:
    keys = [s.key for s in screens]
    rb = context(app)

    @app.callback(
        Output(ids.WORKSPACE, "data"), Output(ids.URL, "search"),
        Input(ids.URL, "search"), Input(ids.WORKSPACE, "data"),
        prevent_initial_call=False,  # the one server callback of a first load
    )
    def _workspace(search: str | None, current: Any) -> Any:
        """The address picks the workspace; a workspace changed by a screen (a new one,
        a new version) is written back into the address so a reload keeps it."""
        old = WorkspaceRef.from_dict(current)
        if ctx.triggered_id == ids.WORKSPACE:
            return no_update, address_for(search or "", old)
        ref = rb.resolve_workspace(search or "")
        if old is not None and old.id == ref.id and old.version >= ref.version:
            # the page opened on it already (opening); the address may still lack ?ws=
            return no_update, address_for(search or "", old)
        # a callback is not run again by its own output: the address is written here
        return ref.as_dict(), address_for(search or "", ref)

    @app.callback(Output(ids.WORKSPACE_LABEL, "children"), Input(ids.WORKSPACE, "data"))
    def _workspace_label(data: Any) -> Any:
        ref = WorkspaceRef.from_dict(data)
        if ref is None:
            return "Opening workspace…"
        ws = rb.data.load(ref)
        return workspace_label(ws.name, ws.version, demo_copy=is_demo_copy(ws.name))

    # Screen switching runs in the browser (no round trip): the address's #key, or a click
    # on the navigation, shows one section and records the key in SCREEN.
    app.clientside_callback(
        ClientsideFunction("realbasis", "switchScreen"),
        [Output(ids.screen_container(k), "hidden") for k in keys]
        + [Output(ids.nav_button(k), "className") for k in keys]
        + [Output(ids.screen_container(k), "children") for k in keys]
        + [Output(ids.SCREEN, "data")],
        [Input(ids.nav_button(k), "n_clicks") for k in keys] + [Input(ids.URL, "hash")],
        State(ids.SCREEN, "data"), State(ids.SECTIONS, "data"),
        prevent_initial_call=False,
    )
    # The gate: the shown screen's workspace store follows WORKSPACE; hidden screens' stores
    # stay as they were, so their callbacks do not run until they are opened.
    app.clientside_callback(
        ClientsideFunction("realbasis", "gateScreens"),
        [Output(ids.screen_ref(k), "data") for k in keys],
        Input(ids.WORKSPACE, "data"), Input(ids.SCREEN, "data"),
        [State(ids.screen_ref(k), "data") for k in keys],
    )
    # What a screen saved becomes the workspace, a workspace it opens goes into the address
    # (relays in the browser: see ids.screen_saved for why screens do not write them).
    for k in keys:
        app.clientside_callback(
            "function (v) { return v ? v : window.dash_clientside.no_update; }",
            Output(ids.WORKSPACE, "data", allow_duplicate=True),
            Input(ids.screen_saved(k), "data"), prevent_initial_call=True)
        app.clientside_callback(
            "function (v) { return v ? v : window.dash_clientside.no_update; }",
            Output(ids.URL, "search", allow_duplicate=True),
            Input(ids.screen_goto(k), "data"), prevent_initial_call=True)
    # Each screen's choices go into the address (#key?name=value...), so a reload or a
    # copied address opens the same view (the screens read them back: address_choices).
    for s in screens:
        if not s.params:
            continue
        app.clientside_callback(
            ClientsideFunction("realbasis", "rememberChoices"),
            Output(ids.screen_address(s.key), "data"),
            [Input(cid, "value") for cid in s.params.values()],
            State(ids.SCREEN, "data"), State(ids.screen_address(s.key), "data"),
        )


REQUEST_ALLOWANCE = 64 * 1024
"""Bytes of a callback request besides the base64 file: ids, file name, other inputs."""


def request_limit(max_upload_bytes: int) -> int:
    """Flask's MAX_CONTENT_LENGTH for an upload limit: base64 of the largest file plus
    :data:`REQUEST_ALLOWANCE`."""
    return 4 * ((int(max_upload_bytes) + 2) // 3) + REQUEST_ALLOWANCE


def too_large_response(settings: Settings) -> Any:
    """A request cut off for its size (Flask's MAX_CONTENT_LENGTH, before any callback
    ran). To Dash's callback route: a normal answer changing no output that puts the
    UI001 message (naming the limit) on the intake's status line, so the user is told;
    elsewhere a plain 413. The browser normally refuses such a file before sending it
    (assets/upload-limit.js)."""
    import flask
    from plotly.io.json import to_json_plotly

    from .components import problems_view
    from .screens._shared.view import error_dicts
    from .screens.intake.view import too_large

    err = too_large(None, settings.max_upload_bytes)
    if not flask.request.path.endswith("_dash-update-component"):
        p = err.problems[0]
        return flask.Response(f"[{p.code}] {p.message}. {p.fix}\n", status=413,
                              mimetype="text/plain")
    view = problems_view(error_dicts(err), title="File refused")
    body = {"multi": True, "response": {}, "sideUpdate": {ids.IN_STATUS: {"children": view}}}
    return flask.Response(to_json_plotly(body), status=200, mimetype="application/json")


def create_app(settings: Settings | None = None, *, store: WorkspaceStore | None = None) -> Dash:
    """A new Dash app. ``settings`` default: :func:`pipeline.settings.load_settings`."""
    settings = settings or load_settings()
    data = DataAccess(settings, store)
    screens = discover()
    app = Dash(
        __name__,
        title=APP_TITLE,
        update_title=None,
        assets_folder=str(ASSETS),
        # assets/vendor/ is served but not put on the page: loaded on demand (plotly-basic.js)
        assets_path_ignore=["^vendor$"],
        background_callback_manager=jobs.make_manager(settings),
        serve_locally=True,
        on_error=failures.on_callback_error,
        # Nothing computes on load except the workspace lookup (shell, prevent_initial_call
        # =False); each screen's callbacks run once its gate store is set (when shown).
        prevent_initial_callbacks=True,
        # a screen's components join the page when it is first shown (lazy_sections)
        suppress_callback_exceptions=True,
    )
    server = app.server
    server.secret_key = secret_key(settings)
    # Uploads travel base64-encoded in JSON (4/3 of the file): requests above that plus a
    # small allowance for the rest of the request are cut off by Flask before anything
    # reads them (the 413 answer below says UI001); the intake checks the decoded size too.
    server.config["MAX_CONTENT_LENGTH"] = request_limit(settings.max_upload_bytes)
    server.register_error_handler(413, lambda _err: too_large_response(settings))
    # asked on every screen switch (assets/shell.js): 204, or the access layer's refusal
    # when the page's access has ended (a revoked reviewer link says SH002 at once)
    routes = app.config.routes_pathname_prefix or "/"
    server.add_url_rule(routes + "_realbasis/alive", "rb_alive", lambda: ("", 204))
    rb = AppContext(settings, data, screens, results=ResultCache(settings))
    rb.resolve_workspace = default_resolver(data)
    attach(app, rb)
    app.layout = lambda: shell_layout(screens, *opening(rb, screens))
    _register_shell(app, screens)
    for screen in screens:
        screen.register(app)
    access.install(app, settings, data.store)
    app.layout = lazy_sections(app.layout, screens)  # after the access layer's walk
    return app


def lazy_sections(layout: Callable[[], Any], screens: tuple[ScreenInfo, ...]
                  ) -> Callable[[], Any]:
    """The page with every screen's section empty and its contents in the store
    ``ids.SECTIONS`` (``{key: children}``), which the clientside ``switchScreen`` puts into a
    section the first time it is shown. The browser's renderer then holds only the screens
    opened so far, which keeps every change on the page quick; the server builds and sends
    the same page as before (the access layer has already adapted it to the requester)."""
    keys = {ids.screen_container(s.key): s.key for s in screens}

    def build() -> Any:
        tree = layout()
        held: dict[str, Any] = {}

        def walk(node: Any) -> None:
            node_id = getattr(node, "id", None)
            if node_id in keys and getattr(node, READY_ATTR, None) == "1":
                return  # computed for the page's opening: on the page from the start
            if node_id in keys:
                held[keys[node_id]] = node.children
                node.children = None
                return
            kids = getattr(node, "children", None)
            for child in kids if isinstance(kids, list | tuple) else [kids]:
                if hasattr(child, "to_plotly_json"):
                    walk(child)

        walk(tree)
        store = dcc.Store(id=ids.SECTIONS, data=held, storage_type="memory")
        children = tree.children if isinstance(tree.children, list) else [tree.children]
        tree.children = [store, *children]
        return tree

    return build
