"""The workspace in real headless Chromium (Debian's chromium + chromedriver) via selenium.

Skips when the browser is not installed, and fails instead under REQUIRE_SERVICES=1.
"""

import os
import shutil
import tempfile
import time

import numpy as np
import pytest
from django.test import Client as DjangoClient
from django.urls import reverse

from survey.models import Mark
from survey.services.readings import mark_readings
from tests.factories import make_thermogram

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
        "--disable-quic",
        "--no-first-run",
        "--disable-sync",
        "--window-size=1280,800",
        "--force-device-scale-factor=1",
        f"--user-data-dir={profile}",
    ):
        options.add_argument(flag)
    options.set_capability("goog:loggingPrefs", {"browser": "ALL"})
    driver = webdriver.Chrome(service=Service(executable_path=CHROMEDRIVER), options=options)
    driver.set_window_size(1280, 800)
    try:
        yield driver
    finally:
        driver.quit()
        shutil.rmtree(profile, ignore_errors=True)


def wait_for(condition, timeout=10.0, message="condition"):
    from django.db import OperationalError

    deadline = time.monotonic() + timeout
    while time.monotonic() < deadline:
        try:
            value = condition()
        except OperationalError:
            # SQLite's shared in-memory test database locks a table while the live server
            # writes it; the read is simply tried again.
            value = None
        if value:
            return value
        time.sleep(0.05)
    raise AssertionError(f"timed out waiting for {message}")


def open_workspace(browser, live_server, member, thermogram):
    client = DjangoClient()
    client.force_login(member.user)
    browser.get(live_server.url + "/accounts/login/")
    browser.delete_all_cookies()
    browser.add_cookie(
        {"name": "sessionid", "value": client.cookies["sessionid"].value, "path": "/"}
    )
    # A request the previous test's page sent as it unloaded (after its cookies were gone) is
    # that page's business: start this page with an empty console log.
    browser.get_log("browser")
    browser.get(live_server.url + reverse("survey:thermogram", args=[thermogram.pk]))
    wait_for(
        lambda: browser.execute_script(
            "return document.querySelectorAll('#ws-table-head th').length > 0"
        ),
        message="the workspace to load",
    )


def image_offset(browser, thermogram, x, y):
    """Offset from the canvas centre of image pixel (x, y) in the fitted view."""
    width, height = browser.execute_script(
        "var r = document.getElementById('ws-canvas').getBoundingClientRect();"
        "return [r.width, r.height];"
    )
    zoom = min(width / thermogram.width, height / thermogram.height)
    pan_x = (width - thermogram.width * zoom) / 2
    pan_y = (height - thermogram.height * zoom) / 2
    return (
        round(pan_x + (x + 0.5) * zoom - width / 2),
        round(pan_y + (y + 0.5) * zoom - height / 2),
    )


def table_rows(browser):
    return browser.execute_script(
        "return Array.from(document.querySelectorAll('#ws-table-body tr[data-label]'))"
        ".map(r => [r.dataset.label, r.querySelector('.ws-corrected-max').textContent]);"
    )


def _alert(browser):
    from selenium.common.exceptions import NoAlertPresentException

    try:
        return browser.switch_to.alert
    except NoAlertPresentException:
        return None


def severe_console_errors(browser):
    entries = browser.get_log("browser")
    return [e for e in entries if e["level"] == "SEVERE" and "favicon.ico" not in e["message"]]


def field_with_cold_corner():
    """20 °C wall with a 35 °C warm spot and a 10 °C corner (below the mould limit)."""
    y, x = np.mgrid[0:120, 0:160].astype(np.float32)
    field = 20.0 + 15.0 * np.exp(-((x - 112) ** 2 + (y - 48) ** 2) / (2 * 6.0**2))
    field[80:, :40] = 10.0
    return field.astype(np.float32)


@pytest.fixture
def workspace_thermogram(transactional_db, envelope_survey):
    make_thermogram(envelope_survey, field_with_cold_corner())
    return make_thermogram(envelope_survey, field_with_cold_corner())


