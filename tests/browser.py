"""Open a page in headless Chromium, offline, and say what went wrong (a test helper).

:func:`find_browser` finds Debian's ``chromium`` (or another Chromium-based
browser) on the path; :func:`open_page` loads a file with every host name
resolving nowhere, takes a screenshot, and returns the console messages the
page caused and every request the page itself made to anything but a file or
a ``data:`` URI (read from Chromium's network log: requests isolated under the
``file://`` origin are the page's; the browser's own update checks are not).
"""

from __future__ import annotations

import json
import re
import shutil
import subprocess
import tempfile
from dataclasses import dataclass
from pathlib import Path

NAMES = ("chromium", "chromium-browser", "google-chrome", "google-chrome-stable")
FLAGS = [
    "--headless",
    "--no-sandbox",
    "--disable-gpu",
    "--hide-scrollbars",
    "--no-first-run",
    "--disable-background-networking",
    "--disable-component-update",
    "--disable-sync",
    "--disable-default-apps",
    "--host-resolver-rules=MAP * ~NOTFOUND",
    "--enable-logging=stderr",
    "--v=0",
]


def find_browser() -> str | None:
    """A headless-capable Chromium on the path, or ``None``."""
    return next((path for name in NAMES if (path := shutil.which(name))), None)


@dataclass
class Visit:
    returncode: int
    screenshot: bytes
    console: list[str]
    requests: list[str]


def open_page(browser: str, page: Path, width: int = 1200, height: int = 2400, timeout: float = 120) -> Visit:
    """Load ``page`` in ``browser``, headless and offline; screenshot it; report console messages and requests."""
    with tempfile.TemporaryDirectory() as tmp:
        shot, net = Path(tmp) / "shot.png", Path(tmp) / "net.json"
        run = subprocess.run(
            [browser, *FLAGS, f"--user-data-dir={tmp}/profile", f"--log-net-log={net}",
             f"--window-size={width},{height}", f"--screenshot={shot}", page.resolve().as_uri()],
            capture_output=True, text=True, timeout=timeout,
        )  # fmt: skip
        console = [line for line in run.stderr.splitlines() if re.search(r":CONSOLE[:(]", line)]
        requests = []
        if net.exists():
            text = net.read_text(encoding="utf-8", errors="replace").rstrip().rstrip(",")
            if not text.endswith("}"):
                text += "]}"
            for event in json.loads(text).get("events", []):
                params = event.get("params") or {}
                url, key = str(params.get("url", "")), str(params.get("network_isolation_key", ""))
                if url and key.startswith("file://") and not url.startswith(("file:", "data:")):
                    requests.append(url)
        return Visit(run.returncode, shot.read_bytes() if shot.exists() else b"", console, sorted(set(requests)))
