"""The Celery worker's entry point (only the worker imports this module).

Workers run

    celery -A dashboard.celery_app worker --loglevel=info

with the same REALBASIS_* environment as the web processes. Looking up :data:`celery_app`
(what ``celery -A`` does) builds the dashboard once, which registers every background
callback as a Celery task of the same name the web processes send. Web processes get
their manager from :func:`dashboard.jobs.make_manager` and never import this module.
"""

from __future__ import annotations

from typing import Any

from dash import CeleryManager

from pipeline.errors import fail
from pipeline.settings import load_settings

from .app import create_app
from .jobs import UI601


def _worker_app() -> Any:
    """Build the dashboard (registering every background callback as a task) and return
    its Celery app."""
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
