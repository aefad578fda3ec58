"""The Flask secret key shared by every worker.

Session cookies (reviewer links, editor sign-in) and background-callback handles are
signed with it, so every gunicorn worker and every Celery worker must use the same key:
``Settings.secret_key`` when set, else a random key generated once into
``data_dir/secret_key`` (created atomically; the first worker wins).
"""

from __future__ import annotations

import os
import secrets
import time
from pathlib import Path

from pipeline.settings import Settings


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
