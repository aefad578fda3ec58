"""Reviewer links: strong tokens, stored hashed, expiring, revocable; read-only for real.

Token strength follows the OWASP Session Management Cheat Sheet ("session identifiers
must have at least 64 bits of entropy", quoted from memory; we require the issue's 128 and
issue 256) and the Python documentation of ``secrets`` (32 bytes of randomness is the
module's default for tokens, from memory); storing only a SHA-256 of a high-entropy token
is common practice (the token is random, so no salt or slow hash is needed).
"""

from __future__ import annotations

import base64
import datetime as dt
import hashlib
import json
import math

import dash_requests
import pytest
import sqlalchemy as sa

from pipeline.errors import RealbasisError
from pipeline.store import WorkspaceStore, hash_token, links_table


@pytest.fixture
def store(tmp_path):
    s = WorkspaceStore(f"sqlite:///{tmp_path / 'share.sqlite'}")
    yield s
    s.close()


def test_tokens_carry_at_least_128_random_bits_and_differ(store):
    ws = store.create("links")
    tokens = [store.create_link(ws.id)[0] for _ in range(50)]
    assert len(set(tokens)) == len(tokens)
    for t in tokens:
        raw = base64.urlsafe_b64decode(t + "=" * (-len(t) % 4))
        assert len(raw) * 8 >= 128
        assert len(raw) == 32  # secrets.token_urlsafe(32)
    # A crude check that the bytes are not patterned: across 50 tokens every byte value
    # position varies (a constant or counter-like token would fail).
    columns = list(zip(*(base64.urlsafe_b64decode(t + "=") for t in tokens), strict=True))
    assert all(len(set(col)) > 10 for col in columns)
    # Shannon entropy of the pooled bytes is close to 8 bits per byte.
    pooled = b"".join(base64.urlsafe_b64decode(t + "=") for t in tokens)
    counts = [pooled.count(bytes([b])) for b in range(256)]
    entropy = -sum(c / len(pooled) * math.log2(c / len(pooled)) for c in counts if c)
    assert entropy > 7.5


def test_only_the_hash_is_stored(store):
    ws = store.create("hashes")
    token, info = store.create_link(ws.id, label="auditor")
    with store.engine.connect() as conn:
        rows = conn.execute(sa.select(links_table)).mappings().all()
        dump = "\n".join(str(dict(r)) for r in rows)
    assert token not in dump
    assert rows[0]["token_sha256"] == hashlib.sha256(token.encode()).hexdigest() == hash_token(token)
    # nor in the audit trail
    assert all(token not in str(e.detail) for e in store.audit(ws.id))
    assert store.resolve_token(token).id == info.id


def test_expiry_and_revocation(store):
    ws = store.create("expiry")
    now = dt.datetime.now(dt.UTC)
    token, info = store.create_link(ws.id, expires_at=now + dt.timedelta(hours=1))
    assert store.resolve_token(token) is not None
    assert info.state(now + dt.timedelta(hours=2)) == "expired"
    # make it expire by moving its expiry into the past in the database
    with store.engine.begin() as conn:
        conn.execute(links_table.update().values(expires_at=now - dt.timedelta(seconds=1)))
    assert store.resolve_token(token) is None
    assert store.list_links(ws.id)[0].state() == "expired"

    token2, info2 = store.create_link(ws.id, label="council staff")
    assert store.resolve_token(token2).workspace_id == ws.id
    revoked = store.revoke_link(info2.id)
    assert revoked.state() == "revoked"
    assert store.resolve_token(token2) is None
    assert store.revoke_link(info2.id).revoked_at == revoked.revoked_at  # idempotent
    events = [e.event for e in store.audit(ws.id)]
    assert events.count("link-create") == 2 and events.count("link-revoke") == 1

    with pytest.raises(RealbasisError) as err:
        store.create_link(ws.id, expires_at=now - dt.timedelta(days=1))
    assert err.value.code == "SH005"
    with pytest.raises(RealbasisError) as err:
        store.revoke_link("nope")
    assert err.value.code == "SH004"
    with pytest.raises(RealbasisError) as err:
        store.create_link("no-such-workspace")
    assert err.value.code == "ST001"


def test_garbage_tokens_resolve_to_nothing(store):
    ws = store.create("garbage")
    token, _ = store.create_link(ws.id)
    for bad in ("", "x", token[:-1], token + "A", token.upper(), "' OR 1=1 --", "a" * 5000):
        assert store.resolve_token(bad) is None


# --------------------------------------------------------------------------- HTTP level


