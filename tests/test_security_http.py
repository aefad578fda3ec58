"""Hardening over HTTP, in process (Flask's test client against the real app and screens):
reviewer links write nothing whatever the request claims, kept uploads are scoped, capped
and expire, the peer address alone never makes an editor, the editor token is long,
throttled and its sessions can be ended, malformed page state is a coded 4xx.

The proxy header names are those the common reverse proxies and CDNs add (nginx's
proxy_set_header examples, RFC 7239 ``Forwarded``, RFC 9110 ``Via``, the vendors' client-IP
headers: common practice, listed from memory). The same cases run against a real gunicorn
in tests/test_security_gunicorn.py.
"""

from __future__ import annotations

import base64
import contextlib
import dataclasses
import datetime as dt
import hashlib
import json
import os
import time
from pathlib import Path
from typing import Any

import dash_requests
import pytest

from dashboard import ids
from dashboard.data import DataAccess, WorkspaceRef
from pipeline.errors import RealbasisError
from pipeline.settings import Settings
from pipeline.store import AccessContext, WorkspaceStore, access_context

TOKEN = "k3Q9-editor-token-for-tests-only-0123456789"  # 43 characters

PROXY_HEADERS = {
    "X-Forwarded-For": "192.0.2.7", "X-Forwarded-Host": "127.0.0.1",
    "X-Forwarded-Proto": "https", "X-Forwarded-Port": "443", "X-Forwarded-Server": "proxy",
    "Forwarded": "for=192.0.2.7;proto=https", "X-Real-IP": "192.0.2.7",
    "Via": "1.1 proxy", "CF-Connecting-IP": "192.0.2.7", "True-Client-IP": "192.0.2.7",
    "X-Client-IP": "192.0.2.7", "X-Cluster-Client-IP": "192.0.2.7",
    "Fastly-Client-IP": "192.0.2.7", "X-Original-Forwarded-For": "192.0.2.7",
    "X-Envoy-External-Address": "192.0.2.7", "Client-IP": "192.0.2.7",
}
"""One request each: any of them marks the request as proxied (192.0.2.0/24 is TEST-NET-1,
RFC 5737)."""


def _app(tmp_path: Path, **kw: Any) -> tuple[Any, WorkspaceStore, Any]:
    from dashboard.app import create_app

    settings = Settings(data_dir=str(tmp_path / "data"), demo=False,
                        **{"local_editing": True, "max_upload_bytes": 4000, **kw})
    store = WorkspaceStore.from_settings(settings)
    ws = store.create("Hardening (illustrative)")
    return create_app(settings, store=store), store, ws


def _deps(client: Any) -> list[dict[str, Any]]:
    return client.get("/_dash-dependencies").get_json()


def _data_url(data: bytes) -> str:
    return "data:text/csv;base64," + base64.b64encode(data).decode()


CSV = b"period,Sales (USD thousands)\n2024-01,10\n2024-02,11\n"


def _upload_body(deps: list[dict[str, Any]], ws: Any, changed: list[str] | None = None,
                 data: bytes = CSV) -> dict[str, Any]:
    dep = dash_requests.find(deps, output=f"{ids.IN_PENDING}.data")
    return dash_requests.body(dep, {f"{ids.IN_UPLOAD}.contents": _data_url(data),
                                    f"{ids.IN_UPLOAD}.filename": "sales.csv",
                                    f"{ids.WORKSPACE}.data": {"id": ws.id, "version": 1}},
                              changed)


def _uploads(tmp_path: Path) -> list[Path]:
    folder = tmp_path / "data" / "uploads"
    return sorted(p for p in folder.rglob("*") if p.is_file()) if folder.exists() else []


def _reviewer(app: Any, store: WorkspaceStore, ws: Any) -> tuple[Any, Any]:
    token, info = store.create_link(ws.id, label="auditor")
    client = app.server.test_client()
    assert client.get(f"/review/{token}").status_code == 302
    return client, info


# --------------------------------------------------------------------------- 1. reviewer links


