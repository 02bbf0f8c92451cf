"""End to end in a real headless browser: Debian's ``chromium`` driven by Playwright (the
system browser as its executable; nothing is downloaded). The reviewer opens the day view,
opens a run, drags the end of the main period on the chart, sees the new ΔT_c, amends with a
reason, approves, voids and restores — and the lab book records each step and verifies. A
hostile sample name renders as text. Screenshots of every page are taken (into
``$CALWORK_SCREENSHOTS`` when set, e.g. ``docs/screenshots``).

``.ci/run`` installs Chromium and sets ``CALWORK_REQUIRE_BROWSER=1``, so CI never skips this.
"""

from __future__ import annotations

import os
import shutil
import socket
import threading
import time
from pathlib import Path

import pytest

from calwork.labbook import open_labbook
from calwork.simulation import simulate_scenario
from calwork.web import create_app

CHROMIUM = shutil.which("chromium") or "/usr/bin/chromium"
HOSTILE = "<img src=x onerror=alert(1)>"

if not Path(CHROMIUM).exists():
    if os.environ.get("CALWORK_REQUIRE_BROWSER"):
        raise RuntimeError(f"the browser tests need Chromium at {CHROMIUM} (apt install chromium)")
    pytest.skip("Chromium is not installed (apt install chromium)", allow_module_level=True)

playwright_sync = pytest.importorskip("playwright.sync_api")


def _free_port() -> int:
    with socket.socket() as s:
        s.bind(("127.0.0.1", 0))
        return s.getsockname()[1]


@pytest.fixture(scope="module")
def book(tmp_path_factory):
    folder = tmp_path_factory.mktemp("e2e")
    simulate_scenario("bomb", folder / "day", runs=3, seed=51)
    sheet = folder / "day" / "runs.csv"
    sheet.write_text(sheet.read_text().replace("simulated-sample-A", HOSTILE))
    path = folder / "book.sqlite"
    with open_labbook(path, create=True, user="ana") as b:
        b.add_sheet(sheet)
    return path


@pytest.fixture(scope="module")
def server(book):
    import uvicorn

    port = _free_port()
    config = uvicorn.Config(create_app(book, user="ben"), host="127.0.0.1", port=port,
                            log_level="warning")
    srv = uvicorn.Server(config)
    thread = threading.Thread(target=srv.run, daemon=True)
    thread.start()
    deadline = time.monotonic() + 30
    while not srv.started:
        if time.monotonic() > deadline:
            raise RuntimeError("the workbench did not start")
        time.sleep(0.05)
    yield f"http://127.0.0.1:{port}"
    srv.should_exit = True
    thread.join(timeout=10)


@pytest.fixture(scope="module")
def page(server):
    with playwright_sync.sync_playwright() as p:
        browser = p.chromium.launch(executable_path=CHROMIUM, args=[
            "--no-sandbox", "--disable-gpu", "--disable-quic", "--no-first-run",
            "--disable-background-networking", "--disable-component-update",
            "--disable-sync"])
        pg = browser.new_page(viewport={"width": 1400, "height": 1000})
        pg.alerts = []
        pg.errors = []
        pg.on("dialog", lambda d: (pg.alerts.append(d.message), d.dismiss()))
        pg.on("pageerror", lambda e: pg.errors.append(str(e)))
        yield pg
        browser.close()


def _shot(page, name, tmp_path_factory):
    folder = Path(os.environ.get("CALWORK_SCREENSHOTS") or tmp_path_factory.mktemp("shots"))
    folder.mkdir(parents=True, exist_ok=True)
    page.screenshot(path=str(folder / f"{name}.png"), full_page=True)


def _line_position(page, name):
    """Pixel position (x, y) of a boundary line on the run chart."""
    return page.evaluate("""(name) => {
        const gd = document.getElementById('chart');
        const L = gd._fullLayout;
        const shape = L.shapes.find((s) => s.name === name);
        const box = gd.getBoundingClientRect();
        return [box.left + L.margin.l + L.xaxis.l2p(shape.x0),
                box.top + L.margin.t + L._size.h / 2];
    }""", name)


def test_review_a_run_in_the_browser(page, server, book, tmp_path_factory):
    page.goto(server + "/")
    assert page.get_by_text(HOSTILE).count() >= 1  # shown as text, not as markup
    _shot(page, "day", tmp_path_factory)
    page.click("text=cal-02")
    page.wait_for_selector("#preview-rise")
    _shot(page, "run", tmp_path_factory)
    before = page.inner_text("#preview-rise")
    stored_end = float(page.input_value("#b-main_end_s"))

    x, y = _line_position(page, "main_end_s")
    page.mouse.move(x, y)
    page.mouse.down()
    for step in range(1, 11):
        page.mouse.move(x + 8 * step, y)
    page.mouse.up()
    page.wait_for_function("(old) => document.querySelector('#preview-rise') &&"
                           " document.querySelector('#preview-rise').innerText !== old",
                           arg=before, timeout=15000)
    moved_end = float(page.input_value("#b-main_end_s"))
    assert moved_end > stored_end + 20
    assert page.is_checked('input[name="main_end_s__changed"]')
    after = page.inner_text("#preview-rise")
    assert after != before

    page.fill('#amend-form input[name="reason"]', "end of main period judged later")
    page.click("#amend-form button[type=submit]")
    page.wait_for_selector("#version")
    assert page.inner_text("#version") == "2"
    with open_labbook(book) as b:
        last = b.audit_log()[-1]
        assert (last.action, last.user, last.reason) == (
            "amend", "ben", "end of main period judged later")
        assert float(b.states(["cal-02"])["cal-02"].overrides["main_end_s"]) == \
            pytest.approx(moved_end, abs=0.05)
        assert b.verify().ok

    page.click("text=Approve version 2")
    page.wait_for_selector("#state")
    assert page.inner_text("#state") == "approved"
    page.fill('form[action$="/void"] input[name="reason"]', "misfire")
    page.click('form[action$="/void"] button')
    assert page.inner_text("#state") == "void"
    page.fill('form[action$="/restore"] input[name="reason"]', "misfire was elsewhere")
    page.click('form[action$="/restore"] button')
    assert page.inner_text("#state") == "recorded"
    with open_labbook(book) as b:
        actions = [e.action for e in b.audit_log()][-4:]
        assert actions == ["amend", "approve", "void", "restore"]
        assert b.verify().ok

    page.goto(server + "/runs/sample-01")
    page.wait_for_selector("#preview-rise")
    assert HOSTILE in page.inner_text("h1")
    assert not page.alerts, page.alerts
    assert not page.errors, page.errors


def test_screenshots_of_every_page(page, server, tmp_path_factory):
    for name, url in (("calibrations", "/calibrations/sim-bomb-1"), ("samples", "/samples"),
                      ("import", "/import"), ("export", "/export")):
        page.goto(server + url)
        page.wait_for_load_state("networkidle")
        _shot(page, name, tmp_path_factory)
    page.goto(server + "/hess")
    page.click("button:has-text(\"Solve\")")
    page.wait_for_selector(".document section")
    assert "single route" in page.inner_text(".document")
    _shot(page, "hess", tmp_path_factory)
    page.goto(server + "/calibrations/sim-bomb-1")
    page.wait_for_selector("#qa-chart .main-svg")
    assert not page.alerts
    assert not page.errors, page.errors
