"""The ward pages in a real browser: Debian's chromium driven by selenium through chromedriver.

One server per module on 127.0.0.1 on a free port (uvicorn in a thread) with an injected
clock. Screenshots of the board and a patient page are written to ``$VASCPLAN_SCREENSHOTS``
(default a temporary folder, printed). Skips, saying why, without chromium or chromedriver.

Expected times are hand arithmetic from the bundled protocol (``standard.yaml``: after
insertion, checks every 15 min for 60 min; a 15-min check may be 5 min late).
"""

from __future__ import annotations

import os
import shutil
import socket
import tempfile
import threading
import time
from pathlib import Path

import pytest

from tests.ward_fixtures import PASSWORDS, UNIT_KEY, Clock, local, seed

pytestmark = pytest.mark.browser

CHROMIUM = shutil.which("chromium") or shutil.which("chromium-browser")
DRIVER = shutil.which("chromedriver")
if not CHROMIUM or not DRIVER:
    pytest.skip(
        "browser tests skipped: chromium and chromedriver not found (Debian packages chromium "
        "and chromium-driver; .ci/browser-setup installs them)",
        allow_module_level=True,
    )
webdriver = pytest.importorskip(
    "selenium.webdriver", reason="browser tests skipped: selenium is not installed"
)
from selenium.common.exceptions import WebDriverException  # noqa: E402
from selenium.webdriver.common.by import By  # noqa: E402
from selenium.webdriver.common.keys import Keys  # noqa: E402

START = "2026-12-01T10:10"


def _free_port() -> int:
    with socket.socket() as s:
        s.bind(("127.0.0.1", 0))
        return int(s.getsockname()[1])


@pytest.fixture(scope="module")
def shots() -> Path:
    folder = Path(os.environ.get("VASCPLAN_SCREENSHOTS") or tempfile.mkdtemp(prefix="ward-shots-"))
    folder.mkdir(parents=True, exist_ok=True)
    print(f"\nscreenshots in {folder}")
    return folder


@pytest.fixture(scope="module")
def server(tmp_path_factory):
    import uvicorn

    from vascplan.web.app import create_app

    db = str(tmp_path_factory.mktemp("ward") / "ward.db")
    clock = Clock(local(START))
    seed(db, clock())
    app = create_app(db, clock=clock, login_delay_s=0.0)
    port = _free_port()
    config = uvicorn.Config(app, host="127.0.0.1", port=port, log_level="warning", lifespan="on")
    srv = uvicorn.Server(config)
    thread = threading.Thread(target=srv.run, daemon=True)
    thread.start()
    deadline = time.monotonic() + 10
    while not srv.started:
        if time.monotonic() > deadline:
            pytest.fail("the server did not start within 10 s")
        time.sleep(0.02)
    yield f"http://127.0.0.1:{port}", clock, db, srv
    srv.should_exit = True
    thread.join(timeout=5)


@pytest.fixture(scope="module")
def browser():
    from selenium.webdriver.chrome.options import Options
    from selenium.webdriver.chrome.service import Service

    profile = tempfile.mkdtemp(prefix="ward-chromium-")
    opts = Options()
    opts.binary_location = CHROMIUM
    for arg in (
        "--headless",
        "--no-sandbox",
        "--disable-gpu",
        "--disable-background-networking",
        "--disable-component-update",
        "--disable-sync",
        "--no-first-run",
        "--disable-dev-shm-usage",
        f"--user-data-dir={profile}",
        "--window-size=1280,900",
    ):
        opts.add_argument(arg)
    try:
        driver = webdriver.Chrome(service=Service(DRIVER), options=opts)
    except Exception as exc:  # a driver that will not start: skip with its reason
        pytest.skip(f"browser tests skipped: chromium would not start ({exc.__class__.__name__})")
    driver.implicitly_wait(2)
    yield driver
    driver.quit()
    shutil.rmtree(profile, ignore_errors=True)


def _new_page(b) -> bool:
    try:
        return bool(
            b.execute_script(
                "return window.__oldPage === undefined && document.readyState === 'complete'"
            )
        )
    except WebDriverException:  # between two pages
        return False


