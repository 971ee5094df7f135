// gravplan route editor: draw the route over the terrain; in live mode every edit is
// re-planned by the local server.  User text is only ever set with textContent.
(function () {
  "use strict";
  var D = JSON.parse(document.getElementById("gp-data").textContent);
  var LIVE = D.mode === "live";
  var $ = function (id) { return document.getElementById(id); };
  function el(tag, text, cls) {
    var e = document.createElement(tag);
    if (text !== undefined && text !== null) e.textContent = String(text);
    if (cls) e.className = cls;
    return e;
  }
  function fmt(x, nd) { return x === null || x === undefined ? "-" : Number(x).toLocaleString("en", {maximumFractionDigits: nd || 0, minimumFractionDigits: nd || 0}); }

  $("title").textContent = D.title;
  $("caution").textContent = D.caution;
  $("help").textContent = LIVE
    ? "Edit the route with the pencil tools on the map (move a vertex, add a branch); every edit is re-planned. Undo and redo step through your edits; Save writes the scenario's route file and keeps the previous one as a backup."
    : "Draw the main line from the source with the line tool, then branches from points on it; place the source and each outlet with the marker tool and fill in their details. Download the drawing as GeoJSON, and a starting scenario, then run: gravplan plan scenario.toml";

  // ---- map and terrain -------------------------------------------------------------
  var T = D.terrain;
  var map = L.map("map", {zoomControl: true});
  var shade = L.imageOverlay(T.hillshade.url, T.hillshade.bounds, {opacity: 0.9}).addTo(map);
  var contours = L.layerGroup();
  T.contours.forEach(function (c) {
    L.polyline(c.ll, {color: "#8c6d46", weight: 0.8, opacity: 0.8, interactive: false}).addTo(contours);
  });
  contours.addTo(map);
  map.fitBounds(T.hillshade.bounds);
  L.control.scale({imperial: false}).addTo(map);
  var routeLayer = L.layerGroup().addTo(map);      // the plan's coloured pieces
  var featureLayer = L.layerGroup().addTo(map);    // valves, tanks, outlets from the plan
  var fixedLayer = L.layerGroup().addTo(map);      // the scenario's source and outlets
  L.control.layers(null, {"hillshade (DEM)": shade, "contours": contours,
    "design (pressure)": routeLayer, "features": featureLayer}, {position: "bottomright"}).addTo(map);
  D.markers.forEach(function (m) {
    L.circleMarker(m.ll, {radius: 7, color: "#000", weight: 2, fillColor: m.role === "source" ? "#1f78b4" : "#fff", fillOpacity: 1})
      .bindTooltip((m.role === "source" ? "source: " : "outlet: ") + m.name).addTo(fixedLayer);
  });

  // elevation under the cursor, bilinear in the embedded lon/lat grid
  var C = T.cursor;
  var zbuf = Uint8Array.from(atob(C.z), function (ch) { return ch.charCodeAt(0); });
  var Z = new Float32Array(zbuf.buffer);
  function elevationAt(lat, lon) {
    var fx = (lon - C.west) / C.dx - 0.5, fy = (lat - C.north) / C.dy - 0.5;
    if (fx < 0 || fy < 0 || fx > C.nx - 1 || fy > C.ny - 1) return NaN;
    var i = Math.min(Math.floor(fx), C.nx - 2), j = Math.min(Math.floor(fy), C.ny - 2);
    var u = fx - i, v = fy - j, k = j * C.nx + i;
    return (1 - v) * ((1 - u) * Z[k] + u * Z[k + 1]) + v * ((1 - u) * Z[k + C.nx] + u * Z[k + C.nx + 1]);
  }
  map.on("mousemove", function (e) {
    var z = elevationAt(e.latlng.lat, e.latlng.lng);
    $("cursor").textContent = e.latlng.lat.toFixed(5) + ", " + e.latlng.lng.toFixed(5) + "   " +
      (isFinite(z) ? "ground " + z.toFixed(1) + " m (DEM, display grid about " + C.cell_m + " m)" : "off the DEM");
  });

  // ---- drawing ---------------------------------------------------------------------
  var drawn = new L.FeatureGroup().addTo(map);
  var drawControl = new L.Control.Draw({
    position: "topleft",
    draw: {polyline: {shapeOptions: {color: "#222", weight: 3}}, polygon: false, rectangle: false,
           circle: false, circlemarker: false, marker: LIVE ? false : {}},
    edit: {featureGroup: drawn}
  });
  map.addControl(drawControl);

  function lineStyle() { return {color: "#222", weight: 3, opacity: 0.9}; }
  function addFeature(f) {
    var g = f.geometry, props = f.properties || {};
    if (!g) return;
    if (g.type === "LineString" || g.type === "MultiLineString") {
      var parts = g.type === "LineString" ? [g.coordinates] : g.coordinates;
      parts.forEach(function (p) {
        var layer = L.polyline(p.map(function (c) { return [c[1], c[0]]; }), lineStyle());
        layer.gp = {name: props.name || ""};
        drawn.addLayer(layer);
      });
    } else if (g.type === "Point" && !LIVE) {
      var m = L.marker([g.coordinates[1], g.coordinates[0]]);
      m.gp = {role: props.role || "outlet", name: props.name || "", flow_lps: props.flow_lps || 1, min_pressure_m: props.min_pressure_m || 10};
      bindMarker(m);
      drawn.addLayer(m);
    }
  }
  function setDrawing(fc) {
    drawn.clearLayers();
    (fc.features || []).forEach(addFeature);
  }
  function round7(x) { return Math.round(x * 1e7) / 1e7; }
  function getDrawing() {
    var feats = [], n = 0;
    drawn.eachLayer(function (layer) {
      if (layer instanceof L.Polyline) {
        n += 1;
        feats.push({type: "Feature", properties: {name: layer.gp && layer.gp.name ? layer.gp.name : (n === 1 ? "main" : "line " + n)},
          geometry: {type: "LineString", coordinates: layer.getLatLngs().map(function (p) { return [round7(p.lng), round7(p.lat)]; })}});
      } else if (layer instanceof L.Marker) {
        var p = layer.getLatLng(), g = layer.gp || {};
        feats.push({type: "Feature", properties: {role: g.role, name: g.name, flow_lps: Number(g.flow_lps), min_pressure_m: Number(g.min_pressure_m)},
          geometry: {type: "Point", coordinates: [round7(p.lng), round7(p.lat)]}});
      }
    });
    return {type: "FeatureCollection", features: feats};
  }

  // ---- undo / redo -----------------------------------------------------------------
  var history = [], at = -1;
  function remember() {
    var snap = JSON.stringify(getDrawing());
    if (at >= 0 && history[at] === snap) return;
    history = history.slice(0, at + 1);
    history.push(snap);
    at = history.length - 1;
    buttons();
  }
  function step(d) {
    if (at + d < 0 || at + d >= history.length) return;
    at += d;
    setDrawing(JSON.parse(history[at]));
    buttons();
    changed(false);
  }

  // ---- tools -----------------------------------------------------------------------
  var B = {};
  function tool(id, label, fn) {
    var b = el("button", label);
    b.id = id; b.type = "button";
    b.addEventListener("click", fn);
    $("tools").appendChild(b);
    B[id] = b;
  }
  tool("undo", "Undo", function () { step(-1); });
  tool("redo", "Redo", function () { step(1); });
  if (LIVE) {
    tool("save", "Save route", save);
  } else {
    tool("export", "Download GeoJSON", function () {
      download("route.geojson", JSON.stringify(oriented(), null, 1), "application/geo+json");
    });
    tool("export-scenario", "Download scenario", function () {
      download("scenario.toml", scenarioText(), "application/toml");
    });
  }
  function buttons() {
    B.undo.disabled = at <= 0;
    B.redo.disabled = at >= history.length - 1;
  }
  document.addEventListener("keydown", function (e) {
    if (!(e.ctrlKey || e.metaKey) || e.target.tagName === "INPUT") return;
    if (e.key === "z" && !e.shiftKey) { e.preventDefault(); step(-1); }
    if (e.key === "y" || (e.key === "z" && e.shiftKey)) { e.preventDefault(); step(1); }
  });

  function download(name, text, type) {
    var a = el("a");
    a.href = URL.createObjectURL(new Blob([text], {type: type}));
    a.download = name;
    a.id = "download-link";
    document.body.appendChild(a);
    a.click();
    setTimeout(function () { URL.revokeObjectURL(a.href); a.remove(); }, 1000);
  }

  // ---- points (draw mode): source and outlets --------------------------------------
  function roleIcon(m) {
    var source = m.gp.role === "source";
    m.setIcon(L.divIcon({className: "gp-pt " + (source ? "gp-source" : "gp-outlet"),
                         html: source ? "S" : "O", iconSize: [20, 20], iconAnchor: [10, 10]}));
  }
  function bindMarker(m) {
    m.on("click", function () { pointForm(m); });
    roleIcon(m);
    m.bindTooltip(function () { return (m.gp.role === "source" ? "source: " : "outlet: ") + (m.gp.name || ""); });
  }
  function pointForm(m) {
    var box = $("pointform");
    box.replaceChildren();
    box.hidden = false;
    box.appendChild(el("h2", "Point"));
    function field(label, key, type, options) {
      var lab = el("label", label + " ");
      var inp;
      if (options) {
        inp = el("select");
        options.forEach(function (o) { var op = el("option", o); op.value = o; inp.appendChild(op); });
      } else {
        inp = el("input"); inp.type = type;
        if (type === "number") inp.step = "any";
      }
      inp.value = m.gp[key];
      inp.name = key;
      inp.addEventListener("input", function () {
        m.gp[key] = inp.value;
        if (key === "role") roleIcon(m);
        remember();
        summaryDraw();
      });
      lab.appendChild(inp);
      box.appendChild(lab);
    }
    field("role", "role", null, ["source", "outlet"]);
    field("name", "name", "text");
    field("design flow [L/s]", "flow_lps", "number");
    field("minimum residual pressure [m]", "min_pressure_m", "number");
  }
  function countRole(r) {
    var n = 0;
    drawn.eachLayer(function (l) { if (l.gp && l.gp.role === r && l instanceof L.Marker) n += 1; });
    return n;
  }

  // the main line starts at the source: reverse a line whose far end is nearer to it
  function oriented() {
    var fc = getDrawing(), src = null;
    fc.features.forEach(function (f) { if (f.geometry.type === "Point" && f.properties.role === "source") src = f.geometry.coordinates; });
    if (!src) return fc;
    function d2(a) { return Math.pow(a[0] - src[0], 2) + Math.pow(a[1] - src[1], 2); }
    var lines = fc.features.filter(function (f) { return f.geometry.type === "LineString"; });
    if (lines.length) {
      var best = lines.reduce(function (a, b) {
        var ca = a.geometry.coordinates, cb = b.geometry.coordinates;
        return Math.min(d2(ca[0]), d2(ca[ca.length - 1])) <= Math.min(d2(cb[0]), d2(cb[cb.length - 1])) ? a : b;
      });
      var c = best.geometry.coordinates;
      if (d2(c[c.length - 1]) < d2(c[0])) c.reverse();
    }
    return fc;
  }
  function tomlString(s) { return JSON.stringify(String(s)); }
  function scenarioText() {
    var fc = oriented(), lines = 0, src = null, outs = [];
    fc.features.forEach(function (f) {
      if (f.geometry.type === "LineString") lines += 1;
      else if (f.properties.role === "source") src = f;
      else outs.push(f);
    });
    var t = ["# Starting scenario written by the gravplan route editor: check every value.",
      "# Every key is described in docs/scenario.md.", "",
      "[project]", "name = " + tomlString(D.title), "", "[terrain]",
      "dem = " + tomlString(D.dem_path || "dem.tif"), "", "[route]", "file = \"route.geojson\"",
      "spacing_m = 10"];
    if (lines > 1) t.push("network = true");
    t.push("", "[source]", "name = " + tomlString(src ? src.properties.name || "source" : "source"),
      "top_water_above_ground_m = 1.0     # overflow level above the ground at the start",
      "low_water_above_ground_m = 0.5     # lowest operating level");
    if (src) t.push("location = [" + src.geometry.coordinates.join(", ") + "]");
    t.push("", "[design]", "catalogues = [\"pe100\"]     # built-in prices are invented: use your own catalogue");
    outs.forEach(function (f, i) {
      var p = f.properties;
      t.push("", "[[outlets]]", "name = " + tomlString(p.name || "outlet " + (i + 1)),
        "location = [" + f.geometry.coordinates.join(", ") + "]",
        "flow_lps = " + (isFinite(p.flow_lps) && p.flow_lps > 0 ? p.flow_lps : 1),
        "min_pressure_m = " + (isFinite(p.min_pressure_m) ? p.min_pressure_m : 10));
    });
    return t.join("\n") + "\n";
  }

  // ---- live re-planning ------------------------------------------------------------
  var busy = false, pending = false, seq = 0;
  window.gp = {map: map, drawn: drawn, getDrawing: getDrawing, setDrawing: function (fc) { setDrawing(fc); remember(); changed(false); },
               last: null, requests: 0, history: function () { return history.slice(0, at + 1); }, elevationAt: elevationAt,
               idle: function () { return !busy && !pending; }};
  function showError(text) {
    var box = $("error");
    box.hidden = !text;
    box.textContent = text || "";
  }
  function changed(record) {
    if (record !== false) remember();
    if (!LIVE) { summaryDraw(); return; }
    if (busy) { pending = true; return; }
    busy = true;
    var mine = ++seq;
    $("status").classList.add("busy");
    var t0 = performance.now();
    fetch("/api/plan", {method: "POST", headers: {"Content-Type": "application/json"}, body: JSON.stringify(getDrawing())})
      .then(function (r) { return r.json().catch(function () { return {ok: false, error: "the server answered " + r.status}; }); })
      .then(function (res) { res.roundtrip_ms = performance.now() - t0; render(res, mine); })
      .catch(function (e) { render({ok: false, error: "no answer from gravplan serve (" + e + "); is it still running?"}, mine); })
      .finally(function () {
        busy = false;
        $("status").classList.remove("busy");
        if (pending) { pending = false; changed(false); }
      });
  }
  function summaryDraw() {
    var n = 0, len = 0;
    drawn.eachLayer(function (l) {
      if (l instanceof L.Polyline) {
        n += 1;
        var p = l.getLatLngs();
        for (var i = 1; i < p.length; i++) len += map.distance(p[i - 1], p[i]);
      }
    });
    $("status").textContent = n + " line(s), " + fmt(len / 1000, 2) + " km drawn; " +
      countRole("source") + " source, " + countRole("outlet") + " outlet(s)";
    groundProfiles();
  }
  // draw mode: the ground along each line from the display grid (no hydraulics)
  function groundProfiles() {
    var paths = [];
    drawn.eachLayer(function (l) {
      if (!(l instanceof L.Polyline)) return;
      var p = l.getLatLngs(), ch = [], z = [], run = 0, step = Math.max(C.cell_m, 5);
      for (var i = 1; i < p.length; i++) {
        var seg = map.distance(p[i - 1], p[i]), n = Math.max(1, Math.ceil(seg / step));
        for (var k = (i === 1 ? 0 : 1); k <= n; k++) {
          var t = k / n, lat = p[i - 1].lat + t * (p[i].lat - p[i - 1].lat), lon = p[i - 1].lng + t * (p[i].lng - p[i - 1].lng);
          var v = elevationAt(lat, lon);
          ch.push(run + t * seg); z.push(isFinite(v) ? v : null);
        }
        run += seg;
      }
      var name = (l.gp && l.gp.name) || ("line " + (paths.length + 1));
      paths.push({name: name, profile: {chainage: ch, ground: z, pipe: [], static: [], hgl: []}, points: []});
    });
    var pick = $("path");
    pick.replaceChildren();
    paths.forEach(function (p, i) { var o = el("option", p.name); o.value = String(i); pick.appendChild(o); });
    $("pathpick").hidden = paths.length < 2;
    window.gp.ground = paths;
    if (paths.length) drawProfile(paths[0]); else $("profile").replaceChildren();
  }

  function pressureColour(p) {
    if (p === null) return "#777";
    if (p < 0) return "#b2182b";
    if (p < 10) return "#f4a582";
    if (p < 60) return "#4393c3";
    return "#053061";
  }
  var LEGEND = [["#b2182b", "below atmospheric"], ["#f4a582", "0 to 10 m"], ["#4393c3", "10 to 60 m"], ["#053061", "above 60 m"]];
  (function legend() {
    var box = $("legend");
    if (!LIVE) { box.hidden = true; $("findings").hidden = true; $("findings-h").hidden = true; return; }
    box.appendChild(el("span", "route by lowest pressure head: "));
    LEGEND.forEach(function (e) {
      var s = el("span", "\u25A0 ", "swatch");
      s.style.color = e[0];
      box.appendChild(s);
      box.appendChild(el("span", e[1] + "  "));
    });
  })();
  var KIND = {air_valve: "air valve", washout: "washout", break_pressure_tank: "break-pressure tank", outlet: "outlet"};
  var SHAPE = {air_valve: ["#ffffff", 5], washout: ["#33a02c", 5], break_pressure_tank: ["#6a3d9a", 7], outlet: ["#ff7f00", 7]};

  function render(res, mine) {
    if (pending || mine !== seq) return;            // stale: a newer drawing is on its way
    window.gp.last = res;
    window.gp.requests += 1;
    if (!res.ok) {
      showError(res.error);
      $("status").textContent = "not re-planned: see the message below (" + fmt(res.ms, 0) + " ms)";
      routeLayer.eachLayer(function (l) { l.setStyle({opacity: 0.3}); });
      return;
    }
    showError("");
    var s = $("status");
    s.replaceChildren();
    var line1 = el("div", fmt(res.length_m / 1000, 2) + " km, design flow " + fmt(res.flow_lps, 2) + " L/s" +
      (res.cost !== null ? ", pipe cost " + fmt(res.cost) : ""), "big");
    line1.id = "cost";
    s.appendChild(line1);
    s.appendChild(el("div", res.errors + " error(s), " + res.warnings + " warning(s); re-planned in " + fmt(res.ms) + " ms"));
    s.appendChild(el("div", res.basis, "basis"));
    routeLayer.clearLayers();
    res.pieces.forEach(function (p) {
      L.polyline(p.ll, {color: pressureColour(p.p), weight: 7, opacity: 0.85, className: "gp-piece"})
        .bindTooltip("chainage " + fmt(p.ch) + " m: lowest pressure " + fmt(p.p, 1) + " m, highest static " + fmt(p.ps, 1) + " m" + (p.pipe ? "; " + p.pipe : ""))
        .addTo(routeLayer);
    });
    featureLayer.clearLayers();
    res.points.forEach(function (f) {
      var st = SHAPE[f.kind] || ["#999", 5];
      var text = (KIND[f.kind] || f.kind) + (f.name ? " " + f.name : "") + " at chainage " + fmt(f.chainage) + " m" +
        (f.residual !== undefined ? ": residual " + fmt(f.residual, 1) + " m (min " + fmt(f.min, 1) + " m)" : "") +
        (f.rule ? " | " + f.rule : "");
      L.circleMarker(f.ll, {radius: st[1], color: "#000", weight: 1.5, fillColor: st[0], fillOpacity: 1, className: "gp-feature gp-" + f.kind})
        .bindTooltip(text).addTo(featureLayer);
    });
    var list = $("findings");
    list.replaceChildren();
    if (!res.findings.length) list.appendChild(el("li", "none"));
    res.findings.forEach(function (f) {
      var li = el("li", null, "sev-" + f.severity);
      li.appendChild(el("strong", f.severity + (f.chainage !== null ? " at " + fmt(f.chainage) + " m" : "") + ": "));
      li.appendChild(el("span", f.message));
      if (f.remedy) li.appendChild(el("div", "\u2192 " + f.remedy, "remedy"));
      list.appendChild(li);
    });
    (res.notes || []).forEach(function (n) { list.appendChild(el("li", "note: " + n, "sev-note")); });
    var pick = $("path");
    var was = pick.value;
    pick.replaceChildren();
    res.paths.forEach(function (p, i) { var o = el("option", p.name); o.value = String(i); pick.appendChild(o); });
    $("pathpick").hidden = res.paths.length < 2;
    pick.value = was && Number(was) < res.paths.length ? was : "0";
    drawProfile(res.paths[Number(pick.value)]);
  }
  $("path").addEventListener("change", function () {
    var i = Number($("path").value);
    if (!LIVE && window.gp.ground) drawProfile(window.gp.ground[i]);
    else if (window.gp.last && window.gp.last.ok) drawProfile(window.gp.last.paths[i]);
  });

  // ---- profile panel (SVG) ---------------------------------------------------------
  var SVG = "http://www.w3.org/2000/svg";
  function svg(tag, attrs, parent) {
    var e = document.createElementNS(SVG, tag);
    for (var k in attrs) e.setAttribute(k, attrs[k]);
    if (parent) parent.appendChild(e);
    return e;
  }
  function drawProfile(path) {
    var box = $("profile");
    box.replaceChildren();
    var W = box.clientWidth || 420, H = box.clientHeight || 260, m = {l: 46, r: 8, t: 10, b: 26};
    var P = path.profile, ch = P.chainage;
    var ys = [].concat(P.ground, P.static, P.hgl).filter(function (v) { return v !== null; });
    var y0 = Math.min.apply(null, ys), y1 = Math.max.apply(null, ys), x1 = ch[ch.length - 1] || 1;
    var pad = (y1 - y0) * 0.05 + 1;
    y0 -= pad; y1 += pad;
    function X(v) { return m.l + (W - m.l - m.r) * v / x1; }
    function Y(v) { return m.t + (H - m.t - m.b) * (1 - (v - y0) / (y1 - y0)); }
    function d(arr) {
      var s = "", pen = false;
      for (var i = 0; i < arr.length; i++) {
        if (arr[i] === null) { pen = false; continue; }
        s += (pen ? "L" : "M") + X(ch[i]).toFixed(1) + "," + Y(arr[i]).toFixed(1);
        pen = true;
      }
      return s;
    }
    // the ground's fill: one polygon over the points with a value (gaps are bridged)
    var fill = "", first = null, last = null;
    for (var i = 0; i < P.ground.length; i++) {
      if (P.ground[i] === null) continue;
      fill += (first === null ? "M" : "L") + X(ch[i]).toFixed(1) + "," + Y(P.ground[i]).toFixed(1);
      if (first === null) first = ch[i];
      last = ch[i];
    }
    if (first !== null) {
      svg("path", {d: fill + "L" + X(last) + "," + (H - m.b) + "L" + X(first) + "," + (H - m.b) + "Z", fill: "#e8dcc8", stroke: "none"}, box);
    }
    svg("path", {id: "p-ground", d: d(P.ground), fill: "none", stroke: "#7a5c2e", "stroke-width": 1.2}, box);
    if (!LIVE) {
      svg("text", {x: W - m.r - 4, y: H - m.b - 6, "text-anchor": "end", "font-size": 10, fill: "#555"}, box).textContent =
        "ground from the display grid; gravplan plan samples the full DEM";
    }
    svg("path", {id: "p-pipe", d: d(P.pipe), fill: "none", stroke: "#222", "stroke-width": 1.4}, box);
    svg("path", {id: "p-static", d: d(P.static), fill: "none", stroke: "#555", "stroke-width": 1.2, "stroke-dasharray": "6 3"}, box);
    svg("path", {id: "p-hgl", d: d(P.hgl), fill: "none", stroke: "#1f78b4", "stroke-width": 1.8}, box);
    path.points.forEach(function (f) {
      var st = SHAPE[f.kind] || ["#999", 4];
      var c = svg("circle", {cx: X(f.chainage), cy: Y(f.z), r: Math.max(3, st[1] - 2), fill: st[0], stroke: "#000", "stroke-width": 1, "class": "p-" + f.kind}, box);
      svg("title", {}, c).textContent = (KIND[f.kind] || f.kind) + (f.name ? " " + f.name : "") + ", chainage " + fmt(f.chainage) + " m";
    });
    // axes: elevation and chainage ticks
    var ax = svg("g", {"font-size": 10, fill: "#333"}, box);
    svg("line", {x1: m.l, y1: H - m.b, x2: W - m.r, y2: H - m.b, stroke: "#333"}, ax);
    svg("line", {x1: m.l, y1: m.t, x2: m.l, y2: H - m.b, stroke: "#333"}, ax);
    function nice(span, n) { var r = span / n, p = Math.pow(10, Math.floor(Math.log10(r))); return [1, 2, 5, 10].map(function (k) { return k * p; }).find(function (v) { return v >= r; }); }
    var sx = nice(x1, 5), sy = nice(y1 - y0, 4);
    for (var v = 0; v <= x1 + 1e-9; v += sx) svg("text", {x: X(v), y: H - m.b + 13, "text-anchor": "middle"}, ax).textContent = fmt(v / 1000, sx < 1000 ? 1 : 0);
    for (var w = Math.ceil(y0 / sy) * sy; w <= y1; w += sy) svg("text", {x: m.l - 4, y: Y(w) + 3, "text-anchor": "end"}, ax).textContent = fmt(w);
    svg("text", {x: W - m.r, y: H - 2, "text-anchor": "end"}, ax).textContent = "chainage [km]";
    svg("text", {x: 2, y: m.t + 8}, ax).textContent = "m";
    var key = svg("g", {"font-size": 10}, box);
    (LIVE ? [["#7a5c2e", "ground", ""], ["#222", "pipe", ""], ["#555", "static head", "6 3"], ["#1f78b4", "HGL", ""]] : [["#7a5c2e", "ground", ""]]).forEach(function (k, i) {
      var x = m.l + 8 + i * 80;
      svg("line", {x1: x, y1: m.t + 6, x2: x + 18, y2: m.t + 6, stroke: k[0], "stroke-width": 2, "stroke-dasharray": k[2]}, key);
      svg("text", {x: x + 22, y: m.t + 9}, key).textContent = k[1];
    });
  }

  // ---- save (live mode) ------------------------------------------------------------
  function save() {
    fetch("/api/save", {method: "POST", headers: {"Content-Type": "application/json"}, body: JSON.stringify(getDrawing())})
      .then(function (r) { return r.json(); })
      .then(function (res) {
        if (!res.ok) { showError(res.error); return; }
        showError("");
        var note = el("div", "saved " + res.saved + (res.backup ? " (the previous version is kept as " + res.backup + ")" : ""), "saved");
        note.id = "saved";
        $("status").appendChild(note);
      })
      .catch(function (e) { showError("could not save: " + e); });
  }

  // ---- events ----------------------------------------------------------------------
  map.on(L.Draw.Event.CREATED, function (e) {
    var layer = e.layer;
    if (layer instanceof L.Marker) {
      layer.gp = {role: countRole("source") ? "outlet" : "source", name: "", flow_lps: 1, min_pressure_m: 10};
      layer.gp.name = layer.gp.role === "source" ? "source" : "outlet " + (countRole("outlet") + 1);
      bindMarker(layer);
      drawn.addLayer(layer);
      pointForm(layer);
    } else {
      layer.setStyle(lineStyle());
      layer.gp = {name: ""};
      drawn.addLayer(layer);
    }
    changed();
  });
  map.on(L.Draw.Event.EDITED, function () { changed(); });
  map.on(L.Draw.Event.DELETED, function () { changed(); });
  map.on(L.Draw.Event.EDITVERTEX, function () { changed(); });
  map.on(L.Draw.Event.EDITSTOP, function () { changed(); });

  setDrawing(D.drawing);
  remember();
  buttons();
  if (drawn.getLayers().length) {
    try { map.fitBounds(drawn.getBounds().pad(0.2)); } catch (e) { /* empty drawing */ }
    changed(false);
  } else if (!LIVE) { summaryDraw(); }
})();
