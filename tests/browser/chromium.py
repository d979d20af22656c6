"""Headless Chromium from Debian's packages for the browser tests: find it, install it, start it.

- :func:`ensure_chromium` answers ``None`` when ``chromium`` and ``chromedriver`` are there,
  after installing Debian's ``chromium``, ``chromium-driver`` and ``fonts-dejavu-core`` (the
  outcome symbols ✓ ✗ need a font that has them) with apt-get where they are missing and
  this process is root; else the reason the browser tests are skipped.
- :func:`start_chromium` starts it headless with every flag that keeps a closed network
  untried (no QUIC, no background networking, component updates, sync or first-run
  work) and a fresh profile directory, with the network log on.
- Paths can be overridden with ``OHMTALLY_CHROMIUM`` and ``OHMTALLY_CHROMEDRIVER``.
"""

from __future__ import annotations

import os
import shutil
import subprocess
from collections.abc import Callable, Sequence
from pathlib import Path

from selenium import webdriver
from selenium.webdriver.chrome.service import Service

__all__ = ["CHROMIUM_FLAGS", "PACKAGES", "ensure_chromium", "paths", "start_chromium"]

PACKAGES = ("chromium", "chromium-driver", "fonts-dejavu-core")
CHROMIUM_FLAGS = ("--headless", "--no-sandbox", "--disable-gpu", "--disable-quic", "--no-first-run",
                  "--disable-background-networking", "--disable-component-update", "--disable-sync",
                  "--disable-dev-shm-usage", "--hide-scrollbars")
INSTALL_TIMEOUT_S = 1200  # a first install fetches ~100 MB from Debian's mirror


def paths() -> tuple[Path, Path]:
    """(chromium, chromedriver) as this machine names them."""
    return (Path(os.environ.get("OHMTALLY_CHROMIUM", "/usr/bin/chromium")),
            Path(os.environ.get("OHMTALLY_CHROMEDRIVER", "/usr/bin/chromedriver")))


def _missing() -> list[Path]:
    return [p for p in paths() if not (p.is_file() and os.access(p, os.X_OK))]


Run = Callable[[Sequence[str]], "subprocess.CompletedProcess[str]"]


def _run(argv: Sequence[str]) -> subprocess.CompletedProcess[str]:
    env = {**os.environ, "DEBIAN_FRONTEND": "noninteractive"}
    return subprocess.run(list(argv), capture_output=True, text=True, env=env, timeout=INSTALL_TIMEOUT_S,
                          check=False, stdin=subprocess.DEVNULL)


def ensure_chromium(run: Run = _run, is_root: Callable[[], bool] = lambda: os.geteuid() == 0) -> str | None:
    """``None`` when Chromium and its driver are ready (installing them where possible); else why not."""
    missing = _missing()
    if not missing:
        return None
    named = ", ".join(str(p) for p in missing)
    apt = shutil.which("apt-get")
    if apt is None:
        return f"{named} missing and no apt-get here: install Chromium and chromedriver"
    if not is_root():
        return f"{named} missing and not root: run `apt-get install -y {' '.join(PACKAGES)}` as root"
    install = [apt, "install", "-y", "-q", *PACKAGES]
    done = run(install)
    if done.returncode != 0:  # a stale or empty package list: refresh it once and try again
        run([apt, "update", "-q"])
        done = run(install)
    still = _missing()
    if still:
        said = (done.stderr or done.stdout).strip().splitlines()[-3:]
        named = ", ".join(str(p) for p in still)
        return (f"{named} still missing after `apt-get install {' '.join(PACKAGES)}` "
                f"(exit {done.returncode}): {' / '.join(said)}")
    return None


def start_chromium(profile: Path, window: tuple[int, int] = (1280, 1024)) -> webdriver.Chrome:
    """A Selenium driver of headless Chromium with a fresh profile in ``profile`` and the network log on."""
    chromium, chromedriver = paths()
    options = webdriver.ChromeOptions()
    options.binary_location = str(chromium)
    for flag in (*CHROMIUM_FLAGS, f"--user-data-dir={profile}", f"--window-size={window[0]},{window[1]}"):
        options.add_argument(flag)
    options.set_capability("goog:loggingPrefs", {"performance": "ALL", "browser": "ALL"})
    return webdriver.Chrome(service=Service(str(chromedriver)), options=options)
