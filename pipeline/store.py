"""Workspaces that last: the store behind the dashboard and the ``workspace`` command.

One :class:`WorkspaceStore` over any SQLAlchemy URL: an embedded SQLite file in the data
folder by default (no set-up), PostgreSQL (``postgresql+psycopg://...``) for a multi-host
deployment. The schema is created or upgraded when the store opens; the ``rb_schema``
table holds the schema version.

Saving is optimistic and versioned. Every workspace has a version; a save names the
version it was based on and is refused with ``ST002`` when somebody saved in between.
A save is one transaction that (1) moves the workspace's version from the expected one
to the next with a compare-and-swap ``UPDATE ... WHERE version = expected``, (2) writes
the series and index payloads it does not already hold (content-addressed by SHA-256,
never updated in place) and (3) writes an immutable version record (a manifest naming
every payload by hash, plus settings, own indexes and notes) and the audit events. Old
versions stay readable; nothing is ever overwritten, so a crash or a lost race cannot
destroy a committed workspace.

Who may write is decided by an access context (:func:`access_context`): the command line
and tests run as an editor; the dashboard binds a reviewer context to each request made
with a reviewer link, and every writing method here refuses with ``SH001`` under it —
the refusal happens where the change would happen, not in the user interface.
"""

from __future__ import annotations

import contextlib
import contextvars
import datetime as dt
import hashlib
import json
import math
import os
import secrets
import uuid
import zlib
from collections.abc import Iterable, Iterator, Mapping, Sequence
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any, Literal

import numpy as np
import pandas as pd
import sqlalchemy as sa
from sqlalchemy import event
from sqlalchemy.engine import Connection, Engine
from sqlalchemy.exc import ArgumentError, NoSuchModuleError, OperationalError

from .errors import RealbasisError, fail, register
from .model import Frequency, Series, Workspace
from .settings import Settings

ST001 = register("ST001", "workspace not found")
ST002 = register("ST002", "workspace was saved by someone else in the meantime")
ST003 = register("ST003", "workspace content cannot be stored")
ST004 = register("ST004", "database schema is newer than this program")
ST005 = register("ST005", "workspace database cannot be opened")
ST006 = register("ST006", "stored workspace data is damaged")
ST007 = register("ST007", "workspace name invalid")
ST008 = register("ST008", "workspace version not found")
SH001 = register("SH001", "read-only access: changes are refused")
SH002 = register("SH002", "reviewer link unknown, revoked or expired")
SH004 = register("SH004", "reviewer link not found")
SH005 = register("SH005", "reviewer link expiry invalid")
SH007 = register("SH007", "reviewer link does not open this workspace")
SH003 = register("SH003", "serving on a network needs an editor token")
SH006 = register("SH006", "editor access refused")
SH008 = register("SH008", "editor token too short")
SH009 = register("SH009", "too many wrong editor tokens: wait before trying again")
MIN_EDITOR_TOKEN = 32
"""Fewest characters an editor token may have (``SH008``)."""
LOOPBACK_HOSTS = frozenset({"127.0.0.1", "localhost", "::1", "[::1]"})

SCHEMA_VERSION = 3
"""Version 1: workspaces, versions, payloads, links, audit. Version 2: links record
when they were last used (``rb_links.last_used_at``). Version 3: web sign-in bookkeeping
(``rb_sessions``: editor sessions the server can end; ``rb_throttle``: wrong-token
counts shared by every worker)."""

TOKEN_BYTES = 32  # secrets.token_urlsafe(32): 256 random bits
_LAST_USED_EVERY = dt.timedelta(seconds=60)

# --------------------------------------------------------------------------- schema

metadata = sa.MetaData()

schema_table = sa.Table(
    "rb_schema", metadata,
    sa.Column("id", sa.Integer, primary_key=True),
    sa.Column("version", sa.Integer, nullable=False),
    sa.Column("upgraded_at", sa.DateTime(timezone=True), nullable=False),
)

workspaces_table = sa.Table(
    "rb_workspaces", metadata,
    sa.Column("id", sa.String(64), primary_key=True),
    sa.Column("name", sa.String(200), nullable=False),
    sa.Column("version", sa.Integer, nullable=False),
    sa.Column("created_at", sa.DateTime(timezone=True), nullable=False),
    sa.Column("updated_at", sa.DateTime(timezone=True), nullable=False),
    sa.Column("created_by", sa.String(200), nullable=False, default=""),
)

versions_table = sa.Table(
    "rb_versions", metadata,
    sa.Column("workspace_id", sa.String(64), sa.ForeignKey("rb_workspaces.id"),
              primary_key=True),
    sa.Column("version", sa.Integer, primary_key=True),
    sa.Column("saved_at", sa.DateTime(timezone=True), nullable=False),
    sa.Column("actor", sa.String(200), nullable=False),
    sa.Column("action", sa.String(200), nullable=False),
    sa.Column("name", sa.String(200), nullable=False),
    sa.Column("manifest", sa.Text, nullable=False),
    sa.Column("manifest_sha256", sa.String(64), nullable=False),
)

blobs_table = sa.Table(
    "rb_blobs", metadata,
    sa.Column("sha256", sa.String(64), primary_key=True),
    sa.Column("size", sa.Integer, nullable=False),
    sa.Column("payload", sa.LargeBinary, nullable=False),
)

links_table = sa.Table(
    "rb_links", metadata,
    sa.Column("id", sa.String(32), primary_key=True),
    sa.Column("workspace_id", sa.String(64), sa.ForeignKey("rb_workspaces.id"),
              nullable=False, index=True),
    sa.Column("token_sha256", sa.String(64), nullable=False, unique=True),
    sa.Column("label", sa.String(200), nullable=False, default=""),
    sa.Column("created_at", sa.DateTime(timezone=True), nullable=False),
    sa.Column("created_by", sa.String(200), nullable=False, default=""),
    sa.Column("expires_at", sa.DateTime(timezone=True), nullable=True),
    sa.Column("revoked_at", sa.DateTime(timezone=True), nullable=True),
    sa.Column("last_used_at", sa.DateTime(timezone=True), nullable=True),
)

