"""Leaflet and jQuery inlined into the map, so that ``map.html`` opens with no network.

folium links Leaflet 1.9.3 and jQuery 3.7.1 from public CDNs, which a site laptop without internet
cannot reach. The PyPI packages ``XStatic-Leaflet`` (BSD-2-Clause) and ``XStatic-jQuery`` (MIT)
ship exactly those files; this module reads them once and returns one ``<style>`` and two
``<script>`` blocks for the page header. Their licence texts are in ``THIRD_PARTY_NOTICES.txt``
beside this file, and are repeated in an HTML comment of every map written.

Only :mod:`routeplan.map.page` uses this module.
"""

from __future__ import annotations

import base64
import functools
import re
from pathlib import Path

import xstatic.pkg.jquery as xs_jquery
import xstatic.pkg.leaflet as xs_leaflet

NOTICES_PATH = Path(__file__).with_name("THIRD_PARTY_NOTICES.txt")

_IMAGE_URL = re.compile(r"url\(\s*['\"]?(images/[A-Za-z0-9_.-]+\.png)['\"]?\s*\)")
_CSS_COMMENT = re.compile(r"/\*.*?\*/", re.DOTALL)
_SOURCE_MAP = re.compile(r"^\s*//# sourceMappingURL=.*$", re.MULTILINE)
_SCRIPT_END = re.compile(r"</(script)", re.IGNORECASE)
_STYLE_END = re.compile(r"</(style)", re.IGNORECASE)


def _png_data_uri(path: Path) -> str:
    return "data:image/png;base64," + base64.b64encode(path.read_bytes()).decode("ascii")


def _inline_js(text: str) -> str:
    """Make a script safe to sit inside ``<script>…</script>``.

    The source-map comment is dropped (the browser would ask for the ``.map`` file) and every
    ``</script`` is written ``<\\/script``, which is the same string to JavaScript but does not
    end the HTML element.
    """
    text = _SOURCE_MAP.sub("", text)
    if "<!--" in text:  # would switch the HTML parser into its "script data escaped" state
        raise ValueError("script contains '<!--'; inlining it needs another escape")
    return _SCRIPT_END.sub(r"<\\/\1", text)


def _inline_leaflet_css(base: Path) -> str:
    """Leaflet's stylesheet with its images as ``data:`` URIs and its comments removed."""
    css = (base / "leaflet.css").read_text(encoding="utf-8")
    css = _CSS_COMMENT.sub("", css)
    css = _IMAGE_URL.sub(lambda m: f"url({_png_data_uri(base / m.group(1))})", css)
    return _STYLE_END.sub(r"<\\/\1", css)


def _default_icon_js(base: Path) -> str:
    """Point Leaflet's default marker icon at ``data:`` URIs.

    With inline CSS Leaflet cannot find its icon images (it asks for ``nullmarker-icon.png``).
    The map draws points as circle markers and needs no icon; this keeps a later ``L.marker``
    from making a request.
    """
    images = base / "images"
    return (
        "L.Icon.Default.imagePath='';L.Icon.Default.mergeOptions({"
        f"iconUrl:'{_png_data_uri(images / 'marker-icon.png')}',"
        f"iconRetinaUrl:'{_png_data_uri(images / 'marker-icon-2x.png')}',"
        f"shadowUrl:'{_png_data_uri(images / 'marker-shadow.png')}'}});"
    )


def _notices_comment() -> str:
    text = NOTICES_PATH.read_text(encoding="utf-8")
    # "--" may not appear inside an HTML comment
    return "<!--\n" + text.replace("--", "- -") + "\n-->"


@functools.cache
def offline_header() -> str:
    """HTML for the page header: licence notices, Leaflet CSS, Leaflet JS and jQuery, all inline.

    Returns
    -------
    str
        About 250 kB of HTML. Place it after the ``<meta charset>`` element of the page and
        before any script that uses ``L`` or ``$``.
    """
    leaflet = Path(xs_leaflet.BASE_DIR)
    jquery = Path(xs_jquery.BASE_DIR)
    leaflet_js = _inline_js((leaflet / "leaflet.js").read_text(encoding="utf-8"))
    jquery_js = _inline_js((jquery / "jquery.min.js").read_text(encoding="utf-8"))
    return "\n".join(
        [
            _notices_comment(),
            f"<style>{_inline_leaflet_css(leaflet)}</style>",
            f"<script>{leaflet_js}\n{_default_icon_js(leaflet)}</script>",
            f"<script>{jquery_js}</script>",
        ]
    )


def library_versions() -> dict[str, str]:
    """Versions of the inlined libraries, as shipped by the XStatic packages."""
    return {"Leaflet": xs_leaflet.VERSION, "jQuery": xs_jquery.VERSION}
