"""A working day in real headless Chromium: the register, a round, mistakes put right,
the report delivered by e-mail and acknowledged by the client, on a laptop and a phone.

Debian's chromium and chromedriver through selenium; e-mail through a real SMTP server on
loopback (tests/smtp_server.py). Skips when the browser is missing, fails instead under
REQUIRE_SERVICES=1.
"""

import csv
import datetime
import io
import os
import re
import shutil
import tempfile
import time

import pytest
from django.test import Client as DjangoClient
from django.urls import reverse

from survey.models import Acknowledgement, Asset, Finding, Survey, Thermogram
from survey.services import surveys
from tests.factories import make_thermogram
from tests.smtp_server import smtp_server

pytestmark = [pytest.mark.browser, pytest.mark.slow]

CHROMIUM = "/usr/bin/chromium"
CHROMEDRIVER = "/usr/bin/chromedriver"


def _require_browser() -> None:
    missing = [path for path in (CHROMIUM, CHROMEDRIVER) if not os.path.exists(path)]
    try:
        import selenium  # noqa: F401
    except ImportError:
        missing.append("the selenium package")
    if missing:
        reason = f"browser tests need {', '.join(missing)}"
        if os.environ.get("REQUIRE_SERVICES") == "1":
            pytest.fail(f"{reason}, and REQUIRE_SERVICES=1")
        pytest.skip(reason)


@pytest.fixture(scope="module")
def browser():
    _require_browser()
    from selenium import webdriver
    from selenium.webdriver.chrome.service import Service

    profile = tempfile.mkdtemp(prefix="heatmark-chromium-")
    options = webdriver.ChromeOptions()
    options.binary_location = CHROMIUM
    for flag in (
        "--headless=new",
        "--no-sandbox",
        "--disable-gpu",
        "--disable-dev-shm-usage",
        "--disable-background-networking",
        "--disable-component-update",
        "--no-first-run",
        "--disable-sync",
        "--window-size=1280,900",
        "--force-device-scale-factor=1",
        f"--user-data-dir={profile}",
    ):
        options.add_argument(flag)
    driver = webdriver.Chrome(service=Service(executable_path=CHROMEDRIVER), options=options)
    driver.set_window_size(1280, 900)
    try:
        yield driver
    finally:
        driver.quit()
        shutil.rmtree(profile, ignore_errors=True)


def wait_for(condition, timeout=15.0, message="condition"):
    deadline = time.monotonic() + timeout
    while time.monotonic() < deadline:
        value = condition()
        if value:
            return value
        time.sleep(0.05)
    raise AssertionError(f"timed out waiting for {message}")


def sign_in(browser, live_server, member) -> None:
    client = DjangoClient()
    client.force_login(member.user)
    browser.get(live_server.url + "/accounts/login/")
    browser.delete_all_cookies()
    browser.add_cookie(
        {"name": "sessionid", "value": client.cookies["sessionid"].value, "path": "/"}
    )


def open_page(browser, live_server, path: str) -> None:
    browser.get(live_server.url + path)
    wait_for(lambda: browser.execute_script("return document.readyState === 'complete'"))


def click(browser, selector: str) -> None:
    """Click and wait for the next page to load."""
    from selenium.webdriver.common.by import By
    from selenium.webdriver.support.expected_conditions import staleness_of
    from selenium.webdriver.support.ui import WebDriverWait

    old = browser.find_element(By.TAG_NAME, "html")
    element = browser.find_element(By.CSS_SELECTOR, selector)
    browser.execute_script("arguments[0].scrollIntoView({block: 'center'});", element)
    element.click()
    WebDriverWait(browser, 30).until(staleness_of(old))
    wait_for(lambda: browser.execute_script("return document.readyState === 'complete'"))


def text(browser) -> str:
    return browser.execute_script("return document.body.innerText;")


def messages(browser) -> str:
    return browser.execute_script(
        "var m = document.querySelector('.messages'); return m ? m.innerText : '';"
    )


def fill(browser, selector: str, value: str) -> None:
    from selenium.webdriver.common.by import By

    field = browser.find_element(By.CSS_SELECTOR, selector)
    field.clear()
    field.send_keys(value)


def choose(browser, selector: str, value: str) -> None:
    from selenium.webdriver.common.by import By
    from selenium.webdriver.support.ui import Select

    Select(browser.find_element(By.CSS_SELECTOR, selector)).select_by_value(value)


