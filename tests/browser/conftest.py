"""Headless Chromium for the page tests: Debian's ``chromium``, installed here when missing.

The browser is never downloaded by a tool of its own: the system package is used, installed with
``apt-get`` when the tests run as root on a machine that has it (as CI does), and the tests are
skipped with a message saying how to install it everywhere else.
"""

from __future__ import annotations

import os
import shutil
import subprocess
from collections.abc import Iterator
from pathlib import Path

import pytest
from playwright.sync_api import Browser, sync_playwright

CANDIDATES = ("/usr/bin/chromium", "/usr/bin/chromium-browser")
#: Quiet flags: no sandbox (tests may run as root), no GPU, and no background traffic of the
#: browser's own, so any network request seen comes from the page.
FLAGS = [
    "--headless",
    "--no-sandbox",
    "--disable-gpu",
    "--disable-background-networking",
    "--disable-component-update",
    "--disable-sync",
    "--disable-default-apps",
    "--no-first-run",
    "--mute-audio",
]


def _find() -> str | None:
    found = shutil.which("chromium") or shutil.which("chromium-browser")
    return found or next((c for c in CANDIDATES if Path(c).exists()), None)


def _install() -> None:
    env = {**os.environ, "DEBIAN_FRONTEND": "noninteractive"}
    for command in (["apt-get", "update", "-qq"], ["apt-get", "install", "-y", "-qq", "chromium"]):
        subprocess.run(command, env=env, check=False, capture_output=True, timeout=900)


@pytest.fixture(scope="session")
def chromium_path() -> str:
    found = _find()
    if found is None and os.geteuid() == 0 and shutil.which("apt-get"):
        _install()
        found = _find()
    if found is None:
        pytest.skip(
            "headless Chromium is not installed and cannot be installed here (the test set-up "
            "installs Debian's chromium package only as root with apt-get); install it with "
            "'apt-get install chromium' to run the page tests"
        )
    return found


@pytest.fixture(scope="session")
def browser(chromium_path: str) -> Iterator[Browser]:
    with sync_playwright() as playwright:
        launched = playwright.chromium.launch(executable_path=chromium_path, args=FLAGS)
        yield launched
        launched.close()


@pytest.fixture(scope="session")
def artifacts() -> Path:
    folder = Path(__file__).parents[2] / "test-artifacts"
    folder.mkdir(exist_ok=True)
    return folder