def _app(tmp_path, **settings_kw):
    from dash import Input, Output

    from dashboard.app import create_app
    from pipeline.settings import Settings

    settings = Settings(data_dir=str(tmp_path / "data"), demo=False,
                        **{"local_editing": True, **settings_kw})
    store = WorkspaceStore.from_settings(settings)
    ws = store.create("Tallmere transit (illustrative)")
    app = create_app(settings, store=store)

    # A probe callback that changes the workspace, standing in for any screen's save.
    @app.callback(Output("probe-out", "children"), Input("probe-btn", "n_clicks"))
    def _probe(n):
        cur = store.load(ws.id)
        saved = store.save(cur.__class__(**{**cur.__dict__, "notes": f"edit {n}"}),
                           action="probe edit")
        return f"saved v{saved.version}"

    # And one that swallows the refusal and pretends all is well: the server must still
    # answer 403 because a change was refused while handling the request.
    @app.callback(Output("probe-out2", "children"), Input("probe-btn2", "n_clicks"))
    def _sneaky(n):
        try:
            store.record_upload(ws.id, "x.csv", 1, "0" * 64)
        except RealbasisError:
            return "ok"
        return "ok"

    return app, store, ws


def _dispatch(client, button="probe-btn", out="probe-out", headers=None, changed=None):
    body = {"output": f"{out}.children", "outputs": {"id": out, "property": "children"},
            "inputs": [{"id": button, "property": "n_clicks", "value": 1}],
            "changedPropIds": changed or [f"{button}.n_clicks"], "state": []}
    return client.post("/_dash-update-component", json=body, headers=headers or {})


def test_reviewer_cannot_change_anything_over_http(tmp_path):
    app, store, ws = _app(tmp_path)
    editor = app.server.test_client()
    r = _dispatch(editor)
    assert r.status_code == 200, r.get_data(as_text=True)
    assert r.headers["X-Realbasis-Access"] == "editor"
    assert store.current_version(ws.id) == 2

    token, info = store.create_link(ws.id, label="auditor")
    reviewer = app.server.test_client()
    r = reviewer.get(f"/review/{token}")
    assert r.status_code == 302
    page = reviewer.get("/")
    assert page.status_code == 200 and page.headers["X-Realbasis-Access"] == "reviewer"
    layout = reviewer.get("/_dash-layout").get_data(as_text=True)
    assert "Read-only reviewer view" in layout

    before = store.current_version(ws.id)
    r = _dispatch(reviewer)
    assert r.status_code == 403 and r.get_json()["code"] == "SH001"
    r = _dispatch(reviewer, "probe-btn2", "probe-out2")  # refusal swallowed by the callback
    assert r.status_code == 403 and r.get_json()["code"] == "SH001"
    r = _dispatch(reviewer, changed=[])  # whatever the request says changed
    assert r.status_code == 403
    for method in ("post", "put", "delete"):
        r = getattr(reviewer, method)("/anything", data=b"x")
        assert r.status_code == 403
    # The same by header, without a cookie.
    r = _dispatch(app.server.test_client(), headers={"X-Realbasis-Review": token})
    assert r.status_code == 403 and r.get_json()["code"] == "SH001"
    assert store.current_version(ws.id) == before
    assert not [e for e in store.audit(ws.id) if e.event == "upload"]

    # Revoking takes effect on the very next request, and the session stays a reviewer's:
    # never an editor's, however often the page is reloaded on this machine.
    store.revoke_link(info.id)
    for _ in range(2):
        r = reviewer.get("/")
        assert r.status_code == 403 and "SH002" in r.get_data(as_text=True)
        assert "review-exit" in r.get_data(as_text=True)  # the way out
    r = _dispatch(reviewer)
    assert r.status_code == 403 and r.get_json()["code"] == "SH002"
    assert reviewer.get(f"/review/{token}").status_code == 403
    assert reviewer.get("/review/not-a-token").status_code == 403
    assert reviewer.get("/").status_code == 403
    assert store.current_version(ws.id) == before
    # leaving the reviewer view is explicit, and shows a page (not the editor's view)
    left = reviewer.get("/review-exit")
    assert left.status_code == 200 and "left the reviewer view" in left.get_data(as_text=True)


