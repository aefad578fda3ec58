"""``realbasis settings``: every setting with its environment variable, the value in force
(argument, then environment, then default: pipeline.settings) and what it means."""

from __future__ import annotations

import argparse

from pipeline.settings import SETTINGS, load_settings

_SECRET = ("editor_token", "secret_key")


def render() -> str:
    settings = load_settings()
    lines = []
    for spec in SETTINGS:
        value = getattr(settings, spec.name)
        if spec.name in _SECRET and value:
            shown = "(set, not shown)"
        elif value is None:
            shown = "(not set)"
        else:
            shown = str(value)
        lines.append(f"{spec.env} = {shown}\n    {spec.help}")
    lines.append(f"store in use: {settings.effective_database_url}")
    return "\n".join(lines)


def _run(args: argparse.Namespace) -> int:
    print(render())
    return 0


def register(sub: argparse._SubParsersAction) -> None:
    p = sub.add_parser("settings", help="show every setting and the value in force")
    p.set_defaults(func=_run)
