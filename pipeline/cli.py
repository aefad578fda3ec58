"""The ``realbasis`` command line: the batch face of the same engine the dashboard uses.

Exit codes: 0 success; 2 bad input or an impossible request (the coded, located message
goes to stderr, no traceback); anything else is a bug.
"""

from __future__ import annotations

import argparse
import importlib
import pkgutil
import sys
from collections.abc import Sequence

from . import __version__, commands
from .commands._remedies import CLI
from .errors import CL001, RealbasisError


class _Parser(argparse.ArgumentParser):
    """argparse that reports usage errors with our code and exit status 2."""

    def error(self, message: str) -> None:  # type: ignore[override]
        self.print_usage(sys.stderr)
        sys.stderr.write(
            f"[{CL001}] {message}\n  fix: run '{self.prog} --help' for the accepted arguments.\n"
        )
        raise SystemExit(2)


def build_parser() -> argparse.ArgumentParser:
    parser = _Parser(
        prog="realbasis",
        description="State nominal money series in real terms (constant dollars of a base period).",
    )
    parser.add_argument("--version", action="version", version=f"realbasis {__version__}")
    sub = parser.add_subparsers(dest="command", metavar="COMMAND", parser_class=_Parser)
    sub.required = True
    for info in sorted(pkgutil.iter_modules(commands.__path__), key=lambda m: m.name):
        if info.name.startswith("_"):  # helpers shared by the commands, not commands
            continue
        module = importlib.import_module(f"{commands.__name__}.{info.name}")
        module.register(sub)
    return parser


def main(argv: Sequence[str] | None = None) -> int:
    parser = build_parser()
    args = parser.parse_args(argv)
    try:
        return int(args.func(args) or 0)
    except RealbasisError as err:
        sys.stderr.write(err.render(CLI) + "\n")
        return 2
    except BrokenPipeError:  # e.g. `realbasis deflate ... | head`
        return 0


if __name__ == "__main__":  # pragma: no cover
    raise SystemExit(main())
