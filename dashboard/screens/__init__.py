"""The dashboard's screens, found by discovery.

A screen is a module in this package defining:

    KEY: str         short id used in element ids and the address (#key)
    TITLE: str       the name on the navigation bar
    ORDER: int       position on the navigation bar (10, 20, ...)
    def layout() -> Component          the screen's page (no data; callbacks fill it)
    def register(app: Dash) -> None    its callbacks (thin: they call dashboard.logic)

``create_app`` shows every module found here, sorted by ORDER, so adding a screen
touches no shared file. A module may set ``EDITOR_ONLY = True`` to be hidden from
reviewer links (the access layer reads it).
"""

from __future__ import annotations

import importlib
import pkgutil
from dataclasses import dataclass
from types import ModuleType
from typing import Any


@dataclass(frozen=True)
class ScreenInfo:
    key: str
    title: str
    order: int
    module: ModuleType
    editor_only: bool = False

    def layout(self) -> Any:
        return self.module.layout()

    def register(self, app: Any) -> None:
        self.module.register(app)


def discover() -> tuple[ScreenInfo, ...]:
    found = []
    for info in pkgutil.iter_modules(__path__):
        if info.name.startswith("_"):
            continue
        module = importlib.import_module(f"{__name__}.{info.name}")
        missing = [a for a in ("KEY", "TITLE", "ORDER", "layout", "register")
                   if not hasattr(module, a)]
        if missing:
            raise TypeError(f"screen module {module.__name__} lacks {', '.join(missing)}")
        found.append(ScreenInfo(module.KEY, module.TITLE, int(module.ORDER), module,
                                bool(getattr(module, "EDITOR_ONLY", False))))
    keys = [s.key for s in found]
    if len(set(keys)) != len(keys):
        raise ValueError(f"duplicate screen keys: {keys}")
    return tuple(sorted(found, key=lambda s: (s.order, s.key)))
