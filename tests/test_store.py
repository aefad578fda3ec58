"""The workspace store: round trips, versioned saves, crash safety, concurrent savers.

Every check runs on the embedded SQLite file and on PostgreSQL (``postgres_url``; each
test gets a fresh PostgreSQL schema). The properties checked are the store's own
contract (issue 6) and standard database behaviour: a committed transaction survives the
death of the process that made it (SQLite: https://www.sqlite.org/atomiccommit.html and
https://www.sqlite.org/wal.html; PostgreSQL manual ch. "Reliability and the Write-Ahead
Log"), and a conditional UPDATE ... WHERE version = expected is the usual optimistic
concurrency control (common practice).
"""

from __future__ import annotations

import json
import math
import os
import signal
import subprocess
import sys
import textwrap
import time
import uuid

import numpy as np
import pandas as pd
import pytest
import sqlalchemy as sa
from conftest import ROOT
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from pipeline.errors import RealbasisError
from pipeline.model import MONTHLY, Frequency, Series, Workspace, fiscal_year
from pipeline.settings import Settings
from pipeline.store import (
    SCHEMA_VERSION,
    AccessContext,
    WorkspaceStore,
    access_context,
    normalise_url,
    series_from_dict,
    series_to_dict,
)

# --------------------------------------------------------------------------- fixtures


@pytest.fixture(params=["sqlite", pytest.param("postgresql", marks=pytest.mark.postgres)])
def store_url(request, tmp_path):
    if request.param == "sqlite":
        yield f"sqlite:///{tmp_path / 'store.sqlite'}"
        return
    base = normalise_url(request.getfixturevalue("postgres_url"))
    schema = f"rbtest_{uuid.uuid4().hex[:10]}"
    admin = sa.create_engine(base)
    with admin.begin() as conn:
        conn.execute(sa.text(f'CREATE SCHEMA "{schema}"'))
    sep = "&" if "?" in base else "?"
    yield f"{base}{sep}options=-csearch_path%3D{schema}"
    with admin.begin() as conn:
        conn.execute(sa.text(f'DROP SCHEMA "{schema}" CASCADE'))
    admin.dispose()


@pytest.fixture
def store(store_url):
    s = WorkspaceStore(store_url)
    yield s
    s.close()


def _monthly(name: str, values, start="2023-01", **kw) -> Series:
    idx = pd.period_range(start, periods=len(values), freq="M")
    return Series(name, pd.Series(np.asarray(values, dtype="float64"), index=idx), MONTHLY, **kw)


def rich_series() -> list[Series]:
    """Series exercising every field the store must keep."""
    cpi_idx = pd.period_range("2023-01", periods=8, freq="M")
    status = pd.Series(["final"] * 5 + ["preliminary"] * 2 + ["projected"], index=cpi_idx,
                       dtype=object)
    cpi = Series("consumer price index, chained",
                 pd.Series([100.0, 100.4, 100.9, 101.2, 101.25, 101.7, 102.0, 102.4],
                           index=cpi_idx), MONTHLY, kind="index", unit="index",
                 status=status, source="upload cpi.csv", vintage="2024-03-15",
                 reference="2023-01", notes=("illustrative", "ünïcode ✓"))
    fq = Frequency("Q", 7)
    q_idx = pd.PeriodIndex([pd.Period("2024Q1", freq="Q-JUN"), pd.Period("2024Q2", freq="Q-JUN"),
                            pd.Period("2024Q4", freq="Q-JUN")])  # a gap on purpose
    spend = Series("Tallmere transit operations", pd.Series(
        [1.0 / 3.0, math.nan, 1e300], index=q_idx, name="dollars"), fq, kind="flow",
        unit="USD thousand")
    fy_idx = pd.period_range("2021", periods=3, freq="Y-JUN")
    bal = Series("reserve balance", pd.Series([-0.0, math.inf, -math.inf], index=fy_idx),
                 fiscal_year(7), kind="stock", unit="USD")
    return [cpi, spend, bal]


