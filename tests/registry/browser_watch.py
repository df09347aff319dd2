"""What a page in the browser tests complains of: Content-Security-Policy violations, script
errors and console errors. The browser tests fail on any of them."""
from __future__ import annotations

from playwright.sync_api import Page

# Runs before each document's own scripts; the browser reports every blocked load or inline
# script or style to it, with the directive that refused it.
_LISTEN = """
document.addEventListener("securitypolicyviolation", (event) => {
  window.reportViolation(`${event.effectiveDirective} refused ${event.blockedURI || "inline"}`
                         + ` on ${event.documentURI} (${event.sourceFile || ""}:${event.lineNumber})`);
});
"""


def watch(page: Page, complaints: list[str]) -> None:
    """Collect the page's complaints, across navigations, into ``complaints``."""
    page.expose_binding("reportViolation", lambda source, text: complaints.append(f"CSP violation: {text}"))
    page.add_init_script(_LISTEN)
    page.on("console", lambda message: complaints.append(f"console error: {message.text}")
            if message.type == "error" else None)
    page.on("pageerror", lambda error: complaints.append(f"script error: {error}"))
