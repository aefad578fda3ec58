"""Command-line sub-commands. Each module here exposes ``register(subparsers)`` which adds
its sub-command(s) with ``set_defaults(func=...)``; ``func(args) -> int`` returns the exit
code. ``pipeline.cli`` discovers the modules, so adding a command touches no shared file."""
