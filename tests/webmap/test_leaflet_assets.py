"""The vendored Leaflet: its files match the README, its version is folium's, it is inlined.

``geo_corrosion/exporters/webmap/_vendor/leaflet/`` holds Leaflet's release files; its
README gives their SHA-256, the version and the source.  folium builds the page against
the Leaflet version it declares, so the vendored one must be that version: a folium
upgrade that moves to another Leaflet fails here until the files are updated.
"""

from __future__ import annotations

import hashlib
import re
from html.parser import HTMLParser
from pathlib import Path

from geo_corrosion.exporters.webmap import assets
from geo_corrosion.exporters.webmap.assets import LEAFLET_VERSION, leaflet_assets

VENDOR = Path(assets.__file__).parent / "_vendor" / "leaflet"
README = VENDOR / "README.md"
#: a README table row: | `file` | `package/...` | `sha256` |
_ROW = re.compile(r"^\|\s*`([^`]+)`\s*\|\s*`[^`]+`\s*\|\s*`([0-9a-f]{64})`\s*\|\s*$", re.M)


def _vendored_files() -> set[str]:
    return {p.relative_to(VENDOR).as_posix() for p in VENDOR.rglob("*")
            if p.is_file() and p.name != "README.md"}


def _folium_leaflet_version() -> str:
    """Return the Leaflet version the installed folium loads (its default script and stylesheet)."""
    import folium

    urls = dict(folium.Map.default_js)["leaflet"], dict(folium.Map.default_css)["leaflet_css"]
    versions = {m.group(1) for u in urls if (m := re.search(r"leaflet@([0-9][^/]*)/", u))}
    assert len(versions) == 1, f"cannot read one Leaflet version from folium's URLs {urls}"
    return versions.pop()


def test_each_vendored_file_has_the_readme_sha256() -> None:
    """Every vendored file is in the README's table, with its SHA-256."""
    listed = dict(_ROW.findall(README.read_text(encoding="utf-8")))
    assert set(listed) == _vendored_files()  # nothing unlisted, nothing missing
    for name, digest in listed.items():
        actual = hashlib.sha256((VENDOR / name).read_bytes()).hexdigest()
        assert actual == digest, f"{name}: SHA-256 {actual}, the README says {digest}"


def test_vendored_version_is_the_one_folium_declares() -> None:
    """leaflet.js, LEAFLET_VERSION and the README all give the version folium loads."""
    want = _folium_leaflet_version()
    js = (VENDOR / "leaflet.js").read_text(encoding="utf-8")
    header = re.search(r"\* Leaflet ([0-9][^,\s]*), a JS library", js)
    assert header is not None and header.group(1) == want
    assert f'version="{want}"' in js  # L.version
    assert LEAFLET_VERSION == want
    readme = README.read_text(encoding="utf-8")
    assert readme.startswith(f"# Leaflet {want} ") and f"leaflet@{want}" in readme


def test_stylesheet_has_its_images_inlined() -> None:
    """No ``url(images/...)`` is left: the page would ask for it next to itself."""
    raw = (VENDOR / "leaflet.css").read_text(encoding="utf-8")
    referenced = set(re.findall(r"url\((images/[^)]+)\)", raw))
    # the images vendored are exactly those the stylesheet references
    assert referenced == {f for f in _vendored_files() if f.startswith("images/")}
    _js, css, _licence = leaflet_assets()
    assert not re.search(r"url\(\s*['\"]?images/", css)
    assert css.count("url(data:image/png;base64,") == len(referenced)


def test_licence_is_leaflets_and_safe_in_a_comment() -> None:
    """BSD-2-Clause: the notice goes in the page, in a comment that it cannot end."""
    _js, _css, licence = leaflet_assets()
    assert "BSD 2-Clause License" in licence and "Vladimir Agafonkin" in licence
    assert "--" not in licence


class _External(HTMLParser):
    """URLs the page would fetch: script src, link href, img src."""

    def __init__(self) -> None:
        super().__init__()
        self.urls: list[str] = []

    def handle_starttag(self, tag: str, attrs: list[tuple[str, str | None]]) -> None:
        key = {"script": "src", "link": "href", "img": "src"}.get(tag)
        url = dict(attrs).get(key) if key else None
        if url:
            self.urls.append(url)


def test_page_inlines_the_vendored_script_and_fetches_no_leaflet(xss_run: Path) -> None:
    """The written webmap.html holds the release script and loads no Leaflet from the web."""
    text = (xss_run / "webmap.html").read_text(encoding="utf-8")
    vendored = (VENDOR / "leaflet.js").read_text(encoding="utf-8")
    body = vendored.replace("//# sourceMappingURL=leaflet.js.map", "")
    assert text.count(body) == 1  # the release file itself, inlined once
    assert "sourceMappingURL" not in text
    parser = _External()
    parser.feed(text)
    remote = [u for u in parser.urls if re.match(r"\s*(https?:)?//", u, re.I)]
    assert not [u for u in remote if "leaflet" in u.lower()], remote
    # nor a stylesheet import or url() of a remote Leaflet file
    assert not re.search(r"(@import|url\()\s*['\"]?(https?:)?//[^'\")]*leaflet", text, re.I)
    assert f"leaflet@{LEAFLET_VERSION}" not in text  # folium's CDN URLs
