"""Every page against WCAG 2.1 AA (axe-core in real Chromium) and the Nu HTML checker.

The demo firm is loaded into the live server, an admin signs in through the login form, and a
bounded breadth-first crawl follows every same-origin link from the home page. Pages a link
does not reach (the login and share pages signed out, the criteria tables, the password form,
a confirmation page) are added by hand, and so are states a crawl never sees: forms answered
with errors, a message after an action, the workspace with a mark picked. Each is checked by
axe-core in the browser; the HTML the server sent for each goes through vnu.jar in one Java
run at the end.

The tools come from npm (package.json; `make test` installs them). The test skips when
Chromium, node_modules or Java is missing, and fails instead under REQUIRE_SERVICES=1.
"""

import datetime
import io
import json
import os
import re
import shutil
import subprocess
import tempfile
import time
from collections import deque
from pathlib import Path
from urllib.parse import urldefrag, urlparse

import pytest
from django.core.management import call_command
from django.test import Client as DjangoClient
from django.urls import reverse

pytestmark = [pytest.mark.browser, pytest.mark.slow]

ROOT = Path(__file__).resolve().parents[2]
AXE = ROOT / "node_modules" / "axe-core" / "axe.min.js"
VNU = ROOT / "node_modules" / "vnu-jar" / "build" / "dist" / "vnu.jar"
CHROMIUM = "/usr/bin/chromium"
CHROMEDRIVER = "/usr/bin/chromedriver"

# axe-core's tags for the success criteria of WCAG 2.0 and 2.1, levels A and AA, and its
# best practices (one main landmark, heading order, content inside landmarks, named headers).
AXE_TAGS = ["wcag2a", "wcag2aa", "wcag21a", "wcag21aa", "best-practice"]
# Rules whose "needs review" answer is still a defect on server-made pages: an ARIA reference
# to an id that no element has (axe leaves it open in case a script adds the element later).
NEEDS_REVIEW_IS_VIOLATION = ["aria-valid-attr-value"]
# Links that act, leave the HTML world or belong to Django's own admin site.
SKIPPED_LINK = re.compile(
    r"logout|/delete/|download|/pdf/|\.pdf$|\.csv$|\.json$|\.png$|\.svg$|\.npy$|/original/"
    r"|/photo/|^/api/|^/admin/|^/static/|^/media/|/temperatures$"
)
MAX_PAGES = 150
# Pages with the same address shape (numbers replaced) share a template: a few are enough.
MAX_PER_SHAPE = 5


def _missing_tools() -> list[str]:
    missing = [path for path in (CHROMIUM, CHROMEDRIVER) if not os.path.exists(path)]
    try:
        import selenium  # noqa: F401
    except ImportError:
        missing.append("the selenium package")
    missing += [
        f"{path.relative_to(ROOT)} (run `make node-tools`)"
        for path in (AXE, VNU)
        if not path.exists()
    ]
    if shutil.which("java") is None:
        missing.append("java (for the Nu HTML checker)")
    return missing


def _require_tools() -> None:
    missing = _missing_tools()
    if missing:
        reason = f"the accessibility check needs {', '.join(missing)}"
        if os.environ.get("REQUIRE_SERVICES") == "1":
            pytest.fail(f"{reason}, and REQUIRE_SERVICES=1")
        pytest.skip(reason)


@pytest.fixture
def chromium():
    _require_tools()
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
        "--window-size=1280,800",
        "--force-device-scale-factor=1",
        f"--user-data-dir={profile}",
    ):
        options.add_argument(flag)
    driver = webdriver.Chrome(service=Service(executable_path=CHROMEDRIVER), options=options)
    driver.set_window_size(1280, 800)
    driver.set_script_timeout(30)
    try:
        yield driver
    finally:
        driver.quit()
        shutil.rmtree(profile, ignore_errors=True)


