"""Benchmark: switching the deflator on the real-terms screen of a 200-series workspace,
through the callback endpoint of a running gunicorn server (2 workers).

Builds a workspace of 200 illustrative monthly series (12 years) plus the demo price
indexes in a temporary data folder, starts gunicorn on a free port, warms both workers,
then in the same run times:
  baseline: 50 POSTs of a trivial callback (the screen switch: no data, no engine);
  switch:   50 POSTs of the real-terms callback, each with another deflator (the engine
            deflates the chosen series; the workspace comes from the per-app cache).
Prints figures last as key=value; the last line is ``p50_ms=... p95_ms=...`` for the
deflator switch (target p95 <= 100 ms). Run: ``python tests/benchmarks/bench_dashboard.py``.
"""

from __future__ import annotations

import dataclasses
import json
import os
import signal
import socket
import statistics
import subprocess
import sys
import tempfile
import time
import urllib.request
from pathlib import Path
from typing import Any

import numpy as np
import pandas as pd

ROOT = Path(__file__).resolve().parents[2]
sys.path.insert(0, str(ROOT))

from dashboard import ids  # noqa: E402
from dashboard.demo import build_demo_workspace  # noqa: E402
from pipeline.model import MONTHLY, Series  # noqa: E402
from pipeline.store import WorkspaceStore  # noqa: E402

N_SERIES = 200
N_CALLS = 50
DEFLATORS = ["Chained consumer index", "Fixed-basket consumer index",
             "Producer index for apparel and outdoor goods", "Private-sector wage index",
             "Government consumption deflator"]


def build_workspace(data_dir: Path) -> dict[str, Any]:
    store = WorkspaceStore(f"sqlite:///{data_dir / 'realbasis.sqlite'}")
    demo = build_demo_workspace(store, "Benchmark: 200 illustrative series")
    rng = np.random.default_rng(11)
    idx = pd.period_range("2014-10", "2026-09", freq="M")
    series = {}
    for i in range(N_SERIES):
        level = rng.uniform(100, 5000)
        values = level * np.cumprod(1 + rng.normal(0.004, 0.02, len(idx)))
        name = f"Illustrative series {i:03d}"
        series[name] = Series(name, pd.Series(values, index=idx), MONTHLY, kind="flow",
                              unit="USD thousands")
    ws = store.save(dataclasses.replace(demo, series=series), expected_version=demo.version,
                    action="benchmark series")
    store.close()
    return {"id": ws.id, "version": ws.version}


def free_port() -> int:
    with socket.socket() as s:
        s.bind(("127.0.0.1", 0))
        return int(s.getsockname()[1])


def post(url: str, body: dict[str, Any], expect: str | None = None) -> float:
    data = json.dumps(body).encode()
    req = urllib.request.Request(url + "_dash-update-component", data=data,
                                 headers={"Content-Type": "application/json"})
    t0 = time.perf_counter()
    with urllib.request.urlopen(req, timeout=60) as r:
        text = r.read().decode()
        if r.status != 200:
            raise RuntimeError(f"status {r.status}")
    elapsed = (time.perf_counter() - t0) * 1000
    if expect is not None and expect not in text:
        raise RuntimeError(f"unexpected answer: {text[:300]}")
    return elapsed


def payload(deps: list[dict[str, Any]], output: str, values: dict[str, Any], changed: str
            ) -> dict[str, Any]:
    def outs(d: dict[str, Any]) -> list[str]:
        o = d["output"]
        return o.strip(".").split("...") if o.startswith("..") else [o]

    dep = next(d for d in deps if output in outs(d))
    o = [{"id": x.split(".")[0], "property": x.split(".")[1]} for x in outs(dep)]
    return {"output": dep["output"], "outputs": o if len(o) > 1 else o[0],
            "inputs": [{**i, "value": values.get(f"{i['id']}.{i['property']}")}
                       for i in dep["inputs"]],
            "state": [{**s, "value": values.get(f"{s['id']}.{s['property']}")}
                      for s in dep["state"]],
            "changedPropIds": [changed]}


