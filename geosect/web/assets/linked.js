/* geosect map page: the map and the depth section, linked both ways.
 *
 * Reads the page data from <script type="application/json" id="gs-data">.
 * Text that came from the user's files is only ever put into the page with
 * textContent, or escaped with esc() where Leaflet insists on HTML (layer
 * control labels).  Nothing from the data is evaluated.
 */
(function () {
  'use strict';

  var t0 = performance.now();
  var D = JSON.parse(document.getElementById('gs-data').textContent);

  // ---------------------------------------------------------------- helpers
  function el(tag, cls, text) {
    var e = document.createElement(tag);
    if (cls) e.className = cls;
    if (text !== undefined && text !== null) e.textContent = String(text);
    return e;
  }
  function esc(s) { // text -> HTML-safe text, for Leaflet APIs that take HTML strings
    var d = document.createElement('span');
    d.textContent = String(s);
    return d.innerHTML.replace(/"/g, '&quot;').replace(/'/g, '&#39;');
  }
  function km(m) { return (m === null || m === undefined) ? '\u2014' : (m / 1000).toFixed(3) + ' km'; }
  function metres(m) {
    if (m === null || m === undefined) return '\u2014';
    return (m < 0 ? '\u2212' : '') + Math.abs(m).toFixed(0) + ' m';
  }
  function info(title, rows) { // a small card built with textContent only
    var box = el('div', 'gs-info');
    box.appendChild(el('h4', null, title));
    var t = el('table');
    rows.forEach(function (r) {
      var tr = el('tr');
      tr.appendChild(el('td', null, r[0]));
      tr.appendChild(el('td', null, r[1]));
      t.appendChild(tr);
    });
    box.appendChild(t);
    return box;
  }
  function decode(T) { // categorical columns {c: [...], i: [...]} -> plain arrays
    if (!T) return T;
    Object.keys(T).forEach(function (k) {
      var v = T[k];
      if (v && !Array.isArray(v) && Array.isArray(v.c)) {
        if (Array.isArray(v.i)) T[k] = v.i.map(function (j) { return j < 0 ? '' : v.c[j]; });
        else if (typeof v.n === 'number') T[k] = new Array(v.n).fill(v.c[0]);
      } else if (v && !Array.isArray(v) && Array.isArray(v.q) && typeof v.o === 'number') {
        var step = Math.pow(10, -v.d);
        T[k] = v.q.map(function (q) { return q === null ? null : v.o + q * step; });
      }
    });
    return T;
  }
  function features(G, props) { // columnar geometries + properties -> FeatureCollection
    var out = [];
    for (var i = 0; i < G.geom.length; i++) {
      if (!G.geom[i]) continue;
      var p = { _i: i };
      props.forEach(function (k) { p[k] = G[k] ? G[k][i] : null; });
      out.push({ type: 'Feature', geometry: G.geom[i], properties: p });
    }
    return { type: 'FeatureCollection', features: out };
  }

  var readout = document.getElementById('gs-readout');
  var cursorOut = document.getElementById('gs-cursor-readout');
  function say(text) { readout.textContent = text; }

  // -------------------------------------------------------------- the line
  var LN = D.line;
  function lineAt(ch) { // lon/lat on the section line at a chainage (linear between samples)
    var C = LN.ch, n = C.length;
    if (!(ch >= C[0] && ch <= C[n - 1])) return null;
    var lo = 0, hi = n - 1;
    while (hi - lo > 1) {
      var mid = (lo + hi) >> 1;
      if (C[mid] <= ch) lo = mid; else hi = mid;
    }
    var span = C[hi] - C[lo];
    var f = span > 0 ? (ch - C[lo]) / span : 0;
    return L.latLng(LN.lat[lo] + f * (LN.lat[hi] - LN.lat[lo]), LN.lon[lo] + f * (LN.lon[hi] - LN.lon[lo]));
  }

  // ---------------------------------------------------------------- the map
  var canvas = L.canvas({ padding: 0.5, tolerance: 3 });
  var map = L.map('gs-map', { preferCanvas: true, renderer: canvas, zoomSnap: 0.25, zoomDelta: 0.5 });
  map.createPane('gsTop').style.zIndex = 640;
  var top = L.svg({ pane: 'gsTop', padding: 0.5 });
  map.attributionControl.setPrefix(false);

  var bases = {};
  bases['No tiles (offline)'] = L.layerGroup().addTo(map);
  bases['OpenStreetMap (online)'] = L.tileLayer('https://tile.openstreetmap.org/{z}/{x}/{y}.png', {
    maxZoom: 19, attribution: '\u00a9 OpenStreetMap contributors'
  });
  var overlays = {};
  function overlay(label, layer, on) {
    overlays[esc(label)] = layer;
    if (on) layer.addTo(map);
    return layer;
  }

  if (D.hillshade) {
    overlay('DEM hillshade', L.imageOverlay(D.hillshade.url, D.hillshade.bounds, { opacity: 0.85, interactive: false }), true);
  }

  var tip = L.tooltip({ direction: 'top', offset: [0, -6], opacity: 0.95, className: 'gs-tip' });
  function showTip(latlng, content) { tip.setContent(content); map.openTooltip(tip, latlng); }
  function hideTip() { map.closeTooltip(tip); }

  // geology, faults, bins, swath: one GeoJSON layer each
  var geoStyle = { weight: 0.6, color: '#555', fillOpacity: 0.35, opacity: 0.7 };
  function hoverable(layer, describe) {
    layer.on('mouseover mousemove', function (e) {
      if (!hovered) showTip(e.latlng, describe(e.layer.feature.properties)); // a point under the mouse wins
    });
    layer.on('mouseout', function () { if (!hovered) hideTip(); });
    return layer;
  }
  if (D.geology) {
    overlay('Geology', hoverable(L.geoJSON(features(D.geology, ['unit', 'age', 'color']), {
      style: function (f) { return L.extend({}, geoStyle, { fillColor: f.properties.color }); }
    }), function (p) { return info('geology unit', [['unit', p.unit], ['age', p.age || '\u2014']]); }), true);
  }
  if (D.bins) {
    overlay('CMP bins (fold)', hoverable(L.geoJSON(features(D.bins, ['fold', 'col']), {
      style: function (f) { return { weight: 0.4, color: '#333', opacity: 0.5, fillColor: f.properties.col, fillOpacity: 0.55 }; }
    }), function (p) { return info('CMP bin', [['fold', p.fold === null ? '\u2014' : String(p.fold)]]); }), false);
  }
  if (D.faults) {
    overlay('Faults', hoverable(L.geoJSON(features(D.faults, ['name']), {
      style: function () { return { color: '#8a1c1c', weight: 2.2, opacity: 0.9 }; }
    }), function (p) { return info('fault', [['name', p.name || '\u2014']]); }), true);
  }
  if (D.swath) {
    overlay('Swath', L.geoJSON(D.swath.geom, {
      style: function () { return { color: '#26323d', weight: 1.5, dashArray: '6 4', fill: false }; },
      interactive: false
    }), true);
  }

  // the section line and its chainage ticks
  var lineLatLngs = LN.lat.map(function (la, i) { return [la, LN.lon[i]]; });
  var lineLayer = L.polyline(lineLatLngs, { color: '#111', weight: 3, opacity: 0.9, interactive: false });
  var tickGroup = L.layerGroup([lineLayer]);
  if (D.ticks && D.ticks.ch.length) {
    var segs = D.ticks.ch.map(function (_, i) { return [D.ticks.a[i], D.ticks.b[i]]; });
    tickGroup.addLayer(L.polyline(segs, { color: '#111', weight: 2, interactive: false }));
    D.ticks.ch.forEach(function (_, i) {
      tickGroup.addLayer(L.tooltip({ permanent: true, direction: 'right', className: 'gs-ticklabel', offset: [2, 0], interactive: false })
        .setLatLng(D.ticks.b[i]).setContent(el('span', null, D.ticks.label[i])));
    });
  }
  overlay('Section line', tickGroup, true);

  // points: stations, shots, reflection points (tables from the data block)
  var TABLES = { st: decode(D.stations), sh: decode(D.shots), rp: decode(D.refl) };
  var KIND = { st: 'station', sh: 'shot', rp: 'reflection point' };
  function domIds(T, infix) { // element ids: prefix + id unless the page lists an exception
    var x = T.dom.x;
    T.dom = T.id.map(function (id, i) {
      return Object.prototype.hasOwnProperty.call(x, i) ? x[i] : T.prefix + (infix ? infix(i) : '') + id;
    });
  }
  if (TABLES.st) domIds(TABLES.st);
  if (TABLES.sh) domIds(TABLES.sh);
  if (TABLES.rp) {
    domIds(TABLES.rp, function (i) { return TABLES.rp.pi[i] + '-'; });
    TABLES.rp.phase = TABLES.rp.pi.map(function (k) { return TABLES.rp.phases[k]; });
  }
  var byDom = new Map();
  Object.keys(TABLES).forEach(function (k) {
    var T = TABLES[k];
    if (!T || !T.dom) return;
    for (var i = 0; i < T.dom.length; i++) if (T.dom[i]) byDom.set(T.dom[i], [k, i]);
  });

  function rows(kind, i) {
    var T = TABLES[kind];
    if (kind === 'rp') {
      return [['phase', T.phase[i]], ['chainage', km(T.ch[i])], ['depth', km(T.depth[i])]];
    }
    return [['chainage', km(T.ch[i])], ['crossline', metres(T.xl[i])], ['elevation', metres(T.el[i])],
      ['status', T.status[i]], ['flags', T.flags[i] || '\u2014'], ['kind', T.kind[i] || '\u2014']];
  }
  function card(kind, i) { return info(KIND[kind] + ' ' + TABLES[kind].id[i], rows(kind, i)); }
  function latlngOf(kind, i) {
    var T = TABLES[kind];
    return (T.lat[i] === null || T.lon[i] === null) ? null : L.latLng(T.lat[i], T.lon[i]);
  }

  var ring = L.circleMarker([0, 0], { renderer: top, radius: 9, color: '#d0021b', weight: 2.5, fill: false, interactive: false, className: 'gs-ring' });
  var lit = null;
  function highlight(kind, i) {
    if (lit) lit.classList.remove('hl');
    var T = TABLES[kind];
    lit = T.dom && T.dom[i] ? document.getElementById(T.dom[i]) : null;
    if (lit) lit.classList.add('hl');
    say(KIND[kind] + ' ' + T.id[i] + ' \u00b7 chainage ' + km(T.ch[i]) +
      (kind === 'rp' ? ' \u00b7 depth ' + km(T.depth[i]) + ' \u00b7 ' + T.phase[i] : ''));
    var ll = latlngOf(kind, i);
    if (ll) { ring.setLatLng(ll); if (!map.hasLayer(ring)) ring.addTo(map); } else if (map.hasLayer(ring)) { map.removeLayer(ring); }
    window.geosect.selected = { kind: kind, index: i };
  }

  // one GsPoints canvas layer per kind, each in its own pane (fixed drawing order);
  // the map's mouse events are hit-tested against them, topmost first
  var pointLayers = [];
  function points(kind, lat, lon, style, keep, actions) {
    var pane = 'gsPts' + pointLayers.length;
    map.createPane(pane).style.zIndex = 410 + pointLayers.length;
    var layer = L.gsPoints(lat, lon, style, keep, { pane: pane, interactive: !!actions });
    if (actions) pointLayers.push({ kind: kind, layer: layer, over: actions.over, click: actions.click });
    else pointLayers.push({ kind: kind, layer: layer, over: null, click: null });
    return layer;
  }
  var hovered = null;
  function pointAt(cp) {
    for (var j = pointLayers.length - 1; j >= 0; j--) {
      var pl = pointLayers[j];
      if (!pl.over || !map.hasLayer(pl.layer)) continue;
      var i = pl.layer.hit(cp);
      if (i >= 0) return { pl: pl, i: i };
    }
    return null;
  }
  // A DOM listener on the map container sees every move; Leaflet's canvas renderer
  // throttles the map's own 'mousemove' (and drops the last move) over vector layers.
  L.DomEvent.on(map.getContainer(), 'mousemove', function (ev) {
    if (map._animatingZoom || (map.dragging && map.dragging.moving())) return;
    var over = ev.target && ev.target.closest && ev.target.closest('.leaflet-popup, .leaflet-control');
    var h = over ? null : pointAt(map.mouseEventToContainerPoint(ev)); // nothing "under" a popup or control
    if (h) {
      if (!hovered || hovered.pl !== h.pl || hovered.i !== h.i) { hovered = h; h.pl.over(h.i); }
      map.getContainer().classList.add('gs-pointer');
    } else if (hovered) {
      hovered = null;
      hideTip();
      map.getContainer().classList.remove('gs-pointer');
    }
  });
  L.DomEvent.on(map.getContainer(), 'mouseleave', function () { if (hovered) { hovered = null; hideTip(); } });
  map.on('click', function (e) {
    var h = pointAt(e.containerPoint);
    if (h && h.pl.click) h.pl.click(h.i);
  });

  function linked(kind) { // hover and click actions of stations, shots, reflection points
    return {
      over: function (i) { highlight(kind, i); showTip(latlngOf(kind, i), card(kind, i)); },
      click: function (i) {
        highlight(kind, i);
        hideTip();
        L.popup({ maxWidth: 320 }).setLatLng(latlngOf(kind, i)).setContent(card(kind, i)).openOn(map);
      }
    };
  }

  if (D.midpoints) {
    decode(D.midpoints);
    overlay('Midpoints' + (D.midpoints.shown < D.midpoints.total ? ' (' + D.midpoints.shown + ' of ' + D.midpoints.total + ')' : ''),
      points('mp', D.midpoints.lat, D.midpoints.lon, function () { return { r: 1.5, fill: '#6d6d6d', fillOpacity: 0.6 }; }), false);
  }
  if (D.hypo) {
    var H = decode(D.hypo);
    overlay('Hypocentres', points('hy', H.lat, H.lon, function (i) {
      var mag = H.mag[i] === null ? 0 : H.mag[i];
      return { r: Math.max(2, Math.min(20, 2 + 2.5 * mag)), fill: '#9c4dcc', fillOpacity: 0.45, stroke: '#5a1a7a', weight: 1 };
    }, null, {
      over: function (i) {
        showTip(L.latLng(H.lat[i], H.lon[i]), info('hypocentre', [['magnitude', H.mag[i] === null ? '\u2014' : H.mag[i].toFixed(1)],
          ['depth', km(H.depth[i])], ['time', H.time[i] || '\u2014']]));
      },
      click: null
    }), true);
  }
  if (TABLES.rp) {
    var R = TABLES.rp;
    D.refl.phases.forEach(function (name, k) {
      overlay('Reflection points: ' + name, points('rp', R.lat, R.lon, function (i) {
        return { r: 3, fill: R.col[i], fillOpacity: 0.9 };
      }, function (i) { return R.pi[i] === k; }, linked('rp')), true);
    });
  }
  if (TABLES.sh) {
    overlay('Shots', points('sh', TABLES.sh.lat, TABLES.sh.lon, function (i) {
      var ok = TABLES.sh.status[i] === 'ok';
      return { r: 5, fill: ok ? '#e4572e' : '#ffffff', fillOpacity: 0.95, stroke: '#6e1e07', weight: 1 };
    }, null, linked('sh')), true);
  }
  if (TABLES.st) {
    overlay('Stations', points('st', TABLES.st.lat, TABLES.st.lon, function (i) {
      var ok = TABLES.st.status[i] === 'ok';
      return { r: 4, fill: ok ? '#1f5fbf' : '#ffffff', fillOpacity: 0.95, stroke: '#0b2a57', weight: 1 };
    }, null, linked('st')), true);
  }

  L.control.layers(bases, overlays, { collapsed: true }).addTo(map);
  L.control.scale({ imperial: false }).addTo(map);

  // legend, built with DOM calls only
  var legend = L.control({ position: 'bottomright' });
  legend.onAdd = function () {
    var box = el('div', 'gs-legend');
    L.DomEvent.disableClickPropagation(box);
    L.DomEvent.disableScrollPropagation(box);
    function bar(title, scale, unit) {
      box.appendChild(el('h5', null, title));
      var b = el('div', 'bar');
      b.style.background = 'linear-gradient(to right, ' + scale.stops.join(', ') + ')';
      box.appendChild(b);
      var ends = el('div', 'ends');
      ends.appendChild(el('span', null, scale.lo + unit));
      ends.appendChild(el('span', null, scale.hi + unit));
      box.appendChild(ends);
    }
    if (D.refl && D.refl.scale) bar('reflection-point depth', D.refl.scale, ' km');
    if (D.bins && D.bins.scale) bar('CMP fold', D.bins.scale, '');
    if (D.geology && D.geology.legend.unit.length) {
      box.appendChild(el('h5', null, 'geology'));
      var ul = el('ul');
      D.geology.legend.unit.forEach(function (u, i) {
        var li = el('li'), sw = el('span', 'sw');
        sw.style.background = D.geology.legend.color[i];
        li.appendChild(sw);
        li.appendChild(document.createTextNode(u));
        ul.appendChild(li);
      });
      box.appendChild(ul);
    }
    if (D.hypo) box.appendChild(el('h5', null, 'hypocentres: circle radius grows with magnitude'));
    return box;
  };
  legend.addTo(map);

  var bounds = L.latLngBounds(lineLatLngs);
  map.fitBounds(bounds.pad(0.08), { animate: false });

  // cursor marker on the map for the mouse on the section
  var cursor = L.circleMarker([0, 0], { renderer: top, radius: 7, color: '#d0021b', weight: 2, fillColor: '#d0021b', fillOpacity: 0.25, interactive: false, className: 'gs-cursor' });

  // ------------------------------------------------------------ the section
  var svg = document.getElementById('gs-svg');
  var S = D.section;
  var vline = document.getElementById('gs-vcursor');
  function svgXY(evt) {
    var m = svg.getScreenCTM();
    if (!m) return null;
    var pt = svg.createSVGPoint();
    pt.x = evt.clientX; pt.y = evt.clientY;
    return pt.matrixTransform(m.inverse());
  }
  function hideCursor() {
    if (map.hasLayer(cursor)) map.removeLayer(cursor);
    vline.setAttribute('visibility', 'hidden');
    cursorOut.textContent = '';
  }
  svg.addEventListener('mousemove', function (evt) {
    var p = svgXY(evt);
    if (!p || p.x < S.left || p.x > S.right || p.y < S.top || p.y > S.bottom) { hideCursor(); return; }
    var ch = S.ch0 + (p.x - S.x0) / S.sx;
    var depth = S.d0 + (p.y - S.y0) / S.sy;
    vline.setAttribute('x1', p.x); vline.setAttribute('x2', p.x);
    vline.setAttribute('visibility', 'visible');
    var ll = lineAt(ch);
    var text = 'cursor: chainage ' + km(ch) + ' \u00b7 depth ' + km(depth);
    if (ll) {
      cursor.setLatLng(ll);
      if (!map.hasLayer(cursor)) cursor.addTo(map);
    } else {
      if (map.hasLayer(cursor)) map.removeLayer(cursor);
      text += ' (beyond the end of the line)';
    }
    cursorOut.textContent = text;
  });
  svg.addEventListener('mouseleave', hideCursor);
  function target(evt) {
    var n = evt.target;
    while (n && n !== svg) {
      if (n.id && byDom.has(n.id)) return byDom.get(n.id);
      n = n.parentNode;
    }
    return null;
  }
  svg.addEventListener('mouseover', function (evt) {
    var t = target(evt);
    if (t) highlight(t[0], t[1]);
  });
  svg.addEventListener('click', function (evt) {
    var t = target(evt);
    if (!t) return;
    highlight(t[0], t[1]);
    var ll = latlngOf(t[0], t[1]);
    if (!ll) { say(KIND[t[0]] + ' ' + TABLES[t[0]].id[t[1]] + ' has no map position'); return; }
    map.setView(ll, Math.max(map.getZoom(), 12), { animate: true });
    showTip(ll, card(t[0], t[1]));
  });

  // notes (thinning, rows not drawn): text only
  var notes = document.getElementById('gs-notes-list');
  (D.notes || []).forEach(function (n) { notes.appendChild(el('li', null, n)); });

  window.geosect = {
    map: map, cursor: cursor, ring: ring, lineAt: lineAt, points: pointLayers, tables: TABLES,
    overlays: overlays, section: S, selected: null,
    timing: { scriptStart: t0, ready: performance.now() }, ready: true
  };
}());