@pytest.fixture
def demo_firm(transactional_db):
    """The demo firm, plus an issued report of its envelope survey and a live share link."""
    from reports.services import report_create, report_issue, share_link_create
    from survey.models import MarkTemplate, Member, Survey
    from survey.services.criteria_tables import criteria_table_copy_defaults
    from survey.services.surveys import survey_create, survey_soft_delete

    call_command("demo_data", stdout=io.StringIO())
    admin = Member.objects.get(user__username="demo")
    survey = Survey.objects.get(organization=admin.organization, kind=Survey.Kind.ENVELOPE)
    report = report_create(survey=survey, user=admin.user)
    version = report_issue(report=report, user=admin.user, accept_unreviewed_criteria=True)
    version.refresh_from_db()
    assert version.is_issued, f"the demo report did not render: {version.error}"
    link = share_link_create(version=version, user=admin.user)
    # The firm's own copy of the severity tables, so their edit pages exist; a deleted survey,
    # so the list of deleted surveys has a row.
    criteria_table_copy_defaults(organization=admin.organization, user=admin.user)
    mistake = survey_create(
        organization=admin.organization,
        user=admin.user,
        site=survey.site,
        kind=Survey.Kind.ENVELOPE,
        date=datetime.date(2026, 2, 1),
        title="Started by mistake",
    )
    survey_soft_delete(survey=mistake, user=admin.user)
    # The issued report shows the envelope survey's thermograms, so they open read-only; the
    # workspace's mark editor is checked on one the report does not hold.
    electrical = Survey.objects.get(
        organization=admin.organization, title="Main distribution panel survey"
    )
    return {
        "admin": admin,
        "survey": survey,
        "site": survey.site,
        "client": survey.site.client,
        "thermogram": survey.thermograms.order_by("pk").first(),
        "open_thermogram": electrical.thermograms.order_by("pk").first(),
        "finding": survey.findings.order_by("pk").first(),
        "share_token": link.token,
        "template": MarkTemplate.objects.get(organization=admin.organization),
    }


def _wait_until_settled(browser, timeout=10.0) -> None:
    """Until the document has loaded and the workspace (if any) has drawn its table."""
    deadline = time.monotonic() + timeout
    script = (
        "if (document.readyState !== 'complete') return false;"
        "if (!document.getElementById('ws-canvas')) return true;"
        "return document.querySelectorAll('#ws-table-head th').length > 0;"
    )
    while time.monotonic() < deadline:
        if browser.execute_script(script):
            return
        time.sleep(0.05)
    raise AssertionError(f"{browser.current_url} did not finish loading")


def _axe_violations(browser, axe_source: str) -> list[dict]:
    # Injected through the driver, so the page's CSP (script-src 'self') does not apply.
    browser.execute_script(axe_source)
    result = browser.execute_async_script(
        """
        var done = arguments[arguments.length - 1], strict = arguments[1];
        function brief(v) {
          return {id: v.id, impact: v.impact, help: v.help, nodes: v.nodes.map(function (n) {
            return n.target.join(" ") + " :: " + (n.failureSummary || "").replace(/\\s+/g, " ");
          })};
        }
        axe.run(document, {
          runOnly: {type: "tag", values: arguments[0]},
          // A level badge is one digit: real text, so measure its contrast, not "review it".
          checks: {"color-contrast": {options: {ignoreLength: true}}}
        }).then(function (r) {
          var open = r.incomplete.filter(function (v) { return strict.indexOf(v.id) >= 0; });
          var broken = r.incomplete.filter(function (v) { return v.error; });
          done({rules: r.passes.length + r.violations.length,
                errors: broken.map(function (v) { return v.id + ": " + v.error.message; }),
                violations: r.violations.concat(open).map(brief)});
        }, function (error) { done({rules: 0, errors: [String(error)], violations: []}); });
        """,
        AXE_TAGS,
        NEEDS_REVIEW_IS_VIOLATION,
    )
    assert not result["errors"], f"axe-core failed on {browser.current_url}: {result['errors']}"
    assert result["rules"] > 0, f"axe-core ran no rule on {browser.current_url}"
    return result["violations"]


