"""Background jobs on Celery with Redis (used when ``REALBASIS_REDIS_URL`` is set).

Web processes get the manager from :func:`dashboard.jobs.make_manager`. Workers run

    celery -A dashboard.celery_app worker --loglevel=info

with the same REALBASIS_* environment as the web processes: importing this module as a
worker builds the dashboard once (:data:`celery_app` is looked up lazily), which registers
every background callback as a Celery task of the same name the web processes send.
Redis is both the broker and the result backend; results expire after an hour.
"""

from __future__ import annotations

from typing import Any

from celery import Celery
from dash import CeleryManager

from pipeline.errors import fail, register
from pipeline.settings import Settings, load_settings

from .access import AccessAwareMixin

UI601 = register("UI601", "background jobs need a Redis URL")


class AccessCeleryManager(AccessAwareMixin, CeleryManager):
    """Celery jobs that run under the access of the request that started them."""


def make_celery(settings: Settings) -> Celery:
    if not settings.redis_url:
        raise fail(UI601, "Celery background jobs need REALBASIS_REDIS_URL",
                   expected="a Redis URL such as redis://127.0.0.1:6379/0", found="none",
                   fix="Set REALBASIS_REDIS_URL, or leave it unset to run jobs on diskcache.")
    app = Celery("realbasis", broker=settings.redis_url, backend=settings.redis_url)
    app.conf.update(
        task_serializer="json", result_serializer="json", accept_content=["json"],
        result_expires=3600, broker_connection_retry_on_startup=True,
        worker_hijack_root_logger=False, task_track_started=True,
    )
    return app


def make_manager(settings: Settings, *, expire: int | None = None) -> AccessCeleryManager:
    return AccessCeleryManager(make_celery(settings), expire=expire)


def _worker_app() -> Celery:
    """Build the dashboard (registering every background callback as a task) and return
    its Celery app."""
    from .app import create_app

    dash_app = create_app(load_settings())
    manager = dash_app._background_manager
    if not isinstance(manager, CeleryManager):
        raise fail(UI601, "the Celery worker needs REALBASIS_REDIS_URL",
                   expected="REALBASIS_REDIS_URL set for the worker", found="diskcache jobs",
                   fix="Start the worker with the same REALBASIS_* environment as the web "
                       "processes.")
    return manager.handle


def __getattr__(name: str) -> Any:  # module attribute looked up by `celery -A`
    if name in ("celery_app", "app", "celery"):
        value = _worker_app()
        globals()["celery_app"] = globals()["app"] = globals()["celery"] = value
        return value
    raise AttributeError(name)
