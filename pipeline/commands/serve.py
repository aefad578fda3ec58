"""``realbasis serve``: run the dashboard.

With ``--workers 1`` (or when gunicorn cannot run, e.g. on Windows) the app runs in
Dash's own single-process server (``app.run``), good for one person on one machine.
Otherwise gunicorn serves ``dashboard.wsgi:server`` with the given number of worker
processes, exactly as the Procfile does in production. Defaults: 127.0.0.1:8050, workers
from REALBASIS_WORKERS (2). The dashboard is imported inside the command only, so the
engine never imports the web stack.

Serving on a loopback address without an editor token, the command turns
``local_editing`` on (people on this machine edit without a token) unless
REALBASIS_LOCAL_EDITING says otherwise; gunicorn started any other way (the Procfile, a
proxy set-up) leaves it off, so there nobody edits without the editor token.
"""

from __future__ import annotations

import argparse
import os
import shutil

from pipeline.errors import fail
from pipeline.errors import register as register_code
from pipeline.settings import load_settings
from pipeline.store import check_serving, is_loopback_host

CL501 = register_code("CL501", "dashboard server could not start")


def _run(args: argparse.Namespace) -> int:
    overrides = {"host": args.host, "port": args.port, "workers": args.workers,
                 "demo": args.demo, "data_dir": args.data_dir}
    settings = load_settings(overrides)
    if settings.workers < 1:
        raise fail(CL501, "the number of workers must be at least 1",
                   expected="--workers 1 or more", found=str(settings.workers),
                   fix="Pass --workers 1 for a single process or 2+ for gunicorn.")
    check_serving(settings)  # beyond 127.0.0.1 only with an editor token (SH003, SH008)
    if ("REALBASIS_LOCAL_EDITING" not in os.environ and is_loopback_host(settings.host)
            and not settings.editor_token):
        settings = settings.replace(local_editing=True)
    url = f"http://{settings.host}:{settings.port}/"
    gunicorn = shutil.which("gunicorn")
    if settings.workers == 1 or gunicorn is None or os.name == "nt":
        from dashboard.app import create_app  # lazily: pipeline never imports dash
        from pipeline.seasonal import preload

        preload()  # as each gunicorn worker does (dashboard.wsgi)
        print(f"realbasis dashboard on {url} (single process; Ctrl+C stops)", flush=True)
        create_app(settings).run(host=settings.host, port=settings.port, debug=False)
        return 0
    env = dict(os.environ)
    for spec_name, env_name in (("data_dir", "REALBASIS_DATA_DIR"), ("demo", "REALBASIS_DEMO"),
                                ("workers", "REALBASIS_WORKERS"), ("host", "REALBASIS_HOST"),
                                ("local_editing", "REALBASIS_LOCAL_EDITING")):
        value = getattr(settings, spec_name)
        env[env_name] = ("1" if value else "0") if isinstance(value, bool) else str(value)
    cmd = [gunicorn, "--no-control-socket", "-w", str(settings.workers),
           "-b", f"{settings.host}:{settings.port}", "dashboard.wsgi:server"]
    print(f"realbasis dashboard on {url} ({settings.workers} gunicorn workers; Ctrl+C stops)",
          flush=True)
    try:
        # Replace this process with gunicorn, so that Ctrl+C or a SIGTERM sent to the
        # command reaches gunicorn's master directly and no server is left behind.
        os.execve(gunicorn, cmd, env)
    except OSError as err:
        raise fail(CL501, "gunicorn could not be started", expected="a runnable gunicorn",
                   found=str(err), fix="Install gunicorn or pass --workers 1.") from None


def register(sub: argparse._SubParsersAction) -> None:
    p = sub.add_parser("serve", help="run the dashboard in a web server",
                       description="Run the realbasis dashboard (opens on the illustrative "
                                   "demo workspace unless --no-demo).")
    p.add_argument("--host", default=None, help="address to listen on (default 127.0.0.1; "
                   "REALBASIS_HOST)")
    p.add_argument("--port", type=int, default=None, help="port (default 8050; REALBASIS_PORT)")
    p.add_argument("--workers", type=int, default=None,
                   help="gunicorn worker processes; 1 runs a single-process server "
                        "(default 2; REALBASIS_WORKERS)")
    p.add_argument("--data-dir", default=None,
                   help="folder of the workspace store and job cache (REALBASIS_DATA_DIR)")
    p.add_argument("--demo", dest="demo", action=argparse.BooleanOptionalAction, default=None,
                   help="open on the demo workspace when none is chosen (default on; "
                        "REALBASIS_DEMO)")
    p.set_defaults(func=_run)

