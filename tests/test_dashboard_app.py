"""The app boots, its layout serialises and its callbacks answer over HTTP (Flask test
client, no browser)."""

from __future__ import annotations

import json
from pathlib import Path
from typing import Any

import pytest
from dash_requests import value_for

from dashboard import ids
from dashboard.app import create_app
from dashboard.context import context
from dashboard.data import DEMO_NAME, DataAccess, WorkspaceRef
from dashboard.screens import discover
from pipeline.cli import main
from pipeline.settings import Settings


def _outputs(dep: dict[str, Any]) -> list[str]:
    out = dep["output"]
    return out.strip(".").split("...") if out.startswith("..") else [out]


def call(client: Any, deps: list[dict[str, Any]], output: str, values: dict[str, Any],
         changed: str) -> dict[str, Any]:
    """POST one callback, found by one of its outputs ('id.prop'), with input and state
    values by 'id.prop'. Returns the JSON response."""
    dep = next(d for d in deps if output in _outputs(d))
    outs = [{"id": o.split(".")[0], "property": o.split(".")[1]} for o in _outputs(dep)]
    body = {
        "output": dep["output"],
        "outputs": outs if len(outs) > 1 else outs[0],
        "inputs": [{**i, "value": value_for(values, i)} for i in dep["inputs"]],
        "state": [{**s, "value": value_for(values, s)} for s in dep["state"]],
        "changedPropIds": [changed],
    }
    r = client.post("/_dash-update-component", json=body)
    assert r.status_code == 200, r.data[:500]
    return json.loads(r.data)


@pytest.fixture(scope="module")
def app(tmp_path_factory: pytest.TempPathFactory) -> Any:
    return create_app(Settings(data_dir=str(tmp_path_factory.mktemp("app")),
                               max_upload_bytes=10_000, local_editing=True))


@pytest.fixture(scope="module")
def client(app: Any) -> Any:
    return app.server.test_client()


@pytest.fixture(scope="module")
def deps(client: Any) -> list[dict[str, Any]]:
    r = client.get("/_dash-dependencies")
    assert r.status_code == 200
    return json.loads(r.data)


def test_app_boots_and_serves_the_page(client: Any):
    r = client.get("/")
    assert r.status_code == 200
    assert b"realbasis" in r.data


def test_layout_serialises_with_every_screen(client: Any):
    r = client.get("/_dash-layout")
    assert r.status_code == 200
    text = r.data.decode()
    layout = json.loads(text)
    assert layout["type"] == "Div"
    for key in ("intake", "shelf", "real", "spread", "revisions"):
        assert ids.screen_container(key) in text and ids.nav_button(key) in text
    for caution in ("not official statistics", "Preliminary index values will be revised"):
        assert caution in text


def test_dependencies_cover_the_screens(deps: list[dict[str, Any]]):
    outputs = {o for d in deps for o in _outputs(d)}
    for needed in (f"{ids.RT_FIGURE}.figure", f"{ids.SP_VERDICT}.children",
                   f"{ids.RV_FIGURE}.figure", f"{ids.SH_TABLE}.children",
                   f"{ids.IN_SERIES_TABLE}.children", f"{ids.WORKSPACE}.data"):
        assert needed in outputs, needed
    background = [d for d in deps if f"{ids.IN_SERIES_TABLE}.children" in _outputs(d)]
    assert background and background[0].get("background"), "intake reading runs as a background job"


def test_settings_reach_the_server(app: Any):
    assert app.server.secret_key
    assert app.server.config["MAX_CONTENT_LENGTH"] > 10_000
    assert context(app).settings.max_upload_bytes == 10_000


