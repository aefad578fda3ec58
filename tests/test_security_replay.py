"""Every callback of the dashboard, replayed over HTTP against a real gunicorn (two
workers) on the demo workspace — as a reviewer and as an editor.

How the writing callbacks are known: each is marked with ``@writes(...)`` where it is
defined (dashboard/writes.py) and the access gate refuses those to reviewers by the
callback the request runs (its ``output``). This suite cross-checks that registry
against ``/_dash-dependencies``:

* every registered callback exists, and replayed as a reviewer — with ``changedPropIds``
  naming its inputs, naming nothing, and naming something else — answers 403 ``SH001``
  and changes nothing (workspace versions, links, audit trail, the uploads folder);
* every other callback, replayed as a reviewer, answers without a refusal and changes
  nothing;
* every other callback, replayed as an EDITOR with the same realistic values, changes
  nothing either (exports recording their use in the audit trail aside): a new callback
  that writes but is not registered fails here;
* every registered callback replayed as an editor does change something, which shows
  the values replayed are realistic enough to reach the writing code.

Values: the layout's own props, with a click (``n_clicks`` 1) on every button and choices
that exist in the demo workspace (illustrative data of demo_data/).
"""

from __future__ import annotations

import base64
from collections.abc import Iterator
from pathlib import Path
from typing import Any

import dash_requests
import pytest
import requests
import served
import sqlalchemy as sa

from dashboard import ids
from pipeline.store import WorkspaceStore, audit_table, links_table

pytestmark = pytest.mark.slow

CSV = b"period,Replay sales (USD thousands)\n" + b"".join(
    f"{2022 + i // 12}-{i % 12 + 1:02d},{100 + i}\n".encode() for i in range(36))


@pytest.fixture(scope="module")
def site(tmp_path_factory: pytest.TempPathFactory) -> Iterator[dict[str, Any]]:
    from dashboard.data import DataAccess
    from pipeline.settings import Settings

    data_dir = tmp_path_factory.mktemp("replay")
    data = DataAccess(Settings(data_dir=str(data_dir)))
    ref = data.demo_ref()  # built before the server starts: no first-load writes later
    token, _ = data.store.create_link(ref.id, label="replay")
    server = served.start(data_dir, {"REALBASIS_LOCAL_EDITING": "1"})
    try:
        editor = requests.Session()
        deps = editor.get(server.url + "/_dash-dependencies", timeout=30).json()
        layout = editor.get(server.url + "/_dash-layout", timeout=30).json()
        reviewer = requests.Session()
        assert reviewer.get(f"{server.url}/review/{token}", timeout=30).status_code == 200
        yield {"server": server, "deps": deps, "layout": layout, "ref": ref, "store": data.store,
               "data_dir": data_dir, "editor": editor, "reviewer": reviewer}
        log = server.log_text()
        assert "Traceback" not in log, log[-4000:]
    finally:
        server.stop()
        data.store.close()


def _registry() -> dict[str, str]:
    import tempfile

    from dashboard.app import create_app
    from dashboard.writes import write_callbacks
    from pipeline.settings import Settings

    with tempfile.TemporaryDirectory() as d:
        return write_callbacks(create_app(Settings(data_dir=d, demo=False)))


def _props(node: Any, out: dict[str, Any]) -> None:
    if isinstance(node, dict):
        props = node.get("props")
        if isinstance(props, dict):
            if isinstance(props.get("id"), str):
                for k, v in props.items():
                    if k != "children":
                        out[f"{props['id']}.{k}"] = v
            for v in props.values():
                _props(v, out)
        else:  # plain data, e.g. the store holding screens' contents until first shown
            for v in node.values():
                _props(v, out)
    elif isinstance(node, list):
        for v in node:
            _props(v, out)


def _values(site: dict[str, Any], pending: Any = None) -> dict[str, Any]:
    ref = site["ref"]
    version = site["store"].current_version(ref.id)
    values: dict[str, Any] = {}
    _props(site["layout"], values)
    for key in list(values):
        if key.endswith(".n_clicks"):
            values[key] = 1
    values.update({
        f"{ids.WORKSPACE}.data": {"id": ref.id, "version": version},
        f"{ids.URL}.search": f"?ws={ref.id}", f"{ids.URL}.hash": "",
        f"{ids.IN_UPLOAD}.contents": "data:text/csv;base64," + base64.b64encode(CSV).decode(),
        f"{ids.IN_UPLOAD}.filename": "replay.csv", f"{ids.IN_NEW_NAME}.value": "Replayed",
        f"{ids.IN_PENDING}.data": pending or {"upload": "0" * 32, "filename": "replay.csv"},
        f"{ids.IN_FY_START}.value": 0, f"{ids.IN_KINDS}.data": {},
        f"{ids.IN_KIND_SERIES}.value": "Replay sales", f"{ids.IN_KIND_VALUE}.value": "flow",
        f"{ids.IN_WORKSPACE_LIST}.value": ref.id,
        f"{ids.RT_SERIES}.value": "Apparel revenue", f"{ids.RT_DEFLATOR}.value":
            "Chained consumer index", f"{ids.RT_BASE}.value": "2024", f"{ids.RT_FREQ}.value": "auto",
        f"{ids.RT_SA}.value": [], f"{ids.RT_SA_METHOD}.value": "stl",
        f"{ids.SP_SERIES}.value": "Apparel revenue",
        f"{ids.SP_DEFLATORS}.value": ["Chained consumer index", "Fixed-basket consumer index"],
        f"{ids.SP_BASE}.value": "2024", f"{ids.SP_FREQ}.value": "auto",
        f"{ids.RV_INDEX}.value": "Chained consumer index",
        f"{ids.RV_SERIES}.value": "Apparel revenue", f"{ids.RV_BASE}.value": "2024",
        f"{ids.SH_INDEX}.value": "Chained consumer index",
        f"{ids.SH_TARGET}.value": "Chained consumer index", f"{ids.SH_REBASE_BASE}.value": "2024",
        f"{ids.SX_LINK_LABEL}.value": "replayed", f"{ids.SX_LINK_DAYS}.value": 7,
        f"{ids.BT_OUTLAY_PROGRAM}.value": "Bus operations", f"{ids.BT_OUTLAY}.value": "50, 30, 20",
    })
    return values