def _submit(b, el, key: str | None = None) -> None:
    """Click ``el`` (or type ``key`` into it) and wait until the next page has loaded."""
    from selenium.webdriver.support.ui import WebDriverWait

    b.execute_script("window.__oldPage = true")
    if key is None:
        el.click()
    else:
        el.send_keys(key)
    WebDriverWait(b, 10).until(_new_page)


def _sign_in(b, base: str, name: str, password: str | None = None) -> None:
    b.delete_all_cookies()
    b.get(f"{base}/login")
    b.find_element(By.NAME, "username").send_keys(name)
    b.find_element(By.NAME, "password").send_keys(password or PASSWORDS[name][1])
    _submit(b, b.find_element(By.CSS_SELECTOR, "form.login button"))


def _sign_out(b) -> None:
    _submit(b, b.find_element(By.CSS_SELECTOR, "form.who button"))


def _bed(b, n: int) -> str:
    return b.find_element(By.ID, f"bed-{n}").text


def test_sign_in_wrong_password_and_sign_out(server, browser):
    base, clock, _, _ = server
    _sign_in(browser, base, "rn-ada", "not the password")
    assert "The user name or password is wrong" in browser.find_element(By.ID, "login-error").text
    _sign_in(browser, base, "rn-ada")
    assert browser.current_url == f"{base}/board"
    assert "rn-ada · nurse" in browser.find_element(By.CSS_SELECTOR, ".person").text
    _sign_out(browser)
    assert browser.current_url.startswith(f"{base}/login")
    browser.get(f"{base}/board")
    assert browser.current_url.startswith(f"{base}/login")


def test_overdue_appears_at_the_right_minute(server, browser):
    base, clock, _, _ = server
    _sign_in(browser, base, "rn-ada")
    # DEMO-32's device went in at 10:00: due 10:15, overdue once 5 min of grace are over.
    clock.at = local("2026-12-01T10:20")
    browser.get(f"{base}/board")
    assert "overdue" not in _bed(browser, 2).lower().replace("⚑ overdue · ⚠ alert", "")
    clock.at = local("2026-12-01T10:21")
    browser.get(f"{base}/board")
    bed2 = _bed(browser, 2)
    assert "Check overdue" in bed2 or "Alert" in bed2
    assert "1 overdue: first due 10:15 (+00:00), 6 min late" in bed2


def test_keyboard_only_check_changes_the_board(server, browser, shots):
    base, clock, db, _ = server
    clock.at = local("2026-12-01T10:21")
    _sign_in(browser, base, "rn-ada")
    browser.get(f"{base}/patients/DEMO-32/check")
    plan = {
        "pulse:L-DPA": "doppler",
        "pulse:L-PTA": "palpable",
        "refill:L": "2",
        "calf:L": "soft",
        "motor:L": "normal",
    }
    # A whole check (issue 13: a check counts only for what it records): the fields above
    # with the values planned, every other field of the form with its first choice or the
    # middle of its range, each reached with the Tab key alone.
    fields = {
        el.get_attribute("name"): el
        for el in browser.find_elements(By.CSS_SELECTOR, "form select, form input")
        if el.get_attribute("name") not in (None, "", "csrf", "form_token", "time")
    }
    for name, el in fields.items():
        if name in plan:
            continue
        if el.tag_name == "select":
            options = [
                o.text for o in el.find_elements(By.TAG_NAME, "option") if o.get_attribute("value")
            ]
            plan[name] = options[0]
        else:
            low, high = (float(x) for x in el.get_attribute("placeholder").split("\u2013"))
            plan[name] = str(int((low + high) / 2))
    filled = set()
    body = browser.find_element(By.TAG_NAME, "body")
    body.send_keys(Keys.TAB)
    for _ in range(400):
        el = browser.switch_to.active_element
        name = el.get_attribute("name")
        if name in plan and name not in filled:
            el.send_keys(plan[name])
            filled.add(name)
        if el.tag_name == "button" and el.text == "Record check" and filled == set(plan):
            _submit(browser, el, Keys.ENTER)
            break
        el.send_keys(Keys.TAB)
    else:
        pytest.fail(f"could not reach every field by keyboard; filled {sorted(filled)}")
    assert "/patients/DEMO-32" in browser.current_url and "saved=check" in browser.current_url
    from vascplan.ward.store import open_ward

    with open_ward(db) as store:
        rows = store.obs.entries(UNIT_KEY, ref="DEMO-32")
    got = {(e.item, e.site, e.value, e.by) for e in rows}
    assert {
        ("pulse", "L-DPA", "doppler", "rn-ada"),
        ("pulse", "L-PTA", "palpable", "rn-ada"),
        ("refill", "L", "2", "rn-ada"),
        ("calf", "L", "soft", "rn-ada"),
        ("motor", "L", "normal", "rn-ada"),
    } <= got
    assert {f"{item}:{site}" for item, site, _, _ in got} == set(plan)  # one row a field
    browser.get(f"{base}/board")
    bed2 = _bed(browser, 2)
    assert "overdue" not in bed2.lower().replace("⚑ overdue · ⚠ alert", "")
    assert "last check 10:21 (+00:00)" in bed2
    browser.save_screenshot(str(shots / "board-desktop.png"))