audit_table = sa.Table(
    "rb_audit", metadata,
    sa.Column("id", sa.Integer, primary_key=True, autoincrement=True),
    sa.Column("workspace_id", sa.String(64), sa.ForeignKey("rb_workspaces.id"),
              nullable=False, index=True),
    sa.Column("at", sa.DateTime(timezone=True), nullable=False),
    sa.Column("actor", sa.String(200), nullable=False),
    sa.Column("event", sa.String(40), nullable=False),
    sa.Column("version", sa.Integer, nullable=True),
    sa.Column("detail", sa.Text, nullable=False),
)


def _migrate_to_2(conn: Connection) -> None:
    cols = {c["name"] for c in sa.inspect(conn).get_columns("rb_links")}
    if "last_used_at" not in cols:
        conn.execute(sa.text("ALTER TABLE rb_links ADD COLUMN last_used_at "
                             + ("TIMESTAMP WITH TIME ZONE" if conn.dialect.name == "postgresql"
                                else "DATETIME")))


sessions_table = sa.Table(
    "rb_sessions", metadata,
    sa.Column("id_sha256", sa.String(64), primary_key=True),
    sa.Column("role", sa.String(20), nullable=False),
    sa.Column("grant_fp", sa.String(64), nullable=False, default=""),
    sa.Column("created_at", sa.DateTime(timezone=True), nullable=False),
    sa.Column("expires_at", sa.DateTime(timezone=True), nullable=False),
    sa.Column("revoked_at", sa.DateTime(timezone=True), nullable=True),
)

throttle_table = sa.Table(
    "rb_throttle", metadata,
    sa.Column("key", sa.String(160), primary_key=True),
    sa.Column("window_start", sa.DateTime(timezone=True), nullable=False),
    sa.Column("failures", sa.Integer, nullable=False),
)


def _migrate_to_3(conn: Connection) -> None:
    """rb_sessions and rb_throttle are new tables: ``metadata.create_all`` made them."""


_MIGRATIONS = {2: _migrate_to_2, 3: _migrate_to_3}
"""Step ``n`` upgrades a schema of version ``n - 1`` to ``n``; run in order on open."""

# --------------------------------------------------------------------------- access


@dataclass(frozen=True)
class AccessContext:
    """Who is acting. ``editor`` may change anything; ``reviewer`` may only read the one
    workspace its link opens (``workspace_id``)."""

    role: Literal["editor", "reviewer"] = "editor"
    workspace_id: str | None = None
    actor: str = "editor"
    link_id: str | None = None
    session: str = ""
    """The browser session acting (random; scopes kept uploads); empty outside the web."""
    refused: list[str] = field(default_factory=list, compare=False, hash=False, repr=False)
    """Changes refused under this context (the web layer turns any into a 403)."""

    @property
    def read_only(self) -> bool:
        return self.role != "editor"


_EDITOR = AccessContext()
_ACCESS: contextvars.ContextVar[AccessContext] = contextvars.ContextVar(
    "realbasis_access", default=_EDITOR)


def current_access() -> AccessContext:
    return _ACCESS.get()


def set_access(ctx: AccessContext) -> contextvars.Token[AccessContext]:
    """Bind ``ctx`` to the current context (a web request); undo with :func:`reset_access`."""
    return _ACCESS.set(ctx)


def reset_access(token: contextvars.Token[AccessContext]) -> None:
    _ACCESS.reset(token)


@contextlib.contextmanager
def access_context(ctx: AccessContext) -> Iterator[AccessContext]:
    token = _ACCESS.set(ctx)
    try:
        yield ctx
    finally:
        _ACCESS.reset(token)


def require_write(what: str) -> None:
    """Refuse a change under read-only (reviewer) access with ``SH001``."""
    ctx = _ACCESS.get()
    if ctx.read_only:
        ctx.refused.append(what)
        raise fail(SH001, f"a reviewer link is read-only: cannot {what}",
                   expected="editor access", found=f"{ctx.role} access",
                   fix="Ask the workspace's editor to make the change; reviewer links "
                       "only show the work.")


def is_loopback_host(host: str) -> bool:
    return str(host).strip().lower() in LOOPBACK_HOSTS


def check_serving(settings: Settings) -> None:
    """Refuse to serve beyond this machine without an editor token (``SH003``), and an
    editor token shorter than :data:`MIN_EDITOR_TOKEN` characters (``SH008``)."""
    token = settings.editor_token
    if token is not None and len(token.strip()) < MIN_EDITOR_TOKEN:
        raise fail(SH008, "the editor token is too short to keep guessers out",
                   expected=f"REALBASIS_EDITOR_TOKEN of at least {MIN_EDITOR_TOKEN} characters",
                   found=f"{len(token.strip())} character(s)",
                   fix="Set REALBASIS_EDITOR_TOKEN to a long random secret, e.g. from "
                       "`python -c 'import secrets; print(secrets.token_urlsafe(32))'`.")
    if not is_loopback_host(settings.host) and not settings.editor_token:
        raise fail(SH003, f"serving on {settings.host} needs an editor token",
                   expected="REALBASIS_EDITOR_TOKEN set when REALBASIS_HOST is not 127.0.0.1",
                   found=f"host {settings.host}, no editor token",
                   fix="Set REALBASIS_EDITOR_TOKEN to a long random secret (e.g. `python -c "
                       "'import secrets; print(secrets.token_urlsafe(32))'`), or serve on "
                       "127.0.0.1.")


def require_read(workspace_id: str) -> None:
    """Refuse reading another workspace than a reviewer link's own (``SH007``); for
    caches in front of the store."""
    _require_read(workspace_id)


def _require_read(workspace_id: str) -> None:
    ctx = _ACCESS.get()
    if ctx.role == "reviewer" and ctx.workspace_id != workspace_id:
        raise fail(SH007, "this reviewer link opens another workspace",
                   expected=f"workspace {ctx.workspace_id}", found=f"workspace {workspace_id}",
                   fix="Use the link the editor sent for this workspace.")


# --------------------------------------------------------------------------- series codec


def _json_value(v: Any) -> Any:
    if isinstance(v, float | np.floating) and not math.isfinite(float(v)):
        return None if math.isnan(float(v)) else ("inf" if v > 0 else "-inf")
    if isinstance(v, np.generic):
        return v.item()
    return v