def test_a_reviewer_upload_is_refused_whatever_changedPropIds_says(tmp_path: Path):
    app, store, ws = _app(tmp_path)
    reviewer, _ = _reviewer(app, store, ws)
    deps = _deps(reviewer)
    for changed in ([], [f"{ids.IN_UPLOAD}.contents"], [f"{ids.IN_UPLOAD}.filename"],
                    [f"{ids.WORKSPACE}.data"], ["nothing.at-all"]):
        r = reviewer.post("/_dash-update-component", json=_upload_body(deps, ws, changed))
        assert r.status_code == 403, (changed, r.get_data(as_text=True)[:200])
        assert r.get_json()["code"] == "SH001" and "upload a file" in r.get_json()["message"]
    assert _uploads(tmp_path) == []  # nothing reached the disk
    # the editor's same request keeps the file (the request itself is fine)
    editor = app.server.test_client()
    r = editor.post("/_dash-update-component", json=_upload_body(deps, ws, []))
    assert r.status_code == 200 and r.get_json()["response"][ids.IN_PENDING]["data"]["upload"]


def test_keeping_an_upload_is_refused_to_a_reviewer_where_it_is_written(tmp_path: Path):
    data = DataAccess(Settings(data_dir=str(tmp_path)))
    with access_context(AccessContext("reviewer", "w1", "reviewer x", session="s")), \
            pytest.raises(RealbasisError) as err:
        data.keep_upload(b"period,a\n2024,1\n", "a.csv", "w1")
    assert err.value.code == "SH001"
    assert not (tmp_path / "uploads").exists() or not any((tmp_path / "uploads").rglob("*"))


def test_kept_uploads_belong_to_their_session_and_workspace(tmp_path: Path):
    data = DataAccess(Settings(data_dir=str(tmp_path)))

    def as_session(s: str) -> Any:
        return access_context(AccessContext("editor", None, "editor", session=s))

    with as_session("session-a"):
        uid = data.keep_upload(b"abc", "a.csv", "w1")
        assert data.upload(uid, "w1") == (b"abc", "a.csv")
        assert data.upload(uid) == (b"abc", "a.csv")
        with pytest.raises(RealbasisError) as err:
            data.upload(uid, "w2")  # another workspace of the same session
        assert err.value.code == "UI003"
    with as_session("session-b"), pytest.raises(RealbasisError) as err:
        data.upload(uid, "w1")  # knowing the id is not enough
    assert err.value.code == "UI003"
    # the id is random, not the file's SHA-256 (which anyone holding the file knows)
    assert uid != hashlib.sha256(b"abc").hexdigest() and len(uid) == 32
    # nothing on disk is named after the session id
    assert not any("session-a" in str(p) for p in _files(tmp_path))


def _files(tmp_path: Path) -> list[Path]:
    return [p for p in (tmp_path / "uploads").rglob("*")]


def test_kept_uploads_have_a_quota_and_expire(tmp_path: Path):
    data = DataAccess(Settings(data_dir=str(tmp_path), upload_quota_bytes=2500,
                               upload_expiry_seconds=3600))
    with access_context(AccessContext("editor", None, "editor", session="q")):
        first = data.keep_upload(b"x" * 1500, "one.csv", "w1")
        with pytest.raises(RealbasisError) as err:
            data.keep_upload(b"y" * 1500, "two.csv", "w1")
        assert err.value.code == "UI703" and "2,500 bytes" in str(err.value)
        # an hour later the first one has expired: read refuses it, the sweep deletes it
        old = time.time() - 3601
        for p in _files(tmp_path):
            if p.is_file():
                os.utime(p, (old, old))
        meta = next(p for p in _files(tmp_path) if p.suffix == ".json")
        meta.write_text(json.dumps({**json.loads(meta.read_text()), "kept_at": old}))
        os.utime(meta, (old, old))
        with pytest.raises(RealbasisError) as err:
            data.upload(first, "w1")
        assert err.value.code == "UI003"
        second = data.keep_upload(b"y" * 1500, "two.csv", "w1")  # room again
        assert data.upload(second, "w1")[1] == "two.csv"
    assert len([p for p in _files(tmp_path) if p.is_file()]) == 2  # the new file + its record