def test_it_draws_marks_with_the_mouse_and_shows_corrected_values(
    browser, live_server, thermographer, workspace_thermogram
):
    """A rectangle and a point drawn with the mouse appear in the table as the server computes."""
    from selenium.webdriver.common.action_chains import ActionChains
    from selenium.webdriver.common.by import By
    from selenium.webdriver.common.keys import Keys

    thermogram = workspace_thermogram
    open_workspace(browser, live_server, thermographer, thermogram)
    canvas = browser.find_element(By.ID, "ws-canvas")
    browser.find_element(By.CSS_SELECTOR, "button[data-tool=rectangle]").click()
    start, end = (
        image_offset(browser, thermogram, 100, 38),
        image_offset(browser, thermogram, 124, 58),
    )
    ActionChains(browser).move_to_element_with_offset(
        canvas, *start
    ).click_and_hold().move_to_element_with_offset(canvas, *end).release().perform()
    wait_for(lambda: len(table_rows(browser)) == 1, message="mark A in the table")

    browser.find_element(By.CSS_SELECTOR, "button[data-tool=point]").click()
    ActionChains(browser).move_to_element_with_offset(
        canvas, *image_offset(browser, thermogram, 20, 20)
    ).click().perform()
    wait_for(lambda: len(table_rows(browser)) == 2, message="mark B in the table")

    canvas.send_keys(Keys.ENTER, Keys.RIGHT, Keys.RIGHT, Keys.ENTER)  # Point tool, no mouse
    wait_for(lambda: len(table_rows(browser)) == 3, message="mark C placed with the keyboard")
    assert Mark.objects.get(thermogram=thermogram, label="C").points == [
        [82, 60]
    ]  # centre (80, 60) + 2

    marks = {m.label: m for m in Mark.objects.filter(thermogram=thermogram)}
    assert marks["A"].kind == "rectangle" and marks["B"].kind == "point"
    for label, shown in table_rows(browser):
        expected = mark_readings(marks[label])["corrected"]["max"]
        assert shown == f"{expected:.1f}", label
    assert float(dict(table_rows(browser))["A"]) > 35.0  # the 35 °C spot, corrected at ε 0.95
    assert severe_console_errors(browser) == []


