"""A real browser on a real server: headless Chromium driven by Selenium against ``motorshelf serve``
(uvicorn on 127.0.0.1, a free port) on a copy of the demo catalogue.

It opens the catalogue, filters it, opens a record, runs a selection from the form, explains a
candidate, downloads the XLSX, takes a stock item and sees its level change.  Screenshots of each
step go to ``build/screenshots/`` (or ``$MOTORSHELF_SCREENSHOTS``) for a person to look at.
The browser's console must stay free of errors (a blocked script or style would show there).
"""
from __future__ import annotations

import os
import re
import shutil
import threading
import time
from pathlib import Path

import pytest

from webhelp import ROOT

CHROMIUM = shutil.which("chromium") or shutil.which("chromium-browser")
DRIVER = shutil.which("chromedriver")
pytestmark = pytest.mark.skipif(not (CHROMIUM and DRIVER), reason="needs Debian's chromium and chromium-driver "
                                                                  "(.ci/run installs them)")
SHOTS = Path(os.environ.get("MOTORSHELF_SCREENSHOTS") or ROOT / "build" / "screenshots")


@pytest.fixture(scope="module")
def server(tmp_path_factory, demo_file):
    """``motorshelf serve`` in a thread on 127.0.0.1 (port chosen by the system); stopped at the end."""
    import uvicorn

    from catalog.web import create_app

    db = tmp_path_factory.mktemp("browser") / "demo.duckdb"
    shutil.copy(demo_file, db)
    config = uvicorn.Config(create_app(db), host="127.0.0.1", port=0, log_level="warning", access_log=False)
    srv = uvicorn.Server(config)
    thread = threading.Thread(target=srv.run, daemon=True)
    thread.start()
    deadline = time.monotonic() + 60
    while not srv.started:
        assert time.monotonic() < deadline and thread.is_alive(), "the server did not start"
        time.sleep(0.05)
    port = srv.servers[0].sockets[0].getsockname()[1]
    yield f"http://127.0.0.1:{port}", db
    srv.should_exit = True
    thread.join(30)


@pytest.fixture(scope="module")
def browser(tmp_path_factory):
    from selenium import webdriver
    from selenium.webdriver.chrome.service import Service

    downloads = tmp_path_factory.mktemp("downloads")
    opts = webdriver.ChromeOptions()
    opts.binary_location = CHROMIUM
    for arg in ("--headless=new", "--no-sandbox", "--disable-gpu", "--disable-dev-shm-usage",
                "--window-size=1400,1000", "--no-first-run", "--disable-extensions"):
        opts.add_argument(arg)
    opts.add_experimental_option("prefs", {"download.default_directory": str(downloads),
                                           "download.prompt_for_download": False})
    opts.set_capability("goog:loggingPrefs", {"browser": "ALL"})
    driver = webdriver.Chrome(service=Service(DRIVER), options=opts)
    driver.set_page_load_timeout(120)
    driver.execute_cdp_cmd("Page.setDownloadBehavior", {"behavior": "allow", "downloadPath": str(downloads)})
    driver.downloads = downloads
    SHOTS.mkdir(parents=True, exist_ok=True)
    try:
        yield driver
    finally:
        driver.quit()


def _wait(driver, condition, timeout: float = 60.0):
    from selenium.common.exceptions import NoSuchElementException, StaleElementReferenceException
    from selenium.webdriver.support.ui import WebDriverWait

    return WebDriverWait(driver, timeout, poll_frequency=0.1, ignored_exceptions=(
        StaleElementReferenceException, NoSuchElementException)).until(condition)


def _shot(driver, name: str) -> None:
    driver.save_screenshot(str(SHOTS / f"{name}.png"))


def _console_errors(driver) -> list:
    return [e for e in driver.get_log("browser") if e.get("level") == "SEVERE"]