def test_editor_access_is_local_unless_a_token_is_set(tmp_path):
    from dashboard.app import create_app
    from pipeline.settings import Settings

    with pytest.raises(RealbasisError) as err:
        create_app(Settings(data_dir=str(tmp_path / "d0"), host="0.0.0.0", demo=False))
    assert err.value.code == "SH003"

    app, store, ws = _app(tmp_path / "a")
    remote = app.server.test_client()
    remote.environ_base["REMOTE_ADDR"] = "192.0.2.7"  # TEST-NET-1 (RFC 5737)
    assert _dispatch(remote).status_code == 403
    local = app.server.test_client()
    assert _dispatch(local, headers={"X-Forwarded-For": "192.0.2.7"}).status_code == 403
    assert local.get("/", headers={"Host": "attacker.example"}).status_code == 403
    assert _dispatch(local, headers={"Origin": "http://attacker.example"}).status_code == 403
    assert store.current_version(ws.id) == 1

    secret = "correct horse battery staple 42, and more"
    app, store, ws = _app(tmp_path / "b", host="0.0.0.0", editor_token=secret)
    c = app.server.test_client()
    c.environ_base["REMOTE_ADDR"] = "192.0.2.7"
    assert c.get("/").status_code == 302  # to the sign-in page
    assert _dispatch(c).status_code == 403
    assert _dispatch(c, headers={"Authorization": "Bearer wrong"}).status_code == 403
    assert _dispatch(c, headers={"Authorization": f"Bearer {secret}"}).status_code == 200
    assert c.post("/editor-login", data={"token": secret}).status_code == 302
    assert _dispatch(c).status_code == 200
    assert store.current_version(ws.id) == 3


# --------------------------------------------------------------------------- Share screen


def _deps(client):
    r = client.get("/_dash-dependencies")
    return r.get_json() if hasattr(r, "get_json") else r.json()


def _links_body(deps, ref, trigger="rb-ref-share.data", label="audit", days=None):
    """The Share screen's links callbacks: listing (on the workspace) or changing them
    (the create and revoke buttons, a callback registered as writing)."""
    dep = dash_requests.find(deps, output="sx-links.children", trigger=trigger)
    values = {"rb-workspace.data": ref, "sx-link-create.n_clicks": 1, "sx-revoke.n_clicks": 0,
              "sx-link-label.value": label, "sx-link-days.value": days}
    return dash_requests.body(dep, values, [trigger])


def test_share_screen_links_over_http(tmp_path):
    app, store, ws = _app(tmp_path)
    ref = {"id": ws.id, "version": 1}
    editor = app.server.test_client()
    deps = _deps(editor)
    r = editor.post("/_dash-update-component",
                    json=_links_body(deps, ref, "sx-link-create.n_clicks", days=30))
    assert r.status_code == 200
    text = json.dumps(r.get_json())
    assert "http://localhost/review/" in text and "not shown again" in text
    [info] = store.list_links(ws.id)
    assert info.label == "audit" and info.expires_at is not None

    token, _ = store.create_link(ws.id)
    reviewer = app.server.test_client()
    headers = {"X-Realbasis-Review": token}
    # opening the screen as a reviewer is fine (nothing is changed) ...
    r = reviewer.post("/_dash-update-component", json=_links_body(deps, ref), headers=headers)
    assert r.status_code == 200, r.get_data(as_text=True)
    # ... pressing "Create link" is refused by the server, with or without changedPropIds
    for changed in (["sx-link-create.n_clicks"], [], ["rb-workspace.data"]):
        body = _links_body(deps, ref, "sx-link-create.n_clicks")
        body["changedPropIds"] = changed
        r = reviewer.post("/_dash-update-component", json=body, headers=headers)
        assert r.status_code == 403 and r.get_json()["code"] == "SH001", changed
        assert "create or revoke a reviewer link" in r.get_json()["message"]
    assert len(store.list_links(ws.id)) == 2
    # bad expiry is a coded message, not a crash
    r = editor.post("/_dash-update-component",
                    json=_links_body(deps, ref, "sx-link-create.n_clicks", days=-3))
    assert r.status_code == 200 and "SH005" in r.get_data(as_text=True)