def test_an_upload_from_another_session_cannot_be_added(tmp_path: Path):
    app, store, ws = _app(tmp_path)
    a, b = app.server.test_client(), app.server.test_client()
    deps = _deps(a)
    pending = a.post("/_dash-update-component", json=_upload_body(deps, ws)).get_json()[
        "response"][ids.IN_PENDING]["data"]
    add = dash_requests.find(deps, trigger=f"{ids.IN_ADD}.n_clicks")
    values = {f"{ids.IN_ADD}.n_clicks": 1, f"{ids.IN_PENDING}.data": pending,
              f"{ids.IN_FY_START}.value": 0, f"{ids.IN_KINDS}.data": {},
              f"{ids.WORKSPACE}.data": {"id": ws.id, "version": 1}}
    r = b.post("/_dash-update-component", json=dash_requests.body(add, values))
    assert r.status_code == 200 and "UI003" in r.get_data(as_text=True)
    assert store.current_version(ws.id) == 1
    r = a.post("/_dash-update-component", json=dash_requests.body(add, values))
    assert r.status_code == 200 and "now at version 2" in r.get_data(as_text=True)


# --------------------------------------------------------------------------- 2. proxies


def _write(client: Any, deps: list[dict[str, Any]], ws: Any,
           headers: dict[str, str] | None = None) -> Any:
    dep = dash_requests.find(deps, trigger=f"{ids.IN_NEW_WORKSPACE}.n_clicks")
    return client.post("/_dash-update-component", headers=headers or {}, json=dash_requests.body(
        dep, {f"{ids.IN_NEW_WORKSPACE}.n_clicks": 1, f"{ids.IN_NEW_NAME}.value": "by proxy"}))


@pytest.mark.parametrize("header", sorted(PROXY_HEADERS))
def test_any_proxy_header_means_not_local(tmp_path: Path, header: str):
    app, store, ws = _app(tmp_path)
    client = app.server.test_client()
    deps = _deps(client)
    h = {header: PROXY_HEADERS[header]}
    r = _write(client, deps, ws, h)
    assert r.status_code == 403 and r.get_json()["code"] == "SH006", header
    assert client.get("/", headers=h).status_code == 403
    # the underscore spelling some clients send counts too
    r = _write(client, deps, ws, {header.replace("-", "_"): PROXY_HEADERS[header]})
    assert r.status_code in (403, 200)
    assert len(store.list()) == 1 or r.status_code == 200


def test_the_peer_address_alone_never_makes_an_editor(tmp_path: Path):
    """A default proxy pass rewrites Host to 127.0.0.1 and adds no header: the request
    looks local. Without the explicit local-editing setting nobody edits without the
    token; with it, the same request edits (which is why it is off behind proxies)."""
    on, _store_on, ws_on = _app(tmp_path / "on", local_editing=True)
    deps = _deps(on.server.test_client())
    app, store, ws = _app(tmp_path, local_editing=False)
    client = app.server.test_client()
    r = _write(client, deps, ws, {"Host": "127.0.0.1:8050"})
    assert r.status_code == 403 and r.get_json()["code"] == "SH006"
    page = client.get("/", headers={"Host": "127.0.0.1:8050"})
    assert page.status_code == 403 and "REALBASIS_EDITOR_TOKEN" in page.get_data(as_text=True)
    assert len(store.list()) == 1
    client = on.server.test_client()
    assert _write(client, deps, ws_on, {"Host": "127.0.0.1:8050"}).status_code == 200
    remote = on.server.test_client()
    remote.environ_base["REMOTE_ADDR"] = "192.0.2.7"
    assert _write(remote, deps, ws_on).status_code == 403


def test_serve_turns_local_editing_on_only_on_loopback_without_a_token(tmp_path, monkeypatch):
    import pipeline.commands.serve as serve

    seen: dict[str, str] = {}
    monkeypatch.setattr(serve.shutil, "which", lambda _n: "/bin/true")
    monkeypatch.setattr(serve.os, "execve", lambda _p, _c, env: seen.update(env))
    monkeypatch.delenv("REALBASIS_LOCAL_EDITING", raising=False)
    monkeypatch.delenv("REALBASIS_EDITOR_TOKEN", raising=False)
    from pipeline.cli import main

    main(["serve", "--data-dir", str(tmp_path)])
    assert seen["REALBASIS_LOCAL_EDITING"] == "1"
    seen.clear()
    monkeypatch.setenv("REALBASIS_EDITOR_TOKEN", TOKEN)
    main(["serve", "--host", "0.0.0.0", "--data-dir", str(tmp_path)])
    assert seen["REALBASIS_LOCAL_EDITING"] == "0"
    seen.clear()
    monkeypatch.delenv("REALBASIS_EDITOR_TOKEN")
    monkeypatch.setenv("REALBASIS_LOCAL_EDITING", "0")  # said explicitly: kept
    main(["serve", "--data-dir", str(tmp_path)])
    assert seen["REALBASIS_LOCAL_EDITING"] == "0"


