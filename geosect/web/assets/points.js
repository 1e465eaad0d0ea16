/* geosect map page: L.GsPoints, one canvas layer for many points of one kind.
 *
 * Leaflet keeps one object per circle marker and re-projects every one of them
 * on each zoom; with 10^4 stations that makes panning and zooming sluggish.
 * This layer keeps the points in typed arrays, draws them in a few batched
 * canvas paths (one per style) and answers "which point is under the mouse"
 * from a grid of screen cells rebuilt at each redraw.  It draws nothing from
 * the data as text, so it needs no escaping.
 */
(function () {
  'use strict';
  var TAU = Math.PI * 2;

  L.GsPoints = L.Layer.extend({
    options: { pane: 'overlayPane', interactive: true, padding: 0.3, tolerance: 3, cell: 12 },

    // lat, lon: arrays of degrees (null = no position, skipped);
    // style(i) -> {r, fill, fillOpacity, stroke, weight, opacity}; keep(i) -> bool (optional)
    initialize: function (lat, lon, style, keep, options) {
      L.setOptions(this, options);
      var idx = [];
      for (var i = 0; i < lat.length; i++) {
        if (lat[i] !== null && lon[i] !== null && (!keep || keep(i))) idx.push(i);
      }
      var n = idx.length, crs = L.CRS.EPSG3857;
      this._lat = lat; this._lon = lon;
      this._idx = Int32Array.from(idx);
      this._px = new Float64Array(n); this._py = new Float64Array(n);   // global pixels at zoom 0
      this._r = new Float32Array(n);
      this._maxR = 0;
      var groups = new Map();
      for (var k = 0; k < n; k++) {
        var j = idx[k], p = crs.latLngToPoint(L.latLng(lat[j], lon[j]), 0), s = style(j);
        this._px[k] = p.x; this._py[k] = p.y; this._r[k] = s.r;
        if (s.r > this._maxR) this._maxR = s.r;
        var key = [s.fill, s.fillOpacity, s.stroke, s.weight, s.opacity].join('|');
        if (!groups.has(key)) groups.set(key, { style: s, ks: [] });
        groups.get(key).ks.push(k);
      }
      this._groups = Array.from(groups.values()).map(function (g) { return { style: g.style, ks: Int32Array.from(g.ks) }; });
      this._grid = null;
    },

    size: function () { return this._idx.length; },
    latLngOf: function (i) { return L.latLng(this._lat[i], this._lon[i]); },

    onAdd: function () {
      this._canvas = L.DomUtil.create('canvas', 'gs-points leaflet-zoom-animated');
      this._canvas.style.pointerEvents = 'none';
      this.getPane().appendChild(this._canvas);
      this._ctx = this._canvas.getContext('2d');
      this._reset();
    },

    onRemove: function () {
      L.DomUtil.remove(this._canvas);
      this._canvas = null; this._grid = null;
    },

    getEvents: function () {
      var ev = { viewreset: this._reset, moveend: this._reset, resize: this._reset };
      if (this._map.options.zoomAnimation && L.Browser.any3d) ev.zoomanim = this._animateZoom;
      return ev;
    },

    _animateZoom: function (e) { // scale the drawn canvas like Leaflet's image overlay does
      var scale = this._map.getZoomScale(e.zoom, this._zoom);
      var offset = this._map._latLngBoundsToNewLayerBounds(this._bounds, e.zoom, e.center).min;
      L.DomUtil.setTransform(this._canvas, offset, scale);
    },

    _reset: function () {
      var map = this._map;
      if (!map || !this._canvas) return;
      var size = map.getSize(), pad = size.multiplyBy(this.options.padding).round();
      var min = map.containerPointToLayerPoint(pad.multiplyBy(-1)).round();
      var w = size.x + 2 * pad.x, h = size.y + 2 * pad.y, dpr = window.devicePixelRatio || 1;
      var c = this._canvas;
      L.DomUtil.setPosition(c, min);
      c.width = Math.round(w * dpr); c.height = Math.round(h * dpr);
      c.style.width = w + 'px'; c.style.height = h + 'px';
      this._zoom = map.getZoom();
      this._bounds = L.latLngBounds(map.layerPointToLatLng(min), map.layerPointToLatLng(min.add([w, h])));
      this._origin = map.getPixelOrigin().add(min);    // global pixel of the canvas corner
      this._w = w; this._h = h;
      this._draw(map.options.crs.scale(this._zoom) / map.options.crs.scale(0), dpr);
    },

    _draw: function (s, dpr) {
      var ctx = this._ctx, w = this._w, h = this._h, ox = this._origin.x, oy = this._origin.y;
      var n = this._idx.length, px = this._px, py = this._py, R = this._r;
      var cx = this._cx = new Float32Array(n), cy = this._cy = new Float32Array(n);
      for (var k = 0; k < n; k++) { cx[k] = px[k] * s - ox; cy[k] = py[k] * s - oy; }
      ctx.setTransform(dpr, 0, 0, dpr, 0, 0);
      ctx.clearRect(0, 0, w, h);
      this._groups.forEach(function (g) {
        var st = g.style;
        ctx.beginPath();
        for (var j = 0; j < g.ks.length; j++) {
          var q = g.ks[j], x = cx[q], y = cy[q], r = R[q];
          if (x < -r || y < -r || x > w + r || y > h + r) continue;
          ctx.moveTo(x + r, y);
          ctx.arc(x, y, r, 0, TAU);
        }
        if (st.fill) { ctx.globalAlpha = st.fillOpacity === undefined ? 1 : st.fillOpacity; ctx.fillStyle = st.fill; ctx.fill(); }
        if (st.stroke && st.weight > 0) {
          ctx.globalAlpha = st.opacity === undefined ? 1 : st.opacity;
          ctx.lineWidth = st.weight; ctx.strokeStyle = st.stroke; ctx.stroke();
        }
      });
      ctx.globalAlpha = 1;
      if (this.options.interactive) this._index();
    },

    _index: function () { // screen-cell grid of the points on the canvas
      var G = this.options.cell, cx = this._cx, cy = this._cy, w = this._w, h = this._h;
      var grid = new Map();
      for (var k = 0; k < cx.length; k++) {
        var x = cx[k], y = cy[k];
        if (x < 0 || y < 0 || x > w || y > h) continue;
        var key = Math.floor(x / G) * 65536 + Math.floor(y / G);
        var cell = grid.get(key);
        if (cell) cell.push(k); else grid.set(key, [k]);
      }
      this._grid = grid;
    },

    // Row index of the point under a container point (nearest within its radius + tolerance), or -1.
    hit: function (containerPoint) {
      var map = this._map;
      if (!map || !this._grid || map._animatingZoom) return -1;
      var g = map.containerPointToLayerPoint(containerPoint).add(map.getPixelOrigin());
      var x = g.x - this._origin.x, y = g.y - this._origin.y;
      var G = this.options.cell, tol = this.options.tolerance;
      var reach = Math.ceil((this._maxR + tol) / G), gx = Math.floor(x / G), gy = Math.floor(y / G);
      var best = -1, bestD = Infinity;
      for (var dx = -reach; dx <= reach; dx++) {
        for (var dy = -reach; dy <= reach; dy++) {
          var cell = this._grid.get((gx + dx) * 65536 + (gy + dy));
          if (!cell) continue;
          for (var j = 0; j < cell.length; j++) {
            var k = cell[j], d = Math.hypot(this._cx[k] - x, this._cy[k] - y);
            if (d <= this._r[k] + tol && d < bestD) { best = k; bestD = d; }
          }
        }
      }
      return best < 0 ? -1 : this._idx[best];
    }
  });

  L.gsPoints = function (lat, lon, style, keep, options) { return new L.GsPoints(lat, lon, style, keep, options); };
}());
