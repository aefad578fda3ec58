"""Data access of the dashboard: the one place screens get and keep workspaces.

The browser holds only ``{"id": ..., "version": ...}`` of the workspace it shows; every
series and index stays server-side in the workspace store (``pipeline.store``), shared by
all gunicorn workers. Saved versions are immutable, so a per-app cache keyed by
``(id, version)`` is always right; it lives on the :class:`DataAccess` object that
``create_app`` builds (one per app and process), never at module level.

Uploaded files waiting to be added to a workspace are kept on disk (shared by the
workers) under ``data_dir/uploads/<session scope>/<upload id>``: the id is random, the
scope is derived from the browser session that dropped the file, so a kept file is found
only by the session that kept it, and only for the workspace it was dropped into (the
browser holds the upload id and the interpretation choices). Each session may keep at
most ``upload_quota_bytes`` (``UI703``); files older than ``upload_expiry_seconds`` are
deleted (``UI003`` if asked for later). Keeping a file is a write: refused to reviewers.
"""

from __future__ import annotations

import contextlib
import dataclasses
import fcntl
import hashlib
import json
import os
import re
import secrets
import threading
import time
from collections import OrderedDict
from collections.abc import Callable, Iterator
from dataclasses import dataclass
from pathlib import Path

from pipeline.errors import fail, register
from pipeline.model import Workspace
from pipeline.settings import Settings
from pipeline.store import WorkspaceStore, current_access, require_read, require_write

UI003 = register("UI003", "uploaded file has expired from the server")
UI701 = register("UI701", "the page's workspace reference is not valid")
UI703 = register("UI703", "upload space of this session is used up")

DEMO_NAME = "Demo: Harbourline Outfitters and Tallmere Transit (illustrative)"
DEMO_COPY_NAME = "My copy of the demo (illustrative)"
"""The start of every copy's name; the copy's own name carries its date
(:func:`demo_copy_name`)."""
DEMO_COPY_PREFIX = "My copy of the demo"
DEMO_DIR = Path(__file__).resolve().parent.parent / "demo_data"
_UPLOAD_ID_RE = re.compile(r"^[0-9a-f]{32}$")
_WORKSPACE_ID_RE = re.compile(r"^[A-Za-z0-9_.-]{1,64}$")
MAX_VERSION = 2**31 - 1
CACHE_SIZE = 16


def demo_copy_name(day: object = None) -> str:
    """'My copy of the demo, 3 Dec 2026 (illustrative)': the copy says when it was made."""
    import datetime as dt

    d = day if isinstance(day, dt.date) else dt.date.today()
    return f"{DEMO_COPY_PREFIX}, {d.day} {d:%b %Y} (illustrative)"


def is_demo_copy(name: str) -> bool:
    return name.startswith(DEMO_COPY_PREFIX)


def saved_words(before: Workspace, saved: Workspace) -> str:
    """'Saved as version 3.' — and, when the change was to the shared demo, where it went:
    the session's one copy of the demo, by name; the demo itself is left as it was."""
    text = f"Saved as version {saved.version:,}."
    if before.name == DEMO_NAME and saved.id != before.id:
        text += (f" The shared demo is left as it was: your changes are in your copy, "
                 f"{saved.name!r}.")
        if saved.version > 2:
            text += (" This change started again from the demo; the copy's earlier "
                     "versions stay in its history.")
    return text


@dataclass(frozen=True)
class WorkspaceRef:
    """What the browser holds: a workspace id and the version it is looking at."""

    id: str
    version: int

    def as_dict(self) -> dict[str, object]:
        return {"id": self.id, "version": self.version}

    @classmethod
    def from_dict(cls, data: object) -> WorkspaceRef | None:
        """The reference the page holds; None when it holds none yet. Anything else the
        server never handed out (an id that is not one, a version that is not a count,
        such as ``10**30``) is refused with ``UI701`` (the request gets 400)."""
        if data is None or data == {} or (isinstance(data, dict) and not data.get("id")):
            return None
        if not isinstance(data, dict):
            raise _bad_ref("a workspace reference", type(data).__name__)
        wid, version = data.get("id"), data.get("version") or 0
        if not isinstance(wid, str) or not _WORKSPACE_ID_RE.match(wid):
            raise _bad_ref("a workspace id", repr(wid)[:40])
        if isinstance(version, float) and version.is_integer():
            version = int(version)
        if isinstance(version, bool) or not isinstance(version, int) \
                or not 0 <= version <= MAX_VERSION:
            raise _bad_ref("a version number", repr(version)[:40])
        return cls(wid, version)