def test_a_range_error_shows_on_its_field(server, browser):
    base, clock, _, _ = server
    _sign_in(browser, base, "rn-ada")
    browser.get(f"{base}/patients/DEMO-31/check")
    browser.find_element(By.NAME, "nirs:L").send_keys("140")
    _submit(browser, browser.find_element(By.CSS_SELECTOR, "button.primary"))
    err = browser.find_element(By.ID, "e-f-nirs-L").text
    assert err == "⚠ nirs must be 0-100 %, got 140"
    assert browser.find_element(By.NAME, "nirs:L").get_attribute("value") == "140"


def test_a_correction_through_the_patient_page(server, browser, shots):
    base, clock, db, _ = server
    _sign_in(browser, base, "rn-ada")
    browser.get(f"{base}/patients/DEMO-32/check")
    browser.find_element(By.NAME, "refill:R").send_keys("9")
    _submit(browser, browser.find_element(By.CSS_SELECTOR, "button.primary"))
    from vascplan.ward.store import open_ward

    with open_ward(db) as store:
        rows = store.obs.entries(UNIT_KEY, ref="DEMO-32")
        wrong = [e for e in rows if (e.item, e.site) == ("refill", "R")][0]
    browser.get(f"{base}/entries/{wrong.id}/correct")
    browser.find_element(By.NAME, "value").send_keys("3")
    browser.find_element(By.NAME, "reason").send_keys("wrong leg read")
    _submit(browser, browser.find_element(By.CSS_SELECTOR, "button.primary"))
    row = browser.find_element(By.CSS_SELECTOR, "tr.correction").text
    assert f"corrects {wrong.id}: wrong leg read" in row and "rn-ada" in row
    browser.save_screenshot(str(shots / "patient-desktop.png"))


def test_nurse_refused_then_physician_overrides_the_tier(server, browser):
    base, clock, _, _ = server
    _sign_in(browser, base, "rn-ada")
    browser.get(f"{base}/patients/DEMO-32")
    assert not browser.find_elements(By.LINK_TEXT, "Set tier")
    browser.get(f"{base}/patients/DEMO-32/events/tier-set")
    assert "only a physician may record" in browser.find_element(By.TAG_NAME, "main").text
    _sign_in(browser, base, "dr-bo")
    browser.get(f"{base}/patients/DEMO-32")
    _submit(browser, browser.find_element(By.LINK_TEXT, "Set tier"))
    browser.find_element(By.NAME, "tier").send_keys("high")
    browser.find_element(By.NAME, "reason").send_keys("cool left foot")
    _submit(browser, browser.find_element(By.CSS_SELECTOR, "button.primary"))
    assert "tier ▲▲ high" in browser.find_element(By.CSS_SELECTOR, ".summary").text
    browser.get(f"{base}/board")
    assert "Tier ▲▲ high" in _bed(browser, 2)


def test_a_form_sent_twice_is_recorded_once(server, browser):
    base, clock, db, _ = server
    clock.at = local("2026-12-01T10:40")
    _sign_in(browser, base, "rn-ada")
    browser.get(f"{base}/patients/DEMO-31/check")
    browser.find_element(By.NAME, "nirs:L").send_keys("63")
    # The same filled form sent twice at once (a double tap, a resend after a slow network).
    statuses = browser.execute_async_script(
        """
        const done = arguments[arguments.length - 1];
        const form = document.querySelector("form.check");
        const send = () => fetch(form.action, {method: "POST", body: new FormData(form),
                                              redirect: "manual"}).then(r => r.type);
        Promise.all([send(), send()]).then(done);
        """
    )
    # Both answered by the redirect to the patient page (no error page for the second).
    assert statuses == ["opaqueredirect", "opaqueredirect"]
    from vascplan.ward.store import open_ward

    with open_ward(db) as store:
        mine = [e for e in store.obs.entries(UNIT_KEY, ref="DEMO-31") if e.item == "nirs"]
    assert [(e.site, e.value) for e in mine] == [("L", "63")]