def test_share_logic_rows_and_scope(tmp_path):
    from dashboard.screens.share.view import audit_rows, export_file, link_rows, scope_text
    from pipeline.model import MONTHLY, Series, Workspace

    store = WorkspaceStore(f"sqlite:///{tmp_path / 's.sqlite'}")
    ws = store.create("Scope (illustrative)")
    assert "Nothing to export yet" in scope_text(ws)[0]
    now = dt.datetime.now(dt.UTC)
    store.create_link(ws.id, label="a", expires_at=now + dt.timedelta(days=1))
    _, b = store.create_link(ws.id, label="b")
    store.revoke_link(b.id)
    rows = link_rows(store.list_links(ws.id), now + dt.timedelta(days=2))
    assert [r["state"] for r in rows] == ["expired", "revoked"]
    events = audit_rows(store.audit(ws.id))
    assert events[0]["what"].startswith(f"reviewer link {b.id} revoked")  # newest first

    import numpy as np
    import pandas as pd

    idx = pd.period_range("2024-01", periods=24, freq="M")
    rev = Series("Revenue", pd.Series(np.linspace(100, 120, 24), index=idx), MONTHLY)
    cpi = Series("CPI", pd.Series(np.linspace(100, 103, 24), index=idx), MONTHLY,
                 kind="index", vintage="2026-01-10")
    ws = store.save(Workspace(ws.id, ws.name, ws.version, series={"Revenue": rev},
                              indexes={"CPI": {"2026-01-10": cpi}}, settings={"base": "2024"}))
    lines = scope_text(ws)
    assert "constant 2024 dollars" in lines[0] and "CPI (vintage 2026-01-10)" in lines[2]
    data, name = export_file(ws, "json", store)
    assert name.endswith("-v2-real.json") and b'"base": "2024"' in data
    store.close()


def test_share_views_show_the_scope_the_audit_trail_and_a_new_link_once(tmp_path):
    from dashboard.screens.share.view import audit_view, created_link_view, scope_view

    store = WorkspaceStore(f"sqlite:///{tmp_path / 's.sqlite'}")
    ws = store.create("Views (illustrative)")
    assert "Nothing to export yet" in str(scope_view(ws).to_plotly_json())
    token, info = store.create_link(ws.id, label="auditors")
    trail = str(audit_view(store, ws.id).to_plotly_json())
    assert f"reviewer link {info.id}" in trail and "Time (UTC)" in trail
    shown = str(created_link_view(f"http://x/review/{token}", info).to_plotly_json())
    assert token in shown and "not shown again" in shown
    store.close()


@pytest.mark.browser
def test_chart_image_is_a_png_from_chromium(tmp_path, chromium_path, monkeypatch):
    from dashboard.data import DataAccess
    from dashboard.screens.share.view import chart_png
    from pipeline.settings import Settings

    monkeypatch.setenv("RB_CHROMIUM", chromium_path)
    data = DataAccess(Settings(data_dir=str(tmp_path / "d")))
    ws = data.latest(data.demo_ref().id)
    png, name = chart_png(ws)
    assert png[:8] == b"\x89PNG\r\n\x1a\n" and name.endswith("-spread.png")
    # width x height from the PNG header (IHDR), as requested
    assert int.from_bytes(png[16:20], "big") == 1200 and int.from_bytes(png[20:24], "big") == 675


def test_serve_refuses_a_network_address_without_an_editor_token(tmp_path, capsys):
    from pipeline.cli import main

    assert main(["serve", "--host", "0.0.0.0", "--data-dir", str(tmp_path)]) == 2
    assert "[SH003]" in capsys.readouterr().err


@pytest.mark.slow
def test_reviewer_is_read_only_against_a_real_gunicorn(tmp_path):
    import os
    import socket
    import subprocess
    import sys
    import time

    import requests
    from conftest import ROOT

    data = tmp_path / "data"
    store = WorkspaceStore(f"sqlite:///{data / 'realbasis.sqlite'}")
    ws = store.create("Served (illustrative)")
    token, _ = store.create_link(ws.id, label="gunicorn test")
    with socket.socket() as s:
        s.bind(("127.0.0.1", 0))
        port = s.getsockname()[1]
    env = {**os.environ, "REALBASIS_DATA_DIR": str(data), "REALBASIS_DEMO": "0",
           "PYTHONPATH": str(ROOT), "REALBASIS_LOCAL_EDITING": "1"}
    proc = subprocess.Popen([sys.executable, "-m", "gunicorn", "--no-control-socket", "-w", "2",
                             "-b", f"127.0.0.1:{port}", "dashboard.wsgi:server"],
                            cwd=ROOT, env=env, stdout=subprocess.DEVNULL,
                            stderr=subprocess.DEVNULL)
    base = f"http://127.0.0.1:{port}"
    try:
        deadline = time.monotonic() + 60
        while True:
            try:
                requests.get(base + "/_dash-layout", timeout=10)
                break
            except requests.RequestException:
                assert time.monotonic() < deadline, "gunicorn did not start"
                time.sleep(0.3)
        ref = {"id": ws.id, "version": 1}
        reviewer = requests.Session()
        r = reviewer.get(f"{base}/review/{token}", timeout=10)
        assert r.status_code == 200 and r.headers["X-Realbasis-Access"] == "reviewer"
        deps = reviewer.get(base + "/_dash-dependencies", timeout=10).json()
        for _ in range(4):  # whichever worker answers
            r = reviewer.post(base + "/_dash-update-component",
                              json=_links_body(deps, ref, "sx-link-create.n_clicks"), timeout=10)
            assert r.status_code == 403 and r.json()["code"] == "SH001"
        assert len(store.list_links(ws.id)) == 1
        editor = requests.Session()
        r = editor.post(base + "/_dash-update-component",
                        json=_links_body(deps, ref, "sx-link-create.n_clicks"), timeout=10)
        assert r.status_code == 200 and r.headers["X-Realbasis-Access"] == "editor"
        assert len(store.list_links(ws.id)) == 2
    finally:
        proc.terminate()
        proc.wait(20)
        store.close()


