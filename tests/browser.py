"""Headless Debian Chromium for the browser tests, with every request outside an allowed set refused.

Playwright cannot download its own browser on these machines; the test command installs Debian's
chromium and the tests launch /usr/bin/chromium with the flags that keep it off the network
(notes in the project's DEVELOPERS.md).
"""

from __future__ import annotations

from typing import Callable

CHROMIUM = "/usr/bin/chromium"
ARGS = ["--headless", "--no-sandbox", "--disable-gpu", "--disable-background-networking",
        "--disable-component-update", "--disable-sync", "--no-first-run"]


def launch(playwright):
    """The Debian chromium, headless and quiet on the network."""
    return playwright.chromium.launch(executable_path=CHROMIUM, args=ARGS)


def guard(page, allowed: tuple[str, ...] | Callable[[str], bool], console_errors: bool = False):
    """Refuse and record every request the page makes that ``allowed`` does not admit.

    ``allowed`` is a tuple of URL prefixes or a predicate on the URL. Returns the lists
    ``(outside, errors)`` that fill while the page lives: refused URLs, and script errors (also
    console errors when ``console_errors``).
    """
    ok = allowed if callable(allowed) else (lambda url: url.startswith(allowed))
    outside: list[str] = []
    errors: list[str] = []

    def route(r):
        if ok(r.request.url):
            r.continue_()
        else:
            outside.append(r.request.url)
            r.abort()
    page.route("**/*", route)
    page.on("pageerror", lambda e: errors.append(str(e)))
    if console_errors:
        page.on("console", lambda m: errors.append(m.text) if m.type == "error" else None)
    return outside, errors
