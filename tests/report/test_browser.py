"""The report in a real browser: headless chromium, no network.

How the checks work
-------------------
* **Screenshot** — ``chromium --headless --screenshot=... --window-size=1280,2000 file://...``
  (the plain command line a reviewer would use); the PNG is decoded with the stdlib reader in
  ``conftest.py`` and must show a page, not a blank or single-colour image.
* **DOM** — ``chromium --headless --dump-dom file://...`` prints the document after parsing
  and after any script would have run; the verdict must be in it.
* **Network and console** — one chromium per module started with ``--remote-debugging-port=0``
  and driven over the DevTools protocol (a minimal stdlib WebSocket client in ``conftest.py``):
  the Network, Runtime, Log and Page domains are enabled *before* navigating, so every request
  the page makes (``Network.requestWillBeSent``, file:// sub-resources included), every console
  message, uncaught exception, browser log error (CSP violations among them) and JavaScript
  dialog is recorded.  The report's only request must be the document itself.
* **Detectors can fail** — a control page that does fetch an image, log a console error and
  run a script must be caught by the same checks, so a passing report test is not a blind one.
* **Hostile text** — the hostile fixture's payloads would set ``document.title`` to
  ``PWNED-...``, set ``data-pwned`` on ``<html>`` and open an ``alert``.  The report is loaded
  *with its Content-Security-Policy meta tag removed*, so escaping alone must keep the payload
  inert: no title change, no attribute, no dialog, no ``<script>`` element, no ``on*`` attribute,
  no request.

Every chromium run also has the network cut (all host names resolve to "not found", all other
connections go to a refusing proxy), so a regression cannot reach the internet while failing.
"""

from __future__ import annotations

import re

import pytest

from partcheck.report import render_html, write_html

pytestmark = pytest.mark.browser

CSP_META = re.compile(r'<meta http-equiv="Content-Security-Policy"[^>]*>')


