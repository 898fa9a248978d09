"""Start a page server in a subprocess and wait until Streamlit's health address answers "ok"."""

from __future__ import annotations

import socket
import subprocess
import tempfile
import time
import urllib.request
from collections.abc import Iterator, Sequence
from contextlib import contextmanager
from pathlib import Path

import pytest

START_TIMEOUT = 60.0  # seconds; a cold start on a busy two-core machine takes several


def free_port() -> int:
    with socket.socket() as s:
        s.bind(("127.0.0.1", 0))
        return s.getsockname()[1]


def refuses(host: str, port: int) -> bool:
    """Whether nothing accepts a connection at ``host``:``port``."""
    try:
        socket.create_connection((host, port), timeout=2).close()
    except OSError:
        return True
    return False


def _health(url: str) -> str | None:
    try:
        with urllib.request.urlopen(url + "_stcore/health", timeout=2) as reply:
            return reply.read().decode("utf-8", "replace").strip()
    except OSError:
        return None


@contextmanager
def serving(command: Sequence[str], port: int, cwd: Path, env: dict[str, str]) -> Iterator[str]:
    """Run ``command`` until the page at 127.0.0.1:``port`` is healthy; yield its address; stop it."""
    url = f"http://127.0.0.1:{port}/"
    with tempfile.TemporaryFile() as log:
        proc = subprocess.Popen(list(command), cwd=cwd, env=env, stdout=log, stderr=subprocess.STDOUT)
        try:
            deadline = time.monotonic() + START_TIMEOUT
            while _health(url) != "ok":
                if proc.poll() is not None or time.monotonic() > deadline:
                    log.seek(0)
                    pytest.fail(f"{' '.join(command)} did not serve {url} (exit code {proc.poll()}):\n"
                                + log.read().decode("utf-8", "replace")[-3000:])
                time.sleep(0.3)
            yield url
        finally:
            proc.terminate()
            try:
                proc.wait(timeout=15)
            except subprocess.TimeoutExpired:
                proc.kill()
                proc.wait()
