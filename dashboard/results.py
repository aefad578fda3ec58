"""The result cache: what a screen computed, kept for every worker to reuse.

A screen's outputs depend only on the workspace version (a version never changes once
saved) and the choices on the screen, so :meth:`ResultCache.get_or_compute` keys them by
``(screen, what, workspace id, version, choices...)`` and keeps the pickled answer:

- in a diskcache folder (``data_dir/results/<realbasis version>``) shared by the gunicorn
  workers on one machine, at most ``REALBASIS_RESULT_CACHE_MB`` megabytes (least recently
  used answers are dropped first);
- in Redis when ``REALBASIS_REDIS_URL`` is set (several machines), each answer kept for a
  day (:data:`REDIS_SECONDS`); Redis's own memory policy bounds the total.

``REALBASIS_RESULT_CACHE_MB=0`` turns the cache off (every request computes). The cache
is only consulted after the workspace has been loaded through
:meth:`dashboard.data.DataAccess.load`, which checks that the requester may read it, so a
cached answer is never a way around a reviewer link's scope. A cache that cannot be read
or written (a full disk, Redis gone) is passed over: the answer is computed and the
failure logged once, never shown as an error.
"""

from __future__ import annotations

import hashlib
import logging
import pickle
from collections.abc import Callable
from pathlib import Path
from typing import Any, TypeVar

from pipeline import __version__
from pipeline.settings import Settings

T = TypeVar("T")
log = logging.getLogger(__name__)

REDIS_SECONDS = 86_400
"""How long Redis keeps an answer."""
PREFIX = f"realbasis:result:{__version__}:"


def cache_key(parts: tuple[Any, ...]) -> str:
    """A stable key for ``parts`` (strings, numbers, None, and lists, tuples and dicts of
    them): the SHA-256 of their canonical repr."""

    def canon(x: Any) -> Any:
        if isinstance(x, dict):
            return tuple(sorted((str(k), canon(v)) for k, v in x.items()))
        if isinstance(x, list | tuple):
            return tuple(canon(v) for v in x)
        return x

    return hashlib.sha256(repr(canon(parts)).encode()).hexdigest()


class ResultCache:
    """Computed answers by key, shared across workers (see the module docstring)."""

    def __init__(self, settings: Settings) -> None:
        self.enabled = settings.result_cache_mb > 0
        self._backend: Any = None
        self._redis: Any = None
        self._warned = False
        if not self.enabled:
            return
        if settings.redis_url:
            import redis

            self._redis = redis.Redis.from_url(settings.redis_url, socket_timeout=2)
        else:
            import diskcache

            folder = Path(settings.data_dir).resolve() / "results" / __version__
            self._backend = diskcache.Cache(str(folder),
                                            size_limit=settings.result_cache_mb * 1024 * 1024,
                                            eviction_policy="least-recently-used")

    def _failed(self, err: Exception) -> None:
        if not self._warned:
            self._warned = True
            log.warning("result cache passed over: %s: %s", type(err).__name__, err)

    def get(self, key: str) -> Any:
        """The answer kept under ``key``, or None."""
        try:
            if self._redis is not None:
                raw = self._redis.get(PREFIX + key)
            elif self._backend is not None:
                raw = self._backend.get(key)
            else:
                return None
            return None if raw is None else pickle.loads(raw)
        except Exception as err:  # a cache must never break a screen
            self._failed(err)
            return None

    def put(self, key: str, value: Any) -> None:
        try:
            raw = pickle.dumps(value, protocol=pickle.HIGHEST_PROTOCOL)
            if self._redis is not None:
                self._redis.set(PREFIX + key, raw, ex=REDIS_SECONDS)
            elif self._backend is not None:
                self._backend.set(key, raw)
        except Exception as err:
            self._failed(err)

    def get_or_compute(self, parts: tuple[Any, ...], compute: Callable[[], T]) -> T:
        """The kept answer for ``parts``, else ``compute()`` (kept for next time)."""
        if not self.enabled:
            return compute()
        key = cache_key(parts)
        found = self.get(key)
        if found is not None:
            return found  # type: ignore[no-any-return]
        value = compute()
        self.put(key, value)
        return value