def series_to_dict(s: Series) -> dict[str, Any]:
    """Every field of a :class:`~pipeline.model.Series` as JSON-safe data.

    Periods are stored as pandas ordinals with the index's frequency string, values as
    shortest round-trip floats (NaN as null, infinities as "inf"/"-inf")."""
    idx = s.values.index
    doc: dict[str, Any] = {
        "name": s.name,
        "frequency": {"code": s.frequency.code, "fy_start": s.frequency.fy_start},
        "freq": idx.freqstr,
        "ordinals": [int(o) for o in idx.asi8],
        "values": [_json_value(v) for v in s.values.to_numpy(dtype="float64")],
        "values_name": _json_value(s.values.name),
        "kind": s.kind,
        "unit": s.unit,
        "source": s.source,
        "vintage": s.vintage,
        "reference": s.reference,
        "notes": list(s.notes),
        "status": None,
    }
    if s.status is not None:
        sidx = s.status.index
        doc["status"] = {
            "freq": sidx.freqstr if isinstance(sidx, pd.PeriodIndex) else idx.freqstr,
            "ordinals": [int(o) for o in pd.PeriodIndex(sidx).asi8],
            "values": [None if (isinstance(v, float) and math.isnan(v)) else str(v)
                       for v in s.status.tolist()],
        }
    return doc


def _float(v: Any) -> float:
    if v is None:
        return math.nan
    if v == "inf":
        return math.inf
    if v == "-inf":
        return -math.inf
    return float(v)


def series_from_dict(doc: Mapping[str, Any]) -> Series:
    idx = pd.PeriodIndex.from_ordinals(doc["ordinals"], freq=doc["freq"])
    values = pd.Series(np.array([_float(v) for v in doc["values"]], dtype="float64"),
                       index=idx, name=doc.get("values_name"))
    status = None
    if doc.get("status") is not None:
        st = doc["status"]
        sidx = pd.PeriodIndex.from_ordinals(st["ordinals"], freq=st["freq"])
        status = pd.Series(st["values"], index=sidx, dtype=object)
    freq = doc["frequency"]
    return Series(
        name=doc["name"], values=values,
        frequency=Frequency(freq["code"], int(freq["fy_start"])),
        kind=doc["kind"], unit=doc.get("unit"), status=status, source=doc.get("source"),
        vintage=doc.get("vintage"), reference=doc.get("reference"),
        notes=tuple(doc.get("notes") or ()),
    )


def _canonical(doc: Any, *, sort: bool = True) -> bytes:
    """Compact JSON; ``sort=False`` keeps mapping order (manifests keep the order in which
    series, indexes and settings were added)."""
    return json.dumps(doc, sort_keys=sort, separators=(",", ":"), ensure_ascii=False,
                      allow_nan=False).encode("utf-8")


def _json_safe(value: Any, what: str) -> Any:
    try:
        return json.loads(_canonical(value, sort=False))
    except (TypeError, ValueError) as err:
        raise fail(ST003, f"{what} cannot be stored as JSON",
                   expected="strings, numbers, booleans, lists and mappings with text keys",
                   found=str(err), fix=f"Keep {what} to plain JSON values.") from None


# --------------------------------------------------------------------------- records


def _utc(v: dt.datetime | None) -> dt.datetime | None:
    if v is None:
        return None
    return v.replace(tzinfo=dt.UTC) if v.tzinfo is None else v.astimezone(dt.UTC)


def _now() -> dt.datetime:
    return dt.datetime.now(dt.UTC)


@dataclass(frozen=True)
class WorkspaceInfo:
    id: str
    name: str
    version: int
    created_at: dt.datetime
    updated_at: dt.datetime


@dataclass(frozen=True)
class VersionInfo:
    version: int
    saved_at: dt.datetime
    actor: str
    action: str
    name: str


@dataclass(frozen=True)
class LinkInfo:
    """A reviewer link as the store knows it (never the token itself)."""

    id: str
    workspace_id: str
    label: str
    created_at: dt.datetime
    created_by: str
    expires_at: dt.datetime | None
    revoked_at: dt.datetime | None
    last_used_at: dt.datetime | None = None

    def state(self, now: dt.datetime | None = None) -> Literal["active", "revoked", "expired"]:
        now = now or _now()
        if self.revoked_at is not None:
            return "revoked"
        if self.expires_at is not None and self.expires_at <= now:
            return "expired"
        return "active"

    @property
    def active(self) -> bool:
        return self.state() == "active"


@dataclass(frozen=True)
class AuditEvent:
    id: int
    workspace_id: str
    at: dt.datetime
    actor: str
    event: str
    version: int | None
    detail: Mapping[str, Any] = field(default_factory=dict)

    def describe(self, limit: int | None = 240) -> str:
        """One line in words for the audit view and the workbook; values longer than
        ``limit`` characters are cut with an ellipsis (None: never)."""
        d = self.detail

        def short(v: object) -> str:
            if limit is not None and isinstance(v, str) and "\n" in v.strip():
                lines = v.strip().splitlines()
                return f"{lines[0][:limit]!r}… ({len(lines)} lines)"
            text = repr(v)
            return text if limit is None or len(text) <= limit else text[:limit] + "…"

        if self.event == "upload":
            return (f"uploaded {d.get('filename')} ({d.get('size')} bytes, "
                    f"sha256 {str(d.get('sha256'))[:12]}…)")
        if self.event == "settings":
            return f"setting {d.get('key')!s}: {short(d.get('old'))} -> {short(d.get('new'))}"
        if self.event == "indexes":
            parts = []
            if d.get("added"):
                parts.append("added " + ", ".join(_vintage_words(d["added"])))
            if d.get("removed"):
                parts.append("removed " + ", ".join(_vintage_words(d["removed"])))
            return "index vintages " + "; ".join(parts)
        if self.event == "used":
            return (f"{d.get('purpose', 'used')}: "
                    + ", ".join(_vintage_words(d.get("vintages", []))))
        if self.event == "save":
            return f"saved version {self.version} ({d.get('action', '')})"
        if self.event == "create":
            return f"created workspace {d.get('name')!r}"
        if self.event == "link-create":
            exp = d.get("expires_at") or "never"
            return f"reviewer link {d.get('link_id')} created ({d.get('label') or 'no label'}; expires {exp})"
        if self.event == "link-revoke":
            return f"reviewer link {d.get('link_id')} revoked"
        return f"{self.event}: {json.dumps(d, sort_keys=True)}"