@pytest.mark.browser
@pytest.mark.slow
def test_reviewer_in_a_real_browser_sees_every_screen_and_changes_nothing(
        tmp_path, chromium_path, output_dir):
    """Chromium (Playwright) opens a reviewer link against gunicorn with two workers:
    every screen loads without a refused request, the share screen shows the audit trail
    but no link controls, the reviewer downloads the same workbook the editor gets, and
    pressing a save button is refused by the server (403) with nothing stored."""
    import os
    import signal
    import socket
    import subprocess
    import sys
    import time
    import urllib.request

    from conftest import ROOT
    from openpyxl import load_workbook
    from playwright.sync_api import sync_playwright

    from dashboard.data import DataAccess
    from pipeline.settings import Settings
    from pipeline.workbook import export_workspace

    data_dir = tmp_path / "data"
    data = DataAccess(Settings(data_dir=str(data_dir)))
    ref = data.demo_ref()
    store = data.store
    token, _ = store.create_link(ref.id, label="browser test")
    version = store.current_version(ref.id)
    with socket.socket() as s:
        s.bind(("127.0.0.1", 0))
        port = s.getsockname()[1]
    env = {**os.environ, "REALBASIS_DATA_DIR": str(data_dir), "PYTHONPATH": str(ROOT),
           "REALBASIS_LOCAL_EDITING": "1"}
    env.pop("REALBASIS_DATABASE_URL", None)
    env.pop("REALBASIS_REDIS_URL", None)
    proc = subprocess.Popen([sys.executable, "-m", "gunicorn", "--no-control-socket", "-w", "2",
                             "-b", f"127.0.0.1:{port}", "--timeout", "120",
                             "dashboard.wsgi:server"], cwd=ROOT, env=env,
                            stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL,
                            start_new_session=True)
    base = f"http://127.0.0.1:{port}"
    args = ["--headless", "--no-sandbox", "--disable-gpu", "--disable-background-networking",
            "--disable-component-update", "--disable-sync", "--no-first-run"]
    try:
        deadline = time.monotonic() + 90
        while True:
            try:
                urllib.request.urlopen(base + "/_dash-layout", timeout=5).close()
                break
            except OSError:
                assert time.monotonic() < deadline, "gunicorn did not start"
                time.sleep(0.3)
        with sync_playwright() as p:
            browser = p.chromium.launch(executable_path=chromium_path, args=args)
            page = browser.new_page(viewport={"width": 1300, "height": 1000},
                                    accept_downloads=True)
            refused: list[str] = []
            page.on("response", lambda r: refused.append(f"{r.status} {r.url}")
                    if r.status >= 400 else None)
            page.goto(f"{base}/review/{token}")
            page.wait_for_selector("#rb-reviewer-banner", timeout=60_000)
            page.wait_for_selector("#rb-workspace-label strong", timeout=60_000)
            assert "Demo" in page.inner_text("#rb-workspace-label")
            # the intake is shown read-only: what the workspace holds, no upload, no
            # workspace choice, no corrections, no adding
            page.click("#rb-nav-intake")
            page.wait_for_selector("#in-ws-series table", timeout=30_000)
            held = page.inner_text("#in-ws-series")
            for word in ("Rail operations", "fiscal years starting July", "USD thousands",
                         "FY2016 – FY2030", "projected FY2027–FY2030", "Chained consumer index"):
                assert word in held, word
            assert "No file has been added" in page.inner_text("#in-uploads")
            for hidden in ("#in-upload", "#in-add", "#in-kind-apply", "#in-new-workspace",
                           "#in-fy-start", "#in-workspace-list"):
                assert not page.is_visible(hidden), hidden
            assert page.locator("#in-upload input[type=file]").count() == 0 or \
                not page.is_visible("#in-upload")
            page.screenshot(path=str(output_dir / "intake-reviewer.png"), full_page=True)
            for key in ("shelf", "real", "spread", "revisions", "share"):
                page.click(f"#rb-nav-{key}")
                page.wait_for_selector(f"#rb-screen-{key}:not([hidden])")
                page.wait_for_load_state("networkidle")
            page.wait_for_selector("#sx-audit table", timeout=30_000)
            assert "created workspace" in page.inner_text("#sx-audit")
            assert page.locator("#sx-link-panel[hidden]").count() == 1
            page.wait_for_timeout(500)
            page.screenshot(path=str(output_dir / "share-reviewer.png"), full_page=True)
            assert refused == [], f"plain viewing was refused: {refused}"

            with page.expect_download(timeout=60_000) as dl:
                page.click("#sx-dl-xlsx")
            path = tmp_path / "reviewer.xlsx"
            dl.value.save_as(path)

            page.click("#rb-nav-real")
            page.wait_for_selector("#rb-screen-real:not([hidden])")
            page.wait_for_function("document.querySelector('#rt-title').innerText"
                                   ".includes('constant')", timeout=60_000)
            assert page.is_disabled("#rt-save")  # for looks; now past the looks:
            deps = page.evaluate("async () => (await fetch('/_dash-dependencies')).json()")
            status = page.evaluate(
                "async (body) => (await fetch('/_dash-update-component', {method: 'POST', "
                "headers: {'Content-Type': 'application/json'}, "
                "body: JSON.stringify(body)})).status",
                _links_body(deps, {"id": ref.id, "version": version}, "sx-link-create.n_clicks"))
            assert status == 403  # a hand-made request with the reviewer's cookie
            browser.close()
        assert store.current_version(ref.id) == version  # nothing was saved
        assert len(store.list_links(ref.id)) == 1
        mine = export_workspace(data.latest(ref.id), tmp_path / "editor.xlsx")
        got = list(load_workbook(path)["Real terms"].iter_rows(values_only=True))
        want = list(load_workbook(mine)["Real terms"].iter_rows(values_only=True))
        assert got == want and len(got) > 100
    finally:
        os.killpg(proc.pid, signal.SIGTERM)
        proc.wait(20)