def _same_origin_links(browser, origin: str) -> list[str]:
    hrefs = browser.execute_script(
        "return Array.from(document.querySelectorAll('a[href]'), function (a) { return a.href; });"
    )
    paths = []
    for href in hrefs:
        url, _ = urldefrag(href)
        parsed = urlparse(url)
        if f"{parsed.scheme}://{parsed.netloc}" != origin or not parsed.path:
            continue
        path = parsed.path + (f"?{parsed.query}" if parsed.query else "")
        if not SKIPPED_LINK.search(parsed.path):
            paths.append(path)
    return paths


def _shape(path: str) -> str:
    return re.sub(r"\d+", "N", path.split("?")[0])


def _served_html(client: DjangoClient, path: str, status: int) -> str | None:
    """The HTML the server sends for `path`, or None when it is not an HTML page."""
    response = client.get(path)
    if "text/html" not in response.get("Content-Type", ""):
        return None
    assert response.status_code == status, f"{path} answered {response.status_code}"
    return response.content.decode(response.charset or "utf-8")


def _vnu_errors(pages: dict[str, str]) -> list[str]:
    """Run the Nu HTML checker once over every page; its errors as 'page: line: message'."""
    with tempfile.TemporaryDirectory(prefix="heatmark-vnu-") as folder:
        files = {}
        for index, (path, html) in enumerate(pages.items()):
            name = f"page-{index:03d}.html"
            (Path(folder) / name).write_text(html, encoding="utf-8")
            files[name] = path
        run = subprocess.run(
            ["java", "-jar", str(VNU), "--format", "json", "--errors-only", *sorted(files)],
            capture_output=True,
            text=True,
            timeout=120,
            cwd=folder,
        )
    # vnu writes its JSON report to stderr, and exits 1 when it found an error.
    report = json.loads(run.stderr)
    errors = []
    for message in report["messages"]:
        page = files.get(message.get("url", "").rpartition("/")[2], message.get("url"))
        extract = " ".join((message.get("extract") or "").split())
        errors.append(
            f"{page}: line {message.get('lastLine', '?')}: {message['message']} [{extract}]"
        )
    assert errors or run.returncode == 0, f"vnu.jar failed: {run.stderr[-2000:]}"
    return errors


# Forms sent with their text fields emptied (and a few values that must be refused): the
# answer shows the errors, and must be as accessible as the page was.
# (page name, objects in its address, the form, values, what shows the error)
FORM_ERRORS = [
    ("survey:survey_create", (), "main form", {}, ".errorlist"),
    ("survey:clients", (), "main form:not([action])", {}, ".errorlist"),
    ("survey:sites", (), "main form:not([action])", {}, ".errorlist"),
    ("survey:members", (), "main form:not([action])", {}, ".errorlist"),
    ("survey:organization", (), "main form[action$='letterhead/']", {}, ".errorlist"),
    ("survey:thermogram_settings", ("thermogram",), "main form:not([action])", {}, ".errorlist"),
    (
        "survey:finding_create",
        ("thermogram",),
        "main form",
        {"design_inside_c": "99"},
        ".errorlist",
    ),
    ("survey:finding_edit", ("finding",), "main form", {"level": "1"}, ".errorlist"),
    ("survey:heat_loss_create", ("survey",), "main form", {}, ".errorlist"),
    ("survey:survey_delete", ("survey",), "main form", {}, ".errorlist"),
    ("survey:site", ("site",), "#add-asset", {"rating": "160"}, ".errorlist"),
    ("survey:client_edit", ("client",), "main form", {}, ".errorlist"),
    ("survey:thermogram_delete", ("thermogram",), "main form", {}, ".errorlist"),
    ("password_change", (), "main form", {}, ".errorlist"),
    ("reports:survey", ("survey",), "form.issue-form", {}, ".messages .msg-error"),
    ("survey:logger_import", ("survey",), "main form", {}, ".errorlist"),
    ("survey:template_create", ("thermogram",), "main form", {}, ".errorlist"),
    ("survey:template_apply", ("survey",), "main form", {}, ".errorlist"),
    ("survey:template_align", ("template", "thermogram"), "main form", {}, ".errorlist"),
    (
        "survey:survey_proposal_settings",
        ("survey",),
        "main form",
        {"min_area_px": "0"},
        ".errorlist",
    ),
]


