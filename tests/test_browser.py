"""A real browser opens the batch's pages (headless Chromium via Playwright).

Every demo page (both sample sites: index, overview and every enclosure report) is shown at
1280 px and must have no table wider than its column or the page (``scrollWidth`` against
the container's ``clientWidth``, CSSOM View); a full-page screenshot of each is kept.

External references: Chromium's headless mode and its documented switches for running as
root on a closed network (``--no-sandbox``, ``--disable-background-networking``,
``--disable-component-update``, ``--disable-sync``, ``--no-first-run``); Playwright's
``page.on("console")``/``page.on("pageerror")`` and visibility checks.
Screenshots are kept in ``test-artifacts/`` (git-ignored).
"""

from __future__ import annotations

import shutil
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parents[1]
SMALL = ROOT / "sample_sites" / "ashdown-private-collection"
DEMO = ROOT / "sample_sites" / "kestrel-moor-wildlife-park"
ARTIFACTS = ROOT / "test-artifacts"
CHROMIUM = shutil.which("chromium") or "/usr/bin/chromium"
ARGS = ["--no-sandbox", "--disable-gpu", "--disable-background-networking",
        "--disable-component-update", "--disable-sync", "--no-first-run"]

pytestmark = [pytest.mark.slow, pytest.mark.browser,
              pytest.mark.skipif(not Path(CHROMIUM).exists(),
                                 reason="Debian's chromium is not installed "
                                        "(apt-get install chromium)")]


@pytest.fixture(scope="module")
def batch_out(tmp_path_factory):
    from audit_lib.run.batch import run_batch

    out = tmp_path_factory.mktemp("browser") / "out"
    result = run_batch(SMALL, out, progress=False)
    assert not result.failures
    return out


@pytest.fixture(scope="module")
def page():
    playwright = pytest.importorskip("playwright.sync_api")
    with playwright.sync_playwright() as p:
        browser = p.chromium.launch(executable_path=CHROMIUM, args=ARGS)
        yield browser.new_page(viewport={"width": 1280, "height": 1400})
        browser.close()


def _open(page, path: Path) -> list[str]:
    problems: list[str] = []
    page.on("console", lambda m: problems.append(m.text) if m.type == "error" else None)
    page.on("pageerror", lambda e: problems.append(str(e)))
    page.on("requestfailed", lambda r: problems.append(f"failed request {r.url}"))
    page.goto(path.as_uri(), wait_until="load")
    return problems


def test_index_page_in_a_browser(batch_out, page):
    """index.html loads with no console error; the verdict table is visible with every row."""
    problems = _open(page, batch_out / "index.html")
    table = page.locator("table#verdicts")
    assert table.is_visible()
    assert table.locator("tbody tr").count() == 3
    assert page.locator(".state").first.is_visible()
    ARTIFACTS.mkdir(exist_ok=True)
    page.screenshot(path=str(ARTIFACTS / "index.png"), full_page=True)
    assert problems == []


def test_report_in_a_browser(batch_out, page):
    """A report loads with no console error; its figures are decoded images; checks visible."""
    report = sorted((batch_out / "reports").glob("*.html"))[0]
    problems = _open(page, report)
    images = page.locator("img")
    assert images.count() >= 4
    widths = page.eval_on_selector_all("img", "els => els.map(e => e.naturalWidth)")
    assert all(w > 0 for w in widths)
    assert page.locator("table.checks").first.is_visible()
    assert page.locator(".report-cautions").is_visible()
    ARTIFACTS.mkdir(exist_ok=True)
    page.screenshot(path=str(ARTIFACTS / "report.png"), full_page=True)
    assert problems == []


# every table: its width against its container and the page (CSSOM View scrollWidth,
# clientWidth and getBoundingClientRect)
_OVERFLOW = """() => {
  const page = document.documentElement.clientWidth;
  const wide = [];
  for (const t of document.querySelectorAll("table")) {
    const box = t.getBoundingClientRect();
    if (box.right > page + 1 || t.scrollWidth > t.parentElement.clientWidth + 1)
      wide.push(`${t.className || t.id}: ${Math.round(box.right)} of ${page} px`);
  }
  return {page: document.documentElement.scrollWidth, width: page, wide: wide};
}"""


@pytest.fixture(scope="module")
def demo_out(tmp_path_factory):
    from audit_lib.run.batch import run_batch

    out = tmp_path_factory.mktemp("browser-demo") / "out"
    result = run_batch(DEMO, out, progress=False)
    assert not result.failures
    return out


def test_no_table_overflows_any_demo_page_at_1280_px(batch_out, demo_out, page):
    """Every page of both demo sites at 1280 px: no table wider than the page or its column,
    no horizontal scrolling, no "NaN" and no snake_case header; a screenshot of each."""
    ARTIFACTS.mkdir(exist_ok=True)
    seen = 0
    for site, out in (("small", batch_out), ("demo", demo_out)):
        for path in [out / "index.html", *sorted((out / "reports").glob("*.html"))]:
            problems = _open(page, path)
            found = page.evaluate(_OVERFLOW)
            assert found["wide"] == [] and found["page"] <= found["width"], (path.name, found)
            headers = page.eval_on_selector_all("th", "els => els.map(e => e.innerText)")
            assert not [h for h in headers if "_" in h], (path.name, headers)
            assert "NaN" not in page.inner_text("body"), path.name
            page.screenshot(path=str(ARTIFACTS / f"{site}-{path.stem}.png"), full_page=True)
            assert problems == []
            seen += 1
    assert seen >= 2 * 2 + 12 + 3