def _vintage_words(pairs: Iterable[Sequence[str]]) -> list[str]:
    return [f"{name} (vintage {vin or 'unknown'})" for name, vin in pairs]


def hash_token(token: str) -> str:
    """The stored form of a reviewer token: hex SHA-256 of its UTF-8 text."""
    return hashlib.sha256(token.encode("utf-8")).hexdigest()


# --------------------------------------------------------------------------- engine


def normalise_url(url: str) -> str:
    """Accept ``postgres://`` and ``postgresql://`` as the psycopg (v3) driver."""
    try:
        u = sa.engine.make_url(url)
    except ArgumentError:
        raise fail(ST005, "the database URL is not a valid SQLAlchemy URL",
                   expected="e.g. sqlite:////path/realbasis.sqlite or "
                            "postgresql+psycopg://user@host/db",
                   found=repr(url), fix="Correct REALBASIS_DATABASE_URL.") from None
    if u.drivername in ("postgresql", "postgres"):
        u = u.set(drivername="postgresql+psycopg")
    return u.render_as_string(hide_password=False)


def _make_engine(url: str) -> Engine:
    url = normalise_url(url)
    u = sa.engine.make_url(url)
    try:
        if u.get_backend_name() == "sqlite":
            if u.database and u.database != ":memory:":
                Path(u.database).parent.mkdir(parents=True, exist_ok=True)
            engine = sa.create_engine(url, connect_args={"timeout": 30,
                                                         "check_same_thread": False})
            _sqlite_events(engine)
        else:
            engine = sa.create_engine(url, pool_pre_ping=True)
    except (NoSuchModuleError, ImportError) as err:
        raise fail(ST005, "no driver for this database URL", found=str(err),
                   expected="sqlite or postgresql+psycopg",
                   fix="Install the driver (pip install 'realbasis[postgres]').") from None
    return engine


def _sqlite_events(engine: Engine) -> None:
    @event.listens_for(engine, "connect")
    def _connect(dbapi_conn: Any, _rec: Any) -> None:
        dbapi_conn.isolation_level = None  # we issue BEGIN ourselves
        cur = dbapi_conn.cursor()
        cur.execute("PRAGMA busy_timeout=30000")
        cur.execute("PRAGMA journal_mode=WAL")
        cur.execute("PRAGMA synchronous=FULL")
        cur.execute("PRAGMA foreign_keys=ON")
        cur.close()

    @event.listens_for(engine, "begin")
    def _begin(conn: Connection) -> None:
        # Writers take the write lock up front so that two savers queue on the busy
        # timeout instead of failing half-way with a stale snapshot.
        write = conn.get_execution_options().get("rb_write", False)
        conn.exec_driver_sql("BEGIN IMMEDIATE" if write else "BEGIN")


# --------------------------------------------------------------------------- the store


