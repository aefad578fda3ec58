"""A real gunicorn serving the dashboard, for the HTTP tests and benchmarks that must see
what a browser sees (several worker processes, the real WSGI server, its log)."""

from __future__ import annotations

import os
import signal
import socket
import subprocess
import sys
import time
from collections.abc import Mapping
from dataclasses import dataclass
from pathlib import Path
from typing import Any

ROOT = Path(__file__).resolve().parent.parent


def free_port() -> int:
    with socket.socket() as s:
        s.bind(("127.0.0.1", 0))
        return int(s.getsockname()[1])


@dataclass
class Server:
    proc: subprocess.Popen[bytes]
    url: str
    log: Path

    def log_text(self) -> str:
        return self.log.read_text(encoding="utf-8", errors="replace")

    def worker_pids(self) -> list[int]:
        import psutil

        return [c.pid for c in psutil.Process(self.proc.pid).children()]

    def stop(self) -> None:
        if self.proc.poll() is None:
            os.killpg(self.proc.pid, signal.SIGTERM)
            try:
                self.proc.wait(30)
            except subprocess.TimeoutExpired:
                os.killpg(self.proc.pid, signal.SIGKILL)
                self.proc.wait(10)


def start(data_dir: Path, env: Mapping[str, str] | None = None, *, workers: int = 2,
          timeout: int = 120, args: tuple[str, ...] = ()) -> Server:
    """gunicorn with ``workers`` workers on a free port; waits until it answers."""
    port = free_port()
    full = {**os.environ, "REALBASIS_DATA_DIR": str(data_dir), "PYTHONPATH": str(ROOT),
            "REALBASIS_CHART_IMAGES_READY": "0"}  # a Chromium per worker only where tested
    for k in ("REALBASIS_DATABASE_URL", "REALBASIS_REDIS_URL", "REALBASIS_EDITOR_TOKEN",
              "REALBASIS_LOCAL_EDITING"):
        full.pop(k, None)
    full.update(env or {})
    Path(data_dir).mkdir(parents=True, exist_ok=True)
    log = Path(data_dir) / "gunicorn.log"
    fh = open(log, "wb")  # noqa: SIM115 - gunicorn holds it
    proc = subprocess.Popen(
        [sys.executable, "-m", "gunicorn", "--no-control-socket", "-w", str(workers),
         "-b", f"127.0.0.1:{port}", "--timeout", str(timeout), *args, "dashboard.wsgi:server"],
        cwd=ROOT, env=full, stdout=fh, stderr=subprocess.STDOUT, start_new_session=True)
    fh.close()
    server = Server(proc, f"http://127.0.0.1:{port}", log)
    import requests

    deadline = time.monotonic() + 120
    while True:
        if proc.poll() is not None or time.monotonic() > deadline:
            text = server.log_text()
            server.stop()
            raise RuntimeError(f"gunicorn did not start:\n{text[-3000:]}")
        try:
            requests.get(server.url + "/_dash-dependencies", timeout=30)
            return server
        except requests.RequestException:
            time.sleep(0.2)


def poll(session: Any, url: str, body: Mapping[str, Any], first: Any, *,
         headers: Mapping[str, str] | None = None, limit: float = 120) -> Any:
    """Follow a background callback as the renderer does: repeat the request with the
    job's signed handles until the answer is not "still running"."""
    handles = first.json()
    deadline = time.monotonic() + limit
    while True:
        r = session.post(f"{url}/_dash-update-component", json=body, headers=dict(headers or {}),
                         params={"cacheKey": handles["cacheKey"], "job": handles["job"]},
                         timeout=60)
        if r.status_code != 200:
            return r
        got = r.json()
        if "response" in got or "sideUpdate" in got or got.get("dist") is not None:
            return r
        if time.monotonic() > deadline:
            raise TimeoutError(f"background callback {body['output']} did not finish")
        time.sleep(0.05)


def is_job(r: Any) -> bool:
    """Whether a callback answer started a background job (signed handles)."""
    if r.status_code != 200:
        return False
    try:
        got = r.json()
    except ValueError:
        return False
    return isinstance(got, dict) and "cacheKey" in got and "job" in got