# --------------------------------------------------------------------------- 5. token, session


def test_a_short_editor_token_is_refused_at_start(tmp_path: Path, monkeypatch, capsys):
    from dashboard.app import create_app
    from pipeline.cli import main

    for short in ("a", "1234", "x" * 31):
        with pytest.raises(RealbasisError) as err:
            create_app(Settings(data_dir=str(tmp_path), editor_token=short, host="0.0.0.0"))
        assert err.value.code == "SH008"
    monkeypatch.setenv("REALBASIS_EDITOR_TOKEN", "1234")
    assert main(["serve", "--host", "0.0.0.0", "--data-dir", str(tmp_path)]) == 2
    assert "[SH008]" in capsys.readouterr().err


def test_wrong_tokens_are_throttled_across_workers_without_sleeping(tmp_path: Path, monkeypatch):
    def no_sleep(_s: float) -> None:
        raise AssertionError("a worker slept")

    monkeypatch.setattr(time, "sleep", no_sleep)
    app, store, _ws = _app(tmp_path, editor_token=TOKEN, host="0.0.0.0")
    # a second app on the same store stands in for another worker
    from dashboard.app import create_app

    other = create_app(Settings(data_dir=str(tmp_path / "data"), demo=False,
                                editor_token=TOKEN, host="0.0.0.0"), store=store)
    clients = [a.server.test_client() for a in (app, other)]
    for c in clients:
        c.environ_base["REMOTE_ADDR"] = "192.0.2.7"
    codes = []
    for i in range(10):
        r = clients[i % 2].post("/editor-login", data={"token": f"guess-{i}"})
        codes.append(r.status_code)
    assert codes[:9] == [403] * 9 and codes[9] == 429
    r = clients[1].post("/editor-login", data={"token": TOKEN})  # even the right one, now
    assert r.status_code == 429 and int(r.headers["Retry-After"]) > 0
    bearer = {"Authorization": f"Bearer {TOKEN}"}
    r = clients[0].get("/_dash-layout", headers={**bearer, "Accept": "application/json"})
    assert r.status_code == 429 and r.get_json()["code"] == "SH009"
    # another client is not held up
    elsewhere = app.server.test_client()
    elsewhere.environ_base["REMOTE_ADDR"] = "198.51.100.9"  # TEST-NET-2
    assert elsewhere.get("/_dash-layout", headers=bearer).status_code == 200
    # when the window has passed, the right token works again
    import sqlalchemy as sa

    from pipeline.store import throttle_table

    with store.engine.begin() as conn:
        conn.execute(sa.update(throttle_table).values(
            window_start=dt.datetime.now(dt.UTC) - dt.timedelta(hours=1)))
    assert clients[0].post("/editor-login", data={"token": TOKEN}).status_code == 302


def _cookie(client: Any) -> str:
    c = client.get_cookie("realbasis_session")
    assert c is not None
    return c.value


def _session_of(app: Any, cookie: str) -> dict[str, Any]:
    ser = app.server.session_interface.get_signing_serializer(app.server)
    return ser.loads(cookie)