def _state(site: dict[str, Any]) -> dict[str, Any]:
    """What a write would change: every workspace's version, the links, the audit trail
    (exports' records of use aside) and the files in the uploads folder."""
    store: WorkspaceStore = site["store"]
    with store.engine.connect() as conn:
        links = conn.execute(sa.select(links_table.c.id, links_table.c.revoked_at)).all()
        audit = conn.execute(sa.select(audit_table.c.id).where(
            audit_table.c.event != "used")).all()
    folder = Path(site["data_dir"]) / "uploads"
    uploads = sorted(str(p.relative_to(folder)) for p in folder.rglob("*") if p.is_file()) \
        if folder.exists() else []
    return {"workspaces": sorted((w.id, w.version) for w in store.list()),
            "links": sorted(map(tuple, links)), "audit": len(audit), "uploads": uploads}


def _send(site: dict[str, Any], who: str, body: dict[str, Any]) -> Any:
    s = site[who]
    url = site["server"].url
    r = s.post(url + "/_dash-update-component", json=body, timeout=120)
    if served.is_job(r):
        r = served.poll(s, url, body, r)
    return r


def _changed_variants(dep: dict[str, Any]) -> list[list[str]]:
    inputs = [f"{i['id']}.{i['property']}" for i in dep["inputs"]]
    return [inputs[:1], [], inputs, ["rb-workspace.data"], ["made-up.prop"]]


def test_the_registry_names_callbacks_the_page_has(site: dict[str, Any]):
    registry = _registry()
    outputs = {d["output"] for d in site["deps"]}
    assert registry, "no write callback registered"
    assert set(registry) <= outputs, set(registry) - outputs
    # the ones the product has today, by what they write (a rename is fine, a loss is not)
    for what in ("upload a file", "start a workspace", "add a file's series to the workspace",
                 "add an index to the workspace", "save the real-terms choices",
                 "seasonally adjust the workspace's series", "create or revoke a reviewer link",
                 "save the workspace's fiscal year", "save the outlay rates",
                 "save the budget-table choices"):
        assert what in registry.values(), what


def test_every_write_callback_is_refused_to_a_reviewer(site: dict[str, Any]):
    registry = _registry()
    before = _state(site)
    values = _values(site)
    for dep in site["deps"]:
        if dep["output"] not in registry:
            continue
        for changed in _changed_variants(dep):
            r = _send(site, "reviewer", dash_requests.body(dep, values, changed))
            assert r.status_code == 403, (dep["output"], changed, r.text[:300])
            got = r.json()
            assert got["code"] == "SH001" and registry[dep["output"]] in got["message"]
    assert _state(site) == before


def test_every_other_callback_changes_nothing_for_a_reviewer(site: dict[str, Any]):
    registry = _registry()
    before = _state(site)
    values = _values(site)
    for dep in site["deps"]:
        if dep["output"] in registry:
            continue
        for changed in _changed_variants(dep)[:2]:
            r = _send(site, "reviewer", dash_requests.body(dep, values, changed))
            if dep.get("clientside_function"):
                # runs in the browser only: the server refuses it as a request it does
                # not answer (400 UI702), never a 500
                assert r.status_code == 400 and r.json()["code"] == "UI702", (
                    dep["output"], r.status_code, r.text[:300])
                continue
            assert r.status_code in (200, 204), (dep["output"], changed, r.status_code,
                                                 r.text[:300])
    assert _state(site) == before


def test_no_unregistered_callback_writes_even_for_an_editor(site: dict[str, Any]):
    """The cross-check that keeps the registry complete: replayed as an editor, a
    callback that is not registered must leave the server as it was."""
    registry = _registry()
    values = _values(site)
    for dep in site["deps"]:
        if dep["output"] in registry:
            continue
        before = _state(site)
        r = _send(site, "editor", dash_requests.body(dep, values))
        expected = (400,) if dep.get("clientside_function") else (200, 204)  # browser-only
        assert r.status_code in expected, (dep["output"], r.status_code, r.text[:300])
        assert _state(site) == before, (
            f"callback {dep['output']} changed the server but is not registered as "
            "writing: mark it with @writes(...) (dashboard/writes.py)")


def test_every_registered_callback_writes_for_an_editor(site: dict[str, Any]):
    """Proof that the replayed values reach the writing code (else the checks above would
    prove little): each registered callback, replayed as an editor, changes something."""
    registry = _registry()
    deps = {d["output"]: d for d in site["deps"]}
    receive = dash_requests.find(site["deps"], output=f"{ids.IN_PENDING}.data")
    order = sorted(registry, key=lambda o: o != receive["output"])  # the upload first
    pending = None
    for output in order:
        values = _values(site, pending)
        before = _state(site)
        r = _send(site, "editor", dash_requests.body(deps[output], values))
        assert r.status_code == 200, (output, r.status_code, r.text[:300])
        assert _state(site) != before, f"{output} ({registry[output]}) changed nothing"
        if output == receive["output"]:
            pending = r.json()["response"][ids.IN_PENDING]["data"]