def test_callbacks_answer_over_http(client: Any, deps: list[dict[str, Any]]):
    # the page opens on the demo workspace
    got = call(client, deps, f"{ids.WORKSPACE}.data", {f"{ids.URL}.search": ""}, f"{ids.URL}.search")
    ref = got["response"][ids.WORKSPACE]["data"]
    assert ref["id"] and ref["version"] >= 1
    values = {f"{ids.WORKSPACE}.data": ref, f"{ids.RT_SERIES}.value": "Apparel revenue",
              f"{ids.RT_DEFLATOR}.value": "Chained consumer index", f"{ids.RT_BASE}.value": "2024",
              f"{ids.RT_FREQ}.value": "auto", f"{ids.RT_SA}.value": []}
    got = call(client, deps, f"{ids.RT_FIGURE}.figure", values, f"{ids.RT_DEFLATOR}.value")
    title = got["response"][ids.RT_TITLE]["children"]
    assert "constant 2024 dollars" in title and "Chained consumer index" in title
    values[f"{ids.RT_DEFLATOR}.value"] = "Fixed-basket consumer index"
    again = call(client, deps, f"{ids.RT_FIGURE}.figure", values, f"{ids.RT_DEFLATOR}.value")
    assert "Fixed-basket" in again["response"][ids.RT_TITLE]["children"]
    # the spread verdict
    sp = {f"{ids.WORKSPACE}.data": ref, f"{ids.SP_SERIES}.value": "Rail operations",
          f"{ids.SP_DEFLATORS}.value": ["Fixed-basket consumer index", "Chained consumer index",
                                        "Government consumption deflator"],
          f"{ids.SP_BASE}.value": "FY2025", f"{ids.SP_FREQ}.value": "auto",
          f"{ids.SP_MEASURE}.value": "cagr"}
    got = call(client, deps, f"{ids.SP_VERDICT}.children", sp, f"{ids.SP_DEFLATORS}.value")
    assert "deflator" in json.dumps(got["response"][ids.SP_VERDICT]["children"])


def test_oversized_upload_gets_a_clear_message(client: Any, deps: list[dict[str, Any]]):
    import base64

    contents = "data:text/csv;base64," + base64.b64encode(b"z" * 12_000).decode()
    got = call(client, deps, f"{ids.IN_PENDING}.data",
               {f"{ids.IN_UPLOAD}.contents": contents, f"{ids.IN_UPLOAD}.filename": "big.csv"},
               f"{ids.IN_UPLOAD}.contents")
    status = json.dumps(got["response"][ids.IN_STATUS]["children"])
    assert "UI001" in status and "largest accepted" in status
    assert got["response"][ids.IN_PENDING]["data"] is None


@pytest.mark.slow
def test_serve_command_runs_the_dashboard(tmp_path: Path):
    """`realbasis serve --workers 1` answers on the chosen port (then is stopped)."""
    import os
    import signal
    import socket
    import subprocess
    import sys
    import time
    import urllib.request

    with socket.socket() as s:
        s.bind(("127.0.0.1", 0))
        port = s.getsockname()[1]
    proc = subprocess.Popen([sys.executable, "-m", "pipeline.cli", "serve", "--workers", "1",
                             "--port", str(port), "--data-dir", str(tmp_path)],
                            stdout=subprocess.PIPE, stderr=subprocess.STDOUT,
                            start_new_session=True)
    try:
        deadline = time.monotonic() + 60
        while True:
            try:
                with urllib.request.urlopen(f"http://127.0.0.1:{port}/", timeout=5) as r:
                    assert r.status == 200 and b"realbasis" in r.read()
                    break
            except OSError:
                assert proc.poll() is None, proc.stdout.read().decode() if proc.stdout else ""
                assert time.monotonic() < deadline, "serve did not answer"
                time.sleep(0.3)
    finally:
        if proc.poll() is None:
            os.killpg(proc.pid, signal.SIGTERM)
        proc.wait(20)
        if proc.stdout:
            proc.stdout.close()


def test_serve_command_refuses_zero_workers(capsys: pytest.CaptureFixture[str], tmp_path: Path):
    assert main(["serve", "--workers", "0", "--data-dir", str(tmp_path)]) == 2
    assert "CL501" in capsys.readouterr().err


def test_request_cut_off_for_its_size_still_tells_the_user(app: Any, client: Any):
    """A file far over the limit makes a request Flask cuts off (MAX_CONTENT_LENGTH)
    before any callback runs; the answer must still carry the UI001 message naming the
    limit, in a form Dash's renderer applies (a side update of the intake's status)."""
    limit = app.server.config["MAX_CONTENT_LENGTH"]
    body = b'{"output": "in-pending.data", "inputs": [{"id": "in-upload", "value": "' \
        + b"A" * (limit + 10) + b'"}]}'
    r = client.post("/_dash-update-component", data=body, content_type="application/json")
    assert r.status_code == 200
    got = json.loads(r.data)
    assert got["multi"] is True and got["response"] == {}  # no output changed
    status = json.dumps(got["sideUpdate"][ids.IN_STATUS]["children"])
    assert "UI001" in status and "9.8 kB" in status and "File refused" in status


def test_intake_knows_the_upload_limit(client: Any):
    layout = json.dumps(json.loads(client.get("/_dash-layout").get_data(as_text=True)))
    assert '"data-max-bytes": "10000"' in layout and '"data-limit-text": "9.8 kB"' in layout
    r = client.get("/assets/upload-limit.js")
    try:
        assert r.status_code == 200 and b"data-max-bytes" in r.get_data()
    finally:
        r.close()


