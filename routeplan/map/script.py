"""The map page's own JavaScript, as plain text (no folium, no Jinja): the functions every
layer uses (:data:`PAGE_SCRIPT`) and each GeoJSON layer's script (:func:`layer_script`).

Data is embedded as ``JSON.parse('…')`` of compact JSON made safe for ``<script>``
(:func:`parsed_json_text`); see :mod:`routeplan.map.elements` for why it never passes
through a template.
"""

from __future__ import annotations

import json

from routeplan.map.features import COUNT_KEY, STYLE_KEY, Layer

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
#: rpCounted(t) gives a layer's style table with the colour of each style that holds a count
#: instead (COUNT_KEY: a trench segment without a capacity) from rpCountColours, which the page
#: sets before its layers (routeplan.map.features.count_colours): a tile's script then does
#: not change when only the plant's busiest segment does.
PAGE_SCRIPT = """<script>
var rpCountColours = {};
function rpCounted(t) {
    return t.map(function(s) {
        if (s.COUNT_KEY === undefined) { return s; }
        var c = {}, k;
        for (k in s) { if (k !== 'COUNT_KEY') { c[k] = s[k]; } }
        c.color = rpCountColours[s.COUNT_KEY];
        return c;
    });
}
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
</script>""".replace("COUNT_KEY", COUNT_KEY)


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

    Each feature's style is ``styles[properties.s]`` of the layer's table (a style holding a
    count takes its colour from the page's ``rpCountColours``). Points become circle
    markers. An interactive layer shows a tooltip of the layer's fields and thickens a shape
    under the pointer; a non-interactive one (casings, halos) takes no pointer events and so
    gets no ``leaflet-interactive`` class. Every path gets the CSS classes ``class_name``.
    A ``lazy`` layer, in a group that starts switched off, makes its shapes only when the
    group is on the map and the layer's box comes near the view (``rpLazy``; a 1 GW plant's
    16,000 rows cost ~0.6 s at opening otherwise, its 60,000 lines ~3 s at the first zoom-in).
    """
    cls = script_json(class_name)
    inter = "true" if interactive else "false"
    table = script_json(layer.styles)
    if any(COUNT_KEY in st for st in layer.styles):  # colours the page gives (rpCounted)
        table = f"rpCounted({table})"
    lines = [
        f"var {name} = L.geoJson(null, {{",
        "    style: (function() {",
        f"        var t = {table};",
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


#: The review tools of the page (find, details, trench panel, route, colour views), placed
#: in the header after :data:`PAGE_SCRIPT`; they start when the document is parsed. They read
#: the review data (:mod:`routeplan.map.details`) when first needed, and show every data text
#: with ``textContent`` (never as HTML). Texts of the drawn layers' properties are escaped
#: HTML (``escape_text``); ``rpRaw`` turns them back into the ids they stand for.
_REVIEW_JS = r"""
var rpReview = (function() {
    'use strict';
    var C = RP_CONST, data = null, map = null, index = null, keys = null, hl = null;
    var current = null, view = 'drawn', active = -1, hits = [];
    var ENT = {'&amp;': '&', '&lt;': '<', '&gt;': '>', '&quot;': '"', '&#x27;': "'",
               '&#96;': '`', '&#36;': '$', '&#92;': '\\', '&#123;': '{', '&#125;': '}'};
    function rpRaw(s) {
        if (typeof s !== 'string' || s.indexOf('&') < 0) { return s; }
        return s.replace(/&(amp|lt|gt|quot|#x27|#96|#36|#92|#123|#125);/g,
                         function(m) { return ENT[m]; });
    }
    function el(tag, text, cls) {
        var e = document.createElement(tag);
        if (text !== undefined && text !== null) { e.textContent = String(text); }
        if (cls) { e.className = cls; }
        return e;
    }
    // ---- data -----------------------------------------------------------------------------
    function column(t, name) {
        var c = t.k[name];
        if (c === undefined) { return function() { return null; }; }
        if (Array.isArray(c)) { return function(i) { return c[i]; }; }
        if (c.i) { return function(i) { return c.v[c.i[i]]; }; }
        return function() { return c.v[0]; };
    }
    function table(t) {
        var cols = {};
        Object.keys(t.k).forEach(function(k) { cols[k] = column(t, k); });
        if (t.p) {  // columns stored together: one profile index per row
            t.p.k.forEach(function(k, j) {
                cols[k] = function(i) { return t.p.v[t.p.i[i]][j]; };
            });
        }
        var idCol = cols.circuit_id || cols.segment_id || cols.id, byId = new Map();
        for (var i = 0; i < t.n; i++) {
            var id = idCol ? idCol(i) : null;
            if (id !== null && !byId.has(id)) { byId.set(id, i); }
        }
        return {n: t.n, get: function(name, i) {
            return cols[name] ? cols[name](i) : null; }, byId: byId, id: idCol};
    }
    function load() {
        if (data) { return data; }
        var node = document.getElementById('rp-data');
        var d = JSON.parse(node ? node.textContent : '{"c":{"n":0,"k":{}},"s":{"n":0,"k":{}},' +
                           '"r":{"n":0,"k":{}},"e":{"n":0,"k":{}},"sc":{"k":[],"x":[]},' +
                           '"lim":{},"dec":{}}');
        function starts(k) {
            var start = new Array(k.length + 1);
            start[0] = 0;
            for (var i = 0; i < k.length; i++) { start[i + 1] = start[i] + k[i]; }
            return start;
        }
        var cs = d.cs || {k: [], x: []};
        data = {c: table(d.c), s: table(d.s), r: table(d.r), e: table(d.e), sx: d.sc.x,
                start: starts(d.sc.k), cx: cs.x, cstart: starts(cs.k), lim: d.lim, dec: d.dec};
        return data;
    }
    function fmt(t, name, i, unit) {
        var v = data[t].get(name, i);
        if (v === null || v === undefined || v === '') { return '–'; }
        if (typeof v === 'number') {
            var d = data.dec[name];
            v = d ? v.toFixed(d) : String(v);
        }
        return unit ? v + ' ' + unit : String(v);
    }
    function circuitsOf(s) {  // positions of the circuits of segment s
        return data.sx.slice(data.start[s], data.start[s + 1]);
    }
    function segmentsOf(c) {  // positions of the segments circuit c runs in, in route order
        return c < data.cstart.length - 1 ? data.cx.slice(data.cstart[c], data.cstart[c + 1]) : [];
    }
    // ---- drawn features -------------------------------------------------------------------
    function layerIndex() {
        if (index) { return index; }
        index = new Map();
        C.groups.forEach(function(k) {
            var g = window['feature_group_' + k];
            if (!g) { return; }
            g.eachLayer(function(gj) {
                if (!gj.eachLayer) { return; }
                gj.eachLayer(function(f) {
                    var p = f.feature && f.feature.properties, key = null;
                    if (!p) { return; }
                    if (p.circuit !== undefined) { key = 'c:' + rpRaw(p.circuit); }
                    else if (p.segment !== undefined) { key = 's:' + rpRaw(p.segment); }
                    else if (p.equipment !== undefined) { key = 'e:' + rpRaw(p.equipment); }
                    else if (p.row !== undefined) {
                        key = (k === 'rows' ? 'r:' : 'g:') + rpRaw(p.row);
                    }
                    if (key === null) { return; }
                    f._rpGj = gj;
                    f._rpKey = key;
                    var a = index.get(key);
                    if (a) { a.push(f); } else { index.set(key, [f]); }
                });
            });
        });
        return index;
    }
    function drawn(key, wake) {
        var found = layerIndex().get(key);
        if (!found && wake && key.charAt(0) === 'r') {  // rows start switched off on large plants
            var g = window.feature_group_rows;
            if (g && !map.hasLayer(g)) {
                map.addLayer(g);
                index = null;
                found = layerIndex().get(key);
            }
        }
        if (!found && window.rpPlantView && typeof rpMakeAll === 'function') {
            // plant view: the detail groups are made near the view only; make the groups
            // the feature can be in (off the map: shown once the view zooms to it)
            var need = {c: ['string', 'subarray', 'array', 'ac'], s: ['segments'],
                        e: ['equipment'], r: ['rows'], g: ['string']}[key.charAt(0)] || [];
            var made = false;
            need.forEach(function(k) {
                var g = window['feature_group_' + k];
                if (g) { rpMakeAll(g); made = true; }
            });
            if (made) {
                index = null;
                found = layerIndex().get(key);
            }
        }
        return found || [];
    }
    // ---- highlight ------------------------------------------------------------------------
    function clear() {
        if (hl) { hl.clearLayers(); }
        if (fan) { fanOut(null); }
        current = null;
    }
    function copy(f, style) {
        var g = L.geoJson(f.feature, {
            pane: 'rpSelect', interactive: false, style: function() { return style; },
            pointToLayer: function(ft, ll) {
                return L.circleMarker(ll, L.extend({radius: 14, pane: 'rpSelect',
                                                    interactive: false}, style));
            }
        });
        g.addTo(hl);
        return g;
    }
    function end(ll, first) {
        L.circleMarker(ll, {pane: 'rpSelect', interactive: false, radius: 7, weight: 3,
                            color: first ? '#000000' : '#FFFFFF', fillOpacity: 1,
                            fillColor: first ? '#FFFFFF' : '#000000'}).addTo(hl);
    }
    function centre(f) {
        if (f.getLatLng) { return f.getLatLng(); }
        return f.getBounds().getCenter();
    }
    function show(layers) {
        var b = null;
        layers.forEach(function(l) {
            var lb = l.getBounds ? l.getBounds() : null;
            if (lb && lb.isValid()) {
                b = b ? b.extend(lb) : L.latLngBounds(lb.getSouthWest(), lb.getNorthEast());
            }
        });
        if (b) {  // beside the summary panel (left) and the details box (right)
            var w = map.getSize().x;
            map.fitBounds(b, {maxZoom: 19, animate: false,
                              paddingTopLeft: [Math.min(390, Math.round(w * 0.3)), 110],
                              paddingBottomRight: [Math.min(420, Math.round(w * 0.33)), 60]});
        }
    }
    // ---- details box ----------------------------------------------------------------------
    function box(title, kind) {
        var body = document.getElementById('rp-details-body');
        body.textContent = '';
        var h = el('h2');
        h.appendChild(el('span', kind + ' '));
        h.appendChild(el('span', title, 'rp-id'));
        body.appendChild(h);
        document.getElementById('rp-details').hidden = false;
        return body;
    }
    function rows(parent, list) {
        var t = el('table');
        list.forEach(function(r) {
            var tr = el('tr');
            if (r[2]) { tr.setAttribute('data-k', r[2]); }
            tr.appendChild(el('th', r[0]));
            var td = el('td');
            if (r[1] instanceof Node) { td.appendChild(r[1]); } else { td.textContent = r[1]; }
            tr.appendChild(td);
            t.appendChild(tr);
        });
        parent.appendChild(t);
        return t;
    }
    function go(id, text) {
        var b = el('button', text === undefined ? id : text, 'rp-go');
        b.type = 'button';
        b.setAttribute('data-find', id);
        return b;
    }
    function links(ids) {
        var span = el('span');
        ids.forEach(function(id, j) {
            if (j) { span.appendChild(document.createTextNode(', ')); }
            span.appendChild(go(id));
        });
        if (!ids.length) { span.textContent = '–'; }
        return span;
    }
    function limitText(kind) {
        var l = data.lim[kind];
        return l ? ' (limit ' + l + ' %)' : '';
    }
    function circuitDetails(i) {
        var c = data.c, id = c.id(i), kind = c.get('kind', i);
        var body = box(id, C.kinds[kind] || kind || 'circuit');
        var dc = kind === 'string' || kind === 'subarray' || kind === 'array';
        var gov = c.get('governing', i);
        var govNode = gov ? (data.s.byId.has(gov) ? go(gov) : gov) : '–';
        var segs = segmentsOf(i).map(function(s) { return data.s.id(s); });
        var st = c.get('status', i);
        var list = [
            ['Circuit', id, 'circuit_id'],
            ['From', links(c.get('from_id', i) ? [c.get('from_id', i)] : []), 'from_id'],
            ['To', links(c.get('to_id', i) ? [c.get('to_id', i)] : []), 'to_id'],
            ['Block (inverter)', fmt('c', 'inverter_id', i), 'inverter_id'],
            ['Conductor', fmt('c', 'material', i) + ' ' + fmt('c', 'insulation', i), 'material'],
            ['Size', fmt('c', 'size_mm2', i, 'mm²'), 'size_mm2'],
            ['Parallel', fmt('c', 'parallel', i), 'parallel'],
            ['Route length', fmt('c', 'route_m', i, 'm'), 'route_m'],
            ['Cable length', fmt('c', 'cable_m', i, 'm'), 'cable_m'],
            ['Design current', fmt('c', 'design_current_a', i, 'A'), 'design_current_a'],
            ['Ampacity, tabulated', fmt('c', 'ampacity_base_a', i, 'A'), 'ampacity_base_a'],
            ['Derating', fmt('c', 'derating', i), 'derating'],
            ['Ampacity, derated', fmt('c', 'ampacity_a', i, 'A'), 'ampacity_a'],
            ['Governing stretch', govNode, 'governing'],
            ['Factor: temperature', fmt('c', 'factor_temp', i), 'factor_temp'],
            ['Factor: soil', fmt('c', 'factor_soil', i), 'factor_soil'],
            ['Factor: depth', fmt('c', 'factor_depth', i), 'factor_depth'],
            ['Factor: grouping', fmt('c', 'factor_group', i) + ' (' +
                fmt('c', 'group_count', i) + ' grouped)', 'factor_group'],
            ['Utilisation', fmt('c', 'utilisation', i), 'utilisation'],
            ['Voltage drop', fmt('c', 'vdrop_v', i, 'V'), 'vdrop_v'],
            ['Voltage drop, own', fmt('c', 'vdrop_pct', i, '%') + limitText(kind), 'vdrop_pct'],
            ['Voltage drop, cumulative', fmt('c', 'vdrop_total_pct', i, '%') +
                (dc ? limitText('dc_total') : ''), 'vdrop_total_pct'],
            ['Loss', fmt('c', 'loss_w', i, 'W'), 'loss_w'],
            ['Protection', fmt('c', 'protection', i), 'protection'],
            ['Status', st === 'fail' ? 'FAIL' : fmt('c', 'status', i), 'status'],
            ['Note', fmt('c', 'note', i), 'note']
        ];
        var label = c.get('size_label', i);
        if (label && !/mm²$/.test(label)) {  // an AWG/kcmil size (rules nec): its name too
            list.splice(6, 0, ['Size, AWG/kcmil', label, 'size_label']);
        }
        if (st === 'fail' || c.get('remedy', i)) {
            list.push(['Remedy', fmt('c', 'remedy', i), 'remedy']);
        }
        list.push(['Trench segments', links(segs), 'trench_segments']);
        rows(body, list);
        var key = el('div', null, 'rp-note');
        key.appendChild(el('span', null, 'rp-swatch')).style.background = C.hl.line;
        key.appendChild(document.createTextNode('route  '));
        key.appendChild(el('span', null, 'rp-swatch')).style.background = C.hl.governing;
        key.appendChild(document.createTextNode('governing stretch  ○ from  ● to'));
        body.appendChild(key);
        // the route: the circuit's line (or its row's line), its segments, the governing one
        var shown = [], own = drawn('c:' + id);
        if (!own.length && kind === 'string') { own = drawn('g:' + c.get('from_id', i)); }
        segs.forEach(function(s) {
            drawn('s:' + s).forEach(function(f) {
                shown.push(copy(f, {color: C.hl.casing, weight: 14, opacity: 0.25}));
            });
        });
        own.forEach(function(f) {
            shown.push(copy(f, {color: C.hl.casing, weight: 10, opacity: 0.9}));
            copy(f, {color: C.hl.line, weight: 5, opacity: 1});
        });
        if (gov) {
            drawn('s:' + gov).forEach(function(f) {
                copy(f, {color: C.hl.governing, weight: 16, opacity: 0.85, dashArray: '10 6',
                         lineCap: 'butt'});
            });
        }
        var a = drawn('e:' + c.get('from_id', i));  // a row: the line's own first point
        var z = drawn('e:' + c.get('to_id', i));
        if (own.length && own[0].getLatLngs) {
            var ll = own[0].getLatLngs();
            if (Array.isArray(ll[0])) { ll = ll[0]; }
            if (!a.length && ll.length) { end(ll[0], true); }
            if (!z.length && ll.length) { end(ll[ll.length - 1], false); }
        }
        if (a.length) { end(centre(a[0]), true); }
        if (z.length) { end(centre(z[0]), false); }
        show(shown.length ? shown : own);
    }
    function circuitTable(parent, list) {
        var t = el('table', null, 'rp-list'), head = el('tr');
        var heads = ['Circuit', 'Kind', 'Size × parallel', 'Sets', 'Utilisation', 'Status'];
        heads.forEach(function(h) {
            head.appendChild(el('th', h));
        });
        t.appendChild(head);
        list.forEach(function(i) {
            var tr = el('tr'), td = el('td'), st = data.c.get('status', i);
            td.appendChild(go(data.c.id(i)));
            tr.appendChild(td);
            var k = data.c.get('kind', i);
            tr.appendChild(el('td', C.kinds[k] || k || '–'));
            var lab = data.c.get('size_label', i);
            tr.appendChild(el('td', (lab && !/mm²$/.test(lab) ? lab :
                                     fmt('c', 'size_mm2', i, 'mm²')) + ' × ' +
                              fmt('c', 'parallel', i)));
            tr.appendChild(el('td', fmt('c', 'parallel', i)));
            tr.appendChild(el('td', fmt('c', 'utilisation', i)));
            tr.appendChild(el('td', st === 'fail' ? 'FAIL' : fmt('c', 'status', i),
                              st === 'fail' ? 'rp-fail' : null));
            t.appendChild(tr);
        });
        parent.appendChild(t);
    }
    function segmentDetails(s) {
        var id = data.s.id(s), body = box(id, 'Trench segment');
        var cap = 'not set';
        if (data.s.get('max_circuits', s) !== null) {
            cap = fmt('s', 'max_circuits', s) + ' circuits';
        } else if (data.s.get('max_cable_sets', s) !== null) {
            cap = fmt('s', 'max_cable_sets', s) + ' cable sets';
        }
        var st = data.s.get('status', s);
        rows(body, [
            ['Trench segment', id, 'segment_id'],
            ['Trench', fmt('s', 'trench_id', s), 'trench_id'],
            ['Length', fmt('s', 'length_m', s, 'm'), 'length_m'],
            ['Circuits', fmt('s', 'circuits', s), 'circuits'],
            ['Cable sets', fmt('s', 'cable_sets', s), 'cable_sets'],
            ['Capacity', cap, 'max_circuits'],
            ['Fill', fmt('s', 'fill', s) + (data.s.get('fill_basis', s) ?
                ' (' + data.s.get('fill_basis', s) + ')' : ''), 'fill'],
            ['Status', st === 'over' ? 'OVER CAPACITY' : fmt('s', 'status', s), 'status'],
            ['Grouping factor', fmt('s', 'group_factor', s), 'group_factor'],
            ['Depth', fmt('s', 'depth_m', s, 'm'), 'depth_m'],
            ['Laying', fmt('s', 'laying', s), 'laying'],
            ['Spacing', fmt('s', 'spacing_m', s, 'm'), 'spacing_m'],
            ['Spread across the cable sets', fmt('s', 'spread_m', s, 'm'), 'spread_m'],
            ['Soil thermal resistivity', fmt('s', 'soil_k_m_w', s, 'K·m/W'), 'soil_k_m_w']
        ]);
        body.appendChild(el('div', 'Circuits in this segment:', 'rp-note'));
        circuitTable(body, circuitsOf(s));
        var f = drawn('s:' + id);
        show(f.map(function(x) {
            return copy(x, {color: C.hl.casing, weight: 18, opacity: 0.35});
        }));
        f.forEach(function(x) { copy(x, {color: C.hl.line, weight: 6, opacity: 1}); });
        fanOut(s, f);
    }
    // the circuits of a selected trench segment side by side, C.fan px apart across it (the
    // map draws them on top of each other): each one can be pointed at and clicked
    var fan = null, fanned = null;
    function offsetLine(lls, d) {
        var pts = lls.map(function(ll) { return map.latLngToLayerPoint(ll); }), out = [];
        for (var j = 0; j < pts.length; j++) {
            var a = pts[Math.max(0, j - 1)], b = pts[Math.min(pts.length - 1, j + 1)];
            var dx = b.x - a.x, dy = b.y - a.y, len = Math.sqrt(dx * dx + dy * dy) || 1;
            out.push(map.layerPointToLatLng(L.point(pts[j].x - dy / len * d,
                                                    pts[j].y + dx / len * d)));
        }
        return out;
    }
    function fanOut(s, layers) {
        if (!fan) { fan = L.featureGroup().addTo(map); }
        fan.clearLayers();
        fanned = s === null ? null : [s, layers];
        if (s === null) { return; }
        var list = circuitsOf(s), n = list.length;
        if (n < 2) { return; }
        layers.forEach(function(x) {
            if (!x.getLatLngs) { return; }
            var lls = x.getLatLngs();
            if (Array.isArray(lls[0])) { lls = lls[0]; }
            list.forEach(function(i, k) {
                var fail = data.c.get('status', i) === 'fail', u = data.c.get('utilisation', i);
                var line = L.polyline(offsetLine(lls, (k - (n - 1) / 2) * C.fan), {
                    pane: 'rpSelect', renderer: fanRenderer, weight: C.fan - 1, opacity: 1,
                    color: fail ? C.status.fail : colour(C.stops.util, u === null ? NaN : u),
                    lineCap: 'butt', className: 'rp-fan'});
                line.bindTooltip(el('span', data.c.id(i)), {sticky: true, className: 'rp-tip'});
                line.on('click', function(ev) {
                    L.DomEvent.stopPropagation(ev);
                    select(data.c.id(i), 'c');
                });
                line.addTo(fan);
            });
        });
    }
    var fanRenderer = null;
    function rowDetails(r) {
        var id = data.r.id(r), body = box(id, 'Module row');
        rows(body, [
            ['Module row', id, 'id'],
            ['Strings declared', fmt('r', 'strings', r), 'strings'],
            ['Module', fmt('r', 'module', r), 'module'],
            ['To', links(data.r.get('to', r) ? [data.r.get('to', r)] : []), 'to']
        ]);
        var mine = [], from = data.c.get.bind(null, 'from_id');
        for (var i = 0; i < data.c.n; i++) { if (from(i) === id) { mine.push(i); } }
        body.appendChild(el('div', 'Strings of this row:', 'rp-note'));
        circuitTable(body, mine);
        var f = drawn('r:' + id, true).concat(drawn('g:' + id));
        mine.forEach(function(i) { f = f.concat(drawn('c:' + data.c.id(i))); });
        show(f.map(function(x) { return copy(x, {color: C.hl.casing, weight: 8, opacity: 0.6}); }));
        f.forEach(function(x) { copy(x, {color: C.hl.line, weight: 4, opacity: 1}); });
    }
    function equipmentDetails(e) {
        var id = data.e.id(e), k = data.e.get('kind', e);
        var body = box(id, C.equipment[k] || k || 'Equipment');
        var ins = [], outs = [];
        for (var i = 0; i < data.c.n; i++) {
            if (data.c.get('to_id', i) === id) { ins.push(i); }
            if (data.c.get('from_id', i) === id) { outs.push(i); }
        }
        rows(body, [['Id', id, 'id'], ['Kind', C.equipment[k] || k || '–', 'kind'],
                    ['Circuits in', String(ins.length)], ['Circuits out', String(outs.length)]]);
        if (outs.length) {
            body.appendChild(el('div', 'Circuits out:', 'rp-note'));
            circuitTable(body, outs);
        }
        if (ins.length) {
            body.appendChild(el('div', 'Circuits in:', 'rp-note'));
            circuitTable(body, ins);
        }
        var f = drawn('e:' + id);
        show(f.map(function(x) {
            return copy(x, {color: C.hl.line, weight: 4, opacity: 1, fillOpacity: 0});
        }));
    }
    function missing(id) {
        var body = box(id, 'Not found:');
        body.appendChild(el('div', 'No circuit, row, equipment or trench segment has this id.'));
    }
    // ---- select ---------------------------------------------------------------------------
    function lookup(id) {
        load();
        var order = [['c', data.c], ['s', data.s], ['e', data.e], ['r', data.r]];
        for (var j = 0; j < order.length; j++) {
            if (order[j][1].byId.has(id)) { return [order[j][0], order[j][1].byId.get(id)]; }
        }
        return null;
    }
    function select(id, kind) {
        load();
        var hit = kind ? [kind, data[kind].byId.get(id)] : lookup(id);
        clear();
        if (!hit || hit[1] === undefined) { missing(id); return false; }
        current = id;
        var details = {c: circuitDetails, s: segmentDetails, r: rowDetails, e: equipmentDetails};
        details[hit[0]](hit[1]);
        try {
            history.replaceState(null, '', '#find=' + encodeURIComponent(id));
        } catch (err) { /* a file: page may refuse; the selection stands */ }
        return true;
    }
    function fromHash() {
        var m = /^#find=(.*)$/.exec(location.hash);
        if (!m) { return; }
        var id;
        try { id = decodeURIComponent(m[1]); } catch (err) { id = m[1]; }
        if (id !== current) { select(id); }
    }
    // ---- search ---------------------------------------------------------------------------
    function searchKeys() {
        if (keys) { return keys; }
        load();
        keys = [];
        var tables = [['c', 'circuit'], ['s', 'trench segment'], ['e', null], ['r', 'module row']];
        tables.forEach(function(t) {
            var tb = data[t[0]];
            for (var i = 0; i < tb.n; i++) {
                var id = tb.id(i);
                if (id === null || id === '') { continue; }
                var label = t[1] || C.equipment[tb.get('kind', i)] || 'equipment';
                if (t[0] === 'c') { label = C.kinds[tb.get('kind', i)] || 'circuit'; }
                keys.push([String(id).toLowerCase(), id, label, t[0]]);
            }
        });
        keys.sort(function(a, b) { return a[0] < b[0] ? -1 : a[0] > b[0] ? 1 : 0; });
        return keys;
    }
    function matches(q, limit) {
        var k = searchKeys(), lo = 0, hi = k.length, out = [];
        q = q.toLowerCase();
        while (lo < hi) {
            var mid = (lo + hi) >> 1;
            if (k[mid][0] < q) { lo = mid + 1; } else { hi = mid; }
        }
        for (var j = lo; j < k.length && out.length < limit; j++) {
            if (k[j][0].lastIndexOf(q, 0) !== 0) { break; }
            out.push(k[j]);
        }
        return out;
    }
    function setActive(j) {
        var list = document.getElementById('rp-hits'), input = document.getElementById('rp-q');
        active = j;
        Array.prototype.forEach.call(list.querySelectorAll('[role=option]'), function(li, n) {
            li.setAttribute('aria-selected', n === j ? 'true' : 'false');
            if (n === j) { li.scrollIntoView({block: 'nearest'}); }
        });
        if (j >= 0) { input.setAttribute('aria-activedescendant', 'rp-hit-' + j); }
        else { input.removeAttribute('aria-activedescendant'); }
    }
    function closeHits() {
        var list = document.getElementById('rp-hits');
        list.hidden = true;
        list.textContent = '';
        hits = [];
        document.getElementById('rp-q').setAttribute('aria-expanded', 'false');
        setActive(-1);
    }
    function update() {
        var input = document.getElementById('rp-q'), list = document.getElementById('rp-hits');
        var q = input.value.trim();
        list.textContent = '';
        hits = q ? matches(q, C.hits + 1) : [];
        var more = hits.length > C.hits;
        if (more) { hits = hits.slice(0, C.hits); }
        hits.forEach(function(h, j) {
            var li = el('li');
            li.id = 'rp-hit-' + j;
            li.setAttribute('role', 'option');
            li.appendChild(el('span', h[1]));
            li.appendChild(el('span', h[2], 'rp-hit-kind'));
            li.addEventListener('mousedown', function(ev) { ev.preventDefault(); pick(j); });
            list.appendChild(li);
        });
        if (more) {
            var li = el('li', 'more … type more of the id', 'rp-hit-more');
            li.setAttribute('role', 'presentation');
            list.appendChild(li);
        }
        list.hidden = !hits.length;
        input.setAttribute('aria-expanded', hits.length ? 'true' : 'false');
        setActive(hits.length ? 0 : -1);
    }
    function pick(j) {
        var h = hits[j];
        if (!h) { return; }
        document.getElementById('rp-q').value = h[1];
        closeHits();
        select(h[1], h[3]);
    }
    function onKey(ev) {
        if (ev.key === 'ArrowDown' || ev.key === 'ArrowUp') {
            if (!hits.length) { update(); }
            if (hits.length) {
                var n = hits.length, j = active + (ev.key === 'ArrowDown' ? 1 : -1);
                setActive((j + n) % n);
            }
            ev.preventDefault();
        } else if (ev.key === 'Enter') {
            if (hits.length) { pick(active < 0 ? 0 : active); }
            else if (this.value.trim()) { select(this.value.trim()); }
            ev.preventDefault();
        } else if (ev.key === 'Escape') {
            if (hits.length) { closeHits(); } else { this.value = ''; }
            ev.preventDefault();
        }
    }
    // ---- colour views ---------------------------------------------------------------------
    function quantile(v, q) {
        if (!v.length) { return NaN; }
        var s = v.slice().sort(function(a, b) { return a - b; });
        return s[Math.min(s.length - 1, Math.max(0, Math.floor(q * (s.length - 1))))];
    }
    function domain(values) {
        var lo = Math.floor(quantile(values, 0.02) * 10) / 10;
        var hi = Math.ceil(quantile(values, 1) * 10) / 10;
        if (!(hi > lo)) { hi = lo + 0.1; }
        return [lo, hi];
    }
    function hex(c) { return [1, 3, 5].map(function(k) { return parseInt(c.substr(k, 2), 16); }); }
    function colour(stops, t) {
        if (!(t === t)) { return C.nan; }
        t = Math.max(0, Math.min(1, t)) * (stops.length - 1);
        var lo = Math.min(Math.floor(t), stops.length - 2), f = t - lo;
        var a = hex(stops[lo]), b = hex(stops[lo + 1]);
        return '#' + [0, 1, 2].map(function(k) {
            var x = Math.round(a[k] * (1 - f) + b[k] * f);
            return ('0' + x.toString(16)).slice(-2);
        }).join('');
    }
    function value(v, i) {
        var c = data.c, k = c.get('kind', i);
        if (v === 'util') { var u = c.get('utilisation', i); return u === null ? NaN : u; }
        if (v === 'drop') {
            var own = c.get('vdrop_pct', i), tot = c.get('vdrop_total_pct', i), share = NaN;
            if (own !== null && data.lim[k]) { share = own / data.lim[k]; }
            var dc = k === 'string' || k === 'subarray' || k === 'array';
            if (tot !== null && data.lim.dc_total && dc) {
                var t = tot / data.lim.dc_total;
                share = share === share ? Math.max(share, t) : t;
            }
            return share;
        }
        return c.get('status', i) === 'fail' ? 1 : 0;
    }
    function key(v, dom) {
        var k = document.getElementById('rp-view-key');
        k.textContent = '';
        if (v === 'drawn') { return; }
        if (v === 'status') {
            [['ok', C.status.ok], ['fail', C.status.fail]].forEach(function(s) {
                var d = el('div', null, 'rp-key');
                d.appendChild(el('span', null, 'rp-swatch')).style.background = s[1];
                d.appendChild(el('span', s[0]));
                k.appendChild(d);
            });
            return;
        }
        var bar = el('div', null, 'rp-bar');
        bar.style.background = v === 'util' ? C.gradients.util : C.gradients.drop;
        k.appendChild(bar);
        var ticks = el('div', null, 'rp-ticks');
        [dom[0], (dom[0] + dom[1]) / 2, dom[1]].forEach(function(x) {
            ticks.appendChild(el('span', Math.round(x * 100) + ' %'));
        });
        k.appendChild(ticks);
        k.appendChild(el('div', v === 'util' ? 'utilisation (design current ÷ derated ampacity)'
            : 'voltage drop ÷ its limit (the larger of own and cumulative DC)', 'rp-note'));
    }
    function recolour(v) {
        load();
        view = v;
        var idx = layerIndex(), vals = new Float64Array(data.c.n), seen = [], perRow = new Map();
        for (var i = 0; i < data.c.n; i++) {
            vals[i] = v === 'drawn' ? NaN : value(v, i);
            if (vals[i] === vals[i]) { seen.push(vals[i]); }
            if (data.c.get('kind', i) === 'string') {
                var r = data.c.get('from_id', i), w = perRow.get(r);
                if (w === undefined || vals[i] > w || w !== w) { perRow.set(r, vals[i]); }
            }
        }
        var dom = v === 'status' ? [0, 1] : domain(seen);
        var stops = v === 'drop' ? C.stops.drop : C.stops.util;
        idx.forEach(function(fs, k) {
            var t = k.charAt(0);
            if (t !== 'c' && t !== 'g') { return; }
            fs.forEach(function(f) {
                if (v === 'drawn' || (f.options.className || '').indexOf('rp-fail') >= 0) {
                    f._rpGj.resetStyle(f);
                    return;
                }
                var x = t === 'c' ? vals[data.c.byId.get(k.slice(2))] : perRow.get(k.slice(2));
                if (x === undefined) { x = NaN; }
                var col = v === 'status' ? (x === 1 ? C.status.fail : x === 0 ? C.status.ok : C.nan)
                    : colour(stops, (x - dom[0]) / (dom[1] - dom[0]));
                f.setStyle({color: col});
            });
        });
        key(v, dom);
    }
    // ---- start ----------------------------------------------------------------------------
    function start() {
        var node = document.querySelector('.folium-map');
        map = node ? window[node.id] : null;
        if (!map || !document.getElementById('rp-q')) { return; }
        map.createPane('rpSelect').style.zIndex = 450;
        map.getPane('rpSelect').style.pointerEvents = 'none';
        hl = L.featureGroup().addTo(map);
        fanRenderer = L.svg({pane: 'rpSelect'});
        map.on('zoomend', function() { if (fanned) { fanOut(fanned[0], fanned[1]); } });
        var input = document.getElementById('rp-q');
        input.addEventListener('input', update);
        input.addEventListener('keydown', onKey);
        input.addEventListener('blur', function() { setTimeout(closeHits, 150); });
        document.addEventListener('click', function(ev) {
            var t = ev.target.closest ? ev.target.closest('[data-find]') : null;
            if (t) { ev.preventDefault(); select(t.getAttribute('data-find')); }
        });
        document.getElementById('rp-close').addEventListener('click', function() {
            document.getElementById('rp-details').hidden = true;
            clear();
            try {
                history.replaceState(null, '', location.pathname + location.search);
            } catch (err) { /* a file: page may refuse */ }
        });
        document.addEventListener('keydown', function(ev) {  // Escape closes the details
            var box = document.getElementById('rp-details');
            if (ev.key === 'Escape' && !box.hidden && ev.target !== input) {
                box.hidden = true;
                clear();
            }
        });
        Array.prototype.forEach.call(document.querySelectorAll('input[name=rp-view]'), function(r) {
            r.addEventListener('change', function() { if (r.checked) { recolour(r.value); } });
        });
        C.groups.forEach(function(k) {
            var g = window['feature_group_' + k];
            if (!g) { return; }
            g.on('click', function(e) {
                var f = e.propagatedFrom || e.layer, p = f && f.feature && f.feature.properties;
                if (!p) { return; }
                load();
                if (p.circuit !== undefined) { select(rpRaw(p.circuit), 'c'); }
                else if (p.segment !== undefined) { select(rpRaw(p.segment), 's'); }
                else if (p.equipment !== undefined) { select(rpRaw(p.equipment), 'e'); }
                else if (p.row !== undefined) {
                    var r = rpRaw(p.row);
                    if (data.r.byId.has(r)) { select(r, 'r'); } else { select(r); }
                }
            });
        });
        window.addEventListener('hashchange', fromHash);
        fromHash();
    }
    if (document.readyState === 'loading') {
        document.addEventListener('DOMContentLoaded', start);
    } else {
        start();
    }
    return {select: select, recolour: recolour, load: load, raw: rpRaw,
            state: function() { return {current: current, view: view}; }};
})();
"""


def review_script(constants: dict) -> str:
    """The ``<script>`` of the review tools with its constants (colours, labels, group names)
    as JSON safe for ``<script>``."""
    return "<script>" + _REVIEW_JS.replace("RP_CONST", script_json(constants), 1) + "</script>"
