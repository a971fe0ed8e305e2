"""folium elements of the HTML map: raw HTML, a compact GeoJSON layer, a metric scale bar.

Why not ``folium.GeoJson``: branca renders every element's script into a new Jinja template
(``Element(script)``) and renders that again. The embedded data is therefore parsed as a Jinja
template: a feature id ``{{ 7*7 }}`` comes out as ``49`` (and a crafted one runs Python while the
map is written), and a 1 GW plant's 20 MB of GeoJSON costs seconds of template compilation.
:class:`GeoJsonLayer` keeps the data out of Jinja: its script is rendered from a small template
and the data, serialised as compact JSON, is put in afterwards as plain text.
"""

from __future__ import annotations

import json

from branca.element import Element, MacroElement
from folium.map import Layer as FoliumLayer
from folium.template import Template

from routeplan.outputs.map_features import STYLE_KEY, Layer

#: Replaced by the layer's data after the Jinja step.
_DATA_TOKEN = "__RP_GEOJSON_DATA__"

#: Functions shared by every layer, placed in the page header after Leaflet.
#: rpFeatures(d) rebuilds a layer's FeatureCollection from its columns
#: (routeplan.outputs.map_features.columns_text; ``expand`` is the same in Python).
#: rpTooltip(fields) builds a tooltip from [property, label] pairs; property values are
#: escaped when the map is written (map_text.escape_text), labels are constants.
#: rpHover thickens a shape under the pointer and gives it back its weight after; it is bound
#: once per layer (events of its shapes reach it), not once per shape.
PAGE_SCRIPT = """<script>
function rpTooltip(fields) {
    return function(layer) {
        var p = layer.feature.properties, h = '<table>';
        for (var i = 0; i < fields.length; i++) {
            var v = p[fields[i][0]];
            if (v === undefined || v === null || v === '') { continue; }
            h += '<tr><th>' + fields[i][1] + '</th><td>' + v + '</td></tr>';
        }
        return h + '</table>';
    };
}
function rpFeatures(d) {
    var n = d.n, keys = Object.keys(d.p), cols = [], i, j;
    function column(c) {
        if (Array.isArray(c)) { return function(i) { return c[i]; }; }
        if (c.i) { return function(i) { return c.v[c.i[i]]; }; }
        return function() { return c.v[0]; };
    }
    for (j = 0; j < keys.length; j++) { cols.push(column(d.p[keys[j]])); }
    var type = d.t === undefined ? null : column(typeof d.t === 'string' ? {v: [d.t]} : d.t);
    var style = column(typeof d.s === 'number' ? {v: [d.s]} : d.s);
    var features = new Array(n);
    for (i = 0; i < n; i++) {
        var p = {};
        for (j = 0; j < keys.length; j++) {
            var v = cols[j](i);
            if (v !== '') { p[keys[j]] = v; }
        }
        p.s = style(i);
        var g = d.g ? d.g[i] : {type: type(i), coordinates: d.c[i]};
        features[i] = {type: 'Feature', geometry: g, properties: p};
    }
    return {type: 'FeatureCollection', features: features};
}
var rpHover = {
    mouseover: function(e) {
        var t = e.propagatedFrom || e.sourceTarget;
        if (!t || !t.setStyle) { return; }
        if (t._rpWeight === undefined) { t._rpWeight = t.options.weight; }
        t.setStyle({weight: t._rpWeight + 3});
    },
    mouseout: function(e) {
        var t = e.propagatedFrom || e.sourceTarget;
        if (t && t.setStyle && t._rpWeight !== undefined) { t.setStyle({weight: t._rpWeight}); }
    }
};
</script>"""


def script_json(obj) -> str:
    """Compact JSON that is safe inside ``<script>``: ``<``, ``>``, ``&``, U+2028/9 escaped."""
    return script_safe(json.dumps(obj, separators=(",", ":"), ensure_ascii=False, allow_nan=False))


def script_safe(text: str) -> str:
    """JSON text made safe inside ``<script>`` (see :func:`script_json`)."""
    return (
        text.replace("<", "\\u003c")
        .replace(">", "\\u003e")
        .replace("&", "\\u0026")
        .replace("\u2028", "\\u2028")
        .replace("\u2029", "\\u2029")
    )


