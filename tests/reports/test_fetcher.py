"""The URL fetcher serves our own media, static and generated pictures, and nothing else."""

import pytest
from django.core.files.base import ContentFile
from django.core.files.storage import default_storage

from reports.fetcher import BASE_URL, LocalOnlyFetcher


@pytest.mark.parametrize(
    "url",
    [
        "http://example.com/logo.png",
        "https://example.com/logo.png",
        "file:///etc/passwd",
        "data:image/png;base64,iVBORw0KGgo=",
        f"{BASE_URL}media/../../etc/passwd",
        f"{BASE_URL}media/%2e%2e/%2e%2e/etc/passwd",
        f"{BASE_URL}static/../survey/settings.py",
        f"{BASE_URL}generated/unknown.jpg",
        f"{BASE_URL}elsewhere/file.png",
    ],
)
def test_it_refuses_anything_but_our_files(url):
    """Network, file and data URLs and paths escaping the roots are refused."""
    with pytest.raises(ValueError):
        LocalOnlyFetcher().fetch(url)


def test_it_serves_media_static_and_generated_pictures(settings):
    """Our media, our static files and in-memory pictures are served with their type."""
    name = default_storage.save("photos/wall.jpg", ContentFile(b"\xff\xd8\xffjpeg"))
    fetcher = LocalOnlyFetcher({"t1.jpg": (b"\xff\xd8\xff", "image/jpeg")})
    media = fetcher.fetch(f"{BASE_URL}media/{name}")
    assert (media.read(), media.content_type) == (b"\xff\xd8\xffjpeg", "image/jpeg")
    css = fetcher.fetch(f"{BASE_URL}static/reports/report-print.css")
    assert css.content_type == "text/css" and b"@page" in css.read()
    assert fetcher.fetch(f"{BASE_URL}generated/t1.jpg").read() == b"\xff\xd8\xff"
