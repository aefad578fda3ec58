"""Background jobs (long callbacks) and the secret shared by every worker.

Dash runs ``background=True`` callbacks through a manager. Here it is a
:class:`dash.DiskcacheManager` over ONE directory (``Settings.effective_cache_dir``) that
every gunicorn worker opens, so a job started by one worker can be polled through
another. Background-callback handles are signed with the Flask secret key, which must be
the same in every worker: ``Settings.secret_key`` when set, else a random key generated
once into ``data_dir/secret_key`` (created atomically; the first worker wins).

When ``Settings.redis_url`` is set the Celery manager of :mod:`dashboard.celery_app`
replaces diskcache; :func:`make_manager` is the single place that decides.
"""

from __future__ import annotations

import os
import secrets
import time
from pathlib import Path
from typing import Any

import diskcache
from dash import DiskcacheManager

from pipeline.settings import Settings

from .access import AccessAwareMixin

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


class AccessDiskcacheManager(AccessAwareMixin, DiskcacheManager):
    """diskcache jobs that run under the access of the request that started them."""


def make_manager(settings: Settings) -> Any:
    """The background-callback manager: Celery with Redis when ``settings.redis_url`` is
    set (dashboard.celery_app), else diskcache in the shared cache directory. Either way
    a job runs under the access (editor/reviewer) of the request that started it."""
    if settings.redis_url:
        from .celery_app import make_manager as make_celery_manager

        return make_celery_manager(settings, expire=JOB_EXPIRE_SECONDS)
    folder = Path(settings.effective_cache_dir)
    folder.mkdir(parents=True, exist_ok=True)
    return AccessDiskcacheManager(diskcache.Cache(str(folder)), expire=JOB_EXPIRE_SECONDS)