def test_editor_sessions_are_random_server_side_and_end_at_sign_out(tmp_path: Path):
    app, store, _ws = _app(tmp_path, editor_token=TOKEN, host="0.0.0.0")
    a, b = app.server.test_client(), app.server.test_client()
    assert a.get("/").status_code == 302  # to the sign-in page
    assert a.post("/editor-login", data={"token": TOKEN}).status_code == 302
    assert b.post("/editor-login", data={"token": TOKEN}).status_code == 302
    sa, sb = _session_of(app, _cookie(a)), _session_of(app, _cookie(b))
    assert sa["rb_sid"] != sb["rb_sid"]  # random per sign-in ...
    token_hash = hashlib.sha256(TOKEN.encode()).hexdigest()
    for cookie in (_cookie(a), _cookie(b)):  # ... and the token's hash is nowhere in it
        assert token_hash not in json.dumps(_session_of(app, cookie))
    assert "rb_editor" not in sa
    assert a.get("/_dash-layout").status_code == 200
    stolen = _cookie(a)
    page = a.get("/editor-logout")
    assert page.status_code == 200 and "Sign out" in page.get_data(as_text=True)
    assert a.post("/editor-logout").status_code == 200
    assert a.get("/_dash-layout").status_code == 403
    replay = app.server.test_client()  # the cookie from before the sign-out, replayed
    replay.set_cookie("realbasis_session", stolen)
    r = replay.get("/_dash-layout", headers={"Accept": "application/json"})
    assert r.status_code == 403 and r.get_json()["code"] == "SH006"
    assert b.get("/_dash-layout").status_code == 200  # the other session goes on
    # the server can end every session, and a new token ends them too
    assert store.close_sessions("editor") == 1
    assert b.get("/_dash-layout").status_code == 403
    c = app.server.test_client()
    assert c.post("/editor-login", data={"token": TOKEN}).status_code == 302
    from dashboard.app import create_app

    rotated = create_app(Settings(data_dir=str(tmp_path / "data"), demo=False, host="0.0.0.0",
                                  editor_token=TOKEN + "-rotated"), store=store)
    moved = rotated.server.test_client()
    moved.set_cookie("realbasis_session", _cookie(c))
    assert moved.get("/_dash-layout").status_code == 403


def test_a_signed_in_editor_has_a_sign_out_button(tmp_path: Path):
    app, _store, _ws = _app(tmp_path, editor_token=TOKEN, host="0.0.0.0")
    c = app.server.test_client()
    c.post("/editor-login", data={"token": TOKEN})
    layout = c.get("/_dash-layout").get_data(as_text=True)
    assert '"action":"editor-logout"' in layout and '"method":"post"' in layout


def _set_cookie(r: Any) -> str:
    return "; ".join(v for k, v in r.headers.items() if k.lower() == "set-cookie")


def test_the_session_cookie_is_secure_when_the_request_came_over_https(tmp_path: Path):
    app, _store, _ws = _app(tmp_path, editor_token=TOKEN, host="0.0.0.0")
    c = app.server.test_client()
    r = c.post("/editor-login", data={"token": TOKEN}, base_url="https://localhost")
    assert "Secure" in _set_cookie(r) and "HttpOnly" in _set_cookie(r)
    r = app.server.test_client().post("/editor-login", data={"token": TOKEN})
    assert "Secure" not in _set_cookie(r)
    # X-Forwarded-Proto is believed only from a configured proxy
    r = app.server.test_client().post("/editor-login", data={"token": TOKEN},
                                      headers={"X-Forwarded-Proto": "https"})
    assert "Secure" not in _set_cookie(r)
    app, _store, _ws = _app(tmp_path / "p", editor_token=TOKEN, host="0.0.0.0",
                            trusted_proxies="127.0.0.1")
    r = app.server.test_client().post("/editor-login", data={"token": TOKEN},
                                      headers={"X-Forwarded-Proto": "https",
                                               "X-Forwarded-For": "203.0.113.5"})
    assert "Secure" in _set_cookie(r)


def test_throttling_behind_a_trusted_proxy_counts_the_client_not_the_proxy(tmp_path: Path):
    app, _store, _ws = _app(tmp_path, editor_token=TOKEN, host="0.0.0.0",
                            trusted_proxies="127.0.0.1")
    c = app.server.test_client()
    for i in range(10):
        c.post("/editor-login", data={"token": f"bad-{i}"},
               headers={"X-Forwarded-For": "203.0.113.5"})  # TEST-NET-3
    assert c.post("/editor-login", data={"token": TOKEN},
                  headers={"X-Forwarded-For": "203.0.113.5"}).status_code == 429
    assert c.post("/editor-login", data={"token": TOKEN},
                  headers={"X-Forwarded-For": "203.0.113.6"}).status_code == 302


# --------------------------------------------------------------------------- 6. low


