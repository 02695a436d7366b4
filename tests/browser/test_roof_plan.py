"""The roof plan in real headless Chromium: a click on the plan fills in the chosen
thermogram's place, which its button saves and the page then marks."""

import io

import pytest
from django.urls import reverse
from PIL import Image

from survey.services import roof
from tests.browser.test_working_day import (  # noqa: F401 - the module's browser fixture
    browser,
    click,
    open_page,
    sign_in,
    wait_for,
)
from tests.factories import make_thermogram
from tests.survey.findings_data import equipment_survey

pytestmark = [pytest.mark.browser]


def test_a_click_on_the_plan_places_the_chosen_thermogram(
    browser,  # noqa: F811 - the fixture imported above
    live_server,
    transactional_db,
    org,
    site,
    thermographer,
):
    from selenium.webdriver.common.action_chains import ActionChains
    from selenium.webdriver.common.by import By
    from selenium.webdriver.support.ui import Select

    survey = equipment_survey(org, site, thermographer, kind="roof")
    buffer = io.BytesIO()
    Image.new("RGB", (800, 400), "white").save(buffer, "PNG")
    buffer.seek(0)
    buffer.name = "plan.png"
    roof.roof_plan_upload(survey=survey, uploaded_file=buffer, user=None)
    make_thermogram(survey, title="East")
    second = make_thermogram(survey, title="West")

    sign_in(browser, live_server, thermographer)
    open_page(browser, live_server, reverse("survey:roof_plan", args=[survey.pk]))
    Select(browser.find_element(By.ID, "plan-target")).select_by_value(str(second.pk))
    plan = browser.find_element(By.ID, "roof-plan")
    # Wholly in view: a pointer offset counts from the centre of the part in view.
    browser.execute_script("arguments[0].scrollIntoView({block: 'center'})", plan)
    box = plan.rect
    # A quarter across and three quarters down, from the plan's centre.
    ActionChains(browser).move_to_element_with_offset(
        plan, -box["width"] / 4, box["height"] / 4
    ).click().perform()
    across = browser.find_element(By.ID, f"id_{second.pk}-x_pct")
    down = browser.find_element(By.ID, f"id_{second.pk}-y_pct")
    wait_for(lambda: across.get_attribute("value"), message="the place filled in")
    assert float(across.get_attribute("value")) == pytest.approx(25.0, abs=1.0)
    assert float(down.get_attribute("value")) == pytest.approx(75.0, abs=1.0)
    assert browser.switch_to.active_element.text == f"Save place of {second.sequence}"
    click(browser, f'form[data-thermogram="{second.pk}"] button')
    second.refresh_from_db()
    assert second.plan_x_pct == pytest.approx(25.0, abs=1.0)
    assert len(browser.find_elements(By.CSS_SELECTOR, "#roof-plan circle")) == 1