def assert_same_series(a: Series, b: Series) -> None:
    pd.testing.assert_series_equal(a.values, b.values, check_freq=True, check_exact=True)
    va, vb = a.values.to_numpy(), b.values.to_numpy()
    real = ~np.isnan(va)  # the sign of a zero matters, the sign of a NaN does not
    assert np.array_equal(np.signbit(va[real]), np.signbit(vb[real]))
    assert a.values.index.freqstr == b.values.index.freqstr
    if a.status is None:
        assert b.status is None
    else:
        pd.testing.assert_series_equal(a.status, b.status, check_exact=True)
    for f in ("name", "frequency", "kind", "unit", "source", "vintage", "reference", "notes"):
        assert getattr(a, f) == getattr(b, f), f


def assert_same_workspace(a: Workspace, b: Workspace) -> None:
    assert (a.id, a.name, a.version) == (b.id, b.name, b.version)
    assert list(a.series) == list(b.series)  # order kept (the order things were added)
    assert list(a.indexes) == list(b.indexes)
    assert list(a.settings) == list(b.settings)
    for k in a.series:
        assert_same_series(a.series[k], b.series[k])
    assert {k: set(v) for k, v in a.indexes.items()} == {k: set(v) for k, v in b.indexes.items()}
    for k, vins in a.indexes.items():
        for vin in vins:
            assert_same_series(vins[vin], b.indexes[k][vin])
    assert dict(a.settings) == dict(b.settings)
    assert dict(a.own_indexes) == dict(b.own_indexes)
    assert a.notes == b.notes


def filled(ws: Workspace, tag: str = "a") -> Workspace:
    cpi, spend, bal = rich_series()
    older = cpi.with_values(cpi.values * 0.999, vintage="2024-02-15")
    return Workspace(
        id=ws.id, name=ws.name, version=ws.version,
        series={spend.name: spend, bal.name: bal, "a first-sorted name": bal},
        indexes={cpi.name: {"2024-03-15": cpi, "2024-02-15": older}},
        settings={"zeta": 1, "base": "FY2025", "deflators": [cpi.name], "sa": {"method": "stl"},
                  "tag": tag},
        own_indexes={"fuel and parts": {"method": "fisher", "chained": True,
                                        "weights": {"fuel": 0.6, "parts": 0.4}}},
        notes="Illustrative workspace — Harbourline Outfitters (fictional).",
    )


# --------------------------------------------------------------------------- codec


def test_series_codec_keeps_every_field():
    for s in rich_series():
        back = series_from_dict(json.loads(json.dumps(series_to_dict(s))))
        assert_same_series(s, back)


