"""The per-app state the screens' callbacks share: :class:`AppContext`.

``create_app`` (:mod:`dashboard.app`) builds one ``AppContext`` per app and attaches it to
the Flask server; screens, the access layer and anything else below the app in the
import graph reach it through :func:`context` (or :func:`current` inside a request),
never by importing :mod:`dashboard.app`.
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass, field
from typing import Any, TypeVar

from pipeline.model import Workspace
from pipeline.settings import Settings

from .data import DataAccess, WorkspaceRef
from .results import ResultCache
from .screens import ScreenInfo

T = TypeVar("T")

EXTENSION = "realbasis"
"""Key of the AppContext in ``server.extensions``."""


@dataclass
class AppContext:
    """Per-app state shared by the callbacks of one app (one per worker process).

    ``resolve_workspace(search) -> WorkspaceRef`` turns the page address's query string
    into the workspace to show; the access layer may replace it (reviewer links).
    ``results`` keeps computed screen answers for every worker (:meth:`cached`)."""

    settings: Settings
    data: DataAccess
    screens: tuple[ScreenInfo, ...]
    resolve_workspace: Callable[[str], WorkspaceRef] = field(default=None)  # type: ignore[assignment]
    results: ResultCache | None = None

    def cached(self, ws: Workspace, what: str, choices: tuple[Any, ...],
               compute: Callable[[], T]) -> T:
        """``compute()``, or the answer kept for this workspace version and these choices
        (:mod:`dashboard.results`); ``what`` names the screen and the output
        ("real.outputs"). ``ws`` must come from ``self.data.load`` (the read check)."""
        if self.results is None:
            return compute()
        return self.results.get_or_compute((what, ws.id, ws.version, *choices), compute)


def attach(app: Any, rb: AppContext) -> None:
    """Make ``rb`` the context of ``app`` (called once, by ``create_app``)."""
    app.server.extensions[EXTENSION] = rb


def context(app: Any) -> AppContext:
    """The AppContext of a Dash app built by ``create_app``."""
    return app.server.extensions[EXTENSION]


def find(app: Any) -> AppContext | None:
    """The AppContext of ``app``, or None for a Dash app not built by ``create_app``."""
    return app.server.extensions.get(EXTENSION)


def current() -> AppContext | None:
    """The AppContext of the app serving the current request (None outside one)."""
    import flask

    if flask.has_app_context():
        return flask.current_app.extensions.get(EXTENSION)
    return None
