"""Static files in production: gunicorn with DEBUG=0 serves every script and stylesheet.

WhiteNoise serves what `collectstatic` wrote (as the Docker image does at build): hashed
names cached for a year, so a new workspace.js is never served stale, and compressed copies.
"""

import json
import re
from pathlib import Path
from urllib.parse import urljoin

import pytest
import requests
from django.contrib.staticfiles import finders
from django.core.management import call_command

from tests.processes import (
    Browser,
    Gunicorn,
    assets_of,
    manage,
    module_imports,
    production_environment,
)

HASHED = re.compile(r"\.[0-9a-f]{12}\.(?:js|css)$")
CONTENT_TYPES = {".js": {"text/javascript", "application/javascript"}, ".css": {"text/css"}}
YEAR_S = 365 * 24 * 3600
# Pages that are files, or that change state, are not crawled.
SKIP = re.compile(r"(logout|/original/|\.png$|\.npy$|\.svg$|\.csv$|\.json$|/pdf/|/admin/)")


def _crawl(browser: Browser, start: str, limit: int = 60, per_pattern: int = 2) -> dict[str, str]:
    """HTML of up to `limit` pages reached by links from `start` (GET only), at most
    `per_pattern` of each address shape (/assets/2/ and /assets/3/ are one shape)."""
    pages, queue, shapes = {}, [start], {}
    while queue and len(pages) < limit:
        path = queue.pop(0)
        if path in pages:
            continue
        shape = re.sub(r"\d+", "N", path)
        if shapes.get(shape, 0) >= per_pattern:
            continue
        shapes[shape] = shapes.get(shape, 0) + 1
        response = browser.get(path)
        assert response.status_code == 200, (path, response.status_code)
        pages[path] = response.text
        for link in re.findall(r'href="(/[^"#?]*)"', response.text):
            if not link.startswith("/static/") and not SKIP.search(link) and link not in pages:
                queue.append(link)
    return pages


def _max_age(response) -> int:
    found = re.search(r"max-age=(\d+)", response.headers.get("Cache-Control", ""))
    return int(found.group(1)) if found else 0


@pytest.mark.slow
def test_it_serves_every_script_and_stylesheet_behind_gunicorn(tmp_path, collected_static):
    """200, the right type, a year's cache on hashed names, compressed copies, imports resolved."""
    environment = production_environment(
        DATABASE_URL=f"sqlite:///{tmp_path / 'db.sqlite3'}",
        MEDIA_ROOT=str(tmp_path / "media"),
        STATIC_ROOT=str(collected_static),
    )
    manage(environment, "migrate", "--noinput", "-v", "0")
    manage(environment, "demo_data")
    server = Gunicorn(environment, tmp_path / "gunicorn.log")
    try:
        browser = Browser(server.url)
        pages = {"/accounts/login/": browser.get("/accounts/login/").text}
        browser.sign_in("demo", "demo-thermal-2026")
        pages.update(_crawl(browser, "/"))
        assert any(path.startswith("/thermograms/") for path in pages), sorted(pages)
        referenced = {}
        for html in pages.values():
            for kind, url in assets_of(html):
                referenced.setdefault(url, kind)
        assert any("workspace" in url for url in referenced), referenced
        fetched = set()
        queue = sorted(referenced)
        while queue:
            url = queue.pop()
            if url in fetched:
                continue
            fetched.add(url)
            response = browser.get(url, headers={"Accept-Encoding": "gzip"})
            where = f"{url}: {response.status_code} {response.headers}"
            assert response.status_code == 200, where
            suffix = Path(url).suffix
            assert response.headers["Content-Type"].split(";")[0] in CONTENT_TYPES[suffix], where
            assert HASHED.search(url), f"{url} is referenced without its hashed name"
            assert _max_age(response) >= YEAR_S, where
            assert "immutable" in response.headers["Cache-Control"], where
            assert response.headers.get("Content-Encoding") == "gzip", where
            unhashed = re.sub(r"\.[0-9a-f]{12}(\.(?:js|css))$", r"\1", url).removeprefix("/static/")
            source = Path(finders.find(unhashed)).read_bytes()
            imports = module_imports(response.text) if suffix == ".js" else []
            if not imports and b"url(" not in source:
                assert response.content == source, f"{url} is not {unhashed}"
            for specifier in imports:
                queue.append(urljoin(url, specifier))
        # The plain name still answers, but only for a minute: a new release replaces it.
        plain = browser.get("/static/js/workspace/main.js")
        assert plain.status_code == 200 and _max_age(plain) <= 60
        health = browser.get("/healthz")
        assert health.status_code == 200, health.text
        # The container health check asks over plain HTTP with the site's host name: no
        # redirect to HTTPS for /healthz, while every page still redirects.
        plain = {"Host": "localhost"}
        assert requests.get(f"{server.url}/healthz", headers=plain, timeout=30).status_code == 200
        page = requests.get(f"{server.url}/", headers=plain, timeout=30, allow_redirects=False)
        assert page.status_code == 301 and page.headers["Location"].startswith("https://")
    finally:
        server.stop()
    assert "Traceback" not in server.log(), server.log()[-3000:]
    # Production logs: one JSON object per line, each request with its ids.
    lines = [json.loads(line) for line in server.log().splitlines() if line.startswith("{")]
    home = [line for line in lines if line["logger"] == "heatmark.request" and line["path"] == "/"]
    assert home and home[-1]["status"] == 200
    assert re.fullmatch(r"[0-9a-f]{32}", home[-1]["request_id"])
    assert home[-1]["user_id"] is not None and home[-1]["organization_id"] is not None


def test_it_points_module_imports_at_hashed_names(tmp_path, settings):
    """`import … from './x.js';` in an ES module is rewritten to x's hashed name on collect."""
    source = tmp_path / "src"
    (source / "js" / "parts").mkdir(parents=True)
    (source / "js" / "parts" / "geometry.js").write_text("export const half = (x) => x / 2;\n")
    (source / "js" / "parts" / "readout.js").write_text(
        "import { half } from './geometry.js';\nexport const show = (x) => half(x);\n"
    )
    (source / "js" / "main.js").write_text(
        "import { show } from './parts/readout.js';\n"
        "export * from './parts/geometry.js';\n"
        "const later = () => import('./parts/geometry.js');\n"
        "show(4); later();\n"
    )
    settings.STATICFILES_DIRS = [source]
    settings.STATICFILES_FINDERS = ["django.contrib.staticfiles.finders.FileSystemFinder"]
    settings.STATIC_ROOT = tmp_path / "collected"
    settings.STORAGES = {
        **settings.STORAGES,
        "staticfiles": {"BACKEND": "survey.storage.StaticStorage"},
    }
    call_command("collectstatic", "--noinput", verbosity=0)
    collected = settings.STATIC_ROOT / "js"
    [main] = [p for p in collected.glob("main.*.js")]
    [readout] = [p for p in (collected / "parts").glob("readout.*.js")]
    [geometry] = [p for p in (collected / "parts").glob("geometry.*.js")]
    main_imports = module_imports(main.read_text())
    assert main_imports == [
        f"./parts/{readout.name}",
        f"./parts/{geometry.name}",
        f"./parts/{geometry.name}",
    ]
    assert module_imports(readout.read_text()) == [f"./{geometry.name}"]
