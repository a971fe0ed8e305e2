"""The map page's own JavaScript, as plain text (no folium, no Jinja): the functions every
layer uses (:data:`PAGE_SCRIPT`) and each GeoJSON layer's script (:func:`layer_script`).

Data is embedded as ``JSON.parse('…')`` of compact JSON made safe for ``<script>``
(:func:`parsed_json_text`); see :mod:`routeplan.map.elements` for why it never passes
through a template.
"""

from __future__ import annotations

import json

from routeplan.map.features import STYLE_KEY, Layer

#: Functions shared by every layer, placed in the page header after Leaflet.
#: rpFeatures(d) rebuilds a layer's FeatureCollection from its columns
#: (routeplan.map.features.columns_text; ``expand`` is the same in Python).
#: rpTooltip(fields) builds a tooltip from [property, label] pairs; property values are
#: escaped when the map is written (map_text.escape_text), labels are constants.
#: rpLazy(group, box, make) keeps a tile of a group that starts switched off: it is made
#: (``make``) once its group is on the map and its box [west, south, east, north] comes within
#: 15 % of a view of the view (rpMakeInView, after each move); rpMakeAll makes a group's
#: remaining tiles.
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
var rpLazyTiles = [];
function rpMakeInView(map) {
    var view = map.getBounds().pad(0.15);
    for (var i = 0; i < rpLazyTiles.length; i++) {
        var t = rpLazyTiles[i];
        if (!t.done && map.hasLayer(t.group) && (!t.box || view.intersects(t.box))) {
            t.done = true;
            t.make();
        }
    }
}
function rpMakeAll(group) {
    for (var i = 0; i < rpLazyTiles.length; i++) {
        var t = rpLazyTiles[i];
        if (!t.done && t.group === group) { t.done = true; t.make(); }
    }
}
function rpLazy(group, box, make) {
    rpLazyTiles.push({group: group, make: make, done: false,
                      box: box && L.latLngBounds([box[1], box[0]], [box[3], box[2]])});
    if (group._rpLazy) { return; }
    group._rpLazy = true;
    group.on('add', function() {
        var m = group._map;
        rpMakeInView(m);
        if (!m._rpLazy) {
            m._rpLazy = true;
            m.on('moveend', function() { rpMakeInView(m); });
        }
    });
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


def parsed_json_text(text: str) -> str:
    """A JavaScript expression ``JSON.parse('…')`` giving the compact JSON ``text``.

    For large data V8 parses a JSON string about a third faster than the same object written
    as a literal (measured: 1 GW plant map opens in 4.4 s instead of 6.3 s).
    """
    text = script_safe(text).replace("\\", "\\\\").replace("'", "\\'")
    return f"JSON.parse('{text}')"


def layer_script(
    name: str, parent: str, layer: Layer, *, class_name: str, interactive: bool, lazy: bool
) -> str:
    """The script of one Leaflet GeoJSON layer ``name`` added to the group ``parent``.

    Each feature's style is ``styles[properties.s]`` of the layer's table. Points become circle
    markers. An interactive layer shows a tooltip of the layer's fields and thickens a shape
    under the pointer; a non-interactive one (casings, halos) takes no pointer events and so
    gets no ``leaflet-interactive`` class. Every path gets the CSS classes ``class_name``.
    A ``lazy`` layer, in a group that starts switched off, makes its shapes only when the
    group is on the map and the layer's box comes near the view (``rpLazy``; a 1 GW plant's
    16,000 rows cost ~0.6 s at opening otherwise, its 60,000 lines ~3 s at the first zoom-in).
    """
    cls = script_json(class_name)
    inter = "true" if interactive else "false"
    lines = [
        f"var {name} = L.geoJson(null, {{",
        "    style: (function() {",
        f"        var t = {script_json(layer.styles)};",
        f"        return function(f) {{ return t[f.properties.{STYLE_KEY}]; }};",
        "    })(),",
        "    pointToLayer: function(f, ll) {",
        f"        return L.circleMarker(ll, {{className: {cls},",
        f"                                   interactive: {inter}}});",
        "    },",
        f"    className: {cls},",
        f"    interactive: {inter}",
        "});",
    ]
    add = f"{name}.addData(rpFeatures({parsed_json_text(layer.text)}));"
    if lazy:
        box = script_json([round(v, 6) for v in layer.bounds]) if layer.bounds else "null"
        lines += [f"rpLazy({parent}, {box}, function() {{", f"    {add}", "});"]
    else:
        lines.append(add)
    if interactive:
        fields = script_json([list(f) for f in layer.fields])
        lines += [
            f"{name}.bindTooltip(rpTooltip({fields}),",
            '                                  {sticky: true, className: "rp-tip"});',
            f"{name}.on(rpHover);",
        ]
    lines.append(f"{name}.addTo({parent});")
    return "\n".join(lines)