def pct(xs: list[float], p: float) -> float:
    return float(np.percentile(np.asarray(xs), p))


def main() -> None:
    with tempfile.TemporaryDirectory() as tmp:
        data_dir = Path(tmp)
        t0 = time.perf_counter()
        ref = build_workspace(data_dir)
        print(f"workspace_build_s={time.perf_counter() - t0:.2f}")
        port = free_port()
        env = {**os.environ, "REALBASIS_DATA_DIR": str(data_dir), "REALBASIS_LOCAL_EDITING": "1"}
        for k in ("REALBASIS_DATABASE_URL", "REALBASIS_REDIS_URL"):
            env.pop(k, None)
        proc = subprocess.Popen(
            [sys.executable, "-m", "gunicorn", "--no-control-socket", "-w", "2",
             "-b", f"127.0.0.1:{port}", "dashboard.wsgi:server"],
            cwd=ROOT, env=env, stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL,
            start_new_session=True)
        url = f"http://127.0.0.1:{port}/"
        try:
            deadline = time.monotonic() + 90
            while True:
                try:
                    with urllib.request.urlopen(url + "_dash-dependencies", timeout=5) as r:
                        deps = json.loads(r.read())
                        break
                except OSError:
                    if proc.poll() is not None or time.monotonic() > deadline:
                        raise SystemExit("gunicorn did not start") from None
                    time.sleep(0.3)
            values = {f"{ids.WORKSPACE}.data": ref, f"{ids.RT_SERIES}.value": "Illustrative series 007",
                      f"{ids.RT_BASE}.value": "2024", f"{ids.RT_FREQ}.value": "auto",
                      f"{ids.RT_SA}.value": [], f"{ids.RT_INTERP}.value": [],
                      f"{ids.RT_OUTLAY}.value": ""}
            switch = []
            for i in range(N_CALLS + 10):
                values[f"{ids.RT_DEFLATOR}.value"] = DEFLATORS[i % len(DEFLATORS)]
                switch.append(payload(deps, f"{ids.RT_FIGURE}.figure", values,
                                      f"{ids.RT_DEFLATOR}.value"))
            nav_values = {f"{ids.URL}.hash": ""}
            screens = ["intake", "shelf", "real", "budget", "spread", "revisions"]
            trivial = []
            for i in range(N_CALLS + 10):
                key = screens[i % len(screens)]
                nav_values.update({f"{ids.nav_button(k)}.n_clicks": 1 for k in screens})
                trivial.append(payload(deps, f"{ids.SCREEN}.data", nav_values,
                                       f"{ids.nav_button(key)}.n_clicks"))
            for body in switch[:10]:  # warm both workers (cache, imports); check answers
                post(url, body, expect="constant 2024 dollars")
            for body in trivial[:10]:
                post(url, body, expect="rb-screen-")
            base_ms = [post(url, b) for b in trivial[10:]]
            switch_ms = [post(url, b) for b in switch[10:]]
        finally:
            os.killpg(proc.pid, signal.SIGTERM)
            try:
                proc.wait(20)
            except subprocess.TimeoutExpired:
                os.killpg(proc.pid, signal.SIGKILL)
    print(f"series={N_SERIES} calls={N_CALLS} workers=2")
    print(f"baseline_trivial_p50_ms={pct(base_ms, 50):.1f} "
          f"baseline_trivial_p95_ms={pct(base_ms, 95):.1f}")
    print(f"switch_mean_ms={statistics.fmean(switch_ms):.1f} switch_max_ms={max(switch_ms):.1f}")
    print(f"p50_ms={pct(switch_ms, 50):.1f} p95_ms={pct(switch_ms, 95):.1f}")


if __name__ == "__main__":
    main()