def test_catalogue_filter_and_record(server, browser):
    from selenium.webdriver.common.by import By

    base, _db = server
    browser.get(base + "/catalogue")
    assert "60 motors match" in browser.find_element(By.ID, "count").text
    _shot(browser, "01-catalogue")
    mass = browser.find_element(By.NAME, "mass.max")
    mass.send_keys("200")
    browser.find_element(By.CSS_SELECTOR, "#filters button[type=submit]").click()
    _wait(browser, lambda d: "60 motors" not in d.find_element(By.ID, "count").text)
    count = int(re.match(r"(\d+) motors? match", browser.find_element(By.ID, "count").text).group(1))
    assert 0 < count < 60
    assert "mass.max=200" in browser.current_url          # htmx pushed the filtered address
    headers = [th.text for th in browser.find_elements(By.CSS_SELECTOR, "#records thead th")]
    col = next(i for i, h in enumerate(headers) if h.startswith("mass [g]"))
    masses = [float(tr.find_elements(By.TAG_NAME, "td")[col].text)
              for tr in browser.find_elements(By.CSS_SELECTOR, "#records tbody tr")]
    assert masses and max(masses) <= 200
    _shot(browser, "02-catalogue-filtered")
    first = browser.find_element(By.CSS_SELECTOR, "#records tbody tr td a")
    rid = first.text
    first.click()
    _wait(browser, lambda d: d.find_elements(By.ID, "fields"))
    assert browser.find_element(By.TAG_NAME, "h1").text.startswith(rid)
    img = browser.find_element(By.CSS_SELECTOR, ".diagram img")
    _wait(browser, lambda d: d.execute_script("return arguments[0].complete && arguments[0].naturalWidth", img))
    _shot(browser, "03-record")
    assert not _console_errors(browser), _console_errors(browser)


def test_selection_explain_and_xlsx(server, browser):
    from selenium.webdriver.common.by import By

    base, _db = server
    browser.get(base + "/select?example=lift_axis")
    text = browser.find_element(By.ID, "envelope").get_attribute("value")
    assert 'name = "lift_axis"' in text
    browser.find_element(By.ID, "run").click()
    _wait(browser, lambda d: d.find_elements(By.ID, "shortlist"))
    summary = browser.find_element(By.ID, "summary").text
    assert re.search(r"\d+ candidate\(s\): \d+ pass", summary)
    _shot(browser, "04-selection")
    button = browser.find_element(By.CSS_SELECTOR, "button.explain")
    candidate = button.get_attribute("data-candidate")
    button.click()
    _wait(browser, lambda d: d.find_elements(By.ID, "explain-text"))
    story = browser.find_element(By.ID, "explain-text").text
    assert story.startswith(f"candidate {candidate}") and "margins" in story
    img = browser.find_element(By.CSS_SELECTOR, "#explain img")
    browser.execute_script("arguments[0].scrollIntoView()", img)
    _wait(browser, lambda d: d.execute_script("return arguments[0].complete && arguments[0].naturalWidth", img))
    _shot(browser, "05-explain")
    browser.find_element(By.ID, "xlsx").click()
    _wait(browser, lambda d: [p for p in browser.downloads.glob("*.xlsx")])
    path = next(browser.downloads.glob("*.xlsx"))
    _wait(browser, lambda d: not list(browser.downloads.glob("*.crdownload")))
    import openpyxl

    book = openpyxl.load_workbook(path)
    assert book.sheetnames[0] == "shortlist" and book["shortlist"].max_row >= 2
    assert path.name.startswith("lift_axis-selection")
    assert not _console_errors(browser), _console_errors(browser)


def test_take_a_stock_item(server, browser):
    from selenium.webdriver.common.by import By

    base, db = server
    browser.get(base + "/shelf")
    link = browser.find_element(By.XPATH, "//h3[text()='Lab 2 / cabinet A / bin 7']/following-sibling::table[1]"
                                          "//a[text()='brackwater-bs2860-36']")
    link.click()
    _wait(browser, lambda d: d.find_elements(By.ID, "on-hand"))
    before = int(browser.find_element(By.ID, "on-hand").text)
    form = browser.find_element(By.ID, "form-take")
    form.find_element(By.NAME, "quantity").send_keys("1")
    form.find_element(By.NAME, "project").send_keys("gripper")
    form.find_element(By.NAME, "person").send_keys("Hana")
    form.find_element(By.TAG_NAME, "button").click()
    _wait(browser, lambda d: d.find_elements(By.ID, "note"))
    assert int(browser.find_element(By.ID, "on-hand").text) == before - 1
    assert "took 1" in browser.find_element(By.ID, "note").text or "now" in browser.find_element(By.ID, "note").text
    rows = browser.find_elements(By.CSS_SELECTOR, "#movements tbody tr")
    assert "Hana" in rows[-1].text and "gripper" in rows[-1].text
    _shot(browser, "06-take")
    browser.get(base + "/shelf")
    _shot(browser, "07-shelf")
    assert not _console_errors(browser), _console_errors(browser)
