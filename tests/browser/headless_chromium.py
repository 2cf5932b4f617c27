"""The one Chromium launcher of the review-page test and the review-page benchmark.

Debian's ``chromium`` driven through Playwright for Python (``playwright install`` is never run:
no browser is downloaded); ``.ci/run`` installs the browser with apt. Plain module, no pytest:
``bench/bench_html.py`` imports it too.
"""

from __future__ import annotations

import shutil
from pathlib import Path
from typing import Any

CHROMIUM_CANDIDATES = ("/usr/bin/chromium", "/usr/bin/chromium-browser")
CHROMIUM_ARGS = [
    "--headless",
    "--no-sandbox",
    "--disable-gpu",
    "--disable-background-networking",
    "--disable-component-update",
    "--disable-sync",
    "--no-first-run",
]


def chromium_path() -> str | None:
    """Debian's Chromium where it is installed, else one on PATH, else None."""
    for cand in CHROMIUM_CANDIDATES:
        if Path(cand).is_file():
            return cand
    return shutil.which("chromium")


def launch(playwright: Any, executable: str | None = None) -> Any:
    """A headless Chromium browser from a running ``sync_playwright()`` context."""
    exe = executable or chromium_path()
    if exe is None:
        raise FileNotFoundError("no Chromium found (/usr/bin/chromium): install Debian's chromium")
    return playwright.chromium.launch(executable_path=exe, headless=True, args=CHROMIUM_ARGS)
