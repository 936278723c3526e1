"""Real-browser test of report.html: Debian's Chromium, headless, driven by Selenium through
Debian's chromedriver (W3C WebDriver protocol).

The report of a small real run is opened from disk; the test checks that the page renders with
no console errors (Chromium's browser log, level SEVERE: script errors, blocked or failed loads,
Content-Security-Policy violations), that every embedded figure decodes, that the ranking table
sorts when a header is clicked (ascending, then descending, numbers by value, text by name),
that a screenshot is not blank (pixel variance), and that on a common laptop screen (a window of
1366 x 768 pixels) the first data row of the ranking is on the first screen and the table needs
no horizontal scroll. Skipped, with the reason, only when chromium,
chromedriver or selenium is not installed (`.ci/run` installs them).
"""

from __future__ import annotations

import io
import shutil
from pathlib import Path

import matplotlib.image as mpimg
import pytest

from orcscreen import report
from orcscreen.batch import run_study
from orcscreen.study import study_from_dict

CHROMIUM = shutil.which("chromium") or shutil.which("chromium-browser")
CHROMEDRIVER = shutil.which("chromedriver")
if not CHROMIUM or not CHROMEDRIVER:
    pytest.skip("chromium and chromedriver are not installed (Debian: apt-get install -y chromium "
                "chromium-driver)", allow_module_level=True)
webdriver = pytest.importorskip("selenium.webdriver",
                                reason="selenium is not installed (pip install -e '.[test]')")
from selenium.webdriver.chrome.service import Service  # noqa: E402
from selenium.webdriver.common.by import By  # noqa: E402

FLAGS = ["--headless", "--no-sandbox", "--disable-gpu", "--disable-quic", "--no-first-run",
         "--disable-background-networking", "--disable-component-update", "--disable-sync",
         "--window-size=1280,1600"]

# Invented scenario, as in test_report: hot water at 130 °C, a few catalogue fluids.
STUDY = {
    "study": {"name": "browser test"},
    "source": {"kind": "water", "inlet_temperature_C": 130, "mass_flow_kg_s": 10},
    "fluids": {"include": ["R245fa", "Isobutane", "n-Pentane", "R1233zd(E)", "CarbonDioxide"]},
    "cycle": {"layouts": ["basic", "recuperated"]},
}


@pytest.fixture(scope="module")
def report_path(tmp_path_factory) -> Path:
    out = tmp_path_factory.mktemp("browser") / "run"
    run_study(study_from_dict(STUDY), out, jobs=1, progress=False)
    return report.build_report(out, top_n=2)


@pytest.fixture(scope="module")
def browser(tmp_path_factory):
    options = webdriver.ChromeOptions()
    options.binary_location = CHROMIUM
    for flag in FLAGS:
        options.add_argument(flag)
    options.add_argument(f"--user-data-dir={tmp_path_factory.mktemp('chromium-profile')}")
    options.set_capability("goog:loggingPrefs", {"browser": "ALL"})
    driver = webdriver.Chrome(options=options, service=Service(executable_path=CHROMEDRIVER))
    driver.set_page_load_timeout(60)
    try:
        yield driver
    finally:
        driver.quit()


@pytest.fixture(scope="module")
def page(browser, report_path):
    browser.get(report_path.as_uri())
    return browser


def _column(driver, table_id: str, index: int) -> list[str]:
    return driver.execute_script(
        "return Array.from(document.getElementById(arguments[0]).tBodies[0].rows)"
        ".map(r => r.cells[arguments[1]].textContent.trim());", table_id, index)


def _header(driver, table_id: str, text: str):
    heads = driver.find_elements(By.CSS_SELECTOR, f"#{table_id} thead th")
    names = [h.text.strip() for h in heads]
    assert text in names, names
    return names.index(text), heads[names.index(text)]


