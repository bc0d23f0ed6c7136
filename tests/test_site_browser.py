"""The committed sites (results/quick, keel, spectra) in a real headless Chromium, driven by Playwright.

Skipped, with the reason, only when Debian's chromium or the playwright package is missing. Checks: no
console error, no failed request and no request leaving the folder, on every page, opened from a file URL
and from a local static server; every figure drawn with a non-zero size; at 1280 and 390 px no table or
figure wider than the window outside a scroll container, and the Overview's first screen holding the
answer of every learner; every page in the menu has content and stays under 400 kB of HTML; a click on a
column heading reorders the rows; a filter hides rows; the tables are complete without JavaScript.
First-render times are printed, never asserted. Screenshots at 1280 and 390 px go to the test's tmp folder.
"""
import functools
import http.server
import threading
from pathlib import Path
from urllib.parse import unquote, urlparse

import pytest

sync_api = pytest.importorskip("playwright.sync_api", reason="playwright (pip install playwright) is not installed")

ROOT = Path(__file__).resolve().parents[1]
SITE = ROOT / "results" / "quick"
SITES = ["quick", "keel", "spectra"]
PHONE_HEIGHT = 844        # a common phone viewport (390 x 844 CSS px); desktop: 1280 x 900


def site_pages(site):
    """Every page of a committed site folder (the try page only exists in `lopsided try` folders)."""
    return sorted(p.name for p in (ROOT / "results" / site).glob("*.html"))
CHROMIUM = Path("/usr/bin/chromium")
ARGS = ["--headless", "--no-sandbox", "--disable-gpu", "--disable-quic", "--no-first-run",
        "--disable-background-networking", "--disable-component-update", "--disable-sync"]

pytestmark = pytest.mark.skipif(not CHROMIUM.exists(), reason="Debian's chromium package is not installed "
                                                              "(apt-get install chromium)")


@pytest.fixture(scope="module")
def browser():
    with sync_api.sync_playwright() as driver:
        chromium = driver.chromium.launch(executable_path=str(CHROMIUM), args=ARGS)
        yield chromium
        chromium.close()


@pytest.fixture(scope="module")
def served():
    """The site folder on a static server on the loopback address; its base URL."""
    handler = functools.partial(http.server.SimpleHTTPRequestHandler, directory=str(SITE))
    server = http.server.ThreadingHTTPServer(("127.0.0.1", 0), handler)
    thread = threading.Thread(target=server.serve_forever, daemon=True)
    thread.start()
    yield f"http://127.0.0.1:{server.server_address[1]}/"
    server.shutdown()
    server.server_close()


class Watched:
    """A page with every console error, page error, failed request and outside request recorded."""

    def __init__(self, browser, base, width=1280, javascript=True):
        self.base, self.problems, self.urls = base, [], []
        height = PHONE_HEIGHT if width < 600 else 900
        self.context = browser.new_context(viewport={"width": width, "height": height}, java_script_enabled=javascript)
        self.page = self.context.new_page()
        self.page.on("console", lambda m: m.type == "error" and self.problems.append(f"console: {m.text}"))
        self.page.on("pageerror", lambda e: self.problems.append(f"page error: {e}"))
        self.page.on("requestfailed", lambda r: self.problems.append(f"failed: {r.url} {r.failure}"))
        self.page.on("response", lambda r: r.status >= 400 and self.problems.append(f"HTTP {r.status}: {r.url}"))
        self.page.on("request", lambda r: self.urls.append(r.url))

    def open(self, file):
        self.page.goto(self.base + file, wait_until="load")
        outside = [u for u in self.urls if not u.startswith(self.base)]
        assert not outside, f"{file}: requests outside the site folder: {outside}"
        return self.page

    def close(self):
        self.context.close()


def _file_path(url):
    """file:///a/b -> /a/b (URL-decoded)."""
    return unquote(urlparse(url).path)


