"""Background jobs (long callbacks): the manager, on diskcache or on Celery with Redis.

Dash runs ``background=True`` callbacks through a manager. By default it is a
:class:`dash.DiskcacheManager` over ONE directory (``Settings.effective_cache_dir``) that
every gunicorn worker opens, so a job started by one worker can be polled through
another. When ``Settings.redis_url`` is set a :class:`dash.CeleryManager` on Redis (broker
and result backend) replaces it; :func:`make_manager` is the single place that decides.
Celery itself is imported only then (it is an optional dependency). Background-callback
handles are signed with the Flask secret key (:mod:`dashboard.secret`).

Either way a job runs under the access (editor/reviewer) of the request that started it
(:class:`AccessAwareMixin`). A coded problem the job raises, a ``MemoryError``, or a change
the store refused while the job ran (even one the job swallowed) does not end the job as a
Dash error: the job's result is a *failure* record (plain JSON), and when the page polls
for the result the request raises it again — a refusal then answers 403 like any refused
request, anything else becomes a coded problem on the page (:mod:`dashboard.failures`).
Celery workers are started through :mod:`dashboard.celery_app`, which builds the app so
every background callback is a task.
"""

from __future__ import annotations

import contextlib
import functools
from collections.abc import Callable
from pathlib import Path
from typing import TYPE_CHECKING, Any

import diskcache
from dash import CeleryManager, DiskcacheManager
from dash._callback_context import context_value
from dash._utils import AttributeDict

from pipeline.errors import Location, Problem, RealbasisError, fail, register
from pipeline.settings import Settings
from pipeline.store import SH001, AccessContext, current_access, reset_access, set_access

from .access import anonymous

if TYPE_CHECKING:
    from celery import Celery

JOB_EXPIRE_SECONDS = 3600
UI601 = register("UI601", "background jobs need a Redis URL")
UI707 = register("UI707", "the server ran out of memory for this request")
FAILURE = "rb_failure"
"""Key of a job result that is a failure record (see the module notes)."""


def failure_record(err: RealbasisError) -> dict[str, Any]:
    """A job's coded failure as plain JSON (diskcache pickles it, Celery sends JSON)."""
    return {FAILURE: [p.as_dict() for p in err.problems]}


def failure_error(result: Any) -> RealbasisError | None:
    """The error a failure record stands for (None for an ordinary result)."""
    if not isinstance(result, dict) or FAILURE not in result:
        return None
    problems = []
    for d in result[FAILURE] or []:
        where = d.get("where") or {}
        problems.append(Problem(
            code=str(d.get("code", UI707)), message=str(d.get("message", "")),
            expected=str(d.get("expected", "")), found=str(d.get("found", "")),
            fix=str(d.get("fix", "")), severity=d.get("severity", "error"),
            remedy=str(d.get("remedy", "")),
            where=Location(**{k: where[k] for k in ("file", "sheet", "row", "column", "series",
                                                    "period") if k in where})))
    return RealbasisError(problems or [Problem(UI707, "the background job failed")])


def out_of_memory(what: str = "this request") -> RealbasisError:
    return fail(UI707, f"the server ran out of memory for {what}",
                expected="work that fits the server's memory", found="MemoryError",
                fix="Try a smaller file or fewer series at once, or ask the administrator "
                    "for more memory.")


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
                            link_id=info.get("link_id"), session=str(info.get("session") or "")
                            ) if info.get("role") in ("editor", "reviewer") else anonymous()
        token = set_access(ctx)
        try:
            try:
                result = fn(*args, **kwargs)
            except RealbasisError as err:
                return failure_record(err)
            except MemoryError:
                return failure_record(out_of_memory("this job"))
            if ctx.refused:  # a refusal the job swallowed still refuses the request
                return failure_record(fail(
                    SH001, "a reviewer link is read-only: cannot "
                    + ", ".join(dict.fromkeys(ctx.refused)), expected="editor access",
                    found="reviewer access", fix="Ask the workspace's editor to make the change."))
            return result
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
                                "actor": ctx.actor, "link_id": ctx.link_id,
                                "session": ctx.session}
        return super().call_job_fn(key, job_fn, args, context)  # type: ignore[misc]

    def get_result(self, key: Any, job: Any) -> Any:
        result = super().get_result(key, job)  # type: ignore[misc]
        if result is self.UNDEFINED and job is not None \
                and not self.job_running(job):  # type: ignore[attr-defined]
            # The job may have ended between the look into the cache and this check: its
            # result is in the cache now. (Dash would otherwise take "no result and not
            # running" for a cancelled job and answer nothing: a silent no-op.)
            result = super().get_result(key, job)  # type: ignore[misc]
        err = failure_error(result)
        if err is not None:
            raise err  # in the polling request: dashboard.failures / the 403 answer
        return result


class AccessDiskcacheManager(AccessAwareMixin, DiskcacheManager):
    """diskcache jobs that run under the access of the request that started them.

    A job's process may end between Dash's "does it exist" and "kill its children"
    (psutil.NoSuchProcess): Dash then lost the result it had just collected and answered
    an error. Here a process that is already gone counts as ended."""

    def terminate_job(self, job: Any) -> None:
        import psutil

        with contextlib.suppress(psutil.NoSuchProcess):
            super().terminate_job(job)

    def job_running(self, job: Any) -> bool:
        import psutil

        try:
            return bool(super().job_running(job))
        except psutil.NoSuchProcess:
            return False


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
