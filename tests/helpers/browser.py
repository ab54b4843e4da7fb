"""Render a local HTML file in headless Chromium: screenshot, DOM and console messages.

Every call gets its own fresh user-data folder and HOME, and network features that would reach
outside are switched off; the page is loaded from a ``file://`` URL.
"""

from __future__ import annotations

import os
import shutil
import subprocess
import tempfile
from dataclasses import dataclass
from pathlib import Path

_FLAGS = ("--headless", "--no-sandbox", "--disable-gpu", "--disable-quic", "--no-first-run",
          "--disable-background-networking", "--disable-component-update", "--disable-sync",
          "--disable-extensions", "--hide-scrollbars", "--mute-audio")


def chromium_path() -> str | None:
    """The Chromium executable, or None when it is not installed."""
    for name in ("chromium", "chromium-browser", "google-chrome"):
        found = shutil.which(name)
        if found:
            return found
    return None


@dataclass(frozen=True)
class Rendered:
    """What Chromium made of a page."""

    screenshot: Path
    dom: str
    log: str


def render(page: Path, out_dir: Path, size=(1200, 2000), timeout: float = 120.0) -> Rendered:
    """Screenshot (PNG), serialised DOM and the browser log of a local page.

    Raises
    ------
    RuntimeError
        When Chromium is missing or wrote no screenshot.
    """
    exe = chromium_path()
    if exe is None:
        raise RuntimeError("chromium not found")
    page = Path(page).resolve()
    out_dir = Path(out_dir)
    out_dir.mkdir(parents=True, exist_ok=True)
    shot = out_dir / f"{page.stem}.png"
    logs = []
    dom = ""
    for mode in ("screenshot", "dom"):
        profile = Path(tempfile.mkdtemp(prefix="lcoe-chromium-"))
        env = dict(os.environ, HOME=str(profile))
        cmd = [exe, *_FLAGS, f"--user-data-dir={profile / 'data'}",
               "--enable-logging=stderr", "--v=0", f"--window-size={size[0]},{size[1]}"]
        cmd += [f"--screenshot={shot}"] if mode == "screenshot" else ["--dump-dom"]
        try:
            proc = subprocess.run(cmd + [page.as_uri()], capture_output=True, text=True,
                                  timeout=timeout, env=env)
        finally:
            shutil.rmtree(profile, ignore_errors=True)
        logs.append(proc.stderr)
        if mode == "dom":
            dom = proc.stdout
    if not shot.is_file():
        raise RuntimeError(f"chromium wrote no screenshot: {logs[0][-2000:]!r}")
    return Rendered(screenshot=shot, dom=dom, log="\n".join(logs))