def test_it_changes_emissivity_deletes_by_keyboard_and_shows_the_overlay(
    browser, live_server, thermographer, workspace_thermogram
):
    """Edit ε in the form, remove the mark with Delete, toggle condensation risk, screenshot."""
    from selenium.webdriver.common.by import By
    from selenium.webdriver.common.keys import Keys

    from survey.services.marks import mark_add

    thermogram = workspace_thermogram
    mark_add(
        thermogram=thermogram,
        kind="rectangle",
        points=[[100, 38], [124, 58]],
        user=thermographer.user,
    )
    open_workspace(browser, live_server, thermographer, thermogram)
    wait_for(lambda: len(table_rows(browser)) == 1, message="mark A listed")
    before = float(table_rows(browser)[0][1])

    browser.find_element(By.CSS_SELECTOR, "#ws-table-body button.ws-label").click()
    eps = browser.find_element(By.ID, "ws-ed-eps")
    eps.clear()
    eps.send_keys("0.6")
    browser.find_element(By.ID, "ws-ed-save").click()
    wait_for(
        lambda: float(table_rows(browser)[0][1]) > before + 1, message="a higher corrected max"
    )
    assert Mark.objects.get(thermogram=thermogram).emissivity == 0.6

    colour = (
        "var c = document.getElementById('ws-canvas'), r = c.getBoundingClientRect();"
        "var x = arguments[0] + r.width / 2, y = arguments[1] + r.height / 2;"
        "return Array.from(c.getContext('2d').getImageData(x, y, 1, 1).data.slice(0, 3));"
    )
    corner = image_offset(browser, thermogram, 15, 100)
    plain = browser.execute_script(colour, *corner)
    browser.find_element(By.ID, "ws-cond").click()
    wait_for(
        lambda: browser.execute_script(colour, *corner) == [255, 160, 255], message="mould colour"
    )
    assert plain != [255, 160, 255]

    browser.execute_script("window.scrollTo(0, 0)")
    browser.save_screenshot("/tmp/workspace.png")

    canvas = browser.find_element(By.ID, "ws-canvas")
    canvas.click()  # Pick tool on empty ground: lets go of the mark
    canvas.send_keys("]")
    wait_for(
        lambda: browser.execute_script(
            "return !!document.querySelector('#ws-table-body tr.ws-selected')"
        ),
        message="mark picked",
    )
    canvas.send_keys(Keys.DELETE)
    alert = wait_for(lambda: _alert(browser), message="the deletion asked first")
    assert "Delete mark A" in alert.text
    alert.accept()
    wait_for(lambda: len(table_rows(browser)) == 0, message="the mark deleted")
    assert not Mark.objects.filter(thermogram=thermogram).exists()

    # Save view: the palette and span on screen become the thermogram's own.
    from selenium.webdriver.support.ui import Select

    Select(browser.find_element(By.ID, "ws-palette")).select_by_value("perceptual")
    browser.execute_script(
        "var e = document.getElementById('ws-high'); e.value = '30';"
        "e.dispatchEvent(new Event('change'));"
    )
    browser.find_element(By.ID, "ws-save-view").click()
    wait_for(
        lambda: "Saved view: perceptual" in browser.find_element(By.ID, "ws-view-note").text,
        message="the view saved",
    )
    thermogram.refresh_from_db()
    assert (thermogram.palette, thermogram.span_high_c) == ("perceptual", 30.0)
    assert thermogram.span_low_c is not None and thermogram.span_low_c < 30.0
    assert severe_console_errors(browser) == []


def test_it_stays_readable_on_a_tablet(browser, live_server, thermographer, workspace_thermogram):
    """At 768 px wide nothing sticks out sideways; the next thermogram loads in place."""
    from selenium.webdriver.common.by import By

    browser.set_window_size(768, 1024)
    try:
        open_workspace(browser, live_server, thermographer, workspace_thermogram)
        overflow = browser.execute_script(
            "return document.documentElement.scrollWidth - document.documentElement.clientWidth"
        )
        assert overflow <= 0
        browser.save_screenshot("/tmp/workspace-tablet.png")
        browser.find_element(By.ID, "ws-prev").click()
        wait_for(
            lambda: "1 of 2" in browser.find_element(By.ID, "ws-position").text, message="previous"
        )
        assert browser.current_url.endswith(
            reverse("survey:thermogram", args=[workspace_thermogram.pk - 1])
        )
    finally:
        browser.set_window_size(1280, 800)