def parsed_json(obj) -> str:
    """A JavaScript expression ``JSON.parse('…')`` giving ``obj``.

    For large data V8 parses a JSON string about a third faster than the same object written
    as a literal (measured: 1 GW plant map opens in 4.4 s instead of 6.3 s).
    """
    return parsed_json_text(json.dumps(obj, separators=(",", ":"), ensure_ascii=False,
                                       allow_nan=False))  # fmt: skip


def parsed_json_text(text: str) -> str:
    """:func:`parsed_json` of data already serialised as compact JSON ``text``."""
    text = script_safe(text).replace("\\", "\\\\").replace("'", "\\'")
    return f"JSON.parse('{text}')"


class RawHTML(Element):
    """HTML placed in the page as it is, never read as a Jinja template (escape before)."""

    def __init__(self, html: str):
        super().__init__("")
        self._html = html

    def render(self, **kwargs) -> str:
        return self._html


class GeoJsonLayer(FoliumLayer):
    """One Leaflet GeoJSON layer drawn from a :class:`~routeplan.outputs.map_features.Layer`.

    Each feature's style is ``styles[properties.s]`` of the layer's table. Points become circle
    markers. An interactive layer shows a tooltip of the layer's fields and thickens a shape
    under the pointer; a non-interactive one (casings, halos) takes no pointer events and so
    gets no ``leaflet-interactive`` class. Every path gets the CSS classes ``class_name``.
    A ``lazy`` layer, in a group that starts switched off, makes its shapes only when the
    group is first switched on (a 1 GW plant's 16,000 rows cost ~0.6 s at opening otherwise).
    """

    _template = Template(
        """{% macro script(this, kwargs) %}
var {{ this.get_name() }} = L.geoJson(null, {
    style: (function() {
        var t = {{ this.styles_json }};
        return function(f) { return t[f.properties.{{ this.style_key }}]; };
    })(),
    pointToLayer: function(f, ll) {
        return L.circleMarker(ll, {className: {{ this.class_name|tojson }},
                                   interactive: {{ this.interactive|tojson }}});
    },
    className: {{ this.class_name|tojson }},
    interactive: {{ this.interactive|tojson }}
});
{%- if this.lazy %}
{{ this._parent.get_name() }}.once("add", function() {
    {{ this.get_name() }}.addData(rpFeatures(__RP_GEOJSON_DATA__));
});
{%- else %}
{{ this.get_name() }}.addData(rpFeatures(__RP_GEOJSON_DATA__));
{%- endif %}
{%- if this.interactive %}
{{ this.get_name() }}.bindTooltip(rpTooltip({{ this.fields_json }}),
                                  {sticky: true, className: "rp-tip"});
{{ this.get_name() }}.on(rpHover);
{%- endif %}
{{ this.get_name() }}.addTo({{ this._parent.get_name() }});
{% endmacro %}"""
    )

    def __init__(
        self, layer: Layer, *, class_name: str, interactive: bool = True, lazy: bool = False
    ):
        super().__init__(name=None, overlay=True, control=False, show=True)
        self._name = "GeoJsonLayer"
        self.layer = layer
        self.class_name = class_name
        self.interactive = interactive
        self.lazy = lazy
        self.style_key = STYLE_KEY
        self.styles_json = script_json(layer.styles)
        self.fields_json = script_json([list(f) for f in layer.fields])

    def render(self, **kwargs) -> None:
        # Instead of MacroElement.render, which would re-read the script as a template.
        script = self._template.module.__dict__["script"](self, kwargs)
        script = str(script).replace(_DATA_TOKEN, parsed_json_text(self.layer.text), 1)
        self.get_root().script.add_child(RawHTML(script), name=self.get_name())


class MetricScale(MacroElement):
    """Leaflet's scale bar in metres only (folium's ``control_scale`` adds feet and miles)."""

    _template = Template(
        "{% macro script(this, kwargs) %}"
        "L.control.scale({imperial: false, maxWidth: 150}).addTo({{ this._parent.get_name() }});"
        "{% endmacro %}"
    )
