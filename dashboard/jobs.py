"""Background jobs (long callbacks) and the secret shared by every worker.

Dash runs ``background=True`` callbacks through a manager. Here it is a
:class:`dash.DiskcacheManager` over ONE directory (``Settings.effective_cache_dir``) that
every gunicorn worker opens, so a job started by one worker can be polled through
another. Background-callback handles are signed with the Flask secret key, which must be
the same in every worker: ``Settings.secret_key`` when set, else a random key generated
once into ``data_dir/secret_key`` (created atomically; the first worker wins).

When ``Settings.redis_url`` is set the Celery manager (added by the store/share work)
replaces diskcache; :func:`make_manager` is the single place that decides.
"""

from __future__ import annotations

import os
import secrets
import time
from pathlib import Path

import diskcache
from dash import DiskcacheManager

from pipeline.settings import Settings

JOB_EXPIRE_SECONDS = 3600


def secret_key(settings: Settings) -> str:
    """The Flask secret key shared by all workers (see module notes)."""
    if settings.secret_key:
        return settings.secret_key
    folder = Path(settings.data_dir).resolve()
    folder.mkdir(parents=True, exist_ok=True)
    path = folder / "secret_key"
    try:
        fd = os.open(path, os.O_WRONLY | os.O_CREAT | os.O_EXCL, 0o600)
    except FileExistsError:
        pass
    else:
        with os.fdopen(fd, "w", encoding="ascii") as fh:
            fh.write(secrets.token_urlsafe(48))
    for _ in range(50):  # another worker may be between create and write
        text = path.read_text(encoding="ascii").strip()
        if text:
            return text
        time.sleep(0.02)
    raise RuntimeError(f"secret key file {path} stays empty; delete it and restart")


def make_manager(settings: Settings) -> DiskcacheManager:
    """The background-callback manager: diskcache in the shared cache directory."""
    folder = Path(settings.effective_cache_dir)
    folder.mkdir(parents=True, exist_ok=True)
    return DiskcacheManager(diskcache.Cache(str(folder)), expire=JOB_EXPIRE_SECONDS)