def test_it_undoes_and_redoes_mark_edits_and_keeps_a_mark_a_finding_uses(
    browser, live_server, thermographer, workspace_thermogram
):
    """Ctrl+Z brings a deleted mark back with its name and undoes a move; Ctrl+Shift+Z redoes
    it; a mark a finding uses is not deleted and the workspace says which finding uses it."""
    from selenium.webdriver.common.action_chains import ActionChains
    from selenium.webdriver.common.by import By
    from selenium.webdriver.common.keys import Keys

    from survey.models import Finding
    from survey.services.marks import mark_add

    thermogram = workspace_thermogram
    kept = mark_add(thermogram=thermogram, kind="point", points=[[20, 20]], user=None, name="N")
    finding = Finding.objects.create(
        organization=thermogram.organization,
        survey=thermogram.survey,
        thermogram=thermogram,
        category="thermal_bridge",
        level=4,
    )
    finding.marks.set([kept])
    mark_add(
        thermogram=thermogram,
        kind="rectangle",
        points=[[100, 38], [124, 58]],
        user=None,
        name="L1",
    )
    open_workspace(browser, live_server, thermographer, thermogram)
    wait_for(lambda: len(table_rows(browser)) == 2, message="marks A and B listed")
    assert [row[0] for row in table_rows(browser)] == ["A", "B"]
    labels = browser.execute_script(
        "return Array.from(document.querySelectorAll('#ws-table-body button.ws-label'))"
        ".map(b => b.textContent);"
    )
    assert labels == ["A (N)", "B (L1)"]
    canvas = browser.find_element(By.ID, "ws-canvas")

    def pick(label):
        browser.find_element(
            By.CSS_SELECTOR, f"#ws-table-body tr[data-label={label}] button.ws-label"
        ).click()

    def ready_to(word):
        """Wait until the toolbar offers `word` ("Undo: move or reshape mark B"): the edit
        before has finished and been recorded, so the key press acts on it."""
        button = browser.find_element(By.ID, "ws-redo" if word.startswith("Redo") else "ws-undo")
        wait_for(
            lambda: button.is_enabled() and (button.get_attribute("title") or "").startswith(word),
            message=f"the toolbar to offer {word!r}",
        )

    def undo(shift=False):
        keys = ActionChains(browser).key_down(Keys.CONTROL)
        if shift:
            keys = keys.key_down(Keys.SHIFT)
        keys = keys.send_keys("z")
        if shift:
            keys = keys.key_up(Keys.SHIFT)
        keys.key_up(Keys.CONTROL).perform()

    # A mark a finding uses: refused, and the workspace names the finding.
    pick("A")
    canvas.send_keys(Keys.DELETE)
    wait_for(lambda: _alert(browser), message="the question").accept()
    wait_for(
        lambda: f"finding #{finding.pk}" in browser.find_element(By.ID, "ws-status").text,
        message="the refusal",
    )
    assert Mark.objects.filter(pk=kept.pk).exists()

    # Delete B, undo, redo.
    pick("B")
    canvas.send_keys(Keys.DELETE)
    wait_for(lambda: _alert(browser), message="the question").accept()
    wait_for(lambda: len(table_rows(browser)) == 1, message="B deleted")
    canvas.click()
    ready_to("Undo: delete mark B")
    undo()
    wait_for(lambda: len(table_rows(browser)) == 2, message="B back")
    again = Mark.objects.get(thermogram=thermogram, label="B")
    assert (again.name, again.points) == ("L1", [[100.0, 38.0], [124.0, 58.0]])
    ready_to("Redo: delete mark B")
    undo(shift=True)
    wait_for(lambda: len(table_rows(browser)) == 1, message="B deleted again")
    ready_to("Undo: delete mark B")
    undo()
    wait_for(lambda: len(table_rows(browser)) == 2, message="B back again")

    # Move B with the keyboard, then undo the move.
    pick("B")
    canvas.click()
    pick("B")
    canvas.send_keys(Keys.ARROW_RIGHT)
    moved = [[101.0, 38.0], [125.0, 58.0]]
    wait_for(
        lambda: Mark.objects.get(thermogram=thermogram, label="B").points == moved,
        message="B moved",
    )
    ready_to("Undo: move or reshape mark B")
    undo()
    wait_for(
        lambda: (
            Mark.objects.get(thermogram=thermogram, label="B").points
            == [[100.0, 38.0], [124.0, 58.0]]
        ),
        message="the move undone",
    )
    assert severe_console_errors(browser) == [] or all(
        "409" in e["message"] for e in severe_console_errors(browser)
    )


def proposal_items(browser):
    return browser.execute_script(
        "return Array.from(document.querySelectorAll('#ws-proposals li'))"
        ".map(li => li.textContent);"
    )


