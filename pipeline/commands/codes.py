"""``realbasis codes``: list every stable problem code with its title."""

from __future__ import annotations

import argparse
import importlib
import pkgutil

import pipeline
from pipeline.errors import registered_codes


def load_all_codes() -> dict[str, str]:
    """Import every engine module so each registers its codes, then return them."""
    for info in pkgutil.walk_packages(pipeline.__path__, prefix="pipeline."):
        importlib.import_module(info.name)
    return dict(registered_codes())


def _run(args: argparse.Namespace) -> int:
    for code, title in load_all_codes().items():
        print(f"{code}  {title}")
    return 0


def register(sub: argparse._SubParsersAction) -> None:
    p = sub.add_parser("codes", help="list every problem code and what it means")
    p.set_defaults(func=_run)