def _first_render_ms(page):
    paint = page.evaluate("performance.getEntriesByName('first-contentful-paint').map(e => e.startTime)")
    return paint[0] if paint else page.evaluate("performance.getEntriesByType('navigation')[0].loadEventEnd")


def _figures_drawn(page):
    """[(what, width, height)] of every figure and image on the page."""
    return page.evaluate("""() => [
        ...Array.from(document.querySelectorAll('figure'), f => {
            const box = f.getBoundingClientRect(); const art = f.querySelector('svg, img');
            const inner = art ? art.getBoundingClientRect() : {width: 0, height: 0};
            return [f.querySelector('a[download]')?.getAttribute('href') || 'figure', Math.min(box.width, inner.width),
                    Math.min(box.height, inner.height)]; }),
        ...Array.from(document.querySelectorAll('img'), i => [i.src, i.naturalWidth, i.naturalHeight])]""")


@pytest.mark.parametrize("scheme", ["file", "http"])
def test_every_page_loads_cleanly_with_every_figure_drawn(browser, served, scheme):
    base = SITE.as_uri() + "/" if scheme == "file" else served
    watched = Watched(browser, base)
    try:
        for file in site_pages("quick"):
            view = watched.open(file)
            print(f"{scheme} {file}: first render {_first_render_ms(view):.0f} ms (target < 1000 ms)")
            view.evaluate("Array.from(document.images).forEach(i => i.loading = 'eager')")
            view.wait_for_function("Array.from(document.images).every(i => i.complete)")
            drawn = _figures_drawn(view)
            assert all(w > 0 and h > 0 for _, w, h in drawn), f"{file}: figures of zero size: {drawn}"
            links = view.eval_on_selector_all("a[download]", "as => as.map(a => a.href)")
            missing = [u for u in links if u.startswith("file:") and not Path(_file_path(u)).is_file()]
            assert not missing, f"{file}: download links to missing files: {missing}"
        assert not watched.problems, watched.problems
    finally:
        watched.close()


def _column(page, table, index):
    return page.eval_on_selector(table, f"t => Array.from(t.tBodies[0].rows).filter(r => !r.hidden)"
                                        f".map(r => r.cells[{index}].textContent.trim())")


def test_a_click_on_a_column_heading_reorders_the_rows(browser):
    watched = Watched(browser, SITE.as_uri() + "/")
    try:
        page = watched.open("index.html")
        table = "table.ranked"                               # the all-combinations table, by average rank
        methods = _column(page, table, 0)
        assert _column(page, table, 1) == [str(i) for i in range(1, len(methods) + 1)]
        page.click(f"{table} thead th:nth-child(1) button")  # by name, A to Z
        by_name = _column(page, table, 0)
        assert by_name == sorted(methods, key=str.lower) and by_name != methods
        page.click(f"{table} thead th:nth-child(1) button")  # again: Z to A
        assert _column(page, table, 0) == by_name[::-1]
        page.click(f"{table} thead th:nth-child(2) button")  # back by place
        assert _column(page, table, 0) == methods
        assert not watched.problems, watched.problems
    finally:
        watched.close()


def test_a_filter_hides_the_rows_of_other_learners(browser):
    watched = Watched(browser, SITE.as_uri() + "/")
    try:
        page = watched.open("ranks.html")
        table = "table.scores"
        total = page.eval_on_selector(table, "t => t.tBodies[0].rows.length")
        learner = page.eval_on_selector(table, "t => t.tBodies[0].rows[0].dataset.learner")
        bar = page.locator(".filters").first
        bar.get_by_label("learner").select_option(learner)
        shown = page.eval_on_selector(table, "t => Array.from(t.tBodies[0].rows).filter(r => !r.hidden)"
                                             ".map(r => r.dataset.learner)")
        assert 0 < len(shown) < total and set(shown) == {learner}
        assert f"{len(shown)} of {total} rows" in bar.inner_text()
        bar.get_by_role("button", name="Show all").click()
        assert page.eval_on_selector(table, "t => Array.from(t.tBodies[0].rows).filter(r => r.hidden).length") == 0
        assert not watched.problems, watched.problems
    finally:
        watched.close()