class WorkspaceStore:
    """Versioned workspaces, reviewer links and the audit trail over one database."""

    def __init__(self, url: str) -> None:
        self.url = normalise_url(url)
        self.engine = _make_engine(self.url)
        self._pid = os.getpid()
        self._open()

    @classmethod
    def from_settings(cls, settings: Settings) -> WorkspaceStore:
        return cls(settings.effective_database_url)

    def close(self) -> None:
        self.engine.dispose()

    def __enter__(self) -> WorkspaceStore:
        return self

    def __exit__(self, *exc: object) -> None:
        self.close()

    # ----- connections

    def _check_fork(self) -> None:
        # A store opened before gunicorn forks must not share pooled connections.
        if os.getpid() != self._pid:
            self.engine.dispose(close=False)
            self._pid = os.getpid()

    @contextlib.contextmanager
    def _read(self) -> Iterator[Connection]:
        self._check_fork()
        try:
            with self.engine.connect() as conn, conn.begin():
                yield conn
        except OperationalError as err:
            raise self._unreachable(err) from None

    @contextlib.contextmanager
    def _write(self) -> Iterator[Connection]:
        self._check_fork()
        try:
            with self.engine.connect() as conn:
                conn.execution_options(rb_write=True)
                with conn.begin():
                    yield conn
        except OperationalError as err:
            raise self._unreachable(err) from None

    def _unreachable(self, err: OperationalError) -> RealbasisError:
        return fail(ST005, "the workspace database cannot be reached or is busy",
                    expected=f"a working database at {self._safe_url()}",
                    found=str(err.orig).strip() or type(err.orig).__name__,
                    fix="Check the database is running and REALBASIS_DATABASE_URL; "
                        "retry if another save was holding it.")

    def _safe_url(self) -> str:
        return sa.engine.make_url(self.url).render_as_string(hide_password=True)

    def _open(self) -> None:
        """Create or upgrade the schema, once, even with several workers starting."""
        with self._write() as conn:
            if conn.dialect.name == "postgresql":
                conn.execute(sa.text("SELECT pg_advisory_xact_lock(7746011)"))
            insp = sa.inspect(conn)
            if not insp.has_table("rb_schema"):
                metadata.create_all(conn)
                conn.execute(schema_table.insert().values(id=1, version=SCHEMA_VERSION,
                                                          upgraded_at=_now()))
                return
            found = conn.execute(sa.select(schema_table.c.version)
                                 .where(schema_table.c.id == 1)).scalar_one_or_none()
            if found is None:
                raise fail(ST006, "the schema table is empty", found="rb_schema has no row",
                           expected="one row with the schema version",
                           fix="Restore the database from a backup.")
            if found > SCHEMA_VERSION:
                raise fail(ST004, "the database was written by a newer realbasis",
                           expected=f"schema version <= {SCHEMA_VERSION}",
                           found=f"schema version {found}",
                           fix="Upgrade realbasis on this host to the version the other "
                               "hosts run.")
            metadata.create_all(conn)  # tables added by later versions, if any
            for step in range(found + 1, SCHEMA_VERSION + 1):
                _MIGRATIONS[step](conn)
            if found != SCHEMA_VERSION:
                conn.execute(schema_table.update().where(schema_table.c.id == 1)
                             .values(version=SCHEMA_VERSION, upgraded_at=_now()))

    def schema_version(self) -> int:
        with self._read() as conn:
            return int(conn.execute(sa.select(schema_table.c.version)).scalar_one())

    # ----- workspaces

    def create(self, name: str, *, actor: str = "editor") -> Workspace:
        """A new, empty workspace at version 1."""
        require_write("create a workspace")
        name = _check_name(name)
        ws = Workspace(id=uuid.uuid4().hex, name=name, version=1)
        manifest = {"series": {}, "indexes": {}, "settings": {}, "own_indexes": {},
                    "notes": ""}
        now = _now()
        with self._write() as conn:
            conn.execute(workspaces_table.insert().values(
                id=ws.id, name=name, version=1, created_at=now, updated_at=now,
                created_by=actor))
            self._insert_version(conn, ws.id, 1, name, manifest, actor, "create", now)
            self._audit(conn, ws.id, actor, "create", 1, {"name": name}, now)
        return ws

    def list(self) -> list[WorkspaceInfo]:
        ctx = current_access()
        q = sa.select(workspaces_table).order_by(workspaces_table.c.updated_at.desc())
        if ctx.role == "reviewer":
            q = q.where(workspaces_table.c.id == ctx.workspace_id)
        with self._read() as conn:
            rows = conn.execute(q).mappings().all()
        return [WorkspaceInfo(r["id"], r["name"], r["version"], _utc(r["created_at"]),
                              _utc(r["updated_at"])) for r in rows]  # type: ignore[arg-type]

    def exists(self, workspace_id: str) -> bool:
        with self._read() as conn:
            return conn.execute(sa.select(workspaces_table.c.id).where(
                workspaces_table.c.id == workspace_id)).first() is not None

    def current_version(self, workspace_id: str) -> int:
        _require_read(workspace_id)
        with self._read() as conn:
            v = conn.execute(sa.select(workspaces_table.c.version).where(
                workspaces_table.c.id == workspace_id)).scalar_one_or_none()
        if v is None:
            raise _not_found(workspace_id)
        return int(v)

    def load(self, workspace_id: str, version: int | None = None) -> Workspace:
        """The workspace as last saved (or as saved at ``version``)."""
        _require_read(workspace_id)
        with self._read() as conn:
            if version is None:
                version = conn.execute(sa.select(workspaces_table.c.version).where(
                    workspaces_table.c.id == workspace_id)).scalar_one_or_none()
                if version is None:
                    raise _not_found(workspace_id)
            row = conn.execute(sa.select(versions_table).where(
                versions_table.c.workspace_id == workspace_id,
                versions_table.c.version == version)).mappings().first()
            if row is None:
                if not conn.execute(sa.select(workspaces_table.c.id).where(
                        workspaces_table.c.id == workspace_id)).first():
                    raise _not_found(workspace_id)
                raise fail(ST008, f"workspace {workspace_id} has no version {version}",
                           expected="a version listed by history()", found=str(version),
                           fix="Pick a saved version.")
            manifest = self._manifest(row)
            hashes = set(manifest["series"].values())
            for vins in manifest["indexes"].values():
                hashes.update(vins.values())
            blobs = self._blobs(conn, hashes)
        series = {name: blobs[h] for name, h in manifest["series"].items()}
        indexes = {name: {vin: blobs[h] for vin, h in vins.items()}
                   for name, vins in manifest["indexes"].items()}
        return Workspace(id=workspace_id, name=row["name"], version=int(version),
                         series=series, indexes=indexes, settings=manifest["settings"],
                         own_indexes=manifest["own_indexes"], notes=manifest["notes"])

    def history(self, workspace_id: str) -> list[VersionInfo]:
        _require_read(workspace_id)
        with self._read() as conn:
            rows = conn.execute(sa.select(versions_table.c.version, versions_table.c.saved_at,
                                          versions_table.c.actor, versions_table.c.action,
                                          versions_table.c.name)
                                .where(versions_table.c.workspace_id == workspace_id)
                                .order_by(versions_table.c.version)).all()
        if not rows:
            raise _not_found(workspace_id)
        return [VersionInfo(r.version, _utc(r.saved_at), r.actor, r.action, r.name)  # type: ignore[arg-type]
                for r in rows]

    def save(self, ws: Workspace, *, expected_version: int | None = None,
             actor: str = "editor", action: str = "save") -> Workspace:
        """Store ``ws`` as the next version, in one transaction.

        ``expected_version`` (default ``ws.version``) is the version the change was based
        on. If the stored version differs, nothing is written and ``ST002`` is raised;
        reload, re-apply the change and save again. Returns the saved workspace with its
        new version number."""
        require_write("save the workspace")
        _require_read(ws.id)
        expected = ws.version if expected_version is None else int(expected_version)
        name = _check_name(ws.name)
        payloads: dict[str, bytes] = {}
        manifest: dict[str, Any] = {"series": {}, "indexes": {}}
        for key, s in ws.series.items():
            manifest["series"][str(key)] = _add_payload(payloads, s, f"series {key!r}")
        for key, vins in ws.indexes.items():
            manifest["indexes"][str(key)] = {
                str(vin): _add_payload(payloads, s, f"index {key!r} vintage {vin!r}")
                for vin, s in vins.items()}
        manifest["settings"] = _json_safe(dict(ws.settings), "workspace settings")
        manifest["own_indexes"] = _json_safe(dict(ws.own_indexes), "own index recipes")
        manifest["notes"] = str(ws.notes or "")
        now = _now()
        new_version = expected + 1
        with self._write() as conn:
            done = conn.execute(
                workspaces_table.update()
                .where(workspaces_table.c.id == ws.id,
                       workspaces_table.c.version == expected)
                .values(version=new_version, updated_at=now, name=name))
            if done.rowcount != 1:
                stored = conn.execute(sa.select(workspaces_table.c.version).where(
                    workspaces_table.c.id == ws.id)).scalar_one_or_none()
                if stored is None:
                    raise _not_found(ws.id)
                raise fail(
                    ST002, f"workspace {name!r} was saved by someone else since version "
                           f"{expected}; your change was not saved and nothing was overwritten",
                    expected=f"stored version {expected}", found=f"stored version {stored}",
                    fix="Reload the workspace (it keeps the other change), re-apply yours "
                        "and save again.")
            prev_row = conn.execute(sa.select(versions_table).where(
                versions_table.c.workspace_id == ws.id,
                versions_table.c.version == expected)).mappings().first()
            prev = self._manifest(prev_row) if prev_row is not None else {
                "settings": {}, "indexes": {}}
            self._put_blobs(conn, payloads)
            self._insert_version(conn, ws.id, new_version, name, manifest, actor, action, now)
            self._audit(conn, ws.id, actor, "save", new_version, {"action": action}, now)
            for key in sorted(set(prev["settings"]) | set(manifest["settings"])):
                old, new = prev["settings"].get(key), manifest["settings"].get(key)
                if old != new:
                    self._audit(conn, ws.id, actor, "settings", new_version,
                                {"key": key, "old": old, "new": new}, now)
            before = _vintage_pairs(prev["indexes"])
            after = _vintage_pairs(manifest["indexes"])
            if before != after:
                self._audit(conn, ws.id, actor, "indexes", new_version,
                            {"added": sorted(after - before), "removed": sorted(before - after)},
                            now)
        return Workspace(id=ws.id, name=name, version=new_version,
                         series=dict(ws.series), indexes={k: dict(v) for k, v in ws.indexes.items()},
                         settings=manifest["settings"], own_indexes=manifest["own_indexes"],
                         notes=manifest["notes"])

    def verify(self, workspace_id: str) -> int:
        """Check every saved version of a workspace: manifests and payloads match their
        SHA-256 and decode. Returns the number of versions checked; raises ``ST006``."""
        _require_read(workspace_id)
        n = 0
        with self._read() as conn:
            rows = conn.execute(sa.select(versions_table).where(
                versions_table.c.workspace_id == workspace_id)).mappings().all()
            for row in rows:
                manifest = self._manifest(row)
                hashes = set(manifest["series"].values())
                for vins in manifest["indexes"].values():
                    hashes.update(vins.values())
                self._blobs(conn, hashes)
                n += 1
            current = conn.execute(sa.select(workspaces_table.c.version).where(
                workspaces_table.c.id == workspace_id)).scalar_one_or_none()
        if current is None:
            raise _not_found(workspace_id)
        if current not in {int(r["version"]) for r in rows}:
            raise fail(ST006, f"workspace {workspace_id} points at a missing version",
                       expected=f"a stored version {current}", found="none",
                       fix="Restore the database from a backup.")
        return n

    # ----- audit trail

    def record_upload(self, workspace_id: str, filename: str, size: int, sha256: str,
                      actor: str = "editor") -> None:
        """Note a file that was uploaded into the workspace."""
        require_write("record an upload")
        self._event(workspace_id, actor, "upload",
                    {"filename": str(filename), "size": int(size), "sha256": str(sha256)})

    def record_use(self, workspace_id: str, vintages: Mapping[str, str | None] |
                   Iterable[tuple[str, str | None]], *, purpose: str = "used",
                   actor: str = "editor") -> None:
        """Note which index vintages a computation or export used."""
        require_write("record index use")
        items = vintages.items() if isinstance(vintages, Mapping) else vintages
        pairs = sorted([str(k), str(v or "")] for k, v in items)
        self._event(workspace_id, actor, "used", {"purpose": purpose, "vintages": pairs})

    def audit(self, workspace_id: str) -> list[AuditEvent]:
        """The workspace's audit trail, oldest first. Reviewers may read it."""
        _require_read(workspace_id)
        with self._read() as conn:
            rows = conn.execute(sa.select(audit_table)
                                .where(audit_table.c.workspace_id == workspace_id)
                                .order_by(audit_table.c.id)).mappings().all()
            if not rows and not conn.execute(sa.select(workspaces_table.c.id).where(
                    workspaces_table.c.id == workspace_id)).first():
                raise _not_found(workspace_id)
        return [AuditEvent(r["id"], r["workspace_id"], _utc(r["at"]), r["actor"],  # type: ignore[arg-type]
                           r["event"], r["version"], json.loads(r["detail"])) for r in rows]

    # ----- reviewer links

    def create_link(self, workspace_id: str, *, expires_at: dt.datetime | None = None,
                    label: str = "", actor: str = "editor") -> tuple[str, LinkInfo]:
        """A new reviewer link. Returns the token (shown once, never stored) and its info.

        The token is ``secrets.token_urlsafe(32)`` (256 random bits); only its SHA-256
        is stored."""
        require_write("create a reviewer link")
        now = _now()
        expires_at = _utc(expires_at)
        if expires_at is not None and expires_at <= now:
            raise fail(SH005, "a reviewer link cannot expire in the past",
                       expected=f"a time after {now.isoformat(timespec='seconds')}",
                       found=expires_at.isoformat(timespec="seconds"),
                       fix="Choose a later expiry or none.")
        token = secrets.token_urlsafe(TOKEN_BYTES)
        info = LinkInfo(id=secrets.token_hex(6), workspace_id=workspace_id,
                        label=str(label)[:200], created_at=now, created_by=actor,
                        expires_at=expires_at, revoked_at=None)
        with self._write() as conn:
            self._must_exist(conn, workspace_id)
            conn.execute(links_table.insert().values(
                id=info.id, workspace_id=workspace_id, token_sha256=hash_token(token),
                label=info.label, created_at=now, created_by=actor, expires_at=expires_at))
            self._audit(conn, workspace_id, actor, "link-create", None,
                        {"link_id": info.id, "label": info.label,
                         "expires_at": expires_at.isoformat(timespec="seconds") if expires_at
                         else None}, now)
        return token, info

    def list_links(self, workspace_id: str) -> list[LinkInfo]:
        require_write("see the reviewer links")
        with self._read() as conn:
            rows = conn.execute(sa.select(links_table)
                                .where(links_table.c.workspace_id == workspace_id)
                                .order_by(links_table.c.created_at)).mappings().all()
        return [_link(r) for r in rows]

    def revoke_link(self, link_id: str, *, actor: str = "editor") -> LinkInfo:
        require_write("revoke a reviewer link")
        now = _now()
        with self._write() as conn:
            row = conn.execute(sa.select(links_table).where(links_table.c.id == link_id)
                               ).mappings().first()
            if row is None:
                raise fail(SH004, f"no reviewer link {link_id!r}", found=repr(link_id),
                           expected="an id from the list of links",
                           fix="Refresh the list of links.")
            if row["revoked_at"] is None:
                conn.execute(links_table.update().where(links_table.c.id == link_id)
                             .values(revoked_at=now))
                self._audit(conn, row["workspace_id"], actor, "link-revoke", None,
                            {"link_id": link_id}, now)
            row = conn.execute(sa.select(links_table).where(links_table.c.id == link_id)
                               ).mappings().first()
        return _link(row)

    def resolve_token(self, token: str, *, touch: bool = True) -> LinkInfo | None:
        """The active link a token opens, or None (unknown, revoked or expired)."""
        if not token or len(token) > 200:
            return None
        digest = hash_token(token)
        with self._read() as conn:
            row = conn.execute(sa.select(links_table).where(
                links_table.c.token_sha256 == digest)).mappings().first()
        if row is None:
            return None
        info = _link(row)
        if not info.active:
            return None
        now = _now()
        if touch and (info.last_used_at is None or now - info.last_used_at > _LAST_USED_EVERY):
            # Bookkeeping by the server itself, not a change by the reviewer.
            with contextlib.suppress(RealbasisError), self._write() as conn:
                conn.execute(links_table.update().where(links_table.c.id == info.id)
                             .values(last_used_at=now))
        return info

    # ----- sign-in bookkeeping (the server's own records, not anyone's work: these never
    # call require_write, as recording a link's last use does not)

    def open_session(self, role: str, *, grant: str = "",
                     lifetime: dt.timedelta = dt.timedelta(hours=12)) -> str:
        """A new web session: returns its id (random, 256 bits; only its SHA-256 is
        stored). ``grant`` fingerprints what granted it (the editor token): a session
        only counts while the same grant is presented (see :meth:`session_role`)."""
        sid = secrets.token_urlsafe(TOKEN_BYTES)
        now = _now()
        with self._write() as conn:
            conn.execute(sessions_table.delete().where(
                sessions_table.c.expires_at < now - dt.timedelta(days=1)))
            conn.execute(sessions_table.insert().values(
                id_sha256=hash_token(sid), role=str(role)[:20], grant_fp=str(grant)[:64],
                created_at=now, expires_at=now + lifetime))
        return sid

    def session_role(self, sid: str, *, grant: str = "") -> str | None:
        """The role of an open session, or None (unknown, ended, expired, or granted by
        something no longer in force)."""
        if not sid or not isinstance(sid, str) or len(sid) > 200:
            return None
        with self._read() as conn:
            row = conn.execute(sa.select(sessions_table).where(
                sessions_table.c.id_sha256 == hash_token(sid))).mappings().first()
        if row is None or row["revoked_at"] is not None:
            return None
        if _utc(row["expires_at"]) <= _now():  # type: ignore[operator]
            return None
        if not secrets.compare_digest(str(row["grant_fp"]), str(grant)):
            return None
        return str(row["role"])

    def close_session(self, sid: str) -> bool:
        """End one session (sign-out); True when it was open."""
        if not sid or not isinstance(sid, str) or len(sid) > 200:
            return False
        with self._write() as conn:
            done = conn.execute(sessions_table.update().where(
                sessions_table.c.id_sha256 == hash_token(sid),
                sessions_table.c.revoked_at.is_(None)).values(revoked_at=_now()))
        return bool(done.rowcount)

    def close_sessions(self, role: str | None = None) -> int:
        """End every open session (of ``role``); returns how many were open."""
        now = _now()
        q = sessions_table.update().where(sessions_table.c.revoked_at.is_(None),
                                          sessions_table.c.expires_at > now)
        if role is not None:
            q = q.where(sessions_table.c.role == role)
        with self._write() as conn:
            return int(conn.execute(q.values(revoked_at=now)).rowcount or 0)

    def throttle_wait(self, key: str, *, limit: int, window: dt.timedelta) -> float:
        """Seconds ``key`` (e.g. a client address) must wait before its next try: 0 while
        it has had fewer than ``limit`` failures in the current ``window``."""
        with self._read() as conn:
            row = conn.execute(sa.select(throttle_table).where(
                throttle_table.c.key == str(key)[:160])).mappings().first()
        return _wait(row, limit, window)

    def throttle_fail(self, key: str, *, limit: int, window: dt.timedelta) -> float:
        """Count one failure of ``key`` (atomically, across processes and hosts); returns
        the seconds it must now wait (0 while under ``limit``). A window starts with the
        first failure after the previous one ended."""
        key = str(key)[:160]
        now = _now()
        c = throttle_table.c
        with self._write() as conn:
            conn.execute(throttle_table.delete().where(c.window_start < now - 2 * window
                                                       - dt.timedelta(hours=1)))
            if conn.execute(sa.select(c.key).where(c.key == key)).first() is None:
                conn.execute(_insert_ignore(conn, throttle_table, ["key"]),
                             {"key": key, "window_start": now, "failures": 0})
            stale = c.window_start < now - window
            conn.execute(throttle_table.update().where(c.key == key).values(
                failures=sa.case((stale, 1), else_=c.failures + 1),
                window_start=sa.case((stale, now), else_=c.window_start)))
            row = conn.execute(sa.select(throttle_table).where(c.key == key)).mappings().first()
        return _wait(row, limit, window)

    # ----- internals

    def _must_exist(self, conn: Connection, workspace_id: str) -> None:
        if conn.execute(sa.select(workspaces_table.c.id).where(
                workspaces_table.c.id == workspace_id)).first() is None:
            raise _not_found(workspace_id)

    def _event(self, workspace_id: str, actor: str, name: str, detail: Mapping[str, Any]) -> None:
        _require_read(workspace_id)
        with self._write() as conn:
            self._must_exist(conn, workspace_id)
            self._audit(conn, workspace_id, actor, name, None, detail, _now())

    @staticmethod
    def _audit(conn: Connection, workspace_id: str, actor: str, name: str,
               version: int | None, detail: Mapping[str, Any], at: dt.datetime) -> None:
        conn.execute(audit_table.insert().values(
            workspace_id=workspace_id, at=at, actor=actor, event=name, version=version,
            detail=_canonical(_json_safe(dict(detail), "audit detail")).decode("utf-8")))

    @staticmethod
    def _insert_version(conn: Connection, workspace_id: str, version: int, name: str,
                        manifest: Mapping[str, Any], actor: str, action: str,
                        at: dt.datetime) -> None:
        text = _canonical(manifest, sort=False)
        conn.execute(versions_table.insert().values(
            workspace_id=workspace_id, version=version, saved_at=at, actor=actor,
            action=str(action)[:200], name=name, manifest=text.decode("utf-8"),
            manifest_sha256=hashlib.sha256(text).hexdigest()))

    @staticmethod
    def _manifest(row: Mapping[str, Any]) -> dict[str, Any]:
        text = row["manifest"].encode("utf-8")
        if hashlib.sha256(text).hexdigest() != row["manifest_sha256"]:
            raise fail(ST006, f"version {row['version']} of workspace {row['workspace_id']} "
                              "does not match its checksum",
                       expected=row["manifest_sha256"], found=hashlib.sha256(text).hexdigest(),
                       fix="Restore the database from a backup; load an earlier version.")
        return json.loads(text)

    @staticmethod
    def _put_blobs(conn: Connection, payloads: Mapping[str, bytes]) -> None:
        if not payloads:
            return
        rows = [{"sha256": h, "size": len(p), "payload": zlib.compress(p, 6)}
                for h, p in payloads.items()]
        name = conn.dialect.name
        if name in ("sqlite", "postgresql"):
            if name == "sqlite":
                from sqlalchemy.dialects.sqlite import insert
            else:
                from sqlalchemy.dialects.postgresql import insert
            for chunk in _chunks(rows, 200):
                conn.execute(insert(blobs_table).on_conflict_do_nothing(
                    index_elements=["sha256"]), chunk)
            return
        have: set[str] = set()
        for chunk in _chunks(list(payloads), 500):
            have.update(conn.execute(sa.select(blobs_table.c.sha256).where(
                blobs_table.c.sha256.in_(chunk))).scalars())
        todo = [r for r in rows if r["sha256"] not in have]
        if todo:
            conn.execute(blobs_table.insert(), todo)

    @staticmethod
    def _blobs(conn: Connection, hashes: Iterable[str]) -> dict[str, Series]:
        out: dict[str, Series] = {}
        wanted = sorted(set(hashes))
        for chunk in _chunks(wanted, 500):
            for r in conn.execute(sa.select(blobs_table).where(
                    blobs_table.c.sha256.in_(chunk))):
                raw = zlib.decompress(r.payload)
                if hashlib.sha256(raw).hexdigest() != r.sha256 or len(raw) != r.size:
                    raise fail(ST006, "a stored series does not match its checksum",
                               expected=r.sha256, found=hashlib.sha256(raw).hexdigest(),
                               fix="Restore the database from a backup.")
                out[r.sha256] = series_from_dict(json.loads(raw))
        missing = set(wanted) - set(out)
        if missing:
            raise fail(ST006, f"{len(missing)} stored series are missing",
                       expected="every series named by the version", found=", ".join(
                           sorted(missing)[:3]), fix="Restore the database from a backup.")
        return out