# A phone (390 CSS px, as many phones of 2020–2025 are wide) and a small laptop or tablet in
# landscape (1024 px): every page must fit the width, wide tables scrolling in their card.
OVERFLOW_WIDTHS = (390, 1024)
# The layout viewport's width is clientWidth: with mobile emulation window.innerWidth grows
# to fit an overflowing page, hiding the overflow it should show.
OVERFLOW_SCRIPT = """
var root = document.documentElement, width = root.clientWidth;
function inScroller(node) {
  for (var up = node.parentElement; up && up !== document.body; up = up.parentElement) {
    var style = getComputedStyle(up);
    if (/(auto|scroll|hidden)/.test(style.overflowX)) { return true; }
  }
  return false;
}
var wide = [];
document.querySelectorAll("body *").forEach(function (node) {
  var box = node.getBoundingClientRect();
  if (box.width && box.right > width + 1 && !inScroller(node)) {
    wide.push(node.tagName.toLowerCase() + (node.id ? "#" + node.id : "") +
      (node.className && node.className.baseVal === undefined ? "." + node.className : "") +
      " right=" + Math.round(box.right));
  }
});
return {document: root.scrollWidth, viewport: width, wide: wide.slice(0, 5)};
"""


def _overflows(browser, paths, origin: str) -> list[str]:
    """Pages wider than the window at each width of OVERFLOW_WIDTHS, with what sticks out."""
    found = []
    try:
        for path in paths:
            for index, width in enumerate(OVERFLOW_WIDTHS):
                browser.execute_cdp_cmd(
                    "Emulation.setDeviceMetricsOverride",
                    {"width": width, "height": 844, "deviceScaleFactor": 1, "mobile": width < 600},
                )
                if index == 0:
                    browser.get(origin + path)
                _wait_until_settled(browser)
                measured = browser.execute_script(OVERFLOW_SCRIPT)
                if measured["document"] > measured["viewport"]:
                    found.append(
                        f"{path} at {width} px: document {measured['document']} px wide; "
                        f"{', '.join(measured['wide'])}"
                    )
    finally:
        browser.execute_cdp_cmd("Emulation.clearDeviceMetricsOverride", {})
    return found


class PageChecker:
    """Loads pages in the browser, runs axe-core on each and keeps the HTML served for vnu."""

    def __init__(self, browser, origin: str):
        self.browser, self.origin = browser, origin
        self.axe_source = AXE.read_text(encoding="utf-8")
        self.violations: list[str] = []
        self.served: dict[str, str] = {}
        self.checked: list[str] = []

    def page(self, path: str, client: DjangoClient, status: int = 200) -> bool:
        """Check one page; False when the address does not serve HTML."""
        html = _served_html(client, path, status)
        if html is None:
            return False
        self.served[path] = html
        self.browser.get(self.origin + path)
        self._axe(path)
        return True

    def form_with_errors(
        self, path: str, client: DjangoClient, form: str, shows_error: str, values=None
    ) -> None:
        """Empty the form's text fields (then fill `values`), send it, and check the answer.

        The browser sends the form; the test client sends the same fields for vnu's copy.
        """
        from selenium.webdriver.common.by import By
        from selenium.webdriver.support.expected_conditions import staleness_of
        from selenium.webdriver.support.ui import WebDriverWait

        self.browser.get(self.origin + path)
        _wait_until_settled(self.browser)
        action, fields = self.browser.execute_script(
            """
            var form = document.querySelector(arguments[0]), values = arguments[1];
            form.noValidate = true;
            form.querySelectorAll("input, textarea, select").forEach(function (field) {
              if (/^(text|number|date|email|password|url|textarea)$/.test(field.type)) {
                field.value = "";
              }
              if (field.name in values) { field.value = values[field.name]; }
            });
            var buttons = form.querySelectorAll("[type=submit]");
            var submitter = buttons[buttons.length - 1];
            var fields = [];
            new FormData(form, submitter).forEach(function (value, name) {
              if (typeof value === "string") { fields.push([name, value]); }
            });
            window.heatmarkSubmitter = submitter;
            return [form.action, fields];
            """,
            form,
            values or {},
        )
        data: dict[str, list[str]] = {}
        for name, value in fields:
            data.setdefault(name, []).append(value)
        # The test client does not enforce CSRF, so the browser's fields go through as they are.
        response = client.post(urlparse(action).path, data, follow=True)
        assert response.status_code == 200, f"sending {form} on {path}: {response.status_code}"
        label = f"{path} (sent with errors)"
        self.served[label] = response.content.decode(response.charset or "utf-8")
        old_page = self.browser.find_element(By.TAG_NAME, "html")
        self.browser.execute_script("var b = window.heatmarkSubmitter; b.form.requestSubmit(b);")
        WebDriverWait(self.browser, 10).until(staleness_of(old_page))
        self._axe(label)
        found = self.browser.execute_script(
            "return document.querySelectorAll(arguments[0]).length;", shows_error
        )
        assert found, f"{label}: no {shows_error} in the answer ({self.browser.current_url})"

    def as_shown(self, label: str) -> None:
        """Check the page as the browser shows it now (after scripts changed it)."""
        self._axe(label)

    def _axe(self, label: str) -> None:
        _wait_until_settled(self.browser)
        for violation in _axe_violations(self.browser, self.axe_source):
            nodes = "\n      ".join(violation["nodes"][:5])
            more = len(violation["nodes"]) - 5
            self.violations.append(
                f"{label}: {violation['id']} ({violation['impact']}): {violation['help']}\n"
                f"      {nodes}" + (f"\n      … and {more} more" if more > 0 else "")
            )
        self.checked.append(label)


