"""folium elements of the HTML map: raw HTML, a slot for plain script, a metric scale bar.

Why not ``folium.GeoJson``: branca renders every element's script into a new Jinja template
(``Element(script)``) and renders that again. The embedded data is therefore parsed as a Jinja
template: a feature id ``{{ 7*7 }}`` comes out as ``49`` (and a crafted one runs Python while the
map is written), and a 1 GW plant's 20 MB of GeoJSON costs seconds of template compilation.
The layers' scripts are therefore plain text (:func:`routeplan.map.script.layer_script`)
that never meets Jinja: folium renders the page around a :class:`ScriptSlot`, and the scripts
go into the slot afterwards (:mod:`routeplan.map.page`).
"""

from __future__ import annotations

from branca.element import Element, MacroElement
from folium.template import Template


class RawHTML(Element):
    """HTML placed in the page as it is, never read as a Jinja template (escape before)."""

    def __init__(self, html: str):
        super().__init__("")
        self._html = html

    def render(self, **kwargs) -> str:
        return self._html


class ScriptSlot(MacroElement):
    """Script text placed in the page's script section where this element is rendered (its
    place among the map's children), never read as a Jinja template."""

    def __init__(self, text: str):
        super().__init__()
        self._name = "ScriptSlot"
        self.text = text

    def render(self, **kwargs) -> None:
        self.get_root().script.add_child(RawHTML(self.text), name=self.get_name())


class MetricScale(MacroElement):
    """Leaflet's scale bar in metres only (folium's ``control_scale`` adds feet and miles)."""

    _template = Template(
        "{% macro script(this, kwargs) %}"
        "L.control.scale({imperial: false, maxWidth: 150}).addTo({{ this._parent.get_name() }});"
        "{% endmacro %}"
    )