def test_tables_are_complete_and_ordered_without_javascript(browser):
    watched = Watched(browser, SITE.as_uri() + "/", javascript=False)
    try:
        page = watched.open("index.html")
        ranks = page.eval_on_selector("table.ranked", "t => Array.from(t.tBodies[0].rows, "
                                                      "r => parseFloat(r.cells[2].dataset.value))")
        assert ranks == sorted(ranks) and len(ranks) > 1                   # best average rank first
        assert page.locator(".filters").count() == 0 and page.locator("button.sort").count() == 0
        page = watched.open("ranks.html")
        rows = page.eval_on_selector("table.scores", "t => t.tBodies[0].rows.length")
        assert rows > 0 and page.locator("table.scores tr[hidden]").count() == 0
        assert not watched.problems, watched.problems
    finally:
        watched.close()


OUTSIDE_SCROLL = """() => Array.from(document.querySelectorAll('table, figure, img, pre')).filter(e => {
    if (e.getBoundingClientRect().right <= window.innerWidth + 1) return false;
    for (let p = e.parentElement; p; p = p.parentElement) {
        if (['auto', 'scroll'].includes(getComputedStyle(p).overflowX)) return false; }
    return true; }).map(e => e.tagName + ' ' + (e.getAttribute('aria-label') || e.className))"""


@pytest.mark.parametrize("site", SITES)
@pytest.mark.parametrize("width", [1280, 390])
def test_pages_fit_the_window_have_content_and_the_overview_opens_with_the_answer(browser, site, width, tmp_path):
    folder = ROOT / "results" / site
    watched = Watched(browser, folder.as_uri() + "/", width=width)
    try:
        for file in site_pages(site):
            assert (folder / file).stat().st_size < 400_000, f"{site}/{file}: over 400 kB of HTML"
            view = watched.open(file)
            overflow = view.evaluate("document.documentElement.scrollWidth - document.documentElement.clientWidth")
            assert overflow <= 1, f"{site}/{file} at {width} px: the page scrolls sideways by {overflow} px"
            assert not view.evaluate(OUTSIDE_SCROLL), f"{site}/{file} at {width} px: wider than the window"
            words = view.evaluate("document.querySelector('main').innerText.trim().split(/\\s+/).length")
            assert words > 60, f"{site}/{file}: a page with almost nothing on it ({words} words)"
            shot = tmp_path / f"{site}-{Path(file).stem}-{width}.png"
            view.screenshot(path=str(shot), full_page=file == "index.html")
            print(f"screenshot: {shot}")
        view = watched.open("index.html")
        learners = view.eval_on_selector_all("table.answers tbody tr", "rows => rows.map(r => r.getBoundingClientRect().bottom)")
        screen = view.evaluate("window.innerHeight")
        assert learners and max(learners) <= screen, f"{site} at {width} px: answers end at {max(learners)} > {screen}"
        menu = view.eval_on_selector_all("header nav a", "as => as.map(a => a.getAttribute('href'))")
        assert set(menu) <= set(site_pages(site)), f"{site}: the menu links a page that is not there"
        assert not watched.problems, watched.problems
    finally:
        watched.close()


def test_the_copy_button_copies_or_selects_the_whole_bibtex(browser):
    watched = Watched(browser, SITE.as_uri() + "/")
    try:
        watched.context.grant_permissions(["clipboard-read", "clipboard-write"])
        page = watched.open("cite.html")
        page.get_by_role("button", name="Copy BibTeX").click()
        status = page.locator(".copy-status")
        status.wait_for(state="visible")
        text = page.inner_text("#citation")
        if status.inner_text() == "Copied.":
            assert page.evaluate("navigator.clipboard.readText()") == text
        else:                                               # no clipboard access here: the text is selected
            assert status.inner_text().startswith("Selected") and page.evaluate("getSelection().toString()") == text
        assert "@misc{" in text and not watched.problems, watched.problems
    finally:
        watched.close()
