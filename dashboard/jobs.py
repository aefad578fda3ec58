"""Background jobs (long callbacks): the manager, on diskcache or on Celery with Redis.

Dash runs ``background=True`` callbacks through a manager. By default it is a
:class:`dash.DiskcacheManager` over ONE directory (``Settings.effective_cache_dir``) that
every gunicorn worker opens, so a job started by one worker can be polled through
another. When ``Settings.redis_url`` is set a :class:`dash.CeleryManager` on Redis (broker
and result backend) replaces it; :func:`make_manager` is the single place that decides.
Celery itself is imported only then (it is an optional dependency). Background-callback
handles are signed with the Flask secret key (:mod:`dashboard.secret`).

Either way a job runs under the access (editor/reviewer) of the request that started it
(:class:`AccessAwareMixin`). Celery workers are started through
:mod:`dashboard.celery_app`, which builds the app so every background callback is a task.
"""

from __future__ import annotations

import functools
from collections.abc import Callable
from pathlib import Path
from typing import TYPE_CHECKING, Any

import diskcache
from dash import CeleryManager, DiskcacheManager
from dash._callback_context import context_value
from dash._utils import AttributeDict

from pipeline.errors import fail, register
from pipeline.settings import Settings
from pipeline.store import AccessContext, current_access, reset_access, set_access

from .access import anonymous

if TYPE_CHECKING:
    from celery import Celery

JOB_EXPIRE_SECONDS = 3600
UI601 = register("UI601", "background jobs need a Redis URL")


def with_access(fn: Callable[..., Any]) -> Callable[..., Any]:
    """Wrap a background-callback function so it runs under the access context of the
    request that started it (carried in the job's callback context as ``rb_access``).
    A job without one runs read-only."""

    @functools.wraps(fn)
    def run(*args: Any, **kwargs: Any) -> Any:
        try:
            info = dict(context_value.get().get("rb_access") or {})
        except LookupError:
            info = {}
        ctx = AccessContext(info["role"], info.get("workspace_id"), info.get("actor", ""),
                            link_id=info.get("link_id")) if info.get("role") in (
            "editor", "reviewer") else anonymous()
        token = set_access(ctx)
        try:
            return fn(*args, **kwargs)
        finally:
            reset_access(token)

    return run


class AccessAwareMixin:
    """Mix into a Dash background-callback manager: jobs inherit the caller's access."""

    def make_job_fn(self, fn: Callable[..., Any], progress: Any, key: Any = None) -> Any:
        return super().make_job_fn(with_access(fn), progress, key)  # type: ignore[misc]

    def call_job_fn(self, key: Any, job_fn: Any, args: Any, context: Any) -> Any:
        ctx = current_access()
        context = AttributeDict(**dict(context))
        context["rb_access"] = {"role": ctx.role, "workspace_id": ctx.workspace_id,
                                "actor": ctx.actor, "link_id": ctx.link_id}
        return super().call_job_fn(key, job_fn, args, context)  # type: ignore[misc]


class AccessDiskcacheManager(AccessAwareMixin, DiskcacheManager):
    """diskcache jobs that run under the access of the request that started them."""


class AccessCeleryManager(AccessAwareMixin, CeleryManager):
    """Celery jobs that run under the access of the request that started them."""


def make_celery(settings: Settings) -> Celery:
    """The Celery app on ``settings.redis_url`` (broker and result backend; JSON; results
    expire after an hour)."""
    if not settings.redis_url:
        raise fail(UI601, "Celery background jobs need REALBASIS_REDIS_URL",
                   expected="a Redis URL such as redis://127.0.0.1:6379/0", found="none",
                   fix="Set REALBASIS_REDIS_URL, or leave it unset to run jobs on diskcache.")
    from celery import Celery

    app = Celery("realbasis", broker=settings.redis_url, backend=settings.redis_url)
    app.conf.update(
        task_serializer="json", result_serializer="json", accept_content=["json"],
        result_expires=3600, broker_connection_retry_on_startup=True,
        worker_hijack_root_logger=False, task_track_started=True,
    )
    return app


def make_manager(settings: Settings) -> Any:
    """The background-callback manager: Celery with Redis when ``settings.redis_url`` is
    set, else diskcache in the shared cache directory. Either way a job runs under the
    access (editor/reviewer) of the request that started it."""
    if settings.redis_url:
        return AccessCeleryManager(make_celery(settings), expire=JOB_EXPIRE_SECONDS)
    folder = Path(settings.effective_cache_dir)
    folder.mkdir(parents=True, exist_ok=True)
    return AccessDiskcacheManager(diskcache.Cache(str(folder)), expire=JOB_EXPIRE_SECONDS)
