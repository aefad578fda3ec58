"""Proxy headers, the editor token and sessions against a real gunicorn with two workers
(what tests/test_security_http.py checks in process, here through the real server and
across worker processes).

Proxy header names: those common reverse proxies, load balancers and CDNs add (RFC 7239
``Forwarded``, RFC 9110 ``Via``, the ``X-Forwarded-*`` family, vendors' client-address
headers; common practice, from memory).
"""

from __future__ import annotations

from collections.abc import Iterator
from pathlib import Path
from typing import Any

import dash_requests
import pytest
import requests
import served

from dashboard import ids

pytestmark = pytest.mark.slow

TOKEN = "gunicorn-test-editor-token-0123456789-abcdef"
PROXY_HEADERS = {
    "X-Forwarded-For": "192.0.2.7", "X-Forwarded-Host": "127.0.0.1", "X-Forwarded-Proto": "https",
    "Forwarded": "for=192.0.2.7", "X-Real-IP": "192.0.2.7", "Via": "1.1 proxy",
    "CF-Connecting-IP": "192.0.2.7", "True-Client-IP": "192.0.2.7", "X-Client-IP": "192.0.2.7",
    "X-Cluster-Client-IP": "192.0.2.7", "Fastly-Client-IP": "192.0.2.7",
    "X-Original-Forwarded-For": "192.0.2.7",
}


def _new_workspace_body(deps: list[dict[str, Any]]) -> dict[str, Any]:
    dep = dash_requests.find(deps, trigger=f"{ids.IN_NEW_WORKSPACE}.n_clicks")
    return dash_requests.body(dep, {f"{ids.IN_NEW_WORKSPACE}.n_clicks": 1,
                                    f"{ids.IN_NEW_NAME}.value": "through a proxy"})


@pytest.fixture(scope="module")
def deps(tmp_path_factory: pytest.TempPathFactory) -> list[dict[str, Any]]:
    from dashboard.app import create_app
    from pipeline.settings import Settings

    app = create_app(Settings(data_dir=str(tmp_path_factory.mktemp("deps")), demo=False,
                              local_editing=True))
    return app.server.test_client().get("/_dash-dependencies").get_json()


@pytest.fixture(scope="module")
def local(tmp_path_factory: pytest.TempPathFactory) -> Iterator[served.Server]:
    server = served.start(tmp_path_factory.mktemp("local"),
                          {"REALBASIS_LOCAL_EDITING": "1", "REALBASIS_DEMO": "0"})
    yield server
    server.stop()
    assert "Traceback" not in server.log_text()


def _workspaces(server: served.Server) -> int:
    from pipeline.store import WorkspaceStore

    data = server.log.parent
    with WorkspaceStore(f"sqlite:///{data / 'realbasis.sqlite'}") as store:
        return len(store.list())


def test_any_proxy_header_through_gunicorn_means_not_local(local: served.Server,
                                                          deps: list[dict[str, Any]]):
    body = _new_workspace_body(deps)
    for header, value in PROXY_HEADERS.items():
        for _ in range(2):  # both workers
            r = requests.post(local.url + "/_dash-update-component", json=body,
                              headers={header: value}, timeout=30)
            assert r.status_code == 403 and r.json()["code"] == "SH006", header
            page = requests.get(local.url + "/", headers={header: value}, timeout=30)
            assert page.status_code == 403, header
    n = _workspaces(local)
    r = requests.post(local.url + "/_dash-update-component", json=body, timeout=30)
    assert r.status_code == 200  # this machine, no proxy: local editing (setting on)
    assert _workspaces(local) == n + 1


def test_gunicorn_without_the_setting_grants_no_tokenless_editing(
        tmp_path: Path, deps: list[dict[str, Any]]):
    """gunicorn started directly (the Procfile, a proxy set-up): a request that looks
    local — loopback peer, Host 127.0.0.1, no proxy header, as a default proxy pass sends
    it — does not edit."""
    server = served.start(tmp_path / "plain", {"REALBASIS_DEMO": "0"})
    try:
        r = requests.post(server.url + "/_dash-update-component",
                          json=_new_workspace_body(deps),
                          headers={"Host": "127.0.0.1"}, timeout=30)
        assert r.status_code == 403 and r.json()["code"] == "SH006"
        assert requests.get(server.url + "/", timeout=30).status_code == 403
        assert _workspaces(server) == 0
    finally:
        server.stop()
    assert "Traceback" not in server.log_text()


def test_token_throttling_and_sessions_across_workers(tmp_path: Path,
                                                      deps: list[dict[str, Any]]):
    server = served.start(tmp_path / "token", {"REALBASIS_EDITOR_TOKEN": TOKEN,
                                               "REALBASIS_HOST": "0.0.0.0",
                                               "REALBASIS_DEMO": "0"})
    try:
        url = server.url
        # sessions live in the store: a sign-in on one worker holds on every worker
        editor = requests.Session()
        r = editor.post(url + "/editor-login", data={"token": TOKEN}, allow_redirects=False,
                        timeout=30)
        assert r.status_code == 302
        cookie = editor.cookies.get("realbasis_session")
        for _ in range(6):  # new connections: both workers answer some
            r = requests.post(url + "/_dash-update-component", json=_new_workspace_body(deps),
                              cookies={"realbasis_session": cookie}, timeout=30)
            assert r.status_code == 200, r.text[:200]
        assert editor.post(url + "/editor-logout", timeout=30).status_code == 200
        for _ in range(4):
            r = requests.post(url + "/_dash-update-component", json=_new_workspace_body(deps),
                              cookies={"realbasis_session": cookie}, timeout=30)
            assert r.status_code == 403 and r.json()["code"] == "SH006"
        # wrong tokens are counted in the store, whichever worker sees them
        codes = [requests.post(url + "/editor-login", data={"token": f"wrong-{i}"},
                               timeout=30).status_code for i in range(12)]
        assert codes[:9] == [403] * 9 and set(codes[10:]) == {429}
        r = requests.post(url + "/editor-login", data={"token": TOKEN}, timeout=30)
        assert r.status_code == 429 and int(r.headers["Retry-After"]) > 0
        r = requests.get(url + "/_dash-layout", headers={"Authorization": f"Bearer {TOKEN}",
                                                         "Accept": "application/json"},
                         timeout=30)
        assert r.status_code == 429 and r.json()["code"] == "SH009"
    finally:
        server.stop()
    log = server.log_text()
    assert "Traceback" not in log, log[-3000:]


def test_a_short_token_stops_gunicorn_with_a_coded_message(tmp_path: Path):
    with pytest.raises(RuntimeError) as err:
        served.start(tmp_path / "short", {"REALBASIS_EDITOR_TOKEN": "1234",
                                          "REALBASIS_HOST": "0.0.0.0"})
    assert "SH008" in str(err.value)