def test_it_accepts_a_proposal_with_the_keyboard(
    browser, live_server, thermographer, workspace_thermogram
):
    """The cold corner is proposed; A in a number field does nothing, A on the picture makes
    it a mark; R in the list rejects the next one and it is remembered."""
    from selenium.webdriver.common.by import By

    from survey.models import Proposal
    from survey.services.proposals import thermogram_propose

    thermogram = workspace_thermogram
    run = thermogram_propose(thermogram=thermogram)
    assert [p.category for p in run.proposals] == ["envelope"]
    corner = run.proposals[0]
    # A second, invented proposal elsewhere, to reject from the list.
    spare = Proposal.objects.create(
        thermogram=thermogram,
        rank=1,
        category=Proposal.Category.ENVELOPE,
        kind="rectangle",
        points=[[60, 10], [70, 20]],
        reason="surface RH 85 %, 121 px",
        stats={"surface_rh_pct": 85.0, "area_px": 121},
    )
    open_workspace(browser, live_server, thermographer, thermogram)
    wait_for(lambda: len(proposal_items(browser)) == 2, message="two proposals listed")
    assert "surface RH" in proposal_items(browser)[0]

    browser.find_element(By.ID, "ws-low").send_keys("a")  # typing in a field: no decision
    time.sleep(0.5)
    assert not Mark.objects.filter(thermogram=thermogram).exists()

    browser.find_element(By.ID, "ws-canvas").send_keys("a")
    wait_for(lambda: len(table_rows(browser)) == 1, message="the accepted proposal as mark A")
    mark = Mark.objects.get(thermogram=thermogram)
    assert mark.kind == "polygon" and mark.points == corner.points
    corner.refresh_from_db()
    assert corner.status == Proposal.Status.ACCEPTED and corner.mark_id == mark.pk
    wait_for(lambda: len(proposal_items(browser)) == 1, message="one proposal left")

    browser.find_element(By.ID, "ws-proposals").send_keys("r")
    wait_for(lambda: len(proposal_items(browser)) == 0, message="the spare rejected")
    spare.refresh_from_db()
    assert spare.status == Proposal.Status.REJECTED
    assert Mark.objects.filter(thermogram=thermogram).count() == 1
    assert severe_console_errors(browser) == []


# --- issue 15: a finding from ticked marks, keys only on the picture, touch, a table that fits


def _equipment_thermogram(survey, asset=None):
    """A 20 °C panel with a 30 °C block: mark A on the block (L2 lug, 118 A), B beside it."""
    from survey.services.marks import mark_add
    from tests.survey.findings_data import BACKGROUND, HOT, block_field

    thermogram = make_thermogram(survey, block_field(20.0, 30.0), emissivity=1.0, asset=asset)
    hot = mark_add(
        thermogram=thermogram,
        kind="rectangle",
        points=HOT,
        user=None,
        name="L2 lug",
        load_current_a=118.0,
    )
    background = mark_add(thermogram=thermogram, kind="rectangle", points=BACKGROUND, user=None)
    return thermogram, hot, background


