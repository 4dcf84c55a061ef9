"""Headless Chromium (Debian's `chromium`) driven through its command line: DOM dump and screenshot.

No DevTools client: `--dump-dom` prints the DOM after the page's scripts ran (within a virtual-time
budget), `--screenshot` writes a PNG. Each run gets its own profile directory, so parallel runs do not meet.
"""

from __future__ import annotations

import os
import shutil
import subprocess
import tempfile
from pathlib import Path

NAMES = ("chromium", "chromium-browser", "google-chrome")


def find() -> str | None:
    return next((p for p in map(shutil.which, NAMES) if p), None)


def _run(binary: str, url: str, *flags: str) -> subprocess.CompletedProcess:
    with tempfile.TemporaryDirectory(prefix="cohop-chromium-") as profile:
        command = [binary, "--headless", "--no-sandbox", "--disable-gpu", "--disable-dev-shm-usage",
                   "--hide-scrollbars", "--no-first-run", "--disable-extensions", f"--user-data-dir={profile}",
                   "--virtual-time-budget=15000", *flags, url]
        env = dict(os.environ, DBUS_SESSION_BUS_ADDRESS="disabled:")
        return subprocess.run(command, capture_output=True, text=True, timeout=120, env=env, check=True)


def dump_dom(binary: str, page: Path) -> str:
    return _run(binary, page.resolve().as_uri(), "--dump-dom").stdout


def screenshot(binary: str, page: Path, out: Path, width: int = 1280, height: int = 2400) -> Path:
    _run(binary, page.resolve().as_uri(), f"--screenshot={out}", f"--window-size={width},{height}")
    return out