# --------------------------------------------------------------------------- helpers


def _chunks(items: Sequence[Any], n: int) -> Iterator[Sequence[Any]]:
    for i in range(0, len(items), n):
        yield items[i:i + n]


def _add_payload(payloads: dict[str, bytes], s: Series, what: str) -> str:
    if not isinstance(s, Series):
        raise fail(ST003, f"{what} is not a realbasis Series", expected="pipeline.model.Series",
                   found=type(s).__name__, fix="Store series read by intake or built by the engine.")
    try:
        raw = _canonical(series_to_dict(s))
    except (TypeError, ValueError) as err:
        raise fail(ST003, f"{what} cannot be stored", expected="plain text metadata",
                   found=str(err), fix="Keep names, units and notes to plain text.") from None
    digest = hashlib.sha256(raw).hexdigest()
    payloads[digest] = raw
    return digest


def _vintage_pairs(indexes: Mapping[str, Mapping[str, str]]) -> set[tuple[str, str]]:
    return {(name, vin) for name, vins in indexes.items() for vin in vins}


def _check_name(name: str) -> str:
    text = str(name or "").strip()
    if not text or len(text) > 200:
        raise fail(ST007, "a workspace needs a name of 1 to 200 characters",
                   expected="a short name", found=repr(name)[:60],
                   fix="Give the workspace a name.")
    return text