def test_it_finds_no_wcag_violation_and_no_html_error_on_any_page(chromium, live_server, demo_firm):
    """Every page an admin reaches, and the signed-out pages, pass axe-core and vnu.jar."""
    from selenium.webdriver.common.by import By

    browser, origin = chromium, live_server.url
    checker = PageChecker(browser, origin)
    anonymous = DjangoClient()
    login_path = reverse("login")
    for path, status in (
        (login_path, 200),
        (reverse("reports:share", args=[demo_firm["share_token"]]), 200),
        (reverse("reports:share", args=["no-such-link"]), 404),
    ):
        assert checker.page(path, anonymous, status), f"{path} did not answer with HTML"
    checker.form_with_errors(
        login_path,
        anonymous,
        "main form",
        ".errorlist",
        {"username": "demo", "password": "not-the-password"},
    )

    # Sign in through the form, as a person would.
    browser.get(origin + login_path)
    browser.find_element(By.NAME, "username").send_keys("demo")
    browser.find_element(By.NAME, "password").send_keys("demo-thermal-2026")
    browser.find_element(By.CSS_SELECTOR, "main form [type=submit]").click()
    _wait_until_settled(browser)
    assert urlparse(browser.current_url).path == "/", "signing in as demo failed"

    member = DjangoClient()
    member.force_login(demo_firm["admin"].user)
    # Pages no link leads to (or only a skipped one): checked by name.
    extra = [
        reverse("survey:criteria_tables"),
        reverse("password_change"),
        reverse("survey:survey_delete", args=[demo_firm["survey"].pk]),
        # A new finding from marks ticked in the workspace: with the picture of those marks.
        reverse("survey:finding_create", args=[demo_firm["open_thermogram"].pk])
        + f"?marks={demo_firm['open_thermogram'].marks.order_by('pk').first().pk}",
    ]
    queue = deque(["/", *extra])
    seen = set(queue)
    per_shape: dict[str, int] = {}
    while queue and len(checker.checked) < MAX_PAGES:
        path = queue.popleft()
        shape = _shape(path)
        if per_shape.get(shape, 0) >= MAX_PER_SHAPE or not checker.page(path, member):
            continue
        per_shape[shape] = per_shape.get(shape, 0) + 1
        for link in _same_origin_links(browser, origin):
            if link not in seen:
                seen.add(link)
                queue.append(link)
    assert not queue, f"the crawl stopped at {MAX_PAGES} pages with {len(queue)} left: raise it"
    assert len(checker.checked) >= 30, f"the crawl reached only {checker.checked}"

    # The workspace as scripts leave it with a mark picked: the mark editor is open.
    browser.get(origin + reverse("survey:thermogram", args=[demo_firm["open_thermogram"].pk]))
    _wait_until_settled(browser)
    browser.find_element(By.CSS_SELECTOR, "#ws-table-body button.ws-label").click()
    assert browser.find_element(By.ID, "ws-editor").is_displayed(), "the mark editor stayed shut"
    checker.as_shown("workspace with a mark picked")
    browser.find_element(By.CSS_SELECTOR, "#ws-table-body input.ws-choose").click()
    assert browser.find_element(By.ID, "ws-new-finding").is_enabled(), "ticking chose nothing"
    checker.as_shown("workspace with a mark ticked for a new finding")

    for name, args, form, values, shows_error in FORM_ERRORS:
        path = reverse(name, args=[demo_firm[arg].pk for arg in args])
        checker.form_with_errors(path, member, form, shows_error, values)

    assert urlparse(browser.current_url).path != login_path, "the session ended mid-crawl"
    print(f"\nChecked {len(checker.checked)} pages:\n  " + "\n  ".join(checker.checked))
    # Every page reached, at a phone's and a small laptop's width: nothing wider than the
    # window (the share page signed out as well, as the client sees it).
    pages = [path for path in checker.served if not path.endswith("(sent with errors)")]
    signed_out = pages[:3]  # sign-in, a live share link, a dead one: checked first above
    overflows = _overflows(browser, pages[3:], origin)
    browser.delete_all_cookies()
    overflows += _overflows(browser, signed_out, origin)
    html_errors = _vnu_errors(checker.served)
    report = []
    if overflows:
        report.append(f"{len(overflows)} pages wider than the window:\n  " + "\n  ".join(overflows))
    if checker.violations:
        report.append(
            f"{len(checker.violations)} accessibility violations:\n  "
            + "\n  ".join(checker.violations)
        )
    if html_errors:
        report.append(f"{len(html_errors)} HTML errors:\n  " + "\n  ".join(html_errors))
    assert not report, "\n\n".join(report)


