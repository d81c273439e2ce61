"""The HTML summary in a real browser: nothing cut off on a phone (400 px) or a desktop (1,280 px).

Sources named beside each check:

* the browser: headless Chromium (Debian's ``chromium`` package) driven by
  Playwright's Python package; it lays the page out as a reader's browser does;
* CSSOM View Module (W3C): ``document.documentElement.scrollWidth`` greater than
  the viewport's width means the page scrolls sideways, i.e. something is cut
  off at that width;
* PNG (ISO/IEC 15948, sec. 11.2.2): a PNG's width and height are the first two
  big-endian 32-bit numbers of its IHDR chunk, at bytes 16..23.

Without Chromium or Playwright this test skips loudly on a workstation and
fails under ``CI=true`` (``bash .ci/run`` installs both).
"""

from __future__ import annotations

import os
import shutil
import struct
from pathlib import Path

import pytest

import tea
from tea.outputs import report

from conftest import CASES_DIR

CHROMIUM = shutil.which("chromium") or "/usr/bin/chromium"
FLAGS = ["--no-sandbox", "--disable-gpu", "--disable-quic", "--no-first-run", "--disable-background-networking",
         "--disable-component-update", "--disable-sync"]
WIDTHS = (400, 1280)


def _browser_or_skip():
    try:
        from playwright.sync_api import sync_playwright
    except ImportError:
        reason = "Playwright's Python package is not installed (pip install -e '.[test]')"
    else:
        if Path(CHROMIUM).exists():
            return sync_playwright
        reason = f"Chromium not found at {CHROMIUM} (Debian package chromium; bash .ci/run installs it)"
    if os.environ.get("CI") == "true":
        pytest.fail(f"CI: {reason}")
    pytest.skip(f"SKIPPED LOUDLY: {reason}")


def _png_size(path: Path) -> tuple[int, int]:
    head = path.read_bytes()[:24]
    assert head[:8] == b"\x89PNG\r\n\x1a\n"
    return struct.unpack(">II", head[16:24])


@pytest.fixture(scope="module")
def pages(tmp_path_factory) -> dict[str, Path]:
    out = tmp_path_factory.mktemp("browser")
    loaded = []
    for path in (CASES_DIR / "clay_corner_miscanthus.toml", CASES_DIR / "sandy_slope_switchgrass.toml"):
        case = tea.load_case(path)
        frame = tea.build_ledger(case)
        loaded.append((case, frame, tea.summarise(case, frame)))
    summary = out / "summary.html"
    summary.write_text(report.summary_html(*loaded[0]), encoding="utf-8")
    compare = out / "compare.html"
    report.render_comparison(*[list(x) for x in zip(*loaded)], compare)
    return {"summary": summary, "compare": compare}


def test_pages_fit_phone_and_desktop_widths_with_no_sideways_scroll(pages, tmp_path):
    sync_playwright = _browser_or_skip()
    sizes = {}
    with sync_playwright() as p:
        browser = p.chromium.launch(executable_path=CHROMIUM, args=FLAGS, headless=True)
        try:
            for name, html in pages.items():
                for width in WIDTHS:
                    page = browser.new_page(viewport={"width": width, "height": 900})
                    page.goto(html.as_uri())
                    scroll, client, inner = page.evaluate(
                        "[document.documentElement.scrollWidth, document.documentElement.clientWidth, "
                        "window.innerWidth]")
                    assert scroll == client == inner == width, (name, width, scroll, client, inner)
                    shot = tmp_path / f"{name}-{width}.png"
                    page.screenshot(path=str(shot), full_page=True)
                    sizes[(name, width)] = _png_size(shot)
                    page.close()
        finally:
            browser.close()
    for (name, width), (w, h) in sizes.items():
        assert w == width and h > 900, (name, width, w, h)  # the whole page, as wide as the screen
    print("screenshots (width x height px):", {f"{n}@{w}": s for (n, w), s in sizes.items()})
