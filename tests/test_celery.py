"""Background jobs on Celery with Redis: a real worker process completes a dashboard job.

The worker is started the way the README says (``celery -A dashboard.celery_app worker``)
with the same REALBASIS_* environment as the web process; the job is the Share screen's
workbook download, driven over HTTP through Dash's background-callback protocol
(start, then poll with the signed cacheKey/job handles). The job also carries the access
of the request that started it: a reviewer's download is made read-only in the worker.
"""

from __future__ import annotations

import base64
import io
import os
import signal
import subprocess
import sys
import time
from urllib.parse import urlencode, urlsplit, urlunsplit

import pytest
from conftest import ROOT

pytestmark = [pytest.mark.redis, pytest.mark.slow]


def _own_db(url: str, db: int = 11) -> str:
    """The test's own Redis database, so no other worker takes its tasks."""
    u = urlsplit(url)
    return urlunsplit((u.scheme, u.netloc, f"/{db}", u.query, u.fragment))


def run_background(client, body, *, headers=None, timeout=90.0):
    """Start a Dash background callback and poll until it answers."""
    r = client.post("/_dash-update-component", json=body, headers=headers or {})
    assert r.status_code == 200, r.get_data(as_text=True)[:500]
    first = r.get_json()
    assert "cacheKey" in first and "job" in first, first
    deadline = time.monotonic() + timeout
    while time.monotonic() < deadline:
        q = urlencode({"cacheKey": first["cacheKey"], "job": first["job"]})
        r = client.post(f"/_dash-update-component?{q}", json=body, headers=headers or {})
        assert r.status_code in (200, 204), r.get_data(as_text=True)[:500]
        data = r.get_json(silent=True) or {}
        if "response" in data:
            return data["response"]
        time.sleep(0.25)
    raise AssertionError("the background job did not finish in time")


def download_body(ref: dict) -> dict:
    return {
        "output": "..sx-download.data...sx-dl-status.children..",
        "outputs": [{"id": "sx-download", "property": "data"},
                    {"id": "sx-dl-status", "property": "children"}],
        "inputs": [{"id": "sx-dl-xlsx", "property": "n_clicks", "value": 1},
                   {"id": "sx-dl-csv", "property": "n_clicks", "value": 0},
                   {"id": "sx-dl-json", "property": "n_clicks", "value": 0}],
        "state": [{"id": "rb-workspace", "property": "data", "value": ref}],
        "changedPropIds": ["sx-dl-xlsx.n_clicks"],
    }


@pytest.fixture
def celery_worker(redis_url, tmp_path):
    url = _own_db(redis_url)
    import redis

    redis.Redis.from_url(url).flushdb()
    env = {**os.environ, "PYTHONPATH": str(ROOT), "REALBASIS_DATA_DIR": str(tmp_path / "data"),
           "REALBASIS_REDIS_URL": url, "REALBASIS_SECRET_KEY": "test-secret-shared-by-all",
           "REALBASIS_LOCAL_EDITING": "1"}
    log = open(tmp_path / "worker.log", "w")  # noqa: SIM115
    proc = subprocess.Popen(
        [sys.executable, "-m", "celery", "-A", "dashboard.celery_app", "worker",
         "--pool=solo", "--loglevel=info", "--without-gossip", "--without-mingle",
         "--without-heartbeat"], cwd=ROOT, env=env, stdout=log, stderr=subprocess.STDOUT)
    yield env, tmp_path / "worker.log"
    proc.send_signal(signal.SIGTERM)
    try:
        proc.wait(20)
    except subprocess.TimeoutExpired:
        proc.kill()
        proc.wait(5)
    log.close()


def test_a_celery_worker_completes_the_workbook_download(celery_worker):
    from openpyxl import load_workbook

    from dashboard.app import create_app
    from dashboard.jobs import AccessCeleryManager
    from pipeline.settings import load_settings

    env, log = celery_worker
    settings = load_settings(environ=env)
    app = create_app(settings)
    assert isinstance(app._background_manager, AccessCeleryManager)
    rb = app.server.extensions["realbasis"]
    ref = rb.data.demo_ref()
    store = rb.data.store

    client = app.server.test_client()
    before = len([e for e in store.audit(ref.id) if e.event == "used"])
    response = run_background(client, download_body(ref.as_dict()))
    dl = response["sx-download"]["data"]
    assert dl["filename"].endswith(".xlsx")
    wb = load_workbook(io.BytesIO(base64.b64decode(dl["content"])), read_only=True)
    assert wb.sheetnames[:2] == ["Summary", "Real terms"] and "Method" in wb.sheetnames
    wb.close()
    used = [e for e in store.audit(ref.id) if e.event == "used"]
    assert len(used) == before + 1  # the editor's export was recorded, by the worker
    assert "background_callback_" in log.read_text()  # the task ran in the worker

    # A reviewer's download runs read-only in the worker: same file, nothing recorded.
    token, _ = store.create_link(ref.id)
    reviewer = app.server.test_client()
    response = run_background(reviewer, download_body(ref.as_dict()),
                              headers={"X-Realbasis-Review": token})
    assert response["sx-download"]["data"]["filename"] == dl["filename"]
    assert len([e for e in store.audit(ref.id) if e.event == "used"]) == before + 1