def test_it_writes_a_finding_from_the_marks_ticked_in_the_workspace(
    browser, live_server, thermographer, electrical_survey
):
    """Tick A and B, press the button: the finding form has both marks, their picture and the
    suggested level; saving keeps them. The table names A by its load caption; B's load
    current is entered in the mark editor."""
    from selenium.webdriver.common.by import By
    from selenium.webdriver.support.ui import Select

    from survey.models import Asset, Finding
    from survey.services.findings import finding_suggest

    asset = Asset.objects.create(
        organization=electrical_survey.organization,
        site=electrical_survey.site,
        name="Panel DB-3",
        kind="panel",
        rating=160.0,
        rating_unit="A",
    )
    thermogram, hot, background = _equipment_thermogram(electrical_survey, asset)
    open_workspace(browser, live_server, thermographer, thermogram)
    wait_for(lambda: len(table_rows(browser)) == 2, message="marks A and B listed")
    row_a = browser.find_element(By.CSS_SELECTOR, "#ws-table-body tr[data-label=A]")
    assert "L2 lug, 118 A of 160 A" in row_a.text  # survey/captions.py with the asset's rating

    # B's load current entered in the mark editor: saved, and B's caption follows.
    browser.find_element(By.CSS_SELECTOR, "#ws-table-body tr[data-label=B] button.ws-label").click()
    load = browser.find_element(By.ID, "ws-ed-load")
    load.send_keys("95")
    browser.find_element(By.ID, "ws-ed-save").click()
    wait_for(
        lambda: (
            "95 A of 160 A"
            in browser.find_element(By.CSS_SELECTOR, "#ws-table-body tr[data-label=B]").text
        ),
        message="B's load caption",
    )
    background.refresh_from_db()
    assert background.load_current_a == 95.0

    button = browser.find_element(By.ID, "ws-new-finding")
    assert button.is_displayed() and not button.is_enabled()  # nothing ticked yet
    browser.find_element(By.CSS_SELECTOR, "#ws-table-body tr[data-label=A] input.ws-choose").click()
    # The second one from the keyboard: Tab from the first box reaches the next row's box.
    browser.find_element(
        By.CSS_SELECTOR, "#ws-table-body tr[data-label=B] input.ws-choose"
    ).send_keys(" ")
    wait_for(lambda: button.is_enabled(), message="the button enabled")
    button.click()
    wait_for(lambda: "/findings/new/" in browser.current_url, message="the finding form")

    ticked = browser.execute_script(
        "return Array.from(document.querySelectorAll('input[name=marks]:checked'))"
        ".map(e => Number(e.value));"
    )
    assert sorted(ticked) == sorted([hot.pk, background.pk])
    expected = finding_suggest(survey=electrical_survey, basis="similar", marks=[hot, background])
    assert expected["level"] is not None
    heading = browser.find_element(By.ID, "suggestion-title").text
    assert f"Suggested: {expected['level']}" in heading
    picture = browser.find_element(By.ID, "finding-marks-picture")
    assert f"marks={hot.pk}" in picture.get_attribute("src")
    assert "marks A (L2 lug), B" in picture.get_attribute("alt")
    wait_for(
        lambda: browser.execute_script("return arguments[0].naturalWidth", picture) == 480,
        message="the picture of the marks",
    )

    Select(browser.find_element(By.ID, "id_category")).select_by_index(1)
    browser.find_element(By.CSS_SELECTOR, "button[name=save]").click()
    finding = wait_for(lambda: Finding.objects.first(), message="the finding saved")
    assert sorted(finding.marks.values_list("label", flat=True)) == ["A", "B"]
    assert finding.suggested_level == expected["level"] and finding.level == expected["level"]
    wait_for(lambda: f"/findings/{finding.pk}/" in browser.current_url, message="its page")
    assert browser.find_elements(By.CSS_SELECTOR, f"img[src*='marks={hot.pk}']")
    assert severe_console_errors(browser) == []


def test_it_fits_a_building_surveys_readings_in_1400_px(
    browser, live_server, thermographer, workspace_thermogram
):
    """Five marks with notes on an envelope survey: the readings table needs no sideways
    scrolling in a 1400 px wide window (the humidity columns included)."""
    from survey.services.marks import mark_add

    for points, note in (
        ([[100, 38], [124, 58]], "Warm spot over the radiator niche, checked from inside"),
        ([[2, 82], [38, 118]], "Cold corner behind the wardrobe"),
        ([[60, 10], [70, 20]], ""),
        ([[140, 100], [150, 110]], "Window reveal"),
        ([[80, 60]], ""),
    ):
        kind = "point" if len(points) == 1 else "rectangle"
        mark_add(thermogram=workspace_thermogram, kind=kind, points=points, user=None, note=note)
    browser.set_window_size(1400, 900)
    try:
        open_workspace(browser, live_server, thermographer, workspace_thermogram)
        wait_for(lambda: len(table_rows(browser)) == 5, message="five marks listed")
        heads = browser.execute_script(
            "return Array.from(document.querySelectorAll('#ws-table-head th'))"
            ".map(th => th.textContent);"
        )
        assert "Surface RH (95 % interval)" in heads and "To mould (80 %)" in heads
        width = browser.execute_script(
            "var w = document.querySelector('.ws-table-wrap');"
            "return [w.scrollWidth, w.clientWidth, document.documentElement.clientWidth];"
        )
        assert width[2] >= 1380  # the window really is about 1400 px wide
        browser.execute_script("document.querySelector('.ws-results').scrollIntoView()")
        browser.save_screenshot("/tmp/workspace-1400.png")
        assert width[0] <= width[1], width
    finally:
        browser.set_window_size(1280, 800)