def _not_found(workspace_id: str) -> RealbasisError:
    return fail(ST001, f"no workspace {workspace_id!r}", expected="an id from the list of "
                "workspaces", found=repr(workspace_id), fix="Run `realbasis workspace list` "
                "or pick the workspace in the dashboard.")


def _wait(row: Mapping[str, Any] | None, limit: int, window: dt.timedelta) -> float:
    if row is None or int(row["failures"]) < limit:
        return 0.0
    left = (_utc(row["window_start"]) + window - _now()).total_seconds()  # type: ignore[operator]
    return max(left, 0.0)


def _insert_ignore(conn: Connection, table: sa.Table, keys: list[str]) -> Any:
    """INSERT that does nothing when the row exists (another process won the race)."""
    name = conn.dialect.name
    if name == "sqlite":
        from sqlalchemy.dialects.sqlite import insert
    elif name == "postgresql":
        from sqlalchemy.dialects.postgresql import insert
    else:
        return table.insert()
    return insert(table).on_conflict_do_nothing(index_elements=keys)


def _link(r: Mapping[str, Any]) -> LinkInfo:
    return LinkInfo(id=r["id"], workspace_id=r["workspace_id"], label=r["label"],
                    created_at=_utc(r["created_at"]), created_by=r["created_by"],  # type: ignore[arg-type]
                    expires_at=_utc(r["expires_at"]), revoked_at=_utc(r["revoked_at"]),
                    last_used_at=_utc(r.get("last_used_at")))


def open_store(settings: Settings | None = None) -> WorkspaceStore:
    """The store the settings name (database_url, else the SQLite file in data_dir)."""
    from .settings import load_settings

    return WorkspaceStore.from_settings(settings or load_settings())
