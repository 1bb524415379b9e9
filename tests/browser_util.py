"""One way to run the app for browser tests: ``streamlit run app.py`` on a free port.

The server is started in its own process group and always stopped (the whole group),
whatever the test does; its output goes to a log file that a failure message quotes.
"""

from __future__ import annotations

import contextlib
import os
import signal
import socket
import subprocess
import sys
import time
import urllib.request
from collections.abc import Iterator, Mapping
from pathlib import Path

import pytest

from conftest import ROOT


def free_port() -> int:
    with socket.socket() as s:
        s.bind(("127.0.0.1", 0))
        return s.getsockname()[1]


@contextlib.contextmanager
def streamlit_server(log: Path, env: Mapping[str, str] | None = None, timeout: float = 60) -> Iterator[str]:
    """Start the app, wait for its health endpoint, yield its URL, stop it afterwards."""
    port = free_port()
    cmd = [sys.executable, "-m", "streamlit", "run", str(ROOT / "app.py"), "--server.headless", "true",
           "--server.port", str(port), "--server.address", "127.0.0.1",
           "--browser.gatherUsageStats", "false", "--server.fileWatcherType", "none"]
    full_env = {**os.environ, "PYTHONUNBUFFERED": "1", **(env or {})}
    with open(log, "wb") as out:
        proc = subprocess.Popen(cmd, cwd=ROOT, stdout=out, stderr=subprocess.STDOUT, env=full_env,
                                start_new_session=True)
    url = f"http://127.0.0.1:{port}"
    try:
        deadline = time.monotonic() + timeout
        while True:
            try:
                with urllib.request.urlopen(f"{url}/_stcore/health", timeout=2) as r:
                    if r.status == 200:
                        break
            except OSError:
                pass
            if proc.poll() is not None or time.monotonic() > deadline:
                pytest.fail(f"streamlit did not start on {url}:\n{log.read_text(errors='replace')[-2000:]}")
            time.sleep(0.3)
        yield url
    finally:
        try:
            os.killpg(proc.pid, signal.SIGTERM)
            proc.wait(timeout=10)
        except (ProcessLookupError, subprocess.TimeoutExpired):
            with contextlib.suppress(ProcessLookupError):
                os.killpg(proc.pid, signal.SIGKILL)
            proc.wait(timeout=10)