def test_reviewer_cannot_read_another_workspace_even_from_a_cache(tmp_path):
    app, store, ws = _app(tmp_path)
    other = store.create("Someone else's workspace")
    body = {"output": "rb-workspace-label.children",
            "outputs": {"id": "rb-workspace-label", "property": "children"},
            "inputs": [{"id": "rb-workspace", "property": "data",
                        "value": {"id": other.id, "version": 1}}],
            "changedPropIds": ["rb-workspace.data"], "state": []}
    editor = app.server.test_client()
    r = editor.post("/_dash-update-component", json=body)  # now cached in this process
    assert r.status_code == 200 and "Someone else" in r.get_data(as_text=True)
    token, _ = store.create_link(ws.id)
    r = app.server.test_client().post("/_dash-update-component", json=body,
                                      headers={"X-Realbasis-Review": token})
    assert r.status_code == 403 and r.get_json()["code"] == "SH007"
    assert "Someone else" not in r.get_data(as_text=True)


def test_workspace_command_links_audit_and_export(tmp_path, capsys):
    import numpy as np
    import pandas as pd

    from pipeline.cli import main
    from pipeline.model import MONTHLY, Series, Workspace

    db = f"sqlite:///{tmp_path / 'cli.sqlite'}"
    store = WorkspaceStore(db)
    ws = store.create("Command line (illustrative)")
    idx = pd.period_range("2024-01", periods=24, freq="M")
    rev = Series("Revenue", pd.Series(np.linspace(100, 120, 24), index=idx), MONTHLY)
    cpi = Series("CPI", pd.Series(np.linspace(100, 103, 24), index=idx), MONTHLY, kind="index")
    store.save(Workspace(ws.id, ws.name, ws.version, series={"Revenue": rev},
                         indexes={"CPI": {"": cpi}}, settings={"base": "2024"}))
    common = ["--database-url", db]
    assert main(["workspace", "list", *common]) == 0
    assert ws.id in capsys.readouterr().out
    assert main(["workspace", "link", ws.id, "--label", "auditor", "--expires-days", "7",
                 "--base-url", "https://realbasis.example.org/", *common]) == 0
    out = capsys.readouterr().out
    token = out.strip().splitlines()[-1].rsplit("/review/", 1)[1]
    assert out.strip().splitlines()[-1].startswith("https://realbasis.example.org/review/")
    link = store.resolve_token(token)
    assert link is not None and link.label == "auditor"
    assert main(["workspace", "revoke", link.id, *common]) == 0
    assert store.resolve_token(token) is None
    assert main(["workspace", "link", ws.id, "--expires-days", "0", *common]) == 2
    assert "[SH005]" in capsys.readouterr().err
    out_file = tmp_path / "ws.xlsx"
    assert main(["workspace", "export", ws.id, "--out", str(out_file), *common]) == 0
    assert out_file.exists()
    assert main(["workspace", "audit", ws.id, *common]) == 0
    audit = capsys.readouterr().out
    assert "reviewer link" in audit and "revoked" in audit and "export ws.xlsx" in audit
    assert main(["workspace", "verify", ws.id, *common]) == 0
    assert main(["workspace", "show", "nope", *common]) == 2
    assert "[ST001]" in capsys.readouterr().err
    store.close()