def register_csv(rows: int, bad: dict[int, tuple[str, str]]) -> str:
    """A register of `rows` panels; `bad` maps a 0-based data row to (column, bad value)."""
    buffer = io.StringIO()
    writer = csv.DictWriter(buffer, ["name", "tag", "kind", "rating", "rating_unit"])
    writer.writeheader()
    for n in range(rows):
        row = {
            "name": f"Distribution board {n + 1}",
            "tag": f"DB-{n + 1:03d}",
            "kind": "panel",
            "rating": "250",
            "rating_unit": "A",
        }
        if n in bad:
            column, value = bad[n]
            row[column] = value
        writer.writerow(row)
    return buffer.getvalue()


# --- maintenance crews -------------------------------------------------------------------------


def test_it_registers_an_asset_and_imports_a_register_of_200_with_three_bad_rows(
    browser, live_server, owner, site, tmp_path
):
    """One asset by hand; then a CSV of 200 whose three bad rows are listed and block it all."""
    sign_in(browser, live_server, owner)
    open_page(browser, live_server, reverse("survey:site", args=[site.pk]))
    fill(browser, "#add-asset input[name=name]", "Main switchboard")
    choose(browser, "#add-asset select[name=kind]", "switchgear")
    fill(browser, "#add-asset input[name=tag]", "MSB-1")
    fill(browser, "#add-asset input[name=rating]", "800")
    choose(browser, "#add-asset select[name=rating_unit]", "A")
    click(browser, "#add-asset button[type=submit]")
    assert "Asset Main switchboard (MSB-1) registered." in messages(browser)
    assert "Main switchboard (MSB-1)" in text(browser)
    assert Asset.objects.get(tag="MSB-1").rating == 800.0

    bad = {9: ("kind", "toaster"), 99: ("rating", "lots"), 149: ("tag", "DB-001")}
    upload = tmp_path / "register.csv"
    upload.write_text(register_csv(200, bad), encoding="utf-8")
    click(browser, "a[href$='/assets/import/']")
    browser.find_element("css selector", "input[type=file]").send_keys(str(upload))
    click(browser, "main form button[type=submit]")
    rows = browser.execute_script(
        "return Array.from(document.querySelectorAll('#import-errors tbody tr'), "
        "function (tr) { return Array.from(tr.cells, function (c) { return c.innerText; }); });"
    )
    # Spreadsheet rows: the header is row 1, so data row n is row n + 2.
    assert [(row[0], row[1]) for row in rows] == [("11", "kind"), ("101", "rating"), ("151", "tag")]
    assert "toaster" in rows[0][2] and "row 2" in rows[2][2]
    assert Asset.objects.filter(site=site).count() == 1

    upload.write_text(register_csv(200, {}), encoding="utf-8")
    browser.find_element("css selector", "input[type=file]").send_keys(str(upload))
    click(browser, "main form button[type=submit]")
    assert "200 asset(s) added, 0 updated" in messages(browser)
    assert Asset.objects.filter(site=site).count() == 201


def test_a_new_visit_is_prefilled_from_the_last_one_with_its_round(
    browser, live_server, owner, site, electrical_survey
):
    """ "Start a new visit": last visit's instrument and conditions, the due assets in order."""
    electrical_survey.instrument = "Invented LWIR camera, serial DEMO-0002"
    electrical_survey.save()
    surveys.asset_create(site=site, user=None, name="Busway riser", round_order=2)
    surveys.asset_create(site=site, user=None, name="Incoming panel", round_order=1)
    sign_in(browser, live_server, owner)
    open_page(browser, live_server, reverse("survey:site", args=[site.pk]))
    click(browser, f"a[href='{reverse('survey:site_visit', args=[site.pk])}']")
    assert "Filled in from the visit of 2026-03-02" in text(browser)
    value = browser.execute_script
    assert value("return document.getElementById('id_instrument').value") == (
        "Invented LWIR camera, serial DEMO-0002"
    )
    assert value("return document.getElementById('id_kind').value") == "electrical"
    assert value("return document.getElementById('id_load_pct').value") == "65.0"
    click(browser, "form.survey-form button[type=submit]")
    survey = Survey.objects.exclude(pk=electrical_survey.pk).get()
    assert survey.instrument == "Invented LWIR camera, serial DEMO-0002"
    assert survey.conditions.ambient_air_c == 24.0
    round_rows = value(
        "return Array.from(document.querySelectorAll('#round tbody tr'), "
        "function (tr) { return tr.cells[1].innerText; });"
    )
    assert round_rows == ["Incoming panel", "Busway riser"]
    fill(browser, "#round tbody tr:nth-child(2) input[name=reason]", "Riser room locked")
    click(browser, "#round tbody tr:nth-child(2) button[type=submit]")
    assert "Skipped: Riser room locked" in text(browser)


