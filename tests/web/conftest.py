"""Real-browser fixtures: Debian's chromium driven by Playwright against the app served by
uvicorn in a thread; screenshots of each page go to ``$INVENTORY_SCREENSHOTS`` (default: a
folder in the test run's temporary directory)."""

from __future__ import annotations

import os
import shutil
import socket
import threading
import time
from pathlib import Path

import pytest

from tests.conftest import IN_CI, _create_pg_db, _drop_pg_db

CHROMIUM = os.environ.get("INVENTORY_CHROMIUM", "/usr/bin/chromium")


@pytest.fixture(scope="session")
def browser():
    if not Path(CHROMIUM).exists() or shutil.which(CHROMIUM) is None:
        msg = f"no chromium at {CHROMIUM} (apt-get install chromium)"
        if IN_CI:
            pytest.fail(msg)
        pytest.skip(msg)
    from playwright.sync_api import sync_playwright

    with sync_playwright() as p:
        b = p.chromium.launch(executable_path=CHROMIUM, args=["--no-sandbox"])
        yield b
        b.close()


@pytest.fixture(scope="session")
def shots(tmp_path_factory) -> Path:
    folder = os.environ.get("INVENTORY_SCREENSHOTS")
    path = Path(folder) if folder else tmp_path_factory.mktemp("screenshots")
    path.mkdir(parents=True, exist_ok=True)
    return path


def _free_port() -> int:
    with socket.socket() as s:
        s.bind(("127.0.0.1", 0))
        return s.getsockname()[1]


class Served:
    def __init__(self, url: str) -> None:
        import uvicorn

        from inventory.web.app import create_app

        self.db = url
        self.port = _free_port()
        self.base = f"http://127.0.0.1:{self.port}"
        app = create_app(url, secret="browser-test-secret-" + "z" * 16)
        self.server = uvicorn.Server(uvicorn.Config(app, host="127.0.0.1", port=self.port,
                                                    log_level="warning"))
        self.thread = threading.Thread(target=self.server.run, daemon=True)
        self.thread.start()
        for _ in range(200):
            if self.server.started:
                break
            time.sleep(0.05)

    def stop(self) -> None:
        self.server.should_exit = True
        self.thread.join(timeout=10)


def _demo_url(backend: str, tmp_path_factory, request) -> tuple[str, callable]:
    from inventory.core.db import dispose_all
    from inventory.demo.build import build_demo

    if backend == "sqlite":
        url = build_demo(str(tmp_path_factory.mktemp("demo") / "demo.db"), progress=False)
        return url, dispose_all
    admin = request.getfixturevalue("pg_server")
    name, url = _create_pg_db(admin)
    build_demo(url, progress=False)
    return url, lambda: _drop_pg_db(admin, name)


@pytest.fixture(scope="session", params=["sqlite", pytest.param("postgres",
                                                                marks=pytest.mark.postgres)])
def demo_app(request, tmp_path_factory):
    """The demo shop (with its three people) served on a free port, per backend."""
    url, cleanup = _demo_url(request.param, tmp_path_factory, request)
    served = Served(url)
    served.backend = request.param
    yield served
    served.stop()
    cleanup()