def test_it_takes_single_key_shortcuts_only_while_the_picture_has_focus(
    browser, live_server, thermographer, workspace_thermogram
):
    """Keys 1–6 and + act on the focused picture only (WCAG 2.1.4), not on a focused button
    or field; the picture says how to reach it from the keyboard."""
    from selenium.webdriver.common.by import By

    open_workspace(browser, live_server, thermographer, workspace_thermogram)
    canvas = browser.find_element(By.ID, "ws-canvas")
    help_text = browser.find_element(By.ID, "ws-canvas-help")
    assert "ws-canvas-help" in canvas.get_attribute("aria-describedby").split()
    assert help_text.is_displayed() and "Tab" in help_text.text

    def pressed():
        return browser.execute_script(
            "return document.querySelector('.ws-tools [aria-pressed=true]').dataset.tool"
        )

    def zoom():
        return browser.find_element(By.ID, "ws-zoom").text

    before = zoom()
    browser.find_element(By.ID, "ws-auto").send_keys("3+")  # a focused button
    browser.find_element(By.ID, "ws-palette").send_keys("2")  # a focused list
    time.sleep(0.3)
    assert pressed() == "select" and zoom() == before

    canvas.send_keys("3")
    wait_for(lambda: pressed() == "rectangle", message="the rectangle tool from key 3")
    canvas.send_keys("+")
    wait_for(lambda: zoom() != before, message="zoomed in with +")
    assert severe_console_errors(browser) == []


def test_it_matches_photo_points_from_the_keyboard(
    browser, live_server, thermographer, workspace_thermogram
):
    """Match points: cross-hair and Enter on the picture, x and y of the photo in fields; two
    pairs of a photo at twice the scale are saved as that alignment."""
    import io

    from django.core.files.base import ContentFile
    from PIL import Image
    from selenium.webdriver.common.by import By
    from selenium.webdriver.common.keys import Keys

    buffer = io.BytesIO()
    Image.new("RGB", (320, 240), (90, 90, 90)).save(buffer, "JPEG")
    workspace_thermogram.photo.save("photo.jpg", ContentFile(buffer.getvalue()))
    open_workspace(browser, live_server, thermographer, workspace_thermogram)
    browser.find_element(By.ID, "ws-align").send_keys(Keys.ENTER)
    canvas = browser.find_element(By.ID, "ws-canvas")

    def add_pair(x, y):
        wait_for(
            lambda: browser.find_element(By.ID, "ws-align-keys").is_displayed(),
            message="the photo point fields",
        )
        for name, value in (("ws-align-x", x), ("ws-align-y", y)):
            field = browser.find_element(By.ID, name)
            field.send_keys(Keys.CONTROL, "a")
            field.send_keys(str(value))
        browser.find_element(By.ID, "ws-align-add").send_keys(Keys.ENTER)

    canvas.send_keys(Keys.ENTER, Keys.ENTER)  # the cross-hair at the centre (80, 60), placed
    add_pair(160, 120)
    # Shift + arrow moves 10 px (Keys.NULL lets go of Shift): to (110, 80).
    canvas.send_keys(Keys.SHIFT, *[Keys.RIGHT] * 3, *[Keys.DOWN] * 2, Keys.NULL, Keys.ENTER)
    add_pair(220, 160)
    save = browser.find_element(By.ID, "ws-align-save")
    wait_for(lambda: save.is_displayed(), message="Save alignment offered")
    save.send_keys(Keys.ENTER)

    def stored():
        workspace_thermogram.refresh_from_db()
        return workspace_thermogram.photo_alignment

    alignment = wait_for(stored, message="the alignment saved")
    assert alignment["pairs"] == [[[160, 120], [80, 60]], [[220, 160], [110, 80]]]
    # Photo at twice the scale, shifted by 0: thermogram = photo × 0.5 (worked by hand).
    np.testing.assert_allclose(alignment["matrix"], [[0.5, 0, 0], [0, 0.5, 0]], atol=1e-6)
    assert severe_console_errors(browser) == []