# --- everyone: mistakes put right ----------------------------------------------------------------


def test_it_deletes_a_thermogram_after_confirmation_and_restores_it(
    browser, live_server, thermographer, envelope_survey
):
    thermogram = make_thermogram(envelope_survey, title="Uploaded by mistake")
    sign_in(browser, live_server, thermographer)
    open_page(browser, live_server, reverse("survey:survey", args=[envelope_survey.pk]))
    click(browser, f"a[href='{reverse('survey:thermogram_delete', args=[thermogram.pk])}']")
    assert "Delete thermogram" in text(browser)
    browser.find_element("css selector", "input[name=confirm]").click()
    click(browser, "main form button.danger")
    assert "Uploaded by mistake deleted" in messages(browser)
    assert not browser.find_elements("css selector", f"[data-thermogram-id='{thermogram.pk}']")
    assert Thermogram.all_objects.get(pk=thermogram.pk).deleted_at is not None
    click(browser, "a[href$='#deleted-thermograms']")
    click(browser, "button[aria-label='Restore Uploaded by mistake']")
    assert "Uploaded by mistake restored." in messages(browser)
    assert browser.find_elements("css selector", f"[data-thermogram-id='{thermogram.pk}']")


def test_the_batch_page_follows_processing_without_reloading(
    browser, live_server, thermographer, envelope_survey
):
    """A thermogram finishing updates its card and the progress bar; typed text stays."""
    from survey.services.processing import thermogram_process

    make_thermogram(envelope_survey)
    waiting = make_thermogram(envelope_survey, title="Still processing")
    Thermogram.objects.filter(pk=waiting.pk).update(
        status=Thermogram.Status.QUEUED, thumbnail="", preview=""
    )
    sign_in(browser, live_server, thermographer)
    open_page(browser, live_server, reverse("survey:survey", args=[envelope_survey.pk]))
    browser.execute_script("window.notReloaded = true;")
    fill(browser, "#upload-form input[name=emissivity]", "0.93")
    wait_for(lambda: "1 of 2 processed" in text(browser), message="the progress bar")
    assert thermogram_process(waiting.pk) == Thermogram.Status.READY
    card = f"[data-thermogram-id='{waiting.pk}']"
    wait_for(
        lambda: browser.execute_script(
            f'var c = document.querySelector("{card}");'
            "return c.querySelector('[data-role=status]').innerText === 'Ready'"
            " && !!c.querySelector('img') && !!c.querySelector('[data-role=measure] a');"
        ),
        message="the card to show the processed thermogram",
    )
    assert "All 2 processed" in text(browser)
    assert browser.execute_script("return window.notReloaded === true;")
    assert (
        browser.execute_script(
            "return document.querySelector('#upload-form input[name=emissivity]').value;"
        )
        == "0.93"
    )


# --- reviewers and clients: delivery --------------------------------------------------------


def test_issuing_is_refused_to_the_surveys_own_thermographer(
    browser, live_server, reviewer, envelope_survey
):
    from reports.services import report_create

    envelope_survey.thermographer = reviewer
    envelope_survey.save()
    report = report_create(survey=envelope_survey, user=reviewer.user)
    sign_in(browser, live_server, reviewer)
    open_page(browser, live_server, reverse("reports:survey", args=[envelope_survey.pk]))
    click(browser, "form.issue-form button[type=submit]")
    assert "another reviewer must issue" in text(browser)
    assert not browser.find_elements("css selector", "input[name=confirm]")
    assert not report.versions.exists()


