function gcStart(map, cfg) {
  var t0 = performance.now();
  map.options.zoomSnap = 0.1; map.options.zoomDelta = 0.5;
  L.control.zoom({position: 'bottomright'}).addTo(map);
  L.control.scale({position: 'bottomright'}).addTo(map);
  [['gc-fill', 350], ['gc-lines', 420], ['gc-points', 440]].forEach(function (p) {
    map.createPane(p[0]).style.zIndex = p[1];
  });
  var fillSvg = L.svg({pane: 'gc-fill', padding: 0.5});
  var lineSvg = L.svg({pane: 'gc-lines', padding: 0.5});
  var canvas = L.canvas({pane: 'gc-points', padding: 0.5});
  var order = cfg.levels.map(function (l) { return l.id; });
  var levels = {};
  order.forEach(function (id) {
    levels[id] = {data: null, spec: {}, built: {}, want: {}, base: null};
  });
  var current = null;
  var basemap = null;

  function data(lid) {
    var lv = levels[lid];
    if (!lv.data) {
      var el = document.getElementById('gc-level-' + order.indexOf(lid));
      lv.data = JSON.parse(el.textContent);
      lv.data.layers.forEach(function (s) { lv.spec[s.key] = s; lv.want[s.key] = !!s.on; });
    }
    return lv.data;
  }

  // SVG pattern fills (hatching) in the lines renderer's <svg>
  var patterns = {};
  function pattern(kind, c) {
    var id = 'gc-' + kind + '-' + c.replace('#', '');
    if (patterns[id]) return id;
    if (!lineSvg._map) map.addLayer(lineSvg);
    var ns = 'http://www.w3.org/2000/svg', root = lineSvg._container;
    var defs = root.querySelector('defs');
    if (!defs) { defs = document.createElementNS(ns, 'defs'); root.insertBefore(defs, root.firstChild); }
    var p = document.createElementNS(ns, 'pattern');
    p.setAttribute('id', id); p.setAttribute('patternUnits', 'userSpaceOnUse');
    p.setAttribute('width', '7'); p.setAttribute('height', '7');
    p.setAttribute('patternTransform', 'rotate(45)');
    var lines = kind === 'cross' ? [[0, 0, 0, 7], [0, 0, 7, 0]] : [[0, 0, 0, 7]];
    lines.forEach(function (xy) {
      var ln = document.createElementNS(ns, 'line');
      ln.setAttribute('x1', xy[0]); ln.setAttribute('y1', xy[1]);
      ln.setAttribute('x2', xy[2]); ln.setAttribute('y2', xy[3]);
      ln.setAttribute('stroke', c); ln.setAttribute('stroke-width', '2');
      p.appendChild(ln);
    });
    defs.appendChild(p);
    patterns[id] = true;
    return id;
  }

  function styleOf(st, props, fill) {
    var c = st.byColor ? props._c : st.color;
    var o = {color: c, weight: st.weight, opacity: 1, dashArray: st.dashArray || null,
             fill: st.fill !== false, fillColor: c,
             fillOpacity: st.fillOpacity == null ? 0 : st.fillOpacity};
    if (st.weight === 0) o.stroke = false;
    if (st.pattern) { o.fill = true; o.fillOpacity = 1; o.fillColor = 'url(#' + pattern(st.pattern, c) + ')'; }
    return o;
  }

  // popups pan the map clear of the side panel and the layer control
  function popupOpts() {
    var side = document.getElementById('gc-side');
    var left = side ? side.getBoundingClientRect().right + 10 : 10;
    var right = box ? window.innerWidth - box.getBoundingClientRect().left + 10 : 10;
    return {autoPanPaddingTopLeft: [left, 10], autoPanPaddingBottomRight: [right, 10]};
  }
  function table(rows) {
    var out = '<table class="gc-popup">';
    rows.forEach(function (r) { if (r[1] !== '' && r[1] != null) out += '<tr><th>' + r[0] + '</th><td>' + r[1] + '</td></tr>'; });
    return out + '</table>';
  }
  function propRows(p) {
    return Object.keys(p).filter(function (k) { return k.charAt(0) !== '_'; })
      .map(function (k) { return [k, p[k]]; });
  }
  function cell(c, i) { return Array.isArray(c) ? c[i] : c.d[c.i[i]]; }

  function tag(layer, lid, key) {
    layer._gcLevel = lid; layer._gcKey = key;
    if (layer.eachLayer) layer.eachLayer(function (l) { tag(l, lid, key); });
  }

  function build(lid, s, fill) {
    var layer;
    if (s.type === 'image') {
      layer = L.imageOverlay(s.url, s.bounds, {opacity: s.opacity, pane: 'gc-fill', interactive: false});
    } else if (s.type === 'geojson') {
      layer = L.geoJSON(s.fc, {
        renderer: fill ? fillSvg : lineSvg,
        style: function (f) { return styleOf(s.style, f.properties); },
        onEachFeature: function (f, l) {
          if (s.popup) l.bindPopup(function () { return table(propRows(f.properties)); }, popupOpts());
          else if (s.tooltip) l.bindTooltip(function () { return table(propRows(f.properties)); }, {sticky: true});
        }
      });
      if (s.labels && s.labels.length) {
        var g = L.featureGroup([layer]);
        s.labels.forEach(function (t) {
          var span = document.createElement('span'); span.className = 'gc-clabel'; span.textContent = t[2];
          g.addLayer(L.marker([t[0], t[1]], {icon: L.divIcon({className: 'gc-clabel-icon', html: span, iconSize: [0, 0]}),
                                               interactive: false, keyboard: false}));
        });
        layer = g;
      }
    } else if (s.type === 'points') {
      layer = points(s);
    }
    tag(layer, lid, s.key);
    return layer;
  }

  function points(s) {
    var g = L.featureGroup(), ll = s.latlon, n = ll.length / 2;
    for (var i = 0; i < n; i++) {
      var fc = s.fills ? cell(s.fills, i) : s.color;
      var m = L.circleMarker([ll[2 * i], ll[2 * i + 1]], {renderer: canvas, radius: s.radius,
        color: fc, weight: s.ring ? 2.5 : 0, fill: !s.ring, fillColor: fc,
        fillOpacity: s.ring ? 0 : 0.95});
      m._gcIndex = i;
      g.addLayer(m);
    }
    g.on('click', function (e) {
      var i = e.layer._gcIndex;
      var rows = Object.keys(s.cols).map(function (k) { return [k, cell(s.cols[k], i)]; });
      L.popup(popupOpts()).setLatLng(e.layer.getLatLng()).setContent(table(rows)).openOn(map);
    });
    return g;
  }

  function on(lid, key) { var l = levels[lid].built[key]; return !!(l && map.hasLayer(l)); }
  function add(lid, key) {
    var lv = levels[lid], s = lv.spec[key];
    if (s.excl) lv.data.layers.forEach(function (o) {
      if (o.excl === s.excl && o.key !== key) remove(lid, o.key);
    });
    if (!lv.built[key]) lv.built[key] = build(lid, s, s.fill);
    if (!map.hasLayer(lv.built[key])) map.addLayer(lv.built[key]);
    lv.want[key] = true;
  }
  function remove(lid, key) {
    var l = levels[lid].built[key];
    if (l && map.hasLayer(l)) map.removeLayer(l);
    levels[lid].want[key] = false;
  }

  // the control: level switch, then the chosen level's layers in groups
  var Ctl = L.Control.extend({
    options: {position: 'topright'},
    onAdd: function () {
      var div = L.DomUtil.create('div', 'leaflet-control-layers leaflet-control-layers-expanded gc-control');
      L.DomEvent.disableClickPropagation(div); L.DomEvent.disableScrollPropagation(div);
      return div;
    }
  });
  var control = new Ctl().addTo(map);
  var box = control.getContainer();
  var html = '<div class="leaflet-control-layers-base"><div class="gc-group-title">Level</div>';
  cfg.levels.forEach(function (l, i) {
    html += '<label><input type="radio" class="leaflet-control-layers-selector" name="gc-level" data-level="' +
      i + '"> <span>' + l.name + '</span></label>';
  });
  html += '</div><div class="leaflet-control-layers-separator"></div>' +
          '<div class="leaflet-control-layers-overlays"></div>';
  if (cfg.basemap) html += '<div class="leaflet-control-layers-separator"></div><div class="gc-basemap">' +
      '<label><input type="checkbox" class="leaflet-control-layers-selector"> <span>Street basemap (online only)</span></label></div>';
  box.innerHTML = html;
  var overlaysDiv = box.querySelector('.leaflet-control-layers-overlays');
  box.querySelectorAll('input[name=gc-level]').forEach(function (inp) {
    inp.addEventListener('change', function () { if (inp.checked) showLevel(order[+inp.dataset.level]); });
  });
  if (cfg.basemap) {
    var bm = box.querySelector('.gc-basemap input');
    bm.addEventListener('change', function () {
      if (!basemap) basemap = L.tileLayer(cfg.basemap.url, {maxZoom: 23, maxNativeZoom: 19, attribution: cfg.basemap.attribution,
        errorTileUrl: 'data:image/gif;base64,R0lGODlhAQABAAAAACw='});
      if (bm.checked) map.addLayer(basemap); else map.removeLayer(basemap);
      bm.checked = map.hasLayer(basemap);
    });
  }

  function renderLayers(lid) {
    var d = data(lid), html = '';
    ['maps', 'survey', 'repairs'].forEach(function (g) {
      var rows = d.layers.filter(function (s) { return s.group === g; });
      if (!rows.length) return;
      html += '<div class="gc-group" data-group="' + g + '"><div class="gc-group-title">' + cfg.groups[g] + '</div>';
      rows.forEach(function (s) {
        html += '<label><input type="checkbox" class="leaflet-control-layers-selector" data-key="' + s.key +
                '"> <span>' + s.label + '</span></label>';
      });
      html += '</div>';
    });
    overlaysDiv.innerHTML = html;
    overlaysDiv.querySelectorAll('input[data-key]').forEach(function (inp) {
      inp.addEventListener('change', function () {
        if (inp.checked) add(current, inp.dataset.key); else remove(current, inp.dataset.key);
        sync();
      });
    });
  }

  // every box says what the map draws
  function sync() {
    overlaysDiv.querySelectorAll('input[data-key]').forEach(function (inp) { inp.checked = on(current, inp.dataset.key); });
    box.querySelectorAll('input[name=gc-level]').forEach(function (inp) { inp.checked = order[+inp.dataset.level] === current; });
    legendUpdate();
  }

  var legendBody = document.getElementById('gc-legend-body');
  function legendUpdate() {
    if (!legendBody || current === null) return;
    var d = data(current), out = '';
    d.base.forEach(function (s) { out += '<div class="gc-leg" data-key="' + s.key + '">' + s.legend + '</div>'; });
    d.layers.forEach(function (s) { if (on(current, s.key)) out += '<div class="gc-leg" data-key="' + s.key + '">' + s.legend + '</div>'; });
    legendBody.innerHTML = out;
  }

  function fit(lid) {
    var b = data(lid).bounds;
    if (!b) return;
    var mr = map.getContainer().getBoundingClientRect();
    var side = document.getElementById('gc-side');
    var left = side ? Math.max(side.getBoundingClientRect().right - mr.left, 0) + 16 : 16;
    var right = Math.max(mr.right - box.getBoundingClientRect().left, 0) + 16;
    map.fitBounds(b, {paddingTopLeft: [left, 16], paddingBottomRight: [right, 16], animate: false});
  }

  function showLevel(lid) {
    order.forEach(function (id) {
      if (id === lid) return;
      var lv = levels[id];
      Object.keys(lv.built).forEach(function (k) {
        if (map.hasLayer(lv.built[k])) { lv.want[k] = true; map.removeLayer(lv.built[k]); }
      });
      if (lv.base && map.hasLayer(lv.base)) map.removeLayer(lv.base);
    });
    current = lid;
    var lv = levels[lid], d = data(lid);
    if (!lv.base) {
      lv.base = L.featureGroup(d.base.map(function (s) { return build(lid, s, false); }));
      tag(lv.base, lid, '_base');
    }
    map.addLayer(lv.base);
    d.layers.forEach(function (s) { if (lv.want[s.key]) add(lid, s.key); });
    renderLayers(lid);
    sync();
    fit(lid);
  }

  function drawn() {
    var seen = {}, out = [];
    map.eachLayer(function (l) {
      if (l._gcLevel === undefined) return;
      var k = l._gcLevel + '\u0000' + l._gcKey;
      if (!seen[k]) { seen[k] = true; out.push({level: l._gcLevel, key: l._gcKey}); }
    });
    return out;
  }

  window.__geoCorrosion = {
    map: map, config: cfg,
    current: function () { return current; },
    show: showLevel,
    layers: function (lid) {
      return data(lid).layers.map(function (s) {
        return {key: s.key, label: s.label, group: s.group, fill: s.fill, excl: s.excl,
                colors: s.colors, on: on(lid, s.key)};
      });
    },
    baseColors: function (lid) { var c = []; data(lid).base.forEach(function (s) { c = c.concat(s.colors); }); return c; },
    layer: function (lid, key) { return levels[lid].built[key]; },
    add: function (lid, key) { add(lid, key); sync(); },
    bounds: function (lid) { return data(lid).bounds; },
    drawn: drawn,
    parsed: function () { return order.filter(function (id) { return levels[id].data !== null; }); },
    built: function (lid) { return Object.keys(levels[lid].built); },
    boxes: function () {
      return Array.prototype.map.call(overlaysDiv.querySelectorAll('input[data-key]'), function (inp) {
        return {key: inp.dataset.key, checked: inp.checked, visible: inp.offsetParent !== null};
      });
    }
  };
  showLevel(order[0]);
  window.__geoCorrosion.readyMs = performance.now() - t0;
  window.__geoCorrosion.readyAt = performance.now();
  // the first frame painted with the first level drawn (for benchmarks)
  requestAnimationFrame(function () {
    setTimeout(function () { window.__geoCorrosion.paintedAt = performance.now(); }, 0);
  });
  window.__geoCorrosion.ready = true;
  window.gcMap = map;
}
