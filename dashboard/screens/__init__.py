"""The dashboard's screens, found by discovery.

A screen is a package in this package (``dashboard/screens/<key>/``) whose
``__init__.py`` defines:

    KEY: str         short id used in element ids and the address (#key)
    TITLE: str       the name on the navigation bar
    ORDER: int       position on the navigation bar (10, 20, ...)
    EDITOR_ONLY      optional; True hides the screen from reviewer links (read by the
                     access layer)
    PARAMS           optional; {address name: component id} of the choices kept in the
                     page address (#key?name=value...) so a reload or a shared link opens
                     the same view; the screen reads them back with
                     ``_shared.view.address_choices``
    layout           def layout() -> Component: the page, from ``layout.py`` (no data;
                     callbacks fill it)
    register         def register(app: Dash) -> None: its callbacks, from ``callbacks.py``
                     (thin: they parse values and call the screen's ``view.py``)

``view.py`` is the screen's view model: plain functions and frozen dataclasses, tested
without a browser. What several screens need lives in :mod:`._shared` (``view.py`` and
``callbacks.py``); screens never import each other. ``create_app`` shows every package
found here, sorted by ORDER, so adding a screen touches no shared file. Names starting
with ``_`` are not screens.
"""

from __future__ import annotations

import importlib
import pkgutil
from dataclasses import dataclass, field
from types import ModuleType
from typing import Any


@dataclass(frozen=True)
class ScreenInfo:
    key: str
    title: str
    order: int
    module: ModuleType
    editor_only: bool = False
    params: dict[str, str] = field(default_factory=dict)

    def layout(self) -> Any:
        return self.module.layout()

    def register(self, app: Any) -> None:
        self.module.register(app)


def discover() -> tuple[ScreenInfo, ...]:
    found = []
    for info in pkgutil.iter_modules(__path__):
        if info.name.startswith("_"):
            continue
        if not info.ispkg:
            raise TypeError(f"screen {__name__}.{info.name} must be a package "
                            f"(dashboard/screens/{info.name}/ with layout, callbacks, view)")
        module = importlib.import_module(f"{__name__}.{info.name}")
        missing = [a for a in ("KEY", "TITLE", "ORDER", "layout", "register")
                   if not hasattr(module, a)]
        if missing:
            raise TypeError(f"screen module {module.__name__} lacks {', '.join(missing)}")
        if info.name != module.KEY:
            raise ValueError(f"screen {module.__name__}: KEY must be the package name "
                             f"{info.name!r}, found {module.KEY!r}")
        found.append(ScreenInfo(module.KEY, module.TITLE, int(module.ORDER), module,
                                bool(getattr(module, "EDITOR_ONLY", False)),
                                dict(getattr(module, "PARAMS", {}))))
    keys = [s.key for s in found]
    if len(set(keys)) != len(keys):
        raise ValueError(f"duplicate screen keys: {keys}")
    return tuple(sorted(found, key=lambda s: (s.order, s.key)))