@pytest.mark.slow
def test_serve_with_gunicorn_leaves_no_server_behind_when_stopped(tmp_path: Path):
    """`realbasis serve --workers 2` hands over to gunicorn: a SIGTERM sent to the command
    stops the server and its workers (none is left answering on the port)."""
    import signal
    import socket
    import subprocess
    import sys
    import time
    import urllib.request

    with socket.socket() as s:
        s.bind(("127.0.0.1", 0))
        port = s.getsockname()[1]
    proc = subprocess.Popen([sys.executable, "-m", "pipeline.cli", "serve", "--workers", "2",
                             "--port", str(port), "--data-dir", str(tmp_path)],
                            stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL)
    try:
        deadline = time.monotonic() + 90
        while True:
            try:
                with urllib.request.urlopen(f"http://127.0.0.1:{port}/", timeout=5) as r:
                    assert r.status == 200
                    break
            except OSError:
                assert proc.poll() is None, "serve exited before answering"
                assert time.monotonic() < deadline, "serve did not answer"
                time.sleep(0.3)
        proc.send_signal(signal.SIGTERM)  # to the command's own pid only
        assert proc.wait(30) == 0
        with pytest.raises(OSError):
            socket.create_connection(("127.0.0.1", port), 2).close()
    finally:
        if proc.poll() is None:
            proc.kill()
            proc.wait(10)


def test_screens_are_discovered_in_order():
    keys = [s.key for s in discover()]
    assert keys[:6] == ["intake", "shelf", "real", "budget", "spread", "revisions"]


def test_address_keeps_other_parameters():
    from dashboard.app import address_for

    assert address_for("?review=abc", WorkspaceRef("w9", 2)) == "?review=abc&ws=w9"
    from dash import no_update

    assert address_for("?ws=w9", WorkspaceRef("w9", 3)) is no_update


def test_without_the_demo_the_latest_workspace_opens(tmp_path: Path):
    from dashboard.app import default_resolver

    data = DataAccess(Settings(data_dir=str(tmp_path), demo=False))
    resolve = default_resolver(data)
    first = resolve("")
    assert data.load(first).name == "My workspace"
    assert resolve("") == first  # not a new one each time
    other = data.create("Budget FY2026")
    assert resolve(f"?ws={other.id}").id == other.id
    assert resolve("?ws=unknown").id in {first.id, other.id}
    assert not any(w.name == DEMO_NAME for w in data.store.list())


def _by_id(tree: Any) -> dict[str, dict[str, Any]]:
    """Every component's props in a serialised layout, by id (store data not entered)."""
    found: dict[str, dict[str, Any]] = {}

    def walk(node: Any) -> None:
        if isinstance(node, list):
            for n in node:
                walk(n)
        elif isinstance(node, dict) and "props" in node and "type" in node:
            props = node["props"]
            if isinstance(props.get("id"), str):
                found[props["id"]] = props
            for k, v in props.items():
                if k != "data":
                    walk(v)

    walk(tree)
    return found


def _no_none(x: Any) -> Any:
    if isinstance(x, dict):
        return {k: _no_none(v) for k, v in x.items() if v is not None and v != {}}
    if isinstance(x, list):
        return [_no_none(v) for v in x]
    return x


def _opened(client: Any, cookie: str | None, referer: bool = True) -> dict[str, dict[str, Any]]:
    from urllib.parse import quote

    headers = {"Referer": "http://localhost/?x=1"} if referer else {}
    if cookie is None:
        client.delete_cookie("rb_opening")
    else:
        client.set_cookie("rb_opening", quote(cookie))
    r = client.get("/_dash-layout", headers=headers)
    assert r.status_code == 200
    return _by_id(json.loads(r.data))


