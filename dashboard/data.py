"""Data access of the dashboard: the one place screens get and keep workspaces.

The browser holds only ``{"id": ..., "version": ...}`` of the workspace it shows; every
series and index stays server-side in the workspace store (``pipeline.store``), shared by
all gunicorn workers. Saved versions are immutable, so a per-app cache keyed by
``(id, version)`` is always right; it lives on the :class:`DataAccess` object that
``create_app`` builds (one per app and process), never at module level.

Uploaded files waiting to be added to a workspace are kept on disk under
``data_dir/uploads/<sha256>`` (shared by the workers), so the browser holds only the
upload's hash and the interpretation choices.
"""

from __future__ import annotations

import contextlib
import dataclasses
import fcntl
import hashlib
import os
import re
import threading
from collections import OrderedDict
from collections.abc import Callable, Iterator
from dataclasses import dataclass
from pathlib import Path

from pipeline.errors import fail, register
from pipeline.model import Workspace
from pipeline.settings import Settings
from pipeline.store import WorkspaceStore, require_read

UI003 = register("UI003", "uploaded file has expired from the server")

DEMO_NAME = "Demo: Harbourline Outfitters and Tallmere Transit (illustrative)"
DEMO_COPY_NAME = "My copy of the demo (illustrative)"
DEMO_DIR = Path(__file__).resolve().parent.parent / "demo_data"
_HASH_RE = re.compile(r"^[0-9a-f]{64}$")
CACHE_SIZE = 16


@dataclass(frozen=True)
class WorkspaceRef:
    """What the browser holds: a workspace id and the version it is looking at."""

    id: str
    version: int

    def as_dict(self) -> dict[str, object]:
        return {"id": self.id, "version": self.version}

    @classmethod
    def from_dict(cls, data: object) -> WorkspaceRef | None:
        if not isinstance(data, dict) or not data.get("id"):
            return None
        try:
            return cls(str(data["id"]), int(data.get("version") or 0))
        except (TypeError, ValueError):
            return None


class DataAccess:
    """Workspace loading/saving with a small per-app cache, the demo workspace, and the
    shared upload folder. Thread-safe (gunicorn may run threads); holds no browser data."""

    def __init__(self, settings: Settings, store: WorkspaceStore | None = None,
                 demo_builder: Callable[[WorkspaceStore, str], Workspace] | None = None) -> None:
        self.settings = settings
        Path(settings.data_dir).mkdir(parents=True, exist_ok=True)
        self.store = store or WorkspaceStore.from_settings(settings)
        self._cache: OrderedDict[tuple[str, int], Workspace] = OrderedDict()
        self._lock = threading.Lock()
        self._demo_builder = demo_builder
        self.upload_dir = Path(settings.data_dir).resolve() / "uploads"

    # ----- workspaces

    def load(self, ref: WorkspaceRef) -> Workspace:
        """The workspace at ``ref.version`` (the latest when version is 0)."""
        require_read(ref.id)  # a reviewer link opens its own workspace only, cached or not
        version = ref.version or self.store.current_version(ref.id)
        key = (ref.id, version)
        with self._lock:
            ws = self._cache.get(key)
            if ws is not None:
                self._cache.move_to_end(key)
                return ws
        ws = self.store.load(ref.id, version)
        self._remember(ws)
        return ws

    def latest(self, workspace_id: str) -> Workspace:
        return self.load(WorkspaceRef(workspace_id, 0))

    def save(self, ws: Workspace, *, action: str, actor: str = "editor") -> Workspace:
        """Save ``ws`` as the next version (refused with ST002 if someone saved since).

        The demo workspace is shared by everyone who opens the dashboard, so a change to
        it is saved into a new workspace (a copy) instead; the returned workspace says
        which."""
        if ws.name == DEMO_NAME:
            copy = self.store.create(DEMO_COPY_NAME, actor=actor)
            ws = dataclasses.replace(ws, id=copy.id, name=copy.name, version=copy.version)
            action = f"{action} (on a copy of the shared demo)"
        saved = self.store.save(ws, expected_version=ws.version, actor=actor, action=action)
        self._remember(saved)
        return saved

    def create(self, name: str, *, actor: str = "editor") -> Workspace:
        ws = self.store.create(name, actor=actor)
        self._remember(ws)
        return ws

    def _remember(self, ws: Workspace) -> None:
        with self._lock:
            self._cache[(ws.id, ws.version)] = ws
            self._cache.move_to_end((ws.id, ws.version))
            while len(self._cache) > CACHE_SIZE:
                self._cache.popitem(last=False)

    def demo_ref(self) -> WorkspaceRef:
        """The demo workspace, built from demo_data/ the first time (once across workers:
        a file lock in data_dir serialises the first build)."""
        for info in self.store.list():
            if info.name == DEMO_NAME:
                return WorkspaceRef(info.id, info.version)
        with self._file_lock("demo.lock"):
            for info in self.store.list():
                if info.name == DEMO_NAME:
                    return WorkspaceRef(info.id, info.version)
            if self._demo_builder is None:
                from .demo import build_demo_workspace

                ws = build_demo_workspace(self.store, DEMO_NAME)
            else:
                ws = self._demo_builder(self.store, DEMO_NAME)
            self._remember(ws)
            return WorkspaceRef(ws.id, ws.version)

    @contextlib.contextmanager
    def _file_lock(self, name: str) -> Iterator[None]:
        path = Path(self.settings.data_dir).resolve() / name
        with open(path, "a+") as fh:
            fcntl.flock(fh, fcntl.LOCK_EX)
            try:
                yield
            finally:
                fcntl.flock(fh, fcntl.LOCK_UN)

    # ----- uploads waiting for the user's go-ahead

    def keep_upload(self, data: bytes, filename: str) -> str:
        """Keep an uploaded file server-side; returns its id (SHA-256 of the bytes)."""
        digest = hashlib.sha256(data).hexdigest()
        self.upload_dir.mkdir(parents=True, exist_ok=True)
        target = self.upload_dir / digest
        if not target.exists():
            tmp = target.with_suffix(f".{os.getpid()}.{threading.get_ident()}.tmp")
            tmp.write_bytes(data)
            os.replace(tmp, target)
        (self.upload_dir / f"{digest}.name").write_text(filename, encoding="utf-8")
        return digest

    def upload(self, upload_id: str) -> tuple[bytes, str]:
        """The bytes and file name of a kept upload."""
        if not isinstance(upload_id, str) or not _HASH_RE.match(upload_id):
            raise fail(UI003, "the upload reference is not valid",
                       expected="the id of a file uploaded on the intake screen",
                       found=repr(upload_id)[:80], fix="Upload the file again.")
        path = self.upload_dir / upload_id
        if not path.exists():
            raise fail(UI003, "the uploaded file is no longer on the server",
                       expected=f"upload {upload_id[:12]}…", found="nothing",
                       fix="Upload the file again.")
        name_path = self.upload_dir / f"{upload_id}.name"
        name = name_path.read_text(encoding="utf-8") if name_path.exists() else "upload"
        return path.read_bytes(), name
