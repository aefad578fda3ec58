"""Shared test fixtures.

Optional infrastructure (a real Chromium, PostgreSQL, Redis, the X-13 program) is found
through environment variables. Where it is missing the tests that need it skip with the
reason; CI sets RB_REQUIRE_BROWSER=1 and RB_REQUIRE_SERVICES=1, which turn those skips
into failures so that nothing silently goes untested there.
"""

from __future__ import annotations

import os
import shutil
import socket
from pathlib import Path
from urllib.parse import urlparse

import pytest

ROOT = Path(__file__).resolve().parent.parent
DATA = Path(__file__).resolve().parent / "data"
DEMO = ROOT / "demo_data"
OUTPUT = Path(os.environ.get("RB_TEST_OUTPUT", ROOT / "tests" / "output"))


def _flag(name: str) -> bool:
    return os.environ.get(name, "").strip().lower() in ("1", "true", "yes")


def missing(reason: str, required_by: str) -> None:
    """Skip, or fail when the environment says this infrastructure is mandatory."""
    if _flag(required_by):
        pytest.fail(f"{reason} ({required_by}=1 makes this mandatory)")
    pytest.skip(reason)


def _reachable(url: str, default_port: int) -> bool:
    u = urlparse(url)
    try:
        with socket.create_connection((u.hostname or "127.0.0.1", u.port or default_port), 2):
            return True
    except OSError:
        return False


@pytest.fixture(scope="session")
def data_dir() -> Path:
    return DATA


@pytest.fixture(scope="session")
def demo_dir() -> Path:
    return DEMO


@pytest.fixture(scope="session")
def output_dir() -> Path:
    OUTPUT.mkdir(parents=True, exist_ok=True)
    return OUTPUT


@pytest.fixture(scope="session")
def chromium_path() -> str:
    path = os.environ.get("RB_CHROMIUM") or shutil.which("chromium") or "/usr/bin/chromium"
    if not Path(path).exists():
        missing("no Chromium found (install Debian's chromium or set RB_CHROMIUM)",
                "RB_REQUIRE_BROWSER")
    try:
        import playwright.sync_api  # noqa: F401
    except ImportError:
        missing("the playwright package is not installed", "RB_REQUIRE_BROWSER")
    return path


@pytest.fixture(scope="session")
def postgres_url() -> str:
    url = os.environ.get("RB_TEST_POSTGRES_URL")
    if not url:
        missing("RB_TEST_POSTGRES_URL is not set", "RB_REQUIRE_SERVICES")
    if not _reachable(url, 5432):
        missing(f"PostgreSQL at {url} is not reachable", "RB_REQUIRE_SERVICES")
    return url


@pytest.fixture(scope="session")
def redis_url() -> str:
    url = os.environ.get("RB_TEST_REDIS_URL")
    if not url:
        missing("RB_TEST_REDIS_URL is not set", "RB_REQUIRE_SERVICES")
    if not _reachable(url, 6379):
        missing(f"Redis at {url} is not reachable", "RB_REQUIRE_SERVICES")
    return url


# --------------------------------------------------------------------------- dashboard view models
# Shared by the tests of the screens' view models (tests/test_view_*.py). Imports are
# inside the fixtures so that loading this file imports neither the dashboard nor pandas.


def monthly_series(name: str, values: list[float], start: str = "2023-01", kind: str = "flow",
                   unit: str | None = "USD", status: list[str] | None = None,
                   vintage: str | None = None):
    """A monthly Series from plain values (invented numbers for plumbing tests)."""
    import pandas as pd

    from pipeline.model import MONTHLY, Series

    idx = pd.period_range(start, periods=len(values), freq="M")
    st = pd.Series(status, index=idx, dtype=object) if status else None
    return Series(name, pd.Series(values, index=idx, dtype=float), MONTHLY, kind=kind,  # type: ignore[arg-type]
                  unit=unit, status=st, vintage=vintage)


@pytest.fixture()
def access(tmp_path: Path):
    """The dashboard's data access over a fresh store, with a 2,000-byte upload limit."""
    from dashboard.data import DataAccess
    from pipeline.settings import Settings

    return DataAccess(Settings(data_dir=str(tmp_path), max_upload_bytes=2000))


@pytest.fixture(scope="session")
def demo(tmp_path_factory: pytest.TempPathFactory):
    """The demo workspace (illustrative data of demo_data/), built once."""
    from dashboard.data import DEMO_NAME
    from dashboard.demo import build_demo_workspace
    from pipeline.store import WorkspaceStore

    d = tmp_path_factory.mktemp("demo")
    return build_demo_workspace(WorkspaceStore(f"sqlite:///{d}/s.sqlite"), DEMO_NAME)


@pytest.fixture()
def small():
    """Two years of a flat nominal series and two made-up indexes."""
    from pipeline.model import Workspace

    nominal = monthly_series("Sales", [100.0] * 12 + [103.0] * 12)
    # index A rises 2 % between the years, index B 5 %.
    a = monthly_series("Index A", [100.0] * 12 + [102.0] * 12, kind="index", unit="index",
                       vintage="2024-12-31")
    b = monthly_series("Index B", [100.0] * 12 + [105.0] * 12, kind="index", unit="index",
                       status=["final"] * 18 + ["preliminary"] * 6, vintage="2024-12-31")
    return Workspace("w1", "small", 3, series={"Sales": nominal},
                     indexes={"Index A": {"2024-12-31": a}, "Index B": {"2024-12-31": b}})