def test_page_renders_without_console_errors(page):
    errors = [e for e in page.get_log("browser") if e.get("level") == "SEVERE"]
    assert errors == [], errors
    assert page.title.endswith("orcscreen report")
    # the inline script ran to its end and found the sortable tables
    assert int(page.find_element(By.TAG_NAME, "body").get_attribute("data-sortable-ready")) >= 2
    images = page.execute_script(
        "return Array.from(document.images).map(i => [i.complete, i.naturalWidth]);")
    assert images and all(done and width > 500 for done, width in images), images


def test_ranking_table_sorts_when_a_header_is_clicked(page):
    col, head = _header(page, "ranking-table", "net power [kW]")
    before = [float(v) for v in _column(page, "ranking-table", col)]
    assert before == sorted(before, reverse=True)          # as written: rank order
    head.click()
    ascending = [float(v) for v in _column(page, "ranking-table", col)]
    assert ascending == sorted(before)
    assert head.get_attribute("aria-sort") == "ascending"
    head.click()
    descending = [float(v) for v in _column(page, "ranking-table", col)]
    assert descending == sorted(before, reverse=True)
    assert head.get_attribute("aria-sort") == "descending"

    col_rank, _ = _header(page, "ranking-table", "rank")
    name_col, name_head = _header(page, "ranking-table", "fluid")
    name_head.click()
    names = _column(page, "ranking-table", name_col)
    assert names == sorted(names, key=str.lower)
    assert names != _column(page, "ranking-table", col_rank)   # rows moved as wholes
    ranks = [int(v) for v in _column(page, "ranking-table", col_rank)]
    # every shown rank once (a layout without gain is folded away: its rank is not shown)
    assert len(set(ranks)) == len(ranks) and min(ranks) == 1


def test_problems_table_sorts_too(page):
    col, head = _header(page, "problems-table", "fluid")
    head.click()
    head.click()
    names = _column(page, "problems-table", col)
    assert names == sorted(names, key=str.lower, reverse=True)


def test_screenshot_is_not_blank(page, tmp_path):
    page.execute_script("window.scrollTo(0, 0);")
    png = page.get_screenshot_as_png()
    (tmp_path / "report.png").write_bytes(png)
    pixels = mpimg.imread(io.BytesIO(png), format="png")[..., :3]
    assert pixels.shape[0] > 500 and pixels.shape[1] > 500
    assert pixels.std() > 0.05                                   # not one flat colour
    assert (pixels.mean(axis=2) < 0.5).mean() > 0.005            # some dark ink (text)


def test_answer_on_the_first_screen_of_a_laptop(page):
    """Window 1366 x 768 (a common laptop screen): the ranking table's first data row ends above
    the bottom of the viewport without scrolling, and neither the table nor the page scrolls
    sideways."""
    try:
        page.set_window_size(1366, 768)
        page.execute_script("window.scrollTo(0, 0);")
        found = page.execute_script(
            "const t = document.getElementById('ranking-table');"
            "const row = t.tBodies[0].rows[0].getBoundingClientRect();"
            "const box = t.parentElement;"
            "return {bottom: row.bottom, top: row.top, height: window.innerHeight, width: window.innerWidth,"
            " tableWidth: t.scrollWidth, boxWidth: box.clientWidth, boxScroll: box.scrollWidth,"
            " pageWidth: document.documentElement.scrollWidth, scrollY: window.scrollY};")
        assert found["width"] <= 1366 and found["height"] <= 768, found
        assert found["scrollY"] == 0
        assert 0 < found["top"] < found["bottom"] < found["height"], found
        assert found["tableWidth"] <= found["boxWidth"] and found["boxScroll"] <= found["boxWidth"], found
        assert found["pageWidth"] <= found["width"], found
        # the columns a reader needs are in the table, none behind a scroll
        heads = [h.text.replace("\n", " ").strip() for h in page.find_elements(By.CSS_SELECTOR, "#ranking-table thead th")]
        for wanted in ("fluid", "layout", "net power [kW]", "high p [bar]", "cond. p [bar]", "SP [m]",
                       "safety class", "GWP100", "caution", "warnings"):
            assert wanted in heads, heads
    finally:
        page.set_window_size(1280, 1600)