def test_a_form_without_its_token_is_refused(server, browser):
    base, clock, db, _ = server
    _sign_in(browser, base, "rn-ada")
    browser.get(f"{base}/patients/DEMO-31/check")
    browser.find_element(By.NAME, "nirs:R").send_keys("59")
    browser.execute_script('document.querySelector("form.check input[name=csrf]").remove()')
    _submit(browser, browser.find_element(By.CSS_SELECTOR, "button.primary"))
    assert "Form refused" in browser.find_element(By.TAG_NAME, "h1").text
    from vascplan.ward.store import open_ward

    with open_ward(db) as store:
        assert not [e for e in store.obs.entries(UNIT_KEY, ref="DEMO-31") if e.site == "R"]


@pytest.mark.parametrize(("width", "label"), [(768, "tablet"), (390, "phone")])
def test_board_fits_tablet_and_phone(server, browser, shots, width, label):
    base, _, _, _ = server
    _sign_in(browser, base, "rn-ada")
    browser.set_window_size(width, 1000)
    try:
        browser.get(f"{base}/board")
        inner = browser.execute_script("return window.innerWidth")
        scroll = browser.execute_script("return document.documentElement.scrollWidth")
        assert scroll <= inner, f"the board scrolls sideways at {width} px ({scroll} > {inner})"
        for n in (1, 2):
            box = browser.find_element(By.ID, f"bed-{n}").rect
            assert box["x"] >= 0 and box["x"] + box["width"] <= inner
        browser.save_screenshot(str(shots / f"board-{label}.png"))
        browser.get(f"{base}/patients/DEMO-31/check")
        scroll = browser.execute_script("return document.documentElement.scrollWidth")
        assert scroll <= browser.execute_script("return window.innerWidth")
        browser.save_screenshot(str(shots / f"check-{label}.png"))
    finally:
        browser.set_window_size(1280, 900)


def test_the_board_refreshes_itself_and_a_timed_out_session_goes_to_sign_in(server, browser):
    from selenium.webdriver.support.ui import WebDriverWait

    base, clock, _, _ = server
    clock.at = local("2026-12-01T10:50")
    _sign_in(browser, base, "rn-ada")
    browser.get(f"{base}/board")
    assert browser.find_element(By.ID, "board-at").text == "2026-12-01 10:50+00:00"
    clock.at = local("2026-12-01T10:52")
    browser.execute_script("window.vascplanRefreshBoard()")
    shown = 'return document.getElementById("board-at").textContent'
    WebDriverWait(browser, 5).until(lambda b: b.execute_script(shown) == "2026-12-01 10:52+00:00")
    browser.delete_all_cookies()  # as when the idle time-out has ended the session
    browser.execute_script("window.vascplanRefreshBoard()")
    WebDriverWait(browser, 5).until(lambda b: "/login" in b.current_url)
    assert not browser.find_element(By.ID, "conn-lost").is_displayed()


def test_lost_connection_greys_the_board(server, browser, shots):
    # Last in the module: it stops the server.
    base, _, _, srv = server
    _sign_in(browser, base, "rn-ada")
    browser.get(f"{base}/board")
    banner = browser.find_element(By.ID, "conn-lost")
    assert not banner.is_displayed()
    browser.execute_script("window.vascplanRefreshBoard()")
    time.sleep(0.5)
    assert not banner.is_displayed()  # a good refresh keeps the board current
    srv.should_exit = True
    time.sleep(1.0)
    browser.execute_script("window.vascplanRefreshBoard()")
    deadline = time.monotonic() + 5
    while not banner.is_displayed() and time.monotonic() < deadline:
        time.sleep(0.1)
    assert banner.is_displayed()
    assert "not current" in banner.text
    assert "stale" in browser.find_element(By.TAG_NAME, "body").get_attribute("class")
    browser.save_screenshot(str(shots / "board-connection-lost.png"))