def test_a_page_opens_with_its_screen_computed_as_the_callbacks_would(client: Any, deps: Any):
    # dashboard.app.opening: the layout request names the page's address (Referer: the
    # workspace; the rb_opening cookie from assets/shell.js: the #screen and its choices),
    # and the layout comes with that screen computed, so a first load runs no callback
    # chain. What it holds must be what the callbacks give for the same choices.
    page = _opened(client, "real")
    ws = page[ids.WORKSPACE]["data"]
    gate = page[ids.screen_ref("real")]["data"]
    assert gate == {**ws, "opening": True, "query": ""}
    assert page[ids.SCREEN]["data"] == "real"
    assert page[ids.screen_container("real")].get("hidden") is False
    assert page[ids.screen_container("intake")].get("hidden") is True
    assert "real" not in page[ids.SECTIONS]["data"]  # on the page, not held for later
    assert "Workspace" in json.dumps(page[ids.WORKSPACE_LABEL]["children"])
    title = page[ids.RT_TITLE]["children"]
    assert "constant" in title and "dollars" in title

    def v(cid: str, prop: str = "value") -> Any:
        return page[cid].get(prop)

    values = {f"{ids.WORKSPACE}.data": ws, f"{ids.URL}.hash": "#real"}
    opts = call(client, deps, f"{ids.RT_SERIES}.options", values, f"{ids.screen_ref('real')}.data")
    got = opts["response"]
    assert got[ids.RT_SERIES]["value"] == v(ids.RT_SERIES)
    assert got[ids.RT_BASE]["value"] == v(ids.RT_BASE)
    chosen = {f"{cid}.value": v(cid) for cid in (ids.RT_SERIES, ids.RT_BASE, ids.RT_FREQ,
                                                 ids.RT_INTERP, ids.RT_OUTLAY)}
    defl = call(client, deps, f"{ids.RT_DEFLATOR}.options", {**values, **chosen},
                f"{ids.RT_BASE}.value")["response"]
    assert defl[ids.RT_DEFLATOR]["value"] == v(ids.RT_DEFLATOR)
    assert defl[ids.RT_DEFLATOR]["options"] == v(ids.RT_DEFLATOR, "options")
    computed = call(client, deps, f"{ids.RT_TITLE}.children", {
        **values, **chosen, f"{ids.RT_DEFLATOR}.value": v(ids.RT_DEFLATOR),
        f"{ids.RT_SA}.value": v(ids.RT_SA), f"{ids.RT_CHAIN}.value": v(ids.RT_CHAIN),
        f"{ids.RT_BASIS}.value": v(ids.RT_BASIS), f"{ids.RT_PAIRS_STAMP}.data": 1},
        f"{ids.RT_DEFLATOR}.value")["response"]
    assert computed[ids.RT_TITLE]["children"] == title
    # (the layout's encoding may keep an empty title, {}, that the callback's leaves out)
    assert _no_none(computed[ids.RT_FIGURE]["figure"]) == _no_none(v(ids.RT_FIGURE, "figure"))
    assert computed[ids.RT_GROWTH]["children"] == v(ids.RT_GROWTH, "children")

    # the address's choices are applied by the server too
    other = next(o["value"] for o in v(ids.RT_DEFLATOR, "options")
                 if not o.get("disabled") and o["value"] != v(ids.RT_DEFLATOR))
    asked = _opened(client, f"real?deflator={other}&base=2019")
    assert asked[ids.RT_DEFLATOR]["value"] == other
    assert "constant 2019 dollars" in asked[ids.RT_TITLE]["children"]
    assert asked[ids.screen_ref("real")]["data"]["query"] == f"deflator={other}&base=2019"


def test_a_page_opens_without_a_computed_screen_when_its_address_is_unknown(client: Any):
    # no Referer (or another site's): the shell's _workspace callback decides, as before
    page = _opened(client, "real", referer=False)
    assert page[ids.WORKSPACE].get("data") is None
    assert page[ids.screen_ref("real")].get("data") is None
    # a cookie naming no screen: the first screen, which computes nothing at opening
    page = _opened(client, "nonsense?x=<b>")
    assert page[ids.SCREEN]["data"] == discover()[0].key
    assert page[ids.WORKSPACE]["data"]["id"]
    assert all(page[ids.screen_ref(s.key)].get("data") is None for s in discover())


def test_a_deflator_base_or_frequency_change_is_one_round_trip(deps: list[dict[str, Any]]):
    # Issue 12 (fast interactions): on Real terms a new deflator, base or "Show as" runs
    # one server callback, which offers the pickers again where they depend on it and
    # computes with what they then hold; nothing else on the server waits for it.
    for prop in (f"{ids.RT_DEFLATOR}.value", f"{ids.RT_BASE}.value", f"{ids.RT_FREQ}.value"):
        server = [d for d in deps if d.get("clientside_function") is None
                  and prop in {f"{i['id']}.{i['property']}" for i in d["inputs"]}]
        assert len(server) == 1, (prop, [d["output"] for d in server])
        assert f"{ids.RT_TITLE}.children" in server[0]["output"]