def test_reviewer_gets_the_intake_screen_read_only(tmp_path):
    """Every screen is shown to a reviewer; on the intake the upload, workspace choice,
    corrections and adding are left hidden, and what the workspace holds is shown."""
    import json

    from dashboard import ids

    app, store, ws = _app(tmp_path)
    token, _ = store.create_link(ws.id, label="auditor")

    def find(node, wanted):
        if isinstance(node, dict):
            props = node.get("props", {})
            if props.get("id") == wanted or wanted in str(props.get("className", "")).split():
                return props
            for v in [*props.values(), *node.values()]:
                got = find(v, wanted)
                if got is not None:
                    return got
        elif isinstance(node, list):
            for v in node:
                got = find(v, wanted)
                if got is not None:
                    return got
        return None

    editor = json.loads(app.server.test_client().get("/_dash-layout").get_data(as_text=True))
    assert not find(editor, "rb-editor-only").get("hidden")
    reviewer = app.server.test_client()
    reviewer.get(f"/review/{token}")
    layout = json.loads(reviewer.get("/_dash-layout").get_data(as_text=True))
    part = find(layout, "rb-editor-only")
    assert part["hidden"] is True and part["style"]["display"] == "none"
    assert find(part, ids.IN_UPLOAD) is not None and find(part, ids.IN_ADD) is not None
    nav = find(layout, ids.nav_button("intake"))
    assert (nav.get("style") or {}).get("display") != "none"  # the screen itself is shown
    assert find(layout, ids.IN_WS_SERIES) is not None and find(layout, ids.IN_UPLOADS) is not None
    # and its contents callback answers the reviewer (reading is allowed)
    body = {"output": f"..{ids.IN_WS_SERIES}.children...{ids.IN_UPLOADS}.children..",
            "outputs": [{"id": ids.IN_WS_SERIES, "property": "children"},
                        {"id": ids.IN_UPLOADS, "property": "children"}],
            "inputs": [{"id": ids.WORKSPACE, "property": "data",
                        "value": {"id": ws.id, "version": 1}}],
            "changedPropIds": [f"{ids.WORKSPACE}.data"], "state": []}
    r = reviewer.post("/_dash-update-component", json=body)
    assert r.status_code == 200, r.get_data(as_text=True)[:300]
    assert "holds no series yet" in r.get_data(as_text=True)


def test_chart_image_without_kaleido_is_a_coded_error(monkeypatch):
    """Without the optional kaleido package the PNG download says what to install (EX103)
    instead of failing with an uncoded ImportError."""
    import sys

    from dashboard.screens.share.view import chart_png

    monkeypatch.setitem(sys.modules, "kaleido", None)  # makes `import kaleido` fail
    with pytest.raises(RealbasisError) as err:
        chart_png(None)  # type: ignore[arg-type]
    assert err.value.code == "EX103"
    assert "realbasis[images]" in err.value.problems[0].fix


def test_chart_image_carries_every_caution_and_the_base(tmp_path):
    """The exported chart states the base in its title and all the usual cautions (the
    project's rule: cautions wherever figures are shown or exported)."""
    from dashboard.data import DataAccess
    from dashboard.screens.share.view import chart_figure
    from pipeline.model import CAUTIONS
    from pipeline.settings import Settings

    data = DataAccess(Settings(data_dir=str(tmp_path / "d")))
    fig = chart_figure(data.latest(data.demo_ref().id))
    notes = " ".join(a.text for a in fig.layout.annotations)
    for caution in CAUTIONS:
        assert caution in notes
    assert "constant 2024 dollars" in fig.layout.title.text