def test_the_link_is_emailed_and_the_client_acknowledges_a_finding(
    browser, live_server, owner, envelope_survey, settings, monkeypatch
):
    """Issue after confirming, e-mail the link (received by SMTP), then the client answers."""
    from reports.services import report_create

    site_client = envelope_survey.site.client
    site_client.email = "estates@harbour-lane.example"
    site_client.contact_name = "Sam Okafor"
    site_client.save()
    thermogram = make_thermogram(envelope_survey)
    finding = Finding.objects.create(
        organization=envelope_survey.organization,
        survey=envelope_survey,
        thermogram=thermogram,
        category="thermal_bridge",
        location="Flat 3, lintel over the kitchen window",
        level=2,
        recommendation="Insulate the lintel from inside.",
    )
    report = report_create(survey=envelope_survey, user=owner.user)
    sign_in(browser, live_server, owner)
    open_page(browser, live_server, reverse("reports:survey", args=[envelope_survey.pk]))
    click(browser, "form.issue-form button[type=submit]")
    browser.find_element("css selector", "input[name=confirm]").click()
    click(browser, "main form button[type=submit]")
    version = report.versions.get()
    assert version.is_issued, version.error
    fill(browser, "form.share-form input[name=days]", "30")
    click(browser, "form.share-form button[type=submit]")
    # One click copies the link (or, without clipboard permission, selects it to copy).
    browser.find_element("css selector", ".copy-button").click()
    status = wait_for(
        lambda: browser.execute_script("return document.querySelector('.copy-status').innerText;"),
        message="the copy button to answer",
    )
    assert status in ("Copied.", "Selected: press Ctrl+C to copy.")
    click(browser, "a[href$='/email/']")
    assert browser.execute_script("return document.getElementById('id_to').value") == (
        "estates@harbour-lane.example"
    )
    fill(browser, "#id_message", "Dear Sam, the report of our visit is ready.")
    with smtp_server("heatmark", "relay-password") as mailbox:
        mailbox.configure(settings, monkeypatch, "heatmark", "relay-password")
        click(browser, "main form button[type=submit]")
    assert "e-mailed to estates@harbour-lane.example" in messages(browser)
    (delivered,) = mailbox.messages
    body = delivered["message"].get_content()
    assert delivered["to"] == ["estates@harbour-lane.example"]
    assert "Dear Sam, the report of our visit is ready." in body
    link = re.search(r"https?://\S+/reports/s/\S+/", body)[0]

    # The client, signed out, follows the link from the e-mail.
    browser.delete_all_cookies()
    browser.get(link)
    assert "Thermal survey report" in text(browser)
    assert "Flat 3, lintel over the kitchen window" in text(browser)
    assert "2 act soon" in text(browser) and "Status: open" in text(browser)
    form = f"#finding-{finding.pk} form"
    browser.execute_script(
        "document.querySelector(arguments[0]).value = '2026-10-15';",
        f"{form} input[type=date]",
    )
    fill(browser, f"{form} input[name$=name]", "Sam Okafor")
    click(browser, f"{form} button[type=submit]")
    assert "Thank you" in messages(browser)
    ack = Acknowledgement.objects.get()
    assert ack.repair_scheduled_for == datetime.date(2026, 10, 15)
    # The header link keeps the client on the report, never on a sign-in page.
    click(browser, "a.brand")
    assert "/accounts/login/" not in browser.current_url
    assert "Thermal survey report" in text(browser)

    # The firm sees the acknowledgement on the survey page.
    sign_in(browser, live_server, owner)
    open_page(browser, live_server, reverse("survey:survey", args=[envelope_survey.pk]))
    assert "Client acknowledgements" in text(browser) and "2026-10-15" in text(browser)


# --- a phone -------------------------------------------------------------------------------


def test_the_navigation_folds_into_a_menu_on_a_phone(browser, live_server, owner):
    from selenium.webdriver.common.keys import Keys

    sign_in(browser, live_server, owner)
    browser.execute_cdp_cmd(
        "Emulation.setDeviceMetricsOverride",
        {"width": 390, "height": 844, "deviceScaleFactor": 1, "mobile": True},
    )
    try:
        open_page(browser, live_server, reverse("survey:home"))
        nav = browser.find_element("css selector", "nav.mainnav")
        button = browser.find_element("css selector", ".menu-toggle")
        assert button.is_displayed() and not nav.is_displayed()
        button.click()
        assert nav.is_displayed() and button.get_attribute("aria-expanded") == "true"
        button.send_keys(Keys.ESCAPE)
        assert not nav.is_displayed()
        width = browser.execute_script(
            "return [document.documentElement.scrollWidth, document.documentElement.clientWidth];"
        )
        assert width[0] <= width[1]
    finally:
        browser.execute_cdp_cmd("Emulation.clearDeviceMetricsOverride", {})
