"""WSGI entry point for gunicorn: ``gunicorn dashboard.wsgi:server``.

Settings come from the environment (REALBASIS_*; see pipeline.settings). Each gunicorn
worker imports this module and builds its own app; they share the workspace store, the
job cache directory and the secret key, nothing else.
"""

from __future__ import annotations

from pipeline.seasonal import preload
from pipeline.settings import load_settings

from . import warm
from .app import create_app
from .context import context
from .screens.share.view import warm_images

preload()  # at the worker's start, not on a user's first seasonal adjustment (about 2 s)
settings = load_settings()
app = create_app(settings)
server = app.server
warm.start(context(app))  # the demo's first views, computed before anyone asks
if settings.chart_images_ready:
    warm_images()  # this worker's Chromium for chart images, started in the background