@settings(max_examples=60, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(
    values=st.lists(st.floats(allow_nan=True, allow_infinity=True, width=64), min_size=0,
                    max_size=30),
    freq=st.sampled_from([Frequency("M"), Frequency("Q"), Frequency("Q", 7), Frequency("A"),
                          Frequency("FY", 10)]),
    start=st.integers(1950, 2080),
)
def test_series_codec_round_trips_any_floats(values, freq, start):
    idx = pd.period_range(pd.Period(f"{start}-01", freq="M").asfreq(freq.pandas_freq),
                          periods=len(values), freq=freq.pandas_freq)
    s = Series("x", pd.Series(np.asarray(values, dtype="float64"), index=idx), freq)
    assert_same_series(s, series_from_dict(json.loads(json.dumps(series_to_dict(s)))))


# --------------------------------------------------------------------------- store


def test_create_load_save_round_trip(store):
    ws = store.create("Harbourline real revenue (illustrative)", actor="ana")
    assert ws.version == 1
    saved = store.save(filled(ws), actor="ana", action="upload")
    assert saved.version == 2
    loaded = store.load(ws.id)
    assert_same_workspace(saved, loaded)
    # the old version is still there, unchanged
    assert store.load(ws.id, version=1).series == {}
    assert [v.version for v in store.history(ws.id)] == [1, 2]
    assert [w.id for w in store.list()] == [ws.id]
    assert store.verify(ws.id) == 2


def test_stale_save_is_refused_and_nothing_is_overwritten(store):
    ws = store.create("Tallmere capital plan (illustrative)")
    mine = store.save(filled(ws, "first"), actor="ana")
    theirs_based_on_old = filled(ws, "second")  # still says version 1
    with pytest.raises(RealbasisError) as err:
        store.save(theirs_based_on_old, actor="ben")
    assert err.value.code == "ST002"
    assert "nothing was overwritten" in str(err.value)
    assert store.load(ws.id).settings["tag"] == "first"
    assert store.current_version(ws.id) == mine.version == 2
    # explicit expected_version wins over ws.version
    with pytest.raises(RealbasisError) as err:
        store.save(mine, expected_version=1)
    assert err.value.code == "ST002"
    assert len(store.history(ws.id)) == 2


def test_unknown_workspace_and_bad_content_are_coded(store):
    with pytest.raises(RealbasisError) as err:
        store.load("nope")
    assert err.value.code == "ST001"
    ws = store.create("x")
    with pytest.raises(RealbasisError) as err:
        store.save(Workspace(id=ws.id, name="x", version=1, settings={"when": object()}))
    assert err.value.code == "ST003"
    with pytest.raises(RealbasisError) as err:
        store.create("   ")
    assert err.value.code == "ST007"
    with pytest.raises(RealbasisError) as err:
        store.load(ws.id, version=9)
    assert err.value.code == "ST008"
    assert store.current_version(ws.id) == 1  # failed saves left nothing behind


def test_audit_records_uploads_settings_and_vintages(store):
    ws = store.create("audit me", actor="ana")
    store.record_upload(ws.id, "cpi.csv", 1234, "ab" * 32, actor="ana")
    ws2 = store.save(filled(ws), actor="ana")
    changed = Workspace(**{**ws2.__dict__, "settings": {**ws2.settings, "base": "2024"},
                           "indexes": {k: {"2024-03-15": v["2024-03-15"]}
                                       for k, v in ws2.indexes.items()}})
    store.save(changed, actor="ben")
    store.record_use(ws.id, {"consumer price index, chained": "2024-03-15"},
                     purpose="export workbook")
    events = store.audit(ws.id)
    kinds = [e.event for e in events]
    assert kinds[0] == "create" and "upload" in kinds and kinds[-1] == "used"
    up = next(e for e in events if e.event == "upload")
    assert up.detail == {"filename": "cpi.csv", "size": 1234, "sha256": "ab" * 32}
    base_changes = [e for e in events if e.event == "settings" and e.detail["key"] == "base"]
    assert [(e.detail["old"], e.detail["new"], e.actor) for e in base_changes] == [
        (None, "FY2025", "ana"), ("FY2025", "2024", "ben")]
    vin = [e for e in events if e.event == "indexes"]
    assert vin[-1].detail["removed"] == [["consumer price index, chained", "2024-02-15"]]
    assert all(e.describe() for e in events)


def test_reviewer_context_refuses_every_write(store):
    ws = store.create("shared")
    other = store.create("other")
    full = store.save(filled(ws))
    with access_context(AccessContext("reviewer", ws.id, "reviewer")):
        assert store.load(ws.id).version == full.version  # reading is allowed
        assert store.audit(ws.id)
        assert [w.id for w in store.list()] == [ws.id]
        attempts = [
            lambda: store.save(full),
            lambda: store.create("new"),
            lambda: store.record_upload(ws.id, "a.csv", 1, "0" * 64),
            lambda: store.record_use(ws.id, {}),
            lambda: store.create_link(ws.id),
            lambda: store.revoke_link("x"),
            lambda: store.list_links(ws.id),
        ]
        for attempt in attempts:
            with pytest.raises(RealbasisError) as err:
                attempt()
            assert err.value.code == "SH001"
        with pytest.raises(RealbasisError) as err:
            store.load(other.id)
        assert err.value.code == "SH007"
    assert store.current_version(ws.id) == full.version


def test_schema_is_upgraded_on_open(tmp_path):
    url = f"sqlite:///{tmp_path / 'old.sqlite'}"
    s = WorkspaceStore(url)
    ws = s.create("kept across the upgrade")
    s.close()
    # Turn the file back into a version-1 database (no last_used_at on links).
    eng = sa.create_engine(url)
    with eng.begin() as conn:
        conn.execute(sa.text("ALTER TABLE rb_links DROP COLUMN last_used_at"))
        conn.execute(sa.text("UPDATE rb_schema SET version = 1"))
    eng.dispose()
    s = WorkspaceStore(url)
    assert s.schema_version() == SCHEMA_VERSION
    token, _ = s.create_link(ws.id)
    assert s.resolve_token(token).last_used_at is None  # first use is recorded now
    assert s.resolve_token(token).last_used_at is not None
    assert s.load(ws.id).name == "kept across the upgrade"
    s.close()
    with sa.create_engine(url).begin() as conn:
        conn.execute(sa.text(f"UPDATE rb_schema SET version = {SCHEMA_VERSION + 1}"))
    with pytest.raises(RealbasisError) as err:
        WorkspaceStore(url)
    assert err.value.code == "ST004"


def test_sqlite_file_is_in_wal_mode_in_the_data_dir(tmp_path):
    st_ = WorkspaceStore.from_settings(Settings(data_dir=str(tmp_path / "data")))
    assert (tmp_path / "data" / "realbasis.sqlite").exists()
    with st_.engine.connect() as conn:
        assert conn.exec_driver_sql("PRAGMA journal_mode").scalar() == "wal"
        assert conn.exec_driver_sql("PRAGMA busy_timeout").scalar() == 30000
    st_.close()


def test_bad_url_is_coded():
    with pytest.raises(RealbasisError) as err:
        WorkspaceStore("not a url at all")
    assert err.value.code == "ST005"
    assert normalise_url("postgresql://postgres@127.0.0.1/test").startswith(
        "postgresql+psycopg://")


# --------------------------------------------------------------------------- processes

_SAVER = textwrap.dedent(
    """
    import sys, time
    import numpy as np, pandas as pd
    from pipeline.model import MONTHLY, Series, Workspace
    from pipeline.store import WorkspaceStore
    url, wsid = sys.argv[1], sys.argv[2]
    store = WorkspaceStore(url)
    while True:
        ws = store.load(wsid)
        n = ws.version + 1
        vals = np.arange(600, dtype="float64") * n
        s = Series(f"s{n % 7}", pd.Series(vals, index=pd.period_range("1970-01", periods=600,
                   freq="M")), MONTHLY)
        series = dict(ws.series)
        series[s.name] = s
        saved = store.save(Workspace(ws.id, ws.name, ws.version, series=series,
                                     settings={"n": n}, notes="x" * (n % 50)))
        print(saved.version, flush=True)
    """
)


def _env() -> dict[str, str]:
    return {**os.environ, "PYTHONPATH": str(ROOT)}


@pytest.mark.slow
def test_sigkill_during_saves_loses_no_committed_workspace(store, store_url):
    ws = store.create("crash test")
    last_committed = 1
    for _round in range(3):
        proc = subprocess.Popen([sys.executable, "-c", _SAVER, store_url, ws.id],
                                stdout=subprocess.PIPE, text=True, env=_env(), cwd=ROOT)
        seen = 0
        deadline = time.monotonic() + 60
        while seen < 15 and time.monotonic() < deadline:
            line = proc.stdout.readline()
            if not line:
                break
            last_committed = int(line)
            seen += 1
        assert seen == 15, "the saver process did not get going"
        os.kill(proc.pid, signal.SIGKILL)  # in the middle of its next save
        proc.wait(10)
        proc.stdout.close()
        reopened = WorkspaceStore(store_url)
        current = reopened.current_version(ws.id)
        assert current >= last_committed  # every reported commit is there
        assert reopened.verify(ws.id) == current  # every version readable and intact
        got = reopened.load(ws.id)
        assert got.settings == {"n": current}
        expected_vals = np.arange(600, dtype="float64") * current
        assert np.array_equal(got.series[f"s{current % 7}"].values.to_numpy(), expected_vals)
        reopened.close()


_RACER = textwrap.dedent(
    """
    import json, sys, time, pathlib
    from pipeline.errors import RealbasisError
    from pipeline.model import Workspace
    from pipeline.store import WorkspaceStore
    url, wsid, who, go = sys.argv[1], sys.argv[2], sys.argv[3], pathlib.Path(sys.argv[4])
    store = WorkspaceStore(url)
    ws = store.load(wsid)
    print("ready", flush=True)
    while not go.exists():
        time.sleep(0.002)
    try:
        saved = store.save(Workspace(ws.id, ws.name, ws.version,
                                     settings={**ws.settings, "by": who}), actor=who)
        print(json.dumps({"ok": saved.version}), flush=True)
    except RealbasisError as err:
        print(json.dumps({"refused": err.code, "text": str(err)}), flush=True)
    """
)


@pytest.mark.slow
def test_two_processes_saving_one_workspace_one_wins_other_is_told(store, store_url, tmp_path):
    ws = store.create("race")
    for rnd in range(3):
        base = store.current_version(ws.id)
        go = tmp_path / f"go{rnd}"
        procs = [subprocess.Popen([sys.executable, "-c", _RACER, store_url, ws.id, who, str(go)],
                                  stdout=subprocess.PIPE, text=True, env=_env(), cwd=ROOT)
                 for who in ("ana", "ben")]
        for p in procs:
            assert p.stdout.readline().strip() == "ready"
        go.touch()
        results = {}
        for who, p in zip(("ana", "ben"), procs, strict=True):
            out, _ = p.communicate(timeout=60)
            results[who] = json.loads(out.strip().splitlines()[-1])
        winners = [w for w, r in results.items() if "ok" in r]
        losers = [w for w, r in results.items() if "refused" in r]
        assert len(winners) == 1 and len(losers) == 1, results
        assert results[losers[0]]["refused"] == "ST002"
        assert results[winners[0]]["ok"] == base + 1
        now = store.load(ws.id)
        assert now.version == base + 1 and now.settings["by"] == winners[0]
        # the loser was told; it reloads and re-applies: nothing lost
        again = store.save(Workspace(now.id, now.name, now.version,
                                     settings={**now.settings, "by2": losers[0]}))
        assert again.version == base + 2
    assert store.verify(ws.id) == len(store.history(ws.id))


_OPENER = textwrap.dedent(
    """
    import pathlib, sys, time
    from pipeline.store import WorkspaceStore
    url, go = sys.argv[1], pathlib.Path(sys.argv[2])
    while not go.exists():
        time.sleep(0.002)
    store = WorkspaceStore(url)
    ws = store.create(f"opened by {sys.argv[3]}")
    print(store.schema_version(), flush=True)
    """
)


@pytest.mark.slow
def test_many_processes_opening_a_new_database_at_once(store_url, tmp_path):
    """gunicorn starts several workers together: the schema is created once, no one fails."""
    go = tmp_path / "go"
    procs = [subprocess.Popen([sys.executable, "-c", _OPENER, store_url, str(go), str(i)],
                              stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True,
                              env=_env(), cwd=ROOT) for i in range(4)]
    time.sleep(0.5)
    go.touch()
    for p in procs:
        out, err = p.communicate(timeout=60)
        assert p.returncode == 0, err
        assert out.strip() == str(SCHEMA_VERSION)
    store = WorkspaceStore(store_url)
    assert sorted(w.name for w in store.list()) == [f"opened by {i}" for i in range(4)]
    store.close()


def test_damaged_data_is_detected_not_returned(store):
    import zlib

    from pipeline.store import blobs_table, versions_table

    ws = store.save(filled(store.create("tamper")))
    with store.engine.begin() as conn:
        row = conn.execute(sa.select(blobs_table).limit(1)).first()
        doc = json.loads(zlib.decompress(row.payload))
        doc["values"][0] = 123456.0  # a silent change of one number
        conn.execute(blobs_table.update().where(blobs_table.c.sha256 == row.sha256).values(
            payload=zlib.compress(json.dumps(doc).encode())))
    for action in (lambda: store.load(ws.id), lambda: store.verify(ws.id)):
        with pytest.raises(RealbasisError) as err:
            action()
        assert err.value.code == "ST006"
    with store.engine.begin() as conn:
        conn.execute(versions_table.update().where(versions_table.c.version == 1)
                     .values(manifest='{"series": {}}'))
    with pytest.raises(RealbasisError) as err:
        store.load(ws.id, version=1)
    assert err.value.code == "ST006"


def _save_body(ws_id: str, base: str, output: str) -> dict:
    """The Real terms screen's "Save these choices" callback, as the browser sends it
    (``output``: the callback's output key from /_dash-dependencies)."""
    return {"output": output,
            "outputs": [{"id": "rb-saved-real", "property": "data"},
                        {"id": "rt-saved", "property": "children"}],
            "inputs": [{"id": "rt-save", "property": "n_clicks", "value": 1}],
            "state": [{"id": "rt-series", "property": "value", "value": None},
                      {"id": "rt-deflator", "property": "value", "value": None},
                      {"id": "rt-base", "property": "value", "value": base},
                      {"id": "rt-freq", "property": "value", "value": "auto"},
                      {"id": "rt-sa", "property": "value", "value": []},
                      {"id": "rt-interp", "property": "value", "value": []},
                      {"id": "rt-outlay", "property": "value", "value": ""},
                      [],  # the parts' deflator pickers (pattern-matching: none here)
                      [],  # and their ids
                      {"id": "rt-chain", "property": "value", "value": "none"},
                      {"id": "rb-ref-real", "property": "data",
                       "value": {"id": ws_id, "version": 0}}],
            "changedPropIds": ["rt-save.n_clicks"]}


@pytest.mark.slow
def test_gunicorn_worker_killed_during_saves_loses_no_acknowledged_save(tmp_path):
    """The dashboard under gunicorn saves in a loop; its worker gets SIGKILL mid-stream.
    Every save the server acknowledged is in the store, intact, with the value sent."""
    import re
    import socket
    import threading

    import requests

    data = tmp_path / "data"
    store = WorkspaceStore(f"sqlite:///{data / 'realbasis.sqlite'}")
    ws = store.create("Saved under fire (illustrative)")
    with socket.socket() as s:
        s.bind(("127.0.0.1", 0))
        port = s.getsockname()[1]
    env = {**_env(), "REALBASIS_DATA_DIR": str(data), "REALBASIS_DEMO": "0",
           "REALBASIS_LOCAL_EDITING": "1"}
    env.pop("REALBASIS_DATABASE_URL", None)
    env.pop("REALBASIS_REDIS_URL", None)
    master = subprocess.Popen([sys.executable, "-m", "gunicorn", "--no-control-socket", "-w", "1",
                               "-b", f"127.0.0.1:{port}", "dashboard.wsgi:server"], cwd=ROOT,
                              env=env, stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL)
    url = f"http://127.0.0.1:{port}/_dash-update-component"
    acked: dict[int, str] = {}
    stop = threading.Event()

    def worker_pids() -> list[int]:
        out = subprocess.run(["ps", "-o", "pid=", "--ppid", str(master.pid)],
                             capture_output=True, text=True).stdout
        return [int(p) for p in out.split()]

    def client(output: str) -> None:
        i = 0
        while not stop.is_set():
            i += 1
            base = f"base-{i}"
            try:
                r = requests.post(url, json=_save_body(ws.id, base, output), timeout=10)
            except requests.RequestException:
                time.sleep(0.05)
                continue
            if r.status_code == 200:
                m = re.search(r"Saved as version ([\d,]+)", r.text)
                if m:
                    acked[int(m.group(1).replace(",", ""))] = base

    try:
        deadline = time.monotonic() + 90
        while not worker_pids() or not _up(port):
            assert time.monotonic() < deadline, "gunicorn did not start"
            time.sleep(0.3)
        deps = requests.get(f"http://127.0.0.1:{port}/_dash-dependencies", timeout=30).json()
        output = next(d["output"] for d in deps
                      if any(i["id"] == "rt-save" for i in d["inputs"]))
        thread = threading.Thread(target=client, args=(output,), daemon=True)
        thread.start()
        while len(acked) < 15:
            assert time.monotonic() < deadline, f"only {len(acked)} saves acknowledged"
            time.sleep(0.05)
        [victim] = worker_pids()
        os.kill(victim, signal.SIGKILL)  # the server process, in the middle of its saves
        before = len(acked)
        while len(acked) < before + 10:  # the master starts a new worker; saves go on
            assert time.monotonic() < deadline + 60, "no saves after the kill"
            time.sleep(0.05)
        stop.set()
        thread.join(15)
        assert victim not in worker_pids()
    finally:
        stop.set()
        master.terminate()
        master.wait(20)
    current = store.current_version(ws.id)
    assert store.verify(ws.id) == current  # every version present and intact
    assert max(acked) <= current
    for version, base in acked.items():  # every acknowledged save, with what was sent
        assert store.load(ws.id, version).settings["base"] == base
    store.close()


def _up(port: int) -> bool:
    import socket

    try:
        with socket.create_connection(("127.0.0.1", port), 1):
            return True
    except OSError:
        return False


# --------------------------------------------------------------------------- sign-in bookkeeping


def test_sessions_and_wrong_token_counts(store):
    """Editor sessions (random ids, hashed, ended by the server) and wrong-token counts
    shared by every process: counted exactly under concurrent failures."""
    import datetime as dt
    import threading

    from pipeline.store import AccessContext, access_context

    with access_context(AccessContext("reviewer", None, "anonymous")):  # at sign-in
        sid = store.open_session("editor", grant="g1")
    assert len(sid) >= 43 and store.session_role(sid, grant="g1") == "editor"
    assert store.session_role(sid, grant="g2") is None  # another token in force
    assert store.session_role("x" * 43, grant="g1") is None
    assert store.close_session(sid) and store.session_role(sid, grant="g1") is None
    assert not store.close_session(sid)
    old = store.open_session("editor", grant="g1", lifetime=dt.timedelta(seconds=-1))
    assert store.session_role(old, grant="g1") is None  # expired
    store.open_session("editor", grant="g1")
    assert store.close_sessions("editor") == 1

    window = dt.timedelta(minutes=5)
    errors: list[BaseException] = []

    def fail_five() -> None:
        try:
            for _ in range(5):
                store.throttle_fail("client-a", limit=30, window=window)
        except BaseException as err:  # reported below
            errors.append(err)

    threads = [threading.Thread(target=fail_five) for _ in range(8)]
    for t in threads:
        t.start()
    for t in threads:
        t.join()
    assert errors == []
    assert store.throttle_wait("client-a", limit=40, window=window) > 0  # all 40 counted
    assert store.throttle_wait("client-a", limit=41, window=window) == 0
    assert store.throttle_wait("client-b", limit=1, window=window) == 0
