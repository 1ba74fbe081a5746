"""Shared fixtures: a live stepfence server on a free loopback port, and headless Chromium.

Kept generic so any test module can use them: `live_server` yields the base URL of a uvicorn
server running create_app() in a thread; `browser` yields a Playwright Chromium (Debian's
/usr/bin/chromium, never a downloaded one) that is closed at the end of the session.
"""
from __future__ import annotations

import socket
import threading
import time

import pytest

CHROMIUM = "/usr/bin/chromium"
CHROMIUM_ARGS = ["--headless", "--no-sandbox", "--disable-gpu", "--disable-quic", "--no-first-run",
                 "--disable-background-networking", "--disable-component-update", "--disable-sync"]
SERVER_START_SECONDS = 30


def _free_port() -> int:
    with socket.socket(socket.AF_INET, socket.SOCK_STREAM) as s:
        s.bind(("127.0.0.1", 0))
        return s.getsockname()[1]


@pytest.fixture(scope="session")
def live_server():
    """Base URL (http://127.0.0.1:PORT) of a stepfence server running in a thread."""
    import uvicorn
    from stepfence.api.main import create_app

    port = _free_port()
    config = uvicorn.Config(create_app(), host="127.0.0.1", port=port, log_level="warning",
                            lifespan="on")
    server = uvicorn.Server(config)
    thread = threading.Thread(target=server.run, name="stepfence-test-server", daemon=True)
    thread.start()
    deadline = time.monotonic() + SERVER_START_SECONDS
    while not server.started:
        if time.monotonic() > deadline or not thread.is_alive():
            raise RuntimeError("the test server did not start")
        time.sleep(0.05)
    yield f"http://127.0.0.1:{port}"
    server.should_exit = True
    thread.join(timeout=10)


@pytest.fixture(scope="session")
def browser():
    """A headless Chromium driven by Playwright (sync API)."""
    from playwright.sync_api import sync_playwright

    with sync_playwright() as p:
        b = p.chromium.launch(executable_path=CHROMIUM, args=CHROMIUM_ARGS)
        yield b
        b.close()