def test_it_serves_valid_html_after_a_bad_logger_file_and_a_template_run(
    client, electrical_survey, thermographer
):
    """Pages only a POST reaches: the logger file's row errors, the template's results."""
    from django.core.files.uploadedfile import SimpleUploadedFile

    from survey.services.mark_templates import mark_template_create
    from survey.services.marks import mark_add
    from tests.factories import make_thermogram

    _require_tools()
    client.force_login(thermographer.user)
    url = reverse("survey:logger_import", args=[electrical_survey.pk])
    text = b"time;temp\n2026-03-02 10:00;24,0\n2026-03-02 10:10;warm\n"
    step_two = client.post(
        url, {"role": "inside", "file": SimpleUploadedFile("panel-room.csv", text)}
    )
    form = step_two.context["form"]
    row_errors = client.post(
        url,
        {
            "payload": form["payload"].value(),
            "skip_rows": "0",
            "role": "inside",
            "time_column": "time",
            "temperature_column": "temp",
            "temperature_unit": "C",
            "wind_unit": "m/s",
            "time_zone": "UTC",
        },
    )
    assert row_errors.context["row_errors"], "the bad row was not reported"
    source = make_thermogram(electrical_survey)
    mark_add(thermogram=source, kind="point", points=[[10, 10]], user=None)
    template = mark_template_create(thermogram=source, name="Contactor", user=None)
    target = make_thermogram(electrical_survey)
    results = client.post(
        reverse("survey:template_apply", args=[electrical_survey.pk]),
        {"template": template.pk, "thermograms": [target.pk], "method": "register"},
    )
    assert results.context["results"], "no results table"
    pages = {
        "logger import, step 2": step_two.content.decode(),
        "logger import, row errors": row_errors.content.decode(),
        "template results": results.content.decode(),
    }
    assert _vnu_errors(pages) == []