def test_screenshot_shows_a_page(chromium, browser_tools, sample_result, tmp_path):
    report = write_html(sample_result, tmp_path / "report.html")
    png = tmp_path / "shot.png"
    run = browser_tools.run_chromium(chromium, tmp_path / "profile", f"--screenshot={png}", "--window-size=1280,2000",
                                     report.as_uri())
    assert png.exists(), f"chromium wrote no screenshot (exit {run.returncode}): {run.stderr[-2000:]}"
    pixels = browser_tools.read_png(png)[:, :, :3].astype(int)
    assert pixels.shape[:2] == (2000, 1280)
    brightness = pixels.sum(axis=2)
    ink = brightness < 3 * 128  # dark pixels: text and lines
    not_white = brightness < 3 * 245
    assert not_white.mean() > 0.03, f"only {not_white.mean():.1%} of the screenshot is not white"
    assert ink[:200].any(), "no dark pixels in the top 200 rows: the verdict banner is missing"
    rows_with_content = not_white.any(axis=1).mean()
    assert rows_with_content > 0.4, f"only {rows_with_content:.0%} of the rows have content"
    colours = {tuple(c) for c in (pixels[::7, ::7] // 32).reshape(-1, 3).tolist()}
    assert len(colours) >= 6, f"only {len(colours)} colour levels: the page looks blank or unstyled"
    # The failing verdict is printed in the fail colour: reddish pixels near the top left.
    top_left = pixels[:150, :400]
    reddish = (top_left[:, :, 0] > top_left[:, :, 1] + 40) & (top_left[:, :, 0] > top_left[:, :, 2] + 40)
    assert reddish.sum() > 50, "no fail-coloured verdict in the top-left corner"


def test_dump_dom_has_the_verdict(chromium, browser_tools, sample_result, tmp_path):
    report = write_html(sample_result, tmp_path / "report.html")
    run = browser_tools.run_chromium(chromium, tmp_path / "profile", "--dump-dom", report.as_uri())
    dom = run.stdout
    assert 'data-verdict="fail"' in dom, f"no verdict in the DOM (exit {run.returncode}): {run.stderr[-2000:]}"
    assert re.search(r"data-verdict=\"fail\"><span[^>]*>✖</span> FAIL", dom)
    assert "the design does not meet the policy" in dom


def test_report_makes_no_request_and_logs_no_error(devtools, sample_result, tmp_path):
    report = write_html(sample_result, tmp_path / "report.html")
    events = devtools.open(report.as_uri())
    assert devtools.requests_in(events) == [report.as_uri()], "the report fetched something besides itself"
    assert devtools.console_errors(events) == []
    assert devtools.dialogs_in(events) == []
    assert devtools.evaluate("document.querySelector('[data-verdict]').dataset.verdict") == "fail"
    assert devtools.evaluate("document.scripts.length") == 0
    text = devtools.evaluate("document.body.innerText")
    assert "FAIL" in text and "C5" in text
    # The inline SVG figures are really drawn (non-zero size), not dropped by the parser.
    sizes = devtools.evaluate("[...document.querySelectorAll('svg.plot')].map(s => s.getBBox().width > 50)")
    assert len(sizes) >= 8 and all(sizes)


def test_the_checks_catch_a_page_that_fetches_logs_and_runs(devtools, tmp_path):
    """Control: the same detectors see a request, a console error, a script and a dialog."""
    page = tmp_path / "control.html"
    page.write_text("<!DOCTYPE html><title>control</title><img src='http://canary.invalid/x.png'>"
                    "<img src='missing.png'><script>console.error('canary error');"
                    "document.title='PWNED-CONTROL';alert('canary')</script>", encoding="utf-8")
    events = devtools.open(page.as_uri())
    requests = devtools.requests_in(events)
    assert "http://canary.invalid/x.png" in requests
    assert (tmp_path / "missing.png").as_uri() in requests
    assert any("canary error" in e for e in devtools.console_errors(events))
    assert devtools.dialogs_in(events) == ["canary"]
    assert devtools.evaluate("document.title") == "PWNED-CONTROL"


def test_hostile_text_stays_inert_without_the_csp(devtools, hostile_result, tmp_path):
    html = render_html(hostile_result)
    assert CSP_META.search(html), "the report lost its Content-Security-Policy meta tag"
    unprotected = tmp_path / "hostile.html"
    unprotected.write_text(CSP_META.sub("", html), encoding="utf-8")
    events = devtools.open(unprotected.as_uri())
    assert devtools.requests_in(events) == [unprotected.as_uri()], "an injected <img> was fetched"
    assert devtools.dialogs_in(events) == [], "an injected alert() ran"
    assert devtools.console_errors(events) == []
    assert not devtools.evaluate("document.title").startswith("PWNED")
    assert devtools.evaluate("document.documentElement.getAttribute('data-pwned')") is None
    assert devtools.evaluate("document.scripts.length") == 0
    assert devtools.evaluate("document.querySelectorAll('img').length") == 0
    handlers = devtools.evaluate(
        "[...document.querySelectorAll('*')].flatMap(e => [...e.attributes].map(a => a.name))"
        ".filter(n => n.startsWith('on'))")
    assert handlers == []
    # The payload is on the page as text a reviewer can read.
    text = devtools.evaluate("document.body.innerText")
    assert "<script>document.title='PWNED-SCRIPT'" in text
    assert "<img src=x onerror=" in text


def test_hostile_text_with_the_csp_in_place(devtools, hostile_result, tmp_path):
    report = write_html(hostile_result, tmp_path / "hostile.html")
    events = devtools.open(report.as_uri())
    assert devtools.requests_in(events) == [report.as_uri()]
    assert devtools.console_errors(events) == []
    assert devtools.dialogs_in(events) == []
    assert devtools.evaluate("document.documentElement.getAttribute('data-pwned')") is None


def test_the_demo_report_in_the_browser(devtools, chromium, browser_tools, tmp_path):
    """The bundled failing demo scenario, checked end to end, opened headless like the others."""
    from partcheck.demo import run_demo

    (run,) = run_demo(tmp_path / "demo", ("battery_monitor_48v",))
    assert run.result.verdict == "fail"
    events = devtools.open(run.report.as_uri())
    assert devtools.requests_in(events) == [run.report.as_uri()]
    assert devtools.console_errors(events) == []
    assert devtools.evaluate("document.querySelector('[data-verdict]').dataset.verdict") == "fail"
    assert "FAIL" in devtools.evaluate("document.querySelector('.verdict').innerText")
    png = tmp_path / "demo.png"
    browser_tools.run_chromium(chromium, tmp_path / "profile", f"--screenshot={png}", "--window-size=1280,2000",
                               run.report.as_uri())
    pixels = browser_tools.read_png(png)[:, :, :3].astype(int).sum(axis=2)
    assert (pixels < 3 * 245).mean() > 0.03, "the demo report's screenshot is blank"