def _touch(browser, kind, points):
    browser.execute_cdp_cmd(
        "Input.dispatchTouchEvent",
        {"type": kind, "touchPoints": [{"x": x, "y": y} for x, y in points]},
    )


def test_it_draws_point_and_rectangle_marks_by_touch_on_a_phone(
    browser, live_server, thermographer, workspace_thermogram
):
    """At 390 px with touch: a tap with the Point tool and a drag with the Rectangle tool
    save marks; the picture takes over touch only while a drawing tool is chosen."""
    from selenium.webdriver.common.by import By

    thermogram = workspace_thermogram
    browser.execute_cdp_cmd(
        "Emulation.setDeviceMetricsOverride",
        {"width": 390, "height": 844, "deviceScaleFactor": 1, "mobile": True},
    )
    browser.execute_cdp_cmd(
        "Emulation.setTouchEmulationEnabled", {"enabled": True, "maxTouchPoints": 5}
    )
    try:
        open_workspace(browser, live_server, thermographer, thermogram)
        canvas = browser.find_element(By.ID, "ws-canvas")

        def touch_action():
            return browser.execute_script(
                "return getComputedStyle(arguments[0]).touchAction", canvas
            )

        assert touch_action() == "auto"  # Pick: a finger scrolls the page
        browser.execute_script("arguments[0].scrollIntoView({block: 'center'})", canvas)

        def at(x, y):
            left, top = browser.execute_script(
                "var r = arguments[0].getBoundingClientRect(); return [r.left + r.width / 2,"
                " r.top + r.height / 2];",
                canvas,
            )
            dx, dy = image_offset(browser, thermogram, x, y)
            return (left + dx, top + dy)

        browser.execute_script("document.querySelector('button[data-tool=point]').click()")
        assert touch_action() == "none"
        _touch(browser, "touchStart", [at(20, 20)])
        _touch(browser, "touchEnd", [])
        wait_for(lambda: len(table_rows(browser)) == 1, message="a point by touch")

        browser.execute_script("document.querySelector('button[data-tool=rectangle]').click()")
        _touch(browser, "touchStart", [at(100, 38)])
        for step in range(1, 6):
            _touch(browser, "touchMove", [at(100 + 5 * step, 38 + 4 * step)])
        _touch(browser, "touchEnd", [])
        wait_for(lambda: len(table_rows(browser)) == 2, message="a rectangle by touch")

        marks = {m.label: m for m in Mark.objects.filter(thermogram=thermogram)}
        assert marks["A"].kind == "point"
        assert abs(marks["A"].points[0][0] - 20) <= 1 and abs(marks["A"].points[0][1] - 20) <= 1
        assert marks["B"].kind == "rectangle"
        (x0, y0), (x1, y1) = marks["B"].points
        assert abs(x0 - 100) <= 1 and abs(y0 - 38) <= 1 and abs(x1 - 125) <= 1 and abs(y1 - 58) <= 1
        overflow = browser.execute_script(
            "return document.documentElement.scrollWidth - document.documentElement.clientWidth"
        )
        assert overflow <= 0
        assert severe_console_errors(browser) == []
    finally:
        browser.execute_cdp_cmd("Emulation.setTouchEmulationEnabled", {"enabled": False})
        browser.execute_cdp_cmd("Emulation.clearDeviceMetricsOverride", {})