def test_origin_null_and_foreign_origins_are_refused(tmp_path: Path):
    app, store, ws = _app(tmp_path)
    c = app.server.test_client()
    deps = _deps(c)
    for origin in ("null", "http://attacker.example", "file://", ""):
        r = _write(c, deps, ws, {"Origin": origin})
        assert r.status_code == 403, origin
    assert len(store.list()) == 1
    assert _write(c, deps, ws, {"Origin": "http://localhost"}).status_code == 200


@pytest.mark.parametrize("ref", [
    {"id": "w", "version": 10**30}, {"id": "w", "version": -1}, {"id": "w", "version": 1e30},
    {"id": "w", "version": "many"}, {"id": 5, "version": 1}, {"id": "../../etc", "version": 1},
    {"id": "x" * 65, "version": 1}, "a string", [1, 2], {"id": "w", "version": True},
])
def test_absurd_workspace_references_are_a_coded_400(tmp_path: Path, ref: Any):
    app, _store, _ws = _app(tmp_path)
    c = app.server.test_client()
    dep = dash_requests.find(_deps(c), output=f"{ids.WORKSPACE_LABEL}.children")
    r = c.post("/_dash-update-component",
               json=dash_requests.body(dep, {f"{ids.WORKSPACE}.data": ref}))
    assert r.status_code == 400, r.get_data(as_text=True)[:300]
    assert r.get_json()["code"] == "UI701"


def test_workspace_reference_parsing():
    assert WorkspaceRef.from_dict(None) is None and WorkspaceRef.from_dict({}) is None
    assert WorkspaceRef.from_dict({"id": "abc", "version": 3}) == WorkspaceRef("abc", 3)
    assert WorkspaceRef.from_dict({"id": "abc"}) == WorkspaceRef("abc", 0)
    assert WorkspaceRef.from_dict({"id": "abc", "version": 3.0}) == WorkspaceRef("abc", 3)


def test_requests_the_dashboard_does_not_answer_are_a_coded_400(tmp_path: Path):
    app, _store, _ws = _app(tmp_path)
    c = app.server.test_client()
    for body in ({"output": "no-such.children", "inputs": []}, {"inputs": []}, [1],
                 {"output": 5}):
        r = c.post("/_dash-update-component", json=body)
        assert r.status_code == 400 and r.get_json()["code"] == "UI702", body
    r = c.post("/_dash-update-component", data=b"{not json", content_type="application/json")
    assert r.status_code == 400


def test_the_request_size_limit_is_near_four_thirds_of_the_upload_limit(tmp_path: Path):
    from dashboard.app import REQUEST_ALLOWANCE

    app, _store, ws = _app(tmp_path, max_upload_bytes=30_000)
    limit = app.server.config["MAX_CONTENT_LENGTH"]
    assert 40_000 <= limit <= 40_000 + REQUEST_ALLOWANCE + 4 and REQUEST_ALLOWANCE <= 64 * 1024
    c = app.server.test_client()
    deps = _deps(c)
    ok = c.post("/_dash-update-component",  # a file of exactly the limit goes through
                json=_upload_body(deps, ws, data=b"period,a\n" + b"2024,1\n" * 4284))
    assert ok.status_code == 200 and ok.get_json()["response"][ids.IN_PENDING]["data"]
    big = _upload_body(deps, ws, data=b"z" * (30_000 + REQUEST_ALLOWANCE))
    r = c.post("/_dash-update-component", json=big)
    assert r.status_code == 200 and "UI001" in r.get_data(as_text=True)  # the 413 answer
    assert "sideUpdate" in r.get_json()


