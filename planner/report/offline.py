"""Make a folium page work with no internet: inline the vendored browser libraries.

folium's page template loads Leaflet and its helpers from CDNs, so the saved page is
blank without a network.  :func:`make_offline` replaces each external ``<script>`` and
stylesheet ``<link>`` by the vendored file's content (``report/assets/``, copied from
the npm registry with their licences), turns the CSS's images into ``data:`` URIs, and
drops the libraries our maps do not use (Bootstrap, the icon fonts and marker icons).
An external resource it does not know is an error, so that a folium upgrade that adds
one is noticed rather than shipped as a page that silently needs internet.
"""

from __future__ import annotations

import base64
import re
from functools import lru_cache
from pathlib import Path

ASSETS = Path(__file__).resolve().parent / "assets"

#: URL endings -> vendored file, for what our maps need.
INLINE = {
    "leaflet@1.9.3/dist/leaflet.js": "leaflet-1.9.3/leaflet.js",
    "leaflet@1.9.3/dist/leaflet.css": "leaflet-1.9.3/leaflet.css",
    "d3/3.5.5/d3.min.js": "d3-3.5.5/d3.min.js",
    "jquery-3.7.1.min.js": "jquery-3.7.1/jquery.min.js",     # folium builds popups with $()
}
#: URL fragments of libraries folium always lists but our maps do not use.
UNUSED = ("bootstrap", "awesome-markers", "fontawesome", "leaflet.awesome.rotate")

_SCRIPT = re.compile(r'<script\s+src="(https?://[^"]+)"\s*>\s*</script>')
_LINK = re.compile(r'<link\s+rel="stylesheet"\s+href="(https?://[^"]+)"\s*/?>')


@lru_cache(maxsize=None)
def asset(name: str) -> str:
    """The text of a vendored file (cached)."""
    return (ASSETS / name).read_text(encoding="utf-8")


def css_with_data_uris(css: str, folder: Path) -> str:
    """CSS with its url() images (beside it in ``folder``) inlined as data: URIs."""
    def repl(m):
        ref = m.group(1).strip("'\"")
        path = folder / ref
        if ref.startswith(("data:", "#")) or not path.is_file():
            return m.group(0)
        data = base64.b64encode(path.read_bytes()).decode("ascii")
        mime = {".svg": "image/svg+xml", ".woff2": "font/woff2"}.get(path.suffix.lower(), "image/png")
        return f"url(data:{mime};base64,{data})"
    return re.sub(r"url\(([^)]+)\)", repl, css)


def _vendored(url: str) -> str | None:
    for ending, name in INLINE.items():
        if url.endswith(ending):
            return name
    return None


def make_offline(page: str) -> str:
    """Return the page with every external script and stylesheet inlined or dropped.

    Raises
    ------
    ValueError
        If the page asks for an external resource that is neither vendored nor known
        to be unused.
    """
    def script(m):
        url = m.group(1)
        name = _vendored(url)
        if name:
            return "<script>" + asset(name).replace("</script", "<\\/script") + "</script>"
        if any(u in url for u in UNUSED):
            return ""
        raise ValueError(f"the map page needs {url}, which is not vendored in {ASSETS}")

    def link(m):
        url = m.group(1)
        name = _vendored(url)
        if name:
            css = css_with_data_uris(asset(name), (ASSETS / name).parent)
            return "<style>" + css + "</style>"
        if any(u in url for u in UNUSED):
            return ""
        raise ValueError(f"the map page needs {url}, which is not vendored in {ASSETS}")

    return _LINK.sub(link, _SCRIPT.sub(script, page))