def test_downloads_carry_the_saved_total_and_the_revision_band(demo):
    """A total of parts saved on Real terms reaches the audit workbook as its Contributions
    sheets (through pipeline.workbook.export_workspace), and the chained consumer index's
    four demo vintages give the revision band in the workbook and the JSON."""
    import io

    import openpyxl

    from dashboard.screens.real.view import save_choices
    from dashboard.screens.share.view import export_file, scope_text

    pairs = {"Apparel revenue": "Producer index for apparel and outdoor goods",
             "Footwear revenue": "Chained consumer index",
             "Outdoor gear revenue": "Producer index for apparel and outdoor goods",
             "Home goods revenue": "Fixed-basket consumer index"}
    ws = save_choices(demo, "__parts__|Apparel revenue", "Chained consumer index", "2024",
                      "auto", False, pairs=pairs, chain="fisher")
    lines = " ".join(scope_text(ws))
    assert "Contributions sheets of the saved total of 4 part(s)" in lines
    assert "revision band of Chained consumer index" in lines
    data, _name = export_file(ws, "xlsx", None)
    wb = openpyxl.load_workbook(io.BytesIO(data), read_only=True)
    assert {"Contributions", "Contributions - year on year", "Contributions - annual",
            "Revision band"} <= set(wb.sheetnames)
    rows = [r for r in wb["Contributions"].iter_rows(values_only=True) if any(r)]
    assert any("residual" in (str(c) for c in r) for r in rows)
    data, _name = export_file(ws, "json", None)
    bands = json.loads(data)["revision_bands"]
    assert [(b["index"], b["available"]) for b in bands] == [("Chained consumer index", True)]
    assert bands[0]["revisions_used"] == 28


def test_the_download_job_reports_its_stages(demo):
    """The workbook download tells the progress bar each stage done (result, extras and
    audit trail, file written) and ends at done == total."""
    from dashboard.screens.share.view import export_file

    seen: list[tuple[int, int]] = []
    data, name = export_file(demo, "xlsx", None, lambda done, total: seen.append((done, total)))
    assert data[:2] == b"PK" and name.endswith(".xlsx")
    assert seen == [(0, 3), (1, 3), (2, 3), (3, 3)]


def test_downloads_are_a_cancellable_job_with_progress_and_the_chart_image_is_not(tmp_path):
    """The workbook, CSV and JSON downloads run as a background job with a progress bar
    and a Cancel button shown while it runs; the chart image runs in the web process,
    where the Chromium kept open lives (dashboard.images)."""
    from dashboard import ids
    from dashboard.app import create_app
    from pipeline.settings import Settings

    app = create_app(Settings(data_dir=str(tmp_path / "d"), demo=False))
    cbs = dict(app.callback_map)
    download = next(v for k, v in cbs.items() if f"{ids.SX_DOWNLOAD}.data" in k)
    png = next(v for k, v in cbs.items() if f"{ids.SX_DOWNLOAD_PNG}.data" in k)
    bg = download.get("background") or {}
    assert bg, "the downloads run as a background job"
    assert [p.component_id for p in bg["progress"]] == [ids.SX_PROGRESS, ids.SX_PROGRESS]
    assert [c["id"] for c in bg["cancel"]] == [ids.SX_CANCEL]
    assert not png.get("background")
    layout = str(app.layout() if callable(app.layout) else app.layout)
    assert ids.SX_PROGRESS in layout and ids.SX_CANCEL in layout
    # every background job of the dashboard can be cancelled, and its Cancel button is
    # shown only while it runs
    jobs = {k: v for k, v in cbs.items() if v.get("background")}
    assert len(jobs) >= 4  # reading a file, adjusting every series, two downloads
    for key, cb in jobs.items():
        cancels = [c["id"] for c in cb["background"].get("cancel") or []]
        assert cancels, f"{key}: no Cancel"
        for c in cancels:
            button = _find(app.layout() if callable(app.layout) else app.layout, c)
            assert button is not None and button.hidden is True, c  # shown while running
        running = next(spec.get("running") or {} for spec in app._callback_list
                       if spec["output"] == key)
        for c in cancels:
            assert running["running"].get(f"{c}.hidden") is False, key
            assert running["runningOff"].get(f"{c}.hidden") is True, key


def _find(component, wanted):
    if isinstance(component, dict):  # a store's data: the screens' contents until shown
        for value in component.values():
            found = _find(value, wanted)
            if found is not None:
                return found
        return None
    if isinstance(component, list | tuple):
        for value in component:
            found = _find(value, wanted)
            if found is not None:
                return found
        return None
    if getattr(component, "id", None) == wanted:
        return component
    data = getattr(component, "data", None)
    if isinstance(data, dict):
        found = _find(data, wanted)
        if found is not None:
            return found
    children = getattr(component, "children", None)
    for child in children if isinstance(children, list | tuple) else [children]:
        if child is not None and not isinstance(child, str | int | float):
            found = _find(child, wanted)
            if found is not None:
                return found
    return None