def test_a_refused_background_job_answers_403(tmp_path: Path):
    """A background job that writes but is not registered (a stand-in for a forgotten
    one): the store refuses the reviewer inside the job; collecting its result answers
    403, not 200. (Registered write jobs are refused before they start: see
    tests/test_security_replay.py.)"""
    from dash import Input, Output

    app, store, ws = _app(tmp_path)

    @app.callback(Output("probe-bg-out", "children"), Input("probe-bg-btn", "n_clicks"),
                  background=True, prevent_initial_call=True)
    def _probe(n: Any) -> Any:
        with contextlib.suppress(RealbasisError):  # swallowed: refused all the same
            store.record_upload(ws.id, "x.csv", 1, "0" * 64)
        return f"done {n}"

    token, _ = store.create_link(ws.id)
    headers = {"X-Realbasis-Review": token}
    body = {"output": "probe-bg-out.children",
            "outputs": {"id": "probe-bg-out", "property": "children"},
            "inputs": [{"id": "probe-bg-btn", "property": "n_clicks", "value": 1}],
            "changedPropIds": ["probe-bg-btn.n_clicks"], "state": []}
    for who, want in ((headers, 403), ({}, 200)):
        c = app.server.test_client()
        r = c.post("/_dash-update-component", json=body, headers=who)
        assert r.status_code == 200, r.get_data(as_text=True)
        handles = r.get_json()
        deadline = time.monotonic() + 60
        while True:
            r = c.post(f"/_dash-update-component?cacheKey={handles['cacheKey']}"
                       f"&job={handles['job']}", json=body, headers=who)
            if r.status_code == 403 or (
                    r.status_code != 204 and "response" in (r.get_json(silent=True) or {})):
                break
            assert time.monotonic() < deadline, "job did not finish"
            time.sleep(0.2)
        assert r.status_code == want, r.get_data(as_text=True)[:300]
    assert [e.event for e in store.audit(ws.id)].count("upload") == 1  # the editor's only


def test_an_error_in_a_callback_is_a_coded_message_on_the_page(tmp_path: Path, caplog):
    from dash import Input, Output

    app, _store, _ws = _app(tmp_path)

    @app.callback(Output("probe-err-out", "children"), Input("probe-err-btn", "n_clicks"))
    def _boom(_n: Any) -> Any:
        raise ZeroDivisionError("a bug")

    body = {"output": "probe-err-out.children",
            "outputs": {"id": "probe-err-out", "property": "children"},
            "inputs": [{"id": "probe-err-btn", "property": "n_clicks", "value": 1}],
            "changedPropIds": ["probe-err-btn.n_clicks"], "state": []}
    r = app.server.test_client().post("/_dash-update-component", json=body)
    assert r.status_code == 200
    side = json.dumps(r.get_json()["sideUpdate"][ids.PAGE_PROBLEM])
    assert "UI706" in side and "ZeroDivisionError" not in side and "Traceback" not in side
    assert any("ZeroDivisionError" in (rec.exc_text or "") for rec in caplog.records)


def test_a_revoked_link_stays_a_reviewer_session(tmp_path: Path):
    app, store, ws = _app(tmp_path)
    reviewer, info = _reviewer(app, store, ws)
    deps = _deps(reviewer)
    store.revoke_link(info.id)
    for _ in range(3):  # reloads on the serving machine
        page = reviewer.get("/")
        assert page.status_code == 403 and "no longer valid" in page.get_data(as_text=True)
        layout = reviewer.get("/_dash-layout")
        assert layout.status_code == 403 and "SH002" in layout.get_data(as_text=True)
        r = _write(reviewer, deps, ws)
        assert r.status_code == 403 and r.get_json()["code"] == "SH002"
    assert len(store.list()) == 1


def test_dataclass_fields_unchanged_for_other_callers():
    # AccessContext gained a session; positional use elsewhere keeps working
    ctx = AccessContext("reviewer", "w", "reviewer 1", "link")
    assert ctx.session == "" and dataclasses.replace(ctx, session="s").session == "s"


def test_a_job_ending_between_two_looks_still_delivers_its_result(tmp_path: Path):
    """Dash looks into the cache, then asks whether the job still runs; a job that ends
    in between was taken for cancelled (the page got nothing: a silent no-op), and a job
    process gone before its children were listed raised psutil.NoSuchProcess (found by the
    fuzz test under load)."""
    import diskcache

    from dashboard.jobs import AccessDiskcacheManager

    manager = AccessDiskcacheManager(diskcache.Cache(str(tmp_path / "jobs")))
    gone = 2**22 + 12345  # beyond the default pid_max: no such process
    manager.handle.set("k", "result")
    looks = iter([manager.UNDEFINED])
    from dash import DiskcacheManager

    original = DiskcacheManager.get_result

    def first_empty(self: Any, key: Any, job: Any) -> Any:
        return next(looks, None) or original(self, key, job)

    import unittest.mock

    with unittest.mock.patch.object(DiskcacheManager, "get_result", first_empty):
        assert manager.get_result("k", gone) == "result"
    manager.terminate_job(gone)  # no NoSuchProcess
    assert manager.job_running(gone) is False
