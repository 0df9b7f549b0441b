"""Shared test fixtures."""

import os

import pytest

from explorer import demo_design
from explorer.spice import ngspice_path


@pytest.fixture
def demo():
    """The built-in demo design (an invented scenario)."""
    return demo_design()


@pytest.fixture
def ngspice():
    """Path of ngspice. In CI (CI set) a missing ngspice fails the test instead of skipping it."""
    path = ngspice_path()
    if path is None:
        if os.environ.get("CI"):
            pytest.fail("ngspice is required in CI (the test command installs it with apt-get)")
        pytest.skip("ngspice not installed; run the README's test command, which installs it")
    return path


@pytest.fixture(scope="module")
def browser():
    """Headless Debian chromium through Playwright (tests/browser.py), one per test module."""
    from playwright.sync_api import sync_playwright

    from browser import launch
    with sync_playwright() as p:
        b = launch(p)
        yield b
        b.close()
