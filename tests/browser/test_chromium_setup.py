"""The browser fixture's way to Chromium when it is missing: install it as root, else skip with the reason.

apt-get is replaced by a recorder (nothing is installed here), and Chromium's paths point into a
temporary folder where it is missing, so each path of :func:`ensure_chromium` runs for real.
"""

from __future__ import annotations

import subprocess
from collections.abc import Callable, Sequence
from pathlib import Path

import pytest

from tests.browser import chromium as setup
from tests.browser.chromium import PACKAGES, ensure_chromium


@pytest.fixture
def missing(tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> tuple[Path, Path]:
    browser, driver = tmp_path / "chromium", tmp_path / "chromedriver"
    monkeypatch.setenv("OHMTALLY_CHROMIUM", str(browser))
    monkeypatch.setenv("OHMTALLY_CHROMEDRIVER", str(driver))
    monkeypatch.setattr(setup.shutil, "which", lambda name: f"/usr/bin/{name}")
    return browser, driver


def apt(calls: list[list[str]], installs: tuple[Path, ...], fail_first: bool = False
        ) -> Callable[[Sequence[str]], subprocess.CompletedProcess[str]]:
    """A stand-in for apt-get: records each call; 'install' puts executables at ``installs``."""
    def run(argv: Sequence[str]) -> subprocess.CompletedProcess[str]:
        calls.append(list(argv))
        if argv[1] == "install" and installs and not (fail_first and len(calls) == 1):
            for path in installs:
                path.write_text("#!/bin/sh\n")
                path.chmod(0o755)
            return subprocess.CompletedProcess(argv, 0, "", "")
        if argv[1] == "install":
            return subprocess.CompletedProcess(argv, 100, "", "E: Unable to locate package chromium")
        return subprocess.CompletedProcess(argv, 0, "", "")
    return run


def test_root_installs_the_debian_packages(missing: tuple[Path, Path]) -> None:
    """As root with apt-get, a missing Chromium is installed (chromium, chromium-driver, a font with ✓ ✗)."""
    calls: list[list[str]] = []
    assert ensure_chromium(run=apt(calls, missing), is_root=lambda: True) is None
    assert calls == [["/usr/bin/apt-get", "install", "-y", "-q", *PACKAGES]]
    assert {"chromium", "chromium-driver"} <= set(PACKAGES)


def test_a_stale_package_list_is_refreshed_once(missing: tuple[Path, Path]) -> None:
    """When the first install fails (no package list yet), apt-get update runs and the install is retried."""
    calls: list[list[str]] = []
    assert ensure_chromium(run=apt(calls, missing, fail_first=True), is_root=lambda: True) is None
    assert [c[1] for c in calls] == ["install", "update", "install"]


def test_failed_install_skips_with_apts_words(missing: tuple[Path, Path]) -> None:
    """When apt-get cannot install it, the reason names the packages and quotes apt-get."""
    calls: list[list[str]] = []
    reason = ensure_chromium(run=apt(calls, ()), is_root=lambda: True)
    assert reason is not None and "still missing" in reason and "chromium-driver" in reason
    assert "Unable to locate package chromium" in reason and len(calls) == 3


def test_not_root_skips_without_trying(missing: tuple[Path, Path]) -> None:
    """Not root: nothing is run, and the reason says the command to run as root."""
    calls: list[list[str]] = []
    reason = ensure_chromium(run=apt(calls, missing), is_root=lambda: False)
    assert calls == [] and reason is not None and "not root" in reason and "apt-get install" in reason


def test_no_apt_get_skips(missing: tuple[Path, Path], monkeypatch: pytest.MonkeyPatch) -> None:
    """Without apt-get (another distribution) the reason says so."""
    monkeypatch.setattr(setup.shutil, "which", lambda name: None)
    reason = ensure_chromium(run=apt([], missing), is_root=lambda: True)
    assert reason is not None and "no apt-get" in reason


def test_present_means_nothing_to_do(missing: tuple[Path, Path]) -> None:
    """When both are there, apt-get is not called."""
    for path in missing:
        path.write_text("#!/bin/sh\n")
        path.chmod(0o755)
    calls: list[list[str]] = []
    assert ensure_chromium(run=apt(calls, missing), is_root=lambda: False) is None and calls == []