def _bad_ref(what: str, found: str) -> Exception:
    return fail(UI701, f"the page holds {what} the server never gave out",
                expected=f"{what} as the server sent it", found=found,
                fix="Reload the page.")


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
            require_write("save a change to the demo")
            with self._file_lock("demo-copies.lock"):
                copy = self._session_copy()
                if copy is None:
                    copy = self.store.create(demo_copy_name(), actor=actor)
                    self._remember_copy(copy.id)
                    action = f"{action} (on a copy of the shared demo)"
                else:
                    action = (f"{action} (on this session's copy of the shared demo, "
                              "starting again from the demo)")
                ws = dataclasses.replace(ws, id=copy.id, name=copy.name, version=copy.version)
                saved = self.store.save(ws, expected_version=ws.version, actor=actor,
                                        action=action)
        else:
            saved = self.store.save(ws, expected_version=ws.version, actor=actor, action=action)
        self._remember(saved)
        return saved

    def _copy_record(self) -> Path:
        session = current_access().session or "local"
        digest = hashlib.sha256(f"rb-demo-copy:{session}".encode()).hexdigest()[:32]
        return Path(self.settings.data_dir).resolve() / "demo-copies" / f"{digest}.json"

    def _session_copy(self) -> Workspace | None:
        """This browser session's copy of the demo (latest version), if it made one: each
        change to the demo in a session goes to that one copy, not to yet another."""
        try:
            copy_id = json.loads(self._copy_record().read_text(encoding="utf-8"))["id"]
        except (OSError, ValueError, KeyError, TypeError):
            return None
        if not isinstance(copy_id, str) or not self.store.exists(copy_id):
            return None
        return self.latest(copy_id)

    def _remember_copy(self, copy_id: str) -> None:
        path = self._copy_record()
        path.parent.mkdir(parents=True, exist_ok=True)
        tmp = path.with_suffix(f".{secrets.token_hex(4)}.tmp")
        tmp.write_text(json.dumps({"id": copy_id}), encoding="utf-8")
        os.replace(tmp, path)

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

    def _scope(self) -> Path:
        """This session's upload folder (a digest of the session id, never the id)."""
        session = current_access().session or "local"
        return self.upload_dir / hashlib.sha256(f"rb-upload:{session}".encode()).hexdigest()[:32]

    def keep_upload(self, data: bytes, filename: str, workspace_id: str | None = None) -> str:
        """Keep an uploaded file server-side for this session (and ``workspace_id``);
        returns its id (random). Refused to reviewers (``SH001``) and past this
        session's quota (``UI703``)."""
        require_write("upload a file")
        self.sweep_uploads()
        scope = self._scope()
        scope.mkdir(parents=True, exist_ok=True)
        quota = int(self.settings.upload_quota_bytes)
        used = sum(f.stat().st_size for f in scope.iterdir() if f.suffix == "" and f.is_file())
        if used + len(data) > quota:
            raise fail(UI703, "the files waiting to be added in this session use the space "
                       "allowed", expected=f"at most {quota:,} bytes waiting per session",
                       found=f"{used:,} bytes waiting and {len(data):,} more",
                       fix="Add or drop the files already read, wait for them to expire, or "
                           "ask the administrator to raise REALBASIS_UPLOAD_QUOTA_BYTES.",
                       file=filename)
        upload_id = secrets.token_hex(16)
        meta = {"filename": str(filename)[:255], "workspace": workspace_id, "size": len(data),
                "sha256": hashlib.sha256(data).hexdigest(), "kept_at": time.time()}
        tmp = scope / f"{upload_id}.{os.getpid()}.{threading.get_ident()}.tmp"
        tmp.write_bytes(data)
        (scope / f"{upload_id}.json").write_text(json.dumps(meta), encoding="utf-8")
        os.replace(tmp, scope / upload_id)
        return upload_id

    def upload(self, upload_id: str, workspace_id: str | None = None) -> tuple[bytes, str]:
        """The bytes and file name of an upload this session kept (for ``workspace_id``
        when given): ``UI003`` when there is none, it expired, or it belongs to another
        session or workspace (the same answer, so ids cannot be probed)."""
        if not isinstance(upload_id, str) or not _UPLOAD_ID_RE.match(upload_id):
            raise fail(UI003, "the upload reference is not valid",
                       expected="the id of a file uploaded on the intake screen",
                       found=repr(upload_id)[:80], fix="Upload the file again.")
        path = self._scope() / upload_id
        meta = self._meta(path)
        expired = meta is not None and time.time() - float(meta.get("kept_at", 0)) \
            > self.settings.upload_expiry_seconds
        if expired:
            self._drop(path)
        wrong_ws = (meta is not None and workspace_id is not None
                    and meta.get("workspace") not in (None, workspace_id))
        if meta is None or expired or wrong_ws or not path.exists():
            raise fail(UI003, "the dropped file is no longer waiting on the server",
                       expected=f"upload {upload_id[:8]}… kept in this browser session for "
                                "this workspace",
                       found="nothing (expired, or dropped in another session or workspace)",
                       fix="Drop the file again.")
        return path.read_bytes(), str(meta.get("filename") or "upload")

    @staticmethod
    def _meta(path: Path) -> dict[str, object] | None:
        try:
            meta = json.loads(path.with_suffix(".json").read_text(encoding="utf-8"))
        except (OSError, ValueError):
            return None
        return meta if isinstance(meta, dict) else None

    @staticmethod
    def _drop(path: Path) -> None:
        for p in (path, path.with_suffix(".json")):
            with contextlib.suppress(OSError):
                p.unlink()

    def sweep_uploads(self) -> int:
        """Delete kept files older than ``upload_expiry_seconds`` (every session's);
        returns how many files went."""
        if not self.upload_dir.is_dir():
            return 0
        cutoff = time.time() - self.settings.upload_expiry_seconds
        gone = 0
        for entry in list(self.upload_dir.iterdir()):
            with contextlib.suppress(OSError):
                if entry.is_dir():
                    for f in list(entry.iterdir()):
                        if f.stat().st_mtime < cutoff:
                            f.unlink()
                            gone += 1
                    if not any(entry.iterdir()):
                        entry.rmdir()
                elif entry.stat().st_mtime < cutoff:  # files of an older layout
                    entry.unlink()
                    gone += 1
        return gone

    def uploads_size(self) -> int:
        """Bytes kept in the upload folder (all sessions)."""
        if not self.upload_dir.is_dir():
            return 0
        return sum(f.stat().st_size for f in self.upload_dir.rglob("*") if f.is_file())
